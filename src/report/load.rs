//! Reports of one load's run: the short human summary, the JSON outcome, the CSV time series and the pictures
//! (drying curves, final-moisture maps with over- and under-dried zones, the airflow map), and the side-by-side
//! table of a comparison.

use std::fmt::Write as _;

use ndarray::Array2;

use super::output::OutputSet;
use super::svg::{heat_map, line_chart, HeatMap, LineChart, Series};
use crate::drying::run::{Outcome, RunSettings, StopReason, Tally};
use crate::load::{Cost, LoadResult, LoadSpec};
use crate::units::UnitSystem;

/// The cautions printed with every drying report.
pub const CAUTIONS: &str = "Cautions: a simulation is no substitute for a calibrated moisture meter — sample the load before \
grading. Propane burners and hot plenums can start fires and direct-fired burners put carbon monoxide into the air: \
follow NFPA 58 and local codes, the dryer and burner manuals and licensed practice, keep the plenum clear of hulls and \
trash, never run a dryer unattended against its manual. Over-heated peanuts split and lose flavour; wet peanuts held \
warm risk mold and aflatoxin.";

/// A fuel amount with its unit (litres follow `units`).
pub fn fuel_text(units: UnitSystem, amount: f64, unit: &str) -> String {
    if unit == "L" {
        units.volume_l(amount)
    } else {
        format!("{amount:.1} {unit}")
    }
}

/// What the figures mean, written beside them in the JSON outcome.
pub const MEANING: &str = "Crossing times (at_mean_target, at_fraction_target, at_stop_rule) are interpolated inside the \
time step, with fuel, fan energy, water removed and shrink at that moment. Zones are by dry mass with kernel moisture \
linear in cumulative dry mass between layer centres. Over-dry shrink is the weight the over-dried part lost below what \
it would weigh at target moisture. Sold weight (final_mass_kg) is the load's wet weight when taken off air. Costs are \
to the moment the stop rule was met (or the end of the run if it was not).";

/// A short human summary with units on every number.
pub fn summary_text(spec: &LoadSpec, label: &str, r: &LoadResult, units: UnitSystem) -> String {
    let o = &r.outcome;
    let a = &r.airflow.summary;
    let cur = &spec.prices.currency;
    let mut s = String::new();
    let _ = writeln!(s, "{} — {label}", spec.name);
    let _ = writeln!(
        s,
        "  load: {} wet at {:.1} % kernel w.b., {} on {} from {}",
        units.mass(o.initial_mass_kg),
        o.initial_kernel_pct,
        spec.crop.name,
        spec.container.name,
        r.clock.start.format("%Y-%m-%d %H:%M %:z")
    );
    let _ = writeln!(
        s,
        "  airflow: {} through the bed ({:.1} m³/min per m³ of peanuts), plenum {} mean, column flow CV {:.1} %, lowest/mean {:.2}",
        units.flow(a.bed_flow_m3_per_s),
        a.specific_airflow_m3_per_min_per_m3,
        units.pressure(a.mean_plenum_pressure_pa),
        a.column_flow_cv * 100.0,
        a.min_over_mean
    );
    if let Some(w) = a.low_airflow_warning() {
        let _ = writeln!(s, "  {w}");
    }
    let reason = match o.stop_reason {
        StopReason::RuleMet => format!("stop rule {} met", o.stop_rule),
        StopReason::MaxHours => "time limit reached first".into(),
        StopReason::WeatherEnded => "weather record ended first".into(),
    };
    let target = spec.run.target_kernel_wb * 100.0;
    let _ = writeln!(
        s,
        "  air on {} (as simulated); run stopped after {:.1} h at {}: {reason}",
        r.clock.start.format("%Y-%m-%d %H:%M %:z"),
        o.hours,
        r.clock.end.format("%Y-%m-%d %H:%M")
    );
    let mut crossing = |what: String, t: Option<Tally>| {
        let _ = match t {
            Some(t) => writeln!(
                s,
                "  {what}: {:.1} h, at {}; by then {} {} ({:.1} {}/t), fan {:.1} kWh, shrink {}",
                t.hours,
                crate::load::clock_at(r.clock.start, t.hours).format("%a %Y-%m-%d %H:%M"),
                fuel_text(units, t.fuel_used, &o.fuel_unit),
                r.heater.fuel.name,
                t.fuel_used / (o.initial_mass_kg / 1000.0),
                o.fuel_unit,
                t.fan_kwh,
                units.mass(t.shrink_kg)
            ),
            None => writeln!(s, "  {what}: not reached"),
        };
    };
    crossing(
        format!("mean kernel moisture at {target:.1} % w.b."),
        o.at_mean_target,
    );
    crossing(
        format!(
            "{:.0} % of the load at or below {target:.1} % w.b. (the whole load ready)",
            o.fraction_rule * 100.0
        ),
        o.at_fraction_target,
    );
    let _ = writeln!(
        s,
        "  final: kernel {:.2} % w.b. (pod {:.2} %), {} of water removed, {} sold weight (the load's wet weight when taken off air)",
        o.final_kernel_pct,
        o.final_pod_pct,
        units.mass(o.water_removed_kg),
        units.mass(o.final_mass_kg)
    );
    let _ = writeln!(
        s,
        "  zones at the end (by dry mass, moisture linear between layer centres): {:.1} % over-dried (< {:.1} %), {:.1} % still wet (> {:.1} %); over-dry shrink (weight lost below target) {} worth {cur} {:.0}",
        o.over_dried_fraction * 100.0,
        spec.run.over_dry_kernel_wb * 100.0,
        o.under_dried_fraction * 100.0,
        (spec.run.target_kernel_wb + spec.run.under_dry_tolerance_wb) * 100.0,
        units.mass(o.shrink_kg),
        r.cost.shrink
    );
    let _ = writeln!(
        s,
        "  energy to the end of the run: {} {} ({:.1} {}/t), fan {:.1} kWh, {:.0} kJ per kg water; cost to the stop rule {cur} {:.0} fuel + {cur} {:.0} electricity",
        fuel_text(units, o.fuel_used, &o.fuel_unit),
        r.heater.fuel.name,
        o.fuel_per_tonne,
        o.fuel_unit,
        o.fan_kwh,
        o.energy_kj_per_kg_water,
        r.cost.fuel,
        r.cost.electricity
    );
    let _ = writeln!(
        s,
        "  peaks: drying rate {:.2} %-points/h ({:.1} h above {:.1} %-points/h), peanuts up to {}",
        o.max_rate_pct_per_h,
        o.hours_above_safe_rate,
        spec.run.safe_rate_pct_per_h,
        units.temp(o.max_peanut_c)
    );
    s
}

/// The outcome as JSON (the time series goes to CSV).
pub fn outcome_json(spec: &LoadSpec, label: &str, r: &LoadResult) -> String {
    #[derive(serde::Serialize)]
    struct Doc<'a> {
        scenario: &'a str,
        strategy: String,
        start: String,
        outcome: &'a Outcome,
        clock: &'a crate::load::ClockTimes,
        meaning: &'a str,
        cost: &'a Cost,
        currency: &'a str,
        airflow: &'a crate::airflow::solve::AirflowSummary,
        cautions: &'a str,
    }
    let doc = Doc {
        scenario: &spec.name,
        strategy: label.to_string(),
        start: r.clock.start.to_rfc3339(),
        outcome: &r.outcome,
        clock: &r.clock,
        meaning: MEANING,
        cost: &r.cost,
        currency: &spec.prices.currency,
        airflow: &r.airflow.summary,
        cautions: CAUTIONS,
    };
    let mut text = serde_json::to_string_pretty(&doc).expect("outcome serialises");
    text.push('\n');
    text
}

/// The time series as CSV, units in the header.
pub fn series_csv(o: &Outcome) -> String {
    let mut s = String::from(
        "hours,mean_kernel_pct_wb,mean_pod_pct_wb,mean_hull_pct_wb,top_kernel_pct_wb,bottom_kernel_pct_wb,top_hull_pct_wb,\
wettest_kernel_pct_wb,driest_kernel_pct_wb,ambient_c,ambient_rh_pct,plenum_c,plenum_rh_pct,exhaust_c,exhaust_rh_pct,\
heat_kw,fan_kw,max_peanut_c\n",
    );
    for r in &o.series {
        let v = [
            r.hours,
            r.mean_kernel_pct,
            r.mean_pod_pct,
            r.mean_hull_pct,
            r.top_kernel_pct,
            r.bottom_kernel_pct,
            r.top_hull_pct,
            r.wettest_kernel_pct,
            r.driest_kernel_pct,
            r.ambient_c,
            r.ambient_rh_pct,
            r.plenum_c,
            r.plenum_rh_pct,
            r.exhaust_c,
            r.exhaust_rh_pct,
            r.heat_kw,
            r.fan_kw,
            r.max_peanut_c,
        ];
        let row: Vec<String> = v
            .iter()
            .map(|x| {
                if x.is_finite() {
                    format!("{x:.4}")
                } else {
                    String::new()
                }
            })
            .collect();
        s.push_str(&row.join(","));
        s.push('\n');
    }
    s
}

/// Drying curves: mean, top, bottom, wettest and driest kernel moisture, mean pod and top hull moisture.
pub fn drying_curves_svg(title: &str, o: &Outcome, target_pct: f64) -> String {
    let line = |name: &str, f: &dyn Fn(&crate::drying::run::SeriesRow) -> f64| Series {
        name: name.to_string(),
        points: o.series.iter().map(|r| (r.hours, f(r))).collect(),
    };
    let end = o.series.last().map(|r| r.hours).unwrap_or(1.0);
    line_chart(&LineChart {
        title: title.to_string(),
        x_label: "time on air".into(),
        x_unit: "h".into(),
        y_label: "moisture".into(),
        y_unit: "% w.b.".into(),
        series: vec![
            line("mean kernel", &|r| r.mean_kernel_pct),
            line("top-layer kernel", &|r| r.top_kernel_pct),
            line("bottom-layer kernel", &|r| r.bottom_kernel_pct),
            line("wettest cell kernel", &|r| r.wettest_kernel_pct),
            line("driest cell kernel", &|r| r.driest_kernel_pct),
            line("mean pod", &|r| r.mean_pod_pct),
            line("top-layer hull", &|r| r.top_hull_pct),
            Series {
                name: format!("target {target_pct:.1} %"),
                points: vec![(0.0, target_pct), (end, target_pct)],
            },
        ],
    })
}

/// Air temperatures through the run: ambient, plenum, exhaust.
pub fn air_svg(title: &str, o: &Outcome) -> String {
    let line = |name: &str, f: &dyn Fn(&crate::drying::run::SeriesRow) -> f64| Series {
        name: name.to_string(),
        points: o.series.iter().map(|r| (r.hours, f(r))).collect(),
    };
    line_chart(&LineChart {
        title: title.to_string(),
        x_label: "time on air".into(),
        x_unit: "h".into(),
        y_label: "air temperature".into(),
        y_unit: "°C".into(),
        series: vec![
            line("ambient", &|r| r.ambient_c),
            line("plenum", &|r| r.plenum_c),
            line("exhaust (flow-weighted)", &|r| r.exhaust_c),
            line("hottest peanuts", &|r| r.max_peanut_c),
        ],
    })
}

fn zone_code(over: f64, under: f64) -> i8 {
    if over >= 0.5 {
        -1
    } else if under >= 0.5 {
        1
    } else {
        0
    }
}

/// Final kernel moisture seen from above (per-column mean), marking columns mostly over-dried or still wet.
pub fn final_top_svg(spec: &LoadSpec, r: &LoadResult, s: &RunSettings) -> String {
    let z = &r.zones;
    let marks: Array2<i8> = ndarray::Zip::from(&z.top_over_fraction)
        .and(&z.top_under_fraction)
        .map_collect(|&o, &u| zone_code(o, u));
    heat_map(&HeatMap {
        values: z.top_kernel_pct.view(),
        x_extent_m: spec.container.length_m,
        y_extent_m: spec.container.width_m,
        title: format!("{}: final kernel moisture, column means (top view)", spec.name),
        x_label: "length from inlet wall".into(),
        y_label: "width".into(),
        quantity: "kernel moisture".into(),
        unit: "% w.b.".into(),
        range: None,
        marks: Some((
            marks.view(),
            format!(
                "D: over half the column below {:.1} % (over-dried); W: over half above {:.1} % (still wet)",
                s.over_dry_kernel_wb * 100.0,
                (s.target_kernel_wb + s.under_dry_tolerance_wb) * 100.0
            ),
        )),
    })
}

/// Final kernel moisture in a side section along the length (width-averaged), layers bottom to top.
pub fn final_side_svg(spec: &LoadSpec, r: &LoadResult, s: &RunSettings) -> String {
    let z = &r.zones;
    let depth = r.bed.depth_m.iter().cloned().fold(0.0, f64::max);
    heat_map(&HeatMap {
        values: z.side_kernel_pct.view(),
        x_extent_m: spec.container.length_m,
        y_extent_m: depth,
        title: format!(
            "{}: final kernel moisture, side section (width mean)",
            spec.name
        ),
        x_label: "length from inlet wall".into(),
        y_label: "height in bed".into(),
        quantity: "kernel moisture".into(),
        unit: "% w.b.".into(),
        range: None,
        marks: Some((
            z.side_zone.view(),
            format!(
                "D: below {:.1} % (over-dried); W: above {:.1} % (still wet)",
                s.over_dry_kernel_wb * 100.0,
                (s.target_kernel_wb + s.under_dry_tolerance_wb) * 100.0
            ),
        )),
    })
}

/// Air leaving the top surface, per column: where the air goes explains where the zones form.
pub fn airflow_top_svg(spec: &LoadSpec, r: &LoadResult) -> String {
    heat_map(&HeatMap {
        values: r.airflow.top_velocity_m_per_s.view(),
        x_extent_m: spec.container.length_m,
        y_extent_m: spec.container.width_m,
        title: format!("{}: air leaving the top surface at the start", spec.name),
        x_label: "length from inlet wall".into(),
        y_label: "width".into(),
        quantity: "superficial velocity".into(),
        unit: "m/s".into(),
        range: None,
        marks: None,
    })
}

/// The accounts when the load met its stop rule, or at the end of the run.
fn ready(r: &LoadResult) -> Tally {
    r.outcome.ready()
}

/// One row of a comparison.
pub struct CompareRow<'a> {
    /// Strategy label.
    pub label: String,
    /// The run.
    pub result: &'a LoadResult,
}

/// A comparison column: its heading and how to read its value from a run.
type Column = (&'static str, Box<dyn Fn(&LoadResult) -> f64>);

/// A side-by-side table; `*` marks the best value in each column (lowest, except none for labels).
pub fn compare_table(rows: &[CompareRow<'_>], currency: &str, fuel_unit: &str) -> String {
    let cols: Vec<Column> = vec![
        (
            "h to mean target",
            Box::new(|r: &LoadResult| r.outcome.hours_to_mean_target.unwrap_or(f64::INFINITY)),
        ),
        (
            "h to whole load",
            Box::new(|r: &LoadResult| r.outcome.hours_to_fraction_target.unwrap_or(f64::INFINITY)),
        ),
        (
            "fuel per tonne",
            Box::new(|r: &LoadResult| ready(r).fuel_used / (r.outcome.initial_mass_kg / 1000.0)),
        ),
        ("fan (kWh)", Box::new(|r: &LoadResult| ready(r).fan_kwh)),
        ("energy cost", Box::new(|r: &LoadResult| r.cost.energy)),
        (
            "over-dried (kg d.m.)",
            Box::new(|r: &LoadResult| r.outcome.zones.over_dried_dry_kg),
        ),
        ("shrink value", Box::new(|r: &LoadResult| r.cost.shrink)),
        (
            "max peanut (°C)",
            Box::new(|r: &LoadResult| r.outcome.max_peanut_c),
        ),
    ];
    let mut s = String::new();
    let _ = write!(s, "{:<22}", "strategy");
    for (name, _) in &cols {
        let name = match *name {
            "fuel per tonne" => format!("fuel ({fuel_unit}/t)"),
            "energy cost" => format!("energy ({currency})"),
            "shrink value" => format!("shrink ({currency})"),
            n => n.to_string(),
        };
        let _ = write!(s, " {name:>20}");
    }
    s.push('\n');
    for row in rows {
        let _ = write!(s, "{:<22}", row.label);
        for (_, f) in &cols {
            let v = f(row.result);
            let best = rows
                .iter()
                .map(|r| f(r.result))
                .fold(f64::INFINITY, f64::min);
            let mark = if (v - best).abs() <= 1e-9 * best.abs().max(1.0) {
                "*"
            } else {
                " "
            };
            let text = if v.is_finite() {
                format!("{v:.1}")
            } else {
                "not reached".into()
            };
            let _ = write!(s, " {:>19}{mark}", text);
        }
        s.push('\n');
    }
    s.push_str("* = best (lowest) in its column; fuel, fan and costs to the stop rule; over-dried in kg of dry matter\n");
    s
}

/// The full set of files for one load: summary, outcome, series and pictures.
pub fn load_outputs(spec: &LoadSpec, label: &str, r: &LoadResult) -> OutputSet {
    let target = spec.run.target_kernel_wb * 100.0;
    let title = format!("{}: {label}", spec.name);
    let mut set = OutputSet::new();
    set.add(
        "summary.txt",
        format!(
            "{}\n{CAUTIONS}\n",
            summary_text(spec, label, r, UnitSystem::Si)
        ),
    );
    set.add("outcome.json", outcome_json(spec, label, r));
    set.add("series.csv", series_csv(&r.outcome));
    set.add(
        "drying_curves.svg",
        drying_curves_svg(&title, &r.outcome, target),
    );
    set.add("air_temperatures.svg", air_svg(&title, &r.outcome));
    set.add("final_moisture_top.svg", final_top_svg(spec, r, &spec.run));
    set.add(
        "final_moisture_side.svg",
        final_side_svg(spec, r, &spec.run),
    );
    set.add("airflow_top.svg", airflow_top_svg(spec, r));
    set
}

/// `starts.csv`: one row per start time.
pub fn starts_csv(loads: &[LoadSpec], results: &[LoadResult]) -> String {
    let mut csv = String::from(
        "start,hours_to_mean_target_h,hours_to_fraction_target_h,ready_at,fuel_per_tonne_to_ready,fan_kwh_to_ready,over_dried_pct,final_kernel_pct_wb\n",
    );
    let opt = |h: Option<f64>| h.map(|x| format!("{x:.3}")).unwrap_or_default();
    for (l, r) in loads.iter().zip(results) {
        let o = &r.outcome;
        let ready = o.ready();
        let per_t = ready.fuel_used / (o.initial_mass_kg / 1000.0);
        csv.push_str(&format!(
            "{},{},{},{},{:.3},{:.3},{:.3},{:.3}\n",
            l.start.to_rfc3339(),
            opt(o.hours_to_mean_target),
            opt(o.hours_to_fraction_target),
            r.clock
                .stop_rule
                .map(|t| t.to_rfc3339())
                .unwrap_or_default(),
            per_t,
            ready.fan_kwh,
            o.over_dried_fraction * 100.0,
            o.final_kernel_pct
        ));
    }
    csv
}
