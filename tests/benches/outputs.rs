//! `rank` with several outputs on one reference (issue 13): every shipped single-channel
//! example as it is, then the one-reference LED example with 1, 2, 4 and 8 outputs.
//!
//! Goal: `rank` on the shipped examples within 1.5x of its time before multi-output forms
//! existed (the same examples, the same options), and a multi-output requirement of up to
//! eight outputs ranked in comparable time.
//!
//! Run short: `cargo bench --bench outputs -- --warm-up-time 1 --measurement-time 5 --sample-size 10`.

use std::path::{Path, PathBuf};

use criterion::{criterion_group, criterion_main, Criterion};

use mirrorpick::model::{Catalog, Requirement};
use mirrorpick::rank::{rank, RankOptions, Silent};

/// The shipped single-channel requirement examples (board designs are not requirements).
fn examples() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("requirements-examples");
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
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

fn load(path: &Path, catalog: &Catalog) -> Requirement {
    let text = std::fs::read_to_string(path).unwrap();
    mirrorpick::input::load_requirement(&path.display().to_string(), &text, Some(catalog)).unwrap()
}

fn bench(c: &mut Criterion) {
    let catalog = mirrorpick::input::load_default_catalog().unwrap();
    let opts = RankOptions::default();
    let mut group = c.benchmark_group("outputs");
    for path in examples() {
        let name = path.file_stem().unwrap().to_string_lossy().to_string();
        let req = load(&path, &catalog);
        group.bench_function(&name, |b| {
            b.iter(|| rank(&req, &catalog, &opts, &Silent).unwrap())
        });
    }
    let led = examples()
        .into_iter()
        .find(|p| p.ends_with("led-string-sinks-one-reference.yaml"))
        .expect("the one-reference LED example");
    for n in [1u8, 2, 4, 8] {
        let mut req = load(&led, &catalog);
        req.outputs = n;
        let run = rank(&req, &catalog, &opts, &Silent).unwrap();
        eprintln!(
            "{n} outputs: {} candidates evaluated, {} solves, {} feasible",
            run.report.evaluated, run.report.solves, run.report.feasible
        );
        group.bench_function(format!("led one reference, {n} outputs"), |b| {
            b.iter(|| rank(&req, &catalog, &opts, &Silent).unwrap())
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
