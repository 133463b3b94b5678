//! The decision page and the schematic rendered in a real browser (headless Chromium
//! from the OS packages: `apt-get install chromium`), checked as a reader sees them: no
//! console or load errors, every figure inside the page, legends clear of the plotted
//! data, SVG text at least 12 px at the page's width, every part of the schematic drawn
//! with its designator and value. Skipped with a message when no browser is installed;
//! `.ci/run` installs one. Screenshots are left in `target/browser-check/` for people.

use std::path::{Path, PathBuf};
use std::process::Command as Process;

use assert_cmd::Command;

/// The installed Chromium, if any.
fn chromium() -> Option<PathBuf> {
    ["chromium", "chromium-browser"].iter().find_map(|name| {
        let out = Process::new("sh")
            .args(["-c", &format!("command -v {name}")])
            .output()
            .ok()?;
        let p = String::from_utf8(out.stdout).ok()?.trim().to_string();
        (!p.is_empty()).then(|| PathBuf::from(p))
    })
}

/// Runs the browser on `url` with a fresh profile; returns (stdout, stderr).
fn browse(bin: &Path, extra: &[&str], url: &str) -> (String, String) {
    let profile = tempfile::tempdir().unwrap();
    let out = Process::new(bin)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-first-run",
            "--hide-scrollbars",
            "--enable-logging=stderr",
            "--v=0",
            "--window-size=1000,1400",
            "--virtual-time-budget=5000",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .args(extra)
        .arg(url)
        .output()
        .expect("browser runs");
    (
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// Collects load errors before the page's own content, so none is missed.
const HEAD_PROBE: &str = r#"<script>
window.__errors = [];
window.addEventListener('error', e => window.__errors.push(String(e.message || (e.target && (e.target.src || e.target.href)) || 'error')), true);
const __ce = console.error; console.error = (...a) => { window.__errors.push(a.join(' ')); __ce(...a); };
</script>"#;

/// Measures the rendered page and writes the findings into `<pre id="probe">`.
const BODY_PROBE: &str = r#"<script>
(function () {
  const problems = [];
  const docW = document.documentElement.clientWidth;
  const main = document.querySelector('main').getBoundingClientRect();
  const hit = (a, b) => a.left < b.right - 1 && b.left < a.right - 1 && a.top < b.bottom - 1 && b.top < a.bottom - 1;
  let figures = 0, legends = 0, texts = 0, parts = 0, minText = 1e9;
  for (const svg of document.querySelectorAll('figure svg')) {
    figures++;
    const id = svg.closest('figure').id;
    const r = svg.getBoundingClientRect();
    if (r.left < main.left - 0.5 || r.right > main.right + 0.5 || r.left < 0 || r.right > docW)
      problems.push(id + ': figure outside the page ' + JSON.stringify([r.left, r.right, main.left, main.right]));
    const vb = svg.viewBox && svg.viewBox.baseVal && svg.viewBox.baseVal.width ? svg.viewBox.baseVal.width : parseFloat(svg.getAttribute('width'));
    const scale = r.width / vb;
    for (const t of svg.querySelectorAll('text')) {
      if (!t.textContent.trim()) continue;
      texts++;
      const px = parseFloat(getComputedStyle(t).fontSize) * scale;
      minText = Math.min(minText, px);
      if (px < 11.95) problems.push(id + ': text "' + t.textContent.trim() + '" at ' + px.toFixed(2) + ' px');
      const tb = t.getBoundingClientRect();
      if (tb.left < r.left - 1 || tb.right > r.right + 1 || tb.top < r.top - 1 || tb.bottom > r.bottom + 1)
        problems.push(id + ': text "' + t.textContent.trim() + '" outside its figure');
    }
    for (const g of svg.querySelectorAll('g.legend')) {
      legends++;
      const lb = g.getBoundingClientRect();
      for (const p of svg.querySelectorAll('polyline, path, line, rect, circle, polygon')) {
        if (p.closest('g.legend')) continue;
        const pb = p.getBoundingClientRect();
        if (pb.width >= 0.95 * r.width && pb.height >= 0.5 * r.height) continue; // background
        if (hit(lb, pb)) problems.push(id + ': legend overlaps a plotted ' + p.tagName);
      }
    }
    for (const g of svg.querySelectorAll('g.part')) {
      parts++;
      const b = g.getBoundingClientRect();
      if (b.left < r.left - 1 || b.right > r.right + 1 || b.top < r.top - 1 || b.bottom > r.bottom + 1)
        problems.push(id + ': part ' + g.dataset.designator + ' outside the drawing');
      const words = [...g.querySelectorAll('text')].map(t => t.textContent.trim());
      if (words[0] !== g.dataset.designator || words[1] !== g.dataset.value)
        problems.push(id + ': part ' + g.dataset.designator + ' labelled ' + JSON.stringify(words));
    }
  }
  const pre = document.createElement('pre');
  pre.id = 'probe';
  pre.textContent = JSON.stringify({ errors: window.__errors, problems, figures, legends, texts, parts, minText });
  document.body.appendChild(pre);
})();
</script>"#;

/// The probe's findings from a dumped DOM.
fn findings(dom: &str) -> serde_json::Value {
    let doc = scraper::Html::parse_document(dom);
    let sel = scraper::Selector::parse("pre#probe").unwrap();
    let text: String = doc
        .select(&sel)
        .next()
        .unwrap_or_else(|| panic!("no probe output in the dumped page:\n{dom}"))
        .text()
        .collect();
    serde_json::from_str(&text).unwrap()
}

/// Console messages the browser logged at error level about the page.
fn console_errors(stderr: &str) -> Vec<&str> {
    stderr
        .lines()
        .filter(|l| l.contains("CONSOLE") && (l.contains("ERROR") || l.contains("Uncaught")))
        .collect()
}

fn check_report(bin: &Path, requirement: &str, name: &str, shots: &Path) -> serde_json::Value {
    let dir = tempfile::tempdir().unwrap();
    let html = dir.path().join(format!("{name}.html"));
    let svg = dir.path().join(format!("{name}-schematic.svg"));
    let out = Command::cargo_bin("mirrorpick")
        .unwrap()
        .current_dir(env!("CARGO_MANIFEST_DIR"))
        .args(["report", requirement, "--out"])
        .arg(&html)
        .arg("--schematic")
        .arg(&svg)
        .output()
        .unwrap();
    assert!(
        out.status.code().unwrap() <= 1,
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let page = std::fs::read_to_string(&html).unwrap();

    // Screenshots for people: the page and the schematic file as the browser draws them.
    for (file, png) in [
        (&html, format!("{name}.png")),
        (&svg, format!("{name}-schematic.png")),
    ] {
        let (_, err) = browse(
            bin,
            &[&format!("--screenshot={}", shots.join(png).display())],
            &format!("file://{}", file.display()),
        );
        assert!(console_errors(&err).is_empty(), "{err}");
    }

    // The page with the probe, measured after layout.
    let probed = page
        .replacen("<head>", &format!("<head>{HEAD_PROBE}"), 1)
        .replacen("</body>", &format!("{BODY_PROBE}</body>"), 1);
    let probe = dir.path().join("probe.html");
    std::fs::write(&probe, probed).unwrap();
    let (dom, err) = browse(bin, &["--dump-dom"], &format!("file://{}", probe.display()));
    assert!(console_errors(&err).is_empty(), "{err}");
    let f = findings(&dom);
    assert_eq!(f["errors"], serde_json::json!([]), "{name}: page errors");
    assert_eq!(
        f["problems"],
        serde_json::json!([]),
        "{name}: layout problems"
    );

    // The standalone schematic parses as SVG (XML) and draws every part once.
    let text = std::fs::read_to_string(&svg).unwrap();
    let wrapper = format!(
        "<!DOCTYPE html><html><head>{HEAD_PROBE}</head><body><main><figure id=\"plot-file\"></figure></main>\
         <script>const x = new DOMParser().parseFromString({}, 'image/svg+xml');\
         if (x.querySelector('parsererror')) window.__errors.push('schematic file is not well-formed SVG');\
         document.getElementById('plot-file').appendChild(document.importNode(x.documentElement, true));</script>\
         {BODY_PROBE}</body></html>",
        serde_json::to_string(&text).unwrap()
    );
    let probe = dir.path().join("probe-svg.html");
    std::fs::write(&probe, wrapper).unwrap();
    let (dom, err) = browse(bin, &["--dump-dom"], &format!("file://{}", probe.display()));
    assert!(console_errors(&err).is_empty(), "{err}");
    let g = findings(&dom);
    assert_eq!(g["errors"], serde_json::json!([]), "{name}: schematic file");
    assert_eq!(
        g["problems"],
        serde_json::json!([]),
        "{name}: schematic file"
    );
    assert_eq!(g["parts"], f["parts"], "the file draws the page's parts");
    f
}

#[test]
fn report_and_schematic_render_cleanly_in_a_browser() {
    let Some(bin) = chromium() else {
        eprintln!(
            "skipped: no Chromium installed (apt-get install chromium); the browser checks of the report did not run"
        );
        return;
    };
    let shots = Path::new(env!("CARGO_MANIFEST_DIR")).join("target/browser-check");
    std::fs::create_dir_all(&shots).unwrap();
    for (req, name) in [
        ("requirements-examples/ltp-tail-sink.yaml", "tail-sink"),
        (
            "requirements-examples/sensor-excitation-source.yaml",
            "excitation-source",
        ),
        ("requirements-examples/led-string-sinks.yaml", "led-sinks"),
        // Three decades of input current: a log axis and the error-against-input plot.
        (
            "requirements-examples/expo-converter-sink.yaml",
            "expo-sink",
        ),
    ] {
        let f = check_report(&bin, req, name, &shots);
        assert!(f["figures"].as_u64().unwrap() >= 3, "{name}: {f}");
        assert!(f["legends"].as_u64().unwrap() >= 3, "{name}: {f}");
        assert!(f["parts"].as_u64().unwrap() >= 2, "{name}: {f}");
        assert!(f["minText"].as_f64().unwrap() >= 11.95, "{name}: {f}");
    }
}
