//! Self-contained SVG charts: a heat map of a grid of values over a footprint in metres (with axes, a colour scale
//! bar carrying the unit, and a title) and a simple line chart (x–y series with axes, units and a legend).
//! Pure string building, no I/O; the caller writes the text (through `report::output::OutputSet`).
//!
//! The colour ramp is our own: five control colours from deep indigo through teal and green to pale yellow,
//! interpolated linearly in sRGB, chosen so that relative luminance (ITU-R BT.709 weights) rises monotonically —
//! a perceptually ordered sequential scale in the manner of viridis-type maps (tested below). Tick steps follow the
//! usual 1–2–5 × 10ⁿ rule.
use std::fmt::Write;

use ndarray::ArrayView2;

/// Control colours of the sequential ramp, low to high.
const RAMP: [(f64, [f64; 3]); 5] = [
    (0.00, [38.0, 16.0, 84.0]),
    (0.25, [45.0, 78.0, 142.0]),
    (0.50, [27.0, 140.0, 139.0]),
    (0.75, [112.0, 191.0, 88.0]),
    (1.00, [246.0, 232.0, 95.0]),
];

/// Series colours for line charts (distinct hues; the first three read in greyscale too).
const SERIES: [&str; 6] = [
    "#2d4e8e", "#d0632a", "#1b8c8b", "#8a3b9c", "#6f9f2c", "#b0306a",
];

/// Colour of value t ∈ [0, 1] on the ramp, as `#rrggbb` (t is clamped).
pub fn ramp_colour(t: f64) -> String {
    let [r, g, b] = ramp_rgb(t);
    format!("#{:02x}{:02x}{:02x}", r, g, b)
}

fn ramp_rgb(t: f64) -> [u8; 3] {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let k = RAMP
        .windows(2)
        .position(|w| t <= w[1].0)
        .unwrap_or(RAMP.len() - 2);
    let (t0, c0) = RAMP[k];
    let (t1, c1) = RAMP[k + 1];
    let f = (t - t0) / (t1 - t0);
    let mix = |a: f64, b: f64| (a + (b - a) * f).round().clamp(0.0, 255.0) as u8;
    [mix(c0[0], c1[0]), mix(c0[1], c1[1]), mix(c0[2], c1[2])]
}

/// Escape text for SVG.
fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// "Nice" tick values covering [lo, hi] with about `n` steps of 1, 2 or 5 × 10ᵏ.
pub fn nice_ticks(lo: f64, hi: f64, n: usize) -> Vec<f64> {
    if !(lo.is_finite() && hi.is_finite()) || hi <= lo {
        return vec![lo];
    }
    let raw = (hi - lo) / n.max(1) as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * mag)
        .find(|s| *s >= raw)
        .unwrap_or(10.0 * mag);
    let first = (lo / step - 1e-9).ceil() as i64;
    let last = (hi / step + 1e-9).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

fn fmt_tick(v: f64) -> String {
    let a = v.abs();
    let s = if a == 0.0 {
        "0".to_string()
    } else if !(1e-3..1e5).contains(&a) {
        format!("{v:.1e}")
    } else if a >= 100.0 {
        format!("{v:.0}")
    } else if a >= 1.0 {
        format!("{v:.2}")
    } else {
        format!("{v:.3}")
    };
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// A heat map request.
#[derive(Debug, Clone)]
pub struct HeatMap<'a> {
    /// Values [nx, ny]: i along the horizontal axis, j along the vertical axis (j = 0 at the bottom).
    pub values: ArrayView2<'a, f64>,
    /// Horizontal extent, m.
    pub x_extent_m: f64,
    /// Vertical extent, m.
    pub y_extent_m: f64,
    /// Title.
    pub title: String,
    /// Horizontal axis label (without unit; "m" is added).
    pub x_label: String,
    /// Vertical axis label (without unit; "m" is added).
    pub y_label: String,
    /// Quantity name on the colour bar.
    pub quantity: String,
    /// Unit on the colour bar.
    pub unit: String,
    /// Fixed colour range; `None` = data min to max.
    pub range: Option<(f64, f64)>,
    /// Optional cell marks, same shape as `values`: −1 draws "D" (over-dried), +1 draws "W" (still wet), with a
    /// legend under the colour bar naming what they mean.
    pub marks: Option<(ArrayView2<'a, i8>, String)>,
}

/// Render a heat map as an SVG document.
pub fn heat_map(m: &HeatMap<'_>) -> String {
    let (nx, ny) = m.values.dim();
    let finite: Vec<f64> = m.values.iter().copied().filter(|v| v.is_finite()).collect();
    let (mut lo, mut hi) = m.range.unwrap_or_else(|| {
        (
            finite.iter().copied().fold(f64::INFINITY, f64::min),
            finite.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        )
    });
    if !(lo.is_finite() && hi.is_finite()) {
        lo = 0.0;
        hi = 1.0;
    }
    if hi <= lo {
        let pad = if lo == 0.0 { 1.0 } else { 0.01 * lo.abs() };
        lo -= pad;
        hi += pad;
    }
    let plot_w = 640.0;
    let plot_h = (plot_w * m.y_extent_m / m.x_extent_m).clamp(200.0, 640.0);
    let (left, top) = (70.0, 50.0);
    let bar_x = left + plot_w + 30.0;
    let total_w = bar_x + 190.0;
    let total_h = top + plot_h + if m.marks.is_some() { 80.0 } else { 60.0 };
    let mut s = String::new();
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{total_w:.0}" height="{total_h:.0}" viewBox="0 0 {total_w:.0} {total_h:.0}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(
        s,
        r#"<rect width="100%" height="100%" fill="white"/><text x="{left}" y="28" font-size="16">{}</text>"#,
        esc(&m.title)
    );
    let cw = plot_w / nx as f64;
    let ch = plot_h / ny as f64;
    let _ = writeln!(s, r#"<g shape-rendering="crispEdges">"#);
    for ((i, j), &v) in m.values.indexed_iter() {
        let fill = if v.is_finite() {
            ramp_colour((v - lo) / (hi - lo))
        } else {
            "#bbbbbb".to_string()
        };
        let x = left + i as f64 * cw;
        let y = top + plot_h - (j + 1) as f64 * ch;
        let _ = writeln!(
            s,
            r#"<rect x="{x:.2}" y="{y:.2}" width="{:.2}" height="{:.2}" fill="{fill}"><title>{}</title></rect>"#,
            cw + 0.05,
            ch + 0.05,
            fmt_tick(v)
        );
    }
    let _ = writeln!(s, "</g>");
    if let Some((marks, legend)) = &m.marks {
        let size = (0.8 * cw.min(ch)).clamp(7.0, 14.0);
        for ((i, j), &mk) in marks.indexed_iter() {
            let label = match mk {
                -1 => "D",
                1 => "W",
                _ => continue,
            };
            let x = left + (i as f64 + 0.5) * cw;
            let y = top + plot_h - (j as f64 + 0.5) * ch + 0.35 * size;
            let _ = writeln!(
                s,
                r#"<text x="{x:.2}" y="{y:.2}" font-size="{size:.1}" text-anchor="middle" fill="black" stroke="white" stroke-width="0.6" paint-order="stroke">{label}</text>"#
            );
        }
        let _ = writeln!(
            s,
            r#"<text x="{left}" y="{:.2}" font-size="11">{}</text>"#,
            top + plot_h + 64.0,
            esc(legend)
        );
    }
    let _ = writeln!(
        s,
        r#"<rect x="{left}" y="{top}" width="{plot_w}" height="{plot_h:.2}" fill="none" stroke="black"/>"#
    );
    for t in nice_ticks(0.0, m.x_extent_m, 8) {
        let x = left + t / m.x_extent_m * plot_w;
        let y = top + plot_h;
        let _ = writeln!(
            s,
            r#"<line x1="{x:.2}" y1="{y:.2}" x2="{x:.2}" y2="{:.2}" stroke="black"/><text x="{x:.2}" y="{:.2}" text-anchor="middle">{}</text>"#,
            y + 5.0,
            y + 18.0,
            fmt_tick(t)
        );
    }
    for t in nice_ticks(0.0, m.y_extent_m, 4) {
        let y = top + plot_h - t / m.y_extent_m * plot_h;
        let _ = writeln!(
            s,
            r#"<line x1="{:.2}" y1="{y:.2}" x2="{left}" y2="{y:.2}" stroke="black"/><text x="{:.2}" y="{:.2}" text-anchor="end">{}</text>"#,
            left - 5.0,
            left - 8.0,
            y + 4.0,
            fmt_tick(t)
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{:.2}" y="{:.2}" text-anchor="middle">{} (m)</text>"#,
        left + plot_w / 2.0,
        top + plot_h + 40.0,
        esc(&m.x_label)
    );
    let _ = writeln!(
        s,
        r#"<text transform="translate(20 {:.2}) rotate(-90)" text-anchor="middle">{} (m)</text>"#,
        top + plot_h / 2.0,
        esc(&m.y_label)
    );
    // colour bar
    let steps = 64;
    let bh = plot_h / steps as f64;
    for k in 0..steps {
        let t = (k as f64 + 0.5) / steps as f64;
        let y = top + plot_h - (k + 1) as f64 * bh;
        let _ = writeln!(
            s,
            r#"<rect x="{bar_x:.2}" y="{y:.2}" width="18" height="{:.2}" fill="{}" shape-rendering="crispEdges"/>"#,
            bh + 0.05,
            ramp_colour(t)
        );
    }
    let _ = writeln!(
        s,
        r#"<rect x="{bar_x:.2}" y="{top}" width="18" height="{plot_h:.2}" fill="none" stroke="black"/>"#
    );
    for t in nice_ticks(lo, hi, 5) {
        let y = top + plot_h - (t - lo) / (hi - lo) * plot_h;
        let _ = writeln!(
            s,
            r#"<line x1="{:.2}" y1="{y:.2}" x2="{:.2}" y2="{y:.2}" stroke="black"/><text x="{:.2}" y="{:.2}">{}</text>"#,
            bar_x + 18.0,
            bar_x + 23.0,
            bar_x + 26.0,
            y + 4.0,
            fmt_tick(t)
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{bar_x:.2}" y="{:.2}">{} ({})</text>"#,
        top - 10.0,
        esc(&m.quantity),
        esc(&m.unit)
    );
    s.push_str("</svg>\n");
    s
}

/// One line of a chart.
#[derive(Debug, Clone)]
pub struct Series {
    /// Legend label.
    pub name: String,
    /// Points (x, y); non-finite points break the line.
    pub points: Vec<(f64, f64)>,
}

/// A line chart request.
#[derive(Debug, Clone)]
pub struct LineChart {
    /// Title.
    pub title: String,
    /// Horizontal axis label.
    pub x_label: String,
    /// Horizontal axis unit.
    pub x_unit: String,
    /// Vertical axis label.
    pub y_label: String,
    /// Vertical axis unit.
    pub y_unit: String,
    /// The lines.
    pub series: Vec<Series>,
}

/// Render a line chart as an SVG document.
pub fn line_chart(c: &LineChart) -> String {
    let pts = || {
        c.series
            .iter()
            .flat_map(|s| s.points.iter())
            .filter(|(x, y)| x.is_finite() && y.is_finite())
    };
    let fold =
        |f: fn(&(f64, f64)) -> f64, init: f64, op: fn(f64, f64) -> f64| pts().map(f).fold(init, op);
    let (mut x0, mut x1) = (
        fold(|p| p.0, f64::INFINITY, f64::min),
        fold(|p| p.0, f64::NEG_INFINITY, f64::max),
    );
    let (mut y0, mut y1) = (
        fold(|p| p.1, f64::INFINITY, f64::min),
        fold(|p| p.1, f64::NEG_INFINITY, f64::max),
    );
    if !(x0.is_finite() && x1.is_finite()) {
        (x0, x1) = (0.0, 1.0);
    }
    if !(y0.is_finite() && y1.is_finite()) {
        (y0, y1) = (0.0, 1.0);
    }
    if x1 <= x0 {
        x1 = x0 + 1.0;
    }
    if y1 <= y0 {
        let pad = if y0 == 0.0 { 1.0 } else { 0.05 * y0.abs() };
        y0 -= pad;
        y1 += pad;
    }
    let (left, top, w, h) = (80.0, 50.0, 600.0, 360.0);
    let legend_x = left + w + 20.0;
    let total_w = legend_x + 170.0;
    let total_h = top + h + 60.0;
    let px = |x: f64| left + (x - x0) / (x1 - x0) * w;
    let py = |y: f64| top + h - (y - y0) / (y1 - y0) * h;
    let mut s = String::new();
    let _ = writeln!(
        s,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{total_w:.0}" height="{total_h:.0}" viewBox="0 0 {total_w:.0} {total_h:.0}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(
        s,
        r#"<rect width="100%" height="100%" fill="white"/><text x="{left}" y="28" font-size="16">{}</text>"#,
        esc(&c.title)
    );
    let _ = writeln!(
        s,
        r#"<rect x="{left}" y="{top}" width="{w}" height="{h}" fill="none" stroke="black"/>"#
    );
    for t in nice_ticks(x0, x1, 8) {
        let x = px(t);
        let _ = writeln!(
            s,
            r##"<line x1="{x:.2}" y1="{top}" x2="{x:.2}" y2="{:.2}" stroke="#dddddd"/><text x="{x:.2}" y="{:.2}" text-anchor="middle">{}</text>"##,
            top + h,
            top + h + 18.0,
            fmt_tick(t)
        );
    }
    for t in nice_ticks(y0, y1, 6) {
        let y = py(t);
        let _ = writeln!(
            s,
            r##"<line x1="{left}" y1="{y:.2}" x2="{:.2}" y2="{y:.2}" stroke="#dddddd"/><text x="{:.2}" y="{:.2}" text-anchor="end">{}</text>"##,
            left + w,
            left - 6.0,
            y + 4.0,
            fmt_tick(t)
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{:.2}" y="{:.2}" text-anchor="middle">{} ({})</text>"#,
        left + w / 2.0,
        top + h + 40.0,
        esc(&c.x_label),
        esc(&c.x_unit)
    );
    let _ = writeln!(
        s,
        r#"<text transform="translate(22 {:.2}) rotate(-90)" text-anchor="middle">{} ({})</text>"#,
        top + h / 2.0,
        esc(&c.y_label),
        esc(&c.y_unit)
    );
    for (n, ser) in c.series.iter().enumerate() {
        let colour = SERIES[n % SERIES.len()];
        // After the colours run out the lines repeat them dashed, so every series stays distinguishable.
        let dash = match (n / SERIES.len()) % 3 {
            0 => "",
            1 => r#" stroke-dasharray="7 4""#,
            _ => r#" stroke-dasharray="2 3""#,
        };
        let mut d = String::new();
        let mut pen_down = false;
        for &(x, y) in &ser.points {
            if x.is_finite() && y.is_finite() {
                let _ = write!(
                    d,
                    "{}{:.2},{:.2} ",
                    if pen_down { "L" } else { "M" },
                    px(x),
                    py(y)
                );
                pen_down = true;
            } else {
                pen_down = false;
            }
        }
        let _ = writeln!(
            s,
            r#"<path d="{}" fill="none" stroke="{colour}" stroke-width="2"{dash}/>"#,
            d.trim_end()
        );
        let ly = top + 10.0 + 18.0 * n as f64;
        let _ = writeln!(
            s,
            r#"<line x1="{legend_x}" y1="{ly}" x2="{:.0}" y2="{ly}" stroke="{colour}" stroke-width="2"{dash}/><text x="{:.0}" y="{:.0}">{}</text>"#,
            legend_x + 24.0,
            legend_x + 30.0,
            ly + 4.0,
            esc(&ser.name)
        );
    }
    s.push_str("</svg>\n");
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::Array2;

    fn luminance(t: f64) -> f64 {
        let [r, g, b] = ramp_rgb(t);
        0.2126 * r as f64 + 0.7152 * g as f64 + 0.0722 * b as f64
    }

    #[test]
    fn ramp_luminance_rises_monotonically() {
        let mut prev = -1.0;
        for k in 0..=200 {
            let l = luminance(k as f64 / 200.0);
            assert!(l >= prev, "luminance falls at t = {}", k as f64 / 200.0);
            prev = l;
        }
        assert!(luminance(1.0) - luminance(0.0) > 150.0);
    }

    #[test]
    fn ticks_are_nice_and_cover_the_range() {
        assert_eq!(
            nice_ticks(0.0, 6.4, 8),
            vec![0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0]
        );
        let t = nice_ticks(0.17, 0.26, 5);
        assert!(t.len() >= 3 && t[0] >= 0.17 && *t.last().unwrap() <= 0.26);
    }

    #[test]
    fn heat_map_has_a_cell_per_value_title_and_unit() {
        let v = Array2::from_shape_fn((4, 3), |(i, j)| (i + j) as f64);
        let svg = heat_map(&HeatMap {
            values: v.view(),
            x_extent_m: 6.4,
            y_extent_m: 2.4,
            title: "Air <out> & about".into(),
            x_label: "length".into(),
            y_label: "width".into(),
            quantity: "velocity".into(),
            unit: "m/s".into(),
            range: None,
            marks: None,
        });
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        assert_eq!(svg.matches("<title>").count(), 12);
        assert!(svg.contains("Air &lt;out&gt; &amp; about"));
        assert!(svg.contains("velocity (m/s)"));
        assert!(svg.contains("length (m)"));
    }

    #[test]
    fn line_chart_draws_each_series_with_a_legend() {
        let svg = line_chart(&LineChart {
            title: "t".into(),
            x_label: "distance".into(),
            x_unit: "m".into(),
            y_label: "pressure".into(),
            y_unit: "Pa".into(),
            series: vec![
                Series {
                    name: "a".into(),
                    points: vec![(0.0, 1.0), (1.0, 2.0), (2.0, f64::NAN), (3.0, 1.5)],
                },
                Series {
                    name: "b".into(),
                    points: vec![(0.0, 3.0), (3.0, 0.0)],
                },
            ],
        });
        assert_eq!(svg.matches("<path").count(), 2);
        // the NaN breaks series a into two pieces
        let first = svg
            .split("<path d=\"")
            .nth(1)
            .unwrap()
            .split('"')
            .next()
            .unwrap();
        assert_eq!(first.matches('M').count(), 2, "{first}");
        assert!(svg.contains("pressure (Pa)") && svg.contains(">b</text>"));
    }
}
