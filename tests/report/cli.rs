//! The `curves` and `export --spice` commands.

use std::path::Path;

use assert_cmd::Command;
use predicates::prelude::*;

fn mirrorpick() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

const TAIL: &str = "requirements-examples/ltp-tail-sink.yaml";
const SOURCE: &str = "requirements-examples/sensor-excitation-source.yaml";

#[test]
fn curves_table_csv_json_and_svg() {
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("tail.svg");
    mirrorpick()
        .args([
            "curves",
            TAIL,
            "--part",
            "npn-dual-general",
            "--topology",
            "simple",
        ])
        .arg("--svg")
        .arg(&svg)
        .assert()
        .success()
        .stdout(predicate::str::contains("Balance voltage"))
        .stdout(predicate::str::contains("2.00 mA"));
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(text.starts_with("<svg"));
    assert!(text.contains("Output current against output voltage"));
    assert!(
        !text.contains("Error against programming current"),
        "one current only"
    );

    let out = mirrorpick()
        .args([
            "curves",
            TAIL,
            "--part",
            "npn-dual-general",
            "--topology",
            "wilson",
        ])
        .args(["--format", "csv"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let csv = String::from_utf8(out.stdout).unwrap();
    assert_eq!(
        csv.lines().next().unwrap(),
        "curve,i_in_a,t_amb_c,v_out_v,i_out_a,error,re1_ohm,noise_a_per_rthz,rail_v"
    );
    assert!(csv.lines().count() > 121);
    // The noise against the emitter resistors: no degeneration, then 24 values.
    let noise: Vec<&str> = csv.lines().filter(|l| l.starts_with("noise,")).collect();
    assert_eq!(noise.len(), 25);
    assert!(noise[0].contains(",,,0.0,"), "{}", noise[0]);

    let out = mirrorpick()
        .args([
            "curves",
            TAIL,
            "--part",
            "npn-dual-general",
            "--topology",
            "cascode",
        ])
        .args(["--format", "json", "--extremes"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["output"].as_array().unwrap().len(), 3, "three ambients");
    assert_eq!(v["supply_v"], 30.0);
}

#[test]
fn bad_design_arguments_exit_2_with_a_message() {
    mirrorpick()
        .args([
            "curves",
            TAIL,
            "--part",
            "npn-dual-genral",
            "--topology",
            "simple",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("did you mean `npn-dual-general`"));
    mirrorpick()
        .args([
            "curves",
            TAIL,
            "--part",
            "npn-dual-general",
            "--topology",
            "wilsen",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("not a topology"));
    mirrorpick()
        .args([
            "export",
            "--spice",
            SOURCE,
            "--part",
            "npn-dual-general",
            "--topology",
            "simple",
        ])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("needs PNP"));
    mirrorpick()
        .args([
            "export",
            "--spice",
            TAIL,
            "--part",
            "npn-dual-general",
            "--topology",
            "simple",
        ])
        .args(["--re", "4x7", "--resistor", "thick-film-1pct"])
        .assert()
        .code(2)
        .stderr(predicate::str::contains("--re"));
}

#[test]
fn export_writes_the_deck_atomically_or_not_at_all() {
    let dir = tempfile::tempdir().unwrap();
    let cir = dir.path().join("tail.cir");
    mirrorpick()
        .args([
            "export",
            "--spice",
            TAIL,
            "--part",
            "npn-dual-prematched",
            "--topology",
            "wilson4",
        ])
        .args(["--re", "1k", "--resistor", "thin-film-0p1pct", "--out"])
        .arg(&cir)
        .assert()
        .success()
        .stdout("");
    let deck = std::fs::read_to_string(&cir).unwrap();
    assert!(deck.contains(".subckt mirror_wilson4 in out R S"));
    assert!(deck.contains("\nR1 e1 R 1e3 "), "RE1 is part R1");
    assert!(deck.contains("long-tailed pair tail"));

    // An unwritable location: exit 2, the path named, and nothing left behind.
    let blocker = dir.path().join("not-a-dir");
    std::fs::write(&blocker, "").unwrap();
    let target = blocker.join("x.cir");
    mirrorpick()
        .args([
            "export",
            "--spice",
            TAIL,
            "--part",
            "npn-dual-general",
            "--topology",
            "simple",
        ])
        .arg("--out")
        .arg(&target)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("not-a-dir"));
    let names: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .collect();
    assert_eq!(names.len(), 2, "{names:?}");
    assert!(!Path::new(&target).exists());
}

#[test]
fn exported_models_carry_the_catalog_values() {
    let catalog = mirrorpick::input::load_default_catalog().unwrap();
    let out = mirrorpick()
        .args([
            "export",
            "--spice",
            SOURCE,
            "--part",
            "pnp-dual-prematched",
            "--topology",
            "beta-helper",
        ])
        .output()
        .unwrap();
    assert!(out.status.success());
    let deck = String::from_utf8(out.stdout).unwrap();
    let models = mirrorpick::report::spice::defined_models(&deck);
    assert_eq!(models.len(), 2, "pair class and helper single: {models:?}");
    for id in ["pnp-dual-prematched", "pnp-single-general"] {
        let class = catalog.transistor(id).unwrap();
        let name = mirrorpick::report::spice::model_name(id);
        let card = deck
            .lines()
            .find(|l| l.starts_with(&format!(".model {name} PNP(")))
            .unwrap();
        let get = |k: &str| -> f64 {
            card.split(['(', ' ', ')'])
                .find_map(|kv| kv.strip_prefix(&format!("{k}=")))
                .unwrap()
                .parse()
                .unwrap()
        };
        assert_eq!(get("IS"), class.model.saturation_current_a);
        assert_eq!(get("BF"), class.model.beta_forward);
        if let Some(vaf) = class.model.early_voltage_v {
            assert_eq!(get("VAF"), vaf);
        }
    }
    for node in ["in", "out", "b", "e1", "e2", "R", "S"] {
        assert!(
            deck.lines()
                .any(|l| l.split_whitespace().any(|w| w == node)),
            "node {node}"
        );
    }
}

#[test]
fn help_has_worked_examples() {
    for cmd in ["curves", "report", "export"] {
        mirrorpick()
            .args([cmd, "--help"])
            .assert()
            .success()
            .stdout(predicate::str::contains("Example:"))
            .stdout(predicate::str::contains(format!("mirrorpick {cmd} ")));
    }
}

#[test]
fn helpers_on_spare_devices_share_the_pair_model() {
    // A 6-device array holds the whole beta-helper mirror (MODEL.md, packages).
    let out = mirrorpick()
        .args([
            "export",
            "--spice",
            TAIL,
            "--part",
            "npn-array-6",
            "--topology",
            "beta-helper",
        ])
        .output()
        .unwrap();
    assert!(out.status.success());
    let deck = String::from_utf8(out.stdout).unwrap();
    assert_eq!(
        mirrorpick::report::spice::defined_models(&deck),
        std::collections::BTreeSet::from(["npn_array_6".to_string()])
    );
    // All three devices in package Q1: the helper is its third unit.
    assert!(deck.contains("\nQ1C S in b npn_array_6 "), "{deck}");
}

#[test]
fn a_programmed_report_names_r_ref_and_the_rail_as_written() {
    let dir = tempfile::tempdir().unwrap();
    let req = dir.path().join("bridge.yaml");
    std::fs::write(
        &req,
        "name: bridge excitation\nkind: sink\nsupply: 12 V\n\
         program: {rail: {min: 9.99 V, max: 10.01 V}, output_current: 2 mA}\n\
         output_voltage: {min: 2 V, max: 8 V}\nambient: {min: 0 °C, max: 50 °C}\n\
         accuracy: 5 %\n",
    )
    .unwrap();
    let out = mirrorpick()
        .arg("report")
        .arg(&req)
        .args(["--out", "-", "--samples", "200"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let html = String::from_utf8(out.stdout).unwrap();
    // Both ends of the rail as the designer wrote them, not "9.99 V to 10.0 V".
    assert!(html.contains("9.990 V to 10.01 V"), "rail range");
    // The chosen design's title and figures carry R_ref, so rows that differ only in it
    // do not read alike.
    assert!(html.contains("programming resistor R_ref"));
    assert!(html.contains("R_ref class"));
    assert!(html.contains("R_ref power (worst corner)"));
    assert!(html.contains("· R_ref "));
    assert!(html.contains("output tempco"));
}
