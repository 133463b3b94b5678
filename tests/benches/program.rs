//! `rank` on the shipped examples programmed by a resistor from a rail, against the
//! same requirement with the input current forced at the nominal `output_current /
//! ratio` (what the tool could only rank before programming resistors existed: the same
//! candidates without R_ref, no rail corners, accuracy of the ratio).
//!
//! Goal (issue 12): the programmed rank within 1.3x of the forced one. Each pair is
//! timed side by side (`programmed/<example>`, `forced/<example>`); the solver call
//! counts are printed once before timing.
//!
//! Run short: `cargo bench --bench program -- --warm-up-time 1 --measurement-time 5 --sample-size 10`.

use std::path::{Path, PathBuf};

use criterion::{criterion_group, criterion_main, Criterion};

use mirrorpick::model::{AccuracyOf, Catalog, Requirement};
use mirrorpick::rank::{rank, RankOptions, Silent};

fn programmed_examples(catalog: &Catalog) -> Vec<(String, Requirement)> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("requirements-examples");
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    v.sort();
    v.into_iter()
        .filter_map(|path| {
            let text = std::fs::read_to_string(&path).unwrap();
            let req = mirrorpick::input::load_requirement(
                &path.display().to_string(),
                &text,
                Some(catalog),
            )
            .ok()?;
            req.program?;
            Some((path.file_stem()?.to_string_lossy().to_string(), req))
        })
        .collect()
}

/// The same requirement with its input current forced at the nominal value.
fn forced(req: &Requirement) -> Requirement {
    let mut r = req.clone();
    r.program = None;
    r.accuracy_of = AccuracyOf::Ratio;
    r
}

fn bench(c: &mut Criterion) {
    let catalog = mirrorpick::input::load_default_catalog().unwrap();
    let opts = RankOptions::default();
    let mut group = c.benchmark_group("program");
    for (name, req) in programmed_examples(&catalog) {
        let f = forced(&req);
        let p = rank(&req, &catalog, &opts, &Silent).unwrap().report;
        let q = rank(&f, &catalog, &opts, &Silent).unwrap().report;
        eprintln!(
            "{name}: programmed {} solves, {} feasible; forced {} solves, {} feasible",
            p.solves, p.feasible, q.solves, q.feasible
        );
        group.bench_function(format!("programmed/{name}"), |b| {
            b.iter(|| rank(&req, &catalog, &opts, &Silent).unwrap())
        });
        group.bench_function(format!("forced/{name}"), |b| {
            b.iter(|| rank(&f, &catalog, &opts, &Silent).unwrap())
        });
    }
    group.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
