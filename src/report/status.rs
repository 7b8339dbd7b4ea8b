//! What the status of a load on air and the forecast of its finish look like: the printed summary (units on every
//! number, local clock times), `status.json`, the ensemble's `members.csv`, the members' finishes as a picture
//! (`finish.svg`) and the HTML report (`report.html`), which leads with the hours and clock times to done.

use std::fmt::Write as _;

use chrono::{DateTime, FixedOffset};

use super::html::{Block, InputRecord, KeyFigure, Page, Table};
use super::load::{picture, CAUTIONS};
use super::output::OutputSet;
use super::svg::{line_chart, LineChart, Series};
use crate::drying::heater::StrategySpec;
use crate::status::{Finish, LoadStatus, Part, Percentiles, Place, StatusForecast};
use crate::units::UnitSystem;

/// Hours from now and the local clock time then.
fn when(now: DateTime<FixedOffset>, h: Option<f64>) -> String {
    match h {
        Some(h) => format!(
            "{h:5.1} h → {}",
            crate::load::clock_at(now, h).format("%a %Y-%m-%d %H:%M %:z")
        ),
        None => "not within the forecast's weather or the time limit".into(),
    }
}

fn range(now: DateTime<FixedOffset>, p: &Percentiles, members: usize) -> String {
    let one = |x: Option<f64>| match x {
        Some(h) => format!(
            "{h:.1} h ({})",
            crate::load::clock_at(now, h).format("%H:%M")
        ),
        None => "beyond the weather".into(),
    };
    format!(
        "P10 {}, P50 {}, P90 {}; {} of {members} members got there",
        one(p.p10),
        one(p.p50),
        one(p.p90),
        p.reached
    )
}

fn place_text(r: &crate::status::Reading, units: UnitSystem) -> String {
    let part = match r.part {
        Part::Kernel => "kernel",
        Part::Pod => "pod",
    };
    match r.place {
        Place::Composite => format!("{part}, composite"),
        Place::At {
            along,
            across,
            depth_m,
        } => format!(
            "{part}, {} deep at {along:.2}/{across:.2}",
            units.length(depth_m)
        ),
    }
}

/// A heater choice's label as a person reads it: the label (written by the command in SI heater language) with
/// its strategy rewritten in `units`.
fn heater_label(label: &str, heater: &StrategySpec, units: UnitSystem) -> String {
    label.replacen(&heater.to_string(), &heater.text_in(units), 1)
}

/// The printed summary.
pub fn status_text(name: &str, st: &LoadStatus, f: &StatusForecast, units: UnitSystem) -> String {
    let spec = &st.spec;
    let fmt = |t: DateTime<FixedOffset>| t.format("%a %Y-%m-%d %H:%M %:z").to_string();
    let on_h = crate::status::hours_between(spec.start, st.now);
    let unit = &f.deterministic_unit();
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{name} — now {} ({on_h:.1} h on air since {})",
        fmt(st.now),
        fmt(spec.start)
    );
    let _ = writeln!(
        s,
        "  {} on {}, heater {}; fuel burnt so far (replay) {}",
        match spec.fill {
            crate::load::FillSpec::NetMass(kg) => format!("{} net", units.mass(kg)),
            crate::load::FillSpec::Container => "as the container file fills".into(),
        },
        spec.container.name,
        spec.heater.spec.text_in(units),
        units.fuel(f.replay.fuel_so_far, unit)
    );
    let _ = writeln!(
        s,
        "Readings against the replay from the on-air time (observed weather), % w.b.:"
    );
    for (r, c) in st.readings.iter().zip(&f.replay.checks) {
        let _ = writeln!(
            s,
            "  {}  {:<32} {:<16} read {:5.2} ± {:.2}, replay {:5.2} (off {:+.2}{}), adjusted {:5.2}",
            r.time.format("%m-%d %H:%M"),
            place_text(r, units),
            if r.meter.is_empty() { "-" } else { &r.meter },
            c.reading_wb * 100.0,
            r.accuracy_wb * 100.0,
            c.replay_wb * 100.0,
            (c.replay_wb - c.reading_wb) * 100.0,
            if c.replay_within { ", within" } else { "" },
            c.adjusted_wb * 100.0
        );
    }
    let (rm, am) = f.replay.mean_kernel_wb;
    let _ = writeln!(
        s,
        "  mean kernel now: replay {:.2} % w.b., adjusted to the readings {:.2} % w.b.; {}",
        rm * 100.0,
        am * 100.0,
        if f.replay.left_outside_wb == 0.0 {
            "every reading agrees within its accuracy".to_string()
        } else {
            format!(
                "readings disagree with each other: one is still {:.2} points outside its accuracy",
                f.replay.left_outside_wb * 100.0
            )
        }
    );
    for (p, t, rh) in &f.replay.plenum {
        let _ = writeln!(
            s,
            "  plenum {}: read {}{}, replay {} at {:.0} % RH (compared only; the bed is not changed by it)",
            p.time.format("%m-%d %H:%M"),
            units.temp(p.t_c),
            p.rh.map(|r| format!(" at {:.0} % RH", r * 100.0)).unwrap_or_default(),
            units.temp(*t),
            rh * 100.0
        );
    }
    let target = spec.run.target_kernel_wb * 100.0;
    let d = &f.deterministic;
    let n = f.members.len();
    let _ = writeln!(
        s,
        "Forecast from now (observed weather to {}, then the forecast):",
        fmt(st.observed_end)
    );
    let _ = writeln!(
        s,
        "  mean kernel at {target:.1} % w.b.:  {}",
        when(st.now, d.mean_h)
    );
    if n > 0 {
        let _ = writeln!(s, "      ensemble: {}", range(st.now, &f.spread[0], n));
    }
    let _ = writeln!(
        s,
        "  {:.0} % of the load at {target:.1} % w.b.: {}",
        spec.run.fraction * 100.0,
        when(st.now, d.fraction_h)
    );
    if n > 0 {
        let _ = writeln!(s, "      ensemble: {}", range(st.now, &f.spread[1], n));
    }
    let fuel_range = |p: &Percentiles| {
        let v = |x: Option<f64>| x.map(|x| units.fuel(x, unit)).unwrap_or("-".into());
        format!("P10 {}, P50 {}, P90 {}", v(p.p10), v(p.p50), v(p.p90))
    };
    let _ = writeln!(
        s,
        "  fuel still to burn: {}{}",
        units.fuel(d.fuel, unit),
        if n > 0 {
            format!(" (ensemble {})", fuel_range(&f.spread[2]))
        } else {
            String::new()
        }
    );
    if !f.what_if.is_empty() {
        let _ = writeln!(s, "Heater for the remaining time (forecast as given):");
        for (wi, w) in &f.what_if {
            let label = heater_label(&wi.label, &wi.heater.spec, units);
            let _ = writeln!(
                s,
                "  {label:<16} mean {:<44} {:.0} %: {:<44} fuel {}",
                when(st.now, w.mean_h),
                spec.run.fraction * 100.0,
                when(st.now, w.fraction_h),
                units.fuel(w.fuel, unit)
            );
        }
    }
    let _ = writeln!(s, "Method: replay from the on-air time through the deep-bed model, bed adjusted to the readings with the smallest change that brings each within its accuracy, then run on; the ensemble perturbs the forecast's dry bulb and dew point (seeded, antithetic pairs).");
    s.push_str(CAUTIONS);
    s.push('\n');
    s
}

impl StatusForecast {
    /// The fuel's unit.
    pub fn deterministic_unit(&self) -> String {
        self.fuel_unit.clone()
    }
}

#[derive(serde::Serialize)]
struct StatusDoc<'a> {
    name: &'a str,
    now: DateTime<FixedOffset>,
    on_air: DateTime<FixedOffset>,
    readings: &'a [crate::status::Reading],
    checks: &'a [crate::status::ReadingCheck],
    mean_kernel_pct_replay: f64,
    mean_kernel_pct_adjusted: f64,
    left_outside_pct: f64,
    fuel_so_far: f64,
    fuel_unit: &'a str,
    forecast: &'a Finish,
    ensemble_members: usize,
    ensemble_mean_h: &'a Percentiles,
    ensemble_fraction_h: &'a Percentiles,
    ensemble_fuel: &'a Percentiles,
    what_if: Vec<(&'a str, &'a Finish)>,
    meaning: &'static str,
    cautions: &'static str,
}

/// `status.json`, `members.csv` (both SI) and `finish.svg` (the members' finishes, for people).
pub fn status_outputs(name: &str, st: &LoadStatus, f: &StatusForecast) -> OutputSet {
    let doc = StatusDoc {
        name,
        now: st.now,
        on_air: st.spec.start,
        readings: &st.readings,
        checks: &f.replay.checks,
        mean_kernel_pct_replay: f.replay.mean_kernel_wb.0 * 100.0,
        mean_kernel_pct_adjusted: f.replay.mean_kernel_wb.1 * 100.0,
        left_outside_pct: f.replay.left_outside_wb * 100.0,
        fuel_so_far: f.replay.fuel_so_far,
        fuel_unit: &f.fuel_unit,
        forecast: &f.deterministic,
        ensemble_members: f.members.len(),
        ensemble_mean_h: &f.spread[0],
        ensemble_fraction_h: &f.spread[1],
        ensemble_fuel: &f.spread[2],
        what_if: f.what_if.iter().map(|(l, w)| (l.label.as_str(), w)).collect(),
        meaning: "Moisture as wet-basis decimals; hours counted from `now`; fuel in fuel_unit, from now until both \
the mean and the fraction rule hold. Percentiles are linear between the members' order statistics; null where they \
fall on members that did not finish within the weather.",
        cautions: CAUTIONS,
    };
    let mut json = serde_json::to_string_pretty(&doc).expect("status serialises");
    json.push('\n');
    let mut csv =
        String::from("member,mean_target_h,fraction_target_h,fuel,fan_kwh,final_kernel_pct\n");
    let o = |x: Option<f64>| x.map(|x| format!("{x:.4}")).unwrap_or_default();
    for (i, m) in f.members.iter().enumerate() {
        let _ = writeln!(
            csv,
            "{i},{},{},{:.4},{:.4},{:.4}",
            o(m.mean_h),
            o(m.fraction_h),
            m.fuel,
            m.fan_kwh,
            m.kernel_pct
        );
    }
    let mut set = OutputSet::new();
    set.add("status.json", json);
    set.add("members.csv", csv);
    set.add("finish.svg", finish_svg(name, st, f));
    set
}

/// The share of members done by each hour from now: one stepped line for the mean target and one for the fraction
/// rule, on a clock axis with night shading, the finishes under the forecast as given as upright lines.
fn finish_svg(name: &str, st: &LoadStatus, f: &StatusForecast) -> String {
    let n = f.members.len();
    let steps = |h: &dyn Fn(&Finish) -> Option<f64>| -> Vec<(f64, f64)> {
        let mut done: Vec<f64> = f.members.iter().filter_map(h).collect();
        done.sort_by(f64::total_cmp);
        let mut pts = vec![(0.0, 0.0)];
        for (k, t) in done.iter().enumerate() {
            pts.push((*t, 100.0 * k as f64 / n as f64));
            pts.push((*t, 100.0 * (k + 1) as f64 / n as f64));
        }
        pts
    };
    let d = &f.deterministic;
    let target = st.spec.run.target_kernel_wb * 100.0;
    let frac = st.spec.run.fraction * 100.0;
    let mut series = vec![
        Series {
            name: format!("members with mean kernel at {target:.1} %"),
            points: steps(&|m: &Finish| m.mean_h),
        },
        Series {
            name: format!("members with {frac:.0} % of the load at {target:.1} %"),
            points: steps(&|m: &Finish| m.fraction_h),
        },
    ];
    let mark = |label: &str, h: Option<f64>| Series {
        name: format!("forecast as given: {label}"),
        points: h.map(|h| vec![(h, 0.0), (h, 100.0)]).unwrap_or_default(),
    };
    series.push(mark("mean at target", d.mean_h));
    series.push(mark(&format!("{frac:.0} % at target"), d.fraction_h));
    line_chart(&LineChart {
        title: format!("{name}: chance of being done, {n} weather members"),
        x_label: "time from now".into(),
        x_unit: "h".into(),
        y_label: "members done".into(),
        y_unit: "%".into(),
        series,
        limits: vec![],
        clock: Some(st.now),
    })
}

/// "17.0 h, Sat 21:59" or "not within the weather".
fn short_when(now: DateTime<FixedOffset>, h: Option<f64>) -> String {
    match h {
        Some(h) => format!(
            "{h:.1} h, {}",
            crate::load::clock_at(now, h).format("%a %H:%M")
        ),
        None => "not within the weather".into(),
    }
}

/// "P10 Sat 21:17, P50 Sat 21:59, P90 Sat 22:25 (6 of 6 members)".
fn short_range(now: DateTime<FixedOffset>, p: &Percentiles, members: usize) -> String {
    if members == 0 {
        return "no ensemble run".into();
    }
    let at = |x: Option<f64>| match x {
        Some(h) => crate::load::clock_at(now, h).format("%a %H:%M").to_string(),
        None => "beyond the weather".into(),
    };
    format!(
        "P10 {}, P50 {}, P90 {} ({} of {members} members got there)",
        at(p.p10),
        at(p.p50),
        at(p.p90),
        p.reached
    )
}

/// The HTML report of a load on air: when it will be done (hours and clock time to the mean and to the fraction
/// rule, with the ensemble's P10/P50/P90), fuel still to burn, the heater choices, then the members' picture, the
/// readings against the replay, the summary as printed, the inputs and the cautions.
pub fn status_page(
    (name, units): (&str, UnitSystem),
    st: &LoadStatus,
    f: &StatusForecast,
    set: &OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let spec = &st.spec;
    let (now, n, d) = (st.now, f.members.len(), &f.deterministic);
    let target = spec.run.target_kernel_wb * 100.0;
    let frac = spec.run.fraction * 100.0;
    let fuel = |x: f64| units.fuel(x, &f.fuel_unit);
    let p = &f.spread[2];
    let fuel_note = if n == 0 {
        "no ensemble run".to_string()
    } else {
        let v = |x: Option<f64>| x.map(fuel).unwrap_or("-".into());
        format!("P10 {}, P50 {}, P90 {}", v(p.p10), v(p.p50), v(p.p90))
    };
    let (rm, am) = f.replay.mean_kernel_wb;
    let mut notes = Vec::new();
    if f.replay.left_outside_wb > 0.0 {
        notes.push(format!(
            "The readings disagree with each other: one is still {:.2} points outside its accuracy after the adjustment.",
            f.replay.left_outside_wb * 100.0
        ));
    }
    if d.stop_h.is_none() {
        notes.push("The load does not reach its stop rule within the forecast's weather: forecast further ahead or read it again.".into());
    }
    Page {
        title: format!("{name} — status"),
        lead: format!(
            "A load on air: {} on {}, heater {}, on air since {} ({:.1} h); now {}. Replayed with the observed weather, adjusted to the operator's readings, run on with the forecast.",
            match spec.fill {
                crate::load::FillSpec::NetMass(kg) => units.mass(kg),
                crate::load::FillSpec::Container => "a load as the container file fills".into(),
            },
            spec.container.name,
            spec.heater.spec.text_in(units),
            spec.start.format("%a %Y-%m-%d %H:%M"),
            crate::status::hours_between(spec.start, now),
            now.format("%a %Y-%m-%d %H:%M %:z")
        ),
        answer: vec![
            KeyFigure::new(
                format!("mean kernel at {target:.1} % w.b."),
                short_when(now, d.mean_h),
                short_range(now, &f.spread[0], n),
            ),
            KeyFigure::new(
                format!("{frac:.0} % of the load at {target:.1} % w.b."),
                short_when(now, d.fraction_h),
                short_range(now, &f.spread[1], n),
            ),
            KeyFigure::new("fuel still to burn", fuel(d.fuel), fuel_note),
            KeyFigure::new(
                "mean kernel now",
                format!("{:.2} % w.b.", am * 100.0),
                format!("replay without the readings {:.2} % w.b.", rm * 100.0),
            ),
        ],
        notes,
        body: vec![
            Block::Heading("Heater for the remaining time".into()),
            Block::Table(what_if_table(st, f, units)),
            Block::Heading("Pictures".into()),
            picture(
                set,
                "finish.svg",
                "Share of the weather members done by each hour from now; the upright lines are the finishes under the forecast as given",
            ),
            Block::Heading("Readings".into()),
            Block::Table(readings_table(st, f, units)),
        ],
        summary: Some(printed),
        inputs,
        cautions: CAUTIONS.into(),
    }
}

fn what_if_table(st: &LoadStatus, f: &StatusForecast, units: UnitSystem) -> Table {
    let target = st.spec.run.target_kernel_wb * 100.0;
    Table {
        caption: "Each heater choice under the forecast as given".into(),
        head: vec![
            "heater".into(),
            format!("mean kernel at {target:.1} %"),
            format!(
                "{:.0} % of the load at {target:.1} %",
                st.spec.run.fraction * 100.0
            ),
            "fuel from now".into(),
        ],
        rows: f
            .what_if
            .iter()
            .map(|(wi, w)| {
                vec![
                    heater_label(&wi.label, &wi.heater.spec, units),
                    short_when(st.now, w.mean_h),
                    short_when(st.now, w.fraction_h),
                    units.fuel(w.fuel, &f.fuel_unit),
                ]
            })
            .collect(),
    }
}

fn readings_table(st: &LoadStatus, f: &StatusForecast, units: UnitSystem) -> Table {
    Table {
        caption: "Readings against the replay from the on-air time (moisture % w.b.)".into(),
        head: ["time", "place", "meter", "read", "replay", "adjusted"]
            .map(String::from)
            .to_vec(),
        rows: st
            .readings
            .iter()
            .zip(&f.replay.checks)
            .map(|(r, c)| {
                vec![
                    r.time.format("%a %H:%M").to_string(),
                    place_text(r, units),
                    if r.meter.is_empty() {
                        "-".into()
                    } else {
                        r.meter.clone()
                    },
                    format!("{:.2} ± {:.2}", c.reading_wb * 100.0, r.accuracy_wb * 100.0),
                    format!("{:.2}", c.replay_wb * 100.0),
                    format!("{:.2}", c.adjusted_wb * 100.0),
                ]
            })
            .collect(),
    }
}
