//! The `bom` command end to end: design-file errors with their location, the three
//! formats, infeasible boards, and the BOM total against the catalog's prices.
//!
//! The fixtures under `tests/fixtures/design/` keep every channel's candidate space small
//! (one topology, one pair class, one resistor class, or the Widlar example) so each run
//! takes a second or two.

use assert_cmd::Command;
use predicates::prelude::*;
use serde_json::Value;

fn cmd() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

fn fixture(name: &str) -> String {
    format!("tests/fixtures/design/{name}")
}

const SAMPLES: &str = "100";

/// Bad input: exit 2, one line naming file:line:col and what is wrong.
fn bad(name: &str, located: &str, says: &str) {
    cmd()
        .args(["bom", &fixture(name)])
        .assert()
        .code(2)
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains(located))
        .stderr(predicate::str::contains(says));
}

#[test]
fn unknown_design_field_has_a_suggestion() {
    bad(
        "unknown-field.yaml",
        "unknown-field.yaml:4:1:",
        "unknown field `chanels` (did you mean `channels`?)",
    );
}

#[test]
fn inline_requirement_errors_point_into_the_design_file() {
    bad(
        "inline-unknown-field.yaml",
        "inline-unknown-field.yaml:9:7:",
        "unknown field `suply` (did you mean `supply`?)",
    );
    bad(
        "inline-bad-value.yaml",
        "inline-bad-value.yaml:13:17:",
        "`channels[0].requirement.accuracy`",
    );
}

#[test]
fn errors_inside_an_included_requirement_name_that_file() {
    bad(
        "included-error.yaml",
        "requirement/unknown-field.yaml:9:1:",
        "did you mean `accuracy`?",
    );
}

#[test]
fn a_missing_requirement_file_is_located_at_its_line() {
    bad(
        "missing-file.yaml",
        "missing-file.yaml:6:18:",
        "cannot read the requirement file",
    );
}

#[test]
fn unknown_board_class_has_a_suggestion() {
    bad(
        "unknown-class.yaml",
        "unknown-class.yaml:4:8:",
        "did you mean `npn-dual-general`?",
    );
}

#[test]
fn zero_count_and_repeated_channel_names_are_rejected() {
    bad("zero-count.yaml", "zero-count.yaml:6:12:", "a count of 0");
    bad(
        "duplicate-channel.yaml",
        "duplicate-channel.yaml:7:11:",
        "channel `a` is named twice",
    );
}

#[test]
fn help_has_an_example_and_the_exit_codes() {
    cmd()
        .args(["bom", "--help"])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("Example:"))
        .stdout(predicate::str::contains("Exit status"));
}

fn json(name: &str) -> Value {
    let out = cmd()
        .args([
            "bom",
            &fixture(name),
            "--format",
            "json",
            "--samples",
            SAMPLES,
        ])
        .assert()
        .code(0)
        .get_output()
        .clone();
    serde_json::from_slice(&out.stdout).expect("valid JSON on stdout")
}

#[test]
fn table_shows_bom_assignment_total_and_the_unshared_baseline() {
    cmd()
        .args(["bom", &fixture("small.yaml"), "--samples", SAMPLES])
        .assert()
        .code(0)
        .stdout(predicate::str::contains("Total per build:"))
        .stdout(predicate::str::contains("no shared packages"))
        .stdout(predicate::str::contains("sinks"))
        .stdout(predicate::str::contains("widlar"))
        .stderr(predicate::str::contains("typical of each class"));
}

#[test]
fn csv_is_the_bom_with_one_row_per_line_item() {
    let doc = json("small.yaml");
    let lines = doc["bom"].as_array().unwrap().len();
    let out = cmd()
        .args([
            "bom",
            &fixture("small.yaml"),
            "--format",
            "csv",
            "--samples",
            SAMPLES,
        ])
        .assert()
        .code(0)
        .get_output()
        .clone();
    let text = String::from_utf8(out.stdout).unwrap();
    let rows: Vec<&str> = text.lines().collect();
    assert!(rows[0].contains("value_ohm"), "header: {}", rows[0]);
    assert_eq!(rows.len(), lines + 1);
}

/// The plan's money, recomputed from the catalog: every line's extended cost is its
/// quantity per build times the catalog's unit price, the total adds one fixed cost per
/// line item, and every resistor line holds exactly what the chosen designs use.
#[test]
fn bom_total_equals_the_chosen_parts_priced_from_the_catalog() {
    let doc = json("small.yaml");
    let catalog = mirrorpick::input::load_default_catalog().unwrap();
    let boards = doc["boards"].as_f64().unwrap();
    let line_item_cost = 5.0; // small.yaml
    let mut parts = 0.0;
    let bom = doc["bom"].as_array().unwrap();
    for l in bom {
        let class = l["class"].as_str().unwrap();
        let unit = match l["kind"].as_str().unwrap() {
            "transistor" => catalog.transistor(class).unwrap().unit_cost,
            _ => catalog.resistor(class).unwrap().unit_cost,
        };
        let qty = l["qty_per_board"].as_f64().unwrap();
        assert_eq!(l["qty_per_build"].as_f64().unwrap(), qty * boards);
        parts += qty * boards * unit;
    }
    let expected = parts + bom.len() as f64 * line_item_cost;
    let total = doc["total_cost"].as_f64().unwrap();
    assert!(
        (total - expected).abs() < 1e-9 * expected,
        "total {total}, recomputed {expected}"
    );
    // Resistors per board: the sum over channels of copies x uses of the chosen design.
    for l in bom.iter().filter(|l| l["kind"] == "resistor") {
        let used: f64 = doc["channels"]
            .as_array()
            .unwrap()
            .iter()
            .map(|c| {
                let copies = c["count"].as_f64().unwrap();
                c["resistors"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .filter(|r| r["class"] == l["class"] && r["value_ohm"] == l["value_ohm"])
                    .map(|r| copies * r["count"].as_f64().unwrap())
                    .sum::<f64>()
            })
            .sum();
        assert_eq!(used, l["qty_per_board"].as_f64().unwrap(), "line {l}");
    }
    // Every chosen pair class is on the BOM.
    for c in doc["channels"].as_array().unwrap() {
        assert!(bom.iter().any(|l| l["class"] == c["pair_class"]), "{c}");
    }
}

#[test]
fn a_channel_without_a_feasible_design_is_named_with_the_check_that_rejected_it() {
    cmd()
        .args(["bom", &fixture("no-design.yaml"), "--samples", SAMPLES])
        .assert()
        .code(1)
        .stdout(predicate::str::contains(
            "channel `tight` has no feasible design",
        ))
        .stdout(predicate::str::contains("fails accuracy"));
}

#[test]
fn an_unmeetable_line_item_limit_gives_the_smallest_feasible_number() {
    // The fewest line items is at most what the unconstrained optimum uses.
    let free = json("small.yaml")["bom"].as_array().unwrap().len();
    let out = cmd()
        .args([
            "bom",
            &fixture("line-item-limit.yaml"),
            "--format",
            "json",
            "--samples",
            SAMPLES,
        ])
        .assert()
        .code(1)
        .get_output()
        .clone();
    let doc: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(doc["feasible"], false);
    assert_eq!(doc["max_line_items"], 1);
    let smallest = doc["smallest_feasible_line_items"].as_u64().unwrap() as usize;
    assert!(smallest > 1 && smallest <= free, "{smallest} vs {free}");
    assert!(doc["reason"]
        .as_str()
        .unwrap()
        .contains("no board meets max_line_items = 1"));
}

#[test]
fn the_shipped_board_example_reads_with_every_channel() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("requirements-examples");
    let file = root.join("board-synth-voice.yaml");
    let text = std::fs::read_to_string(&file).unwrap();
    let draft = mirrorpick::input::load_design("board-synth-voice.yaml", &text, &root).unwrap();
    let catalog = mirrorpick::input::load_default_catalog().unwrap();
    let design = draft.finish(&catalog).unwrap();
    let names: Vec<&str> = design.channels.iter().map(|c| c.name.as_str()).collect();
    assert_eq!(names.len(), 6, "{names:?}");
    // `count` absent: the requirement's quantity (the LED example builds four).
    let leds = design
        .channels
        .iter()
        .find(|c| c.name == "panel LEDs")
        .unwrap();
    assert_eq!(leds.count, leds.requirement.quantity);
    assert_eq!(leds.count, 4);
}

#[test]
fn a_board_wide_deny_applies_on_top_of_the_channel_allow_list() {
    // The sinks channel allows one resistor class; the board denies it. The channel must
    // not fall back to other resistor classes: only the undegenerated mirror is left.
    cmd()
        .args(["bom", &fixture("board-deny.yaml"), "--samples", SAMPLES])
        .assert()
        .code(1)
        .stdout(predicate::str::contains(
            "channel `sinks` has no feasible design",
        ))
        .stdout(predicate::str::contains("1 candidate judged"));
}

#[test]
fn a_multi_output_channel_fills_one_array_per_copy_with_an_re2_per_output() {
    // outputs.yaml: two copies of one reference with four outputs on a six-device array.
    let doc = json("outputs.yaml");
    let ch = &doc["channels"][0];
    assert!(ch["label"].as_str().unwrap().contains("×4 outputs"), "{ch}");
    for copy in ch["copies"].as_array().unwrap() {
        let matched: Vec<&str> = copy["matched"]
            .as_array()
            .unwrap()
            .iter()
            .map(|d| d.as_str().unwrap())
            .collect();
        // One input device and four outputs, all in one package (Q1A..Q1E).
        assert_eq!(matched.len(), 5, "{copy}");
        let package = &matched[0][..matched[0].len() - 1];
        assert!(
            matched.iter().all(|d| d.starts_with(package)),
            "{matched:?}"
        );
    }
    let transistors: f64 = doc["bom"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|l| l["kind"] == "transistor")
        .map(|l| l["qty_per_board"].as_f64().unwrap())
        .sum();
    assert_eq!(transistors, 2.0, "one array per copy");
    // RE1 and four RE2 per copy, where the design is degenerated.
    for r in ch["resistors"].as_array().unwrap() {
        assert_eq!(r["count"].as_u64().unwrap() % 5, 0, "{r}");
    }
}
