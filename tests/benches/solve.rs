//! Solves per second per topology, one thread, self-heating off and on.
//!
//! Each iteration solves one compiled design at one operating point from the start point
//! (no warm start), the way the corner checks use the engine. Speed goals: >= 1,000,000
//! solves/s for simple and >= 400,000 for cascode and wilson4 with self-heating off; a
//! quarter of that with self-heating on.
//!
//! `noise/*`: one self-heated solve with and without the output-noise analysis (issue 14),
//! emitter resistors 1 kΩ where the topology takes them. The difference is the cost the
//! noise adds per corner of a shown row; `rank` shows at most 10 rows (and the explained
//! one) at up to 18 corners, so the added time is at most 198 times the difference.

use criterion::{black_box, criterion_group, criterion_main, Criterion, Throughput};
use mirrorpick::circuit::{Design, Mismatch, Netlist, OperatingPoint, SolveOptions};
use mirrorpick::model::{
    BjtParams, Matching, Polarity, Ratings, Thermal, Topology, TransistorClass, ALL_TOPOLOGIES,
};

fn array_class() -> TransistorClass {
    TransistorClass {
        id: "npn-array-bench".into(),
        summary: "benchmark fixture".into(),
        polarity: Polarity::Npn,
        devices_per_package: 5,
        package: "bench".into(),
        model: BjtParams::new(2e-14, 150.0, Some(80.0)),
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
        provenance: "benchmark fixture".into(),
    }
}

fn bench(c: &mut Criterion) {
    let class = array_class();
    let op = OperatingPoint {
        rail_v: None,
        i_in_a: 1e-3,
        v_out_v: 5.0,
        supply_v: 12.0,
        t_amb_k: 300.15,
    };
    let mm = Mismatch {
        more: Default::default(),
        dref: 0.0,
        dvbe_v: [0.5e-3, -0.3e-3],
        dbeta: [0.01, -0.01],
        dre1: 0.0,
        dre2: 0.0,
    };
    for self_heating in [false, true] {
        let mut group = c.benchmark_group(if self_heating {
            "solve/self-heating"
        } else {
            "solve/isothermal"
        });
        group.throughput(Throughput::Elements(1));
        for t in ALL_TOPOLOGIES {
            let re2 = if t == Topology::Widlar { 1000.0 } else { 0.0 };
            let design = Design {
                shape: mirrorpick::model::Shape::SINGLE,
                r_ref: None,
                topology: t,
                pair: &class,
                helper: None,
                re1_ohm: 0.0,
                re2_ohm: re2,
                re_tcr_per_k: 0.0,
            };
            let net = Netlist::compile(&design, &mm).unwrap();
            let opts = SolveOptions { self_heating };
            group.bench_function(t.name(), |b| {
                b.iter(|| net.solve(black_box(&op), &opts).unwrap().i_out_a)
            });
        }
        group.finish();
    }
    let mut group = c.benchmark_group("noise");
    group.throughput(Throughput::Elements(1));
    let opts = SolveOptions { self_heating: true };
    for t in ALL_TOPOLOGIES {
        let design = Design {
            shape: mirrorpick::model::Shape::SINGLE,
            topology: t,
            pair: &class,
            helper: None,
            re1_ohm: if t.desc().has_re1 { 1000.0 } else { 0.0 },
            re2_ohm: 1000.0,
            re_tcr_per_k: 0.0,
            r_ref: None,
        };
        let net = Netlist::compile(&design, &mm).unwrap();
        group.bench_function(format!("{}/solve", t.name()), |b| {
            b.iter(|| net.solve(black_box(&op), &opts).unwrap().i_out_a)
        });
        group.bench_function(format!("{}/solve-with-noise", t.name()), |b| {
            b.iter(|| {
                net.solve_with_noise(black_box(&op), &opts)
                    .unwrap()
                    .1
                    .white_density()
            })
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
