//! At the terminal: tables within the width (80 and 120 columns), the advice on what to
//! relax when nothing passes (an impossible and a nearly feasible requirement), drop-in
//! second sources, enumerations in any case and the E12 series, the JSON keys of `rank`,
//! and every example in every `--help` and in the README run against the built-in catalog
//! and the shipped files.

use std::path::{Path, PathBuf};
use std::process::Output;

use assert_cmd::Command;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn mirrorpick() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(root())
        .env_remove("COLUMNS")
        .env("NO_COLOR", "1");
    c
}

fn text(o: &Output) -> String {
    String::from_utf8(o.stdout.clone()).unwrap()
}

fn widest(s: &str) -> usize {
    s.lines().map(|l| l.chars().count()).max().unwrap_or(0)
}

fn write(dir: &Path, name: &str, body: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, body).unwrap();
    p
}

fn json(o: &Output) -> serde_json::Value {
    serde_json::from_slice(&o.stdout).unwrap_or_else(|e| panic!("{e}: {}", text(o)))
}

#[test]
fn rank_check_cheaper_and_bom_fit_80_and_120_columns() {
    let ltp = "requirements-examples/ltp-tail-sink.yaml";
    let runs: [&[&str]; 4] = [
        &["rank", ltp, "--samples", "200"],
        &[
            "check",
            ltp,
            "--part",
            "npn-dual-general",
            "--topology",
            "wilson",
            "--re",
            "2k",
            "--resistor",
            "thick-film-1pct",
            "--samples",
            "200",
        ],
        &[
            "cheaper",
            ltp,
            "--part",
            "npn-pair-monolithic",
            "--topology",
            "wilson",
            "--samples",
            "200",
        ],
        &[
            "bom",
            "requirements-examples/board-synth-voice.yaml",
            "--samples",
            "100",
        ],
    ];
    for args in runs {
        for width in [80, 120] {
            let o = mirrorpick()
                .args(args)
                .env("COLUMNS", width.to_string())
                .output()
                .unwrap();
            let mut out = text(&o);
            if args[0] == "bom" {
                // bom's summary lines are not wrapped yet: its tables are what must fit.
                out = out
                    .lines()
                    .filter(|l| l.starts_with(['┌', '│', '╞', '├', '└']))
                    .collect::<Vec<_>>()
                    .join("\n");
            }
            assert!(
                o.status.code().is_some_and(|c| c < 2),
                "{args:?}: {}",
                String::from_utf8_lossy(&o.stderr)
            );
            assert!(
                widest(&out) <= width,
                "{args:?} at {width} columns is {} wide:\n{out}",
                widest(&out)
            );
        }
    }
    // Without a terminal or COLUMNS, the default rank table is the narrow column set (was
    // 238 columns with every column), and --wide brings every column back.
    let narrow = text(&mirrorpick().args(runs[0]).output().unwrap());
    let wide = text(&mirrorpick().args(runs[0]).arg("--wide").output().unwrap());
    let table_width = |s: &str| {
        s.lines()
            .filter(|l| l.starts_with('│'))
            .map(|l| l.chars().count())
            .max()
            .unwrap()
    };
    assert!(table_width(&narrow) + 60 < table_width(&wide), "{narrow}");
    assert!(table_width(&wide) > 200, "{wide}");
    assert!(narrow.contains("design") && !narrow.contains("V_in max"));
    assert!(wide.contains("V_in max") && wide.contains("compliance"));
}

/// A 250 V sink: the catalog's highest-rated NPN class is 300 V, 240 V after the 20 %
/// VCEO derating, so no design passes whatever else changes except the voltage.
const IMPOSSIBLE: &str = "name: 250 V sink
kind: sink
supply: 300 V
input_current: {min: 1 mA, max: 1 mA}
output_voltage: {min: 5 V, max: 250 V}
ambient: {min: 0 °C, max: 70 °C}
accuracy: 5 %
allow: [simple]
";

#[test]
#[ignore = "about 100 s unoptimised (a 250 V search full of thermal runaway, then the advice's bisections); run optimised in .ci/run"]
fn relax_advice_on_an_impossible_requirement() {
    let dir = tempfile::tempdir().unwrap();
    let req = write(dir.path(), "hv.yaml", IMPOSSIBLE);
    let o = mirrorpick()
        .args(["rank", req.to_str().unwrap(), "--samples", "200"])
        .env("COLUMNS", "80")
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    let out = text(&o);
    assert!(out.contains("What to relax"), "{out}");
    assert!(
        out.contains("no npn class is rated for the voltage"),
        "{out}"
    );
    assert!(widest(&out) <= 80, "{out}");
    let o = mirrorpick()
        .args(["rank", req.to_str().unwrap(), "--samples", "200"])
        .args(["--format", "json"])
        .output()
        .unwrap();
    let v = json(&o);
    let relax = v["relax"].as_array().unwrap();
    let catalog = relax.iter().find(|r| r["field"] == "catalog").unwrap();
    // The VCEO a class would need: above the 250 V output / 0.8 derating, less V_BE.
    let need = catalog["value"].as_f64().unwrap();
    assert!((300.0..320.0).contains(&need), "{need}");
    // The output voltage that does pass is at most the derated 240 V of the best class
    // (at 240 V the output transistor's V_CE is 240 V less its emitter's potential).
    let vmax = relax
        .iter()
        .find(|r| r["field"] == "output_voltage.max")
        .expect("output_voltage.max advice");
    let value = vmax["value"].as_f64().unwrap();
    assert!(value > 5.0 && value <= 240.0, "{value}");
    assert!(vmax["design"].as_str().unwrap().starts_with("simple "));
    // The advice holds: with that one field changed, the named design family passes.
    let fixed = IMPOSSIBLE.replace("max: 250 V", &format!("max: {value} V"));
    let req2 = write(dir.path(), "fixed.yaml", &fixed);
    let o = mirrorpick()
        .args(["rank", req2.to_str().unwrap(), "--samples", "200"])
        .args(["--format", "json", "--top", "50"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert_eq!(json(&o)["relax"], serde_json::json!([]));
}

/// The long-tailed-pair tail at 0.2 %: the best design reaches about 0.21 %.
const NEARLY: &str = "name: tight tail
kind: sink
supply: 30 V
input_current: {min: 2 mA, max: 2 mA}
output_voltage: {min: 5 V, max: 25 V}
ambient: {min: 0 °C, max: 70 °C}
accuracy: 0.2 %
min_output_resistance: 1 MΩ
";

#[test]
fn relax_advice_on_a_nearly_feasible_requirement() {
    let dir = tempfile::tempdir().unwrap();
    let req = write(dir.path(), "tight.yaml", NEARLY);
    let o = mirrorpick()
        .args(["rank", req.to_str().unwrap(), "--samples", "200"])
        .args(["--format", "json"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1));
    let v = json(&o);
    let relax = v["relax"].as_array().unwrap();
    assert!(relax.iter().all(|r| r["field"] != "catalog"));
    let acc = relax
        .iter()
        .find(|r| r["field"] == "accuracy")
        .expect("accuracy advice");
    let value = acc["value"].as_f64().unwrap();
    // A small step, not a rule of thumb: between the asked 0.2 % and 0.3 %.
    assert!(value > 0.002 && value <= 0.003, "{value}");
    let fixed = NEARLY.replace("accuracy: 0.2 %", &format!("accuracy: {} %", value * 100.0));
    let req2 = write(dir.path(), "fixed.yaml", &fixed);
    let o = mirrorpick()
        .args(["rank", req2.to_str().unwrap(), "--samples", "200"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
}

/// A PNP source programmed from a 12 V +-5 % rail to 1 mA within 3 %: the rail's
/// tolerance alone moves the output by about 5 %, so nothing passes.
const PROGRAMMED: &str = "name: PNP source, 1 mA from a 12 V rail
kind: source
supply: 12.6 V
program:
  rail: {min: 11.4 V, max: 12.6 V}
  output_current: 1 mA
output_voltage: {min: 2 V, max: 8 V}
ambient: {min: 0 °C, max: 70 °C}
accuracy: 3 %
allow: [simple, wilson, thick-film-1pct]
";

#[test]
fn relax_advice_on_a_programmed_requirement_in_rank_and_the_report() {
    let dir = tempfile::tempdir().unwrap();
    let req = write(dir.path(), "pnp.yaml", PROGRAMMED);
    let o = mirrorpick()
        .args(["rank", req.to_str().unwrap(), "--samples", "200"])
        .args(["--format", "json"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1), "{}", text(&o));
    let v = json(&o);
    let relax = v["relax"].as_array().unwrap();
    let acc = relax
        .iter()
        .find(|r| r["field"] == "accuracy")
        .unwrap_or_else(|| panic!("accuracy advice in {relax:?}"));
    // The rail's +-5 % alone is more than the asked 3 %; less than 20 % suffices.
    let value = acc["value"].as_f64().unwrap();
    assert!(value > 0.03 && value < 0.2, "{value}");
    assert!(acc["design"].as_str().unwrap().contains("R_ref"), "{acc}");
    // The advice holds: with that accuracy the requirement is met.
    let fixed = PROGRAMMED.replace("accuracy: 3 %", &format!("accuracy: {} %", value * 100.0));
    let req2 = write(dir.path(), "fixed.yaml", &fixed);
    let o = mirrorpick()
        .args(["rank", req2.to_str().unwrap(), "--samples", "200"])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    // The report carries the same advice.
    let o = mirrorpick()
        .args([
            "report",
            req.to_str().unwrap(),
            "--samples",
            "200",
            "--out",
            "-",
        ])
        .output()
        .unwrap();
    let page = text(&o);
    assert!(page.contains("What to relax"), "{page}");
    let sentence = acc["text"].as_str().unwrap().replace('\'', "&#39;");
    assert!(page.contains("id=\"relax\""), "{page}");
    assert!(
        page.contains(sentence.split(" makes ").next().unwrap()),
        "{sentence}"
    );
}

#[test]
fn second_sources_are_drop_in() {
    let o = mirrorpick()
        .args([
            "cheaper",
            "requirements-examples/ltp-tail-sink.yaml",
            "--part",
            "npn-dual-general",
            "--topology",
            "wilson",
            "--re",
            "1.91k",
            "--resistor",
            "thick-film-1pct",
            "--second-source",
            "--samples",
            "200",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    let v = json(&o);
    let r = &v["reference"];
    let alts = v["alternatives"].as_array().unwrap();
    assert!(!alts.is_empty(), "{v}");
    for a in alts {
        assert_eq!(a["topology"], r["topology"]);
        assert_eq!(a["re1_ohm"], r["re1_ohm"]);
        assert_eq!(a["re2_ohm"], r["re2_ohm"]);
        assert_eq!(a["resistor"], r["resistor"]);
        assert_ne!(a["part"], r["part"]);
    }
}

#[test]
fn enumerations_in_any_case_and_the_e12_series() {
    let dir = tempfile::tempdir().unwrap();
    let catalog = std::fs::read_to_string(root().join("catalog/default.yaml"))
        .unwrap()
        .replace("polarity: npn", "polarity: NPN")
        .replace("polarity: pnp", "polarity: Pnp")
        .replacen("series: E24", "series: e12", 1);
    assert!(
        catalog.contains("e12"),
        "the catalog has an E24 class to turn into E12"
    );
    let cat = write(dir.path(), "cat.yaml", &catalog);
    let o = mirrorpick()
        .args(["catalog", "lint", cat.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let req = write(
        dir.path(),
        "r.yaml",
        &NEARLY
            .replace("kind: sink", "kind: SINK")
            .replace("min_output_resistance: 1 MΩ", "load: Bias"),
    );
    let o = mirrorpick()
        .args(["--catalog", cat.to_str().unwrap(), "spec", "lint"])
        .arg(&req)
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    // An unknown name is still refused with the names expected.
    let bad = write(
        dir.path(),
        "bad.yaml",
        &NEARLY.replace("kind: sink", "kind: sunk"),
    );
    let o = mirrorpick()
        .args(["spec", "lint"])
        .arg(&bad)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("sink") && err.contains("source"), "{err}");
}

#[test]
fn rank_json_keys_carry_their_units() {
    let o = mirrorpick()
        .args([
            "rank",
            "requirements-examples/ltp-tail-sink.yaml",
            "--samples",
            "200",
            "--top",
            "2",
            "--explain",
            "1",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    let v = json(&o);
    assert_eq!(v["schema_version"], 3);
    assert_eq!(v["relax"], serde_json::json!([]));
    let row = &v["candidates"][0];
    for key in [
        "re1_ohm",
        "re2_ohm",
        "r_out_min_ohm",
        "compliance_v",
        "v_in_max_v",
    ] {
        assert!(row[key].is_number(), "candidate lacks `{key}`");
    }
    assert!(row.get("v_in_max").is_none());
    let e = &v["explain"];
    for key in [
        "i_in_a",
        "v_out_v",
        "t_amb_c",
        "i_out_a",
        "r_out_ohm",
        "v_in_v",
    ] {
        assert!(e["corners"][0].get(key).is_some(), "corner lacks `{key}`");
    }
    for key in ["i_in_a", "v_out_v", "t_amb_c"] {
        assert!(e["budget"].get(key).is_some(), "budget lacks `{key}`");
        assert!(e["hottest"].get(key).is_some(), "hottest lacks `{key}`");
    }
    for key in ["t_junction_c", "power_w", "v_ce_v", "i_c_a"] {
        assert!(
            e["hottest"]["junctions"][0].get(key).is_some(),
            "junction lacks `{key}`"
        );
    }
    // CSV columns use the same names as the JSON keys.
    let o = mirrorpick()
        .args(["rank", "requirements-examples/ltp-tail-sink.yaml"])
        .args(["--samples", "200", "--top", "1", "--format", "csv"])
        .output()
        .unwrap();
    let header = text(&o).lines().next().unwrap().to_string();
    for col in header.split(',') {
        // `governing_margin` and `noise_dominant` are the CSV's derived columns (JSON has
        // every check, and the whole noise breakdown under `noise`).
        if col != "governing_margin" && col != "noise_dominant" {
            assert!(
                row.get(col).is_some(),
                "CSV column `{col}` is not a JSON key"
            );
        }
    }
}

/// Every example line: `mirrorpick ...` in a `--help` after "Example:", and in the
/// README's code blocks (continuation lines joined).
fn examples() -> Vec<String> {
    let mut lines = Vec::new();
    let commands: [&[&str]; 17] = [
        &[],
        &["catalog"],
        &["catalog", "list"],
        &["catalog", "show"],
        &["catalog", "lint"],
        &["spec"],
        &["spec", "lint"],
        &["solve"],
        &["fit"],
        &["rank"],
        &["check"],
        &["cheaper"],
        &["curves"],
        &["report"],
        &["export"],
        &["bom"],
        &["help"],
    ];
    for c in commands {
        let o = mirrorpick().args(c).arg("--help").output().unwrap();
        lines.extend(joined(&text(&o)));
    }
    let readme = std::fs::read_to_string(root().join("README.md")).unwrap();
    let mut in_code = false;
    let mut code = String::new();
    for l in readme.lines() {
        if l.starts_with("```") {
            in_code = !in_code;
            continue;
        }
        if in_code {
            code.push_str(l);
            code.push('\n');
        }
    }
    lines.extend(joined(&code));
    lines.sort();
    lines.dedup();
    lines
}

fn joined(s: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur: Option<String> = None;
    for l in s.lines() {
        let t = l.trim();
        if let Some(c) = cur.as_mut() {
            c.push(' ');
            c.push_str(t.trim_end_matches('\\').trim());
            if !t.ends_with('\\') {
                out.push(cur.take().unwrap());
            }
            continue;
        }
        // A runnable example names a subcommand, not a `<command>` synopsis.
        if t.starts_with("mirrorpick ") && !t.contains('<') && !t.contains('[') {
            if t.ends_with('\\') {
                cur = Some(t.trim_end_matches('\\').trim().to_string());
            } else {
                out.push(t.to_string());
            }
        }
    }
    out
}

/// The words of an example: comments and output redirection dropped.
fn words(line: &str) -> Vec<String> {
    let line = line.split(" #").next().unwrap();
    let line = line.split(" > ").next().unwrap();
    line.split_whitespace()
        .skip(1)
        .map(str::to_string)
        .collect()
}

#[test]
fn every_example_names_shipped_files_and_known_classes() {
    let ex = examples();
    assert!(ex.len() >= 25, "{ex:#?}");
    let catalog = std::fs::read_to_string(root().join("catalog/default.yaml")).unwrap();
    for e in &ex {
        let w = words(e);
        for (i, a) in w.iter().enumerate() {
            let input = a.ends_with(".yaml") || a.ends_with(".csv");
            let output = i > 0 && ["--out", "--svg", "--markdown"].contains(&w[i - 1].as_str());
            if input && !output {
                assert!(root().join(a).is_file(), "`{e}`: no file `{a}`");
            }
            if i > 0 && ["--part", "--helper", "--resistor"].contains(&w[i - 1].as_str()) {
                assert!(
                    catalog.contains(&format!("id: {a}\n")),
                    "`{e}`: no class `{a}` in the built-in catalog"
                );
            }
        }
    }
}

/// Runs every example (each solves; minutes unoptimised): `.ci/run` runs it optimised.
#[test]
#[ignore]
fn every_example_runs() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir_all(dir.path().join("docs")).unwrap();
    for name in ["requirements-examples", "catalog"] {
        std::os::unix::fs::symlink(root().join(name), dir.path().join(name)).unwrap();
    }
    for e in examples() {
        let o = Command::cargo_bin("mirrorpick")
            .unwrap()
            .current_dir(dir.path())
            .args(words(&e))
            .output()
            .unwrap();
        let code = o.status.code();
        // 0 success, 1 nothing passes: both are answers; 2 is a broken example.
        assert!(
            matches!(code, Some(0) | Some(1)),
            "`{e}` exited {code:?}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
    }
}

/// Three 15 mA LED sinks with 0.6 V of headroom: the cheapest rows all run their output
/// transistor in soft saturation at the lowest output voltage.
const LED_SINKS: &str = "name: status LED sinks
kind: sink
supply: 5 V
input_current: {min: 15 mA, max: 15 mA}
output_voltage: {min: 0.6 V, max: 3 V}
ambient: {min: 0 °C, max: 60 °C}
accuracy: 10 %
load: led
";

#[test]
fn one_caution_line_per_kind_of_soft_saturation() {
    let dir = tempfile::tempdir().unwrap();
    let req = write(dir.path(), "led.yaml", LED_SINKS);
    let o = mirrorpick()
        .args([
            "rank",
            req.to_str().unwrap(),
            "--top",
            "3",
            "--samples",
            "200",
        ])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let out = text(&o);
    let lines: Vec<&str> = out
        .lines()
        .filter(|l| l.contains("soft saturation"))
        .collect();
    assert!(!lines.is_empty(), "{out}");
    // No two lines name the same transistors: rows sharing a caution share its line.
    let tails: Vec<&str> = lines
        .iter()
        .map(|l| l.split_once(": ").map_or(*l, |(_, t)| t))
        .collect();
    let mut unique = tails.clone();
    unique.sort_unstable();
    unique.dedup();
    assert_eq!(unique.len(), tails.len(), "{out}");
    assert!(lines.iter().any(|l| l.contains("#1, #2")), "{out}");
}

#[test]
fn cheaper_names_a_failed_reference_in_words() {
    // An undegenerated simple mirror in a two-dice dual at 15 mA and 3 V runs away
    // thermally: the header says so, with no empty figure where a margin would be.
    let dir = tempfile::tempdir().unwrap();
    let req = write(dir.path(), "led.yaml", LED_SINKS);
    let o = mirrorpick()
        .args(["cheaper", req.to_str().unwrap()])
        .args(["--part", "npn-dual-prematched", "--topology", "simple"])
        .args(["--top", "1", "--samples", "200"])
        .output()
        .unwrap();
    let out = text(&o);
    let head = out.lines().next().unwrap_or_default();
    assert!(
        head.contains("reference simple npn-dual-prematched, no RE"),
        "{head}"
    );
    assert!(head.ends_with("fails on thermal-runaway"), "{head}");
    assert!(!head.contains('—'), "{head}");
}
