//! The `report` command: the decision page checked as a reader would check it.

use std::path::Path;

use assert_cmd::Command;
use predicates::prelude::*;
use scraper::{Html, Selector};

fn mirrorpick() -> Command {
    let mut c = Command::cargo_bin("mirrorpick").unwrap();
    c.current_dir(env!("CARGO_MANIFEST_DIR"));
    c
}

const TAIL: &str = "requirements-examples/ltp-tail-sink.yaml";

fn select<'a>(doc: &'a Html, css: &str) -> Vec<scraper::ElementRef<'a>> {
    doc.select(&Selector::parse(css).unwrap()).collect()
}

#[test]
fn page_is_well_formed_self_contained_and_agrees_with_rank_json() {
    let dir = tempfile::tempdir().unwrap();
    let page = dir.path().join("tail.html");
    mirrorpick()
        .args(["report", TAIL, "--out"])
        .arg(&page)
        .assert()
        .success()
        .stdout("");
    let html = std::fs::read_to_string(&page).unwrap();
    let doc = Html::parse_document(&html);
    assert!(
        doc.errors.is_empty(),
        "HTML5 parse errors: {:?}",
        doc.errors
    );
    assert!(html.contains("<svg"));
    assert!(select(&doc, "svg").len() >= 2, "budget and curves inline");
    assert!(select(&doc, "script, link, img, iframe, object").is_empty());
    for scheme in ["http://", "https://"] {
        for (k, _) in html.match_indices(scheme) {
            let url: String = html[k..].chars().take_while(|c| *c != '"').collect();
            assert_eq!(
                url, "http://www.w3.org/2000/svg",
                "only XML namespace names"
            );
        }
    }

    let out = mirrorpick()
        .args(["rank", TAIL, "--format", "json"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let first = &json["candidates"][0];
    let cells = select(&doc, "#chosen td[data-key]");
    let mut compared = 0;
    for cell in cells {
        let key = cell.value().attr("data-key").unwrap();
        let want = &first[key];
        assert!(
            !want.is_null() || key == "helper" || key == "resistor",
            "{key} missing in JSON"
        );
        match cell.value().attr("data-value") {
            Some(raw) => {
                let got: f64 = raw.parse().unwrap();
                assert_eq!(Some(got), want.as_f64(), "figure {key}");
            }
            None => {
                let text: String = cell.text().collect();
                let want = want.as_str().unwrap_or("none");
                assert_eq!(text, want, "figure {key}");
            }
        }
        compared += 1;
    }
    assert!(compared >= 15, "only {compared} figures compared");
    // The same design heads both.
    let title: String = select(&doc, "#decision p strong")[0].text().collect();
    assert!(title.starts_with(&format!(
        "{} · {}",
        first["topology"].as_str().unwrap(),
        first["part"].as_str().unwrap()
    )));
    // Provenance and cautions.
    let sha = mirrorpick::report::sha256_hex(mirrorpick::input::DEFAULT_CATALOG_YAML.as_bytes());
    assert!(html.contains(&sha));
    assert!(html.contains("licensed engineering practice"));
    assert!(html.contains("not guaranteed"));
}

#[test]
fn markup_from_user_files_is_escaped() {
    let out = mirrorpick()
        .args(["--catalog", "tests/fixtures/report/catalog-markup.yaml"])
        .args(["report", "tests/fixtures/report/tail.yaml"])
        .output()
        .unwrap();
    assert!(
        out.status.code().unwrap() <= 1,
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let html = String::from_utf8(out.stdout).unwrap();
    let doc = Html::parse_document(&html);
    assert!(doc.errors.is_empty(), "{:?}", doc.errors);
    // The requirement name, as text.
    assert!(html.contains("tail &lt;b&gt;sink&lt;/b&gt; &amp; &lt;i&gt;co&lt;/i&gt;"));
    let h1: String = select(&doc, "h1")[0].text().collect();
    assert_eq!(h1, "tail <b>sink</b> & <i>co</i>");
    // A catalog summary, as text.
    assert!(
        html.contains(
            "test dual &lt;script&gt;alert(1)&lt;/script&gt; &amp; &lt;b&gt;co&lt;/b&gt;"
        ) || html.contains("test single &lt;img src=x&gt; &amp; &lt;em&gt;co&lt;/em&gt;"),
        "a class summary is shown"
    );
    assert!(
        select(&doc, "script, img, b, i, em").is_empty(),
        "no injected elements"
    );
}

#[test]
fn markdown_with_plots_beside_it() {
    let dir = tempfile::tempdir().unwrap();
    let md = dir.path().join("tail.md");
    mirrorpick()
        .args(["report", TAIL, "--markdown"])
        .arg(&md)
        .assert()
        .success();
    let text = std::fs::read_to_string(&md).unwrap();
    assert!(text.contains("## 6 Curves"));
    for side in ["tail-budget.svg", "tail-curves.svg"] {
        assert!(text.contains(&format!("]({side})")), "{side} linked");
        let svg = std::fs::read_to_string(dir.path().join(side)).unwrap();
        assert!(svg.starts_with("<svg"));
    }
}

#[test]
fn an_unwritable_path_fails_first_and_leaves_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let blocker = dir.path().join("plain-file");
    std::fs::write(&blocker, "").unwrap();
    let target = blocker.join("r.html");
    mirrorpick()
        .args(["report", TAIL, "--out"])
        .arg(&target)
        .assert()
        .code(2)
        .stderr(predicate::str::contains("plain-file"));
    let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(names.len(), 1);
    assert!(!Path::new(&target).exists());
}
