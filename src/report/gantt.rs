//! SVG pictures of a season: a Gantt chart with a row per dryer (drying bars labelled with the load where the label
//! fits, turnaround in grey, loads that did not reach target in orange) and a queue chart (loads waiting and
//! dryers occupied over time, and below it each load's wait against the wait limit), both on one dated time axis
//! with nights shaded. The drawing is as wide as the season needs to stay readable (at least 1.5 px an hour, so a
//! day-long load is a labelled bar); the HTML report shows it in a zoomable frame. Plain SVG 1.1 text; no I/O.

use chrono::{DateTime, Duration, FixedOffset};

use super::svg::{night_bands, text_w, LIMIT_COLOUR, NIGHT_FILL, NIGHT_FROM_H, NIGHT_TO_H};
use crate::season::sim::{hours_between, SeasonRun};

const LEFT: f64 = 90.0;
const RIGHT: f64 = 30.0;
const TOP: f64 = 40.0;
/// Least drawing width of the time axis, px.
const MIN_PLOT_W: f64 = 1100.0;
/// Least pixels per hour, so a day-long load is wide enough for its label.
const MIN_PX_PER_H: f64 = 1.5;
/// Widest drawing, px (a season of many months is drawn at fewer pixels an hour).
const MAX_PLOT_W: f64 = 9000.0;

const DRYING: &str = "#1f4e9c";
const NOT_DRY: &str = "#d95f02";
const TURNAROUND: &str = "#bdbdbd";
const WAITING: &str = "#7570b3";
const OCCUPIED: &str = "#1b9e77";
const WAIT_DOT: &str = "#a6761d";

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

struct Axis {
    t0: DateTime<FixedOffset>,
    span_h: f64,
    plot_w: f64,
}

impl Axis {
    fn new(run: &SeasonRun) -> Axis {
        let last = run
            .schedule
            .iter()
            .map(|r| r.released)
            .max()
            .unwrap_or(run.end)
            .max(run.end);
        let span_h = hours_between(run.start, last).max(1.0);
        Axis {
            t0: run.start,
            span_h,
            plot_w: (span_h * MIN_PX_PER_H).clamp(MIN_PLOT_W, MAX_PLOT_W),
        }
    }
    fn width(&self) -> f64 {
        LEFT + self.plot_w + RIGHT
    }
    fn xh(&self, h: f64) -> f64 {
        LEFT + self.plot_w * h / self.span_h
    }
    fn x(&self, t: DateTime<FixedOffset>) -> f64 {
        self.xh(hours_between(self.t0, t))
    }
    /// Night bands between `y_top` and `y_bottom`.
    fn nights(&self, y_top: f64, y_bottom: f64) -> String {
        night_bands(self.t0, 0.0, self.span_h)
            .into_iter()
            .map(|(a, b)| {
                format!(
                    "<rect x=\"{:.1}\" y=\"{y_top:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"{NIGHT_FILL}\"/>\n",
                    self.xh(a),
                    self.xh(b) - self.xh(a),
                    y_bottom - y_top
                )
            })
            .collect()
    }
    /// Day lines, with dates where they fit.
    fn ticks(&self, y_top: f64, y_bottom: f64) -> String {
        let days = (self.span_h / 24.0).ceil() as i64;
        let day_px = self.plot_w * 24.0 / self.span_h;
        let step = ((text_w("Sep 30", 11.0) + 10.0) / day_px).ceil().max(1.0) as i64;
        let mut s = String::new();
        // Only the days inside the axis: past its end a line and its date would fall beyond the picture (a short
        // span, as a board's, leaves up to a day of it there).
        for d in (0..=days).take_while(|d| *d as f64 * 24.0 <= self.span_h + 1e-9) {
            let t = self.t0 + Duration::days(d);
            let x = self.x(t);
            s.push_str(&format!(
                "<line x1=\"{x:.1}\" y1=\"{y_top:.1}\" x2=\"{x:.1}\" y2=\"{y_bottom:.1}\" stroke=\"#d8d8d8\"/>\n"
            ));
            let label = t.format("%b %d").to_string();
            if d % step == 0 && x + 0.5 * text_w(&label, 11.0) <= self.width() {
                s.push_str(&format!(
                    "<text x=\"{x:.1}\" y=\"{:.1}\" font-size=\"11\" text-anchor=\"middle\">{}</text>\n",
                    y_bottom + 14.0,
                    label
                ));
            }
        }
        s
    }
}

fn header(w: f64, h: f64, title: &str) -> String {
    let w = w.max(LEFT + text_w(title, 15.0) + 10.0);
    format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{w:.0}\" height=\"{h:.0}\" viewBox=\"0 0 {w:.0} {h:.0}\" \
         font-family=\"sans-serif\">\n<rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n\
         <text x=\"{LEFT}\" y=\"22\" font-size=\"15\" font-weight=\"bold\">{}</text>\n",
        esc(title)
    )
}

/// A legend row: (swatch kind, colour, label) with kind 0 a block, 1 a line, 2 a dashed line, 3 a dot; entries
/// laid out from `x` by their text widths.
fn legend_row(entries: &[(u8, &str, String)], x: f64, y: f64) -> String {
    let mut s = String::new();
    let mut x = x;
    for (kind, col, label) in entries {
        s.push_str(&match kind {
            0 => format!("<rect x=\"{x:.0}\" y=\"{:.0}\" width=\"14\" height=\"10\" fill=\"{col}\"/>", y - 9.0),
            1 => format!(
                "<line x1=\"{x:.0}\" y1=\"{:.0}\" x2=\"{:.0}\" y2=\"{:.0}\" stroke=\"{col}\" stroke-width=\"2\"/>",
                y - 4.0,
                x + 14.0,
                y - 4.0
            ),
            2 => format!(
                "<line x1=\"{x:.0}\" y1=\"{:.0}\" x2=\"{:.0}\" y2=\"{:.0}\" stroke=\"{col}\" stroke-width=\"1.5\" stroke-dasharray=\"5 3\"/>",
                y - 4.0,
                x + 14.0,
                y - 4.0
            ),
            _ => format!("<circle cx=\"{:.0}\" cy=\"{:.0}\" r=\"3\" fill=\"{col}\"/>", x + 7.0, y - 4.0),
        });
        s.push_str(&format!(
            "<text x=\"{:.0}\" y=\"{y:.0}\" font-size=\"11\">{}</text>\n",
            x + 18.0,
            esc(label)
        ));
        x += 18.0 + text_w(label, 11.0) + 24.0;
    }
    s
}

fn legend_width(entries: &[(u8, &str, String)]) -> f64 {
    entries
        .iter()
        .map(|e| 18.0 + text_w(&e.2, 11.0) + 24.0)
        .sum()
}

fn night_label() -> String {
    format!("night ({NIGHT_FROM_H:02.0}:00 to {NIGHT_TO_H:02.0}:00)")
}

/// A Gantt chart of `run`: one row per dryer.
pub fn gantt_svg(run: &SeasonRun, title: &str) -> String {
    let row_h = 22.0;
    let n = run.dryer_ids.len();
    let plot_h = row_h * n as f64;
    let ax = Axis::new(run);
    let mut legend: Vec<(u8, &str, String)> = vec![(0, DRYING, "drying (to target)".into())];
    if run.schedule.iter().any(|r| !r.result.finished) {
        legend.push((0, NOT_DRY, "drying (target not reached)".into()));
    }
    if run.schedule.iter().any(|r| r.released > r.finish) {
        legend.push((0, TURNAROUND, "turnaround".into()));
    }
    legend.push((0, NIGHT_FILL, night_label()));
    let w = ax.width().max(LEFT + legend_width(&legend));
    let h = TOP + plot_h + 56.0;
    let mut s = header(w, h, title);
    s.push_str(&ax.nights(TOP, TOP + plot_h));
    s.push_str(&ax.ticks(TOP, TOP + plot_h));
    for (i, id) in run.dryer_ids.iter().enumerate() {
        let y = TOP + row_h * i as f64;
        s.push_str(&format!(
            "<line x1=\"{LEFT}\" y1=\"{y:.1}\" x2=\"{:.1}\" y2=\"{y:.1}\" stroke=\"#eeeeee\"/>\
             <text x=\"{:.1}\" y=\"{:.1}\" font-size=\"11\" text-anchor=\"end\">{}</text>\n",
            LEFT + ax.plot_w,
            LEFT - 6.0,
            y + row_h * 0.7,
            esc(&fit_label(id, LEFT - 10.0))
        ));
    }
    for r in &run.schedule {
        let y = TOP + row_h * r.dryer_index as f64 + 2.0;
        let (a, b, c) = (ax.x(r.start), ax.x(r.finish), ax.x(r.released));
        let fill = if r.result.finished { DRYING } else { NOT_DRY };
        s.push_str(&format!(
            "<rect x=\"{a:.2}\" y=\"{y:.1}\" width=\"{:.2}\" height=\"{:.1}\" fill=\"{fill}\">\
             <title>{} on {}: {} to {}, waited {:.1} h, {:.1} → {:.1} % w.b.</title></rect>\n",
            (b - a).max(0.5),
            row_h - 4.0,
            esc(&r.load_id),
            esc(&r.dryer_id),
            r.start.format("%b %d %H:%M"),
            r.finish.format("%b %d %H:%M"),
            r.wait_h,
            r.moisture_in_pct,
            r.result.moisture_out_pct,
        ));
        if c > b {
            s.push_str(&format!(
                "<rect x=\"{b:.2}\" y=\"{y:.1}\" width=\"{:.2}\" height=\"{:.1}\" fill=\"{TURNAROUND}\"/>\n",
                c - b,
                row_h - 4.0
            ));
        }
        if text_w(&r.load_id, 10.0) + 4.0 <= b - a {
            s.push_str(&format!(
                "<text x=\"{:.2}\" y=\"{:.1}\" font-size=\"10\" fill=\"white\">{}</text>\n",
                a + 2.0,
                y + row_h * 0.6,
                esc(&r.load_id)
            ));
        }
    }
    s.push_str(&legend_row(&legend, LEFT, TOP + plot_h + 44.0));
    s.push_str("</svg>\n");
    s
}

/// `id` shortened with "…" to fit `width` px at 11 px.
fn fit_label(id: &str, width: f64) -> String {
    if text_w(id, 11.0) <= width {
        return id.to_string();
    }
    let keep = ((width / (11.0 * 0.62)) as usize).saturating_sub(1);
    format!("{}…", id.chars().take(keep).collect::<String>())
}

/// Loads waiting and dryers occupied over the season (upper panel) and each started load's wait at its arrival
/// against the wait limit (lower panel).
pub fn queue_svg(run: &SeasonRun, title: &str) -> String {
    let (plot_h, gap, wait_h) = (240.0, 50.0, 160.0);
    let ax = Axis::new(run);
    let top2 = TOP + plot_h + gap;
    let legend: Vec<(u8, &str, String)> = vec![
        (1, WAITING, "loads waiting".into()),
        (1, OCCUPIED, "dryers occupied".into()),
        (
            2,
            LIMIT_COLOUR,
            format!("all {} dryers", run.dryer_ids.len()),
        ),
        (3, WAIT_DOT, "a load's wait, at its arrival".into()),
        (
            2,
            LIMIT_COLOUR,
            format!("wait limit {:.0} h", run.max_wait_h),
        ),
        (0, NIGHT_FILL, night_label()),
    ];
    let w = ax.width().max(LEFT + legend_width(&legend));
    let h = top2 + wait_h + 56.0;
    let mut s = header(w, h, title);
    s.push_str(&ax.nights(TOP, TOP + plot_h));
    s.push_str(&ax.nights(top2, top2 + wait_h));
    s.push_str(&ax.ticks(TOP, TOP + plot_h));
    s.push_str(&ax.ticks(top2, top2 + wait_h));
    s.push_str(&count_panel(run, &ax, plot_h));
    s.push_str(&wait_panel(run, &ax, top2, wait_h));
    s.push_str(&legend_row(&legend, LEFT, top2 + wait_h + 44.0));
    s.push_str("</svg>\n");
    s
}

/// Horizontal grid lines with labels from 0 to `max` in about six steps; `y(v)` places them.
fn y_grid(ax: &Axis, max: f64, y: &dyn Fn(f64) -> f64) -> String {
    let mut s = String::new();
    let step = super::svg::nice_ticks(0.0, max, 5);
    for v in step {
        s.push_str(&format!(
            "<line x1=\"{LEFT}\" y1=\"{0:.1}\" x2=\"{1:.1}\" y2=\"{0:.1}\" stroke=\"#e4e4e4\"/>\
             <text x=\"{2:.1}\" y=\"{3:.1}\" font-size=\"11\" text-anchor=\"end\">{v}</text>\n",
            y(v),
            LEFT + ax.plot_w,
            LEFT - 6.0,
            y(v) + 4.0
        ));
    }
    s
}

fn rotated_label(y_mid: f64, text: &str) -> String {
    format!(
        "<text x=\"14\" y=\"{y_mid:.0}\" font-size=\"11\" transform=\"rotate(-90 14 {y_mid:.0})\" \
         text-anchor=\"middle\">{}</text>\n",
        esc(text)
    )
}

fn count_panel(run: &SeasonRun, ax: &Axis, plot_h: f64) -> String {
    let n = run.dryer_ids.len();
    let ymax = run
        .log
        .iter()
        .map(|s| s.queue.max(s.busy))
        .max()
        .unwrap_or(1)
        .max(n)
        .max(1) as f64
        * 1.08;
    let y = |v: f64| TOP + plot_h - plot_h * v / ymax;
    let mut s = y_grid(ax, ymax, &y);
    s.push_str(&rotated_label(TOP + plot_h / 2.0, "count"));
    // The limit first, so the lines drawn after it stay visible where they meet it.
    s.push_str(&format!(
        "<line x1=\"{LEFT}\" y1=\"{0:.1}\" x2=\"{1:.1}\" y2=\"{0:.1}\" stroke=\"{LIMIT_COLOUR}\" stroke-dasharray=\"5 3\"/>\n",
        y(n as f64),
        LEFT + ax.plot_w
    ));
    for (pick, col) in [(0usize, WAITING), (1, OCCUPIED)] {
        let mut d = String::new();
        for (k, smp) in run.log.iter().enumerate() {
            let x = ax.x(smp.time);
            let val = if pick == 0 { smp.queue } else { smp.busy } as f64;
            if k == 0 {
                d.push_str(&format!("M{x:.2},{:.2}", y(val)));
            } else {
                d.push_str(&format!(" H{x:.2} V{:.2}", y(val)));
            }
        }
        if !d.is_empty() {
            d.push_str(&format!(" H{:.2}", LEFT + ax.plot_w));
            s.push_str(&format!(
                "<path d=\"{d}\" fill=\"none\" stroke=\"{col}\" stroke-width=\"1.4\"/>\n"
            ));
        }
    }
    s.push_str(&format!(
        "<rect x=\"{LEFT}\" y=\"{TOP}\" width=\"{:.1}\" height=\"{plot_h}\" fill=\"none\" stroke=\"black\"/>\n",
        ax.plot_w
    ));
    s
}

fn wait_panel(run: &SeasonRun, ax: &Axis, top: f64, h: f64) -> String {
    let longest = run
        .schedule
        .iter()
        .map(|r| r.wait_h)
        .fold(run.max_wait_h, f64::max);
    let ymax = (longest * 1.08).max(1.0);
    let y = |v: f64| top + h - h * v / ymax;
    let mut s = y_grid(ax, ymax, &y);
    s.push_str(&rotated_label(top + h / 2.0, "wait (h)"));
    for r in &run.schedule {
        s.push_str(&format!(
            "<circle cx=\"{:.1}\" cy=\"{:.1}\" r=\"2.2\" fill=\"{WAIT_DOT}\"/>\n",
            ax.x(r.arrival),
            y(r.wait_h)
        ));
    }
    s.push_str(&format!(
        "<line x1=\"{LEFT}\" y1=\"{0:.1}\" x2=\"{1:.1}\" y2=\"{0:.1}\" stroke=\"{LIMIT_COLOUR}\" stroke-width=\"1.5\" stroke-dasharray=\"5 3\"/>\n",
        y(run.max_wait_h),
        LEFT + ax.plot_w
    ));
    s.push_str(&format!(
        "<rect x=\"{LEFT}\" y=\"{top}\" width=\"{:.1}\" height=\"{h}\" fill=\"none\" stroke=\"black\"/>\n",
        ax.plot_w
    ));
    s
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
    use crate::season::drier::FixedTimeDrier;
    use crate::season::scenario::BuyingPoint;
    use crate::season::sim::simulate;

    fn run() -> SeasonRun {
        let text = include_str!("../../models/buying-points/wrenfield.json");
        let bp = BuyingPoint::from_json(std::path::Path::new("w.json"), text).unwrap();
        let p = crate::season::arrivals::ArrivalParams::new(bp.season.start, bp.season.days, 40);
        let loads = crate::season::arrivals::generate(&p, 2).unwrap();
        let d = FixedTimeDrier::new(10.0, |l, _| l.moisture_pct - 10.0);
        let pred = MoistureRatePredictor {
            target_pct: 10.0,
            rate_pct_per_h: 1.0,
        };
        simulate(
            &bp,
            &loads,
            &d,
            DispatchPolicy::Fcfs,
            &pred,
            bp.season.end(),
        )
        .unwrap()
    }

    #[test]
    fn gantt_has_one_bar_per_load_inside_the_plot_and_dated_axis() {
        let r = run();
        let svg = gantt_svg(&r, "T <&>");
        assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        assert!(svg.contains("T &lt;&amp;&gt;"));
        assert_eq!(svg.matches("<title>").count(), r.schedule.len());
        assert!(svg.contains(&r.start.format("%b %d").to_string()));
        // Every bar starts inside the drawing.
        let w = Axis::new(&r).width();
        for part in svg.split("<rect x=\"").skip(1) {
            let x: f64 = part.split('"').next().unwrap().parse().unwrap();
            assert!((0.0..=w).contains(&x), "{x}");
        }
    }

    #[test]
    fn queue_chart_draws_two_step_lines() {
        let r = run();
        let svg = queue_svg(&r, "q");
        assert_eq!(svg.matches("<path d=\"M").count(), 2);
        assert!(svg.contains("loads waiting"));
        // One dot per started load, and the wait limit named.
        assert_eq!(svg.matches("<circle cx").count(), r.schedule.len() + 1);
        assert!(svg.contains(&format!("wait limit {:.0} h", r.max_wait_h)));
    }
}
