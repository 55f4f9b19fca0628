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

/// The drawing area of one rendering of a chart. Each chart is drawn twice, wide
/// for a desk and narrow for a phone, and the stylesheet shows the one that fits:
/// a chart is redrawn for a small screen, never shrunk, so its text stays at
/// least 11 px tall.
#[derive(Clone, Copy)]
struct Frame {
    width: f64,
    height: f64,
    left: f64,
    right: f64,
    top: f64,
    /// Below the plot: the years axis, then the legend.
    bottom: f64,
    /// The id suffix and class of this rendering.
    variant: &'static str,
    /// Legend entries a row.
    legend_columns: usize,
    /// Label every n-th bar at most this many times.
    bar_labels: usize,
}

const WIDE: Frame = Frame {
    width: 720.0,
    height: 260.0,
    left: 84.0,
    right: 16.0,
    top: 14.0,
    bottom: 40.0,
    variant: "wide",
    legend_columns: 3,
    bar_labels: 15,
};

const NARROW: Frame = Frame {
    width: 360.0,
    height: 250.0,
    left: 60.0,
    right: 10.0,
    top: 26.0,
    bottom: 40.0,
    variant: "narrow",
    legend_columns: 1,
    bar_labels: 8,
};

/// The height of one row of the legend.
const LEGEND_ROW: f64 = 18.0;
/// The most points drawn on one line (longer schedules are thinned, ends kept).
const MAX_POINTS: usize = 240;
const DASHES: [&str; 4] = ["", "8 4", "2 3", "10 3 2 3"];

impl Frame {
    fn plot_w(&self) -> f64 {
        self.width - self.left - self.right
    }

    /// The frame grown by `rows` legend rows under the plot.
    fn with_legend(mut self, entries: usize) -> (Self, f64) {
        let rows = entries.div_ceil(self.legend_columns.max(1));
        let legend_top = self.height + 4.0;
        self.height += LEGEND_ROW * rows as f64 + 6.0;
        (self, legend_top)
    }

    /// The place of legend entry `i` below the plot.
    fn legend_at(&self, legend_top: f64, i: usize) -> (f64, f64) {
        let columns = self.legend_columns.max(1);
        let col_w = self.plot_w() / columns as f64;
        (
            self.left + col_w * (i % columns) as f64,
            legend_top + LEGEND_ROW * (i / columns) as f64 + 8.0,
        )
    }

    /// The most characters of a legend label that fit its column.
    fn legend_chars(&self) -> usize {
        let col_w = self.plot_w() / self.legend_columns.max(1) as f64;
        (((col_w - 40.0) / 7.0) as usize).max(8)
    }
}

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

/// The value axis for data up to `max`: the round step (1, 2, 2.5 or 5 × 10^k)
/// whose top is the least above `max`, with 3 to 6 steps, so the axis fits the
/// data (bars of about 20,500 get an axis to 25,000, not 30,000). (step, top).
fn value_axis(max: f64) -> (f64, f64) {
    if max <= 0.0 || !max.is_finite() {
        return (1.0, 1.0);
    }
    let base = 10f64.powf((max / 6.0).log10().floor());
    let mut best = (nice_step(max, 4.0), f64::INFINITY);
    for power in [base, base * 10.0] {
        for m in [1.0, 2.0, 2.5, 5.0] {
            let step = m * power;
            let count = (max / step - 1e-9).ceil().max(1.0);
            if !(3.0..=6.0).contains(&count) {
                continue;
            }
            let top = count * step;
            if top < best.1 - 1e-9 {
                best = (step, top);
            }
        }
    }
    if best.1.is_infinite() {
        best.1 = (max / best.0).ceil().max(1.0) * best.0;
    }
    best
}

fn axis_number(v: f64, step: f64) -> String {
    if step.fract().abs() > 1e-9 {
        let decimals = if (step * 10.0).fract().abs() < 1e-9 {
            1
        } else {
            2
        };
        return format!("{v:.decimals$}");
    }
    let whole = v.round() as i128;
    crate::web::view::group_thousands(&whole.to_string())
}

fn open_svg(out: &mut String, fr: &Frame, id: &str, title: &str, desc: &str) {
    let _ = write!(
        out,
        r#"<svg class="chart {}" viewBox="0 0 {} {}" role="img" aria-labelledby="{id}-{}-t {id}-{}-d" xmlns="http://www.w3.org/2000/svg"><title id="{id}-{}-t">{}</title><desc id="{id}-{}-d">{}</desc>"#,
        fr.variant,
        fr.width,
        fr.height,
        fr.variant,
        fr.variant,
        fr.variant,
        escape(title),
        fr.variant,
        escape(desc)
    );
}

/// The value axis of a panel from `top_y`, `height` tall, for data up to `max`,
/// with its label; returns the axis top.
fn value_ticks(
    out: &mut String,
    fr: &Frame,
    max: f64,
    top_y: f64,
    height: f64,
    label: &str,
) -> f64 {
    let (step, top) = value_axis(max);
    let mut v = 0.0;
    while v <= top + step / 2.0 {
        let y = top_y + height * (1.0 - v / top);
        let _ = write!(
            out,
            r#"<line class="grid" x1="{}" x2="{:.1}" y1="{y:.1}" y2="{y:.1}"/><text class="tick" x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"#,
            fr.left,
            fr.width - fr.right,
            fr.left - 6.0,
            y + 4.0,
            axis_number(v, step)
        );
        v += step;
    }
    if fr.variant == "narrow" {
        // Above the panel, across: a phone has no room for a turned label.
        let _ = write!(
            out,
            r#"<text class="axis-label" x="4" y="{:.1}">{}</text>"#,
            top_y - 12.0,
            escape(label)
        );
    } else {
        let _ = write!(
            out,
            r#"<text class="axis-label" x="12" y="{:.1}" transform="rotate(-90 12 {:.1})" text-anchor="middle">{}</text>"#,
            top_y + height / 2.0,
            top_y + height / 2.0,
            escape(label)
        );
    }
    top
}

/// The years axis under a plot whose base is at `base`.
fn x_years(out: &mut String, fr: &Frame, base: f64, periods: u32, per_year: u32) {
    let plot_w = fr.plot_w();
    let years = f64::from(periods) / f64::from(per_year.max(1));
    let ticks = if fr.variant == "narrow" { 4.0 } else { 6.0 };
    let step = nice_step(years.max(1.0), ticks).max(1.0);
    let mut y = 0.0;
    while y <= years + 1e-9 {
        let x = fr.left + plot_w * (y * f64::from(per_year) / f64::from(periods.max(1)));
        let _ = write!(
            out,
            r#"<line class="tick-mark" x1="{x:.1}" x2="{x:.1}" y1="{base:.1}" y2="{:.1}"/><text class="tick" x="{x:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
            base + 4.0,
            base + 17.0,
            y as u32
        );
        y += step;
    }
    let _ = write!(
        out,
        r#"<text class="axis-label" x="{:.1}" y="{:.1}" text-anchor="middle">years from the start</text>"#,
        fr.left + plot_w / 2.0,
        base + 34.0
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

/// A chart drawn wide and narrow, one after the other (the stylesheet shows one).
fn both(draw: impl Fn(&Frame) -> String) -> String {
    let mut out = draw(&WIDE);
    out.push_str(&draw(&NARROW));
    out
}

/// The balance over time, one line per series, against years; with several
/// series, a legend under the plot, clear of the lines.
pub fn balance_chart(
    id: &str,
    title: &str,
    desc: &str,
    series: &[Series],
    per_year: u32,
) -> String {
    both(|fr| balance_drawn(fr, id, title, desc, series, per_year))
}

fn balance_drawn(
    base_frame: &Frame,
    id: &str,
    title: &str,
    desc: &str,
    series: &[Series],
    per_year: u32,
) -> String {
    let legend = if series.len() > 1 { series.len() } else { 0 };
    let (fr, legend_top) = base_frame.with_legend(legend);
    let fr = &fr;
    let mut out = String::with_capacity(8 * 1024);
    open_svg(&mut out, fr, id, title, desc);
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
    let plot_h = base_frame.height - fr.top - fr.bottom;
    let top = value_ticks(&mut out, fr, max, fr.top, plot_h, "balance");
    x_years(&mut out, fr, fr.top + plot_h, periods, per_year);
    let plot_w = fr.plot_w();
    for (i, s) in series.iter().enumerate() {
        let n = s.points.len();
        let stride = n.div_ceil(MAX_POINTS).max(1);
        let mut pts = String::with_capacity(MAX_POINTS * 14);
        for (j, (k, b)) in s.points.iter().enumerate() {
            if j % stride != 0 && j + 1 != n {
                continue;
            }
            let x = fr.left + plot_w * f64::from(*k) / f64::from(periods);
            let y = fr.top + plot_h * (1.0 - f(*b).max(0.0) / top);
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
    if legend > 0 {
        for (i, s) in series.iter().enumerate() {
            let (x, y) = fr.legend_at(legend_top, i);
            legend_entry(&mut out, i, x, y, &s.label, fr.legend_chars());
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

/// What a stacked bar chart's parts and axis are called.
pub struct BarWords<'a> {
    /// The lower part (principal, deposits, withdrawals).
    pub lower: &'a str,
    /// The upper part (interest).
    pub upper: &'a str,
    /// The value axis ("paid in the year").
    pub axis: &'a str,
}

/// Stacked bars, one a year: `lower` drawn first (e.g. principal), `upper` on
/// top (interest); the legend under the plot.
pub fn stacked_bars(id: &str, title: &str, desc: &str, bars: &[Bar], words: &BarWords) -> String {
    both(|fr| bars_drawn(fr, id, title, desc, bars, words))
}

fn bars_drawn(
    base_frame: &Frame,
    id: &str,
    title: &str,
    desc: &str,
    bars: &[Bar],
    words: &BarWords,
) -> String {
    let (fr, legend_top) = base_frame.with_legend(2);
    let fr = &fr;
    let mut out = String::with_capacity(8 * 1024);
    open_svg(&mut out, fr, id, title, desc);
    let max = bars
        .iter()
        .map(|b| f(b.lower).max(0.0) + f(b.upper).max(0.0))
        .fold(0.0f64, f64::max);
    let plot_h = base_frame.height - fr.top - fr.bottom;
    let top = value_ticks(&mut out, fr, max, fr.top, plot_h, words.axis);
    let plot_w = fr.plot_w();
    let n = bars.len().max(1) as f64;
    let slot = plot_w / n;
    let width = (slot * 0.72).max(1.0);
    let label_every = bars.len().div_ceil(fr.bar_labels.max(1)).max(1);
    let base = fr.top + plot_h;
    for (i, b) in bars.iter().enumerate() {
        let x = fr.left + slot * i as f64 + (slot - width) / 2.0;
        let lower = f(b.lower).max(0.0) / top * plot_h;
        let upper = f(b.upper).max(0.0) / top * plot_h;
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
        fr.left + plot_w / 2.0,
        base + 34.0
    );
    for (i, (class, name)) in [("bar-lower", words.lower), ("bar-upper", words.upper)]
        .iter()
        .enumerate()
    {
        let (x, y) = fr.legend_at(legend_top, i);
        let _ = write!(
            out,
            r#"<rect class="{class}" x="{x:.1}" y="{:.1}" width="12" height="12"/><text class="legend" x="{:.1}" y="{:.1}">{}</text>"#,
            y - 6.0,
            x + 18.0,
            y + 4.0,
            escape(name),
        );
    }
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
    fr: &Frame,
    lines: &[Steps],
    periods: u32,
    top_y: f64,
    height: f64,
    label: &str,
) {
    let plot_w = fr.plot_w();
    let max = lines
        .iter()
        .flat_map(|s| s.runs.iter().map(|r| f(r.1)))
        .fold(0.0f64, f64::max);
    let top = value_ticks(out, fr, max, top_y, height, label);
    for (i, s) in lines.iter().enumerate() {
        let mut pts = String::new();
        for (j, (from, value)) in s.runs.iter().enumerate() {
            let end = s.runs.get(j + 1).map_or(periods, |r| r.0 - 1);
            let y = top_y + height * (1.0 - f(*value).max(0.0) / top);
            let x0 = fr.left + plot_w * f64::from(from - 1) / f64::from(periods.max(1));
            let x1 = fr.left + plot_w * f64::from(end) / f64::from(periods.max(1));
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
    both(|base| {
        let panels = Frame {
            height: 420.0 - 14.0 - LEGEND_ROW,
            ..*base
        };
        let (fr, legend_top) = panels.with_legend(payments.len());
        let fr = &fr;
        let mut out = String::with_capacity(8 * 1024);
        open_svg(&mut out, fr, id, title, desc);
        let gap = if fr.variant == "narrow" { 42.0 } else { 30.0 };
        step_panel(&mut out, fr, payments, periods, fr.top, 160.0, "payment");
        let rate_top = fr.top + 160.0 + gap;
        step_panel(&mut out, fr, rates, periods, rate_top, 110.0, "rate, %");
        x_years(&mut out, fr, rate_top + 110.0, periods, per_year);
        for (i, s) in payments.iter().enumerate() {
            let (x, y) = fr.legend_at(legend_top, i);
            legend_entry(&mut out, i, x, y, &s.label, fr.legend_chars());
        }
        out.push_str("</svg>");
        out
    })
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
        assert!(svg.contains("<title id=\"c-wide-t\">&lt;t&gt;</title>"));
    }

    #[test]
    fn ticks_are_round_numbers() {
        assert_eq!(nice_step(250_000.0, 4.0), 100_000.0);
        assert_eq!(nice_step(30.0, 6.0), 5.0);
    }

    #[test]
    fn the_value_axis_fits_the_data() {
        // Bars of about 20,500 once got an axis to 30,000.
        assert_eq!(value_axis(20_500.0), (5_000.0, 25_000.0));
        assert_eq!(value_axis(19_532.64), (5_000.0, 20_000.0));
        assert_eq!(value_axis(240_000.0), (50_000.0, 250_000.0));
        assert_eq!(value_axis(7.25), (2.5, 7.5));
        for max in [1.0, 3.3, 47.0, 999.0, 1_234.5, 86_000.0, 1.0e7] {
            let (step, top) = value_axis(max);
            assert!(top >= max && top < max * 1.5, "{max}: top {top}");
            assert!(
                (3.0..=6.0).contains(&(top / step).round()),
                "{max}: step {step}"
            );
        }
    }

    #[test]
    fn every_chart_is_drawn_wide_and_narrow_with_its_legend_under_the_plot() {
        let bars = [Bar {
            label: "1".into(),
            lower: Decimal::from(100),
            upper: Decimal::from(50),
        }];
        let words = BarWords {
            lower: "Deposits",
            upper: "Interest",
            axis: "deposited and earned in the year",
        };
        let svg = stacked_bars("y", "t", "d", &bars, &words);
        assert_eq!(svg.matches("<svg").count(), 2);
        assert!(svg.contains("class=\"chart wide\"") && svg.contains("class=\"chart narrow\""));
        assert!(svg.contains("deposited and earned in the year"));
        // The legend's text sits below the plot's base in both renderings.
        for (frame, part) in [
            (WIDE, svg.split("</svg>").next().unwrap()),
            (NARROW, svg.split("</svg>").nth(1).unwrap()),
        ] {
            let base = frame.height - frame.bottom;
            let at = part.find(">Deposits<").unwrap();
            let y: f64 = part[..at]
                .rsplit("y=\"")
                .next()
                .and_then(|t| t.split('"').next())
                .unwrap()
                .parse()
                .unwrap();
            assert!(
                y > base + 34.0,
                "{}: legend at {y}, base {base}",
                frame.variant
            );
        }
    }
}
