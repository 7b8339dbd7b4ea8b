//! What the board of a buying point looks like: the printed plan (units on every number, local clock times),
//! `plan.csv`, the Gantt picture of the plan from now (`plan.svg`, drawn by [`super::gantt`]) and the HTML report
//! (`report.html`), which leads with the plan: which load goes on which dryer when, finishes with ranges, waits
//! against the limit and fuel.

use std::fmt::Write as _;

use chrono::{DateTime, FixedOffset};

use super::gantt::gantt_svg;
use super::html::{Block, InputRecord, KeyFigure, Page, Table};
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

/// Loads past the wait limit: planned loads that wait longer, and loads the plan does not start that have waited
/// longer by its end.
fn past_limit(v: &BoardView<'_>) -> Vec<String> {
    let lim = v.plan.max_wait_h;
    let planned = v.plan.schedule.iter().filter(|r| r.wait_h > lim).map(|r| {
        format!(
            "load {} waits {:.1} h for {}",
            r.load_id, r.wait_h, r.dryer_id
        )
    });
    let unstarted = v.plan.never_started.iter().filter_map(|u| {
        let w = crate::season::sim::hours_between(u.arrival, v.plan.end);
        (w > lim).then(|| {
            format!(
                "load {} is not started within the plan and has waited {w:.1} h by its end",
                u.load_id
            )
        })
    });
    planned.chain(unstarted).collect()
}

/// The HTML report of the board: the plan first (next hook-ups, when the dryers come free, waits against the limit,
/// fuel), then the Gantt picture of the plan from now, the tables of the loads on the dryers and of the plan, the
/// board as printed, the inputs and the cautions.
pub fn board_page(
    v: &BoardView<'_>,
    units: UnitSystem,
    set: &OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let plan = &v.plan.schedule;
    let late = past_limit(v);
    let now_fuel: f64 = v.current.iter().map(|c| c.finish.fuel).sum();
    let plan_fuel: f64 = plan.iter().map(|r| r.result.fuel_l).sum();
    let next = plan.first().map_or_else(
        || {
            (
                "nothing planned".to_string(),
                "the yard is empty or no dryer comes free".to_string(),
            )
        },
        |r| {
            (
                format!("{} on {} at {}", r.load_id, r.dryer_id, hm(r.start)),
                format!(
                    "{} hook-ups in the plan, {} loads not started",
                    plan.len(),
                    v.plan.never_started.len()
                ),
            )
        },
    );
    let free = v.current.iter().min_by_key(|c| c.released).map_or_else(
        || ("no load on a dryer".to_string(), String::new()),
        |c| {
            (
                format!("{} at {}", v.plan.dryer_ids[c.dryer_index], hm(c.released)),
                format!("load {} done {}", c.load_id, range_text(v.now, &c.range)),
            )
        },
    );
    let mut notes: Vec<String> = late
        .iter()
        .map(|l| format!("Past the {:.1} h wait limit: {l}.", v.plan.max_wait_h))
        .collect();
    notes.push("Re-run with new readings and arrivals to update the plan.".into());
    Page {
        title: format!("{} — board", v.name),
        lead: format!(
            "The buying point now ({}) and its plan to {}: {} loads on dryers forecast from their readings, {} loads in the yard dispatched; finish ranges P10–P90 over {} weather members.",
            v.now.format("%a %Y-%m-%d %H:%M %:z"),
            v.plan.end.format("%a %Y-%m-%d %H:%M"),
            v.current.len(),
            plan.len() + v.plan.never_started.len(),
            v.members
        ),
        answer: vec![
            KeyFigure::new("next hook-up", next.0, next.1),
            KeyFigure::new("first dryer free", free.0, free.1),
            KeyFigure::new(
                format!("waits past the {:.1} h limit", v.plan.max_wait_h),
                late.len().to_string(),
                format!(
                    "longest planned wait {:.1} h",
                    plan.iter().map(|r| r.wait_h).fold(0.0, f64::max)
                ),
            ),
            KeyFigure::new(
                "fuel",
                units.fuel(now_fuel + plan_fuel, "L"),
                format!(
                    "{} on the dryers, {} planned",
                    units.fuel(now_fuel, "L"),
                    units.fuel(plan_fuel, "L")
                ),
            ),
        ],
        notes,
        body: vec![
            Block::Heading("The plan".into()),
            Block::Table(plan_table(v, units)),
            Block::Picture {
                svg: set.text("plan.svg").to_string(),
                caption: "Each dryer from now: the loads on air and the planned hook-ups (also written as plan.svg)"
                    .into(),
                zoom: true,
            },
            Block::Heading("On the dryers".into()),
            Block::Table(current_table(v, units)),
        ],
        summary: Some(printed),
        inputs,
        cautions: CAUTIONS.into(),
    }
}

fn current_table(v: &BoardView<'_>, units: UnitSystem) -> Table {
    Table {
        caption: "Loads on the dryers: replay from air-on, adjusted to the readings".into(),
        head: [
            "dryer",
            "load",
            "net mass",
            "on air since",
            "mean kernel now",
            "done",
            "P10–P90",
            "fuel to go",
            "dryer free",
        ]
        .map(String::from)
        .to_vec(),
        rows: v
            .current
            .iter()
            .map(|c| {
                vec![
                    v.plan.dryer_ids[c.dryer_index].clone(),
                    c.load_id.clone(),
                    units.mass(c.mass_kg),
                    hm(c.on_air),
                    format!("{:.1} % w.b.", c.mean_kernel_wb.1 * 100.0),
                    c.finish
                        .stop_h
                        .map(|h| hm(v.now + duration_h(h)))
                        .unwrap_or("not within the forecast".into()),
                    range_text(v.now, &c.range),
                    units.fuel(c.finish.fuel, "L"),
                    hm(c.released),
                ]
            })
            .collect(),
    }
}

fn plan_table(v: &BoardView<'_>, units: UnitSystem) -> Table {
    let lim = v.plan.max_wait_h;
    let mut rows: Vec<Vec<String>> = v
        .plan
        .schedule
        .iter()
        .zip(v.ranges)
        .map(|(r, p)| {
            vec![
                r.dryer_id.clone(),
                r.load_id.clone(),
                units.mass(r.mass_kg),
                format!("{:.1} % w.b.", r.moisture_in_pct),
                hm(r.arrival),
                hm(r.start),
                hm(r.finish),
                range_text(r.start, p),
                format!(
                    "{:.1} h{}",
                    r.wait_h,
                    if r.wait_h > lim {
                        " (past the limit)"
                    } else {
                        ""
                    }
                ),
                units.fuel(r.result.fuel_l, "L"),
            ]
        })
        .collect();
    rows.extend(v.plan.never_started.iter().map(|u| {
        let w = crate::season::sim::hours_between(u.arrival, v.plan.end);
        vec![
            "(no dryer)".into(),
            u.load_id.clone(),
            units.mass(u.mass_kg),
            String::new(),
            hm(u.arrival),
            "not within the plan".into(),
            String::new(),
            String::new(),
            format!(
                "{w:.1} h by the plan's end{}",
                if w > lim { " (past the limit)" } else { "" }
            ),
            String::new(),
        ]
    }));
    Table {
        caption: format!(
            "Which load goes on which dryer when (policy as chosen; wait limit {lim:.1} h)"
        ),
        head: [
            "dryer",
            "load",
            "net mass",
            "moisture in",
            "arrived",
            "on air",
            "done",
            "P10–P90",
            "wait",
            "fuel",
        ]
        .map(String::from)
        .to_vec(),
        rows,
    }
}
