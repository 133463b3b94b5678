//! The programming resistor R_ref: its exact value from the solved circuit and the
//! standard values a candidate takes.
//!
//! R_ref is chosen per design, not enumerated: the design is solved at 25 °C, the lowest
//! output voltage, with the input current forced and corrected until the output is the
//! wanted one; then `R_ref = (V_rail - V_in) / I_in` with the solved `V_in` (one V_BE plus
//! the RE1 drop for a simple mirror, two V_BE for a Wilson or cascode: whatever the
//! netlist gives). Each allowed resistor class offers the standard values just below and
//! just above that exact value. Must not: print, or judge a design (that is `evaluate`).

use std::collections::HashMap;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex, OnceLock};

use super::corners::ROOM_K;
use super::design::{resolve, DesignSpec, RefPick};
use crate::circuit::{Design, Mismatch, Netlist, OperatingPoint, SolveOptions};
use crate::model::{Catalog, Requirement, ResistorClass, Shape, Topology};

/// Output-current corrections of the forced input current (each removes most of the
/// remaining error: the mirror's ratio barely depends on its current).
const CORRECTIONS: usize = 3;

/// The exact R_ref of `spec` for the requirement's wanted output at the nominal rail, or
/// `None` when the requirement has no programming section, the design does not solve or
/// the rail is below the solved input voltage.
pub fn exact_r_ref(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    solves: &AtomicU64,
) -> Option<f64> {
    let p = req.program?;
    let mut forced = spec.clone();
    forced.r_ref_ohm = 0.0;
    forced.r_ref_resistor = None;
    forced.r_ref_pick = None;
    let d = resolve(catalog, &forced).ok()?;
    let net = Netlist::compile(
        &Design {
            shape: d.spec.shape,
            topology: d.spec.topology,
            pair: d.pair,
            helper: d.helper,
            re1_ohm: d.spec.re1_ohm,
            re2_ohm: d.spec.re2_ohm,
            re_tcr_per_k: d.resistor.map_or(0.0, |r| r.tcr_per_k),
            r_ref: None,
        },
        &Mismatch::default(),
    )
    .ok()?;
    let t_amb_k = ROOM_K.clamp(req.ambient_k.min, req.ambient_k.max);
    let mut i_in = p.output_current_a / req.ratio;
    let mut v_in = f64::NAN;
    for _ in 0..CORRECTIONS {
        let op = OperatingPoint {
            i_in_a: i_in,
            rail_v: None,
            v_out_v: req.output_voltage_v.min,
            supply_v: req.supply_v,
            t_amb_k,
        };
        solves.fetch_add(1, Ordering::Relaxed);
        let sol = net.solve(&op, &SolveOptions { self_heating: true }).ok()?;
        v_in = sol.v_in_v;
        if sol.i_out_a.is_nan() || sol.i_out_a <= 0.0 {
            return None;
        }
        i_in *= p.output_current_a / sol.i_out_a;
    }
    let r = (p.rail_nominal_v() - v_in) / i_in;
    (r.is_finite() && r > 0.0).then_some(r)
}

/// The standard value of `class` just below (or at) and just above (or at) `exact`.
pub fn standard_around(exact: f64, class: &ResistorClass) -> Option<(f64, f64)> {
    let v = class.series.values_between(exact / 1.25, exact * 1.25);
    let below = v
        .iter()
        .copied()
        .filter(|&x| x <= exact)
        .fold(None, |_, x| Some(x))?;
    let above = v.iter().copied().find(|&x| x >= exact)?;
    Some((below, above))
}

/// `spec` with its R_ref value chosen, when it still has to be (`r_ref_pick` set and no
/// value): the standard value below, above or nearest the exact one. Left unchanged
/// (value 0) when R_ref cannot be sized; the evaluation then fails the design.
pub fn choose_r_ref(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    solves: &AtomicU64,
) -> DesignSpec {
    pick_r_ref(
        catalog,
        spec,
        || exact_r_ref(req, catalog, spec, solves),
        standard_around,
    )
}

/// `choose_r_ref` with the exact value from `exact` and the standard values around it
/// from `around`, both asked only when R_ref is still to be chosen.
fn pick_r_ref(
    catalog: &Catalog,
    spec: &DesignSpec,
    exact: impl FnOnce() -> Option<f64>,
    around: impl FnOnce(f64, &ResistorClass) -> Option<(f64, f64)>,
) -> DesignSpec {
    let mut out = spec.clone();
    let (Some(pick), Some(id)) = (spec.r_ref_pick, spec.r_ref_resistor.as_deref()) else {
        return out;
    };
    if spec.r_ref_ohm > 0.0 {
        return out;
    }
    let Some(class) = catalog.resistor(id) else {
        return out;
    };
    let Some(exact) = exact() else {
        return out;
    };
    let Some((below, above)) = around(exact, class) else {
        return out;
    };
    out.r_ref_ohm = match pick {
        RefPick::Below => below,
        RefPick::Above => above,
        RefPick::Nearest => {
            if (exact / below).ln() <= (above / exact).ln() {
                below
            } else {
                above
            }
        }
    };
    out.r_ref_pick = None;
    out
}

/// What the exact R_ref depends on: the design without its programming resistor.
type SizeKey = (
    Topology,
    Shape,
    String,
    Option<String>,
    Option<String>,
    u64,
    u64,
);

/// The standard values below and above an exact R_ref in one class (`standard_around`).
type Around = Option<(f64, f64)>;

/// The exact R_ref of each design, solved once and shared: a search meets one design
/// many times (under both picks, under every R_ref class, in a screen's probe and again
/// in its verification), and the exact value depends on none of those. Each value is
/// solved by exactly one thread (the others wait for it), so the solve count does not
/// depend on scheduling. The standard values around each exact value are kept too, per
/// R_ref class (a pure function of the two, looked up again at every meeting).
#[derive(Default)]
pub struct RefSizes {
    memo: Mutex<HashMap<SizeKey, Arc<OnceLock<Option<f64>>>>>,
    around: Mutex<HashMap<(u64, String), Around>>,
}

impl RefSizes {
    pub fn new() -> Self {
        Self::default()
    }

    /// `choose_r_ref`, the exact value solved at most once per design.
    pub fn choose(
        &self,
        req: &Requirement,
        catalog: &Catalog,
        spec: &DesignSpec,
        solves: &AtomicU64,
    ) -> DesignSpec {
        pick_r_ref(
            catalog,
            spec,
            || {
                let key = (
                    spec.topology,
                    spec.shape,
                    spec.pair.clone(),
                    spec.helper.clone(),
                    spec.resistor.clone(),
                    spec.re1_ohm.to_bits(),
                    spec.re2_ohm.to_bits(),
                );
                let cell = {
                    let mut memo = self.memo.lock().unwrap_or_else(|e| e.into_inner());
                    Arc::clone(memo.entry(key).or_default())
                };
                *cell.get_or_init(|| exact_r_ref(req, catalog, spec, solves))
            },
            |exact, class| {
                let key = (exact.to_bits(), class.id.clone());
                let mut around = self.around.lock().unwrap_or_else(|e| e.into_inner());
                *around
                    .entry(key)
                    .or_insert_with(|| standard_around(exact, class))
            },
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::Series;

    /// A shared size is the size `choose_r_ref` gives, for either pick, and a design met
    /// again (other pick, other R_ref class) costs no solve.
    #[test]
    fn shared_sizes_equal_fresh_ones_and_are_solved_once() {
        let catalog = crate::input::load_default_catalog().unwrap();
        let mut req = crate::check::corners::tests::requirement();
        req.program = Some(crate::model::Program {
            rail_v: crate::model::Range {
                min: 11.4,
                max: 12.6,
            },
            output_current_a: 1e-3,
        });
        let spec = |pick, class: &str| DesignSpec {
            shape: Shape::SINGLE,
            topology: Topology::Simple,
            pair: "npn-dual-general".into(),
            helper: None,
            re1_ohm: 100.0,
            re2_ohm: 100.0,
            resistor: Some("thick-film-1pct".into()),
            r_ref_ohm: 0.0,
            r_ref_resistor: Some(class.into()),
            r_ref_pick: Some(pick),
        };
        let sizes = RefSizes::new();
        let shared = AtomicU64::new(0);
        let fresh = AtomicU64::new(0);
        let first = sizes.choose(
            &req,
            &catalog,
            &spec(RefPick::Below, "thick-film-1pct"),
            &shared,
        );
        let once = shared.load(Ordering::Relaxed);
        assert!(once > 0);
        for (pick, class) in [
            (RefPick::Below, "thick-film-1pct"),
            (RefPick::Above, "thick-film-1pct"),
            (RefPick::Nearest, "thin-film-0p1pct"),
        ] {
            let s = spec(pick, class);
            let a = sizes.choose(&req, &catalog, &s, &shared);
            let b = choose_r_ref(&req, &catalog, &s, &fresh);
            assert!(a.r_ref_ohm > 0.0 && a.r_ref_pick.is_none());
            assert_eq!(a.r_ref_ohm, b.r_ref_ohm, "{pick:?} {class}");
        }
        let bare = DesignSpec {
            r_ref_resistor: None,
            r_ref_pick: None,
            ..spec(RefPick::Below, "thick-film-1pct")
        };
        let exact = exact_r_ref(&req, &catalog, &bare, &fresh).unwrap();
        let class = catalog.resistor("thick-film-1pct").unwrap();
        assert_eq!(first.r_ref_ohm, standard_around(exact, class).unwrap().0);
        assert_eq!(shared.load(Ordering::Relaxed), once, "solved once");
        // Another emitter resistor is another design.
        let mut other = spec(RefPick::Below, "thick-film-1pct");
        other.re1_ohm = 200.0;
        other.re2_ohm = 200.0;
        sizes.choose(&req, &catalog, &other, &shared);
        assert_eq!(shared.load(Ordering::Relaxed), 2 * once);
    }

    #[test]
    fn standard_values_bracket_the_exact_one() {
        let class = ResistorClass {
            id: "e96".into(),
            summary: String::new(),
            series: Series::E96,
            tolerance: 0.01,
            tcr_per_k: 1e-4,
            unit_cost: 0.0,
            power_rating_w: None,
            min_ohm: crate::model::DEFAULT_MIN_OHM,
            max_ohm: crate::model::DEFAULT_MAX_OHM,
            provenance: String::new(),
        };
        // IEC 60063 E96: 511k and 523k bracket 518k.
        assert_eq!(standard_around(518e3, &class), Some((511e3, 523e3)));
        // A standard value is its own neighbour on both sides.
        assert_eq!(standard_around(4.75e3, &class), Some((4.75e3, 4.75e3)));
    }
}
