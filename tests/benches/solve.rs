//! Solves per second per topology, one thread, self-heating off and on, in per-thread CPU
//! time and in wall clock.
//!
//! Each iteration solves one compiled design at one operating point from the start point
//! (no warm start), the way the corner checks use the engine. Speed goals with
//! self-heating off: >= 1,000,000 solves/s for the two-transistor topologies (simple,
//! widlar) and >= 400,000 for the three- and four-transistor ones (beta-helper, wilson,
//! cascode, wilson4); a quarter of that with self-heating on.
//!
//! `solve/{isothermal,self-heating}/<topology>/wall` is criterion's wall-clock measure;
//! `.../cpu` times the same loop on the thread's CPU clock
//! (`CLOCK_THREAD_CPUTIME_ID`), which time other processes take on a shared machine does
//! not inflate. After the criterion groups a table prints both rates side by side
//! against the goals, from one loop per row timed on both clocks.
//!
//! `noise/*`: one self-heated solve with and without the output-noise analysis (issue 14),
//! emitter resistors 1 kΩ where the topology takes them. The difference is the cost the
//! noise adds per corner of a shown row; `rank` shows at most 10 rows (and the explained
//! one) at up to 18 corners, so the added time is at most 198 times the difference.
//!
//! Run short: `cargo bench --bench solve -- --warm-up-time 1 --measurement-time 2`.

use std::time::{Duration, Instant};

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
    let mut table = Vec::new();
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
            group.bench_function(format!("{}/wall", t.name()), |b| {
                b.iter(|| net.solve(black_box(&op), &opts).unwrap().i_out_a)
            });
            group.bench_function(format!("{}/cpu", t.name()), |b| {
                b.iter_custom(|iters| {
                    let start = thread_cpu();
                    for _ in 0..iters {
                        black_box(net.solve(black_box(&op), &opts).unwrap().i_out_a);
                    }
                    thread_cpu() - start
                })
            });
            let (cpu, wall) = rates(&net, &op, &opts);
            table.push((t, self_heating, cpu, wall));
        }
        group.finish();
    }
    print_table(&table);
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

/// CPU time this thread has used.
fn thread_cpu() -> Duration {
    let mut ts = libc::timespec {
        tv_sec: 0,
        tv_nsec: 0,
    };
    // SAFETY: `ts` is a valid, writable timespec; the clock id is a constant of the platform.
    let rc = unsafe { libc::clock_gettime(libc::CLOCK_THREAD_CPUTIME_ID, &mut ts) };
    assert_eq!(rc, 0, "clock_gettime(CLOCK_THREAD_CPUTIME_ID) failed");
    Duration::new(ts.tv_sec as u64, ts.tv_nsec as u32)
}

/// Solves per second on the thread's CPU clock and on the wall clock, from one loop of
/// about half a second.
fn rates(net: &Netlist, op: &OperatingPoint, opts: &SolveOptions) -> (f64, f64) {
    let (cpu0, wall0) = (thread_cpu(), Instant::now());
    let mut n = 0u64;
    while wall0.elapsed() < Duration::from_millis(500) {
        for _ in 0..1000 {
            black_box(net.solve(black_box(op), opts).unwrap().i_out_a);
        }
        n += 1000;
    }
    let (cpu, wall) = (thread_cpu() - cpu0, wall0.elapsed());
    (n as f64 / cpu.as_secs_f64(), n as f64 / wall.as_secs_f64())
}

/// The goal of the module doc, solves per second.
fn goal(t: Topology, self_heating: bool) -> f64 {
    let isothermal = if t.desc().transistors.len() <= 2 {
        1_000_000.0
    } else {
        400_000.0
    };
    if self_heating {
        isothermal / 4.0
    } else {
        isothermal
    }
}

fn print_table(rows: &[(Topology, bool, f64, f64)]) {
    println!();
    println!("solves per second, one thread (CPU: this thread's CPU clock; wall: elapsed)");
    println!(
        "{:<12} {:<13} {:>12} {:>12} {:>12}  verdict (CPU)",
        "topology", "self-heating", "CPU", "wall", "goal"
    );
    for &(t, heating, cpu, wall) in rows {
        let g = goal(t, heating);
        println!(
            "{:<12} {:<13} {:>12.0} {:>12.0} {:>12.0}  {}",
            t.name(),
            if heating { "on" } else { "off" },
            cpu,
            wall,
            g,
            if cpu >= g {
                "meets".to_string()
            } else {
                format!("misses ({:.0} % of goal)", 100.0 * cpu / g)
            }
        );
    }
}

criterion_group!(benches, bench);
criterion_main!(benches);
