//! Nothing a user can type takes the tool down, hangs it or gets a wrong answer without a
//! word: one regression test per kind of hostile or extreme input, each with its input,
//! and a fuzz run over mutated catalogs, requirements and board designs.
//!
//! The fuzz properties (`fuzz_*`) run a bounded number of cases by default; set
//! `PROPTEST_CASES` for a longer run, e.g.
//! `PROPTEST_CASES=5000 cargo test --release --test robustness fuzz -- --nocapture`.
//! Each prints its tally (inputs tried, accepted, refused with a located message).

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};

use assert_cmd::Command;
use mirrorpick::input::{self, Problem};
use predicates::prelude::*;
use proptest::prelude::*;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn mirrorpick() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(root());
    c
}

fn example(name: &str) -> String {
    std::fs::read_to_string(root().join("requirements-examples").join(name)).unwrap()
}

fn write(dir: &Path, name: &str, text: impl AsRef<[u8]>) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// Exactly one line on stderr, `error: file:line:col: ...`, exit 2.
fn located_error(cmd: &mut Command, file_part: &str) -> String {
    let out = cmd.output().unwrap();
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    let err = String::from_utf8(out.stderr).unwrap();
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(err.starts_with("error: "), "{err}");
    assert!(err.contains(file_part), "{err}");
    err
}

// ---- Crashes and hangs -------------------------------------------------------------

#[test]
fn board_counts_have_a_located_upper_bound() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "tail.yaml", example("ltp-tail-sink.yaml"));
    for count in ["2147483647", "4294967295", "200000", "10001"] {
        let design = format!(
            "name: b\nboards: 1\ncatalog: {}\nchannels:\n  - name: t\n    count: {count}\n    requirement: tail.yaml\n",
            root().join("catalog/default.yaml").display()
        );
        let f = write(dir.path(), "board.yaml", design);
        let err = located_error(mirrorpick().arg("bom").arg(&f), "board.yaml:6:");
        assert!(err.contains("10000"), "{err}");
    }
    // The requirement's quantity is the count when the channel gives none.
    let req = example("ltp-tail-sink.yaml") + "quantity: 20000\n";
    write(dir.path(), "many.yaml", req);
    let design = "name: b\nboards: 1\nchannels:\n  - name: t\n    requirement: many.yaml\n";
    let f = write(dir.path(), "board.yaml", design);
    let err = located_error(mirrorpick().arg("bom").arg(&f), "board.yaml:5:");
    assert!(err.contains("give the channel a `count`"), "{err}");
    // And a requirement's quantity keeps its documented range.
    let req = example("ltp-tail-sink.yaml") + "quantity: 4294967295\n";
    let f = write(dir.path(), "q.yaml", req);
    located_error(mirrorpick().args(["spec", "lint"]).arg(&f), "q.yaml:");
}

#[test]
fn deep_nesting_is_refused_quickly_in_every_file_kind() {
    let deep = format!(
        "name: x\nextra: {}1{}\n",
        "[".repeat(100_000),
        "]".repeat(100_000)
    );
    let block = format!("name: x\nextra:\n{}1\n", "- ".repeat(100_000));
    for text in [deep, block] {
        for (kind, load) in [("catalog", 0), ("requirement", 1), ("design", 2)] {
            let e = match load {
                0 => input::load_catalog("f.yaml", &text).unwrap_err(),
                1 => input::load_requirement("f.yaml", &text, None).unwrap_err(),
                _ => input::load_design("f.yaml", &text, Path::new(".")).unwrap_err(),
            };
            assert!(matches!(*e.problem, Problem::TooDeep { .. }), "{kind}: {e}");
            assert!(e.position.line >= 2, "{kind}: {e}");
        }
    }
}

#[test]
fn huge_names_and_ids_are_refused_with_their_position() {
    // A 200,000-character class id, a 4 MB channel name: refused at their line.
    let cat = input::DEFAULT_CATALOG_YAML.replacen(
        "id: npn-dual-general",
        &format!("id: {}", "a".repeat(200_000)),
        1,
    );
    let e = input::load_catalog("c.yaml", &cat).unwrap_err();
    assert!(matches!(*e.problem, Problem::TooLong { .. }), "{e}");
    assert!(e.to_string().len() < 400, "{e}");
    // 65 characters: past the id cap, under the scalar cap.
    let cat = input::DEFAULT_CATALOG_YAML.replacen(
        "id: npn-dual-general",
        &format!("id: {}", "a".repeat(65)),
        1,
    );
    let e = input::load_catalog("c.yaml", &cat).unwrap_err();
    assert!(e.to_string().contains("at most 64 characters"), "{e}");
    let design = format!(
        "name: b\nboards: 1\nchannels:\n  - name: {}\n    requirement: x.yaml\n",
        "n".repeat(4 << 20)
    );
    let e = input::load_design("d.yaml", &design, Path::new(".")).unwrap_err();
    assert_eq!(e.position.line, 4, "{e}");
    assert!(e.to_string().contains('…'), "{e}");
}

#[cfg(unix)]
#[test]
fn dev_zero_is_read_no_further_than_the_cap() {
    let err = located_error(
        mirrorpick().args(["catalog", "lint", "/dev/zero"]),
        "/dev/zero:1:1:",
    );
    assert!(err.contains("larger than 16 MiB"), "{err}");
    let err = located_error(
        mirrorpick().args(["spec", "lint", "/dev/zero"]),
        "/dev/zero:1:1:",
    );
    assert!(err.contains("larger than"), "{err}");
}

#[test]
fn an_honest_catalog_of_2500_classes_is_not_a_bomb() {
    let base = input::DEFAULT_CATALOG_YAML;
    let start = base.find("  - id: npn-dual-general").unwrap();
    let end = start + base[start + 1..].find("\n  - id:").unwrap() + 1;
    let class = &base[start..end];
    let mut text = base.to_string();
    let mut extra = String::new();
    for i in 0..2500 {
        extra.push_str(&class.replacen("npn-dual-general", &format!("npn-extra-{i}"), 1));
    }
    text.insert_str(end, &extra);
    assert!(text.len() > 1_000_000, "{}", text.len());
    let c = input::load_catalog("big.yaml", &text).unwrap();
    assert!(c.transistors.len() > 2500);
}

// ---- Wrong answers without a word --------------------------------------------------

#[test]
fn beta_helper_with_a_saturated_output_solves() {
    // Simple and Wilson solve this point; the beta helper used to end "did not converge".
    for t in ["beta-helper", "simple", "wilson"] {
        mirrorpick()
            .args([
                "solve",
                "--topology",
                t,
                "--part",
                "npn-dual-general",
                "--iin",
                "100uA",
                "--vout",
                "3V",
                "--supply",
                "12V",
                "--re1",
                "47k",
                "--re2",
                "47k",
            ])
            .assert()
            .code(0);
    }
}

#[test]
fn minus_sixty_celsius_the_documented_lower_bound_is_accepted() {
    let dir = tempfile::tempdir().unwrap();
    for (amb, ok) in [
        ("{min: -60 °C, max: 35 °C}", true),
        ("{min: -60, max: 35}", true),
        ("{min: 213.15 K, max: 35 °C}", true),
        ("{min: -60.1 °C, max: 35 °C}", false),
    ] {
        let text = example("widlar-bias-source.yaml").replace(
            "ambient: {min: 15 °C, max: 35 °C}",
            &format!("ambient: {amb}"),
        );
        let f = write(dir.path(), "cold.yaml", text);
        let code = mirrorpick()
            .args(["spec", "lint"])
            .arg(&f)
            .output()
            .unwrap()
            .status
            .code();
        assert_eq!(code, Some(if ok { 0 } else { 2 }), "{amb}");
    }
    mirrorpick()
        .args([
            "solve",
            "--topology",
            "simple",
            "--part",
            "npn-dual-general",
            "--iin",
            "100uA",
            "--vout",
            "3V",
            "--supply",
            "12V",
            "--ambient",
            "-60C",
        ])
        .assert()
        .code(0);
}

#[test]
fn resistor_classes_carry_their_value_range() {
    // At 1 pA the ranking used to pick 590 GΩ and 1.74 TΩ emitter resistors.
    let dir = tempfile::tempdir().unwrap();
    let text = example("photodiode-bias-source.yaml");
    let text = regex_replace_input_current(&text, "input_current: {min: 1 pA, max: 1 pA}");
    let f = write(dir.path(), "pico.yaml", text);
    let out = mirrorpick()
        .args(["rank", "--format", "json", "--samples", "100"])
        .arg(&f)
        .output()
        .unwrap();
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap_or_default();
    for row in json["candidates"].as_array().into_iter().flatten() {
        for key in ["re1_ohm", "re2_ohm"] {
            let v = row[key].as_f64().unwrap();
            assert!(v <= 10e6, "{key} = {v}");
        }
    }
    // A catalog may widen a class; a value above 10 MΩ then gets a caution.
    let cat = input::DEFAULT_CATALOG_YAML;
    let c = input::load_catalog("c.yaml", cat).unwrap();
    assert!(c
        .resistors
        .iter()
        .all(|r| r.max_ohm == 10e6 && r.min_ohm == 1.0));
    let bad = cat.replacen(
        "    provenance:",
        "    min_value: 10k\n    max_value: 1k\n    provenance:",
        1,
    );
    let _ = input::load_catalog("c.yaml", &bad);
}

fn regex_replace_input_current(text: &str, with: &str) -> String {
    text.lines()
        .map(|l| {
            if l.starts_with("input_current:") {
                with.to_string()
            } else {
                l.to_string()
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
        + "\n"
}

#[test]
fn samples_have_a_minimum_and_yields_their_interval() {
    for n in ["0", "1", "99"] {
        mirrorpick()
            .args([
                "rank",
                "requirements-examples/ltp-tail-sink.yaml",
                "--samples",
                n,
            ])
            .assert()
            .code(2)
            .stderr(predicate::str::contains("100 or more"));
    }
    let ci = mirrorpick::check::wilson_interval(1.0, 1).unwrap();
    assert!(ci[0] < 0.25, "one passing build proves little: {ci:?}");
}

// ---- Files -------------------------------------------------------------------------

#[cfg(unix)]
#[test]
fn interrupted_report_leaves_no_temporary_file() {
    use std::time::Duration;
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("r.html");
    for signal in [libc::SIGINT, libc::SIGTERM] {
        let mut child = std::process::Command::new(assert_cmd::cargo::cargo_bin("mirrorpick"))
            .current_dir(root())
            .args([
                "report",
                "requirements-examples/expo-converter-sink.yaml",
                "--html",
            ])
            .arg(&target)
            .stdout(std::process::Stdio::null())
            .stderr(std::process::Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(Duration::from_millis(300));
        // SAFETY: plain kill(2) of our own child.
        unsafe {
            libc::kill(child.id() as i32, signal);
        }
        let _ = child.wait();
        let left: Vec<_> = std::fs::read_dir(dir.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .filter(|n| n.ends_with(".tmp"))
            .collect();
        assert!(left.is_empty(), "{left:?}");
    }
}

// ---- Messages ----------------------------------------------------------------------

#[test]
fn non_utf8_files_are_located_at_their_first_bad_byte() {
    let dir = tempfile::tempdir().unwrap();
    let f = write(
        dir.path(),
        "latin1.yaml",
        b"name: x\nsummary: caf\xe9\n".as_slice(),
    );
    let err = located_error(
        mirrorpick().args(["spec", "lint"]).arg(&f),
        "latin1.yaml:2:13:",
    );
    assert!(err.contains("0xE9"), "{err}");
}

#[test]
fn a_missing_catalog_is_located_in_the_design_file() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "tail.yaml", example("ltp-tail-sink.yaml"));
    let design = "name: b\nboards: 1\ncatalog: nope.yaml\nchannels:\n  - name: t\n    requirement: tail.yaml\n";
    let f = write(dir.path(), "board.yaml", design);
    let err = located_error(mirrorpick().arg("bom").arg(&f), "board.yaml:3:10:");
    assert!(err.contains("nope.yaml"), "{err}");
}

#[test]
fn long_values_are_cut_with_an_ellipsis() {
    let csv = example("bench-simple-mirror.csv");
    let err = located_error(
        mirrorpick()
            .args([
                "rank",
                "requirements-examples/ltp-tail-sink.yaml",
                "--catalog",
            ])
            .arg(root().join("requirements-examples/bench-simple-mirror.csv")),
        "bench-simple-mirror.csv:",
    );
    assert!(err.len() < 600, "{} bytes: {err}", err.len());
    assert!(csv.len() > 600);
    let long = format!("supply: {}\n", "9".repeat(10_000));
    let e = input::load_requirement("r.yaml", &long, None).unwrap_err();
    assert!(e.to_string().len() < 600, "{e}");
}

#[test]
fn control_characters_in_names_are_shown_escaped() {
    let dir = tempfile::tempdir().unwrap();
    let text =
        example("ltp-tail-sink.yaml").replacen("name: ", "name: \"tail\\e]0;owned\\a\" # ", 1);
    let f = write(dir.path(), "esc.yaml", text);
    for args in [vec!["spec", "lint"], vec!["rank", "--samples", "100"]] {
        let out = mirrorpick().args(&args).arg(&f).output().unwrap();
        for stream in [&out.stdout, &out.stderr] {
            assert!(
                !stream.contains(&0x1b) && !stream.contains(&0x07),
                "{args:?}: raw control characters"
            );
        }
    }
    // Channel names are refused outright.
    let design = "name: b\nboards: 1\nchannels:\n  - name: \"a\\e[2J\"\n    requirement: x.yaml\n";
    let e = input::load_design("d.yaml", design, Path::new(".")).unwrap_err();
    assert!(e.to_string().contains("\\e"), "{e}");
}

#[test]
fn command_line_values_get_the_message_they_deserve() {
    let solve = |extra: &[&str]| {
        let mut c = mirrorpick();
        c.args([
            "solve",
            "--topology",
            "simple",
            "--part",
            "npn-dual-general",
            "--iin",
            "100uA",
        ]);
        c.args(extra);
        c.output().unwrap()
    };
    let out = solve(&["--vout", "3V", "--supply", "1e6V"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("supply voltage") && !err.contains("output voltage"),
        "{err}"
    );
    let out = solve(&["--vout", "3V", "--supply", "0"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("500 mV"), "{err}");
    let out = solve(&["--vout", "-5V", "--supply", "12V"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("without the sign") && err.contains("`5V`"),
        "{err}"
    );
    let out = solve(&[
        "--vout", "3V", "--supply", "12V", "--re1", "1 TΩ", "--re2", "1k",
    ]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("prefix `T`") && err.contains("tera"), "{err}");
    let out = solve(&["--vout", "13V", "--supply", "12V"]);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("12.0 V"), "{err}");
}

// ---- Fuzzing -----------------------------------------------------------------------

/// Per kind (catalog, requirement, design, raw bytes): inputs tried and accepted.
static TRIED: [AtomicUsize; 4] = [const { AtomicUsize::new(0) }; 4];
static ACCEPTED: [AtomicUsize; 4] = [const { AtomicUsize::new(0) }; 4];
const KINDS: [&str; 4] = ["catalogs", "requirements", "board designs", "raw bytes"];

/// A mutation of `base`: bytes replaced, lines duplicated or dropped, values swapped
/// for hostile ones (huge numbers, control characters, deep nesting, aliases).
fn mutated(base: &'static str) -> impl Strategy<Value = String> {
    let hostile = prop_oneof![
        Just("-1".to_string()),
        Just("1e308".to_string()),
        Just("4294967296".to_string()),
        Just("\"\\e]0;x\\a\"".to_string()),
        Just("&a [*a]".to_string()),
        Just(
            "[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[1]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]]"
                .to_string()
        ),
        Just("1 TΩ".to_string()),
        Just("-60 °C".to_string()),
        Just("NaN".to_string()),
        Just("".to_string()),
        "\\PC{0,20}",
    ];
    let lines = base.lines().count().max(1);
    prop::collection::vec((0..lines, 0u8..4, hostile), 1..4).prop_map(move |edits| {
        let mut v: Vec<String> = base.lines().map(str::to_string).collect();
        for (at, how, value) in edits {
            let at = at.min(v.len().saturating_sub(1));
            if v.is_empty() {
                v.push(value);
                continue;
            }
            match how {
                0 => {
                    if let Some(i) = v[at].find(": ") {
                        v[at] = format!("{}: {value}", &v[at][..i]);
                    }
                }
                1 => {
                    let dup = v[at].clone();
                    v.insert(at, dup);
                }
                2 => {
                    v.remove(at);
                }
                _ => v[at].push_str(&value),
            }
        }
        v.join("\n") + "\n"
    })
}

fn judge(kind: usize, r: Result<(), input::InputError>) -> Result<(), TestCaseError> {
    TRIED[kind].fetch_add(1, Ordering::Relaxed);
    match r {
        Ok(()) => {
            ACCEPTED[kind].fetch_add(1, Ordering::Relaxed);
            Ok(())
        }
        Err(e) => {
            let msg = e.to_string();
            prop_assert!(msg.lines().count() == 1, "one line: {msg}");
            prop_assert!(!msg.chars().any(|c| c == '\u{1b}' || c == '\u{7}'), "{msg}");
            prop_assert!(msg.len() < 2000, "{} bytes", msg.len());
            prop_assert!(e.position.line >= 1 && e.position.col >= 1);
            Ok(())
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    #[test]
    fn fuzz_catalogs(text in mutated(input::DEFAULT_CATALOG_YAML)) {
        judge(0, input::load_catalog("c.yaml", &text).map(drop))?;
    }

    #[test]
    fn fuzz_requirements(text in mutated(include_str!("../requirements-examples/ltp-tail-sink.yaml"))) {
        let cat = input::load_default_catalog().unwrap();
        judge(1, input::load_requirement("r.yaml", &text, Some(&cat)).map(drop))?;
    }

    #[test]
    fn fuzz_designs(text in mutated(include_str!("../requirements-examples/board-synth-voice.yaml"))) {
        let cat = input::load_default_catalog().unwrap();
        let dir = root().join("requirements-examples");
        let r = input::load_design("d.yaml", &text, &dir).and_then(|d| d.finish(&cat).map(drop));
        judge(2, r)?;
    }

    #[test]
    fn fuzz_bytes(bytes in prop::collection::vec(any::<u8>(), 0..300)) {
        judge(3, input::text_of("b.yaml", bytes).and_then(|t| input::load_catalog("b.yaml", &t).map(drop)))?;
    }
}

#[test]
fn zz_fuzz_tally() {
    // Printed for the record (the order of tests is not guaranteed; run with
    // `--test-threads 1` to see the total of the fuzz properties above).
    for (k, kind) in KINDS.iter().enumerate() {
        let tried = TRIED[k].load(Ordering::Relaxed);
        let accepted = ACCEPTED[k].load(Ordering::Relaxed);
        eprintln!(
            "fuzz {kind}: {tried} inputs, {accepted} accepted, {} refused with a located one-line message, 0 panics",
            tried - accepted
        );
    }
}
