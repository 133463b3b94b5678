//! The commands end to end: exit codes, key messages, JSON shape.

use assert_cmd::Command;
use predicates::prelude::*;

use super::root;

fn cmd() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(root());
    c
}

const LTP: &str = "requirements-examples/ltp-tail-sink.yaml";

#[test]
fn rank_succeeds_with_rows_and_cautions() {
    cmd()
        .args(["rank", LTP, "--top", "3", "--samples", "100"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("candidates: "))
        .stdout(predicate::str::contains(
            "typical of each class, not guaranteed",
        ));
}

#[test]
fn rank_json_has_the_documented_keys_and_cautions_go_to_stderr() {
    let out = cmd()
        .args([
            "rank",
            LTP,
            "--top",
            "2",
            "--format",
            "json",
            "--seed",
            "9",
            "--samples",
            "100",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["seed"], 9);
    assert_eq!(v["samples"], 100);
    assert_eq!(v["candidates"].as_array().unwrap().len(), 2);
    assert_eq!(v["every_value"], false);
    assert!(v["families"].as_u64().unwrap() >= 2);
    assert!(String::from_utf8_lossy(&out.stderr).contains("Cautions"));
}

#[test]
fn rank_every_value_is_echoed_and_lists_values_of_one_family() {
    let out = cmd()
        .args([
            "rank",
            LTP,
            "--top",
            "3",
            "--every-value",
            "--format",
            "json",
            "--samples",
            "100",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["every_value"], true);
    let rows = v["candidates"].as_array().unwrap();
    assert_eq!(rows.len(), 3);
    // On this example the cheapest family holds the three cheapest feasible designs.
    let fam = |r: &serde_json::Value| {
        ["topology", "part", "helper", "resistor"].map(|k| r[k].to_string())
    };
    assert_eq!(fam(&rows[0]), fam(&rows[1]));
    assert_ne!(rows[0]["re1_ohm"], rows[1]["re1_ohm"]);
}

#[test]
fn rank_exits_1_when_nothing_is_feasible() {
    cmd()
        .args(["rank", "tests/fixtures/rank/no-compliance.yaml"])
        .assert()
        .code(1)
        .stdout(predicate::str::contains(
            "No design meets every requirement",
        ))
        .stdout(predicate::str::contains("compliance"));
}

#[test]
fn check_passes_fails_and_rejects_bad_names() {
    cmd()
        .args([
            "check",
            LTP,
            "--part",
            "npn-dual-prematched",
            "--topology",
            "wilson",
            "--re",
            "1k",
            "--resistor",
            "thick-film-1pct",
            "--samples",
            "100",
        ])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("PASS"));
    // No degeneration: the output resistance of a simple mirror is far below 1 MΩ.
    cmd()
        .args([
            "check",
            LTP,
            "--part",
            "npn-dual-prematched",
            "--topology",
            "simple",
            "--format",
            "json",
        ])
        .assert()
        .code(1)
        .stdout(predicate::str::contains("\"pass\": false"));
    cmd()
        .args([
            "check",
            LTP,
            "--part",
            "npn-dual-prematchd",
            "--topology",
            "simple",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains(
            "did you mean `npn-dual-prematched`",
        ));
    cmd()
        .args([
            "check",
            LTP,
            "--part",
            "pnp-dual-general",
            "--topology",
            "simple",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("sink"));
    cmd()
        .args([
            "check",
            LTP,
            "--part",
            "npn-dual-general",
            "--topology",
            "simple",
            "--re",
            "4k7x",
            "--resistor",
            "thick-film-1pct",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--re `4k7x`"));
}

#[test]
fn cheaper_and_second_source() {
    cmd()
        .args([
            "cheaper",
            LTP,
            "--part",
            "npn-pair-monolithic",
            "--topology",
            "wilson",
            "--re",
            "1k",
            "--resistor",
            "thin-film-0p1pct",
            "--samples",
            "100",
        ])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("cheaper design"))
        // The margin column is on the reference's governing check; the table says which.
        .stdout(predicate::str::contains("Margin given up: on "));
    let out = cmd()
        .args([
            "cheaper",
            LTP,
            "--part",
            "npn-pair-monolithic",
            "--topology",
            "wilson",
            "--re",
            "1k",
            "--resistor",
            "thin-film-0p1pct",
            "--second-source",
            "--format",
            "json",
            "--samples",
            "100",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let alts = v["alternatives"].as_array().unwrap();
    assert!(!alts.is_empty());
    assert!(alts.iter().all(|a| a["part"] != "npn-pair-monolithic"));
}

#[test]
fn led_loads_get_their_caution() {
    cmd()
        .args([
            "rank",
            "requirements-examples/led-string-sinks.yaml",
            "--top",
            "2",
            "--samples",
            "100",
        ])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("LED string"))
        .stdout(predicate::str::contains("datasheet"));
}

#[test]
fn top_zero_is_a_usage_error() {
    for command in ["rank", "report"] {
        cmd()
            .args([command, LTP, "--top", "0"])
            .assert()
            .code(2)
            .stderr(predicate::str::contains("--top 0"));
    }
}
