//! What the status of a load on air and the forecast of its finish look like: the printed summary (units on every
//! number, local clock times), `status.json` and the ensemble's `members.csv`.

use std::fmt::Write as _;

use chrono::{DateTime, FixedOffset};

use super::load::CAUTIONS;
use super::output::OutputSet;
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

fn place_text(r: &crate::status::Reading) -> String {
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
        } => format!("{part}, {depth_m:.2} m deep at {along:.2}/{across:.2}"),
    }
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
        spec.heater.spec,
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
            place_text(r),
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
        for (label, w) in &f.what_if {
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

/// `status.json`, `members.csv`.
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
        what_if: f.what_if.iter().map(|(l, w)| (l.as_str(), w)).collect(),
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
    set
}
