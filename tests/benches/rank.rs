//! `rank` on every shipped example with the default catalog: full corners, self-heating
//! and yield for the shown rows (default options, 10 rows, 1000 Monte Carlo builds).
//!
//! Goals (issue 4): under 0.5 s per example; the default search doing at most 10 % of the
//! exhaustive search's solves (printed once per example before timing, from the solver
//! call counter); a 10x synthetic catalog (every transistor class copied ten times with
//! slightly different prices) taking at most 12x the time of the default catalog.
//!
//! Run short: `cargo bench --bench rank -- --warm-up-time 1 --measurement-time 5 --sample-size 10`.

use std::path::{Path, PathBuf};

use criterion::{criterion_group, criterion_main, Criterion};

use mirrorpick::model::{Catalog, Requirement};
use mirrorpick::rank::{rank, RankOptions, Silent};

fn examples() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("requirements-examples");
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    v.sort();
    v
}

fn load(path: &Path, catalog: &Catalog) -> Requirement {
    let text = std::fs::read_to_string(path).unwrap();
    mirrorpick::input::load_requirement(&path.display().to_string(), &text, Some(catalog)).unwrap()
}

/// Every transistor class ten times over, prices nudged so the copies do not tie.
fn tenfold(c: &Catalog) -> Catalog {
    let mut out = c.clone();
    out.transistors.clear();
    for k in 0..10 {
        for t in &c.transistors {
            let mut t = t.clone();
            if k > 0 {
                t.id = format!("{}-copy{k}", t.id);
                t.unit_cost *= 1.0 + 0.01 * k as f64;
            }
            out.transistors.push(t);
        }
    }
    out
}

fn bench(c: &mut Criterion) {
    let catalog = mirrorpick::input::load_default_catalog().unwrap();
    let opts = RankOptions::default();
    let exhaustive = RankOptions {
        exhaustive: true,
        ..opts
    };
    let mut group = c.benchmark_group("rank");
    for path in examples() {
        let name = path.file_stem().unwrap().to_string_lossy().to_string();
        let req = load(&path, &catalog);
        let d = rank(&req, &catalog, &opts, &Silent).unwrap().report;
        let e = rank(&req, &catalog, &exhaustive, &Silent).unwrap().report;
        eprintln!(
            "{name}: {} candidates; default {} solves, exhaustive {} solves ({:.1} %)",
            e.evaluated,
            d.solves,
            e.solves,
            100.0 * d.solves as f64 / e.solves as f64
        );
        group.bench_function(&name, |b| {
            b.iter(|| rank(&req, &catalog, &opts, &Silent).unwrap())
        });
    }
    let big = tenfold(&catalog);
    for path in examples()
        .iter()
        .filter(|p| p.ends_with("ltp-tail-sink.yaml"))
    {
        let req = load(path, &big);
        group.bench_function("ltp-tail-sink, 10x catalog", |b| {
            b.iter(|| rank(&req, &big, &opts, &Silent).unwrap())
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
