//! `mirrorpick fit` end to end.

use assert_cmd::Command;

use crate::synthetic::DEMO_CSV;

fn cmd() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

#[test]
fn fits_the_demo_file_as_json() {
    let out = cmd()
        .args([
            "fit",
            DEMO_CSV,
            "--topology",
            "simple",
            "--re1",
            "1k",
            "--re2",
            "1k",
            "--ambient",
            "27C",
            "--supply",
            "12V",
            "--self-heating",
            "--format",
            "json",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["schema_version"], 1);
    assert_eq!(v["topology"], "simple");
    let params = v["model"]["parameters"].as_array().unwrap();
    let bf = params.iter().find(|p| p["name"] == "bf").unwrap();
    let value = bf["value"].as_f64().unwrap();
    let se = bf["std_error"].as_f64().unwrap();
    assert!((value - 180.0).abs() < 3.0 * se, "BF {value} ± {se}");
    assert_eq!(v["curves"].as_array().unwrap().len(), 3);
    assert!(v["emitted_class"].is_null());
}

#[test]
fn table_with_an_emitted_class() {
    let out = cmd()
        .args([
            "fit",
            DEMO_CSV,
            "--topology",
            "simple",
            "--re1",
            "1k",
            "--re2",
            "1k",
            "--ambient",
            "27C",
            "--supply",
            "12V",
            "--self-heating",
            "--emit-class",
            "npn-dual-bench",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(out).unwrap();
    assert!(text.contains("Per-curve Early voltage"));
    assert!(text.contains("  - id: \"npn-dual-bench\""));
    assert!(text.contains("not a population"));
}

#[test]
fn malformed_csv_gives_a_located_error_and_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("bench.csv");
    std::fs::write(
        &path,
        "i_in,v_out,i_out\n100uA,2 V,101 uA\n100uA,3 Q,102 uA\n",
    )
    .unwrap();
    let out = cmd()
        .args(["fit", path.to_str().unwrap(), "--topology", "simple"])
        .assert()
        .code(2)
        .get_output()
        .clone();
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(
        err.contains(
            "bench.csv:3:7: `v_out`: `3 Q` is not a voltage; write it like `12 V` or `650 mV`"
        ),
        "{err}"
    );
    assert!(out.stdout.is_empty());
}

#[test]
fn unknown_topology_and_bad_resistor_are_usage_errors() {
    let err = cmd()
        .args(["fit", DEMO_CSV, "--topology", "wilsn"])
        .assert()
        .code(2)
        .get_output()
        .stderr
        .clone();
    let err = String::from_utf8(err).unwrap();
    assert!(
        err.contains("unknown topology `wilsn` (did you mean `wilson`?)"),
        "{err}"
    );
    let err = cmd()
        .args(["fit", DEMO_CSV, "--topology", "simple", "--re1", "1kV"])
        .assert()
        .code(2)
        .get_output()
        .stderr
        .clone();
    assert!(String::from_utf8(err)
        .unwrap()
        .contains("--re1: `1kV` is a voltage"));
}

#[test]
fn too_few_active_points_exit_1_with_the_reason() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("low.csv");
    std::fs::write(
        &path,
        "i_in,v_out,i_out\n1mA,0.2 V,0.5mA\n1mA,0.3 V,0.7mA\n",
    )
    .unwrap();
    let out = cmd()
        .args(["fit", path.to_str().unwrap(), "--topology", "simple"])
        .assert()
        .code(1)
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(out).unwrap();
    assert!(
        text.contains("only 0 of 2 points are in the active region"),
        "{text}"
    );
}

#[test]
fn help_has_a_worked_example() {
    let out = cmd()
        .args(["fit", "--help"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(out).unwrap();
    assert!(text.contains("Example"));
    assert!(text.contains("mirrorpick fit requirements-examples/bench-simple-mirror.csv"));
}

#[test]
fn a_catalog_class_can_be_the_starting_point() {
    let out = cmd()
        .args([
            "fit",
            DEMO_CSV,
            "--topology",
            "simple",
            "--re1",
            "1k",
            "--re2",
            "1k",
            "--ambient",
            "27C",
            "--supply",
            "12V",
            "--self-heating",
            "--part",
            "npn-dual-general",
            "--format",
            "json",
        ])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["base_class"], "npn-dual-general");
    let err = cmd()
        .args([
            "fit",
            DEMO_CSV,
            "--topology",
            "simple",
            "--part",
            "npn-dual-genral",
        ])
        .assert()
        .code(2)
        .get_output()
        .stderr
        .clone();
    let err = String::from_utf8(err).unwrap();
    assert!(err.contains("no class `npn-dual-genral`"), "{err}");
    assert!(err.contains("did you mean `npn-dual-general`?"), "{err}");
}

#[test]
fn a_supply_below_the_measured_voltages_is_a_usage_error() {
    let err = cmd()
        .args(["fit", DEMO_CSV, "--topology", "simple", "--supply", "5V"])
        .assert()
        .code(2)
        .get_output()
        .stderr
        .clone();
    let err = String::from_utf8(err).unwrap();
    assert!(
        err.contains("--supply: 5.00 V is below the output voltage 6.00 V on line 16 of requirements-examples/bench-simple-mirror.csv; expected the bench supply"),
        "{err}"
    );
}
