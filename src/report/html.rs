//! The decision page as one self-contained HTML document.
//!
//! Inline CSS and inline SVG only: no scripts, no external references, so the file can
//! be mailed, archived and opened offline years later. Every text that may come from a
//! user's file goes through [`escape`]. The look is a plain engineering document:
//! numbered sections, ruled tables, numbers right-aligned in tabular figures.

use std::fmt::Write as _;

use super::eng::percent;
use super::page::{DesignView, Page, Table};

/// Escapes text for HTML element content and quoted attribute values.
pub fn escape(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c => o.push(c),
        }
    }
    o
}

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

fn table(o: &mut String, t: &Table, class: &str) {
    let _ = write!(o, "<table class=\"{class}\"><thead><tr>");
    for h in &t.header {
        let _ = write!(o, "<th>{}</th>", escape(h));
    }
    o.push_str("</tr></thead><tbody>\n");
    for r in &t.rows {
        o.push_str("<tr>");
        for (k, c) in r.iter().enumerate() {
            let cls = if k > 0 && looks_numeric(c) {
                " class=\"num\""
            } else {
                ""
            };
            let _ = write!(o, "<td{cls}>{}</td>", escape(c));
        }
        o.push_str("</tr>\n");
    }
    o.push_str("</tbody></table>\n");
}

fn looks_numeric(s: &str) -> bool {
    s.trim_start_matches(['-', '+', '−'])
        .starts_with(|c: char| c.is_ascii_digit())
}

fn kv(o: &mut String, rows: &[(String, String)], id: &str) {
    let _ = writeln!(o, "<table class=\"kv\" id=\"{id}\"><tbody>");
    for (k, v) in rows {
        let _ = writeln!(o, "<tr><th>{}</th><td>{}</td></tr>", escape(k), escape(v));
    }
    o.push_str("</tbody></table>\n");
}

fn design(o: &mut String, d: &DesignView, id: &str) {
    let _ = writeln!(o, "<p><strong>{}</strong></p>", escape(&d.title));
    let _ = writeln!(o, "<table class=\"kv figures\" id=\"{id}\"><tbody>");
    for f in &d.figures {
        let raw = f
            .raw
            .map(|r| format!(" data-value=\"{r:e}\""))
            .unwrap_or_default();
        let key = if f.key.is_empty() {
            String::new()
        } else {
            format!(" data-key=\"{}\"", escape(&f.key))
        };
        let class = if f.raw.is_some() {
            " class=\"num\""
        } else {
            ""
        };
        let _ = writeln!(
            o,
            "<tr><th>{}</th><td{class}{key}{raw}>{}</td></tr>",
            escape(&f.label),
            escape(&f.text)
        );
    }
    o.push_str("</tbody></table>\n");
    if !d.checks.is_empty() {
        let _ = writeln!(
            o,
            "<h3>Checks (governing: {}, margin {})</h3>",
            escape(&d.governing_check),
            percent(d.governing_margin)
        );
        o.push_str("<table class=\"checks\"><thead><tr><th>check</th><th>value</th><th>limit</th><th>margin</th><th>verdict</th></tr></thead><tbody>\n");
        for c in &d.checks {
            let (cls, word) = if c.pass {
                ("pass", "pass")
            } else {
                ("fail", "FAIL")
            };
            let _ = writeln!(
                o,
                "<tr><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"{cls}\">{word}</td></tr>",
                escape(&c.name),
                escape(&c.value),
                escape(&c.limit),
                percent(c.margin)
            );
        }
        o.push_str("</tbody></table>\n");
    }
}

/// Renders the page as a complete HTML document.
pub fn render(page: &Page) -> String {
    let mut o = String::with_capacity(64 * 1024);
    let _ = write!(
        o,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>Mirror design record: {}</title>\n<style>{CSS}</style>\n</head>\n<body>\n<main>\n",
        escape(&page.title)
    );
    let meta = page
        .assumptions
        .iter()
        .filter(|(k, _)| k == "date" || k == "tool")
        .map(|(k, v)| format!("{k}: {v}"))
        .collect::<Vec<_>>()
        .join(" · ");
    let _ = write!(
        o,
        "<header>\n<p class=\"kicker\">Current-mirror design record</p>\n<h1>{}</h1>\n<p class=\"meta\">{}</p>\n</header>\n",
        escape(&page.title),
        escape(&meta)
    );
    let _ = writeln!(
        o,
        "<p class=\"verdict{}\" id=\"verdict\">{}</p>",
        if page.feasible { "" } else { " fail" },
        escape(&page.verdict)
    );

    o.push_str("<section id=\"requirement\">\n<h2>1 Requirement</h2>\n");
    kv(&mut o, &page.requirement, "requirement-table");
    o.push_str("</section>\n");

    o.push_str("<section id=\"decision\">\n<h2>2 Chosen design</h2>\n");
    match &page.chosen {
        Some(d) => design(&mut o, d, "chosen"),
        None => o.push_str(
            "<p>No design meets every requirement; see section 4 for the nearest miss.</p>\n",
        ),
    }
    o.push_str("</section>\n");

    o.push_str("<section id=\"runners-up\">\n<h2>3 Runners-up</h2>\n");
    if page.runners_up.is_empty() {
        o.push_str("<p>No other design passes every check.</p>\n");
    } else {
        table(&mut o, &page.runners_up_table(), "runners-up");
    }
    o.push_str("</section>\n");

    o.push_str("<section id=\"rejected\">\n<h2>4 What was rejected and why</h2>\n");
    let _ = writeln!(o, "<p>{}</p>", escape(&page.counts));
    if !page.rejected_by.is_empty() {
        table(&mut o, &page.rejected_by_table(), "rejected-by");
    }
    if let Some(r) = &page.best_rejected {
        let _ = writeln!(
            o,
            "<h3>Nearest miss: failed {} by {}</h3>",
            escape(&r.check),
            percent(-r.margin)
        );
        design(&mut o, &r.design, "best-rejected");
    }
    o.push_str("</section>\n");

    o.push_str("<section id=\"budget\">\n<h2>5 Error budget</h2>\n");
    if page.chosen.is_none() {
        o.push_str("<p>No design was chosen, so there is no budget to show.</p>\n");
    }
    let mut plots = page.plots.iter();
    if let Some(p) = plots.by_ref().find(|p| p.id == "budget") {
        figure(&mut o, p);
    }
    if !page.budget_table.rows.is_empty() {
        table(&mut o, &page.budget_table, "budget");
    }
    o.push_str("</section>\n");

    o.push_str("<section id=\"curves\">\n<h2>6 Curves</h2>\n");
    if page.chosen.is_none() {
        o.push_str("<p>No design was chosen, so there are no curves to show.</p>\n");
    }
    for p in page.plots.iter().filter(|p| p.id != "budget") {
        figure(&mut o, p);
    }
    o.push_str("</section>\n");

    o.push_str("<section id=\"corners\">\n<h2>7 Corners</h2>\n");
    if page.corners.rows.is_empty() {
        o.push_str("<p>No corner data.</p>\n");
    } else {
        table(&mut o, &page.corners, "corners");
    }
    o.push_str("</section>\n");

    o.push_str("<section id=\"assumptions\">\n<h2>8 Assumptions</h2>\n");
    kv(&mut o, &page.assumptions, "assumptions-table");
    o.push_str("</section>\n");

    o.push_str("<section id=\"cautions\">\n<h2>9 Cautions</h2>\n<ul class=\"cautions\">\n");
    for c in &page.cautions {
        let _ = writeln!(o, "<li>{}</li>", escape(c));
    }
    o.push_str("</ul>\n</section>\n");
    o.push_str("<footer>Written by mirrorpick from solved circuits. A record of a design decision, not a datasheet.</footer>\n");
    o.push_str("</main>\n</body>\n</html>\n");
    o
}

fn figure(o: &mut String, p: &super::page::Plot) {
    let _ = writeln!(o, "<figure id=\"plot-{}\">", escape(&p.id));
    // The SVG comes from our own plot code, whose backend escapes every label.
    o.push_str(&p.svg);
    let _ = writeln!(
        o,
        "<figcaption>{}. {}</figcaption>\n</figure>",
        escape(&p.title),
        escape(&p.caption)
    );
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
    fn escape_covers_the_metacharacters() {
        assert_eq!(
            escape(r#"<a href="x">&'"#),
            "&lt;a href=&quot;x&quot;&gt;&amp;&#39;"
        );
    }
}
