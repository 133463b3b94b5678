//! A named candidate design (topology, pair class, helper class, emitter resistors,
//! resistor class), how its transistors sit in packages, and what one mirror costs.
//!
//! Packaging follows MODEL.md: each matched pair sits in one package of the pair class;
//! helpers use spare devices of a package already placed, otherwise they are singles of
//! the helper class in their own packages. Cost is parts only (packages at their unit
//! cost plus one resistor per emitter resistor), per mirror.

use thiserror::Error;

use crate::model::{fanout, Catalog, ResistorClass, Role, Shape, Topology, TransistorClass};

/// A candidate as a designer names it. `re1_ohm`/`re2_ohm` are 0 when absent.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignSpec {
    pub topology: Topology,
    /// Class id of the matched pair(s).
    pub pair: String,
    /// Class id of the separate helper transistor(s); `None` when the topology has no
    /// helper or the pair's package has spare devices for it.
    pub helper: Option<String>,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    /// Resistor class id; `None` when the design has no resistor.
    pub resistor: Option<String>,
    /// The programming resistor R_ref, ohms; 0 when the input current is forced (or,
    /// with `r_ref_pick`, until it is chosen from the solved circuit).
    pub r_ref_ohm: f64,
    /// R_ref's resistor class id (may differ from the emitter resistors' class).
    pub r_ref_resistor: Option<String>,
    /// Which standard value around the exact R_ref a candidate takes, while
    /// `r_ref_ohm` is still to be chosen (see `check::program`).
    pub r_ref_pick: Option<RefPick>,
    /// Outputs on the one input side and the area ratio (`Shape::SINGLE` for one).
    pub shape: Shape,
}

/// The standard value just below or just above the exact programming resistor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum RefPick {
    Below,
    Above,
    /// The nearer of the two (what `check` takes when no `--rref` is given).
    Nearest,
}

impl DesignSpec {
    /// RE1 and one RE2 per output, where they exist.
    pub fn resistor_count(&self) -> u32 {
        u32::from(self.re1_ohm > 0.0)
            + u32::from(self.re2_ohm > 0.0) * u32::from(self.shape.outputs)
    }
}

/// One package on the board and the transistors (netlist names) it holds.
#[derive(Debug, Clone, PartialEq)]
pub struct Package<'a> {
    pub class: &'a TransistorClass,
    pub members: Vec<&'static str>,
}

/// The design's classes looked up in the catalog.
#[derive(Debug, Clone)]
pub struct ResolvedDesign<'a> {
    pub spec: DesignSpec,
    pub pair: &'a TransistorClass,
    pub helper: Option<&'a TransistorClass>,
    pub resistor: Option<&'a ResistorClass>,
    /// R_ref's class, when the design has a programming resistor.
    pub r_ref: Option<&'a ResistorClass>,
    pub packages: Vec<Package<'a>>,
    pub cost: f64,
}

impl ResolvedDesign<'_> {
    /// The package (index) holding transistor `name`.
    pub fn package_of(&self, name: &str) -> Option<usize> {
        self.packages.iter().position(|p| p.members.contains(&name))
    }

    /// The class of transistor `name`.
    pub fn class_of(&self, name: &str) -> Option<&TransistorClass> {
        self.package_of(name).map(|i| self.packages[i].class)
    }

    /// Every part with its reference designator (`Q1A`, `R1`).
    pub fn elements(&self) -> Vec<super::refdes::Element> {
        super::refdes::elements_of_shape(
            self.spec.topology,
            self.spec.shape,
            &self.packages,
            self.spec.re1_ohm,
            self.spec.re2_ohm,
            self.spec.resistor.as_deref(),
            (self.spec.r_ref_ohm > 0.0).then_some(super::refdes::RefPart {
                ohm: self.spec.r_ref_ohm,
                class: self.spec.r_ref_resistor.as_deref(),
            }),
        )
    }
}

#[derive(Debug, Clone, PartialEq, Error)]
pub enum DesignError {
    #[error("no transistor class `{0}` in the catalog")]
    UnknownPart(String),
    #[error("no resistor class `{0}` in the catalog")]
    UnknownResistor(String),
    #[error("class `{class}` is {found}, but a {kind} needs {wanted} transistors")]
    WrongPolarity {
        class: String,
        found: &'static str,
        kind: &'static str,
        wanted: &'static str,
    },
    #[error("the {topology} topology needs a helper transistor and the catalog has no single-device {polarity} class; name one with --helper")]
    NoHelper {
        topology: &'static str,
        polarity: &'static str,
    },
    #[error("helper class `{0}` must be a single-device class")]
    HelperNotSingle(String),
    #[error("{0}")]
    Resistors(String),
    #[error("{0}")]
    Shape(#[from] fanout::FormError),
}

/// How many helper (unmatched) transistors the topology has.
pub fn helper_count(topology: Topology) -> usize {
    topology
        .desc()
        .transistors
        .iter()
        .filter(|t| t.role == Role::Helper)
        .count()
}

/// Whether helpers fit in spare devices of the pair class's packages.
pub fn helpers_fit_in_spares(topology: Topology, pair: &TransistorClass) -> bool {
    let (_, spares) = pair_packages(topology, pair);
    spares >= helper_count(topology)
}

/// `helpers_fit_in_spares` for any shape (several outputs fill arrays first; see
/// `fanout::place`). False when the shape has no form.
pub fn helpers_fit_in_spares_for(topology: Topology, shape: Shape, pair: &TransistorClass) -> bool {
    if shape.is_single() {
        return helpers_fit_in_spares(topology, pair);
    }
    fanout::form(topology, shape).is_ok_and(|f| {
        fanout::place(f, pair.devices_per_package)
            .iter()
            .all(|s| !s.helper_class)
    })
}

/// Number of pair-class packages and spare devices left in them.
fn pair_packages(topology: Topology, pair: &TransistorClass) -> (usize, usize) {
    let pairs = usize::from(topology.desc().matched_pairs);
    let dpp = pair.devices_per_package.max(1) as usize;
    if dpp < 2 {
        // A pair of singles: one package per device, no spares.
        return (2 * pairs, 0);
    }
    let per_package = dpp / 2;
    let n = pairs.div_ceil(per_package);
    (n, n * dpp - 2 * pairs)
}

/// Look up the classes of `spec`, place the transistors in packages and price it.
///
/// `spec.helper` names the helper class when the topology needs one; when it is `None`
/// and the pair's packages have no spare device, the catalog's cheapest single of the
/// same polarity is used (and written back into the returned spec).
pub fn resolve<'a>(
    catalog: &'a Catalog,
    spec: &DesignSpec,
) -> Result<ResolvedDesign<'a>, DesignError> {
    let pair = catalog
        .transistor(&spec.pair)
        .ok_or_else(|| DesignError::UnknownPart(spec.pair.clone()))?;
    let resistor = match &spec.resistor {
        Some(id) => Some(
            catalog
                .resistor(id)
                .ok_or_else(|| DesignError::UnknownResistor(id.clone()))?,
        ),
        None => None,
    };
    let r_ref = match &spec.r_ref_resistor {
        Some(id) => Some(
            catalog
                .resistor(id)
                .ok_or_else(|| DesignError::UnknownResistor(id.clone()))?,
        ),
        None => None,
    };
    if !(spec.r_ref_ohm.is_finite() && spec.r_ref_ohm >= 0.0) {
        return Err(DesignError::Resistors(
            "R_ref must be a finite resistance".into(),
        ));
    }
    if spec.r_ref_ohm > 0.0 && r_ref.is_none() {
        return Err(DesignError::Resistors(
            "a programming resistor needs a resistor class (--rref-resistor)".into(),
        ));
    }
    emitter_resistors_valid(spec, resistor.is_some())?;
    let topology = spec.topology;
    let desc = topology.desc();
    let form = fanout::form(topology, spec.shape)?;
    let needs_helper =
        helper_count(topology) > 0 && !helpers_fit_in_spares_for(topology, spec.shape, pair);
    let helper = match (&spec.helper, needs_helper || spec.helper.is_some()) {
        (_, false) => None,
        (Some(id), true) => {
            let h = catalog
                .transistor(id)
                .ok_or_else(|| DesignError::UnknownPart(id.clone()))?;
            if h.devices_per_package != 1 {
                return Err(DesignError::HelperNotSingle(id.clone()));
            }
            if h.polarity != pair.polarity {
                return Err(DesignError::WrongPolarity {
                    class: id.clone(),
                    found: h.polarity.as_str(),
                    kind: if pair.polarity == crate::model::Polarity::Npn {
                        "sink"
                    } else {
                        "source"
                    },
                    wanted: pair.polarity.as_str(),
                });
            }
            Some(h)
        }
        (None, true) => Some(catalog.cheapest_single(pair.polarity).ok_or(
            DesignError::NoHelper {
                topology: desc.name,
                polarity: pair.polarity.as_str(),
            },
        )?),
    };
    let packages = if spec.shape.is_single() {
        place(topology, pair, helper)
    } else {
        place_form(form, pair, helper)
    };
    let cost = packages.iter().map(|p| p.class.unit_cost).sum::<f64>()
        + resistor.map_or(0.0, |r| r.unit_cost * f64::from(spec.resistor_count()))
        + r_ref.map_or(0.0, |r| r.unit_cost);
    let mut spec = spec.clone();
    spec.helper = helper.map(|h| h.id.clone());
    Ok(ResolvedDesign {
        spec,
        pair,
        helper,
        resistor,
        r_ref,
        packages,
        cost,
    })
}

/// The checks of `resolve` that depend on the emitter resistors' values (the rest depend
/// on the classes, the topology and the shape only).
fn emitter_resistors_valid(spec: &DesignSpec, has_class: bool) -> Result<(), DesignError> {
    if spec.resistor_count() > 0 && !has_class {
        return Err(DesignError::Resistors(
            "emitter resistors need a resistor class (--resistor)".into(),
        ));
    }
    let desc = spec.topology.desc();
    if spec.re1_ohm < 0.0 || spec.re2_ohm < 0.0 {
        return Err(DesignError::Resistors(
            "resistances must not be negative".into(),
        ));
    }
    if !desc.has_re1 && spec.re1_ohm > 0.0 {
        return Err(DesignError::Resistors(format!(
            "the {} topology has no RE1",
            desc.name
        )));
    }
    if spec.topology == Topology::Widlar && spec.re2_ohm <= 0.0 {
        return Err(DesignError::Resistors(
            "a Widlar mirror needs RE2 greater than zero".into(),
        ));
    }
    Ok(())
}

/// `resolve(catalog, spec).map_or_else(|_| spec.clone(), |d| d.spec)` for a `spec` that
/// may differ from `raw`, resolved as `first`, in its emitter resistors' values only (the
/// members of a search group): every other input of `resolve` is `raw`'s, so it succeeds
/// exactly when `first` did and the value checks pass, and then fills in the same helper.
/// A search rejects tens of thousands of candidates per requirement without solving
/// them; this names each one without a catalog lookup, a package layout and their
/// allocations. Any other `spec` is resolved.
pub fn resolved_sibling(
    catalog: &Catalog,
    raw: &DesignSpec,
    first: &ResolvedDesign,
    spec: &DesignSpec,
) -> DesignSpec {
    // Destructured so that a new field cannot be left out of the comparison.
    let DesignSpec {
        topology,
        pair,
        helper,
        re1_ohm: _,
        re2_ohm: _,
        resistor,
        r_ref_ohm,
        r_ref_resistor,
        r_ref_pick,
        shape,
    } = spec;
    let sibling = *topology == raw.topology
        && *pair == raw.pair
        && *helper == raw.helper
        && *resistor == raw.resistor
        && *r_ref_ohm == raw.r_ref_ohm
        && *r_ref_resistor == raw.r_ref_resistor
        && *r_ref_pick == raw.r_ref_pick
        && *shape == raw.shape;
    if !sibling {
        return resolve(catalog, spec).map_or_else(|_| spec.clone(), |d| d.spec);
    }
    let mut out = spec.clone();
    if emitter_resistors_valid(spec, first.resistor.is_some()).is_ok() {
        out.helper.clone_from(&first.spec.helper);
    }
    out
}

/// Place every transistor of a multi-output or area-ratio form (`fanout::place`); helpers
/// without a spare device are singles of `helper` (of the pair class without one).
pub fn place_form<'a>(
    form: &fanout::Form,
    pair: &'a TransistorClass,
    helper: Option<&'a TransistorClass>,
) -> Vec<Package<'a>> {
    let seats = fanout::place(form, pair.devices_per_package);
    let mut packages: Vec<Package<'a>> = Vec::new();
    for (line, seat) in form.transistors.iter().zip(&seats) {
        let k = usize::from(seat.package);
        while packages.len() <= k {
            packages.push(Package {
                class: pair,
                members: Vec::new(),
            });
        }
        if seat.helper_class {
            packages[k].class = helper.unwrap_or(pair);
        }
        packages[k].members.push(line.name);
    }
    packages
}

/// Place every transistor of the topology in a package (MODEL.md): each matched pair in
/// one package of the pair class, helpers in spare devices or, with `helper`, in singles.
pub fn place<'a>(
    topology: Topology,
    pair: &'a TransistorClass,
    helper: Option<&'a TransistorClass>,
) -> Vec<Package<'a>> {
    let desc = topology.desc();
    let (n_pair_packages, _) = pair_packages(topology, pair);
    let dpp = pair.devices_per_package.max(1) as usize;
    let mut packages: Vec<Package<'a>> = (0..n_pair_packages)
        .map(|_| Package {
            class: pair,
            members: Vec::new(),
        })
        .collect();
    let pairs_per_package = (dpp / 2).max(1);
    for line in desc.transistors {
        if let Role::Matched { pair: p, member } = line.role {
            let idx = if dpp < 2 {
                2 * usize::from(p) + usize::from(member)
            } else {
                usize::from(p) / pairs_per_package
            };
            packages[idx].members.push(line.name);
        }
    }
    for line in desc.transistors.iter().filter(|l| l.role == Role::Helper) {
        match helper {
            Some(h) => packages.push(Package {
                class: h,
                members: vec![line.name],
            }),
            None => match packages.iter_mut().find(|p| p.members.len() < dpp) {
                Some(spare) => spare.members.push(line.name),
                // No spare and no helper class named: one more package of the pair class
                // (`resolve` always names a helper class here; the SPICE export may not).
                None => packages.push(Package {
                    class: pair,
                    members: vec![line.name],
                }),
            },
        }
    }
    packages
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::model::{BjtParams, Matching, Polarity, Ratings, ResistorClass, Series, Thermal};

    pub(crate) fn class(id: &str, dpp: u32, cost: f64) -> TransistorClass {
        TransistorClass {
            id: id.into(),
            summary: String::new(),
            polarity: Polarity::Npn,
            devices_per_package: dpp,
            package: "SOT-363".into(),
            model: BjtParams::new(1e-14, 200.0, Some(100.0)),
            matching: (dpp > 1).then_some(Matching {
                vbe_offset_sigma_v: 1e-3,
                beta_mismatch_sigma: 0.02,
            }),
            ratings: Ratings {
                vceo_v: 45.0,
                ic_max_a: 0.1,
                power_per_package_w: 0.3,
            },
            thermal: Thermal {
                theta_self_k_per_w: 625.0,
                theta_mutual_k_per_w: 300.0,
            },
            unit_cost: cost,
            provenance: String::new(),
        }
    }

    pub(crate) fn catalog() -> Catalog {
        Catalog {
            currency: "EUR".into(),
            reference_quantity: 1000,
            transistors: vec![
                class("dual", 2, 0.10),
                class("quad", 4, 0.50),
                class("single", 1, 0.02),
            ],
            resistors: vec![ResistorClass {
                power_rating_w: None,
                id: "thick-1".into(),
                summary: String::new(),
                series: Series::E96,
                tolerance: 0.01,
                tcr_per_k: 100e-6,
                unit_cost: 0.005,
                provenance: String::new(),
                min_ohm: crate::model::DEFAULT_MIN_OHM,
                max_ohm: crate::model::DEFAULT_MAX_OHM,
            }],
        }
    }

    fn spec(t: Topology, pair: &str, re: f64) -> DesignSpec {
        DesignSpec {
            shape: crate::model::Shape::SINGLE,
            topology: t,
            pair: pair.into(),
            helper: None,
            re1_ohm: if t == Topology::Widlar { 0.0 } else { re },
            re2_ohm: re,
            resistor: (re > 0.0).then(|| "thick-1".into()),
            r_ref_ohm: 0.0,
            r_ref_resistor: None,
            r_ref_pick: None,
        }
    }

    #[test]
    fn packages_and_cost_follow_model_md_placement() {
        let cat = catalog();
        // Wilson on a dual: the helper is a separate single.
        let d = resolve(&cat, &spec(Topology::Wilson, "dual", 0.0)).unwrap();
        assert_eq!(d.packages.len(), 2);
        assert_eq!(d.spec.helper.as_deref(), Some("single"));
        assert!((d.cost - 0.12).abs() < 1e-12);
        // Wilson on a quad: the helper is a spare device, one package.
        let d = resolve(&cat, &spec(Topology::Wilson, "quad", 100.0)).unwrap();
        assert_eq!(d.packages.len(), 1);
        assert_eq!(d.packages[0].members.len(), 3);
        assert_eq!(d.spec.helper, None);
        assert!((d.cost - 0.51).abs() < 1e-12);
        // Cascode on duals: two packages, Q1/Q2 together and Q3/Q4 together.
        let d = resolve(&cat, &spec(Topology::Cascode, "dual", 0.0)).unwrap();
        assert_eq!(d.packages.len(), 2);
        assert_eq!(d.package_of("Q1"), d.package_of("Q2"));
        assert_eq!(d.package_of("Q3"), d.package_of("Q4"));
        assert_ne!(d.package_of("Q1"), d.package_of("Q3"));
        // A pair of singles: one package per device.
        let d = resolve(&cat, &spec(Topology::Simple, "single", 0.0)).unwrap();
        assert_eq!(d.packages.len(), 2);
        assert_ne!(d.package_of("Q1"), d.package_of("Q2"));
        // Widlar: only RE2 is a part.
        let d = resolve(&cat, &spec(Topology::Widlar, "dual", 4700.0)).unwrap();
        assert!((d.cost - 0.105).abs() < 1e-12);
    }

    #[test]
    fn bad_names_are_errors() {
        let cat = catalog();
        assert!(matches!(
            resolve(&cat, &spec(Topology::Simple, "nope", 0.0)),
            Err(DesignError::UnknownPart(_))
        ));
        let mut s = spec(Topology::Simple, "dual", 100.0);
        s.resistor = None;
        assert!(matches!(resolve(&cat, &s), Err(DesignError::Resistors(_))));
    }
}
