//! Server-rendered SVG charts: the balance over time (one line per plan) and
//! each year's payments split into two stacked parts.
//!
//! Coordinates are computed in binary floating point: they place pixels, never
//! money. Every text in a chart is escaped, and every chart carries a `<title>`
//! and a `<desc>`; the schedule table below it is its full text alternative.

use std::fmt::Write;

use rust_decimal::prelude::ToPrimitive;
use rust_decimal::Decimal;

/// Escapes text for XML content and attribute values.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// One line of a balance chart.
pub struct Series {
    pub label: String,
    /// (period number, balance after it); the first point is period 0, the start.
    pub points: Vec<(u32, Decimal)>,
}

const WIDTH: f64 = 720.0;
const HEIGHT: f64 = 260.0;
const LEFT: f64 = 84.0;
const RIGHT: f64 = 16.0;
const TOP: f64 = 14.0;
const BOTTOM: f64 = 40.0;
/// The most points drawn on one line (longer schedules are thinned, ends kept).
const MAX_POINTS: usize = 240;
const DASHES: [&str; 4] = ["", "8 4", "2 3", "10 3 2 3"];

fn f(d: Decimal) -> f64 {
    d.to_f64().unwrap_or(0.0)
}

/// Round tick steps (1, 2, 5 × 10^k) giving about `count` ticks up to `max`.
fn nice_step(max: f64, count: f64) -> f64 {
    if max <= 0.0 || !max.is_finite() {
        return 1.0;
    }
    let raw = max / count;
    let power = 10f64.powf(raw.log10().floor());
    let m = raw / power;
    let nice = if m <= 1.0 {
        1.0
    } else if m <= 2.0 {
        2.0
    } else if m <= 5.0 {
        5.0
    } else {
        10.0
    };
    nice * power
}

fn axis_number(v: f64) -> String {
    let whole = v.round() as i128;
    crate::web::view::group_thousands(&whole.to_string())
}

fn open_svg(out: &mut String, id: &str, title: &str, desc: &str) {
    let _ = write!(
        out,
        r#"<svg class="chart" viewBox="0 0 {WIDTH} {HEIGHT}" role="img" aria-labelledby="{id}-t {id}-d" xmlns="http://www.w3.org/2000/svg"><title id="{id}-t">{}</title><desc id="{id}-d">{}</desc>"#,
        escape(title),
        escape(desc)
    );
}

fn y_axis(out: &mut String, max: f64, label: &str) -> (f64, f64) {
    let step = nice_step(max, 4.0);
    let top = (max / step).ceil().max(1.0) * step;
    let plot_h = HEIGHT - TOP - BOTTOM;
    let mut v = 0.0;
    while v <= top + step / 2.0 {
        let y = TOP + plot_h * (1.0 - v / top);
        let _ = write!(
            out,
            r#"<line class="grid" x1="{LEFT}" x2="{:.1}" y1="{y:.1}" y2="{y:.1}"/><text class="tick" x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"#,
            WIDTH - RIGHT,
            LEFT - 6.0,
            y + 4.0,
            axis_number(v)
        );
        v += step;
    }
    let _ = write!(
        out,
        r#"<text class="axis-label" x="12" y="{:.1}" transform="rotate(-90 12 {:.1})" text-anchor="middle">{}</text>"#,
        TOP + plot_h / 2.0,
        TOP + plot_h / 2.0,
        escape(label)
    );
    (top, plot_h)
}

fn x_years(out: &mut String, periods: u32, per_year: u32) {
    let plot_w = WIDTH - LEFT - RIGHT;
    let years = f64::from(periods) / f64::from(per_year.max(1));
    let step = nice_step(years.max(1.0), 6.0).max(1.0);
    let mut y = 0.0;
    while y <= years + 1e-9 {
        let x = LEFT + plot_w * (y * f64::from(per_year) / f64::from(periods.max(1)));
        let _ = write!(
            out,
            r#"<line class="tick-mark" x1="{x:.1}" x2="{x:.1}" y1="{:.1}" y2="{:.1}"/><text class="tick" x="{x:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
            HEIGHT - BOTTOM,
            HEIGHT - BOTTOM + 4.0,
            HEIGHT - BOTTOM + 17.0,
            y as u32
        );
        y += step;
    }
    let _ = write!(
        out,
        r#"<text class="axis-label" x="{:.1}" y="{:.1}" text-anchor="middle">years from the first payment</text>"#,
        LEFT + plot_w / 2.0,
        HEIGHT - 4.0
    );
}

/// The dash pattern of line `i`, as an attribute (none for the first).
fn dash_attr(i: usize) -> String {
    let dash = DASHES[i % DASHES.len()];
    if dash.is_empty() {
        String::new()
    } else {
        format!(r#" stroke-dasharray="{dash}""#)
    }
}

/// One legend entry: a short sample of line `i` at (x, y) and its label.
fn legend_entry(out: &mut String, i: usize, x: f64, y: f64, label: &str, max_chars: usize) {
    let _ = write!(
        out,
        r#"<line class="line line-{}" x1="{x:.1}" x2="{:.1}" y1="{y:.1}" y2="{y:.1}"{}/><text class="legend" x="{:.1}" y="{:.1}">{}</text>"#,
        i % 4,
        x + 28.0,
        dash_attr(i),
        x + 34.0,
        y + 4.0,
        escape(&label.chars().take(max_chars).collect::<String>())
    );
}

/// The balance over time, one line per series, against years.
pub fn balance_chart(
    id: &str,
    title: &str,
    desc: &str,
    series: &[Series],
    per_year: u32,
) -> String {
    let mut out = String::with_capacity(8 * 1024);
    open_svg(&mut out, id, title, desc);
    let max = series
        .iter()
        .flat_map(|s| s.points.iter().map(|p| f(p.1)))
        .fold(0.0f64, f64::max);
    let periods = series
        .iter()
        .filter_map(|s| s.points.last().map(|p| p.0))
        .max()
        .unwrap_or(1)
        .max(1);
    let (top, plot_h) = y_axis(&mut out, max, "balance");
    x_years(&mut out, periods, per_year);
    let plot_w = WIDTH - LEFT - RIGHT;
    for (i, s) in series.iter().enumerate() {
        let n = s.points.len();
        let stride = n.div_ceil(MAX_POINTS).max(1);
        let mut pts = String::with_capacity(MAX_POINTS * 14);
        for (j, (k, b)) in s.points.iter().enumerate() {
            if j % stride != 0 && j + 1 != n {
                continue;
            }
            let x = LEFT + plot_w * f64::from(*k) / f64::from(periods);
            let y = TOP + plot_h * (1.0 - f(*b).max(0.0) / top);
            let _ = write!(pts, "{x:.1},{y:.1} ");
        }
        let _ = write!(
            out,
            r#"<polyline class="line line-{}" fill="none" points="{}"{}/>"#,
            i % 4,
            pts.trim_end(),
            dash_attr(i)
        );
    }
    if series.len() > 1 {
        for (i, s) in series.iter().enumerate() {
            let y = TOP + 12.0 + 16.0 * i as f64;
            legend_entry(&mut out, i, WIDTH - RIGHT - 210.0, y, &s.label, 32);
        }
    }
    out.push_str("</svg>");
    out
}

/// One bar of a stacked chart: its label and its two parts.
pub struct Bar {
    pub label: String,
    pub lower: Decimal,
    pub upper: Decimal,
}

/// Stacked bars, one a year: `lower` drawn first (e.g. principal), `upper` on top (interest).
pub fn stacked_bars(
    id: &str,
    title: &str,
    desc: &str,
    bars: &[Bar],
    names: (&str, &str),
) -> String {
    let mut out = String::with_capacity(8 * 1024);
    open_svg(&mut out, id, title, desc);
    let max = bars
        .iter()
        .map(|b| f(b.lower).max(0.0) + f(b.upper).max(0.0))
        .fold(0.0f64, f64::max);
    let (top, plot_h) = y_axis(&mut out, max, "paid in the year");
    let plot_w = WIDTH - LEFT - RIGHT;
    let n = bars.len().max(1) as f64;
    let slot = plot_w / n;
    let width = (slot * 0.72).max(1.0);
    let label_every = (bars.len() / 15).max(1);
    for (i, b) in bars.iter().enumerate() {
        let x = LEFT + slot * i as f64 + (slot - width) / 2.0;
        let lower = f(b.lower).max(0.0) / top * plot_h;
        let upper = f(b.upper).max(0.0) / top * plot_h;
        let base = HEIGHT - BOTTOM;
        let _ = write!(
            out,
            r#"<rect class="bar-lower" x="{x:.1}" y="{:.1}" width="{width:.1}" height="{lower:.1}"/><rect class="bar-upper" x="{x:.1}" y="{:.1}" width="{width:.1}" height="{upper:.1}"/>"#,
            base - lower,
            base - lower - upper,
        );
        if i % label_every == 0 {
            let _ = write!(
                out,
                r#"<text class="tick" x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
                x + width / 2.0,
                base + 15.0,
                escape(&b.label)
            );
        }
    }
    let _ = write!(
        out,
        r#"<text class="axis-label" x="{:.1}" y="{:.1}" text-anchor="middle">year</text>"#,
        LEFT + plot_w / 2.0,
        HEIGHT - 4.0
    );
    let lx = WIDTH - RIGHT - 150.0;
    let _ = write!(
        out,
        r#"<rect class="bar-upper" x="{lx:.1}" y="{:.1}" width="12" height="12"/><text class="legend" x="{:.1}" y="{:.1}">{}</text><rect class="bar-lower" x="{lx:.1}" y="{:.1}" width="12" height="12"/><text class="legend" x="{:.1}" y="{:.1}">{}</text>"#,
        TOP,
        lx + 18.0,
        TOP + 10.0,
        escape(names.1),
        TOP + 18.0,
        lx + 18.0,
        TOP + 28.0,
        escape(names.0),
    );
    out.push_str("</svg>");
    out
}

/// One step line of a [`path_chart`]: (first period, value) runs.
pub struct Steps {
    pub label: String,
    pub runs: Vec<(u32, Decimal)>,
}

/// Draws one panel of step lines, `top_y` its top; the lines end at `periods`.
fn step_panel(
    out: &mut String,
    lines: &[Steps],
    periods: u32,
    top_y: f64,
    height: f64,
    label: &str,
    decimals: bool,
) {
    let plot_w = WIDTH - LEFT - RIGHT;
    let max = lines
        .iter()
        .flat_map(|s| s.runs.iter().map(|r| f(r.1)))
        .fold(0.0f64, f64::max);
    let step = nice_step(max, 3.0);
    let top = (max / step).ceil().max(1.0) * step;
    let mut v = 0.0;
    while v <= top + step / 2.0 {
        let y = top_y + height * (1.0 - v / top);
        let text = if decimals && step < 1.0 {
            format!("{v:.1}")
        } else {
            axis_number(v)
        };
        let _ = write!(
            out,
            r#"<line class="grid" x1="{LEFT}" x2="{:.1}" y1="{y:.1}" y2="{y:.1}"/><text class="tick" x="{:.1}" y="{:.1}" text-anchor="end">{text}</text>"#,
            WIDTH - RIGHT,
            LEFT - 6.0,
            y + 4.0,
        );
        v += step;
    }
    let _ = write!(
        out,
        r#"<text class="axis-label" x="12" y="{:.1}" transform="rotate(-90 12 {:.1})" text-anchor="middle">{}</text>"#,
        top_y + height / 2.0,
        top_y + height / 2.0,
        escape(label)
    );
    for (i, s) in lines.iter().enumerate() {
        let mut pts = String::new();
        for (j, (from, value)) in s.runs.iter().enumerate() {
            let end = s.runs.get(j + 1).map_or(periods, |r| r.0 - 1);
            let y = top_y + height * (1.0 - f(*value).max(0.0) / top);
            let x0 = LEFT + plot_w * f64::from(from - 1) / f64::from(periods.max(1));
            let x1 = LEFT + plot_w * f64::from(end) / f64::from(periods.max(1));
            let _ = write!(pts, "{x0:.1},{y:.1} {x1:.1},{y:.1} ");
        }
        let _ = write!(
            out,
            r#"<polyline class="line line-{}" fill="none" points="{}"{}/>"#,
            i % 4,
            pts.trim_end(),
            dash_attr(i)
        );
    }
}

/// The payment (upper panel) and the rate (lower panel) over time on several
/// paths, as step lines against years; the legend sits below the plot, clear
/// of the data.
pub fn path_chart(
    id: &str,
    title: &str,
    desc: &str,
    payments: &[Steps],
    rates: &[Steps],
    periods: u32,
    per_year: u32,
) -> String {
    let height = 420.0;
    let mut out = String::with_capacity(8 * 1024);
    let _ = write!(
        out,
        r#"<svg class="chart" viewBox="0 0 {WIDTH} {height}" role="img" aria-labelledby="{id}-t {id}-d" xmlns="http://www.w3.org/2000/svg"><title id="{id}-t">{}</title><desc id="{id}-d">{}</desc>"#,
        escape(title),
        escape(desc)
    );
    step_panel(&mut out, payments, periods, TOP, 160.0, "payment", false);
    step_panel(
        &mut out,
        rates,
        periods,
        TOP + 190.0,
        110.0,
        "rate, %",
        true,
    );
    // The years axis under the lower panel (x_years draws at HEIGHT − BOTTOM).
    let shift = TOP + 190.0 + 110.0 - (HEIGHT - BOTTOM);
    let _ = write!(out, r#"<g transform="translate(0 {shift:.1})">"#);
    x_years(&mut out, periods, per_year);
    out.push_str("</g>");
    let y = height - 14.0;
    for (i, s) in payments.iter().enumerate() {
        legend_entry(&mut out, i, LEFT + 200.0 * i as f64, y, &s.label, 24);
    }
    out.push_str("</svg>");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_with_markup_are_escaped() {
        let s = Series {
            label: "<b>x</b>".into(),
            points: vec![(0, Decimal::from(100)), (12, Decimal::ZERO)],
        };
        let t = Series {
            label: "y & z".into(),
            points: vec![(0, Decimal::from(100)), (24, Decimal::ZERO)],
        };
        let svg = balance_chart("c", "<t>", "<d>", &[s, t], 12);
        assert!(svg.contains("&lt;b&gt;x&lt;/b&gt;"));
        assert!(svg.contains("y &amp; z"));
        assert!(!svg.contains("<b>"));
        assert!(svg.contains("<title id=\"c-t\">&lt;t&gt;</title>"));
    }

    #[test]
    fn ticks_are_round_numbers() {
        assert_eq!(nice_step(250_000.0, 4.0), 100_000.0);
        assert_eq!(nice_step(30.0, 6.0), 5.0);
    }
}
