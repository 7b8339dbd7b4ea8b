//! A season's files as the yard manager reads them: the schedule, the daily table, the key figures, a sweep's
//! percentiles and the arrivals drawn by the generator, each as CSV text with the unit in every column name.

use crate::season::arrivals::Load;
use crate::season::kpi::{DayRow, Kpis, KPI_FIELDS};
use crate::season::scenario::BuyingPoint;
use crate::season::shard::ShardFile;
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
