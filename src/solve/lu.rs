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
            m.swap(piv, k);
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
