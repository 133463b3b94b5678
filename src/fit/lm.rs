//! Nonlinear least squares for the model fit: a thin seam over the `levenberg-marquardt`
//! crate plus what the crate does not give, the parameter covariance and a measure of how
//! well the data pin each parameter down.
//!
//! The problem is a plain function from parameters to residuals; this module knows
//! nothing of transistors. The Jacobian is taken by central differences because each
//! residual is a solved circuit (the solver's own tolerance, about 1e-9 relative, is far
//! below the steps used here). Covariance at the optimum is `s^2 (J^T J)^-1` with the
//! residual variance `s^2 = SSR / (m - p)` (Seber & Wild, *Nonlinear Regression*, ch. 2;
//! also Press et al., *Numerical Recipes*, ch. 15, "nonlinear models"). It is computed
//! through the singular value decomposition of the column-scaled Jacobian so that an
//! ill-conditioned problem is seen (its condition number and its weakest direction are
//! returned) rather than inverted into confident nonsense.

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::{DMatrix, DVector, Dyn, Owned};

/// Residual value used when the model cannot be evaluated at a trial point: large, so
/// the optimiser rejects the step and shrinks its trust region.
const FAILED_RESIDUAL: f64 = 1e3;

/// The outcome of one least-squares run.
#[derive(Debug, Clone)]
pub struct LsOutcome {
    /// Parameters at the optimum.
    pub params: Vec<f64>,
    /// Residuals at the optimum.
    pub residuals: Vec<f64>,
    /// Sum of squared residuals.
    pub ssr: f64,
    /// Degrees of freedom `m - p`.
    pub dof: usize,
    /// `s^2 (J^T J)^-1` when the problem is well enough conditioned to invert, with
    /// `s^2 = SSR / dof` (None when dof is 0).
    pub covariance: Option<DMatrix<f64>>,
    /// Condition number of the Jacobian after scaling each column to unit length
    /// (infinite when a column is zero). Its square is that of `J^T J`.
    pub condition: f64,
    /// The weakest direction of the scaled problem (unit vector over parameters): the
    /// combination the data say least about.
    pub weakest_direction: Vec<f64>,
    /// Why the optimiser stopped, in its own words, and whether that counts as success.
    pub termination: String,
    pub converged: bool,
    pub evaluations: usize,
    /// Residual evaluations that failed during the run (trial points the model could not
    /// solve), and whether the optimum itself failed.
    pub failed_evaluations: usize,
}

/// Why a run could not start.
#[derive(Debug, Clone, PartialEq)]
pub enum LsError {
    /// The model cannot be evaluated at the starting point.
    StartFails,
    /// More parameters than residuals.
    TooFewResiduals { residuals: usize, params: usize },
}

struct Problem<'a, F> {
    model: &'a F,
    u: DVector<f64>,
    r: Option<DVector<f64>>,
    steps: &'a [f64],
    m: usize,
    failures: std::cell::Cell<usize>,
}

impl<F: Fn(&[f64]) -> Option<Vec<f64>>> Problem<'_, F> {
    fn eval(&self, u: &[f64]) -> Option<DVector<f64>> {
        match (self.model)(u) {
            Some(r) if r.len() == self.m && r.iter().all(|x| x.is_finite()) => {
                Some(DVector::from_vec(r))
            }
            _ => {
                self.failures.set(self.failures.get() + 1);
                None
            }
        }
    }

    fn jacobian_at(&self, u: &DVector<f64>, r0: Option<&DVector<f64>>) -> Option<DMatrix<f64>> {
        let p = u.len();
        let mut j = DMatrix::zeros(self.m, p);
        for k in 0..p {
            let h = self.steps[k] * (1.0 + u[k].abs());
            let mut up = u.as_slice().to_vec();
            let mut dn = u.as_slice().to_vec();
            up[k] += h;
            dn[k] -= h;
            let col = match (self.eval(&up), self.eval(&dn)) {
                (Some(a), Some(b)) => (a - b) / (2.0 * h),
                (Some(a), None) => (a - r0?) / h,
                (None, Some(b)) => (r0? - b) / h,
                (None, None) => return None,
            };
            j.set_column(k, &col);
        }
        Some(j)
    }
}

impl<F: Fn(&[f64]) -> Option<Vec<f64>>> LeastSquaresProblem<f64, Dyn, Dyn> for Problem<'_, F> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.u.copy_from(x);
        self.r = self.eval(x.as_slice());
    }

    fn params(&self) -> DVector<f64> {
        self.u.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        Some(
            self.r
                .clone()
                .unwrap_or_else(|| DVector::from_element(self.m, FAILED_RESIDUAL)),
        )
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        self.jacobian_at(&self.u, self.r.as_ref())
    }
}

/// Minimises the sum of squared residuals of `model` over its parameters, from `start`.
///
/// `steps[k]` is the relative finite-difference step of parameter k (the absolute step
/// is `steps[k] * (1 + |u_k|)`); choose parameters of order one so these are alike.
/// `m` is the number of residuals `model` returns.
pub fn least_squares<F>(
    model: &F,
    start: &[f64],
    steps: &[f64],
    m: usize,
) -> Result<LsOutcome, LsError>
where
    F: Fn(&[f64]) -> Option<Vec<f64>>,
{
    let p = start.len();
    if m < p || m == 0 {
        return Err(LsError::TooFewResiduals {
            residuals: m,
            params: p,
        });
    }
    let mut problem = Problem {
        model,
        u: DVector::from_column_slice(start),
        r: None,
        steps,
        m,
        failures: std::cell::Cell::new(0),
    };
    problem.set_params(&DVector::from_column_slice(start));
    if problem.r.is_none() {
        return Err(LsError::StartFails);
    }
    let (problem, report) = LevenbergMarquardt::new()
        .with_patience(200)
        .minimize(problem);
    let u = problem.u.clone();
    let r = problem.r.clone();
    let failed_here = r.is_none();
    let r = r.unwrap_or_else(|| DVector::from_element(m, f64::NAN));
    let ssr = r.norm_squared();
    let dof = m - p;
    let j = if failed_here {
        None
    } else {
        problem.jacobian_at(&u, Some(&r))
    };
    let (covariance, condition, weakest_direction) = match &j {
        Some(j) => analyse(j, ssr, dof),
        None => (None, f64::INFINITY, vec![0.0; p]),
    };
    Ok(LsOutcome {
        params: u.as_slice().to_vec(),
        residuals: r.as_slice().to_vec(),
        ssr,
        dof,
        covariance,
        condition,
        weakest_direction,
        termination: format!("{:?}", report.termination),
        converged: report.termination.was_successful() && !failed_here,
        evaluations: report.number_of_evaluations,
        failed_evaluations: problem.failures.get(),
    })
}

/// Covariance, condition number and weakest direction from the Jacobian at the optimum.
fn analyse(j: &DMatrix<f64>, ssr: f64, dof: usize) -> (Option<DMatrix<f64>>, f64, Vec<f64>) {
    let p = j.ncols();
    let norms: Vec<f64> = (0..p).map(|k| j.column(k).norm()).collect();
    if let Some(k) = norms.iter().position(|n| *n == 0.0 || !n.is_finite()) {
        let mut dir = vec![0.0; p];
        dir[k] = 1.0;
        return (None, f64::INFINITY, dir);
    }
    let mut js = j.clone();
    for (k, n) in norms.iter().enumerate() {
        js.column_mut(k).scale_mut(1.0 / n);
    }
    let svd = js.svd(false, true);
    let Some(v_t) = svd.v_t else {
        return (None, f64::INFINITY, vec![0.0; p]);
    };
    let s = &svd.singular_values;
    let (mut kmin, mut kmax) = (0, 0);
    for k in 0..s.len() {
        if s[k] < s[kmin] {
            kmin = k;
        }
        if s[k] > s[kmax] {
            kmax = k;
        }
    }
    let condition = if s[kmin] > 0.0 {
        s[kmax] / s[kmin]
    } else {
        f64::INFINITY
    };
    let weakest: Vec<f64> = v_t.row(kmin).iter().copied().collect();
    if dof == 0 || !condition.is_finite() || condition > 1e12 {
        return (None, condition, weakest);
    }
    let s2 = ssr / dof as f64;
    // (J^T J)^-1 = D^-1 V diag(1/s^2) V^T D^-1 with D the column norms.
    let mut cov = DMatrix::zeros(p, p);
    for a in 0..p {
        for b in 0..p {
            let mut acc = 0.0;
            for k in 0..s.len() {
                acc += v_t[(k, a)] * v_t[(k, b)] / (s[k] * s[k]);
            }
            cov[(a, b)] = s2 * acc / (norms[a] * norms[b]);
        }
    }
    (Some(cov), condition, weakest)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};

    /// y = A exp(-k t): the classic two-parameter test, with known noise.
    #[test]
    fn recovers_an_exponential_and_its_standard_errors() {
        let ts: Vec<f64> = (0..40).map(|i| i as f64 * 0.1).collect();
        let (a_true, k_true, sigma) = (2.0, 0.7, 0.01);
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(11);
        let noise = Normal::new(0.0, sigma).unwrap();
        let ys: Vec<f64> = ts
            .iter()
            .map(|t| a_true * (-k_true * t).exp() + noise.sample(&mut rng))
            .collect();
        let model = |u: &[f64]| {
            Some(
                ts.iter()
                    .zip(&ys)
                    .map(|(t, y)| u[0] * (-u[1] * t).exp() - y)
                    .collect::<Vec<_>>(),
            )
        };
        let out = least_squares(&model, &[1.0, 0.2], &[1e-6, 1e-6], ts.len()).unwrap();
        assert!(out.converged, "{}", out.termination);
        let cov = out.covariance.unwrap();
        let (se_a, se_k) = (cov[(0, 0)].sqrt(), cov[(1, 1)].sqrt());
        // The residual standard deviation recovers the noise within its sampling error
        // (38 degrees of freedom: about 11 % relative).
        let s = (out.ssr / out.dof as f64).sqrt();
        assert!((s / sigma - 1.0).abs() < 0.35, "s = {s}");
        assert!((out.params[0] - a_true).abs() < 3.0 * se_a);
        assert!((out.params[1] - k_true).abs() < 3.0 * se_k);
        assert!(se_a > 1e-4 && se_a < 0.05, "se_a = {se_a}");
        assert!(out.condition < 100.0);
    }

    #[test]
    fn confounded_parameters_show_as_ill_conditioned() {
        // y = (a + b) t: only the sum is seen.
        let ts: Vec<f64> = (1..10).map(f64::from).collect();
        let model = |u: &[f64]| {
            Some(
                ts.iter()
                    .map(|t| (u[0] + u[1]) * t - 3.0 * t)
                    .collect::<Vec<_>>(),
            )
        };
        let out = least_squares(&model, &[0.5, 0.5], &[1e-6, 1e-6], ts.len()).unwrap();
        assert!(out.condition > 1e6, "condition {}", out.condition);
        // The weakest direction is a - b.
        let d = &out.weakest_direction;
        assert!((d[0] + d[1]).abs() < 1e-6 && (d[0].abs() - 0.5f64.sqrt()).abs() < 1e-6);
    }

    #[test]
    fn a_model_that_fails_at_the_start_is_an_error() {
        let model = |_: &[f64]| None;
        assert_eq!(
            least_squares(&model, &[1.0], &[1e-6], 3).unwrap_err(),
            LsError::StartFails
        );
    }
}
