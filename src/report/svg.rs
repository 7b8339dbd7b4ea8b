//! Self-contained SVG charts: a heat map of a grid of values over a footprint (axes in metres or feet, a colour
//! scale bar carrying the unit and its least span, zone marks, the inlet and permeability blocks drawn on it) and a
//! line chart (x–y series with axes, units, limit lines, clock dates and night shading on time axes, and a legend
//! sized to its longest entry). Every mark and colour in a legend is in the picture, and no colour means two
//! things in one picture.
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

/// Width of `s` in pixels at font size `px`, estimated generously (0.62 em a character) so that layouts leave
/// room for the widest sans-serif faces; the browser test measures the real boxes.
pub fn text_w(s: &str, px: f64) -> f64 {
    s.chars().count() as f64 * px * 0.62
}

/// Colour of limit lines (caps, targets, wait limits): black, told apart by their dash pattern.
pub const LIMIT_COLOUR: &str = "#000000";
/// Dash patterns of limit lines, in order.
const LIMIT_DASH: [&str; 3] = ["8 4", "2 3", "12 3 2 3"];
/// Fill of night bands on time axes.
pub const NIGHT_FILL: &str = "#e3e7f1";
/// Night on clock-time axes: from this local hour …
pub const NIGHT_FROM_H: f64 = 19.0;
/// … to this local hour the next morning.
pub const NIGHT_TO_H: f64 = 7.0;

/// A colour range stretched to at least `min_span` about its middle, so a small spread is not painted across the
/// whole ramp; a degenerate or non-finite range becomes `min_span` wide (or 1 when `min_span` is 0).
pub fn colour_range(lo: f64, hi: f64, min_span: f64) -> (f64, f64) {
    let (lo, hi) = if lo.is_finite() && hi.is_finite() {
        (lo, hi)
    } else {
        (0.0, 0.0)
    };
    let span = min_span.max(if hi > lo { 0.0 } else { 1.0 });
    if hi - lo >= span {
        return (lo, hi);
    }
    let mid = 0.5 * (lo + hi);
    (mid - 0.5 * span, mid + 0.5 * span)
}

/// Cell marks on a heat map: −1 draws "D", +1 draws "W"; the texts say what each means and appear in the legend
/// only when the picture holds that mark.
#[derive(Debug, Clone)]
pub struct ZoneMarks<'a> {
    /// Marks, the shape of the values.
    pub marks: ArrayView2<'a, i8>,
    /// What "D" means.
    pub dry: String,
    /// What "W" means.
    pub wet: String,
}

/// An edge of a map: left and right are x = 0 and x = extent, bottom and top y = 0 and y = extent.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MapEdge {
    /// x = 0.
    Left,
    /// x = extent.
    Right,
    /// y = 0.
    Bottom,
    /// y = extent.
    Top,
}

/// Something drawn over a heat map, in metres from the map's origin.
#[derive(Debug, Clone, PartialEq)]
pub enum Overlay {
    /// The plenum inlet: a bar on one edge from `from_m` to `to_m` along it.
    Inlet {
        /// The edge holding the inlet.
        edge: MapEdge,
        /// Start along the edge (y on the left and right edges, x on the bottom and top), m.
        from_m: f64,
        /// End along the edge, m.
        to_m: f64,
    },
    /// A block of the bed with its own permeability: a dashed outline labelled with its multiplier.
    Block {
        /// Left, m.
        x0_m: f64,
        /// Right, m.
        x1_m: f64,
        /// Bottom, m.
        y0_m: f64,
        /// Top, m.
        y1_m: f64,
        /// Permeability multiplier.
        multiplier: f64,
    },
    /// A flow arrow from (`x_m`, `y_m`) to (`x_m + dx_m`, `y_m + dy_m`), with its head at the end.
    Arrow {
        /// Tail along the horizontal axis, m.
        x_m: f64,
        /// Tail along the vertical axis, m.
        y_m: f64,
        /// Length along the horizontal axis, m.
        dx_m: f64,
        /// Length along the vertical axis, m.
        dy_m: f64,
    },
    /// A baffle in the plenum under the floor: a solid line between its ends.
    Baffle {
        /// One end, horizontal, m.
        x0_m: f64,
        /// One end, vertical, m.
        y0_m: f64,
        /// Other end, horizontal, m.
        x1_m: f64,
        /// Other end, vertical, m.
        y1_m: f64,
    },
    /// A part of the floor that passes no air: an outline crossed corner to corner.
    BlockedFloor {
        /// Left, m.
        x0_m: f64,
        /// Right, m.
        x1_m: f64,
        /// Bottom, m.
        y0_m: f64,
        /// Top, m.
        y1_m: f64,
    },
}

/// Colour of the inlet bar (not on the ramp).
const INLET_COLOUR: &str = "#c0262d";

/// A heat map request.
#[derive(Debug, Clone)]
pub struct HeatMap<'a> {
    /// Values [nx, ny]: i along the horizontal axis, j along the vertical axis (j = 0 at the bottom).
    pub values: ArrayView2<'a, f64>,
    /// Horizontal extent, m.
    pub x_extent_m: f64,
    /// Vertical extent, m.
    pub y_extent_m: f64,
    /// Units of the axes (metres or feet).
    pub units: crate::units::UnitSystem,
    /// Title.
    pub title: String,
    /// Horizontal axis label (without unit; the length unit is added).
    pub x_label: String,
    /// Vertical axis label (without unit).
    pub y_label: String,
    /// Quantity name on the colour bar.
    pub quantity: String,
    /// Unit on the colour bar (the values are already in it).
    pub unit: String,
    /// Fixed colour range (one scale across pictures that are compared); `None` = data min to max.
    pub range: Option<(f64, f64)>,
    /// The least span of the colour scale, in the values' unit (stated under the picture).
    pub min_span: f64,
    /// Optional over-dried / still-wet marks.
    pub marks: Option<ZoneMarks<'a>>,
    /// Inlet and permeability blocks.
    pub overlays: Vec<Overlay>,
    /// Notes under the picture (air direction, what the view shows).
    pub notes: Vec<String>,
}

/// The (lo, hi) colour range a heat map uses: its fixed range or the data's, stretched to its minimum span.
pub fn heat_range(m: &HeatMap<'_>) -> (f64, f64) {
    let (lo, hi) = m
        .range
        .unwrap_or_else(|| finite_range(m.values.iter().copied()));
    colour_range(lo, hi, m.min_span)
}

/// Lowest and highest finite value (∞, −∞ when none).
pub fn finite_range(v: impl Iterator<Item = f64>) -> (f64, f64) {
    v.filter(|x| x.is_finite())
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        })
}

/// Render a heat map as an SVG document.
pub fn heat_map(m: &HeatMap<'_>) -> String {
    let (nx, ny) = m.values.dim();
    let (lo, hi) = heat_range(m);
    let lu = m.units.length_unit();
    let (xe, ye) = (
        m.units.length_value(m.x_extent_m),
        m.units.length_value(m.y_extent_m),
    );
    let legend = heat_legend(m, lo, hi);
    let plot_w = 640.0;
    let plot_h = (plot_w * m.y_extent_m / m.x_extent_m).clamp(200.0, 640.0);
    let (left, top) = (70.0, 50.0);
    let bar_x = left + plot_w + 30.0;
    let bar_label = format!("{} ({})", m.quantity, m.unit);
    let legend_top = top + plot_h + 58.0;
    let total_h = legend_top + 16.0 * legend.len() as f64 + 6.0;
    let total_w = [
        bar_x + 90.0,
        bar_x + text_w(&bar_label, 12.0) + 10.0,
        left + text_w(&m.title, 16.0) + 10.0,
    ]
    .into_iter()
    .chain(legend.iter().map(|l| left + text_w(l, 11.0) + 10.0))
    .fold(0.0, f64::max);
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
    if let Some(z) = &m.marks {
        let size = (0.8 * cw.min(ch)).clamp(7.0, 14.0);
        for ((i, j), &mk) in z.marks.indexed_iter() {
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
    }
    let frame = Frame {
        left,
        top,
        w: plot_w,
        h: plot_h,
        sx: plot_w / m.x_extent_m,
        sy: plot_h / m.y_extent_m,
    };
    for o in &m.overlays {
        overlay_svg(&mut s, &frame, o);
    }
    let _ = writeln!(
        s,
        r#"<rect x="{left}" y="{top}" width="{plot_w}" height="{plot_h:.2}" fill="none" stroke="black"/>"#
    );
    for t in nice_ticks(0.0, xe, 8) {
        let x = left + t / xe * plot_w;
        let y = top + plot_h;
        let _ = writeln!(
            s,
            r#"<line x1="{x:.2}" y1="{y:.2}" x2="{x:.2}" y2="{:.2}" stroke="black"/><text x="{x:.2}" y="{:.2}" text-anchor="middle">{}</text>"#,
            y + 5.0,
            y + 18.0,
            fmt_tick(t)
        );
    }
    for t in nice_ticks(0.0, ye, 4) {
        let y = top + plot_h - t / ye * plot_h;
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
        r#"<text x="{:.2}" y="{:.2}" text-anchor="middle">{} ({lu})</text>"#,
        left + plot_w / 2.0,
        top + plot_h + 38.0,
        esc(&m.x_label)
    );
    let _ = writeln!(
        s,
        r#"<text transform="translate(20 {:.2}) rotate(-90)" text-anchor="middle">{} ({lu})</text>"#,
        top + plot_h / 2.0,
        esc(&m.y_label)
    );
    colour_bar(&mut s, bar_x, top, plot_h, lo, hi);
    let _ = writeln!(
        s,
        r#"<text x="{bar_x:.2}" y="{:.2}">{}</text>"#,
        top - 10.0,
        esc(&bar_label)
    );
    for (k, l) in legend.iter().enumerate() {
        let _ = writeln!(
            s,
            r#"<text x="{left}" y="{:.2}" font-size="11">{}</text>"#,
            legend_top + 16.0 * k as f64,
            esc(l)
        );
    }
    s.push_str("</svg>\n");
    s
}

/// The lines under a heat map: the colour scale and its least span, the marks present, the overlays, the notes.
fn heat_legend(m: &HeatMap<'_>, lo: f64, hi: f64) -> Vec<String> {
    let mut l = vec![format!(
        "colour scale {} to {} {}{}; at least {} {} wide, so a small spread shows as a small change",
        fmt_tick(lo),
        fmt_tick(hi),
        m.unit,
        if m.range.is_some() {
            " (the same scale as the pictures it is compared with)"
        } else {
            ""
        },
        fmt_tick(m.min_span),
        m.unit
    )];
    if let Some(z) = &m.marks {
        if z.marks.iter().any(|&k| k == -1) {
            l.push(format!("D: {}", z.dry));
        }
        if z.marks.iter().any(|&k| k == 1) {
            l.push(format!("W: {}", z.wet));
        }
    }
    if m.overlays
        .iter()
        .any(|o| matches!(o, Overlay::Inlet { .. }))
    {
        l.push("red bar on the edge: the plenum inlet, where the fan's air comes in".into());
    }
    if m.overlays
        .iter()
        .any(|o| matches!(o, Overlay::Block { .. }))
    {
        l.push("dashed outline: a block of the bed with its own permeability (× the bed's)".into());
    }
    if m.overlays
        .iter()
        .any(|o| matches!(o, Overlay::Arrow { .. }))
    {
        l.push("arrows: the direction of the air, their length in proportion to its speed".into());
    }
    if m.overlays
        .iter()
        .any(|o| matches!(o, Overlay::Baffle { .. }))
    {
        l.push("black line: a baffle standing in the plenum under the floor".into());
    }
    if m.overlays
        .iter()
        .any(|o| matches!(o, Overlay::BlockedFloor { .. }))
    {
        l.push("crossed outline: floor blocked, no air from the plenum below".into());
    }
    l.extend(m.notes.iter().cloned());
    l
}

/// Where a heat map's plot sits, and pixels per metre.
struct Frame {
    left: f64,
    top: f64,
    w: f64,
    h: f64,
    sx: f64,
    sy: f64,
}

fn overlay_svg(s: &mut String, f: &Frame, o: &Overlay) {
    match *o {
        Overlay::Baffle {
            x0_m,
            y0_m,
            x1_m,
            y1_m,
        } => {
            let (xa, ya) = (f.left + x0_m * f.sx, f.top + f.h - y0_m * f.sy);
            let (xb, yb) = (f.left + x1_m * f.sx, f.top + f.h - y1_m * f.sy);
            let _ = writeln!(
                s,
                r#"<line x1="{xa:.2}" y1="{ya:.2}" x2="{xb:.2}" y2="{yb:.2}" stroke="white" stroke-width="6"/><line x1="{xa:.2}" y1="{ya:.2}" x2="{xb:.2}" y2="{yb:.2}" stroke="black" stroke-width="3"/>"#
            );
        }
        Overlay::BlockedFloor {
            x0_m,
            x1_m,
            y0_m,
            y1_m,
        } => {
            let (xa, xb) = (f.left + x0_m * f.sx, f.left + x1_m * f.sx);
            let (ya, yb) = (f.top + f.h - y1_m * f.sy, f.top + f.h - y0_m * f.sy);
            let _ = writeln!(
                s,
                r#"<path d="M{xa:.2},{ya:.2}H{xb:.2}V{yb:.2}H{xa:.2}ZL{xb:.2},{yb:.2}M{xb:.2},{ya:.2}L{xa:.2},{yb:.2}" fill="none" stroke="white" stroke-width="3"/><path d="M{xa:.2},{ya:.2}H{xb:.2}V{yb:.2}H{xa:.2}ZL{xb:.2},{yb:.2}M{xb:.2},{ya:.2}L{xa:.2},{yb:.2}" fill="none" stroke="black" stroke-width="1.2"/>"#
            );
        }
        Overlay::Inlet { edge, from_m, to_m } => {
            let (x1, y1, x2, y2) = match edge {
                MapEdge::Left | MapEdge::Right => {
                    let x = if edge == MapEdge::Right {
                        f.left + f.w - 3.0
                    } else {
                        f.left + 3.0
                    };
                    let ya = (f.top + f.h - from_m * f.sy).clamp(f.top, f.top + f.h);
                    let yb = (f.top + f.h - to_m * f.sy).clamp(f.top, f.top + f.h);
                    (x, ya, x, yb)
                }
                MapEdge::Bottom | MapEdge::Top => {
                    let y = if edge == MapEdge::Top {
                        f.top + 3.0
                    } else {
                        f.top + f.h - 3.0
                    };
                    let xa = (f.left + from_m * f.sx).clamp(f.left, f.left + f.w);
                    let xb = (f.left + to_m * f.sx).clamp(f.left, f.left + f.w);
                    (xa, y, xb, y)
                }
            };
            let _ = writeln!(
                s,
                r#"<line x1="{x1:.2}" y1="{y1:.2}" x2="{x2:.2}" y2="{y2:.2}" stroke="{INLET_COLOUR}" stroke-width="6"/>"#
            );
        }
        Overlay::Block {
            x0_m,
            x1_m,
            y0_m,
            y1_m,
            multiplier,
        } => {
            let (xa, xb) = (f.left + x0_m * f.sx, f.left + x1_m * f.sx);
            let (ya, yb) = (f.top + f.h - y1_m * f.sy, f.top + f.h - y0_m * f.sy);
            let _ = writeln!(
                s,
                r#"<rect x="{xa:.2}" y="{ya:.2}" width="{:.2}" height="{:.2}" fill="none" stroke="white" stroke-width="3"/><rect x="{xa:.2}" y="{ya:.2}" width="{:.2}" height="{:.2}" fill="none" stroke="black" stroke-width="1.5" stroke-dasharray="6 3"/>"#,
                xb - xa,
                yb - ya,
                xb - xa,
                yb - ya
            );
            let label = format!("×{}", fmt_tick(multiplier));
            if text_w(&label, 11.0) + 6.0 < xb - xa && yb - ya > 16.0 {
                let _ = writeln!(
                    s,
                    r#"<text x="{:.2}" y="{:.2}" font-size="11" stroke="white" stroke-width="2.5" paint-order="stroke">{label}</text>"#,
                    xa + 4.0,
                    ya + 13.0
                );
            }
        }
        Overlay::Arrow {
            x_m,
            y_m,
            dx_m,
            dy_m,
        } => arrow_svg(s, f, (x_m, y_m), (dx_m, dy_m)),
    }
}

/// A black arrow with a white halo, so it reads on every colour of the ramp; arrows shorter than 2 px are left out.
fn arrow_svg(s: &mut String, f: &Frame, tail: (f64, f64), d: (f64, f64)) {
    let (x0, y0) = (f.left + tail.0 * f.sx, f.top + f.h - tail.1 * f.sy);
    let (dx, dy) = (d.0 * f.sx, -d.1 * f.sy);
    let len = dx.hypot(dy);
    if len.is_nan() || len < 2.0 {
        return;
    }
    let (x1, y1) = (x0 + dx, y0 + dy);
    let (ux, uy) = (dx / len, dy / len);
    let head = (0.35 * len).min(6.0);
    let (bx, by) = (x1 - head * ux, y1 - head * uy);
    let (px, py) = (-uy * 0.5 * head, ux * 0.5 * head);
    let path = format!(
        "M{x0:.2},{y0:.2} L{x1:.2},{y1:.2} M{:.2},{:.2} L{x1:.2},{y1:.2} L{:.2},{:.2}",
        bx + px,
        by + py,
        bx - px,
        by - py
    );
    let _ = writeln!(
        s,
        r#"<path d="{path}" fill="none" stroke="white" stroke-width="3" stroke-linecap="round"/><path d="{path}" fill="none" stroke="black" stroke-width="1.2" stroke-linecap="round"/>"#
    );
}

fn colour_bar(s: &mut String, bar_x: f64, top: f64, plot_h: f64, lo: f64, hi: f64) {
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
}

/// One line of a chart.
#[derive(Debug, Clone)]
pub struct Series {
    /// Legend label.
    pub name: String,
    /// Points (x, y); non-finite points break the line.
    pub points: Vec<(f64, f64)>,
}

/// A horizontal limit line (a cap, a target), black and dashed, named in the legend.
#[derive(Debug, Clone, PartialEq)]
pub struct Limit {
    /// Legend label, with the value.
    pub name: String,
    /// The value, in the chart's y unit.
    pub value: f64,
}

/// A line chart request.
#[derive(Debug, Clone, Default)]
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
    /// The lines. The first is the chart's main line: drawn last (on top) and wider.
    pub series: Vec<Series>,
    /// Limit lines.
    pub limits: Vec<Limit>,
    /// When x is hours since an instant: that instant, for a second row of clock dates and night shading.
    pub clock: Option<chrono::DateTime<chrono::FixedOffset>>,
}

/// Series colours (eight distinct hues, none of them black, the limit lines' colour).
const PALETTE: [&str; 8] = [
    "#1f4e9c", "#d95f02", "#1b9e77", "#7570b3", "#a6761d", "#e7298a", "#66a61e", "#17becf",
];

/// The colour and dash of series `n`: colours first; past eight, the colours again dashed.
pub fn series_style(n: usize) -> (&'static str, &'static str) {
    let dash = match (n / PALETTE.len()) % 3 {
        0 => "",
        1 => r#" stroke-dasharray="7 4""#,
        _ => r#" stroke-dasharray="2 3""#,
    };
    (PALETTE[n % PALETTE.len()], dash)
}

/// The x and y ranges of a chart: data (and limits) with 4 % room above and below, so no line runs on the frame.
fn chart_ranges(c: &LineChart) -> ((f64, f64), (f64, f64)) {
    let pts = || c.series.iter().flat_map(|s| s.points.iter());
    let (mut x0, mut x1) = finite_range(pts().filter(|p| p.1.is_finite()).map(|p| p.0));
    let (mut y0, mut y1) = finite_range(
        pts()
            .filter(|p| p.0.is_finite())
            .map(|p| p.1)
            .chain(c.limits.iter().map(|l| l.value)),
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
    let pad = 0.04 * (y1 - y0);
    ((x0, x1), (y0 - pad, y1 + pad))
}

/// The legend entries: (label, colour, dash, kind) with kind 0 line, 1 limit, 2 night band.
fn chart_legend(c: &LineChart, drawn: &[usize]) -> Vec<(String, String, String, u8)> {
    let mut l: Vec<(String, String, String, u8)> = drawn
        .iter()
        .map(|&n| {
            let (col, dash) = series_style(n);
            (c.series[n].name.clone(), col.into(), dash.into(), 0)
        })
        .collect();
    for (k, lim) in c.limits.iter().enumerate() {
        let dash = format!(
            r#" stroke-dasharray="{}""#,
            LIMIT_DASH[k % LIMIT_DASH.len()]
        );
        l.push((lim.name.clone(), LIMIT_COLOUR.into(), dash, 1));
    }
    if c.clock.is_some() {
        l.push((
            format!(
                "night ({:02.0}:00 to {:02.0}:00 clock time)",
                NIGHT_FROM_H, NIGHT_TO_H
            ),
            NIGHT_FILL.into(),
            String::new(),
            2,
        ));
    }
    l
}

/// Render a line chart as an SVG document.
pub fn line_chart(c: &LineChart) -> String {
    let ((x0, x1), (y0, y1)) = chart_ranges(c);
    // Series without a single finite point are left out, of the picture and of the legend.
    let drawn: Vec<usize> = (0..c.series.len())
        .filter(|&n| {
            c.series[n]
                .points
                .iter()
                .any(|p| p.0.is_finite() && p.1.is_finite())
        })
        .collect();
    let legend = chart_legend(c, &drawn);
    let (left, top, w, h): (f64, f64, f64, f64) = (80.0, 50.0, 600.0, 360.0);
    let legend_x = left + w + 20.0;
    let axis_label_y = top + h + if c.clock.is_some() { 58.0 } else { 40.0 };
    let x_title = format!("{} ({})", c.x_label, c.x_unit);
    let total_w = legend
        .iter()
        .map(|e| legend_x + 32.0 + text_w(&e.0, 12.0))
        .chain([
            left + text_w(&c.title, 16.0) + 10.0,
            left + w / 2.0 + text_w(&x_title, 12.0) / 2.0 + 10.0,
            left + w + 20.0,
        ])
        .fold(0.0, f64::max);
    let total_h = (axis_label_y + 16.0).max(top + 20.0 + 18.0 * legend.len() as f64);
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
    if let Some(t0) = c.clock {
        for (a, b) in night_bands(t0, x0, x1) {
            let _ = writeln!(
                s,
                r#"<rect x="{:.2}" y="{top}" width="{:.2}" height="{h}" fill="{NIGHT_FILL}"/>"#,
                px(a),
                px(b) - px(a)
            );
        }
    }
    for t in nice_ticks(x0, x1, 8) {
        let x = px(t);
        let _ = writeln!(
            s,
            r##"<line x1="{x:.2}" y1="{top}" x2="{x:.2}" y2="{:.2}" stroke="#d4d4d4"/><text x="{x:.2}" y="{:.2}" text-anchor="middle">{}</text>"##,
            top + h,
            top + h + 16.0,
            fmt_tick(t)
        );
    }
    if let Some(t0) = c.clock {
        clock_row(&mut s, t0, x0, x1, &px, top + h + 34.0);
    }
    for t in nice_ticks(y0, y1, 6) {
        let y = py(t);
        let _ = writeln!(
            s,
            r##"<line x1="{left}" y1="{y:.2}" x2="{:.2}" y2="{y:.2}" stroke="#d4d4d4"/><text x="{:.2}" y="{:.2}" text-anchor="end">{}</text>"##,
            left + w,
            left - 6.0,
            y + 4.0,
            fmt_tick(t)
        );
    }
    let _ = writeln!(
        s,
        r#"<text x="{:.2}" y="{axis_label_y:.2}" text-anchor="middle">{}</text>"#,
        left + w / 2.0,
        esc(&x_title)
    );
    let _ = writeln!(
        s,
        r#"<text transform="translate(22 {:.2}) rotate(-90)" text-anchor="middle">{} ({})</text>"#,
        top + h / 2.0,
        esc(&c.y_label),
        esc(&c.y_unit)
    );
    for (k, lim) in c.limits.iter().enumerate() {
        let y = py(lim.value);
        let _ = writeln!(
            s,
            r#"<line x1="{left}" y1="{y:.2}" x2="{:.2}" y2="{y:.2}" stroke="{LIMIT_COLOUR}" stroke-width="1.5" stroke-dasharray="{}"/>"#,
            left + w,
            LIMIT_DASH[k % LIMIT_DASH.len()]
        );
    }
    // The main line last, so it lies on top.
    for &n in drawn.iter().rev() {
        let (colour, dash) = series_style(n);
        let width = if n == 0 { 3.0 } else { 1.8 };
        let d = path_d(&c.series[n].points, &px, &py);
        let _ = writeln!(
            s,
            r#"<path d="{d}" fill="none" stroke="{colour}" stroke-width="{width}" stroke-linejoin="round"{dash}/>"#
        );
    }
    let _ = writeln!(
        s,
        r#"<rect x="{left}" y="{top}" width="{w}" height="{h}" fill="none" stroke="black"/>"#
    );
    for (k, (name, colour, dash, kind)) in legend.iter().enumerate() {
        let ly = top + 10.0 + 18.0 * k as f64;
        let mark = match kind {
            2 => format!(
                r#"<rect x="{legend_x}" y="{:.0}" width="24" height="12" fill="{colour}"/>"#,
                ly - 6.0
            ),
            _ => format!(
                r#"<line x1="{legend_x}" y1="{ly}" x2="{:.0}" y2="{ly}" stroke="{colour}" stroke-width="{}"{dash}/>"#,
                legend_x + 24.0,
                if *kind == 0 && k == 0 { 3.0 } else { 2.0 }
            ),
        };
        let _ = writeln!(
            s,
            r#"{mark}<text x="{:.0}" y="{:.0}">{}</text>"#,
            legend_x + 30.0,
            ly + 4.0,
            esc(name)
        );
    }
    s.push_str("</svg>\n");
    s
}

fn path_d(points: &[(f64, f64)], px: &dyn Fn(f64) -> f64, py: &dyn Fn(f64) -> f64) -> String {
    let mut d = String::new();
    let mut pen_down = false;
    for &(x, y) in points {
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
    d.trim_end().to_string()
}

/// Hours since `t0` of local clock hour `hour` on the day `day` days after `t0`'s date.
fn hours_to_clock(t0: chrono::DateTime<chrono::FixedOffset>, day: i64, hour: f64) -> f64 {
    use chrono::Timelike;
    let now_h = t0.hour() as f64 + t0.minute() as f64 / 60.0 + t0.second() as f64 / 3600.0;
    day as f64 * 24.0 + hour - now_h
}

/// Night intervals (hours since `t0`) that meet [x0, x1], clipped to it.
pub fn night_bands(t0: chrono::DateTime<chrono::FixedOffset>, x0: f64, x1: f64) -> Vec<(f64, f64)> {
    let mut v = Vec::new();
    let first = (x0 / 24.0).floor() as i64 - 1;
    let last = (x1 / 24.0).ceil() as i64 + 1;
    for day in first..=last {
        let a = hours_to_clock(t0, day, NIGHT_FROM_H);
        let b = hours_to_clock(t0, day + 1, NIGHT_TO_H);
        let (a, b) = (a.max(x0), b.min(x1));
        if b > a {
            v.push((a, b));
        }
    }
    v
}

/// Clock dates under the hour ticks: a tick and the date at each local midnight, thinned to fit.
fn clock_row(
    s: &mut String,
    t0: chrono::DateTime<chrono::FixedOffset>,
    x0: f64,
    x1: f64,
    px: &dyn Fn(f64) -> f64,
    y: f64,
) {
    let label_w = text_w("Wed 30 Sep", 11.0) + 8.0;
    let days = ((x1 - x0) / 24.0).ceil().max(1.0);
    let day_px = (px(x0 + 24.0) - px(x0)).max(1.0);
    let step = (label_w / day_px).ceil().max(1.0) as i64;
    let first = (x0 / 24.0).floor() as i64;
    let mut day = first;
    while (day - first) as f64 <= days + 1.0 {
        let h = hours_to_clock(t0, day, 0.0);
        if h >= x0 && h <= x1 && (day - first) % step == 0 {
            let x = px(h);
            let date = t0.date_naive() + chrono::Duration::days(day);
            let _ = writeln!(
                s,
                r#"<line x1="{x:.2}" y1="{:.2}" x2="{x:.2}" y2="{:.2}" stroke="black"/><text x="{x:.2}" y="{y:.2}" font-size="11" text-anchor="middle">{}</text>"#,
                y - 14.0,
                y - 9.0,
                date.format("%a %d %b")
            );
        }
        day += 1;
    }
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
            units: crate::units::UnitSystem::Si,
            range: None,
            min_span: 0.0,
            marks: None,
            overlays: vec![],
            notes: vec![],
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
            ..LineChart::default()
        });
        assert_eq!(svg.matches("<path").count(), 2);
        // the NaN breaks series a into two pieces
        // The main line (a) is drawn last, on top.
        let first = svg
            .split("<path d=\"")
            .nth(2)
            .unwrap()
            .split('"')
            .next()
            .unwrap();
        assert_eq!(first.matches('M').count(), 2, "{first}");
        assert!(svg.contains("pressure (Pa)") && svg.contains(">b</text>"));
    }

    #[test]
    fn small_spreads_get_the_least_span() {
        assert_eq!(colour_range(10.0, 10.8, 4.0), (8.4, 12.4));
        assert_eq!(colour_range(8.0, 14.0, 4.0), (8.0, 14.0));
        assert_eq!(colour_range(5.0, 5.0, 0.0), (4.5, 5.5));
    }

    #[test]
    fn night_bands_follow_the_clock() {
        let t0 = chrono::DateTime::parse_from_rfc3339("2026-09-15T14:00:00-04:00").unwrap();
        // 19:00 is 5 h after the start, 07:00 the next day 17 h after.
        assert_eq!(night_bands(t0, 0.0, 30.0), vec![(5.0, 17.0), (29.0, 30.0)]);
    }

    #[test]
    fn legend_names_only_what_is_drawn_and_limits_widen_the_range() {
        let svg = line_chart(&LineChart {
            series: vec![
                Series {
                    name: "drawn".into(),
                    points: vec![(0.0, 1.0), (1.0, 2.0)],
                },
                Series {
                    name: "empty".into(),
                    points: vec![(0.0, f64::NAN)],
                },
            ],
            limits: vec![Limit {
                name: "cap 35".into(),
                value: 35.0,
            }],
            ..LineChart::default()
        });
        assert!(svg.contains(">drawn</text>") && !svg.contains("empty"));
        // The y axis reaches the limit: ticks run past 30 though the data stop at 2.
        assert!(
            svg.contains(">cap 35</text>") && svg.contains(">30</text>"),
            "{svg}"
        );
    }
}
