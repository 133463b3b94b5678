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
    assert_eq!(v["schema_version"], 2);
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

fn run_on(name: &str, text: &str, args: &[&str]) -> (i32, String, String) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join(name);
    std::fs::write(&path, text).unwrap();
    let out = cmd().arg("fit").arg(&path).args(args).output().unwrap();
    (
        out.status.code().unwrap(),
        String::from_utf8(out.stdout).unwrap(),
        String::from_utf8(out.stderr).unwrap(),
    )
}

/// Rows of the shipped demo file at 100 µA (a simple mirror with 1 kΩ resistors).
fn demo_rows(filter: impl Fn(&str) -> bool) -> String {
    let text =
        std::fs::read_to_string(std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join(DEMO_CSV))
            .unwrap();
    let mut out = String::from("i_in,v_out,i_out,t_ambient\n");
    for l in text
        .lines()
        .filter(|l| l.starts_with("100 uA") && filter(l))
    {
        out.push_str(l);
        out.push('\n');
    }
    out
}

/// Issue 11: a row repeated to make up the count gave BF = 1.5e15 "fitted, converged".
/// Repeated rows are one operating point; too few distinct points is exit 1 with the
/// reason, whatever the file.
#[test]
fn a_repeated_row_does_not_make_up_for_a_missing_point() {
    let mut text = demo_rows(|l| l.contains(",3 V,") || l.contains(",6 V,") || l.contains(",9 V,"));
    let repeated = text.lines().nth(2).unwrap().to_string();
    text.push_str(&repeated);
    text.push('\n');
    let (code, out, _) = run_on(
        "dup.csv",
        &text,
        &["--topology", "simple", "--re1", "1k", "--re2", "1k"],
    );
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("the data cannot support a model fit: the 4 active rows hold only 3 distinct operating points"),
        "{out}"
    );
    assert!(!out.contains("converged"), "{out}");
    // One point repeated ten times: the same.
    let one = demo_rows(|l| l.contains(",5 V,"))
        .lines()
        .nth(1)
        .unwrap()
        .to_string();
    let text = format!(
        "i_in,v_out,i_out,t_ambient\n{}",
        format!("{one}\n").repeat(10)
    );
    let (code, out, _) = run_on("same.csv", &text, &["--topology", "simple"]);
    assert_eq!(code, 1, "{out}");
    assert!(out.contains("only 1 distinct operating points"), "{out}");
}

/// Rank-deficient data of the same class: one programming current cannot separate beta
/// from the offset, and once the offset is held the fit drives BF to infinity (the data
/// sit above what any beta gives). That is exit 1 with the reason, not a number.
#[test]
fn a_fit_that_runs_beta_to_infinity_is_exit_1_with_the_reason() {
    let text = demo_rows(|_| true);
    let (code, out, _) = run_on(
        "one-current.csv",
        &text,
        &[
            "--topology",
            "simple",
            "--re1",
            "1k",
            "--re2",
            "1k",
            "--supply",
            "12V",
            "--ambient",
            "27C",
            "--self-heating",
        ],
    );
    assert_eq!(code, 1, "{out}");
    assert!(
        out.contains("the data cannot support a model fit: the fit ran BF to"),
        "{out}"
    );
    assert!(
        out.contains("outside what a bipolar transistor has (1 to 100,000)"),
        "{out}"
    );
    // JSON says the same and keeps no parameters.
    let (code, out, _) = run_on(
        "one-current.csv",
        &text,
        &[
            "--topology",
            "simple",
            "--re1",
            "1k",
            "--re2",
            "1k",
            "--supply",
            "12V",
            "--ambient",
            "27C",
            "--self-heating",
            "--format",
            "json",
        ],
    );
    assert_eq!(code, 1);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert!(v["model"].is_null());
    assert!(v["model_failure"]
        .as_str()
        .unwrap()
        .contains("the fit ran BF to"));
}

/// Issue 11: `t_ambiant` and `temp` were ignored, so 27 °C data were fitted at 25 °C.
#[test]
fn an_unknown_column_is_a_located_error_with_did_you_mean() {
    for (header, col, name, suggestion) in [
        ("i_in,v_out,i_out,t_ambiant", 18, "t_ambiant", "t_ambient"),
        ("i_in,v_out,i_out,temp", 18, "temp", "t_ambient"),
        ("i_in,vout,i_out", 6, "vout", "v_out"),
    ] {
        let text = format!(
            "# bench log\n{header}\n100uA,2 V,101 uA{}\n",
            if header.matches(',').count() == 3 {
                ",27"
            } else {
                ""
            }
        );
        let (code, out, err) = run_on("bench.csv", &text, &["--topology", "simple"]);
        assert_eq!(code, 2, "{err}");
        assert!(out.is_empty());
        assert!(
            err.contains(&format!(
                "bench.csv:2:{col}: unknown column `{name}` (did you mean `{suggestion}`?)"
            )),
            "{err}"
        );
    }
}
