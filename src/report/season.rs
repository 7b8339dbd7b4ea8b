//! A season's files as the yard manager reads them: the schedule, the daily table, the key figures, a sweep's
//! percentiles and the arrivals drawn by the generator, each as CSV text with the unit in every column name.

use super::html::{Block, InputRecord, KeyFigure, Page, Table};
use crate::drying::heater::StrategySpec;
use crate::season::arrivals::Load;
use crate::season::kpi::{DayRow, Kpis, KPI_FIELDS};
use crate::season::scenario::BuyingPoint;
use crate::season::shard::ShardFile;
use crate::season::sim::{hours_between, SeasonRun};
use crate::season::sweep::{smallest_holding, CaseResult, SweepGrid};
use crate::units::UnitSystem;
use std::fmt::Write as _;

/// The schedule as CSV: one row per load, started or not (`status` = dried, not-dry or never-started).
pub fn schedule_csv(run: &SeasonRun, bp: &BuyingPoint) -> String {
    let m = crate::units::currency_column(&bp.prices.currency);
    let mut s = format!(
        "load_id,dryer_id,status,arrival,start,finish,wait_h,drying_h,net_mass_kg,moisture_in_pct_wb,\
         moisture_out_pct_wb,propane_l,fan_kwh,over_dried_kg,shrink_kg,shrink_value_{m}\n"
    );
    let price = bp.prices.peanuts_per_tonne / 1000.0;
    for r in &run.schedule {
        let x = &r.result;
        s.push_str(&format!(
            "{},{},{},{},{},{},{:.3},{:.3},{:.1},{:.2},{:.2},{:.2},{:.2},{:.1},{:.1},{:.2}\n",
            r.load_id,
            r.dryer_id,
            if x.finished { "dried" } else { "not-dry" },
            r.arrival.to_rfc3339(),
            r.start.to_rfc3339(),
            r.finish.to_rfc3339(),
            r.wait_h,
            x.hours,
            r.mass_kg,
            r.moisture_in_pct,
            x.moisture_out_pct,
            x.fuel_l,
            x.kwh,
            x.over_dried_kg,
            x.shrink_kg,
            x.shrink_kg * price,
        ));
    }
    for u in &run.never_started {
        s.push_str(&format!(
            "{},,never-started,{},,,{:.3},,{:.1},{:.2},,,,,,\n",
            u.load_id,
            u.arrival.to_rfc3339(),
            hours_between(u.arrival, run.end),
            u.mass_kg,
            u.moisture_pct
        ));
    }
    s
}

/// The daily table as CSV.
pub fn daily_csv(rows: &[DayRow]) -> String {
    let mut s = String::from(
        "date,arrivals_loads,tonnes_in_t,loads_finished,mean_dryers_busy,peak_dryers_busy,longest_queue_loads\n",
    );
    for r in rows {
        s.push_str(&format!(
            "{},{},{:.2},{},{:.2},{},{}\n",
            r.day.format("%Y-%m-%d"),
            r.arrivals,
            r.tonnes_in,
            r.loads_finished,
            r.mean_dryers_busy,
            r.peak_dryers_busy,
            r.longest_queue
        ));
    }
    s
}

/// Key figures as CSV (`figure,value,unit`).
pub fn kpis_csv(k: &Kpis, currency: &str) -> String {
    let mut s = String::from("figure,value,unit\n");
    for ((name, unit), v) in KPI_FIELDS.iter().zip(k.values()) {
        let unit = if *unit == "currency" { currency } else { unit };
        s.push_str(&format!("{name},{v:.4},{unit}\n"));
    }
    s
}

/// The sweep table as CSV: one row per case and figure, with P10/P50/P90 across seasons. The heater column is the
/// strategy in the heater language (`rh=55,max=35`, quoted where it holds a comma) or `scenario`.
pub fn sweep_csv(results: &[CaseResult], currency: &str) -> String {
    let mut w = csv::Writer::from_writer(Vec::new());
    let header = [
        "dryers", "policy", "heater", "figure", "unit", "p10", "p50", "p90",
    ];
    w.write_record(header)
        .expect("writing to memory cannot fail");
    for r in results {
        let heater = match r.case.heater {
            None => "scenario".to_string(),
            Some(h) => h.to_string(),
        };
        for (f, (name, unit)) in KPI_FIELDS.iter().enumerate() {
            let unit = if *unit == "currency" { currency } else { unit };
            let row = [
                r.case.dryers.to_string(),
                r.case.policy.name().to_string(),
                heater.clone(),
                name.to_string(),
                unit.to_string(),
                format!("{:.4}", r.p10[f]),
                format!("{:.4}", r.p50[f]),
                format!("{:.4}", r.p90[f]),
            ];
            w.write_record(&row).expect("writing to memory cannot fail");
        }
    }
    let bytes = w.into_inner().expect("writing to memory cannot fail");
    String::from_utf8(bytes).expect("every cell is UTF-8")
}

/// A sweep shard's partial result as JSON (read back by `input::season::read_shard`).
pub fn shard_json(file: &ShardFile) -> String {
    let mut text = serde_json::to_string_pretty(file).expect("a shard file is plain data");
    text.push('\n');
    text
}

/// Write loads back as an arrivals CSV (the format [`crate::season::arrivals::parse_arrivals_csv`] reads).
pub fn arrivals_csv(loads: &[Load]) -> String {
    let mut s = String::from("load_id,arrival,net_mass_kg,kernel_moisture_pct,notes\n");
    for l in loads {
        s.push_str(&format!(
            "{},{},{},{},{}\n",
            l.id,
            l.arrival.to_rfc3339(),
            l.mass_kg,
            l.moisture_pct,
            l.notes.replace([',', '\n'], " ")
        ));
    }
    s
}

/// Index of a key figure in [`KPI_FIELDS`].
fn field(name: &str) -> usize {
    KPI_FIELDS
        .iter()
        .position(|(n, _)| *n == name)
        .expect("a key figure named in KPI_FIELDS")
}

/// The sweep's answer on screen: a table of the key figures per dryer count × policy × heater (P10/P50/P90 across
/// seasons), then for each heater and policy the smallest count that holds the wait limit in 90 % of seasons; when
/// none does, the figures at the largest count and which way to widen `--dryers`.
pub fn sweep_answer(
    results: &[CaseResult],
    grid: &SweepGrid,
    max_wait_h: f64,
    currency: &str,
    u: UnitSystem,
) -> String {
    let (over, wait, occ, fuel, cost) = (
        field("loads_over_wait_limit"),
        field("p95_wait"),
        field("dryer_utilisation"),
        field("propane_per_tonne"),
        field("total_cost"),
    );
    let heater_text = |h: &Option<StrategySpec>| heater_label(h, u);
    let trio = |r: &CaseResult, f: usize, digits: usize| {
        format!(
            "{:.d$}/{:.d$}/{:.d$}",
            r.p10[f],
            r.p50[f],
            r.p90[f],
            d = digits
        )
    };
    let fuel_trio = |r: &CaseResult| {
        let v = |x: f64| u.fuel_per_mass_value(x, "L");
        format!(
            "{:.1}/{:.1}/{:.1}",
            v(r.p10[fuel]),
            v(r.p50[fuel]),
            v(r.p90[fuel])
        )
    };
    let mut s = String::new();
    let _ = writeln!(
        s,
        "key figures per case, P10/P50/P90 across seasons (over limit: loads waiting more than {max_wait_h:.0} h)"
    );
    let _ = writeln!(
        s,
        "{:>6} {:<11} {:<16} {:>14} {:>18} {:>14} {:>18} {:>22}",
        "dryers",
        "policy",
        "heater",
        "over limit",
        "95th pct wait (h)",
        "occupied (%)",
        format!("propane ({})", u.fuel_per_mass_unit("L")),
        format!("total cost ({currency})"),
    );
    for r in results {
        let _ = writeln!(
            s,
            "{:>6} {:<11} {:<16} {:>14} {:>18} {:>14} {:>18} {:>22}",
            r.case.dryers,
            r.case.policy.name(),
            heater_text(&r.case.heater),
            trio(r, over, 0),
            trio(r, wait, 1),
            trio(r, occ, 0),
            fuel_trio(r),
            trio(r, cost, 0),
        );
    }
    let lo = grid.dryer_counts.iter().copied().min().unwrap_or(0);
    let hi = grid.dryer_counts.iter().copied().max().unwrap_or(0);
    for h in &grid.heaters {
        for &p in &grid.policies {
            let head = format!("heater {}, policy {}", heater_text(h), p.name());
            match smallest_holding(results, p, *h) {
                Some(n) if n == lo && lo > 1 => {
                    let _ = writeln!(
                        s,
                        "{head}: {n} dryers hold the {max_wait_h:.0} h wait limit in 90 % of seasons — the smallest \
                         count swept, so fewer may do: widen the range downward (e.g. --dryers {}..{n})",
                        (lo / 2).max(1)
                    );
                }
                Some(n) => {
                    let _ = writeln!(
                        s,
                        "{head}: {n} dryers hold the {max_wait_h:.0} h wait limit in 90 % of seasons"
                    );
                }
                None => {
                    let at = results
                        .iter()
                        .find(|r| r.case.dryers == hi && r.case.policy == p && r.case.heater == *h);
                    let figures = at.map_or(String::new(), |r| {
                        format!(
                            "; at {hi} dryers {:.0} loads over the limit (P90) and a 95th-percentile wait of {:.1} h (P90)",
                            r.p90[over], r.p90[wait]
                        )
                    });
                    let _ = writeln!(
                        s,
                        "{head}: no dryer count swept holds the {max_wait_h:.0} h wait limit in 90 % of seasons{figures}: \
                         widen the range upward (e.g. --dryers {hi}..{})",
                        hi * 2
                    );
                }
            }
        }
    }
    s
}

/// A swept heater as tables and shard files name it: in the heater language (SI set-points for `Si`), or
/// `scenario` for each dryer's own.
pub fn heater_label(h: &Option<StrategySpec>, u: UnitSystem) -> String {
    h.map_or("scenario".into(), |h| h.text_in(u))
}

/// What explains a season's fuel per tonne: the air each load got per m³ of peanuts (median and range over the
/// loads put on air), with the advice when the median is far from the trade's usual. Empty for a drier that solves
/// no airflow.
pub fn air_note(run: &SeasonRun, u: UnitSystem) -> String {
    let mut q: Vec<f64> = run
        .schedule
        .iter()
        .filter_map(|r| r.result.air_per_m3)
        .collect();
    if q.is_empty() {
        return String::new();
    }
    q.sort_by(f64::total_cmp);
    let mut s = format!(
        "air per volume of peanuts over the {} loads put on air: median {}, from {} to {}\n",
        q.len(),
        u.specific_airflow(q[q.len() / 2]),
        u.specific_airflow(q[0]),
        u.specific_airflow(q[q.len() - 1])
    );
    for a in crate::advice::airflow_advice(q[q.len() / 2], 1.0) {
        let _ = writeln!(s, "{}", a.text(u));
    }
    s
}

/// The key figures of a season as the answer of its report.
fn season_answer(
    k: &crate::season::kpi::Kpis,
    run: &SeasonRun,
    currency: &str,
    u: UnitSystem,
) -> Vec<KeyFigure> {
    vec![
        KeyFigure::new(
            "loads dried",
            format!("{} of {}", k.loads_dried, k.loads_arrived),
            format!("{} not taken to target", k.loads_unfinished),
        ),
        KeyFigure::new(
            "waits",
            format!("{:.1} h longest", k.max_wait_h),
            format!(
                "mean {:.1} h; {} loads over the {:.0} h limit",
                k.mean_wait_h, k.loads_over_wait_limit, run.max_wait_h
            ),
        ),
        KeyFigure::new(
            "propane",
            u.fuel_per_mass(k.propane_l_per_tonne, "L"),
            format!(
                "{} for {} put on air",
                u.volume_l(k.propane_l),
                u.tonnes(1000.0 * k.tonnes_dried)
            ),
        ),
        KeyFigure::new(
            "dryers",
            format!("{:.0} % occupied", k.utilisation_pct),
            format!(
                "{} per dryer per day",
                u.tonnes(1000.0 * k.tonnes_per_dryer_day)
            ),
        ),
        KeyFigure::new(
            "total cost",
            crate::units::money(currency, k.total_cost),
            format!(
                "propane, electricity and shrink worth {}",
                crate::units::money(currency, k.shrink_value)
            ),
        ),
    ]
}

/// The HTML report of a season run: the answer, the dryer chart (zoomable) and queue chart of its file set, the
/// key figures and the busiest days.
pub fn season_page(
    (title, currency): (&str, &str),
    run: &SeasonRun,
    k: &crate::season::kpi::Kpis,
    u: UnitSystem,
    set: &super::output::OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let pic = |name: &str, caption: &str, zoom: bool| Block::Picture {
        svg: set.text(name).to_string(),
        caption: format!("{caption} (also written as {name})"),
        zoom,
    };
    let mut notes = Vec::new();
    if k.loads_over_wait_limit > 0 {
        notes.push(format!(
            "{} loads waited longer than the {:.0} h limit.",
            k.loads_over_wait_limit, run.max_wait_h
        ));
    }
    Page {
        title: format!("{title} — season"),
        lead: format!(
            "{} loads from {} to {} on {} dryers.",
            run.arrivals,
            run.start.format("%Y-%m-%d"),
            run.end.format("%Y-%m-%d"),
            run.dryer_ids.len()
        ),
        answer: season_answer(k, run, currency, u),
        notes,
        body: vec![
            Block::Heading("Pictures".into()),
            pic(
                "gantt.svg",
                "Every dryer's loads through the season; point at a bar for the load (zoom to read the labels)",
                true,
            ),
            pic("queue.svg", "Loads waiting, dryers occupied, and each load's wait", true),
            Block::Heading("Figures".into()),
            Block::Table(Table {
                caption: "Key figures of the season".into(),
                head: vec!["figure".into(), "value".into(), "unit".into()],
                rows: KPI_FIELDS
                    .iter()
                    .zip(k.values())
                    .map(|((name, unit), v)| {
                        let unit = if *unit == "currency" { currency } else { unit };
                        vec![name.replace('_', " "), format!("{v:.1}"), unit.to_string()]
                    })
                    .collect(),
            }),
        ],
        summary: Some(printed),
        inputs,
        cautions: super::load::CAUTIONS.into(),
    }
}

/// The HTML report of a sweep: the smallest dryer count holding the wait limit per policy and heater, and the
/// P10/P50/P90 of the key figures per case.
pub fn sweep_page(
    name: &str,
    results: &[CaseResult],
    seasons: usize,
    max_wait_h: f64,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    use crate::season::sweep::smallest_holding;
    let mut combos: Vec<_> = Vec::new();
    for r in results {
        let c = (r.case.policy, r.case.heater);
        if !combos.contains(&c) {
            combos.push(c);
        }
    }
    let heater = |h: &Option<crate::drying::heater::StrategySpec>| {
        h.map_or("the scenario's".to_string(), |h| h.to_string())
    };
    let answer = combos
        .iter()
        .map(|(p, h)| {
            let v = match smallest_holding(results, *p, *h) {
                Some(n) => format!("{n} dryers"),
                None => "none swept".into(),
            };
            KeyFigure::new(
                format!("policy {}, heater {}", p.name(), heater(h)),
                v,
                format!(
                    "fewest dryers holding the {max_wait_h:.0} h wait limit in 90 % of seasons"
                ),
            )
        })
        .collect();
    let pick = [
        "max_wait",
        "loads_over_wait_limit",
        "dryer_utilisation",
        "propane_per_tonne",
        "total_cost",
    ];
    let idx: Vec<usize> = pick
        .iter()
        .filter_map(|p| KPI_FIELDS.iter().position(|(n, _)| n == p))
        .collect();
    let mut head = vec!["dryers".to_string(), "policy".into(), "heater".into()];
    head.extend(idx.iter().map(|&i| {
        format!(
            "{} ({}) P10 / P50 / P90",
            KPI_FIELDS[i].0.replace('_', " "),
            KPI_FIELDS[i].1
        )
    }));
    let rows = results
        .iter()
        .map(|r| {
            let mut row = vec![
                r.case.dryers.to_string(),
                r.case.policy.name().to_string(),
                heater(&r.case.heater),
            ];
            row.extend(
                idx.iter()
                    .map(|&i| format!("{:.1} / {:.1} / {:.1}", r.p10[i], r.p50[i], r.p90[i])),
            );
            row
        })
        .collect();
    Page {
        title: format!("{name} — dryer counts swept"),
        lead: format!("{} cases, each over {seasons} seasons.", results.len()),
        answer,
        notes: vec![],
        body: vec![
            Block::Heading("Figures".into()),
            Block::Table(Table {
                caption: "Key figures per case across seasons (all figures in sweep.csv)".into(),
                head,
                rows,
            }),
        ],
        summary: Some(printed),
        inputs,
        cautions: super::load::CAUTIONS.into(),
    }
}
