//! The commands that document one design: `curves` and `export --spice` (and the
//! decision page, `report`). Resolves a named design against the catalog and the
//! requirement, runs the sweeps, and writes files atomically through `atomic_file`.
//!
//! Output files are opened (as pending temporary files) before any solving starts, so a
//! bad path fails at once and an interrupted run leaves no half-written file.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::rank::{design_spec, DesignArgs};
use super::{load_requirement, read_file, AppError, CatalogSource, Outcome};
use crate::atomic_file::PendingFile;
use crate::check;
use crate::circuit::{Design, SolveOptions};
use crate::curves::{self, CurveOptions};
use crate::input;
use crate::model::{Catalog, ResistorClass, Role, Topology, TransistorClass};
use crate::report::{self, plot, spice, Format, Provenance, Style};

/// A design resolved against the catalog.
#[derive(Debug, Clone, Copy)]
pub struct Resolved<'a> {
    pub topology: Topology,
    pub pair: &'a TransistorClass,
    /// The class of helpers that are not spare devices of the pair's package.
    pub helper: Option<&'a TransistorClass>,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    pub resistor: Option<&'a ResistorClass>,
    /// Outputs on the input side and the area ratio.
    pub shape: crate::model::Shape,
    /// The class the helper transistors actually sit in, per the package layout, when it
    /// is not the pair's class.
    pub helper_placed: Option<&'a TransistorClass>,
    /// The programming resistor, ohms (0: the input current is forced).
    pub r_ref_ohm: f64,
    /// R_ref's class.
    pub r_ref_class: Option<&'a ResistorClass>,
}

impl<'a> Resolved<'a> {
    pub fn design(&self) -> Design<'a> {
        Design {
            shape: self.shape,
            r_ref: (self.r_ref_ohm > 0.0).then(|| crate::circuit::RefResistor {
                ohm: self.r_ref_ohm,
                tcr_per_k: self.r_ref_class.map_or(0.0, |r| r.tcr_per_k),
            }),
            topology: self.topology,
            pair: self.pair,
            helper: self.helper,
            re1_ohm: self.re1_ohm,
            re2_ohm: self.re2_ohm,
            re_tcr_per_k: self.resistor.map_or(0.0, |r| r.tcr_per_k),
        }
    }

    /// `wilson · npn-dual-general · RE1 = RE2 = 100 Ω`, for plot titles.
    pub fn label(&self) -> String {
        let ohm = |r: f64| report::eng::eng(r, "ohm", report::eng::Charset::Unicode);
        let res = match (self.re1_ohm > 0.0, self.re2_ohm > 0.0) {
            (false, false) => String::new(),
            (false, true) => format!(" · RE2 = {}", ohm(self.re2_ohm)),
            _ if self.re1_ohm == self.re2_ohm => format!(" · RE1 = RE2 = {}", ohm(self.re1_ohm)),
            _ => format!(
                " · RE1 = {}, RE2 = {}",
                ohm(self.re1_ohm),
                ohm(self.re2_ohm)
            ),
        };
        let r_ref = if self.r_ref_ohm > 0.0 {
            format!(" · R_ref = {}", ohm(self.r_ref_ohm))
        } else {
            String::new()
        };
        format!("{} · {}{res}{r_ref}", self.topology.name(), self.pair.id)
    }

    pub fn spice(&self) -> spice::SpiceDesign<'a> {
        spice::SpiceDesign {
            topology: self.topology,
            pair: self.pair,
            helper: self.helper_placed,
            re1_ohm: self.re1_ohm,
            re2_ohm: self.re2_ohm,
            resistor: self.resistor,
            shape: self.shape,
            r_ref: self
                .r_ref_class
                .filter(|_| self.r_ref_ohm > 0.0)
                .map(|class| spice::SpiceRef {
                    ohm: self.r_ref_ohm,
                    class,
                }),
        }
    }
}

/// Resolves `args` against `catalog` for `req`, the same way `check` does (RE2 from the
/// ratio, helpers as spare devices or singles), and confirms the polarity.
pub fn resolve<'a>(
    args: &DesignArgs,
    catalog: &'a Catalog,
    req: &crate::model::Requirement,
) -> Result<Resolved<'a>, AppError> {
    let spec = design_spec(req, catalog, args)?;
    // Without --rref, R_ref is the standard value nearest the exact one, as `check` takes.
    let spec = check::choose_r_ref(req, catalog, &spec, &std::sync::atomic::AtomicU64::new(0));
    if let (Some(p), true) = (req.program, spec.r_ref_pick.is_some()) {
        return Err(AppError::Usage(format!(
            "R_ref cannot be sized for this design: it does not solve at the wanted output \
             current {} or the nominal rail {} is below its input voltage; name R_ref with --rref",
            crate::units::format_prefixed(p.output_current_a, "A"),
            crate::units::format_prefixed(p.rail_nominal_v(), "V")
        )));
    }
    let d = check::resolve(catalog, &spec).map_err(crate::rank::RankError::from)?;
    let polarity = req.kind.polarity();
    if d.pair.polarity != polarity {
        return Err(AppError::Usage(format!(
            "`{}` is {} but the requirement `{}` is a {} and needs {} transistors",
            d.pair.id,
            d.pair.polarity.as_str().to_uppercase(),
            req.name,
            req.kind.as_str(),
            polarity.as_str().to_uppercase()
        )));
    }
    let helper_placed = spec
        .topology
        .desc()
        .transistors
        .iter()
        .find(|t| t.role == Role::Helper)
        .and_then(|t| d.package_of(t.name).map(|i| d.packages[i].class))
        .filter(|c| c.id != d.pair.id);
    Ok(Resolved {
        helper_placed,
        topology: spec.topology,
        pair: d.pair,
        helper: d.helper,
        re1_ohm: spec.re1_ohm,
        re2_ohm: spec.re2_ohm,
        resistor: d.resistor,
        shape: spec.shape,
        r_ref_ohm: spec.r_ref_ohm,
        r_ref_class: d.r_ref,
    })
}

/// The catalog, the name messages give it, and its provenance (source and SHA-256).
pub fn load_catalog_with_provenance(
    source: &CatalogSource,
) -> Result<(Catalog, String, Provenance), AppError> {
    let (name, text) = match source {
        CatalogSource::Default => (
            input::DEFAULT_CATALOG_NAME.to_string(),
            input::DEFAULT_CATALOG_YAML.to_string(),
        ),
        CatalogSource::File(p) => (p.display().to_string(), read_file(p)?),
    };
    let catalog = input::load_catalog(&name, &text)?;
    let prov = Provenance {
        catalog_source: name.clone(),
        catalog_sha256: report::sha256_hex(text.as_bytes()),
        tool_version: env!("CARGO_PKG_VERSION").to_string(),
    };
    Ok((catalog, name, prov))
}

fn pending(path: &Option<PathBuf>) -> Result<Option<PendingFile>, AppError> {
    Ok(match path {
        Some(p) => Some(PendingFile::create(p)?),
        None => None,
    })
}

/// `curves`: the table/CSV/JSON on stdout, and the plot when `svg` is given.
#[allow(clippy::too_many_arguments)]
pub fn run_curves(
    source: &CatalogSource,
    req_path: &Path,
    args: &DesignArgs,
    extremes: bool,
    self_heating: bool,
    format: Format,
    svg: &Option<PathBuf>,
    style: Style,
    out: &mut dyn Write,
) -> Result<Outcome, AppError> {
    let (catalog, _, _) = load_catalog_with_provenance(source)?;
    let req = load_requirement(req_path, &catalog)?;
    let design = resolve(args, &catalog, &req)?;
    let svg_file = pending(svg)?;
    let opts = CurveOptions {
        ambient_extremes: extremes,
        ..CurveOptions::default()
    };
    let set = curves::for_design(
        &design.design(),
        &req,
        &opts,
        &SolveOptions { self_heating },
    )?;
    if let Some(f) = svg_file {
        let title = format!("{}: {}", req.name, design.label());
        let mut parts = vec![plot::output_curves_svg(&set, Some(&title))?];
        // With a single programming current there is no error-against-current curve.
        if req.input_current_a.max > req.input_current_a.min {
            parts.push(plot::error_vs_input_svg(&set)?);
        }
        if let Some(rail) = plot::output_vs_rail_svg(&set)? {
            parts.push(rail);
        }
        f.commit(stack_svgs(&parts).as_bytes())?;
    }
    report::curves::write(&set, format, style, out)?;
    Ok(Outcome::Success)
}

/// Two standalone SVG plots stacked into one SVG file (nested `<svg>` elements).
fn stack_svgs(parts: &[String]) -> String {
    let size = |s: &str, key: &str| -> u32 {
        s.split_once(&format!("{key}=\""))
            .and_then(|(_, r)| r.split('"').next())
            .and_then(|v| v.parse().ok())
            .unwrap_or(0)
    };
    let width = parts.iter().map(|p| size(p, "width")).max().unwrap_or(0);
    let height: u32 = parts.iter().map(|p| size(p, "height")).sum();
    let mut o = format!(
        "<svg width=\"{width}\" height=\"{height}\" viewBox=\"0 0 {width} {height}\" xmlns=\"http://www.w3.org/2000/svg\">\n"
    );
    let mut y = 0;
    for p in parts {
        // Nested svg elements take x/y; place each plot below the previous one.
        o.push_str(&p.replacen("<svg ", &format!("<svg x=\"0\" y=\"{y}\" "), 1));
        y += size(p, "height");
    }
    o.push_str("</svg>\n");
    o
}

/// `export --spice`: the deck on stdout, or into `out_path` atomically.
pub fn run_export_spice(
    source: &CatalogSource,
    req_path: &Path,
    args: &DesignArgs,
    out_path: &Option<PathBuf>,
    out: &mut dyn Write,
) -> Result<Outcome, AppError> {
    let (catalog, _, prov) = load_catalog_with_provenance(source)?;
    let req = load_requirement(req_path, &catalog)?;
    let design = resolve(args, &catalog, &req)?;
    let file = pending(out_path)?;
    let deck = spice::render(&design.spice(), &req, &prov);
    match file {
        Some(f) => f.commit(deck.as_bytes())?,
        None => out.write_all(deck.as_bytes())?,
    }
    Ok(Outcome::Success)
}
