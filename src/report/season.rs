//! A season's files as the yard manager reads them: the schedule, the daily table, the key figures, a sweep's
//! percentiles and the arrivals drawn by the generator, each as CSV text with the unit in every column name.

use super::html::{Block, InputRecord, KeyFigure, Page, Table};
use crate::season::arrivals::Load;
use crate::season::kpi::{DayRow, Kpis, KPI_FIELDS};
use crate::season::scenario::BuyingPoint;
use crate::season::sim::{hours_between, SeasonRun};
use crate::season::sweep::CaseResult;

fn money_col(currency: &str) -> String {
    let c: String = currency
        .chars()
        .map(|c| {
            if c.is_alphanumeric() || c == '$' {
                c
            } else {
                '_'
            }
        })
        .collect();
    if c.is_empty() {
        "money".into()
    } else {
        c
    }
}

/// The schedule as CSV: one row per load, started or not (`status` = dried, not-dry or never-started).
pub fn schedule_csv(run: &SeasonRun, bp: &BuyingPoint) -> String {
    let m = money_col(&bp.prices.currency);
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

/// The key figures of a season as the answer of its report.
fn season_answer(k: &crate::season::kpi::Kpis, run: &SeasonRun, currency: &str) -> Vec<KeyFigure> {
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
            format!("{:.1} L/t", k.propane_l_per_tonne),
            format!(
                "{:.0} L for {:.0} t put on air",
                k.propane_l, k.tonnes_dried
            ),
        ),
        KeyFigure::new(
            "dryers",
            format!("{:.0} % occupied", k.utilisation_pct),
            format!("{:.2} t per dryer per day", k.tonnes_per_dryer_day),
        ),
        KeyFigure::new(
            "total cost",
            format!("{currency} {:.0}", k.total_cost),
            format!(
                "propane, electricity and shrink worth {currency} {:.0}",
                k.shrink_value
            ),
        ),
    ]
}

/// The HTML report of a season run: the answer, the dryer chart (zoomable) and queue chart of its file set, the
/// key figures and the busiest days.
pub fn season_page(
    title: &str,
    run: &SeasonRun,
    k: &crate::season::kpi::Kpis,
    currency: &str,
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
        answer: season_answer(k, run, currency),
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
