//! Transistor classes built in code for the checks (typical values, not catalog data).

use mirrorpick::circuit::{Design, Mismatch, OperatingPoint, SolveOptions};
use mirrorpick::model::{
    BjtParams, Matching, Polarity, Ratings, Thermal, Topology, TransistorClass,
};

pub fn class(id: &str, polarity: Polarity, per_package: u32, model: BjtParams) -> TransistorClass {
    TransistorClass {
        id: id.to_string(),
        summary: "test fixture".to_string(),
        polarity,
        devices_per_package: per_package,
        package: "test".to_string(),
        model,
        matching: Some(Matching {
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
        unit_cost: 0.1,
        provenance: "test fixture".to_string(),
    }
}

/// An NPN array with enough devices for every topology.
pub fn npn(bf: f64, vaf: Option<f64>) -> TransistorClass {
    class(
        "npn-array-test",
        Polarity::Npn,
        5,
        BjtParams::new(1e-14, bf, vaf),
    )
}

pub fn design(topology: Topology, pair: &TransistorClass, re1: f64, re2: f64) -> Design<'_> {
    Design {
        shape: mirrorpick::model::Shape::SINGLE,
        r_ref: None,
        topology,
        pair,
        helper: None,
        re1_ohm: re1,
        re2_ohm: re2,
        re_tcr_per_k: 0.0,
    }
}

pub fn op(i_in_a: f64, v_out_v: f64) -> OperatingPoint {
    OperatingPoint {
        i_in_a,
        rail_v: None,
        v_out_v,
        supply_v: 30.0,
        t_amb_k: 300.15,
    }
}

pub fn nominal() -> Mismatch {
    Mismatch::default()
}

pub fn iso() -> SolveOptions {
    SolveOptions {
        self_heating: false,
    }
}

pub fn heated() -> SolveOptions {
    SolveOptions { self_heating: true }
}
