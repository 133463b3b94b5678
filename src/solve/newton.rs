//! The Newton step, the driver loop and gmin continuation.
//!
//! The step and the driver are separate so limiting and damping can be tested one step at
//! a time; the driver only decides when to stop.

use super::lu::{
    lu_factor, lu_factor_in_place, lu_solve, lu_solve_in_place, Matrix, Vector, MAX_DIM,
};

/// A square nonlinear system `F(x) = 0` of at most `MAX_DIM` unknowns.
///
/// Each equation also reports a *scale* (for a KCL equation: the largest branch current at
/// the node) so convergence can be judged per equation, relative to what flows there.
pub trait NonlinearSystem {
    fn dim(&self) -> usize;
    /// `F(x)` into `f` and each equation's scale into `scale`.
    fn residual(&self, x: &Vector, f: &mut Vector, scale: &mut Vector);
    /// `F(x)`, the scales and the analytic Jacobian `dF/dx` (row = equation).
    fn jacobian(&self, x: &Vector, f: &mut Vector, scale: &mut Vector, jac: &mut Matrix);
    /// May shorten a proposed Newton step `dx` taken from `x` (junction limiting).
    fn limit_step(&self, _x: &Vector, _dx: &mut Vector) {}
}

/// Equation `i` is satisfied when `|F_i| <= abs + rel * scale_i`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerance {
    pub abs: f64,
    pub rel: f64,
}

impl Tolerance {
    /// True when every one of the first `n` equations is within tolerance.
    pub fn met(&self, f: &Vector, scale: &Vector, n: usize) -> bool {
        (0..n).all(|i| f[i].abs() <= self.abs + self.rel * scale[i])
    }

    /// The relative part alone: where the absolute floor dominates (tiny currents), one
    /// more step costs little and makes balances such as source power = dissipated power
    /// hold to the relative tolerance.
    pub fn tightly_met(&self, f: &Vector, scale: &Vector, n: usize) -> bool {
        (0..n).all(|i| f[i].abs() <= self.rel * scale[i])
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NewtonOptions {
    pub max_iterations: u32,
    pub tolerance: Tolerance,
}

impl Default for NewtonOptions {
    fn default() -> Self {
        NewtonOptions {
            max_iterations: 60,
            // The KCL criterion of the engine: 1 pA + 1e-9 of the largest branch current.
            tolerance: Tolerance {
                abs: 1e-12,
                rel: 1e-9,
            },
        }
    }
}

/// Why the driver stopped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Convergence {
    /// Every equation is within tolerance at the returned point (checked there).
    Converged { iterations: u32 },
    /// The iteration budget ran out; `residual` is the largest `|F_i|` at the last point.
    MaxIterations { iterations: u32, residual: f64 },
    /// The Jacobian was singular.
    Singular { iterations: u32 },
    /// The residual or the step stopped being finite.
    NotFinite { iterations: u32 },
}

impl Convergence {
    pub fn is_converged(&self) -> bool {
        matches!(self, Convergence::Converged { .. })
    }

    pub fn iterations(&self) -> u32 {
        match *self {
            Convergence::Converged { iterations }
            | Convergence::MaxIterations { iterations, .. }
            | Convergence::Singular { iterations }
            | Convergence::NotFinite { iterations } => iterations,
        }
    }
}

/// What one Newton step found at its starting point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StepReport {
    /// The starting point already satisfies the tolerance; `x` was left alone.
    /// `tight` says whether it also meets `Tolerance::tightly_met`.
    Converged {
        tight: bool,
    },
    /// `x` was moved by a (possibly limited) Newton step.
    Stepped {
        residual: f64,
    },
    /// The starting point met the tolerance only loosely and `x` was moved by one more
    /// step (only when polishing was asked for).
    Polished,
    Singular,
    NotFinite,
}

/// Evaluates `F` and `J` at `x`; if the tolerance is met, says so; otherwise replaces `x`
/// with `x + dx`, `J dx = -F`, after the system's step limiting.
pub fn newton_step<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    tol: &Tolerance,
    jac: &mut Matrix,
) -> StepReport {
    step_inner(sys, x, tol, jac, false)
}

/// `newton_step`, but with `polish` a point that meets the tolerance only loosely is still
/// moved by one more step.
fn step_inner<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    tol: &Tolerance,
    jac: &mut Matrix,
    polish: bool,
) -> StepReport {
    let n = sys.dim();
    let mut f = [0.0; MAX_DIM];
    let mut scale = [0.0; MAX_DIM];
    sys.jacobian(x, &mut f, &mut scale, jac);
    let mut worst = 0.0f64;
    for &fi in &f[..n] {
        if !fi.is_finite() {
            return StepReport::NotFinite;
        }
        worst = worst.max(fi.abs());
    }
    let mut polishing = false;
    if tol.met(&f, &scale, n) {
        let tight = tol.tightly_met(&f, &scale, n);
        if tight || !polish {
            return StepReport::Converged { tight };
        }
        polishing = true;
    }
    let Some(piv) = lu_factor_in_place(jac, n) else {
        return StepReport::Singular;
    };
    let mut rhs = [0.0; MAX_DIM];
    for i in 0..n {
        rhs[i] = -f[i];
    }
    let mut dx = lu_solve_in_place(jac, &piv, n, &rhs);
    sys.limit_step(x, &mut dx);
    for i in 0..n {
        if !dx[i].is_finite() {
            return StepReport::NotFinite;
        }
        x[i] += dx[i];
    }
    if polishing {
        StepReport::Polished
    } else {
        StepReport::Stepped { residual: worst }
    }
}

/// Extra steps allowed on a point that meets the tolerance only through its absolute floor.
const MAX_POLISH_STEPS: u32 = 20;

/// Plain Newton from `x` (updated in place) until converged or out of budget.
pub fn solve<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    opts: &NewtonOptions,
) -> Convergence {
    let mut jac = [[0.0; MAX_DIM]; MAX_DIM];
    solve_in(sys, x, opts, &mut jac).0
}

/// `solve` in the caller's Jacobian storage (its contents on entry do not matter: a
/// matrix of `MAX_DIM^2` entries is worth zeroing once per circuit solve, not once per
/// Newton run). The flag is true when the run converged and `jac` holds the
/// (unfactorised) Jacobian at the returned `x`: the driver stops on a point whose
/// Jacobian it has just evaluated, so a caller needing it there (a stability test) has it
/// without evaluating it again.
pub fn solve_in<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    opts: &NewtonOptions,
    jac: &mut Matrix,
) -> (Convergence, bool) {
    let mut last = f64::INFINITY;
    // The last loosely converged point, kept while polishing steps are tried.
    let mut loose: Option<(Vector, u32)> = None;
    let mut polishes = 0;
    for it in 0..=opts.max_iterations {
        let before = *x;
        let r = step_inner(sys, x, &opts.tolerance, jac, polishes < MAX_POLISH_STEPS);
        match (r, loose) {
            (StepReport::Converged { .. }, _) => {
                return (Convergence::Converged { iterations: it }, true);
            }
            (StepReport::Polished, _) => {
                loose = Some((before, it));
                polishes += 1;
            }
            (_, Some((x_loose, it_loose))) => {
                // The polishing step did not land on a converged point: keep the checked one.
                *x = x_loose;
                let c = Convergence::Converged {
                    iterations: it_loose,
                };
                return (c, false);
            }
            (StepReport::Stepped { residual }, None) => last = residual,
            (StepReport::Singular, None) => {
                return (Convergence::Singular { iterations: it }, false)
            }
            (StepReport::NotFinite, None) => {
                return (Convergence::NotFinite { iterations: it }, false)
            }
        }
    }
    let c = Convergence::MaxIterations {
        iterations: opts.max_iterations,
        residual: last,
    };
    (c, false)
}

/// Weighted residual norm: each equation in units of its own tolerance.
fn merit<S: NonlinearSystem + ?Sized>(sys: &S, x: &Vector, tol: &Tolerance) -> f64 {
    let n = sys.dim();
    let mut f = [0.0; MAX_DIM];
    let mut scale = [0.0; MAX_DIM];
    sys.residual(x, &mut f, &mut scale);
    let mut m = 0.0;
    for i in 0..n {
        let w = f[i] / (tol.abs + tol.rel * scale[i]);
        m += w * w;
    }
    if m.is_finite() {
        m
    } else {
        f64::INFINITY
    }
}

/// Newton with backtracking: a step is halved until the weighted residual norm falls.
/// Slower than `solve` (one extra residual per trial), so it is only a fallback for
/// starts where full steps cycle.
pub fn solve_damped<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    opts: &NewtonOptions,
) -> Convergence {
    let n = sys.dim();
    let tol = &opts.tolerance;
    let mut jac = [[0.0; MAX_DIM]; MAX_DIM];
    let mut last = f64::INFINITY;
    for it in 0..=opts.max_iterations {
        let mut f = [0.0; MAX_DIM];
        let mut scale = [0.0; MAX_DIM];
        sys.jacobian(x, &mut f, &mut scale, &mut jac);
        if f[..n].iter().any(|v| !v.is_finite()) {
            return Convergence::NotFinite { iterations: it };
        }
        if tol.met(&f, &scale, n) {
            // Finish with plain Newton so the tight polish applies as everywhere else.
            let c = solve(sys, x, opts);
            return match c {
                Convergence::Converged { iterations } => Convergence::Converged {
                    iterations: it + iterations,
                },
                other => other,
            };
        }
        last = f[..n].iter().fold(0.0f64, |a, v| a.max(v.abs()));
        let Some(lu) = lu_factor(&jac, n) else {
            return Convergence::Singular { iterations: it };
        };
        let mut rhs = [0.0; MAX_DIM];
        for i in 0..n {
            rhs[i] = -f[i];
        }
        let mut dx = lu_solve(&lu, &rhs);
        sys.limit_step(x, &mut dx);
        let m0 = merit(sys, x, tol);
        let mut t = 1.0;
        let mut trial = *x;
        for _ in 0..30 {
            for i in 0..n {
                trial[i] = x[i] + t * dx[i];
            }
            if merit(sys, &trial, tol) < (1.0 - 1e-4 * t) * m0 {
                break;
            }
            t *= 0.5;
        }
        *x = trial;
    }
    Convergence::MaxIterations {
        iterations: opts.max_iterations,
        residual: last,
    }
}

/// `F(x) + g (x - x_ref)`: every unknown tied to a reference point through a conductance
/// `g` (`x_ref = 0`: to the rail, as gmin stepping in circuit simulation does). Large `g` makes the
/// system nearly linear; `g -> 0` recovers `F`.
struct Gmin<'a, S: ?Sized> {
    inner: &'a S,
    g: f64,
    x_ref: Vector,
}

impl<S: NonlinearSystem + ?Sized> NonlinearSystem for Gmin<'_, S> {
    fn dim(&self) -> usize {
        self.inner.dim()
    }
    fn residual(&self, x: &Vector, f: &mut Vector, scale: &mut Vector) {
        self.inner.residual(x, f, scale);
        for i in 0..self.dim() {
            let t = self.g * (x[i] - self.x_ref[i]);
            f[i] += t;
            scale[i] = scale[i].max(t.abs());
        }
    }
    fn jacobian(&self, x: &Vector, f: &mut Vector, scale: &mut Vector, jac: &mut Matrix) {
        self.inner.jacobian(x, f, scale, jac);
        for i in 0..self.dim() {
            let t = self.g * (x[i] - self.x_ref[i]);
            f[i] += t;
            scale[i] = scale[i].max(t.abs());
            jac[i][i] += self.g;
        }
    }
    fn limit_step(&self, x: &Vector, dx: &mut Vector) {
        self.inner.limit_step(x, dx)
    }
}

/// The result of a solve with continuation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Outcome {
    pub convergence: Convergence,
    /// Newton iterations spent in total, continuation included.
    pub iterations: u32,
}

/// Plain Newton first; when it fails, Newton with backtracking; when that fails, gmin
/// stepping (toward zero) from `g_start` down to zero, each stage
/// started from the previous stage's solution, with the step in `log g` halved on failure.
/// The final stage is always the unmodified system, so a `Converged` result is a checked
/// solution of `F(x) = 0` itself.
pub fn solve_with_continuation<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    opts: &NewtonOptions,
    g_start: f64,
) -> Outcome {
    let mut jac = [[0.0; MAX_DIM]; MAX_DIM];
    solve_with_continuation_in(sys, x, opts, g_start, &mut jac)
}

/// `solve_with_continuation` whose plain Newton runs in the caller's Jacobian storage
/// (see `solve_in`).
pub fn solve_with_continuation_in<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    opts: &NewtonOptions,
    g_start: f64,
    jac: &mut Matrix,
) -> Outcome {
    let x0 = *x;
    let first = solve_in(sys, x, opts, jac).0;
    if first.is_converged() {
        return Outcome {
            convergence: first,
            iterations: first.iterations(),
        };
    }
    *x = x0;
    let mut rest = solve_fallbacks(sys, x, opts, g_start);
    rest.iterations += first.iterations();
    if rest.convergence.is_converged() {
        rest.convergence = Convergence::Converged {
            iterations: rest.iterations,
        };
    }
    rest
}

/// The stages of `solve_with_continuation` after plain Newton (backtracking, then gmin
/// stepping), from `x`: for a caller that tried plain Newton and something of its own
/// first.
pub fn solve_fallbacks<S: NonlinearSystem + ?Sized>(
    sys: &S,
    x: &mut Vector,
    opts: &NewtonOptions,
    g_start: f64,
) -> Outcome {
    let x0 = *x;
    let damped = solve_damped(sys, x, opts);
    let mut total = damped.iterations();
    if damped.is_converged() {
        return Outcome {
            convergence: Convergence::Converged { iterations: total },
            iterations: total,
        };
    }
    let mut stage = Gmin {
        inner: sys,
        g: g_start,
        x_ref: [0.0; MAX_DIM],
    };
    *x = x0;
    let c = solve(&stage, x, opts);
    total += c.iterations();
    if !c.is_converged() {
        return Outcome {
            convergence: c,
            iterations: total,
        };
    }
    let g_floor = g_start * 1e-14;
    let mut log_step = 2.0f64; // decades per stage
    let mut accepted = *x;
    let mut g = g_start;
    loop {
        let next_g = if g <= g_floor {
            0.0
        } else {
            g / 10f64.powf(log_step)
        };
        stage.g = next_g;
        *x = accepted;
        let c = solve(&stage, x, opts);
        total += c.iterations();
        if c.is_converged() {
            accepted = *x;
            if next_g == 0.0 {
                return Outcome {
                    convergence: Convergence::Converged { iterations: total },
                    iterations: total,
                };
            }
            g = next_g;
            log_step = (log_step * 1.5).min(3.0);
        } else {
            log_step *= 0.5;
            if log_step < 0.05 {
                *x = accepted;
                return Outcome {
                    convergence: c,
                    iterations: total,
                };
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// x^2 = 2, y = x + 1
    struct Quadratic;
    impl NonlinearSystem for Quadratic {
        fn dim(&self) -> usize {
            2
        }
        fn residual(&self, x: &Vector, f: &mut Vector, s: &mut Vector) {
            f[0] = x[0] * x[0] - 2.0;
            f[1] = x[1] - x[0] - 1.0;
            s[0] = 2.0;
            s[1] = 1.0;
        }
        fn jacobian(&self, x: &Vector, f: &mut Vector, s: &mut Vector, j: &mut Matrix) {
            self.residual(x, f, s);
            j[0][0] = 2.0 * x[0];
            j[0][1] = 0.0;
            j[1][0] = -1.0;
            j[1][1] = 1.0;
        }
    }

    /// x^2 + 1 = 0 has no real root: Newton must give up, not return a number.
    struct NoRoot;
    impl NonlinearSystem for NoRoot {
        fn dim(&self) -> usize {
            1
        }
        fn residual(&self, x: &Vector, f: &mut Vector, s: &mut Vector) {
            f[0] = x[0] * x[0] + 1.0;
            s[0] = 1.0;
        }
        fn jacobian(&self, x: &Vector, f: &mut Vector, s: &mut Vector, j: &mut Matrix) {
            self.residual(x, f, s);
            j[0][0] = 2.0 * x[0];
        }
    }

    /// A diode-like equation exp(40 x) = 1e6 with steps limited to 0.1.
    struct Limited;
    impl NonlinearSystem for Limited {
        fn dim(&self) -> usize {
            1
        }
        fn residual(&self, x: &Vector, f: &mut Vector, s: &mut Vector) {
            f[0] = (40.0 * x[0]).exp() - 1e6;
            s[0] = 1e6;
        }
        fn jacobian(&self, x: &Vector, f: &mut Vector, s: &mut Vector, j: &mut Matrix) {
            self.residual(x, f, s);
            j[0][0] = 40.0 * (40.0 * x[0]).exp();
        }
        fn limit_step(&self, _x: &Vector, dx: &mut Vector) {
            dx[0] = dx[0].clamp(-0.1, 0.1);
        }
    }

    #[test]
    fn converges_quadratically_on_a_toy_system() {
        let mut x = [0.0; MAX_DIM];
        x[0] = 1.0;
        let c = solve(&Quadratic, &mut x, &NewtonOptions::default());
        assert!(c.is_converged());
        assert!(c.iterations() <= 7, "{c:?}");
        assert!((x[0] - 2f64.sqrt()).abs() < 1e-9);
        assert!((x[1] - 2f64.sqrt() - 1.0).abs() < 1e-9);
    }

    #[test]
    fn a_system_without_root_reports_max_iterations() {
        let mut x = [0.0; MAX_DIM];
        x[0] = 0.3;
        let opts = NewtonOptions {
            max_iterations: 40,
            ..NewtonOptions::default()
        };
        match solve(&NoRoot, &mut x, &opts) {
            Convergence::MaxIterations {
                iterations,
                residual,
            } => {
                assert_eq!(iterations, 40);
                assert!(residual >= 1.0);
            }
            Convergence::Singular { .. } | Convergence::NotFinite { .. } => {}
            c => panic!("unexpected {c:?}"),
        }
        let out = solve_with_continuation(&NoRoot, &mut x, &opts, 1.0);
        assert!(!out.convergence.is_converged());
    }

    #[test]
    fn one_step_respects_the_limit() {
        let mut x = [0.0; MAX_DIM];
        let mut j = [[0.0; MAX_DIM]; MAX_DIM];
        let r = newton_step(
            &Limited,
            &mut x,
            &NewtonOptions::default().tolerance,
            &mut j,
        );
        assert!(matches!(r, StepReport::Stepped { .. }));
        assert!((x[0] - 0.1).abs() < 1e-15);
        let c = solve(&Limited, &mut x, &NewtonOptions::default());
        assert!(c.is_converged());
        assert!((x[0] - 1e6f64.ln() / 40.0).abs() < 1e-9);
    }

    /// atan(x - 3) = 0 from far away: plain Newton diverges, gmin stepping toward the start
    /// point walks it in.
    struct Atan;
    impl NonlinearSystem for Atan {
        fn dim(&self) -> usize {
            1
        }
        fn residual(&self, x: &Vector, f: &mut Vector, s: &mut Vector) {
            f[0] = (x[0] - 3.0).atan();
            s[0] = 1.0;
        }
        fn jacobian(&self, x: &Vector, f: &mut Vector, s: &mut Vector, j: &mut Matrix) {
            self.residual(x, f, s);
            j[0][0] = 1.0 / (1.0 + (x[0] - 3.0).powi(2));
        }
    }

    #[test]
    fn continuation_rescues_a_divergent_start() {
        let opts = NewtonOptions::default();
        let mut x = [0.0; MAX_DIM];
        x[0] = 13.0;
        assert!(!solve(&Atan, &mut x, &opts).is_converged());
        x[0] = 13.0;
        let out = solve_with_continuation(&Atan, &mut x, &opts, 10.0);
        assert!(out.convergence.is_converged(), "{out:?}");
        assert!((x[0] - 3.0).abs() < 1e-9);
    }
}
