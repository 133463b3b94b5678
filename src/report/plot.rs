//! SVG plots drawn with plotters' SVG backend: the curve family, the error against the
//! programming current, and the error budget bar chart.
//!
//! Each function takes finished data and returns one standalone `<svg>` element as text,
//! ready to inline in a page or to write beside a Markdown file. Every label that may
//! carry user text is escaped by the backend. Drawing errors (which plotters reports for
//! impossible geometry) come back as `PlotError`, never a panic.

use plotters::coord::ranged1d::SegmentValue;
use plotters::coord::ranged1d::SegmentedCoord;
use plotters::coord::types::{RangedCoordf64, RangedCoordusize};
use plotters::prelude::*;

use super::eng::{celsius, eng, Charset};
use crate::curves::CurveSet;

/// A plot could not be drawn.
#[derive(Debug, thiserror::Error)]
#[error("cannot draw the {what} plot: {reason}")]
pub struct PlotError {
    pub what: &'static str,
    pub reason: String,
}

/// Narrower than the page's text column (54em of 15 px less padding, 750 px), so the
/// page never scales a plot down and 13 px text stays at least 12 px on the page.
const WIDTH: u32 = 720;
const FONT: &str = "sans-serif";
/// Legend text, px (written by our own markup).
const TEXT: u32 = 13;
/// Tick labels and axis names as requested from plotters, whose SVG backend writes
/// `font-size` as the requested size / 1.24: 17 comes out as 13.7 px.
const TICK: u32 = 17;
/// Left edge of the plotting areas (margin plus the y label area), where legends start.
const PLOT_LEFT: i32 = 12 + 64;

/// A plain palette that stays apart in print and for the common colour deficiencies.
const PALETTE: [RGBColor; 7] = [
    RGBColor(0, 90, 160),
    RGBColor(200, 100, 0),
    RGBColor(0, 130, 90),
    RGBColor(150, 50, 150),
    RGBColor(120, 80, 40),
    RGBColor(90, 90, 90),
    RGBColor(190, 40, 60),
];
const WINDOW_FILL: RGBColor = RGBColor(225, 235, 245);
const BAND_FILL: RGBColor = RGBColor(215, 240, 215);
const BALANCE: RGBColor = RGBColor(160, 0, 0);

/// How a legend entry shows its series.
#[derive(Debug, Clone, Copy)]
enum Swatch {
    Line(RGBColor, u32),
    Dashed(RGBColor),
    Fill(RGBColor),
}

/// The house legend: a strip below the plot, outside the plotting area, so it never
/// covers data; entries flow left to right and wrap.
struct Legend {
    entries: Vec<(Swatch, String)>,
}

const LEGEND_ROW: i32 = 20;
/// Height of one chart (without its legend strip), px.
const CHART_H: u32 = 360;

impl Legend {
    fn new() -> Self {
        Legend { entries: vec![] }
    }

    fn add(&mut self, swatch: Swatch, label: impl Into<String>) {
        self.entries.push((swatch, label.into()));
    }

    /// Rough text width: sans-serif averages well under 0.6 em per character.
    fn entry_width(label: &str) -> i32 {
        28 + (label.chars().count() as f64 * f64::from(TEXT) * 0.58) as i32 + 22
    }

    /// Entry positions (x, row) within `width`.
    fn layout(&self, width: i32) -> Vec<(i32, i32)> {
        let (mut x, mut row) = (PLOT_LEFT, 0);
        let mut out = vec![];
        for (_, label) in &self.entries {
            let w = Self::entry_width(label);
            if x > PLOT_LEFT && x + w > width - 8 {
                x = PLOT_LEFT;
                row += 1;
            }
            out.push((x, row));
            x += w;
        }
        out
    }

    /// Height the strip needs (0 when empty).
    fn height(&self) -> u32 {
        if self.entries.is_empty() {
            return 0;
        }
        let rows = self.layout(WIDTH as i32).last().map_or(0, |p| p.1) + 1;
        (rows * LEGEND_ROW + 10) as u32
    }

    /// The legend as SVG markup placed at `y0` (its strip's top), in a `g.legend` group
    /// that page checks can find. maud escapes every label.
    fn markup(&self, y0: u32) -> String {
        let swatch = |sw: &Swatch, x: i32, y: i32| -> maud::Markup {
            let hex = |c: &RGBColor| format!("#{:02x}{:02x}{:02x}", c.0, c.1, c.2);
            match sw {
                Swatch::Line(c, w) => maud::html! {
                    line x1=(x) y1=(y) x2=(x + 20) y2=(y) stroke=(hex(c)) stroke-width=(w) {}
                },
                Swatch::Dashed(c) => maud::html! {
                    line x1=(x) y1=(y) x2=(x + 20) y2=(y) stroke=(hex(c)) stroke-width="1" stroke-dasharray="5 3" {}
                },
                Swatch::Fill(c) => maud::html! {
                    rect x=(x) y=(y - 6) width="20" height="12" fill=(hex(c)) stroke="#999" stroke-width="0.5" {}
                },
            }
        };
        let items = self.entries.iter().zip(self.layout(WIDTH as i32));
        maud::html! {
            g class="legend" transform=(format!("translate(0,{y0})")) {
                @for ((sw, label), (x, row)) in items {
                    @let y = 4 + row * LEGEND_ROW + LEGEND_ROW / 2;
                    (swatch(sw, x, y))
                    text x=(x + 28) y=(y) dominant-baseline="central" font-family=(FONT) font-size=(TEXT) fill="#000" { (label) }
                }
            }
        }
        .into_string()
    }
}

/// Inserts legend markup just before the closing tag of a plotters SVG.
fn with_legends(mut svg: String, legends: &[String]) -> String {
    if let Some(k) = svg.rfind("</svg>") {
        svg.insert_str(k, &legends.concat());
    }
    svg
}

/// The half-range of an error axis: fitted to the data (with headroom), and widened to
/// show the accuracy band when the band is within three times the data's extent;
/// otherwise the legend says the band lies beyond the scale.
fn error_axis(worst: f64, accuracy: f64) -> (f64, bool) {
    let data = (worst * 1.25).max(1e-5);
    if accuracy <= 3.0 * data {
        (data.max(accuracy * 1.15).min(1.0), true)
    } else {
        (data.min(1.0), false)
    }
}

/// A tick of a symmetric percent axis of half-range `half`: enough decimals to tell
/// the ticks apart, and no "-0.0".
fn percent_tick(v: f64, half: f64) -> String {
    let digits = (1.0 - (half / 5.0).log10().floor()).clamp(0.0, 6.0) as usize;
    let s = format!("{v:.digits$}");
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        s.trim_start_matches('-').to_string()
    } else {
        s
    }
}

fn band_label(accuracy: f64, shown: bool) -> String {
    if shown {
        format!("accuracy ±{}", super::eng::percent(accuracy))
    } else {
        format!(
            "accuracy ±{} (beyond this scale: the error is far inside it)",
            super::eng::percent(accuracy)
        )
    }
}

fn err<E: std::fmt::Debug>(what: &'static str) -> impl Fn(E) -> PlotError {
    move |e| PlotError {
        what,
        reason: format!("{e:?}"),
    }
}

/// The axes of a horizontal bar chart (the error budget, the noise breakdown): one
/// named slot per bar, grid lines along the value axis only.
fn bar_axes<'a, 'b>(
    chart: &mut ChartContext<
        'a,
        SVGBackend<'b>,
        Cartesian2d<RangedCoordf64, SegmentedCoord<RangedCoordusize>>,
    >,
    x_desc: &str,
    names: &[String],
) -> Result<(), DrawingAreaErrorKind<<SVGBackend<'b> as DrawingBackend>::ErrorType>> {
    chart
        .configure_mesh()
        .disable_y_mesh()
        .x_desc(x_desc)
        .y_labels(names.len().max(1))
        .y_label_formatter(&|v| match v {
            SegmentValue::CenterOf(i) => names.get(*i).cloned().unwrap_or_default(),
            _ => String::new(),
        })
        .label_style((FONT, TICK))
        .axis_desc_style((FONT, TICK))
        .light_line_style(RGBColor(235, 235, 235))
        .draw()
}

/// Splits a polyline at gaps and at points outside `[lo, hi]`, so nothing is drawn
/// outside the plotting area and no line bridges a point the solver could not solve.
fn runs(xs: &[f64], ys: &[Option<f64>], lo: f64, hi: f64) -> Vec<Vec<(f64, f64)>> {
    let mut out = vec![];
    let mut cur = vec![];
    for (x, y) in xs.iter().zip(ys) {
        match y {
            Some(y) if y.is_finite() && *y >= lo && *y <= hi => cur.push((*x, *y)),
            _ => {
                if cur.len() > 1 {
                    out.push(std::mem::take(&mut cur));
                }
                cur.clear();
            }
        }
    }
    if cur.len() > 1 {
        out.push(cur);
    }
    out
}

/// Picks a display scale for currents: the SI prefix of `max`, as (factor, label).
fn current_scale(max: f64) -> (f64, &'static str) {
    match max {
        m if m >= 1.0 => (1.0, "A"),
        m if m >= 1e-3 => (1e3, "mA"),
        m if m >= 1e-6 => (1e6, "µA"),
        _ => (1e9, "nA"),
    }
}

fn curve_label(i_in_a: f64, t_amb_k: f64, several_temps: bool) -> String {
    let i = eng(i_in_a, "A", Charset::Unicode);
    if several_temps {
        format!("I_in {i}, {}", celsius(t_amb_k, Charset::Unicode))
    } else {
        format!("I_in {i}")
    }
}

/// The curve family: I_out against V_out (top) and the error against V_out (bottom),
/// with the output window and the accuracy band shaded and the balance voltage marked.
/// `title`, when given, heads the plot (a standalone file has no caption around it).
pub fn output_curves_svg(set: &CurveSet, title: Option<&str>) -> Result<String, PlotError> {
    let what = "output-curve";
    let e = err(what);
    let temps: Vec<f64> = {
        let mut t: Vec<f64> = set.output.iter().map(|c| c.t_amb_k).collect();
        t.dedup();
        t
    };
    let several = temps.len() > 1;
    let currents: Vec<f64> = {
        let mut c: Vec<f64> = set.output.iter().map(|c| c.i_in_a).collect();
        c.sort_by(f64::total_cmp);
        c.dedup();
        c
    };
    let color_of = |i_in: f64| {
        let k = currents.iter().position(|c| *c == i_in).unwrap_or(0);
        PALETTE[k % PALETTE.len()]
    };
    let width_of = |t: f64| {
        if !several || (t - crate::curves::ROOM_K).abs() < 1e-9 {
            2
        } else {
            1
        }
    };
    let vmax = set.supply_v;
    let w = set.v_out_window_v;
    let in_window = |v: f64| v >= w.min && v <= w.max;

    // Legends first: their strips take room below each chart.
    let mut top_legend = Legend::new();
    top_legend.add(Swatch::Fill(WINDOW_FILL), "required V_out window");
    // A programmed design is drawn here with its input current forced at the wanted
    // output over n; the rail family shows the current R_ref actually sets.
    top_legend.add(
        Swatch::Fill(BAND_FILL),
        if set.output_wanted_a.is_some() {
            "required accuracy around n·I_in (I_in forced; the rail plot has R_ref)"
        } else {
            "required accuracy around n·I_in"
        },
    );
    for &i in &currents {
        top_legend.add(
            Swatch::Line(color_of(i), 2),
            curve_label(i, crate::curves::ROOM_K, false),
        );
    }
    if several {
        top_legend.add(
            Swatch::Line(BLACK, 1),
            format!(
                "thick: 25 °C; thin: {} and {}",
                celsius(temps[0], Charset::Unicode),
                celsius(temps[temps.len() - 1], Charset::Unicode)
            ),
        );
    }
    let worst = set
        .output
        .iter()
        .flat_map(|c| {
            c.v_out_v
                .iter()
                .zip(c.errors(set.ratio))
                .filter(|(v, _)| in_window(**v))
                .filter_map(|(_, e)| e.map(f64::abs))
                .collect::<Vec<_>>()
        })
        .fold(0.0, f64::max);
    let (lim, band_shown) = error_axis(worst, set.accuracy);
    let balance = set.balance_voltage_v.filter(|v| *v >= 0.0 && *v <= vmax);
    let mut bottom_legend = Legend::new();
    bottom_legend.add(
        Swatch::Fill(BAND_FILL),
        band_label(set.accuracy, band_shown),
    );
    if let Some(vb) = balance {
        bottom_legend.add(
            Swatch::Dashed(BALANCE),
            format!("balance voltage {}", eng(vb, "V", Charset::Unicode)),
        );
    }

    let mut svg = String::new();
    let legends;
    {
        let head = if title.is_some() { 36 } else { 0 };
        let top_h = CHART_H + top_legend.height();
        let height = head + top_h + CHART_H + bottom_legend.height();
        let root = SVGBackend::with_string(&mut svg, (WIDTH, height)).into_drawing_area();
        root.fill(&WHITE).map_err(&e)?;
        let body = match title {
            Some(t) => root.titled(t, (FONT, 16)).map_err(&e)?,
            None => root.clone(),
        };
        let (top, bottom) = body.split_vertically(top_h);
        let (top_chart, _) = top.split_vertically(CHART_H);
        let (bottom_chart, _) = bottom.split_vertically(CHART_H);

        // Top: I_out against V_out. A family spanning more than a decade is drawn on a
        // logarithmic current axis (plotted as log10 of the current, labelled in amperes),
        // so the lowest curve is not flattened against zero. A linear axis spans what
        // matters (the bands and the curves inside the window), not 0 to the top: a
        // single current would otherwise sit in a thin line above an empty plot.
        let log_axis = currents.len() > 1 && currents[currents.len() - 1] / currents[0] > 10.0;
        let targets_hi = currents
            .iter()
            .map(|i| i * set.ratio * (1.0 + set.accuracy))
            .fold(0.0f64, f64::max);
        let targets_lo = currents
            .iter()
            .map(|i| i * set.ratio * (1.0 - set.accuracy))
            .fold(f64::INFINITY, f64::min);
        let in_window_currents: Vec<f64> = set
            .output
            .iter()
            .flat_map(|c| {
                c.v_out_v
                    .iter()
                    .zip(&c.i_out_a)
                    .filter(|(v, _)| in_window(**v))
                    .filter_map(|(_, i)| *i)
                    .collect::<Vec<_>>()
            })
            .collect();
        let data_hi = in_window_currents
            .iter()
            .copied()
            .fold(targets_hi, f64::max);
        let data_lo = in_window_currents
            .iter()
            .copied()
            .fold(targets_lo, f64::min);
        let i_top = if data_hi > 0.0 { data_hi } else { 1e-3 };
        let (scale, unit) = current_scale(i_top);
        let ymap = |i: f64| -> Option<f64> {
            if log_axis {
                (i > 0.0).then(|| i.log10())
            } else {
                Some(i * scale)
            }
        };
        let (y_lo, y_hi) = if log_axis {
            let lo = currents[0] * set.ratio * (1.0 - set.accuracy);
            ((lo.log10() - 0.5).floor(), (i_top.log10() + 0.1).ceil())
        } else {
            let lo = if data_lo.is_finite() { data_lo } else { 0.0 };
            let pad = ((i_top - lo) * 0.15).max(i_top * 1e-3);
            (((lo - pad).max(0.0)) * scale, (i_top + pad) * scale)
        };
        let span = y_hi - y_lo;
        let digits = if log_axis || span <= 0.0 {
            1
        } else {
            (2.0 - span.log10().floor()).clamp(1.0, 6.0) as usize
        };
        let y_label = |v: &f64| {
            if log_axis {
                eng(10f64.powf(*v), "A", Charset::Unicode)
            } else {
                format!("{v:.digits$}")
            }
        };
        let y_desc = if log_axis {
            "I_out (log scale)".to_string()
        } else {
            format!("I_out ({unit})")
        };
        let mut chart = ChartBuilder::on(&top_chart)
            .caption("Output current against output voltage", (FONT, 18))
            .margin(12)
            // Room for the last x tick label, centred on the plot's right edge.
            .margin_right(30)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(0.0..vmax, y_lo..y_hi)
            .map_err(&e)?;
        let decades = (y_hi - y_lo).round() as usize + 1;
        chart
            .configure_mesh()
            .x_desc("V_out from the mirror rail (V)")
            .y_desc(y_desc)
            .y_labels(if log_axis { decades } else { 8 })
            .y_label_formatter(&y_label)
            .label_style((FONT, TICK))
            .axis_desc_style((FONT, TICK))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(&e)?;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(w.min, y_lo), (w.max, y_hi)],
                WINDOW_FILL.mix(0.6).filled(),
            )))
            .map_err(&e)?;
        // The accuracy band around each intended current n * I_in.
        for &i in &currents {
            let target = i * set.ratio;
            if let (Some(lo), Some(hi)) = (
                ymap(target * (1.0 - set.accuracy)),
                ymap(target * (1.0 + set.accuracy)),
            ) {
                chart
                    .draw_series(std::iter::once(Rectangle::new(
                        [(0.0, lo.max(y_lo)), (vmax, hi.min(y_hi))],
                        BAND_FILL.mix(0.7).filled(),
                    )))
                    .map_err(&e)?;
            }
        }
        for c in &set.output {
            let ys: Vec<Option<f64>> = c.i_out_a.iter().map(|i| i.and_then(ymap)).collect();
            let style = ShapeStyle::from(color_of(c.i_in_a)).stroke_width(width_of(c.t_amb_k));
            for run in runs(&c.v_out_v, &ys, y_lo, y_hi) {
                chart.draw_series(LineSeries::new(run, style)).map_err(&e)?;
            }
        }

        // Bottom: error against V_out, scaled to the errors inside the output window
        // (saturation near 0 V would flatten the rest), the accuracy band when in range.
        let mut chart = ChartBuilder::on(&bottom_chart)
            .caption("Error against output voltage", (FONT, 18))
            .margin(12)
            // Room for the last x tick label, centred on the plot's right edge.
            .margin_right(30)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(0.0..vmax, -lim * 100.0..lim * 100.0)
            .map_err(&e)?;
        chart
            .configure_mesh()
            .x_desc("V_out from the mirror rail (V)")
            .y_desc("error I_out/(n·I_in) − 1 (%)")
            .y_label_formatter(&|v| percent_tick(*v, lim * 100.0))
            .label_style((FONT, TICK))
            .axis_desc_style((FONT, TICK))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(&e)?;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(w.min, -lim * 100.0), (w.max, lim * 100.0)],
                WINDOW_FILL.mix(0.6).filled(),
            )))
            .map_err(&e)?;
        if band_shown {
            let a = (set.accuracy * 100.0).min(lim * 100.0);
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(0.0, -a), (vmax, a)],
                    BAND_FILL.mix(0.7).filled(),
                )))
                .map_err(&e)?;
        }
        for c in &set.output {
            let ys: Vec<Option<f64>> = c
                .errors(set.ratio)
                .into_iter()
                .map(|x| x.map(|x| x * 100.0))
                .collect();
            let style = ShapeStyle::from(color_of(c.i_in_a)).stroke_width(width_of(c.t_amb_k));
            for run in runs(&c.v_out_v, &ys, -lim * 100.0, lim * 100.0) {
                chart.draw_series(LineSeries::new(run, style)).map_err(&e)?;
            }
        }
        if let Some(vb) = balance {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(vb, -lim * 100.0), (vb, lim * 100.0)],
                    6,
                    4,
                    ShapeStyle::from(BALANCE).stroke_width(1),
                ))
                .map_err(&e)?;
        }
        root.present().map_err(&e)?;
        legends = vec![
            top_legend.markup(head + CHART_H),
            bottom_legend.markup(head + top_h + CHART_H),
        ];
    }
    Ok(with_legends(svg, &legends))
}

/// The error against the programming current (log axis) at V_out min and max.
pub fn error_vs_input_svg(set: &CurveSet) -> Result<String, PlotError> {
    let what = "error-against-input";
    let e = err(what);
    let lo = set
        .error
        .iter()
        .flat_map(|c| c.i_in_a.iter().copied())
        .fold(f64::INFINITY, f64::min);
    let hi = set
        .error
        .iter()
        .flat_map(|c| c.i_in_a.iter().copied())
        .fold(0.0, f64::max);
    let (lo, hi) = if lo.is_finite() && hi > lo {
        (lo, hi)
    } else {
        (lo.min(1.0) / 2.0, lo.min(1.0) * 2.0)
    };
    let worst = set
        .error
        .iter()
        .flat_map(|c| c.error.iter().flatten().map(|x| x.abs()))
        .fold(0.0, f64::max);
    let (lim, band_shown) = error_axis(worst, set.accuracy);
    let lim = lim * 100.0;
    let several = {
        let mut t: Vec<f64> = set.error.iter().map(|c| c.t_amb_k).collect();
        t.dedup();
        t.len() > 1
    };
    let mut legend = Legend::new();
    legend.add(
        Swatch::Fill(BAND_FILL),
        band_label(set.accuracy, band_shown),
    );
    for (k, c) in set.error.iter().enumerate() {
        let label = if several {
            format!(
                "V_out {}, {}",
                eng(c.v_out_v, "V", Charset::Unicode),
                celsius(c.t_amb_k, Charset::Unicode)
            )
        } else {
            format!("V_out {}", eng(c.v_out_v, "V", Charset::Unicode))
        };
        legend.add(Swatch::Line(PALETTE[k % PALETTE.len()], 2), label);
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, CHART_H + legend.height()))
            .into_drawing_area();
        root.fill(&WHITE).map_err(&e)?;
        let (area, _) = root.split_vertically(CHART_H);
        let (scale, unit) = current_scale(hi);
        let mut chart = ChartBuilder::on(&area)
            .caption("Error against programming current", (FONT, 18))
            .margin(12)
            // Room for the last x tick label, centred on the plot's right edge.
            .margin_right(30)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d((lo * scale..hi * scale).log_scale(), -lim..lim)
            .map_err(&e)?;
        chart
            .configure_mesh()
            .x_desc(format!("I_in ({unit}, log scale)"))
            .y_desc("error (%)")
            .y_label_formatter(&|v| percent_tick(*v, lim))
            .label_style((FONT, TICK))
            .axis_desc_style((FONT, TICK))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(&e)?;
        if band_shown {
            let a = (set.accuracy * 100.0).min(lim);
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(lo * scale, -a), (hi * scale, a)],
                    BAND_FILL.mix(0.7).filled(),
                )))
                .map_err(&e)?;
        }
        for (k, c) in set.error.iter().enumerate() {
            let xs: Vec<f64> = c.i_in_a.iter().map(|i| i * scale).collect();
            let ys: Vec<Option<f64>> = c.error.iter().map(|x| x.map(|x| x * 100.0)).collect();
            let style = ShapeStyle::from(PALETTE[k % PALETTE.len()]).stroke_width(2);
            for run in runs(&xs, &ys, -lim, lim) {
                chart.draw_series(LineSeries::new(run, style)).map_err(&e)?;
            }
        }
        root.present().map_err(&e)?;
    }
    Ok(with_legends(svg, &[legend.markup(CHART_H)]))
}

/// A programmed design's output current against its program rail, at V_out min and
/// max: the rail's range shaded, the wanted current with its accuracy band. `None` when
/// the set has no rail family (a forced input current).
pub fn output_vs_rail_svg(set: &CurveSet) -> Result<Option<String>, PlotError> {
    let (Some(window), Some(wanted)) = (set.rail_window_v, set.output_wanted_a) else {
        return Ok(None);
    };
    if set.rail.is_empty() {
        return Ok(None);
    }
    let what = "output-against-rail";
    let e = err(what);
    let xs_all = || set.rail.iter().flat_map(|c| c.rail_v.iter().copied());
    let x_lo = xs_all().fold(f64::INFINITY, f64::min);
    let x_hi = xs_all().fold(f64::NEG_INFINITY, f64::max);
    let band = (wanted * (1.0 - set.accuracy), wanted * (1.0 + set.accuracy));
    let data = set
        .rail
        .iter()
        .flat_map(|c| c.i_out_a.iter().flatten().copied());
    let (d_lo, d_hi) = data.fold((band.0, band.1), |(a, b), i| (a.min(i), b.max(i)));
    let (scale, unit) = current_scale(d_hi);
    let pad = (d_hi - d_lo) * 0.08;
    let (y_lo, y_hi) = (((d_lo - pad).max(0.0)) * scale, (d_hi + pad) * scale);
    let several = {
        let mut t: Vec<f64> = set.rail.iter().map(|c| c.t_amb_k).collect();
        t.dedup();
        t.len() > 1
    };
    let mut legend = Legend::new();
    legend.add(Swatch::Fill(WINDOW_FILL), "program rail's range");
    legend.add(
        Swatch::Fill(BAND_FILL),
        format!(
            "wanted {} ±{}",
            eng(wanted, "A", Charset::Unicode),
            super::eng::percent(set.accuracy)
        ),
    );
    for (k, c) in set.rail.iter().enumerate() {
        let v = eng(c.v_out_v, "V", Charset::Unicode);
        let label = if several {
            format!("V_out {v}, {}", celsius(c.t_amb_k, Charset::Unicode))
        } else {
            format!("V_out {v}")
        };
        legend.add(Swatch::Line(PALETTE[k % PALETTE.len()], 2), label);
    }
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, CHART_H + legend.height()))
            .into_drawing_area();
        root.fill(&WHITE).map_err(&e)?;
        let (area, _) = root.split_vertically(CHART_H);
        let span = y_hi - y_lo;
        let digits = if span > 0.0 {
            (2.0 - span.log10().floor()).clamp(1.0, 6.0) as usize
        } else {
            1
        };
        let mut chart = ChartBuilder::on(&area)
            .caption("Output current against program rail", (FONT, 18))
            .margin(12)
            .margin_right(30)
            .x_label_area_size(44)
            .y_label_area_size(64)
            .build_cartesian_2d(x_lo..x_hi, y_lo..y_hi)
            .map_err(&e)?;
        chart
            .configure_mesh()
            .x_desc("program rail from the mirror rail (V)")
            .y_desc(format!("I_out ({unit})"))
            .y_label_formatter(&|v| format!("{v:.digits$}"))
            .label_style((FONT, TICK))
            .axis_desc_style((FONT, TICK))
            .light_line_style(RGBColor(235, 235, 235))
            .draw()
            .map_err(&e)?;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [(window.min, y_lo), (window.max, y_hi)],
                WINDOW_FILL.mix(0.6).filled(),
            )))
            .map_err(&e)?;
        chart
            .draw_series(std::iter::once(Rectangle::new(
                [
                    (x_lo, (band.0 * scale).max(y_lo)),
                    (x_hi, (band.1 * scale).min(y_hi)),
                ],
                BAND_FILL.mix(0.7).filled(),
            )))
            .map_err(&e)?;
        for (k, c) in set.rail.iter().enumerate() {
            let ys: Vec<Option<f64>> = c.i_out_a.iter().map(|i| i.map(|i| i * scale)).collect();
            let wide = !several || (c.t_amb_k - crate::curves::ROOM_K).abs() < 1e-9;
            let style =
                ShapeStyle::from(PALETTE[k % PALETTE.len()]).stroke_width(if wide { 2 } else { 1 });
            for run in runs(&c.rail_v, &ys, y_lo, y_hi) {
                chart.draw_series(LineSeries::new(run, style)).map_err(&e)?;
            }
        }
        root.present().map_err(&e)?;
    }
    Ok(Some(with_legends(svg, &[legend.markup(CHART_H)])))
}

/// One bar of the error budget.
#[derive(Debug, Clone, PartialEq)]
pub struct BudgetBar {
    pub cause: String,
    /// Contribution to the error, as a fraction (sign kept: systematic causes may offset).
    pub value: f64,
    /// Random (1 sigma) rather than systematic.
    pub random: bool,
}

/// The error budget as horizontal bars, one per cause, systematic and random apart,
/// with the requirement's accuracy drawn as a limit line.
pub fn error_budget_svg(bars: &[BudgetBar], accuracy: f64) -> Result<String, PlotError> {
    let what = "error-budget";
    let e = err(what);
    let mut svg = String::new();
    let n = bars.len().max(1);
    let sys = PALETTE[0];
    let rnd = PALETTE[1];
    let mut legend = Legend::new();
    legend.add(Swatch::Fill(sys), "systematic");
    legend.add(Swatch::Fill(rnd), "random, 1 sigma");
    legend.add(
        Swatch::Dashed(BALANCE),
        format!("required accuracy {}", super::eng::percent(accuracy)),
    );
    let chart_h = 110 + 40 * n as u32;
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, chart_h + legend.height()))
            .into_drawing_area();
        root.fill(&WHITE).map_err(&e)?;
        let (area, _) = root.split_vertically(chart_h);
        let most = bars.iter().map(|b| b.value.abs()).fold(accuracy, f64::max) * 100.0 * 1.15;
        let least = bars.iter().map(|b| b.value).fold(0.0, f64::min) * 100.0 * 1.15;
        let names: Vec<String> = bars.iter().map(|b| b.cause.clone()).collect();
        let mut chart = ChartBuilder::on(&area)
            .caption("Error budget by cause", (FONT, 18))
            .margin(12)
            // Room for the last x tick label, centred on the plot's right edge.
            .margin_right(30)
            .x_label_area_size(44)
            .y_label_area_size(180)
            // A segmented 0..k range has k + 1 slots; one slot needs 0..1 (one left blank).
            .build_cartesian_2d(least..most, (0..(n - 1).max(1)).into_segmented())
            .map_err(&e)?;
        bar_axes(
            &mut chart,
            "contribution to the error (%; random causes at 1 sigma)",
            &names,
        )
        .map_err(&e)?;
        for (k, b) in bars.iter().enumerate() {
            let color = if b.random { rnd } else { sys };
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [
                        (0.0, SegmentValue::Exact(k)),
                        (b.value * 100.0, SegmentValue::Exact(k + 1)),
                    ],
                    color.filled(),
                )))
                .map_err(&e)?;
        }
        chart
            .draw_series(DashedLineSeries::new(
                vec![
                    (accuracy * 100.0, SegmentValue::Exact(0)),
                    (accuracy * 100.0, SegmentValue::Last),
                ],
                5,
                4,
                ShapeStyle::from(BALANCE).stroke_width(1),
            ))
            .map_err(&e)?;
        root.present().map_err(&e)?;
    }
    Ok(with_legends(svg, &[legend.markup(chart_h)]))
}

/// One bar of the output-noise breakdown.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseBar {
    /// Transistor or resistor (`Q2`, `RE1`), or `total`.
    pub source: String,
    /// Its output current density, A/√Hz.
    pub density_a_per_rthz: f64,
}

/// The output noise by source as horizontal bars (like the error budget), in pA/√Hz,
/// with the requirement's limit as a dashed line when there is one. Sources add in
/// power, so the bars do not add up to the total.
pub fn noise_breakdown_svg(bars: &[NoiseBar], limit: Option<f64>) -> Result<String, PlotError> {
    let what = "noise-breakdown";
    let e = err(what);
    let mut svg = String::new();
    let n = bars.len().max(1);
    let height = 150 + 40 * n as u32;
    let mut legend = Legend::new();
    if let Some(l) = limit {
        legend.add(
            Swatch::Dashed(BALANCE),
            format!("limit {}", eng(l, "A/√Hz", Charset::Unicode)),
        );
    }
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, height + legend.height()))
            .into_drawing_area();
        root.fill(&WHITE).map_err(&e)?;
        let pa = |x: f64| x * 1e12;
        let most = bars
            .iter()
            .map(|b| pa(b.density_a_per_rthz))
            .fold(limit.map_or(0.0, pa), f64::max)
            .max(1e-6)
            * 1.15;
        let names: Vec<String> = bars.iter().map(|b| b.source.clone()).collect();
        let mut chart = ChartBuilder::on(&root)
            .caption("Output current noise by source", (FONT, 18))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(120)
            .build_cartesian_2d(0.0..most, (0..(n - 1).max(1)).into_segmented())
            .map_err(&e)?;
        bar_axes(
            &mut chart,
            "output current noise density (pA/√Hz; sources add in power)",
            &names,
        )
        .map_err(&e)?;
        for (k, b) in bars.iter().enumerate() {
            let color = if b.source == "total" {
                PALETTE[1]
            } else {
                PALETTE[0]
            };
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [
                        (0.0, SegmentValue::Exact(k)),
                        (pa(b.density_a_per_rthz), SegmentValue::Exact(k + 1)),
                    ],
                    color.filled(),
                )))
                .map_err(&e)?;
        }
        if let Some(l) = limit {
            chart
                .draw_series(DashedLineSeries::new(
                    vec![(pa(l), SegmentValue::Exact(0)), (pa(l), SegmentValue::Last)],
                    5,
                    4,
                    ShapeStyle::from(BALANCE).stroke_width(1),
                ))
                .map_err(&e)?;
        }
        root.present().map_err(&e)?;
    }
    Ok(with_legends(svg, &[legend.markup(height)]))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::curves::{sweep, CurveOptions};
    use crate::report::fixtures;

    fn toy_set() -> CurveSet {
        let req = fixtures::requirement();
        let opts = CurveOptions {
            voltage_points: 25,
            current_points: 6,
            ambient_extremes: true,
        };
        sweep(&req, &opts, Some(2.0), |i, v, t| {
            (v >= 0.2).then_some(i * (0.96 + 0.02 * v) * (1.0 + (t - 298.15) * 1e-4))
        })
    }

    #[test]
    fn curve_plots_are_svg_with_units_legend_and_marks() {
        let set = toy_set();
        let svg = output_curves_svg(&set, Some("tail <sink> & co")).unwrap();
        assert!(svg.contains("tail &lt;sink&gt; &amp; co"), "title escaped");
        assert!(svg.starts_with("<svg"), "{}", &svg[..80]);
        assert!(svg.contains("V_out from the mirror rail (V)"));
        assert!(svg.contains("I_out (mA)"));
        for i in ["I_in 100 µA", "I_in 316 µA", "I_in 1.00 mA"] {
            let line = format!(">{i}<");
            assert!(svg.contains(&line), "legend names each current: {i}");
        }
        assert!(svg.contains("thick: 25 °C; thin: -40 °C and 85 °C"));
        assert!(svg.contains("balance voltage 2.00 V"));
        assert!(svg.contains("accuracy ±1.00 %"));
        assert!(svg.contains("required accuracy around n·I_in"));
        assert!(svg.contains("required V_out window"));
        let svg = error_vs_input_svg(&set).unwrap();
        assert!(svg.contains("V_out 10.0 V, 85 °C"));
        assert!(svg.contains("log scale"));
    }

    #[test]
    fn budget_bars_escape_causes() {
        let bars = vec![
            BudgetBar {
                cause: "base current".into(),
                value: -0.004,
                random: false,
            },
            BudgetBar {
                cause: "V_BE offset <pair>".into(),
                value: 0.003,
                random: true,
            },
        ];
        let svg = error_budget_svg(&bars, 0.01).unwrap();
        assert!(svg.contains("V_BE offset &lt;pair&gt;"));
        assert!(!svg.contains("<pair>"));
        assert!(svg.contains("required accuracy 1.00 %"));
    }

    #[test]
    fn wide_families_get_a_log_current_axis() {
        let mut req = fixtures::requirement();
        req.input_current_a.min = 1e-7;
        let set = sweep(&req, &CurveOptions::default(), None, |i, v, _| {
            (v >= 0.2).then_some(i * (0.99 + 0.001 * v))
        });
        let svg = output_curves_svg(&set, None).unwrap();
        assert!(svg.contains("I_out (log scale)"));
        for decade in ["\n100 nA\n", "\n1.00 µA\n", "\n1.00 mA\n"] {
            assert!(svg.contains(decade), "decade label {decade:?}");
        }
    }

    #[test]
    fn budget_with_one_or_no_bar_draws() {
        let one = [BudgetBar {
            cause: "base current".into(),
            value: 0.01,
            random: false,
        }];
        assert!(error_budget_svg(&one, 0.02)
            .unwrap()
            .contains("base current"));
        assert!(error_budget_svg(&[], 0.02).unwrap().starts_with("<svg"));
    }

    #[test]
    fn gaps_split_lines() {
        let r = runs(
            &[0.0, 1.0, 2.0, 3.0, 4.0, 5.0],
            &[Some(1.0), Some(2.0), None, Some(1.0), Some(9.0), Some(1.0)],
            0.0,
            5.0,
        );
        assert_eq!(r, vec![vec![(0.0, 1.0), (1.0, 2.0)]]);
    }
}
