//! The decision page as Markdown, with each plot as a separate SVG file beside it.
//!
//! Same `Page` as the HTML form, so the same content. User text is escaped so it can
//! neither break a table nor inject markup. The renderer returns the Markdown text and
//! the side files (name, SVG text); the caller writes them all atomically.

use std::fmt::Write as _;

use super::eng::percent;
use super::page::{DesignView, Page, Table};

/// Escapes text for Markdown: inline markup characters are backslash-escaped, HTML
/// metacharacters become entities, and line breaks become spaces (tables stay whole).
pub fn escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '\\' | '`' | '*' | '_' | '[' | ']' | '|' | '#' | '!' => {
                o.push('\\');
                o.push(c);
            }
            '\n' | '\r' | '\t' => o.push(' '),
            c => o.push(c),
        }
    }
    o
}

fn table(o: &mut String, t: &Table) {
    aligned_table(o, t, true)
}

/// A pipe table; `numbers_right` right-aligns every column but the first.
fn aligned_table(o: &mut String, t: &Table, numbers_right: bool) {
    let _ = writeln!(
        o,
        "| {} |",
        t.header
            .iter()
            .map(|h| escape(h))
            .collect::<Vec<_>>()
            .join(" | ")
    );
    let _ = writeln!(
        o,
        "|{}|",
        t.header
            .iter()
            .enumerate()
            .map(|(k, _)| if k == 0 || !numbers_right {
                "---"
            } else {
                "--:"
            })
            .collect::<Vec<_>>()
            .join("|")
    );
    for r in &t.rows {
        let _ = writeln!(
            o,
            "| {} |",
            r.iter().map(|c| escape(c)).collect::<Vec<_>>().join(" | ")
        );
    }
    o.push('\n');
}

fn kv(o: &mut String, rows: &[(String, String)]) {
    let t = Table {
        header: vec!["item".into(), "value".into()],
        rows: rows
            .iter()
            .map(|(k, v)| vec![k.clone(), v.clone()])
            .collect(),
    };
    table(o, &t);
}

fn design(o: &mut String, d: &DesignView) {
    let _ = writeln!(o, "**{}**\n", escape(&d.title));
    let t = Table {
        header: vec!["figure".into(), "value".into()],
        rows: d
            .figures
            .iter()
            .map(|f| vec![f.label.clone(), f.text.clone()])
            .collect(),
    };
    table(o, &t);
    if !d.checks.is_empty() {
        let _ = writeln!(
            o,
            "Checks (governing: {}, margin {}):\n",
            escape(&d.governing_check),
            percent(d.governing_margin)
        );
        let t = Table {
            header: ["check", "value", "limit", "margin", "verdict"]
                .map(String::from)
                .to_vec(),
            rows: d
                .checks
                .iter()
                .map(|c| {
                    vec![
                        c.name.clone(),
                        c.value.clone(),
                        c.limit.clone(),
                        percent(c.margin),
                        if c.pass { "pass" } else { "FAIL" }.to_string(),
                    ]
                })
                .collect(),
        };
        table(o, &t);
    }
}

/// Renders the page. `stem` names the side files: `{stem}-{plot id}.svg`. Returns the
/// Markdown text and the side files as (file name, SVG text).
pub fn render(page: &Page, stem: &str) -> (String, Vec<(String, String)>) {
    let mut o = String::new();
    let mut files = Vec::new();
    let _ = writeln!(
        o,
        "# Current-mirror design record: {}\n",
        escape(&page.title)
    );
    let _ = writeln!(o, "> {}\n", escape(&page.verdict));

    o.push_str("## 1 Requirement\n\n");
    kv(&mut o, &page.requirement);

    let mut plot = |o: &mut String, p: &super::page::Plot| {
        let name = format!("{stem}-{}.svg", p.id);
        let _ = writeln!(
            o,
            "![{}]({})\n\n*{}*\n",
            escape(&p.title),
            name.replace(' ', "%20"),
            escape(&p.caption)
        );
        files.push((name, p.svg.clone()));
    };
    o.push_str("## 2 Chosen design\n\n");
    match &page.chosen {
        Some(d) => {
            design(&mut o, d);
            for p in page.plots.iter().filter(|p| p.id == "schematic") {
                o.push_str("### Schematic and parts\n\n");
                plot(&mut o, p);
            }
            if !page.parts.rows.is_empty() {
                table(&mut o, &page.parts);
            }
        }
        None => {
            o.push_str("No design meets every requirement; see section 4 for the nearest miss.\n\n")
        }
    }

    o.push_str("## 3 Runners-up\n\n");
    if page.runners_up.is_empty() {
        o.push_str("No other design passes every check.\n\n");
    } else {
        table(&mut o, &page.runners_up_table());
    }

    o.push_str("## 4 What was rejected and why\n\n");
    let _ = writeln!(o, "{}\n", page.counts);
    if !page.rejected_by.is_empty() {
        table(&mut o, &page.rejected_by_table());
    }
    if let Some(r) = &page.best_rejected {
        let _ = writeln!(
            o,
            "### {}\n\n{}.\n",
            if page.feasible {
                "Nearest miss: a cheaper design that fails"
            } else {
                "Nearest miss"
            },
            escape(&r.headline)
        );
        design(&mut o, &r.design);
    }
    if !page.relax.is_empty() {
        o.push_str("### What to relax\n\nOne requirement field at a time; each value found by the solver for the nearest candidates.\n\n");
        for r in &page.relax {
            let _ = writeln!(o, "* {}", escape(r));
        }
        o.push('\n');
    }
    o.push_str("## 5 Error budget\n\n");
    if page.chosen.is_none() {
        o.push_str("No design was chosen, so there is no budget to show.\n\n");
    }
    for p in page.plots.iter().filter(|p| p.id == "budget") {
        plot(&mut o, p);
    }
    if !page.budget_table.rows.is_empty() {
        table(&mut o, &page.budget_table);
    }
    o.push_str("## 6 Curves\n\n");
    if page.chosen.is_none() {
        o.push_str("No design was chosen, so there are no curves to show.\n\n");
    }
    for p in page
        .plots
        .iter()
        .filter(|p| p.id != "budget" && p.id != "schematic")
    {
        plot(&mut o, p);
    }
    o.push_str("## 7 Corners\n\n");
    if page.corners.rows.is_empty() {
        o.push_str("No corner data.\n\n");
    } else {
        table(&mut o, &page.corners);
    }
    o.push_str("## 8 Assumptions\n\n");
    kv(&mut o, &page.assumptions);
    o.push_str("## 9 Cautions\n\n");
    for c in &page.cautions {
        let _ = writeln!(o, "* {}", escape(c));
    }
    o.push('\n');
    (o, files)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::fixtures;

    #[test]
    fn same_sections_with_plots_as_side_files() {
        let page = fixtures::page();
        let (md, files) = render(&page, "tail report");
        let names: Vec<&str> = files.iter().map(|f| f.0.as_str()).collect();
        assert_eq!(names, ["tail report-budget.svg", "tail report-curves.svg"]);
        assert!(md.contains("![Curve family](tail%20report-curves.svg)"));
        for h in [
            "## 1 Requirement",
            "## 2 Chosen design",
            "## 3 Runners-up",
            "## 4 What was rejected and why",
            "## 5 Error budget",
            "## 6 Curves",
            "## 7 Corners",
            "## 8 Assumptions",
            "## 9 Cautions",
        ] {
            assert!(md.contains(h), "{h}");
        }
        assert!(md.contains("tail &lt;script&gt;alert(1)&lt;/script&gt; &amp; sink"));
        assert!(!md.contains("<svg"), "plots live in side files");
        assert!(files.iter().all(|f| f.1.starts_with("<svg")));
    }

    #[test]
    fn table_cells_cannot_break_the_table() {
        assert_eq!(escape("a|b\nc *d*"), "a\\|b c \\*d\\*");
    }
}
