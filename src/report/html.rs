//! The decision page as one self-contained HTML document.
//!
//! Inline CSS and inline SVG only: no scripts, no external references, so the file can
//! be mailed, archived and opened offline years later. The page is a maud template,
//! checked at compile time and escaping every interpolated value by default, so a
//! string from a user's file cannot reach the page as markup by accident; the only
//! pre-escaped inserts are the constant style sheet and the SVG our own plot and
//! schematic code produced (which escape their own labels). The look is a plain
//! engineering document: numbered sections, ruled tables, numbers right-aligned in
//! tabular figures.

use maud::{html, Markup, PreEscaped, DOCTYPE};

use super::eng::percent;
use super::page::{DesignView, Page, Plot, Table};

const CSS: &str = "
body{font:15px/1.45 Georgia,'Times New Roman',serif;color:#1b1b1b;background:#fdfdfb;margin:0}
main{max-width:54em;margin:0 auto;padding:1.5em 2em 3em}
header{border-bottom:3px double #444;margin-bottom:1em}
.kicker{font:600 12px/1 system-ui,sans-serif;letter-spacing:.12em;text-transform:uppercase;color:#555;margin:.5em 0 0}
h1{font-size:1.7em;margin:.2em 0 .3em}
h2{font:600 1.05em system-ui,sans-serif;border-bottom:1px solid #999;padding-bottom:.15em;margin-top:2em}
h3{font:600 .95em system-ui,sans-serif;margin:1.2em 0 .4em}
.meta{font:12px system-ui,sans-serif;color:#555}
.verdict{border-left:5px solid #2e6b2e;background:#eef5ee;padding:.6em 1em}
.verdict.fail{border-color:#9b2a2a;background:#f8eded}
table{border-collapse:collapse;margin:.5em 0 1em;font:13px system-ui,sans-serif}
th,td{padding:.25em .7em;border-bottom:1px solid #ddd;text-align:left;vertical-align:top}
th{border-bottom:1.5px solid #555;font-weight:600}
td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}
table.kv th{border-bottom:1px solid #ddd;font-weight:normal;color:#444;width:14em}
.pass{color:#2e6b2e}.fail{color:#9b2a2a;font-weight:600}
figure{margin:1em 0}figcaption{font:12px system-ui,sans-serif;color:#444;margin-top:.3em}
svg{max-width:100%;height:auto;border:1px solid #ddd;background:#fff}
ul.cautions li{margin:.3em 0}
footer{margin-top:3em;font:11px system-ui,sans-serif;color:#666;border-top:1px solid #ccc;padding-top:.5em}
@media print{body{background:#fff}main{padding:0}h2{break-after:avoid}figure,table{break-inside:avoid}}
";

fn table(t: &Table, class: &str) -> Markup {
    html! {
        table class=(class) {
            thead { tr { @for h in &t.header { th { (h) } } } }
            tbody {
                @for r in &t.rows {
                    tr {
                        @for (k, c) in r.iter().enumerate() {
                            @if k > 0 && looks_numeric(c) {
                                td.num { (c) }
                            } @else {
                                td { (c) }
                            }
                        }
                    }
                }
            }
        }
    }
}

fn looks_numeric(s: &str) -> bool {
    s.trim_start_matches(['-', '+', '−'])
        .starts_with(|c: char| c.is_ascii_digit())
}

fn kv(rows: &[(String, String)], id: &str) -> Markup {
    html! {
        table.kv id=(id) {
            tbody {
                @for (k, v) in rows {
                    tr { th { (k) } td { (v) } }
                }
            }
        }
    }
}

fn design(d: &DesignView, id: &str) -> Markup {
    html! {
        p { strong { (d.title) } }
        table.kv.figures id=(id) {
            tbody {
                @for f in &d.figures {
                    tr {
                        th { (f.label) }
                        td class=[f.raw.map(|_| "num")]
                            data-key=[(!f.key.is_empty()).then_some(&f.key)]
                            data-value=[f.raw.map(|r| format!("{r:e}"))] { (f.text) }
                    }
                }
            }
        }
        @if !d.checks.is_empty() {
            h3 { "Checks (governing: " (d.governing_check) ", margin " (percent(d.governing_margin)) ")" }
            table.checks {
                thead { tr { th { "check" } th { "value" } th { "limit" } th { "margin" } th { "verdict" } } }
                tbody {
                    @for c in &d.checks {
                        tr {
                            td { (c.name) }
                            td.num { (c.value) }
                            td.num { (c.limit) }
                            td.num { (percent(c.margin)) }
                            @if c.pass { td.pass { "pass" } } @else { td.fail { "FAIL" } }
                        }
                    }
                }
            }
        }
    }
}

fn figure(p: &Plot) -> Markup {
    html! {
        figure id=(format!("plot-{}", p.id)) {
            // The SVG comes from our own plot and schematic code, whose writers escape
            // every label.
            (PreEscaped(&p.svg))
            figcaption { (p.title) ". " (p.caption) }
        }
    }
}

/// Renders the page as a complete HTML document.
pub fn render(page: &Page) -> String {
    let meta = page
        .assumptions
        .iter()
        .filter(|(k, _)| k == "date" || k == "tool")
        .map(|(k, v)| format!("{k}: {v}"))
        .collect::<Vec<_>>()
        .join(" · ");
    let plot = |id: &str| page.plots.iter().find(|p| p.id == id);
    let curves: Vec<&Plot> = page
        .plots
        .iter()
        .filter(|p| p.id != "budget" && p.id != "schematic")
        .collect();
    let doc = html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                meta name="viewport" content="width=device-width, initial-scale=1";
                title { "Mirror design record: " (page.title) }
                style { (PreEscaped(CSS)) }
            }
            body {
                main {
                    header {
                        p.kicker { "Current-mirror design record" }
                        h1 { (page.title) }
                        p.meta { (meta) }
                    }
                    p.verdict.fail[!page.feasible] id="verdict" { (page.verdict) }

                    section id="requirement" {
                        h2 { "1 Requirement" }
                        (kv(&page.requirement, "requirement-table"))
                    }

                    section id="decision" {
                        h2 { "2 Chosen design" }
                        @match &page.chosen {
                            Some(d) => {
                                (design(d, "chosen"))
                                @if let Some(p) = plot("schematic") {
                                    h3 { "Schematic and parts" }
                                    (figure(p))
                                }
                                @if !page.parts.rows.is_empty() {
                                    (table(&page.parts, "parts"))
                                }
                            }
                            None => p { "No design meets every requirement; see section 4 for the nearest miss." }
                        }
                    }

                    section id="runners-up" {
                        h2 { "3 Runners-up" }
                        @if page.runners_up.is_empty() {
                            p { "No other design passes every check." }
                        } @else {
                            (table(&page.runners_up_table(), "runners-up"))
                        }
                    }

                    section id="rejected" {
                        h2 { "4 What was rejected and why" }
                        p { (page.counts) }
                        @if !page.rejected_by.is_empty() {
                            (table(&page.rejected_by_table(), "rejected-by"))
                        }
                        @if let Some(r) = &page.best_rejected {
                            @if page.feasible {
                                h3 { "Nearest miss: a cheaper design that fails" }
                            } @else {
                                h3 { "Nearest miss" }
                            }
                            p id="nearest-miss" { (r.headline) "." }
                            (design(&r.design, "best-rejected"))
                        }
                        @if !page.relax.is_empty() {
                            h3 { "What to relax" }
                            p { "One requirement field at a time; each value found by the solver for the nearest candidates." }
                            ul id="relax" {
                                @for r in &page.relax { li { (r) } }
                            }
                        }
                    }

                    section id="budget" {
                        h2 { "5 Error budget" }
                        @if page.chosen.is_none() {
                            p { "No design was chosen, so there is no budget to show." }
                        }
                        @if let Some(p) = plot("budget") { (figure(p)) }
                        @if !page.budget_table.rows.is_empty() {
                            (table(&page.budget_table, "budget"))
                        }
                    }

                    section id="curves" {
                        h2 { "6 Curves" }
                        @if page.chosen.is_none() {
                            p { "No design was chosen, so there are no curves to show." }
                        }
                        @for p in &curves { (figure(p)) }
                    }

                    section id="corners" {
                        h2 { "7 Corners" }
                        @if page.corners.rows.is_empty() {
                            p { "No corner data." }
                        } @else {
                            (table(&page.corners, "corners"))
                        }
                    }

                    section id="assumptions" {
                        h2 { "8 Assumptions" }
                        (kv(&page.assumptions, "assumptions-table"))
                    }

                    section id="cautions" {
                        h2 { "9 Cautions" }
                        ul.cautions {
                            @for c in &page.cautions { li { (c) } }
                        }
                    }
                    footer { "Written by mirrorpick from solved circuits. A record of a design decision, not a datasheet." }
                }
            }
        }
    };
    let mut s = doc.into_string();
    s.push('\n');
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::fixtures;

    #[test]
    fn page_is_well_formed_self_contained_and_escaped() {
        let html = render(&fixtures::page());
        let doc = scraper::Html::parse_document(&html);
        assert!(
            doc.errors.is_empty(),
            "HTML5 parse errors: {:?}",
            doc.errors
        );
        let count = |sel: &str| doc.select(&scraper::Selector::parse(sel).unwrap()).count();
        assert_eq!(count("svg"), 2, "budget and curves inline");
        assert_eq!(count("script"), 0);
        assert_eq!(count("link"), 0);
        assert_eq!(count("img"), 0);
        for section in [
            "requirement",
            "decision",
            "runners-up",
            "rejected",
            "budget",
            "curves",
            "corners",
            "assumptions",
            "cautions",
        ] {
            assert_eq!(count(&format!("section#{section}")), 1, "{section}");
        }
        // User text arrives as text, never as markup.
        assert!(html.contains("tail &lt;script&gt;alert(1)&lt;/script&gt; &amp; sink"));
        assert!(html.contains("npn-dual-test &lt;b&gt;bold&lt;/b&gt;"));
        assert!(html.contains("my &lt;catalog&gt;.yaml"));
        assert_eq!(count("i"), 0);
        // No external references: the only URLs are XML namespace names.
        for scheme in ["http://", "https://"] {
            for (k, _) in html.match_indices(scheme) {
                let url: String = html[k..].chars().take_while(|c| *c != '"').collect();
                assert_eq!(url, "http://www.w3.org/2000/svg", "external reference");
            }
        }
        // Raw figures are carried for programs that check the page against the JSON.
        let cell = doc
            .select(&scraper::Selector::parse("#chosen td[data-key=error_total]").unwrap())
            .next()
            .unwrap();
        assert_eq!(cell.value().attr("data-value"), Some("1.23e-2"));
    }

    #[test]
    fn the_nearest_miss_headline_and_parts_table_are_text() {
        let html = render(&fixtures::page());
        assert!(html.contains("cheap &lt;u&gt;x&lt;/u&gt; reaches 2.40 % total error"));
        assert!(html.contains("<table class=\"parts\">"));
        assert!(html.contains("npn-dual-test &lt;b&gt;"));
    }
}
