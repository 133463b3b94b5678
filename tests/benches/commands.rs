//! The commands a designer waits for (issue 15's table), each timed as the library runs
//! it for the CLI:
//! * `bom` on the shipped six-channel board (fast feed and the integer program): goal
//!   under 2 s;
//! * `rank` on the expo-converter example (the slowest shipped requirement): goal under
//!   0.3 s;
//! * `rank` on a 100 V, 2 mA requirement (written here): goal under 1 s;
//! * `cheaper` on the long-tailed-pair tail against the monolithic Wilson, all families
//!   and `--top 5`: goal under 1 s;
//! * `report` on the 100 V requirement (page to a sink): goal under 1 s.
//!
//! Run short: `cargo bench --bench commands -- --warm-up-time 1 --measurement-time 5 --sample-size 10`.
//! The machine is shared: compare with the previous code's release binary in the same
//! run (the closing note of the issue does) rather than with a figure from another day.

use std::path::{Path, PathBuf};

use criterion::{criterion_group, criterion_main, Criterion};

use mirrorpick::app::report_cmd::run_report;
use mirrorpick::app::{CatalogSource, ReportArgs};
use mirrorpick::bom::candidates::design_problem;
use mirrorpick::bom::optimise;
use mirrorpick::check::{DesignSpec, MonteCarlo};
use mirrorpick::input;
use mirrorpick::model::{Catalog, Requirement, Topology};
use mirrorpick::rank::{cheaper_top, rank, RankOptions, Silent};

fn examples() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("requirements-examples")
}

fn load(path: &Path, catalog: &Catalog) -> Requirement {
    let text = std::fs::read_to_string(path).unwrap();
    input::load_requirement(&path.display().to_string(), &text, Some(catalog)).unwrap()
}

const HIGH_VOLTAGE: &str = "name: 100 V bias sink, 2 mA
kind: sink
supply: 110 V
input_current: {min: 2 mA, max: 2 mA}
output_voltage: {min: 5 V, max: 100 V}
ambient: {min: 0 °C, max: 50 °C}
accuracy: 5 %
load: general
";

fn bench(c: &mut Criterion) {
    let catalog = input::load_default_catalog().unwrap();
    let mut group = c.benchmark_group("commands");

    let board = examples().join("board-synth-voice.yaml");
    let text = std::fs::read_to_string(&board).unwrap();
    let design = input::load_design("board-synth-voice.yaml", &text, &examples())
        .unwrap()
        .finish(&catalog)
        .unwrap();
    group.bench_function("bom board-synth-voice", |b| {
        b.iter(|| {
            let dp = design_problem(&design, &catalog, MonteCarlo::default(), &Silent);
            optimise(&dp.problem).unwrap()
        })
    });

    let expo = load(&examples().join("expo-converter-sink.yaml"), &catalog);
    group.bench_function("rank expo-converter-sink", |b| {
        b.iter(|| rank(&expo, &catalog, &RankOptions::default(), &Silent).unwrap())
    });

    let hv =
        input::load_requirement("100 V bench requirement", HIGH_VOLTAGE, Some(&catalog)).unwrap();
    group.bench_function("rank 100 V 2 mA", |b| {
        b.iter(|| rank(&hv, &catalog, &RankOptions::default(), &Silent).unwrap())
    });

    // `report` on the same 100 V requirement, as the CLI runs it, the page to a sink.
    let dir = std::env::temp_dir().join("mirrorpick-bench-report");
    std::fs::create_dir_all(&dir).unwrap();
    let hv_file = dir.join("hv100.yaml");
    std::fs::write(&hv_file, HIGH_VOLTAGE).unwrap();
    let report_args = ReportArgs {
        requirement: hv_file,
        html: Some("-".into()),
        stdout_is_terminal: false,
        schematic: None,
        markdown: None,
        top: 5,
        mc: MonteCarlo::default(),
        extremes: false,
    };
    group.bench_function("report 100 V 2 mA", |b| {
        b.iter(|| run_report(&CatalogSource::Default, &report_args, &mut std::io::sink()).unwrap())
    });

    let ltp = load(&examples().join("ltp-tail-sink.yaml"), &catalog);
    let reference = DesignSpec {
        shape: mirrorpick::model::Shape::SINGLE,
        topology: Topology::Wilson,
        pair: "npn-pair-monolithic".into(),
        helper: None,
        re1_ohm: 0.0,
        re2_ohm: 0.0,
        resistor: None,
        r_ref_ohm: 0.0,
        r_ref_resistor: None,
        r_ref_pick: None,
    };
    for top in [None, Some(5)] {
        let name = match top {
            None => "cheaper ltp-tail-sink monolithic wilson".to_string(),
            Some(n) => format!("cheaper ltp-tail-sink monolithic wilson --top {n}"),
        };
        group.bench_function(&name, |b| {
            b.iter(|| {
                cheaper_top(
                    &ltp,
                    &catalog,
                    &reference,
                    MonteCarlo::default(),
                    false,
                    top,
                    &Silent,
                )
                .unwrap()
            })
        });
    }
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(10);
    targets = bench
}
criterion_main!(benches);
