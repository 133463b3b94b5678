//! End-to-end tests: file formats (round trips, one located message per kind of bad
//! input, fixtures under tests/fixtures/ with one behaviour per file), the embedded
//! catalog and shipped examples, and the command line (exit codes, messages, help).

use std::path::{Path, PathBuf};

use assert_cmd::Command;
use predicates::prelude::*;

use mirrorpick::input::{self, InputError};

fn fixture(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(rel)
}

fn read(rel: &str) -> String {
    std::fs::read_to_string(fixture(rel)).unwrap()
}

fn test_catalog() -> mirrorpick::model::Catalog {
    input::load_catalog("valid.yaml", &read("catalog/valid.yaml")).unwrap()
}

fn catalog_error(name: &str) -> InputError {
    input::load_catalog(name, &read(&format!("catalog/{name}"))).unwrap_err()
}

fn requirement_error(name: &str) -> InputError {
    let cat = test_catalog();
    input::load_requirement(name, &read(&format!("requirement/{name}")), Some(&cat)).unwrap_err()
}

fn mirrorpick() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

mod formats {
    use super::*;
    use mirrorpick::model::{LoadKind, MirrorKind, Polarity};

    #[test]
    fn valid_catalog_reads_in_si_units_with_defaults() {
        let c = test_catalog();
        assert_eq!(c.currency, "USD");
        assert_eq!(c.reference_quantity, 100);
        let d = c.transistor("npn-test-dual").unwrap();
        assert_eq!(d.polarity, Polarity::Npn);
        assert!((d.model.saturation_current_a - 12e-15).abs() < 1e-27);
        assert_eq!(d.model.early_voltage_v, Some(90.0));
        // MODEL.md defaults for the parameters not given.
        assert_eq!(d.model.beta_reverse, 1.0);
        assert_eq!(d.model.xti, 3.0);
        assert_eq!(d.model.eg_ev, 1.11);
        assert_eq!(d.model.xtb, 1.5);
        assert_eq!(d.model.t_nom_k, 300.15);
        let m = d.matching.unwrap();
        assert!((m.vbe_offset_sigma_v - 2.5e-3).abs() < 1e-15);
        assert!((m.beta_mismatch_sigma - 0.05).abs() < 1e-15);
        assert!((d.ratings.power_per_package_w - 0.3).abs() < 1e-15);
        let s = c.transistor("npn-test-single").unwrap();
        assert_eq!(s.matching, None);
        assert_eq!(s.model.early_voltage_v, None);
        assert!((s.model.t_nom_k - 300.15).abs() < 1e-9);
        let r = c.resistor("test-resistor").unwrap();
        assert!((r.tolerance - 0.01).abs() < 1e-15);
        assert!((r.tcr_per_k - 1e-4).abs() < 1e-18);
    }

    #[test]
    fn catalog_round_trips_through_yaml() {
        for c in [test_catalog(), input::load_default_catalog().unwrap()] {
            let text = input::catalog_to_yaml(&c);
            let back = input::load_catalog("round-trip.yaml", &text).unwrap();
            assert_eq!(back, c);
        }
    }

    #[test]
    fn requirement_reads_every_field() {
        let cat = test_catalog();
        let r = input::load_requirement("valid.yaml", &read("requirement/valid.yaml"), Some(&cat))
            .unwrap();
        assert_eq!(r.kind, MirrorKind::Sink);
        assert_eq!(r.supply_v, 12.0);
        assert!((r.input_current_a.min - 10e-6).abs() < 1e-18);
        assert!((r.input_current_a.max - 1e-3).abs() < 1e-15);
        assert_eq!(r.ratio, 2.0);
        assert!((r.ambient_k.min - 233.15).abs() < 1e-9);
        assert!((r.ambient_k.max - 358.15).abs() < 1e-9);
        assert!((r.accuracy - 0.02).abs() < 1e-15);
        assert_eq!(r.min_yield, Some(0.99));
        assert_eq!(r.min_output_resistance_ohm, Some(1e6));
        assert_eq!(r.quantity, 4);
        assert_eq!(r.outputs, 3);
        assert_eq!(r.load, LoadKind::Sensor);
        // allow/deny names are sorted into topologies and classes.
        assert_eq!(r.topologies.allow, vec!["simple", "wilson"]);
        assert_eq!(r.classes.allow, vec!["npn-test-dual"]);
        assert_eq!(r.classes.deny, vec!["test-resistor"]);
        assert!(r.topologies.deny.is_empty());
    }

    #[test]
    fn requirement_round_trips_through_yaml() {
        let cat = test_catalog();
        let r = input::load_requirement("valid.yaml", &read("requirement/valid.yaml"), Some(&cat))
            .unwrap();
        let text = input::requirement_to_yaml(&r);
        let back = input::load_requirement("round-trip.yaml", &text, Some(&cat)).unwrap();
        assert_eq!(back, r);
    }

    #[test]
    fn requirement_reads_each_form_of_max_noise() {
        use mirrorpick::model::{NoiseBand, Range};
        let cat = test_catalog();
        let base = read("requirement/valid.yaml").replace(
            "max_noise: {density: 3 pA/rtHz, band: {min: 0.1 Hz, max: 10 Hz}}\n",
            "",
        );
        let load = |line: &str| {
            input::load_requirement("noise.yaml", &format!("{base}{line}\n"), Some(&cat))
        };
        let r = load("max_noise: 2.5 pA/√Hz").unwrap();
        let n = r.max_noise.unwrap();
        assert!((n.density_a_per_rthz - 2.5e-12).abs() < 1e-24);
        assert_eq!(n.band, NoiseBand::White);
        let r = load("max_noise: {density: 1 nA/rtHz, frequency: 1 kHz}").unwrap();
        assert_eq!(r.max_noise.unwrap().band, NoiseBand::At(1e3));
        let r = load("max_noise: {density: 1 fA/sqrt(Hz), band: {min: 1 Hz, max: 10 Hz}}").unwrap();
        assert_eq!(
            r.max_noise.unwrap().band,
            NoiseBand::Band(Range {
                min: 1.0,
                max: 10.0
            })
        );
        let text = input::requirement_to_yaml(&r);
        assert_eq!(
            input::load_requirement("round-trip.yaml", &text, Some(&cat)).unwrap(),
            r
        );
        let e =
            load("max_noise: {density: 1 pA/rtHz, frequency: 1 Hz, band: {min: 1 Hz, max: 2 Hz}}")
                .unwrap_err()
                .to_string();
        assert!(
            e.contains("noise.yaml:") && e.contains("either `frequency` or `band`"),
            "{e}"
        );
        let e = load("max_noise: 3 pA").unwrap_err().to_string();
        assert!(e.contains("a current noise density"), "{e}");
        let e = load("max_noise: {density: 1 pA/rtHz, band: {min: 10 Hz, max: 1 Hz}}")
            .unwrap_err()
            .to_string();
        assert!(e.contains("min < max"), "{e}");
    }

    #[test]
    fn catalog_writes_and_reads_the_noise_fields() {
        let mut c = test_catalog();
        let m = &mut c.transistors[0].model;
        (m.flicker_kf, m.flicker_af, m.base_resistance_ohm) = (2e-15, 1.2, 150.0);
        let text = input::catalog_to_yaml(&c);
        assert!(text.contains("kf:") && text.contains("af:") && text.contains("rb:"));
        let back = input::load_catalog("round-trip.yaml", &text).unwrap();
        assert_eq!(back, c);
    }

    #[test]
    fn embedded_catalog_passes_lint() {
        let c = input::load_default_catalog().unwrap();
        assert!(c.transistors.len() >= 14);
        assert!(c.resistors.len() >= 3);
        mirrorpick()
            .args(["catalog", "lint"])
            .assert()
            .success()
            .stdout(predicate::str::contains(
                "catalog/default.yaml (built in): ok",
            ));
    }

    #[test]
    fn embedded_catalog_respects_the_trade_facts() {
        // Common practice (shared field notes): PNP Early voltage below the comparable
        // NPN's; high-beta types lower still; one die tracks far better than two dice.
        let c = input::load_default_catalog().unwrap();
        let vaf = |id: &str| c.transistor(id).unwrap().model.early_voltage_v.unwrap();
        assert!(vaf("pnp-dual-general") < vaf("npn-dual-general"));
        assert!(vaf("pnp-pair-monolithic") < vaf("npn-pair-monolithic"));
        assert!(vaf("npn-dual-highbeta") < vaf("npn-dual-general"));
        assert!(vaf("pnp-dual-highbeta") < vaf("pnp-dual-general"));
        let tracking = |id: &str| {
            let t = c.transistor(id).unwrap().thermal;
            t.theta_self_k_per_w - t.theta_mutual_k_per_w
        };
        assert!(tracking("npn-pair-monolithic") * 4.0 < tracking("npn-dual-general"));
        let sigma = |id: &str| {
            c.transistor(id)
                .unwrap()
                .matching
                .unwrap()
                .vbe_offset_sigma_v
        };
        assert!(sigma("npn-dual-prematched") <= 1e-3);
        assert!(sigma("npn-pair-monolithic") < sigma("npn-dual-prematched"));
        // V_BE at 1 mA near 0.65 V for the general small-signal classes (IS choice).
        let vt = 1.380649e-23 * 300.15 / 1.602176634e-19;
        for id in ["npn-dual-general", "pnp-dual-general", "npn-single-general"] {
            let is = c.transistor(id).unwrap().model.saturation_current_a;
            let vbe = vt * (1e-3 / is).ln();
            assert!((0.63..0.67).contains(&vbe), "{id}: {vbe}");
        }
    }

    /// The first ```yaml block after `heading` in README.md.
    fn readme_block(heading: &str) -> String {
        let readme =
            std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("README.md"))
                .unwrap();
        let after = &readme[readme.find(heading).unwrap()..];
        let start = after.find("```yaml\n").unwrap() + "```yaml\n".len();
        let end = start + after[start..].find("```").unwrap();
        after[start..end].to_string()
    }

    #[test]
    fn readme_examples_are_valid_files() {
        let cat = input::load_catalog("README.md", &readme_block("## Catalog file")).unwrap();
        assert_eq!(cat.transistors.len(), 1);
        let default = input::load_default_catalog().unwrap();
        let r = input::load_requirement(
            "README.md",
            &readme_block("## Requirement file"),
            Some(&default),
        )
        .unwrap();
        assert_eq!(r.quantity, 4);
        assert_eq!(r.min_output_resistance_ohm, Some(1e6));
    }

    #[test]
    fn every_shipped_example_passes_spec_lint() {
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("requirements-examples");
        let mut n = 0;
        for entry in std::fs::read_dir(dir).unwrap() {
            let path = entry.unwrap().path();
            // Board designs (`board-*.yaml`) are `bom` input, checked in tests/bom/design.rs.
            let design = path
                .file_name()
                .is_some_and(|n| n.to_string_lossy().starts_with("board-"));
            if path.extension().is_some_and(|e| e == "yaml") && !design {
                mirrorpick()
                    .arg("spec")
                    .arg("lint")
                    .arg(&path)
                    .assert()
                    .success()
                    .stdout(predicate::str::contains(": ok; "));
                n += 1;
            }
        }
        assert!(n >= 6, "only {n} examples");
    }
}

/// One asserted, located message per kind of bad input.
mod bad_input {
    use super::*;

    fn located(e: &InputError) -> String {
        e.to_string()
    }

    #[test]
    fn malformed_yaml() {
        let e = catalog_error("malformed.yaml");
        assert_eq!(
            located(&e),
            "malformed.yaml:15:12: did not find expected ',' or '}', while parsing a flow mapping; expected valid YAML (check indentation, colons and quotes)"
        );
        let e = requirement_error("malformed.yaml");
        assert!(located(&e).starts_with("malformed.yaml:9:9: did not find expected"));
    }

    #[test]
    fn outputs_out_of_range() {
        let e = requirement_error("outputs-out-of-range.yaml");
        let text = located(&e);
        assert!(
            text.starts_with("outputs-out-of-range.yaml:9:") && text.contains("1 to 8 outputs"),
            "{text}"
        );
    }

    #[test]
    fn empty_file() {
        assert_eq!(
            located(&catalog_error("empty.yaml")),
            "empty.yaml:1:1: the file is empty; expected a catalog with `transistor_classes` and `resistor_classes`"
        );
        assert!(located(&requirement_error("empty.yaml"))
            .starts_with("empty.yaml:1:1: the file is empty; expected a requirement with `name`"));
    }

    #[test]
    fn wrong_type() {
        assert_eq!(
            located(&catalog_error("wrong-type.yaml")),
            "wrong-type.yaml:8:26: `transistor_classes[0].devices_per_package`: invalid type: string \"two\", expected a whole number"
        );
    }

    #[test]
    fn wrong_unit() {
        assert_eq!(
            located(&catalog_error("wrong-unit.yaml")),
            "wrong-unit.yaml:13:12: `transistor_classes[0].model.vaf`: `90 mA` is a current, but a voltage was expected here; write it like `12 V` or `650 mV`"
        );
        assert_eq!(
            located(&requirement_error("wrong-unit.yaml")),
            "wrong-unit.yaml:4:9: `supply`: `12 A` is a current, but a voltage was expected here; write it like `12 V` or `650 mV`"
        );
    }

    #[test]
    fn missing_field() {
        assert_eq!(
            located(&catalog_error("missing-field.yaml")),
            "missing-field.yaml:11:7: `transistor_classes[0].model`: missing field `bf`; expected it in this mapping"
        );
        assert_eq!(
            located(&requirement_error("missing-field.yaml")),
            "missing-field.yaml:2:1: missing field `supply`; expected it in this mapping"
        );
    }

    #[test]
    fn unknown_field_with_suggestion() {
        assert_eq!(
            located(&catalog_error("unknown-field.yaml")),
            "unknown-field.yaml:12:7: `transistor_classes[0].model`: unknown field `bff` (did you mean `bf`?); expected one of `is`, `bf`, `br`, `vaf`, `ikf`, `xti`, `eg`, `xtb`, `tnom`, `kf`, `af` or `rb`"
        );
        assert!(located(&requirement_error("unknown-field.yaml")).starts_with(
            "unknown-field.yaml:9:1: unknown field `acuracy` (did you mean `accuracy`?); expected one of `name`"
        ));
    }

    #[test]
    fn unknown_names_with_suggestion() {
        assert_eq!(
            located(&requirement_error("unknown-kind.yaml")),
            "unknown-kind.yaml:3:7: `kind`: unknown value `sinc` (did you mean `sink`?); expected one of `sink` or `source`"
        );
        assert!(located(&requirement_error("unknown-name.yaml")).starts_with(
            "unknown-name.yaml:17:17: `allow[1]`: unknown value `wilsen` (did you mean `wilson`?); expected one of `simple`"
        ));
        assert_eq!(
            located(&catalog_error("unknown-series.yaml")),
            "unknown-series.yaml:32:13: `resistor_classes[0].series`: unknown value `E69`; expected one of `E12`, `E24`, `E48`, `E96` or `E192`"
        );
    }

    #[test]
    fn duplicate_key() {
        assert_eq!(
            located(&catalog_error("duplicate-key.yaml")),
            "duplicate-key.yaml:4:1: duplicate field `currency`; expected each key once per mapping"
        );
    }

    #[test]
    fn duplicate_id() {
        assert_eq!(
            located(&catalog_error("duplicate-id.yaml")),
            "duplicate-id.yaml:19:9: duplicate id `npn-test-dual` (first used on line 5); expected every class id to be unique"
        );
    }

    #[test]
    fn out_of_range_value() {
        assert_eq!(
            located(&catalog_error("out-of-range.yaml")),
            "out-of-range.yaml:12:11: `transistor_classes[0].model.bf`: `50000` is out of range for BF: expected 5 to 5000"
        );
        assert_eq!(
            located(&catalog_error("mutual-above-self.yaml")),
            "mutual-above-self.yaml:16:50: `transistor_classes[0].thermal.theta_mutual`: the mutual thermal resistance exceeds the self-heating one; expected `theta_mutual` <= `theta_self` (a die heats itself most)"
        );
    }

    #[test]
    fn implausible_magnitude_hints_at_the_prefix() {
        assert_eq!(
            located(&requirement_error("implausible-magnitude.yaml")),
            "implausible-magnitude.yaml:5:34: `input_current.max`: `1 MA` is out of range for a programming current: expected 1.00 pA to 1.00 A; `M` means mega (10^6); for milli write `m`, as in `1 mA`"
        );
    }

    #[test]
    fn class_of_the_wrong_polarity() {
        assert_eq!(
            located(&requirement_error("wrong-polarity.yaml")),
            "wrong-polarity.yaml:17:17: `allow[1]`: `npn-test-dual` is an NPN class, but a source is built from PNP transistors; expected PNP classes in `allow` (or change `kind`)"
        );
    }

    #[test]
    fn min_above_max() {
        assert_eq!(
            located(&requirement_error("min-above-max.yaml")),
            "min-above-max.yaml:5:22: `input_current.min`: min `2 mA` is above max `1 mA`; expected min <= max"
        );
    }

    #[test]
    fn output_voltage_at_supply() {
        assert_eq!(
            located(&requirement_error("output-at-supply.yaml")),
            "output-at-supply.yaml:7:33: `output_voltage.max`: the output voltage `12 V` reaches the supply `12 V`; expected output_voltage.max below the supply (both measured from the mirror rail)"
        );
    }

    #[test]
    fn alias_bomb_is_refused_quickly() {
        let e = catalog_error("alias-bomb.yaml");
        assert_eq!(
            located(&e),
            "alias-bomb.yaml:10:37: the document expands too much through anchors and aliases (aliases add more than 100000 nodes once expanded); expected a plain file without repeated alias expansion"
        );
    }
}

mod commands {
    use super::*;

    #[test]
    fn version_and_help() {
        mirrorpick()
            .arg("--version")
            .assert()
            .success()
            .stdout(predicate::str::starts_with(concat!(
                "mirrorpick ",
                env!("CARGO_PKG_VERSION")
            )));
        for args in [
            vec!["--help"],
            vec!["catalog", "--help"],
            vec!["spec", "--help"],
            vec!["catalog", "list", "--help"],
            vec!["catalog", "show", "--help"],
            vec!["catalog", "lint", "--help"],
            vec!["spec", "lint", "--help"],
            vec!["solve", "--help"],
        ] {
            mirrorpick()
                .args(&args)
                .assert()
                .success()
                .stdout(predicate::str::contains("Example:"));
        }
    }

    #[test]
    fn catalog_list_table_json_csv() {
        mirrorpick()
            .args(["catalog", "list"])
            .assert()
            .success()
            .stdout(predicate::str::contains("npn-dual-general"))
            .stdout(predicate::str::contains("thin-film-0p1pct"))
            .stdout(predicate::str::contains("90.0 V"))
            .stdout(predicate::str::contains("not guaranteed"));
        let out = mirrorpick()
            .args(["catalog", "list", "--format", "json"])
            .output()
            .unwrap();
        assert!(out.status.success());
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        assert_eq!(v["schema_version"], 1);
        assert_eq!(v["transistor_classes"][0]["id"], "npn-dual-general");
        assert_eq!(v["transistor_classes"][0]["vaf_v"], 90.0);
        let out = mirrorpick()
            .args(["catalog", "list", "--format", "csv"])
            .output()
            .unwrap();
        let text = String::from_utf8(out.stdout).unwrap();
        let mut lines = text.lines();
        let header = lines.next().unwrap();
        assert!(header.starts_with("kind,id,polarity,"));
        let ncols = header.split(',').count();
        let first = lines.next().unwrap();
        assert!(first.starts_with("transistor,npn-dual-general,npn,2,SOT-363,"));
        assert!(first.contains(",1.2e-14,200.0,90.0,"), "{first}");
        // Summaries with commas are quoted, so every row still has the header's columns.
        assert!(text.lines().count() >= 19);
        assert!(text.lines().skip(1).all(|l| !l.is_empty()));
        assert!(ncols > 10);
    }

    #[test]
    fn catalog_show_known_and_unknown() {
        mirrorpick()
            .args(["catalog", "show", "npn-pair-monolithic"])
            .assert()
            .success()
            .stdout(predicate::str::contains("50.0 µV"))
            .stdout(predicate::str::contains("provenance"));
        let out = mirrorpick()
            .args(["catalog", "show", "thin-film-0p1pct", "--format", "json"])
            .output()
            .unwrap();
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        assert_eq!(v["kind"], "resistor");
        assert_eq!(v["series"], "E192");
        mirrorpick()
            .args(["catalog", "show", "npn-dual-genral"])
            .assert()
            .code(2)
            .stdout("")
            .stderr(
                "error: no class `npn-dual-genral` in catalog/default.yaml (built in) (did you mean `npn-dual-general`?); expected one of the ids `catalog list` shows\n",
            );
    }

    #[test]
    fn lint_exit_codes_and_located_messages() {
        mirrorpick()
            .args(["catalog", "lint", "tests/fixtures/catalog/valid.yaml"])
            .assert()
            .success();
        mirrorpick()
            .args([
                "catalog",
                "lint",
                "tests/fixtures/catalog/duplicate-id.yaml",
            ])
            .assert()
            .code(2)
            .stderr(predicate::str::starts_with(
                "error: tests/fixtures/catalog/duplicate-id.yaml:19:9: duplicate id",
            ));
        mirrorpick()
            .args([
                "--catalog",
                "tests/fixtures/catalog/valid.yaml",
                "spec",
                "lint",
                "tests/fixtures/requirement/min-above-max.yaml",
            ])
            .assert()
            .code(2)
            .stderr(predicate::str::contains(
                "min-above-max.yaml:5:22: `input_current.min`",
            ));
        // A bad --catalog is reported even for commands that only list.
        mirrorpick()
            .args([
                "--catalog",
                "tests/fixtures/catalog/empty.yaml",
                "catalog",
                "list",
            ])
            .assert()
            .code(2)
            .stderr(predicate::str::contains(
                "empty.yaml:1:1: the file is empty",
            ));
        mirrorpick()
            .args(["spec", "lint", "no-such-file.yaml"])
            .assert()
            .code(2)
            .stderr(predicate::str::starts_with(
                "error: cannot read `no-such-file.yaml`:",
            ));
    }

    #[test]
    fn usage_errors_exit_2() {
        mirrorpick().assert().code(2);
        mirrorpick()
            .args(["catalog", "list", "--format", "xml"])
            .assert()
            .code(2);
    }

    #[test]
    fn no_color_in_pipes() {
        let out = mirrorpick()
            .args(["catalog", "list"])
            .env_remove("NO_COLOR")
            .output()
            .unwrap();
        // Output is not a terminal here: no escape sequences.
        assert!(!out.stdout.contains(&0x1b));
    }
}

/// Whole outputs of each format on the small test catalog. To change one on purpose, run
/// with `UPDATE_SNAPSHOTS=1`, then review the diff of tests/snapshots/ before committing.
mod snapshots {
    use super::*;

    fn check(name: &str, args: &[&str]) {
        let out = mirrorpick()
            .args(["--catalog", "tests/fixtures/catalog/valid.yaml"])
            .args(args)
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let got = String::from_utf8(out.stdout).unwrap();
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/snapshots")
            .join(name);
        if std::env::var_os("UPDATE_SNAPSHOTS").is_some() {
            std::fs::write(&path, &got).unwrap();
        }
        let want = std::fs::read_to_string(&path)
            .unwrap_or_else(|_| panic!("missing snapshot {name}; run with UPDATE_SNAPSHOTS=1"));
        assert_eq!(got, want, "output of {args:?} differs from {name}");
    }

    #[test]
    fn catalog_list_in_every_format() {
        check("catalog-list.txt", &["catalog", "list"]);
        check(
            "catalog-list.json",
            &["catalog", "list", "--format", "json"],
        );
        check("catalog-list.csv", &["catalog", "list", "--format", "csv"]);
    }

    #[test]
    fn catalog_show_in_every_format() {
        check("catalog-show.txt", &["catalog", "show", "npn-test-dual"]);
        check(
            "catalog-show.json",
            &["catalog", "show", "npn-test-dual", "--format", "json"],
        );
        check(
            "catalog-show.csv",
            &["catalog", "show", "test-resistor", "--format", "csv"],
        );
    }
}

mod solve_command {
    use super::*;

    const POINT: [&str; 9] = [
        "solve",
        "--topology",
        "simple",
        "--part",
        "npn-dual-prematched",
        "--iin",
        "1mA",
        "--vout",
        "10V",
    ];

    #[test]
    fn table_reports_figures_and_transistors() {
        mirrorpick()
            .args(POINT)
            .args(["--self-heating"])
            .assert()
            .success()
            .stdout(predicate::str::contains("output current"))
            .stdout(predicate::str::contains("pair1-mirror"))
            .stdout(predicate::str::contains(
                "typical of the class, not guaranteed",
            ));
    }

    #[test]
    fn json_has_the_documented_keys() {
        let out = mirrorpick()
            .args(POINT)
            .args(["--format", "json"])
            .output()
            .unwrap();
        assert!(out.status.success());
        let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
        for key in [
            "i_in_a",
            "i_out_a",
            "error",
            "r_out_ohm",
            "v_in_v",
            "balance_voltage_v",
            "nodes_v",
            "transistors",
            "iterations",
        ] {
            assert!(v.get(key).is_some(), "missing key {key}");
        }
        assert_eq!(v["i_in_a"].as_f64(), Some(1e-3));
        assert_eq!(v["nodes_v"]["out"].as_f64(), Some(10.0));
        let q2 = &v["transistors"][1];
        for key in [
            "name",
            "role",
            "v_be_v",
            "v_ce_v",
            "i_c_a",
            "i_b_a",
            "t_junction_c",
            "region",
        ] {
            assert!(q2.get(key).is_some(), "missing transistor key {key}");
        }
    }

    #[test]
    fn bad_values_exit_2_with_a_reason() {
        // `M` is mega: 1 MA is no programming current.
        mirrorpick()
            .args([
                "solve",
                "--topology",
                "simple",
                "--part",
                "npn-dual-general",
            ])
            .args(["--iin", "1MA", "--vout", "5V"])
            .assert()
            .code(2)
            .stderr(predicate::str::contains("for milli write `m`"));
        mirrorpick()
            .args(["solve", "--topology", "simple", "--part", "npn-dual-genral"])
            .args(["--iin", "1mA", "--vout", "5V"])
            .assert()
            .code(2)
            .stderr(predicate::str::contains("did you mean `npn-dual-general`?"));
        mirrorpick()
            .args([
                "solve",
                "--topology",
                "simple",
                "--part",
                "npn-dual-general",
            ])
            .args(["--iin", "1mA", "--vout", "12V", "--supply", "5V"])
            .assert()
            .code(2)
            .stderr(predicate::str::contains("supply"));
        mirrorpick()
            .args(["solve", "--topology", "wilsn", "--part", "npn-dual-general"])
            .args(["--iin", "1mA", "--vout", "5V"])
            .assert()
            .code(2)
            .stderr(predicate::str::contains("expected one of simple"));
    }
}

/// A requirement programmed by a resistor from a rail, through every command that names
/// a design.
mod programmed {
    use super::*;

    const REQ: &str = "requirements-examples/logic-rail-programmed-sink.yaml";
    const DESIGN: [&str; 8] = [
        "--part",
        "npn-dual-general",
        "--topology",
        "simple",
        "--re",
        "1.62k",
        "--resistor",
        "thin-film-0p1pct",
    ];

    #[test]
    fn solve_takes_a_rail_and_r_ref_instead_of_a_current() {
        let out = mirrorpick()
            .args([
                "solve",
                "--topology",
                "simple",
                "--part",
                "npn-dual-general",
            ])
            .args([
                "--rail", "5V", "--rref", "4.3k", "--vout", "3V", "--supply", "5V",
            ])
            .args(["--rref-resistor", "thin-film-0p1pct", "--format", "json"])
            .assert()
            .success()
            .get_output()
            .stdout
            .clone();
        let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
        let (i_in, v_in) = (v["i_in_a"].as_f64().unwrap(), v["v_in_v"].as_f64().unwrap());
        // Sedra & Smith: I_in = (V_prog - V_BE) / R_ref with the solved V_BE (TCR is
        // zero effect at 25 °C).
        assert!((i_in / ((5.0 - v_in) / 4.3e3) - 1.0).abs() < 1e-6, "{v}");
        assert_eq!(v["r_ref_resistor"], "thin-film-0p1pct");
        assert!(v["r_ref_power_w"].as_f64().unwrap() > 0.0);
        assert!(v["tempco_ppm_per_k"].as_f64().unwrap() > 100.0);
        mirrorpick()
            .args([
                "solve",
                "--topology",
                "simple",
                "--part",
                "npn-dual-general",
            ])
            .args(["--rail", "5V", "--rref", "4.3k", "--vout", "3V"])
            .assert()
            .success()
            .stdout(predicate::str::contains("R_ref power"))
            .stdout(predicate::str::contains("output tempco"));
        for (extra, says) in [
            (
                vec!["--iin", "1mA", "--rail", "5V", "--rref", "4.3k"],
                "not both",
            ),
            (vec![], "give the input"),
            (vec!["--rail", "5V"], "--rail needs --rref"),
        ] {
            mirrorpick()
                .args([
                    "solve",
                    "--topology",
                    "simple",
                    "--part",
                    "npn-dual-general",
                ])
                .args(["--vout", "3V"])
                .args(extra)
                .assert()
                .code(2)
                .stderr(predicate::str::contains(says));
        }
    }

    #[test]
    fn curves_add_the_output_against_the_rail() {
        let out = mirrorpick()
            .args(["curves", REQ])
            .args(DESIGN)
            .args(["--format", "json"])
            .assert()
            .success()
            .get_output()
            .stdout
            .clone();
        let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
        assert_eq!(v["rail_window_v"]["min"], 4.9);
        assert_eq!(v["output_wanted_a"], 1e-3);
        let rail = v["rail"].as_array().unwrap();
        assert_eq!(rail.len(), 2, "at V_out min and max");
        for c in rail {
            let r: Vec<f64> = c["rail_v"]
                .as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_f64().unwrap())
                .collect();
            let i: Vec<f64> = c["i_out_a"]
                .as_array()
                .unwrap()
                .iter()
                .map(|x| x.as_f64().unwrap())
                .collect();
            // Over the rail's range and beyond it on both sides.
            assert!(r[0] < 4.9 && *r.last().unwrap() > 5.1, "{r:?}");
            // More rail, more current: (V_rail - V_in) / R_ref.
            assert!(i.windows(2).all(|w| w[1] > w[0]), "{i:?}");
            let mid = i[r.len() / 2];
            assert!((mid / 1e-3 - 1.0).abs() < 0.02, "{mid}");
        }
        mirrorpick()
            .args(["curves", REQ])
            .args(DESIGN)
            .assert()
            .success()
            .stdout(predicate::str::contains(
                "Output current against the program rail",
            ));
    }

    #[test]
    fn the_spice_bench_drives_the_input_through_r_ref_from_the_rail() {
        let out = mirrorpick()
            .args(["export", "--spice", REQ])
            .args(DESIGN)
            .args(["--rref", "2.74k"])
            .assert()
            .success()
            .get_output()
            .stdout
            .clone();
        let deck = String::from_utf8(out).unwrap();
        assert!(deck.contains("\nR3 vp in 2.74e3 "), "{deck}");
        assert!(deck.contains("\nVP vp 0 DC 4.9e0\n"), "{deck}");
        assert!(!deck.contains("\nIIN "), "no forced current:\n{deck}");
        assert!(
            deck.contains(".dc VOUT 0 5.1e0 2.55e-2 VP 4.9e0 5.1e0 2e-1"),
            "{deck}"
        );
        assert!(
            deck.contains("programmed by R3 from the program rail P, 4.90 V to 5.10 V"),
            "{deck}"
        );
    }
}
