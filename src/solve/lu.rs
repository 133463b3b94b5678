//! A dense LU factorisation with partial pivoting on fixed-capacity arrays.
//!
//! The systems here have at most `MAX_DIM` unknowns, so a stack matrix beats any heap or
//! sparse structure; only the leading `n x n` block is used.

/// Largest system the solver handles (electrical nodes plus junction temperatures).
pub const MAX_DIM: usize = 24;

pub type Vector = [f64; MAX_DIM];
pub type Matrix = [[f64; MAX_DIM]; MAX_DIM];

/// An LU factorisation `P A = L U` of the leading `n x n` block (L unit lower, stored
/// below the diagonal together with U).
#[derive(Debug, Clone, Copy)]
pub struct Lu {
    pub n: usize,
    pub a: Matrix,
    pub perm: [usize; MAX_DIM],
    /// +1 or -1: the sign of the permutation.
    pub perm_sign: f64,
}

impl Lu {
    /// The determinant of the factorised matrix.
    pub fn determinant(&self) -> f64 {
        let mut d = self.perm_sign;
        for i in 0..self.n {
            d *= self.a[i][i];
        }
        d
    }
}

/// Row permutation and its sign from an in-place factorisation.
#[derive(Debug, Clone, Copy)]
pub struct Pivots {
    pub perm: [u8; MAX_DIM],
    pub sign: f64,
}

/// Swaps the leading `n` entries of rows `a < b` (the rest of a row is never read, and a
/// whole-row swap moves `MAX_DIM` entries through `memcpy` for the handful in use).
#[inline]
fn swap_rows(m: &mut Matrix, a: usize, b: usize, n: usize) {
    let (top, bottom) = m.split_at_mut(b);
    top[a][..n].swap_with_slice(&mut bottom[0][..n]);
}

/// Factorises the leading `n x n` block of `a` in place (L below the diagonal, U on and
/// above it); `None` when a pivot is exactly zero or not finite (singular matrix). The hot
/// loop uses this form: no copy of the matrix.
pub fn lu_factor_in_place(m: &mut Matrix, n: usize) -> Option<Pivots> {
    debug_assert!(n <= MAX_DIM);
    let mut perm = [0u8; MAX_DIM];
    for (i, p) in perm.iter_mut().enumerate().take(n) {
        *p = i as u8;
    }
    let mut sign = 1.0;
    for k in 0..n {
        let mut piv = k;
        let mut best = m[k][k].abs();
        for (i, row) in m.iter().enumerate().take(n).skip(k + 1) {
            if row[k].abs() > best {
                best = row[k].abs();
                piv = i;
            }
        }
        if best == 0.0 || !best.is_finite() {
            return None;
        }
        if piv != k {
            swap_rows(m, k, piv, n);
            perm.swap(piv, k);
            sign = -sign;
        }
        let inv = 1.0 / m[k][k];
        let (top, rest) = m.split_at_mut(k + 1);
        let pivot_row = &top[k];
        for row in rest.iter_mut().take(n - k - 1) {
            let f = row[k] * inv;
            row[k] = f;
            if f != 0.0 {
                for j in k + 1..n {
                    row[j] -= f * pivot_row[j];
                }
            }
        }
    }
    Some(Pivots { perm, sign })
}

/// The determinant of the Schur complement `A22 - A21 A11^-1 A12` of the leading
/// `k x k` block `A11` of the leading `n x n` block of `m`, which it overwrites; `None`
/// when `A11` is singular (a zero or non-finite pivot) or a pivot of the complement is not
/// finite. One elimination: the first `k` columns pivot only among the first `k` rows (a
/// row swap inside the block leaves the complement unchanged, and these are exactly the
/// pivots `lu_factor(a, k)` takes), which leaves the complement in the trailing block,
/// factorised next with ordinary partial pivoting. Equals `det(A) / det(A11)` (Schur's
/// determinant formula) without factorising `A11` twice.
pub fn schur_determinant_in_place(m: &mut Matrix, k: usize, n: usize) -> Option<f64> {
    debug_assert!(k <= n && n <= MAX_DIM);
    let mut det = 1.0;
    for c in 0..n {
        // Pivot rows: the block's own until column k, then the complement's.
        let last = if c < k { k } else { n };
        let mut piv = c;
        let mut best = m[c][c].abs();
        for (i, row) in m.iter().enumerate().take(last).skip(c + 1) {
            if row[c].abs() > best {
                best = row[c].abs();
                piv = i;
            }
        }
        if c < k && (best == 0.0 || !best.is_finite()) {
            return None;
        }
        if c >= k {
            if !best.is_finite() {
                return None;
            }
            if best == 0.0 {
                return Some(0.0);
            }
        }
        if piv != c {
            swap_rows(m, c, piv, n);
            if c >= k {
                det = -det;
            }
        }
        let inv = 1.0 / m[c][c];
        if c >= k {
            det *= m[c][c];
        }
        let (top, rest) = m.split_at_mut(c + 1);
        let pivot_row = &top[c];
        for row in rest.iter_mut().take(n - c - 1) {
            let f = row[c] * inv;
            if f != 0.0 {
                for j in c + 1..n {
                    row[j] -= f * pivot_row[j];
                }
            }
        }
    }
    Some(det)
}

/// Solves `A x = b` with an in-place factorisation of `A`.
pub fn lu_solve_in_place(a: &Matrix, piv: &Pivots, n: usize, b: &Vector) -> Vector {
    let mut x = [0.0; MAX_DIM];
    for i in 0..n {
        let mut s = b[piv.perm[i] as usize];
        for j in 0..i {
            s -= a[i][j] * x[j];
        }
        x[i] = s;
    }
    for i in (0..n).rev() {
        let mut s = x[i];
        for j in i + 1..n {
            s -= a[i][j] * x[j];
        }
        x[i] = s / a[i][i];
    }
    x
}

/// Factorises a copy of the leading `n x n` block of `a`.
pub fn lu_factor(a: &Matrix, n: usize) -> Option<Lu> {
    let mut m = *a;
    let piv = lu_factor_in_place(&mut m, n)?;
    let mut perm = [0usize; MAX_DIM];
    for i in 0..n {
        perm[i] = piv.perm[i] as usize;
    }
    Some(Lu {
        n,
        a: m,
        perm,
        perm_sign: piv.sign,
    })
}

/// Solves `A x = b` with a factorisation of `A`.
pub fn lu_solve(lu: &Lu, b: &Vector) -> Vector {
    let mut p = [0u8; MAX_DIM];
    for i in 0..lu.n {
        p[i] = lu.perm[i] as u8;
    }
    lu_solve_in_place(
        &lu.a,
        &Pivots {
            perm: p,
            sign: lu.perm_sign,
        },
        lu.n,
        b,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Schur's determinant formula, `det(A) = det(A11) det(A22 - A21 A11^-1 A12)`
    /// (Horn & Johnson, Matrix Analysis, section 0.8.5), on matrices whose block needs
    /// pivoting and whose full factorisation would pivot across the blocks.
    #[test]
    fn schur_determinant_is_the_determinant_ratio() {
        let rows: [[f64; 5]; 5] = [
            [0.5, 2.0, 1.0, 0.5, -1.0],
            [3.0, 1.0, 0.0, 2.0, 0.0],
            [1.0, -1.0, 4.0, 0.0, 1.0],
            [9.0, 0.5, 1.0, -2.0, 3.0],
            [2.0, 7.0, -3.0, 1.0, 0.25],
        ];
        let mut a = [[0.0; MAX_DIM]; MAX_DIM];
        for (i, r) in rows.iter().enumerate() {
            a[i][..5].copy_from_slice(r);
        }
        for k in 1..5 {
            let want =
                lu_factor(&a, 5).unwrap().determinant() / lu_factor(&a, k).unwrap().determinant();
            let mut m = a;
            let got = schur_determinant_in_place(&mut m, k, 5).unwrap();
            assert!(
                (got - want).abs() <= 1e-12 * want.abs().max(1.0),
                "k {k}: {got} {want}"
            );
        }
        // A singular leading block has no complement.
        let mut m = a;
        m[0][0] = 0.0;
        m[1][0] = 0.0;
        m[2][0] = 0.0;
        assert_eq!(schur_determinant_in_place(&mut m, 3, 5), None);
    }

    #[test]
    fn solves_a_system_needing_pivoting() {
        let mut a = [[0.0; MAX_DIM]; MAX_DIM];
        a[0][..3].copy_from_slice(&[0.0, 2.0, 1.0]);
        a[1][..3].copy_from_slice(&[1.0, 1.0, 0.0]);
        a[2][..3].copy_from_slice(&[3.0, 0.0, 1.0]);
        let lu = lu_factor(&a, 3).unwrap();
        let mut b = [0.0; MAX_DIM];
        b[..3].copy_from_slice(&[5.0, 3.0, 6.0]);
        let x = lu_solve(&lu, &b);
        // By hand: x = (1.4, 1.6, 1.8).
        assert!((x[0] - 1.4).abs() < 1e-12 && (x[1] - 1.6).abs() < 1e-12);
        assert!((x[2] - 1.8).abs() < 1e-12);
        for i in 0..3 {
            let s: f64 = (0..3).map(|j| a[i][j] * x[j]).sum();
            assert!((s - b[i]).abs() < 1e-12);
        }
        // det by cofactor expansion: 0*(1) - 2*(1*1 - 0*3) + 1*(0 - 3) = -5
        assert!((lu.determinant() + 5.0).abs() < 1e-12);
    }

    #[test]
    fn singular_matrix_is_refused() {
        let mut a = [[0.0; MAX_DIM]; MAX_DIM];
        a[0][..2].copy_from_slice(&[1.0, 2.0]);
        a[1][..2].copy_from_slice(&[2.0, 4.0]);
        assert!(lu_factor(&a, 2).is_none());
    }
}
