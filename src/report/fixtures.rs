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
        program: None,
        accuracy_of: crate::model::AccuracyOf::Ratio,
        max_tempco_per_k: None,
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
        min_vce_v: 0.3,
        max_cost: None,
        max_noise: None,
        quantity: 1,
        outputs: 1,
        load: LoadKind::General,
        topologies: Filters::default(),
        classes: Filters::default(),
    }
}

/// A thin-film resistor class.
pub fn resistor_class() -> crate::model::ResistorClass {
    crate::model::ResistorClass {
        id: "thin-film-test".into(),
        summary: "thin film".into(),
        series: crate::model::Series::E96,
        tolerance: 0.001,
        tcr_per_k: 25e-6,
        unit_cost: 0.01,
        power_rating_w: None,
        provenance: "invented for renderer tests".into(),
        min_ohm: crate::model::DEFAULT_MIN_OHM,
        max_ohm: crate::model::DEFAULT_MAX_OHM,
    }
}

pub fn provenance() -> Provenance {
    Provenance {
        catalog_source: "test-catalog.yaml".into(),
        catalog_sha256: "0123456789abcdef".repeat(4),
        tool_version: "0.1.0".into(),
    }
}

/// A complete page with every section filled, user text carrying markup.
pub fn page() -> super::page::Page {
    use super::page::*;
    use super::plot::{self, BudgetBar};
    use crate::curves::{sweep, CurveOptions};

    let req = requirement();
    let set = sweep(&req, &CurveOptions::default(), Some(2.0), |i, v, _| {
        (v >= 0.2).then_some(i * (0.96 + 0.02 * v))
    });
    let budget = vec![
        BudgetBar {
            cause: "base current".into(),
            value: -0.004,
            random: false,
        },
        BudgetBar {
            cause: "V_BE offset".into(),
            value: 0.002,
            random: true,
        },
    ];
    let design = |rank: usize, title: &str| DesignView {
        rank: Some(rank),
        title: title.into(),
        figures: vec![
            Figure {
                key: "error_total".into(),
                label: "total error".into(),
                raw: Some(0.0123),
                text: "1.23 %".into(),
            },
            Figure {
                key: "part".into(),
                label: "part".into(),
                raw: None,
                text: "npn-dual-test <b>".into(),
            },
        ],
        checks: vec![CheckRow {
            name: "accuracy".into(),
            value: "1.23 %".into(),
            limit: "2.00 %".into(),
            margin: 0.385,
            pass: true,
        }],
        governing_check: "accuracy".into(),
        governing_margin: 0.385,
        cost: "0.16 EUR".into(),
        total_error: "1.23 %".into(),
    };
    Page {
        title: "tail <script>alert(1)</script> & sink".into(),
        verdict: "wilson with npn-dual-test meets every requirement".into(),
        feasible: true,
        requirement: vec![("name".into(), "tail <i>sink</i>".into())],
        parts: Table {
            header: vec!["designator".into(), "value".into()],
            rows: vec![vec!["Q1A".into(), "npn-dual-test <b>".into()]],
        },
        schematic_file: None,
        chosen: Some(design(1, "wilson · npn-dual-test <b>bold</b>")),
        runners_up: vec![design(2, "simple · npn-dual-test")],
        counts: "120 candidate designs: 7 feasible. A rejected design is counted under the check that rejected it.".into(),
        rejected_by: vec![("accuracy".into(), 100), ("compliance".into(), 13)],
        best_rejected: Some(Rejected {
            design: design(0, "simple · cheap"),
            check: "accuracy".into(),
            margin: -0.2,
            headline:
                "simple · cheap <u>x</u> reaches 2.40 % total error, the requirement allows 2.00 %"
                    .into(),
        }),
        relax: vec!["accuracy: 2.5 % instead of 2.0 % makes <simple> feasible".into()],
        budget_table: Table {
            header: vec!["cause".into(), "error".into()],
            rows: vec![vec!["base current".into(), "-0.400 %".into()]],
        },
        plots: vec![
            Plot {
                id: "budget".into(),
                title: "Error budget".into(),
                svg: plot::error_budget_svg(&budget, req.accuracy).unwrap(),
                caption: "bars".into(),
            },
            Plot {
                id: "curves".into(),
                title: "Curve family".into(),
                svg: plot::output_curves_svg(&set, None).unwrap(),
                caption: "curves".into(),
            },
        ],
        budget,
        corners: Table {
            header: vec!["I_in".into(), "error".into()],
            rows: vec![vec!["100 µA".into(), "1.00 %".into()]],
        },
        assumptions: vec![("catalog".into(), "my <catalog>.yaml".into())],
        cautions: vec!["catalog values are typical, not guaranteed".into()],
    }
}
