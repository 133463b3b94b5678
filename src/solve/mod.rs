//! Generic Newton–Raphson for small nonlinear systems.
//!
//! Owns: the `NonlinearSystem` trait (residual + analytic Jacobian + optional step
//! limiting), a small fixed-capacity dense LU, one Newton step, the driver loop, and a gmin
//! continuation used when plain Newton fails. Convergence is a value, never a panic.
//! Must not: import anything else of this crate (it knows nothing of transistors), allocate
//! inside the iteration loop, or report a point whose residual it has not checked.

// Numeric kernels index several parallel fixed-size arrays with one loop variable.
#![allow(clippy::needless_range_loop)]

mod lu;
mod newton;

pub use lu::{
    lu_factor, lu_factor_in_place, lu_solve, lu_solve_in_place, schur_determinant_in_place, Lu,
    Matrix, Pivots, Vector, MAX_DIM,
};
pub use newton::{
    newton_step, solve, solve_damped, solve_fallbacks, solve_in, solve_with_continuation,
    solve_with_continuation_in, Convergence, NewtonOptions, NonlinearSystem, Outcome, StepReport,
    Tolerance,
};
