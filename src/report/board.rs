//! What the board of a buying point looks like: the printed plan (units on every number, local clock times),
//! `plan.csv` and the Gantt picture of the plan from now (`plan.svg`, drawn by [`super::gantt`]).

use std::fmt::Write as _;

use chrono::{DateTime, FixedOffset};

use super::gantt::gantt_svg;
use super::load::CAUTIONS;
use super::output::OutputSet;
use crate::board::CurrentLoad;
use crate::season::drier::DryingResult;
use crate::season::sim::{duration_h, ScheduleRow, SeasonRun};
use crate::status::Percentiles;
use crate::units::UnitSystem;

/// The board as drawn and tabled: the plan with the loads already on dryers as its first rows (drawn from now).
pub struct BoardView<'a> {
    /// Title.
    pub name: &'a str,
    /// Now.
    pub now: DateTime<FixedOffset>,
    /// Loads on dryers.
    pub current: &'a [CurrentLoad],
    /// The plan for the yard.
    pub plan: &'a SeasonRun,
    /// Each planned load's range of hours to its stop rule, in the schedule's order.
    pub ranges: &'a [Percentiles],
    /// Ensemble members behind the ranges.
    pub members: usize,
}

fn hm(t: DateTime<FixedOffset>) -> String {
    t.format("%a %H:%M").to_string()
}

fn range_text(start: DateTime<FixedOffset>, p: &Percentiles) -> String {
    let at = |h: Option<f64>| {
        h.map(|h| hm(start + duration_h(h)))
            .unwrap_or("beyond".into())
    };
    format!("{}–{}", at(p.p10), at(p.p90))
}

/// The printed board.
pub fn board_text(v: &BoardView<'_>, units: UnitSystem) -> String {
    let mut s = String::new();
    let end = v.plan.end;
    let _ = writeln!(
        s,
        "{} — now {}, plan to {}",
        v.name,
        v.now.format("%a %Y-%m-%d %H:%M %:z"),
        end.format("%a %Y-%m-%d %H:%M")
    );
    let _ = writeln!(s, "On the dryers (replay from air-on, adjusted to the readings; P10–P90 over {} weather members):", v.members);
    for c in v.current {
        let id = &v.plan.dryer_ids[c.dryer_index];
        let done = c
            .finish
            .stop_h
            .map(|h| hm(v.now + duration_h(h)))
            .unwrap_or("not within the forecast".into());
        let _ = writeln!(
            s,
            "  {id:<8} {:<10} {:>10}, on air since {}, mean kernel now {:.1} % w.b. (replay {:.1}), done {done} ({}), fuel to go {}, free {}",
            c.load_id,
            units.mass(c.mass_kg),
            hm(c.on_air),
            c.mean_kernel_wb.1 * 100.0,
            c.mean_kernel_wb.0 * 100.0,
            range_text(v.now, &c.range),
            units.fuel(c.finish.fuel, "L"),
            hm(c.released)
        );
    }
    let _ = writeln!(
        s,
        "Plan for the yard (policy as chosen; wait limit {:.1} h):",
        v.plan.max_wait_h
    );
    let mut fuel = 0.0;
    for (r, p) in v.plan.schedule.iter().zip(v.ranges) {
        fuel += r.result.fuel_l;
        let late = if r.wait_h > v.plan.max_wait_h {
            "  PAST THE LIMIT"
        } else {
            ""
        };
        let _ = writeln!(
            s,
            "  {:<8} {:<10} {:>10} at {:4.1} % w.b., arrived {}, on {}, done {} ({}), waits {:4.1} h{late}, fuel {}",
            r.dryer_id,
            r.load_id,
            units.mass(r.mass_kg),
            r.moisture_in_pct,
            hm(r.arrival),
            hm(r.start),
            hm(r.finish),
            range_text(r.start, p),
            r.wait_h,
            units.fuel(r.result.fuel_l, "L")
        );
    }
    for u in &v.plan.never_started {
        let waited = crate::season::sim::hours_between(u.arrival, end);
        let _ = writeln!(
            s,
            "  (no dryer) {:<10} {:>10} arrived {}: not started within the plan, waiting {waited:.1} h by its end{}",
            u.load_id,
            units.mass(u.mass_kg),
            hm(u.arrival),
            if waited > v.plan.max_wait_h { "  PAST THE LIMIT" } else { "" }
        );
    }
    let now_fuel: f64 = v.current.iter().map(|c| c.finish.fuel).sum();
    let _ = writeln!(
        s,
        "Fuel: {} for the loads on the dryers, {} for the planned loads.",
        units.fuel(now_fuel, "L"),
        units.fuel(fuel, "L")
    );
    s.push_str("Re-run with new readings and arrivals to update the plan. ");
    s.push_str(CAUTIONS);
    s.push('\n');
    s
}

/// The plan with the current loads as rows drawn from now (for the picture and the CSV).
fn with_current(v: &BoardView<'_>) -> SeasonRun {
    let mut run = v.plan.clone();
    let mut rows: Vec<ScheduleRow> = v
        .current
        .iter()
        .map(|c| {
            let off = c.finish.stop_h.unwrap_or(c.finish.hours_run);
            ScheduleRow {
                load_index: usize::MAX,
                load_id: c.load_id.clone(),
                dryer_index: c.dryer_index,
                dryer_id: run.dryer_ids[c.dryer_index].clone(),
                arrival: c.on_air,
                start: v.now,
                finish: v.now + duration_h(off),
                released: c.released,
                wait_h: 0.0,
                mass_kg: c.mass_kg,
                moisture_in_pct: c.mean_kernel_wb.1 * 100.0,
                result: DryingResult {
                    hours: off,
                    fuel_l: c.finish.fuel,
                    kwh: c.finish.fan_kwh,
                    moisture_out_pct: c.finish.kernel_pct,
                    over_dried_kg: f64::NAN,
                    shrink_kg: f64::NAN,
                    finished: c.finish.stop_h.is_some(),
                    air_per_m3: None,
                },
            }
        })
        .collect();
    rows.append(&mut run.schedule);
    run.schedule = rows;
    run.start = v.now;
    run
}

/// `plan.csv` and `plan.svg`.
pub fn board_outputs(v: &BoardView<'_>) -> OutputSet {
    let run = with_current(v);
    let mut csv = String::from(
        "dryer,load,state,arrival,on_air,finish,finish_p10,finish_p90,released,wait_h,past_wait_limit,mass_kg,moisture_now_pct,fuel_l\n",
    );
    let t = |x: DateTime<FixedOffset>| x.to_rfc3339();
    let opt = |start: DateTime<FixedOffset>, h: Option<f64>| {
        h.map(|h| t(start + duration_h(h))).unwrap_or_default()
    };
    let k = v.current.len();
    for (i, r) in run.schedule.iter().enumerate() {
        let (state, on_air, p) = if i < k {
            ("on-dryer", v.current[i].on_air, &v.current[i].range)
        } else {
            ("planned", r.start, &v.ranges[i - k])
        };
        let _ = writeln!(
            csv,
            "{},{},{state},{},{},{},{},{},{},{:.3},{},{:.1},{:.3},{:.3}",
            r.dryer_id,
            r.load_id,
            t(r.arrival),
            t(on_air),
            t(r.finish),
            opt(r.start, p.p10),
            opt(r.start, p.p90),
            t(r.released),
            r.wait_h,
            r.wait_h > v.plan.max_wait_h,
            r.mass_kg,
            r.moisture_in_pct,
            r.result.fuel_l
        );
    }
    let mut set = OutputSet::new();
    set.add("plan.csv", csv);
    set.add(
        "plan.svg",
        gantt_svg(
            &run,
            &format!(
                "{} — plan from {}",
                v.name,
                v.now.format("%Y-%m-%d %H:%M %:z")
            ),
        ),
    );
    set
}
