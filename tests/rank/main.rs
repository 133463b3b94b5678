//! Ranking, checks and the `rank`/`check`/`cheaper` commands, end to end.

mod cli;
mod consistency;
mod facts;
mod outputs;
mod program;
mod search;
mod yield_verdict;

use std::path::{Path, PathBuf};

use mirrorpick::check::DesignSpec;
use mirrorpick::model::{
    BjtParams, Catalog, Filters, LoadKind, Matching, MirrorKind, Polarity, Range, Ratings,
    Requirement, ResistorClass, Series, Thermal, Topology, TransistorClass, ZERO_CELSIUS_K,
};

pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).to_path_buf()
}

/// The shipped examples, sorted.
/// The shipped single-channel requirement examples (board designs, `board-*.yaml`, are
/// not requirements).
pub fn examples() -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(root().join("requirements-examples"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .filter(|p| {
            !p.file_name()
                .is_some_and(|n| n.to_string_lossy().starts_with("board-"))
        })
        .collect();
    v.sort();
    v
}

pub fn default_catalog() -> Catalog {
    mirrorpick::input::load_default_catalog().unwrap()
}

pub fn load_example(path: &Path, catalog: &Catalog) -> Requirement {
    let text = std::fs::read_to_string(path).unwrap();
    mirrorpick::input::load_requirement(&path.display().to_string(), &text, Some(catalog)).unwrap()
}

/// An NPN class with textbook parameters: IS, BF, VAF (None = no Early effect), the
/// V_BE offset sigma, and negligible self-heating unless `theta` says otherwise.
pub fn npn(id: &str, dpp: u32, bf: f64, vaf: Option<f64>, vbe_sigma: f64) -> TransistorClass {
    TransistorClass {
        id: id.into(),
        summary: "test class".into(),
        polarity: Polarity::Npn,
        devices_per_package: dpp,
        package: "SOT-363".into(),
        model: BjtParams::new(1e-14, bf, vaf),
        matching: (dpp > 1).then_some(Matching {
            vbe_offset_sigma_v: vbe_sigma,
            beta_mismatch_sigma: 0.0,
        }),
        ratings: Ratings {
            vceo_v: 45.0,
            ic_max_a: 0.1,
            power_per_package_w: 0.3,
        },
        thermal: Thermal {
            theta_self_k_per_w: 1e-3,
            theta_mutual_k_per_w: 1e-3,
        },
        unit_cost: if dpp > 1 { 0.1 } else { 0.02 },
        provenance: "test".into(),
    }
}

pub fn resistor(id: &str, series: Series, tolerance: f64) -> ResistorClass {
    ResistorClass {
        power_rating_w: None,
        id: id.into(),
        summary: "test resistor".into(),
        series,
        tolerance,
        tcr_per_k: 0.0,
        unit_cost: 0.01,
        provenance: "test".into(),
        min_ohm: mirrorpick::model::DEFAULT_MIN_OHM,
        max_ohm: mirrorpick::model::DEFAULT_MAX_OHM,
    }
}

pub fn catalog(transistors: Vec<TransistorClass>, resistors: Vec<ResistorClass>) -> Catalog {
    Catalog {
        currency: "EUR".into(),
        reference_quantity: 1,
        transistors,
        resistors,
    }
}

/// 1 mA sink at 25 °C only, output 2…10 V on a 12 V supply.
pub fn requirement(accuracy: f64) -> Requirement {
    let room = ZERO_CELSIUS_K + 25.0;
    Requirement {
        outputs: 1,
        program: None,
        accuracy_of: mirrorpick::model::AccuracyOf::Ratio,
        max_tempco_per_k: None,
        name: "test".into(),
        kind: MirrorKind::Sink,
        supply_v: 12.0,
        input_current_a: Range {
            min: 1e-3,
            max: 1e-3,
        },
        ratio: 1.0,
        output_voltage_v: Range {
            min: 2.0,
            max: 10.0,
        },
        ambient_k: Range {
            min: room,
            max: room,
        },
        accuracy,
        confidence_sigma: 3.0,
        min_yield: None,
        min_output_resistance_ohm: None,
        input_voltage_max_v: None,
        min_vce_v: 0.3,
        max_cost: None,
        max_noise: None,
        quantity: 1,
        load: LoadKind::General,
        topologies: Filters::default(),
        classes: Filters::default(),
    }
}

pub fn spec(t: Topology, part: &str, re: f64, resistor: Option<&str>) -> DesignSpec {
    DesignSpec {
        shape: mirrorpick::model::Shape::SINGLE,
        topology: t,
        pair: part.into(),
        helper: None,
        re1_ohm: re,
        re2_ohm: re,
        resistor: resistor.map(Into::into),
        r_ref_ohm: 0.0,
        r_ref_resistor: None,
        r_ref_pick: None,
    }
}
