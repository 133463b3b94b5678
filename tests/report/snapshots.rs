//! Whole outputs of `export --spice` and `curves` on the small test catalog. To change one
//! on purpose, run with `UPDATE_SNAPSHOTS=1`, then review the diff of tests/snapshots/
//! before committing.

use std::path::Path;

use assert_cmd::Command;

fn check(name: &str, args: &[&str]) {
    let out = Command::cargo_bin("mirrorpick")
        .unwrap()
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        // A fixed date for the decision record (reproducible-build convention).
        .env("SOURCE_DATE_EPOCH", "1798761599")
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

const REQ: &str = "tests/fixtures/report/tail.yaml";

#[test]
fn spice_deck() {
    check(
        "export-spice-wilson.cir",
        &[
            "export",
            "--spice",
            REQ,
            "--part",
            "npn-test-dual",
            "--topology",
            "wilson",
            "--re",
            "100",
            "--resistor",
            "test-resistor",
        ],
    );
}

#[test]
fn curves_table() {
    check(
        "curves-simple.txt",
        &[
            "curves",
            REQ,
            "--part",
            "npn-test-dual",
            "--topology",
            "simple",
            "--extremes",
        ],
    );
}

#[test]
fn decision_record_markdown() {
    // The Markdown goes to a file; its side files are checked in tests/report/report.rs.
    let dir = tempfile::tempdir().unwrap();
    let md = dir.path().join("tail.md");
    let out = Command::cargo_bin("mirrorpick")
        .unwrap()
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .env("SOURCE_DATE_EPOCH", "1798761599")
        .args(["--catalog", "tests/fixtures/catalog/valid.yaml"])
        .args(["report", REQ, "--top", "3", "--markdown"])
        .arg(&md)
        .output()
        .unwrap();
    assert!(
        out.status.code().unwrap() <= 1,
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let got = std::fs::read_to_string(&md).unwrap();
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/snapshots/report-tail.md");
    if std::env::var_os("UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, &got).unwrap();
    }
    let want = std::fs::read_to_string(&path)
        .unwrap_or_else(|_| panic!("missing snapshot report-tail.md; run with UPDATE_SNAPSHOTS=1"));
    assert_eq!(got, want, "the Markdown record differs from report-tail.md");
}
