//! The commands that document one design: `curves` and `export --spice` (and the
//! decision page, `report`). Resolves a named design against the catalog and the
//! requirement, runs the sweeps, and writes files atomically through `atomic_file`.
//!
//! Output files are opened (as pending temporary files) before any solving starts, so a
//! bad path fails at once and an interrupted run leaves no half-written file.

use std::io::Write;
use std::path::{Path, PathBuf};

use super::{load_requirement, read_file, AppError, CatalogSource, Outcome};
use crate::atomic_file::PendingFile;
use crate::circuit::{Design, SolveOptions};
use crate::curves::{self, CurveOptions};
use crate::input;
use crate::model::{Catalog, ResistorClass, Role, Topology, TransistorClass};
use crate::report::{self, plot, spice, Format, Provenance, Style};
use crate::units::{self, Dimension};

/// A design named on the command line, as typed.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct DesignArgs {
    pub part: String,
    pub topology: String,
    pub helper: Option<String>,
    /// Emitter resistor (RE1 = RE2; RE2 for widlar), as typed (`4k7`, `100 ohm`).
    pub re: Option<String>,
    pub resistor: Option<String>,
}

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
}

impl<'a> Resolved<'a> {
    pub fn design(&self) -> Design<'a> {
        Design {
            topology: self.topology,
            pair: self.pair,
            helper: self.helper,
            re1_ohm: self.re1_ohm,
            re2_ohm: self.re2_ohm,
            re_tcr_per_k: self.resistor.map_or(0.0, |r| r.tcr_per_k),
        }
    }

    pub fn spice(&self) -> spice::SpiceDesign<'a> {
        spice::SpiceDesign {
            topology: self.topology,
            pair: self.pair,
            helper: self.helper,
            re1_ohm: self.re1_ohm,
            re2_ohm: self.re2_ohm,
            resistor: self.resistor,
        }
    }
}

fn unknown_class(catalog: &Catalog, name: &str, id: &str) -> AppError {
    let ids = catalog
        .transistors
        .iter()
        .map(|t| t.id.as_str())
        .chain(catalog.resistors.iter().map(|r| r.id.as_str()));
    AppError::UnknownClass {
        id: id.to_string(),
        suggestion: input::did_you_mean(id, ids),
        catalog: name.to_string(),
    }
}

/// Resolves `args` against `catalog` for a requirement of `req`'s kind.
pub fn resolve<'a>(
    args: &DesignArgs,
    catalog: &'a Catalog,
    catalog_name: &str,
    req: &crate::model::Requirement,
) -> Result<Resolved<'a>, AppError> {
    let topology = Topology::from_name(&args.topology).ok_or_else(|| {
        let names = crate::model::ALL_TOPOLOGIES.map(|t| t.name());
        AppError::Usage(format!(
            "`{}` is not a topology; expected one of {}{}",
            args.topology,
            input::list(&names.map(String::from)),
            input::did_you_mean(&args.topology, names.iter().copied())
                .map(|s| format!(" (did you mean `{s}`?)"))
                .unwrap_or_default()
        ))
    })?;
    let pair = catalog
        .transistor(&args.part)
        .ok_or_else(|| unknown_class(catalog, catalog_name, &args.part))?;
    let polarity = req.kind.polarity();
    if pair.polarity != polarity {
        return Err(AppError::Usage(format!(
            "`{}` is {} but the requirement `{}` is a {} and needs {} transistors",
            pair.id,
            pair.polarity.as_str().to_uppercase(),
            req.name,
            req.kind.as_str(),
            polarity.as_str().to_uppercase()
        )));
    }
    let desc = topology.desc();
    let has_helper = desc.transistors.iter().any(|t| t.role == Role::Helper);
    // Helpers use spare devices of the pair's package when one package holds the whole
    // topology (MODEL.md, packages); otherwise a single of the helper class.
    let spares = pair.devices_per_package as usize >= desc.transistors.len();
    let helper = match &args.helper {
        Some(id) => {
            let h = catalog
                .transistor(id)
                .ok_or_else(|| unknown_class(catalog, catalog_name, id))?;
            if h.polarity != polarity {
                return Err(AppError::Usage(format!(
                    "helper `{}` is {}; this {} needs {}",
                    h.id,
                    h.polarity.as_str().to_uppercase(),
                    req.kind.as_str(),
                    polarity.as_str().to_uppercase()
                )));
            }
            Some(h)
        }
        None if has_helper && !spares => Some(catalog.cheapest_single(polarity).ok_or_else(
            || {
                AppError::Usage(format!(
                    "{} needs a helper transistor and the catalog has no single-device {} class; name one with --helper",
                    topology.name(),
                    polarity.as_str().to_uppercase()
                ))
            },
        )?),
        None => None,
    };
    let helper = if has_helper && !spares { helper } else { None };
    let re = match &args.re {
        Some(text) => {
            let r = units::parse(text, Dimension::Resistance)
                .map_err(|e| AppError::Usage(format!("--re: {e}")))?;
            if !(r.is_finite() && r >= 0.0) {
                return Err(AppError::Usage(format!(
                    "--re: `{text}` must be zero or a positive resistance, like `100` or `4k7`"
                )));
            }
            r
        }
        None => 0.0,
    };
    let (re1_ohm, re2_ohm) = if !desc.has_re1 {
        if re <= 0.0 {
            return Err(AppError::Usage(format!(
                "{} needs its emitter resistor RE2; give it with --re, like `--re 4k7`",
                topology.name()
            )));
        }
        (0.0, re)
    } else {
        (re, re / req.ratio)
    };
    let resistor = match &args.resistor {
        Some(id) => Some(
            catalog
                .resistor(id)
                .ok_or_else(|| unknown_class(catalog, catalog_name, id))?,
        ),
        // The cheapest class when resistors are fitted and none was named.
        None if re1_ohm > 0.0 || re2_ohm > 0.0 => catalog
            .resistors
            .iter()
            .min_by(|a, b| a.unit_cost.total_cmp(&b.unit_cost).then(a.id.cmp(&b.id))),
        None => None,
    };
    Ok(Resolved {
        topology,
        pair,
        helper,
        re1_ohm,
        re2_ohm,
        resistor,
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
    let (catalog, name, _) = load_catalog_with_provenance(source)?;
    let req = load_requirement(req_path, &catalog)?;
    let design = resolve(args, &catalog, &name, &req)?;
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
        let mut parts = vec![plot::output_curves_svg(&set)?];
        // With a single programming current there is no error-against-current curve.
        if req.input_current_a.max > req.input_current_a.min {
            parts.push(plot::error_vs_input_svg(&set)?);
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
    let (catalog, name, prov) = load_catalog_with_provenance(source)?;
    let req = load_requirement(req_path, &catalog)?;
    let design = resolve(args, &catalog, &name, &req)?;
    let file = pending(out_path)?;
    let deck = spice::render(&design.spice(), &req, &prov);
    match file {
        Some(f) => f.commit(deck.as_bytes())?,
        None => out.write_all(deck.as_bytes())?,
    }
    Ok(Outcome::Success)
}
