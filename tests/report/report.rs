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
        .stdout(format!(
            "Wrote the report to {}; a design meets every requirement.\n",
            page.display()
        ));
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

#[test]
fn designators_agree_between_schematic_parts_table_and_spice() {
    let (_, r_ref) = designators_agree(TAIL);
    assert_eq!(r_ref, None, "a forced input current has no R_ref");
}

#[test]
fn designators_agree_with_a_programming_resistor() {
    // R_ref is one more part: drawn once from its program rail, listed, and named the
    // same in the SPICE bench.
    let (drawn, r_ref) = designators_agree("requirements-examples/ltp-tail-programmed.yaml");
    let r_ref = r_ref.expect("R_ref drawn");
    assert!(drawn.contains(&r_ref), "{drawn:?}");
    // Resistors are numbered RE1, RE2, then R_ref: it is the last R.
    let last = drawn
        .iter()
        .filter(|d| d.starts_with('R'))
        .max_by_key(|d| d[1..].parse::<u32>().unwrap())
        .unwrap();
    assert_eq!(*last, r_ref);
}

/// Reports `req`, then checks the schematic file, the page's parts table and the SPICE
/// export of the chosen design name the same parts; returns the designators drawn and
/// R_ref's, when there is one.
fn designators_agree(req: &str) -> (Vec<String>, Option<String>) {
    let dir = tempfile::tempdir().unwrap();
    let page = dir.path().join("tail.html");
    let svg = dir.path().join("tail-schematic.svg");
    mirrorpick()
        .args(["report", req, "--out"])
        .arg(&page)
        .arg("--schematic")
        .arg(&svg)
        .assert()
        .success()
        .stdout(predicate::str::contains("the schematic to"));
    let html = std::fs::read_to_string(&page).unwrap();
    let doc = Html::parse_document(&html);
    let figure = |key: &str| -> String {
        let cell = select(&doc, &format!("#chosen td[data-key={key}]"));
        cell[0].text().collect()
    };
    let raw = |key: &str| -> f64 {
        select(&doc, &format!("#chosen td[data-key={key}]"))[0]
            .value()
            .attr("data-value")
            .unwrap()
            .parse()
            .unwrap()
    };
    // Every part of the schematic file exactly once, with its designator and value.
    let file = Html::parse_fragment(&std::fs::read_to_string(&svg).unwrap());
    let mut drawn: Vec<String> = select(&file, "g.part")
        .iter()
        .map(|g| {
            let words: Vec<String> = g
                .text()
                .map(|t| t.trim().to_string())
                .filter(|t| !t.is_empty())
                .collect();
            assert_eq!(words[0], g.value().attr("data-designator").unwrap());
            assert_eq!(words[1], g.value().attr("data-value").unwrap());
            words[0].clone()
        })
        .collect();
    drawn.sort();
    let n = drawn.len();
    drawn.dedup();
    assert_eq!(drawn.len(), n, "each part once");
    // The page's parts table lists the same designators.
    let mut listed: Vec<String> = select(&doc, "table.parts tbody tr td:first-child")
        .iter()
        .map(|td| td.text().collect())
        .collect();
    listed.sort();
    assert_eq!(listed, drawn);
    // The SPICE export of the same design names its elements the same way.
    let (re1, re2) = (raw("re1_ohm"), raw("re2_ohm"));
    let mut cmd = mirrorpick();
    cmd.args(["export", "--spice", req, "--part"])
        .arg(figure("part"))
        .arg("--topology")
        .arg(figure("topology"));
    let helper = figure("helper");
    if helper != "none" {
        cmd.args(["--helper", &helper]);
    }
    if re1 > 0.0 || re2 > 0.0 {
        cmd.args(["--re", &format!("{re2}"), "--resistor", &figure("resistor")]);
    }
    // The programming resistor as drawn (its class is the emitter resistors' here).
    let r_ref: Vec<String> = select(&file, "g.part[data-netlist=Rref]")
        .iter()
        .map(|g| g.value().attr("data-value").unwrap().to_string())
        .collect();
    let r_ref_designator = select(&file, "g.part[data-netlist=Rref]")
        .first()
        .map(|g| g.value().attr("data-designator").unwrap().to_string());
    if let Some(v) = r_ref.first() {
        cmd.args(["--rref", v]);
        if re1 == 0.0 && re2 == 0.0 {
            cmd.args(["--resistor", &figure("resistor")]);
        }
    }
    let out = cmd.output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let deck = String::from_utf8(out.stdout).unwrap();
    // Parts in the subcircuit, and R_ref in the bench.
    let mut elements: Vec<String> = deck
        .lines()
        .filter(|l| l.starts_with('Q') || l.starts_with('R'))
        .map(|l| l.split_whitespace().next().unwrap().to_string())
        .collect();
    elements.sort();
    assert_eq!(
        elements, drawn,
        "SPICE element names are the schematic's designators"
    );
    assert!(deck.contains("Not modelled in this deck: self-heating"));
    (drawn, r_ref_designator)
}

#[test]
fn report_on_a_terminal_writes_beside_the_requirement_and_says_so() {
    // Library-level: assert_cmd's stdout is a pipe, so the terminal case is set directly.
    let dir = tempfile::tempdir().unwrap();
    let req = dir.path().join("tail.yaml");
    std::fs::copy(Path::new(env!("CARGO_MANIFEST_DIR")).join(TAIL), &req).unwrap();
    let args = mirrorpick::app::ReportArgs {
        requirement: req.clone(),
        html: None,
        stdout_is_terminal: true,
        schematic: None,
        markdown: None,
        top: 3,
        mc: mirrorpick::check::MonteCarlo::default(),
        extremes: false,
    };
    let mut out = Vec::new();
    mirrorpick::app::report_cmd::run_report(
        &mirrorpick::app::CatalogSource::Default,
        &args,
        &mut out,
    )
    .unwrap();
    let text = String::from_utf8(out).unwrap();
    let expected = dir.path().join("tail.report.html");
    assert_eq!(text.lines().count(), 1, "{text}");
    assert!(text.contains(&expected.display().to_string()), "{text}");
    assert!(
        text.contains("the default beside the requirement"),
        "{text}"
    );
    assert!(std::fs::read_to_string(&expected)
        .unwrap()
        .starts_with("<!DOCTYPE html>"));
    // `--out -` puts the page on standard output even on a terminal.
    let args = mirrorpick::app::ReportArgs {
        html: Some("-".into()),
        ..args
    };
    let mut out = Vec::new();
    mirrorpick::app::report_cmd::run_report(
        &mirrorpick::app::CatalogSource::Default,
        &args,
        &mut out,
    )
    .unwrap();
    assert!(String::from_utf8(out)
        .unwrap()
        .starts_with("<!DOCTYPE html>"));
}
