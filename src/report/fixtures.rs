//! Small hand-made classes and a requirement for renderer tests. Invented values for
//! tests of formatting only, never used as check values of the electrical model.

use crate::model::{
    BjtParams, Filters, LoadKind, Matching, MirrorKind, Polarity, Range, Ratings, Requirement,
    Thermal, TransistorClass,
};

use super::Provenance;

pub fn npn_dual() -> TransistorClass {
    let mut model = BjtParams::new(2e-14, 200.0, Some(90.0));
    model.knee_current_a = Some(0.08);
    TransistorClass {
        id: "npn-dual-test".into(),
        summary: "test dual <b>bold</b> & co".into(),
        polarity: Polarity::Npn,
        devices_per_package: 2,
        package: "SOT-363".into(),
        model,
        matching: Some(Matching {
            vbe_offset_sigma_v: 1e-3,
            beta_mismatch_sigma: 0.03,
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
        unit_cost: 0.08,
        provenance: "typical of the class, test fixture".into(),
    }
}

pub fn npn_single() -> TransistorClass {
    TransistorClass {
        id: "npn-single-test".into(),
        summary: "test single".into(),
        devices_per_package: 1,
        matching: None,
        model: BjtParams::new(1e-14, 150.0, None),
        unit_cost: 0.02,
        ..npn_dual()
    }
}

pub fn pnp_dual() -> TransistorClass {
    TransistorClass {
        id: "pnp-dual-test".into(),
        polarity: Polarity::Pnp,
        model: BjtParams::new(2e-14, 180.0, Some(40.0)),
        ..npn_dual()
    }
}

pub fn requirement() -> Requirement {
    Requirement {
        name: "test tail sink".into(),
        kind: MirrorKind::Sink,
        supply_v: 12.0,
        input_current_a: Range {
            min: 1e-4,
            max: 1e-3,
        },
        ratio: 1.0,
        output_voltage_v: Range {
            min: 0.5,
            max: 10.0,
        },
        ambient_k: Range {
            min: 233.15,
            max: 358.15,
        },
        accuracy: 0.01,
        confidence_sigma: 3.0,
        min_yield: None,
        min_output_resistance_ohm: None,
        input_voltage_max_v: None,
        max_cost: None,
        quantity: 1,
        load: LoadKind::General,
        topologies: Filters::default(),
        classes: Filters::default(),
    }
}

pub fn provenance() -> Provenance {
    Provenance {
        catalog_source: "test-catalog.yaml".into(),
        catalog_sha256: "0123456789abcdef".repeat(4),
        tool_version: "0.1.0".into(),
    }
}
