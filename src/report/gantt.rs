//! SVG pictures of a season: a Gantt chart of every dryer (drying bars, turnaround in grey, loads that did not
//! reach target in orange) and a queue chart (loads waiting and dryers occupied over time), dates on the axis.
//! Self-contained plain SVG 1.1 text; no I/O (the CLI writes it). Our own layout, no reference.

use chrono::{DateTime, Duration, FixedOffset};

use crate::season::sim::{hours_between, SeasonRun};

const W: f64 = 1200.0;
const LEFT: f64 = 90.0;
const RIGHT: f64 = 20.0;
const TOP: f64 = 40.0;

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

struct Axis {
    t0: DateTime<FixedOffset>,
    span_h: f64,
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
        Axis {
            t0: run.start,
            span_h: hours_between(run.start, last).max(1.0),
        }
    }
    fn x(&self, t: DateTime<FixedOffset>) -> f64 {
        LEFT + (W - LEFT - RIGHT) * hours_between(self.t0, t) / self.span_h
    }
    /// Day ticks with labels, at most ~14 labels.
    fn ticks(&self, y_top: f64, y_bottom: f64) -> String {
        let days = (self.span_h / 24.0).ceil() as i64;
        let step = ((days as f64) / 14.0).ceil().max(1.0) as i64;
        let mut s = String::new();
        let mut d = 0;
        while d <= days {
            let t = self.t0 + Duration::days(d);
            let x = self.x(t);
            s.push_str(&format!(
                "<line x1=\"{x:.1}\" y1=\"{y_top:.1}\" x2=\"{x:.1}\" y2=\"{y_bottom:.1}\" stroke=\"#e4e4e4\"/>\
                 <text x=\"{x:.1}\" y=\"{:.1}\" font-size=\"11\" text-anchor=\"middle\">{}</text>\n",
                y_bottom + 14.0,
                t.format("%b %d")
            ));
            d += step;
        }
        s
    }
}

fn header(h: f64, title: &str) -> String {
    format!(
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{W}\" height=\"{h:.0}\" viewBox=\"0 0 {W} {h:.0}\" \
         font-family=\"sans-serif\">\n<rect width=\"100%\" height=\"100%\" fill=\"white\"/>\n\
         <text x=\"{LEFT}\" y=\"22\" font-size=\"15\" font-weight=\"bold\">{}</text>\n",
        esc(title)
    )
}

/// A Gantt chart of `run`: one row per dryer.
pub fn gantt_svg(run: &SeasonRun, title: &str) -> String {
    let row_h = 16.0;
    let n = run.dryer_ids.len();
    let plot_h = row_h * n as f64;
    let h = TOP + plot_h + 60.0;
    let ax = Axis::new(run);
    let mut s = header(h, title);
    s.push_str(&ax.ticks(TOP, TOP + plot_h));
    for (i, id) in run.dryer_ids.iter().enumerate() {
        let y = TOP + row_h * i as f64;
        s.push_str(&format!(
            "<text x=\"{:.1}\" y=\"{:.1}\" font-size=\"11\" text-anchor=\"end\">{}</text>\n",
            LEFT - 6.0,
            y + row_h * 0.75,
            esc(id)
        ));
    }
    for r in &run.schedule {
        let y = TOP + row_h * r.dryer_index as f64 + 2.0;
        let (a, b, c) = (ax.x(r.start), ax.x(r.finish), ax.x(r.released));
        let fill = if r.result.finished {
            "#3b72c4"
        } else {
            "#e08a2c"
        };
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
                "<rect x=\"{b:.2}\" y=\"{y:.1}\" width=\"{:.2}\" height=\"{:.1}\" fill=\"#bdbdbd\"/>\n",
                c - b,
                row_h - 4.0
            ));
        }
    }
    let ly = TOP + plot_h + 34.0;
    for (k, (label, col)) in [
        ("drying (to target)", "#3b72c4"),
        ("drying (target not reached)", "#e08a2c"),
        ("turnaround", "#bdbdbd"),
    ]
    .iter()
    .enumerate()
    {
        let x = LEFT + 230.0 * k as f64;
        s.push_str(&format!(
            "<rect x=\"{x:.0}\" y=\"{:.0}\" width=\"12\" height=\"10\" fill=\"{col}\"/>\
             <text x=\"{:.0}\" y=\"{:.0}\" font-size=\"11\">{label}</text>\n",
            ly,
            x + 16.0,
            ly + 9.0
        ));
    }
    s.push_str("</svg>\n");
    s
}

/// A step chart of loads waiting (blue) and dryers occupied (green) over the season.
pub fn queue_svg(run: &SeasonRun, title: &str) -> String {
    let plot_h = 260.0;
    let h = TOP + plot_h + 60.0;
    let ax = Axis::new(run);
    let ymax = run
        .log
        .iter()
        .map(|s| s.queue.max(s.busy))
        .max()
        .unwrap_or(1)
        .max(run.dryer_ids.len())
        .max(1) as f64;
    let y = |v: f64| TOP + plot_h - plot_h * v / ymax;
    let mut s = header(h, title);
    s.push_str(&ax.ticks(TOP, TOP + plot_h));
    // Horizontal grid with counts.
    let step = (ymax / 6.0).ceil().max(1.0);
    let mut v = 0.0;
    while v <= ymax + 1e-9 {
        s.push_str(&format!(
            "<line x1=\"{LEFT}\" y1=\"{0:.1}\" x2=\"{1:.1}\" y2=\"{0:.1}\" stroke=\"#eeeeee\"/>\
             <text x=\"{2:.1}\" y=\"{3:.1}\" font-size=\"11\" text-anchor=\"end\">{v:.0}</text>\n",
            y(v),
            W - RIGHT,
            LEFT - 6.0,
            y(v) + 4.0
        ));
        v += step;
    }
    s.push_str(&format!(
        "<text x=\"14\" y=\"{:.0}\" font-size=\"11\" transform=\"rotate(-90 14 {:.0})\" text-anchor=\"middle\">loads \
         waiting / dryers occupied (count)</text>\n",
        TOP + plot_h / 2.0,
        TOP + plot_h / 2.0
    ));
    let end_t = run
        .schedule
        .iter()
        .map(|r| r.released)
        .max()
        .unwrap_or(run.end)
        .max(run.end);
    for (pick, col) in [(0usize, "#3b72c4"), (1, "#3c9a4a")] {
        let mut d = String::new();
        let mut prev_y: Option<f64> = None;
        for smp in &run.log {
            let x = ax.x(smp.time);
            let val = if pick == 0 { smp.queue } else { smp.busy } as f64;
            match prev_y {
                None => d.push_str(&format!("M{x:.2},{:.2}", y(val))),
                Some(_) => d.push_str(&format!(" H{x:.2} V{:.2}", y(val))),
            }
            prev_y = Some(y(val));
        }
        if prev_y.is_some() {
            d.push_str(&format!(" H{:.2}", ax.x(end_t)));
            s.push_str(&format!(
                "<path d=\"{d}\" fill=\"none\" stroke=\"{col}\" stroke-width=\"1.2\"/>\n"
            ));
        }
    }
    let ly = TOP + plot_h + 34.0;
    s.push_str(&format!(
        "<rect x=\"{LEFT}\" y=\"{ly:.0}\" width=\"12\" height=\"3\" fill=\"#3b72c4\"/>\
         <text x=\"{:.0}\" y=\"{:.0}\" font-size=\"11\">loads waiting</text>\
         <rect x=\"{:.0}\" y=\"{ly:.0}\" width=\"12\" height=\"3\" fill=\"#3c9a4a\"/>\
         <text x=\"{:.0}\" y=\"{:.0}\" font-size=\"11\">dryers occupied (of {})</text>\n",
        LEFT + 16.0,
        ly + 5.0,
        LEFT + 160.0,
        LEFT + 176.0,
        ly + 5.0,
        run.dryer_ids.len()
    ));
    s.push_str("</svg>\n");
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
        for part in svg.split("<rect x=\"").skip(1) {
            let x: f64 = part.split('"').next().unwrap().parse().unwrap();
            assert!((0.0..=W).contains(&x), "{x}");
        }
    }

    #[test]
    fn queue_chart_draws_two_step_lines() {
        let svg = queue_svg(&run(), "q");
        assert_eq!(svg.matches("<path d=\"M").count(), 2);
        assert!(svg.contains("loads waiting"));
    }
}
