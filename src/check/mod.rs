//! Verification of one candidate design against a requirement: the operating corners,
//! the solved figures, ratings, error budget, Monte Carlo yield and the verdicts.
//!
//! Everything here is a function of (requirement, catalog, design) and the solver; it
//! never prints, reads files or ranks. `evaluate` and `program` (which sizes the
//! programming resistor from the solved input voltage) are the only files that call the
//! circuit solver; the other files judge solved states and can be tested on hand-made
//! operating points.

mod budget;
mod confidence;
mod corners;
mod design;
mod evaluate;
mod montecarlo;
mod noise;
pub mod outputs;
mod program;
mod ratings;
pub mod refdes;
mod verdict;

use std::sync::atomic::AtomicU64;

pub use budget::{
    BudgetLine, ErrorBudget, RandomCause, Sensitivities, SystematicCause, RANDOM_INPUTS,
};
pub use confidence::{wilson_interval, MIN_SAMPLES};
pub use corners::{
    corners, design_current, input_corner, probe_corner, temperatures, OperatingCorner, ROOM_K,
};
pub use design::{
    helper_count, helpers_fit_in_spares, helpers_fit_in_spares_for, place, place_form, resolve,
    resolved_sibling, DesignError, DesignSpec, Package, RefPick, ResolvedDesign,
};
pub use evaluate::{
    compliance_rule, tempco_of, CornerMemo, CornerRow, Depth, Evaluation, Evaluator, Figures,
    MonteCarlo, SampleFailure, YIELD_SCREEN_BAND,
};
pub use montecarlo::linear_yield;
pub use noise::{describe as describe_noise_measure, NoiseFigure, NoiseShare};
pub use program::{choose_r_ref, exact_r_ref, standard_around, RefSizes};
pub use ratings::{
    derated_power, dissipation, forward_biased_collectors, ic_max, keeps_min_vce, vceo,
    CornerState, DeviceState, POWER_FULL_K, POWER_ZERO_K, VCEO_DERATING,
};
pub use verdict::{first_failure, governing, Check, CheckName};

use crate::model::{Catalog, Requirement};

/// Resolve `spec` in the catalog, confirm it fits the requirement's polarity, and verify
/// it at `depth`. Returns the resolved spec (helper filled in) and the evaluation.
/// `solves` counts solver calls.
pub fn verify(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    depth: Depth,
    mc: MonteCarlo,
    solves: &AtomicU64,
) -> Result<(DesignSpec, Evaluation), DesignError> {
    let spec = &choose_r_ref(req, catalog, spec, solves);
    let d = resolve(catalog, spec)?;
    let want = req.kind.polarity();
    if d.pair.polarity != want {
        return Err(DesignError::WrongPolarity {
            class: d.pair.id.clone(),
            found: d.pair.polarity.as_str(),
            kind: req.kind.as_str(),
            wanted: want.as_str(),
        });
    }
    let ev = Evaluator::new(req, &d, solves).evaluate(depth, mc);
    Ok((d.spec.clone(), ev))
}

/// Monte Carlo yield of `spec` with every sampled build re-solved at every corner.
pub fn solved_yield(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    mc: MonteCarlo,
    solves: &AtomicU64,
) -> Result<f64, DesignError> {
    let spec = &choose_r_ref(req, catalog, spec, solves);
    let d = resolve(catalog, spec)?;
    Ok(Evaluator::new(req, &d, solves).solved_yield(mc))
}
