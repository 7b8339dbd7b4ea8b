//! Reports of one load's run: the short human summary, the JSON outcome, the CSV time series and the pictures
//! (drying curves, final-moisture maps with over- and under-dried zones, the airflow map), and the side-by-side
//! table of a comparison.

use std::fmt::Write as _;

use ndarray::Array2;

use chrono::{DateTime, FixedOffset};

use super::airflow::plenum_flow_svg;
use super::html::{Block, InputRecord, KeyFigure, Page, Table};
use super::output::OutputSet;
use super::svg::{
    finite_range, heat_map, line_chart, HeatMap, Limit, LineChart, MapEdge, Overlay, Series,
    ZoneMarks,
};
use crate::advice::{advise, load_figures};
use crate::drying::run::{Outcome, RunSettings, SeriesRow, StopReason, Tally};
use crate::load::{Cost, LoadResult, LoadSpec};
use crate::units::{money, UnitSystem};

/// The cautions printed with every drying report.
pub const CAUTIONS: &str = "Cautions: a simulation is no substitute for a calibrated moisture meter — sample the load before \
grading. Propane burners and hot plenums can start fires and direct-fired burners put carbon monoxide into the air: \
follow NFPA 58 and local codes, the dryer and burner manuals and licensed practice, keep the plenum clear of hulls and \
trash, never run a dryer unattended against its manual. Over-heated peanuts split and lose flavour; wet peanuts held \
warm risk mold and aflatoxin.";

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
        "  airflow: {} through the bed ({} of peanuts), plenum {} mean, column flow CV {:.1} %, lowest/mean {:.2}; {} plenum model{}",
        units.flow(a.bed_flow_m3_per_s),
        units.specific_airflow(a.specific_airflow_m3_per_min_per_m3),
        units.pressure(a.mean_plenum_pressure_pa),
        a.column_flow_cv * 100.0,
        a.min_over_mean,
        spec.container.plenum_model_on(spec.grid).name(),
        super::airflow::default_note(&spec.container),
    );
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
                "  {what}: {:.1} h, at {}; by then {} {} ({}), fan {}, shrink {}",
                t.hours,
                crate::load::clock_at(r.clock.start, t.hours).format("%a %Y-%m-%d %H:%M"),
                units.fuel(t.fuel_used, &o.fuel_unit),
                r.heater.fuel.name,
                units.fuel_per_mass(t.fuel_used / (o.initial_mass_kg / 1000.0), &o.fuel_unit),
                units.energy_kwh(t.fan_kwh),
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
        "  zones at the end (by dry mass, moisture linear between layer centres): {:.1} % over-dried (< {:.1} %), {:.1} % still wet (> {:.1} %); over-dry shrink (weight lost below target) {} worth {}",
        o.over_dried_fraction * 100.0,
        spec.run.over_dry_kernel_wb * 100.0,
        o.under_dried_fraction * 100.0,
        (spec.run.target_kernel_wb + spec.run.under_dry_tolerance_wb) * 100.0,
        units.mass(o.shrink_kg),
        money(cur, r.cost.shrink)
    );
    let _ = writeln!(
        s,
        "  energy to the end of the run: {} {} ({}), fan {}, {} of water removed; cost to the stop rule {} fuel + {} electricity",
        units.fuel(o.fuel_used, &o.fuel_unit),
        r.heater.fuel.name,
        units.fuel_per_mass(o.fuel_per_tonne, &o.fuel_unit),
        units.energy_kwh(o.fan_kwh),
        units.specific_energy(o.energy_kj_per_kg_water),
        money(cur, r.cost.fuel),
        money(cur, r.cost.electricity)
    );
    let _ = writeln!(
        s,
        "  peaks: drying rate {:.2} %-points/h ({:.1} h above {:.1} %-points/h), peanuts up to {}",
        o.max_rate_pct_per_h,
        o.hours_above_safe_rate,
        spec.run.safe_rate_pct_per_h,
        units.temp(o.max_peanut_c)
    );
    for a in advise(&load_figures(spec, r)) {
        let _ = writeln!(s, "  {}", a.text(units));
    }
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
        advice_figures: crate::advice::Figures,
        advice: Vec<crate::advice::Advice>,
        cautions: &'a str,
    }
    let figures = load_figures(spec, r);
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
        advice_figures: figures,
        advice: advise(&figures),
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

/// The least colour span of a moisture map, %-points w.b.: a spread smaller than this is drawn as a small change.
pub const MOISTURE_MIN_SPAN_PCT: f64 = 4.0;
/// The least colour span of an air-speed map, as a share of its mean speed.
pub const SPEED_MIN_SPAN_SHARE: f64 = 0.5;

/// One colour scale for every map of the same kind, so pictures that are compared are read on one scale; `None`
/// lets each picture take its own data range.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct MapScales {
    /// Final moisture seen from above, % w.b.
    pub top: Option<(f64, f64)>,
    /// Final moisture in the side section, % w.b.
    pub side: Option<(f64, f64)>,
    /// Air leaving the top, m/s.
    pub air: Option<(f64, f64)>,
    /// Air speed in the plenum (runs with a 2-D plenum), m/s.
    pub plenum: Option<(f64, f64)>,
}

impl MapScales {
    /// The scales that hold every run's maps.
    pub fn across<'a>(runs: impl IntoIterator<Item = &'a LoadResult> + Clone) -> Self {
        let span = |f: &dyn Fn(&LoadResult) -> (f64, f64)| {
            let (lo, hi) = runs
                .clone()
                .into_iter()
                .map(f)
                .fold((f64::INFINITY, f64::NEG_INFINITY), |a, b| {
                    (a.0.min(b.0), a.1.max(b.1))
                });
            (lo.is_finite() && hi.is_finite()).then_some((lo, hi))
        };
        MapScales {
            top: span(&|r| finite_range(r.zones.top_kernel_pct.iter().copied())),
            side: span(&|r| finite_range(r.zones.side_kernel_pct.iter().copied())),
            air: span(&|r| finite_range(r.airflow.top_velocity_m_per_s.iter().copied())),
            plenum: span(&|r| match &r.airflow.plenum_map {
                Some(m) => finite_range(m.speed_m_per_s().iter().copied()),
                None => (f64::INFINITY, f64::NEG_INFINITY),
            }),
        }
    }
}

fn moisture_line(o: &Outcome, name: &str, f: fn(&SeriesRow) -> f64) -> Series {
    Series {
        name: name.to_string(),
        points: o.series.iter().map(|r| (r.hours, f(r))).collect(),
    }
}

/// Drying curves: mean, top, bottom, wettest and driest kernel moisture, mean pod and top hull moisture, the
/// target as a line, clock dates and nights under the hours on air.
pub fn drying_curves_svg(
    title: &str,
    o: &Outcome,
    target_pct: f64,
    start: DateTime<FixedOffset>,
) -> String {
    line_chart(&LineChart {
        title: title.to_string(),
        x_label: "time on air".into(),
        x_unit: "h".into(),
        y_label: "moisture".into(),
        y_unit: "% w.b.".into(),
        series: vec![
            moisture_line(o, "mean kernel", |r| r.mean_kernel_pct),
            moisture_line(o, "top-layer kernel", |r| r.top_kernel_pct),
            moisture_line(o, "bottom-layer kernel", |r| r.bottom_kernel_pct),
            moisture_line(o, "wettest cell kernel", |r| r.wettest_kernel_pct),
            moisture_line(o, "driest cell kernel", |r| r.driest_kernel_pct),
            moisture_line(o, "mean pod", |r| r.mean_pod_pct),
            moisture_line(o, "top-layer hull", |r| r.top_hull_pct),
        ],
        limits: vec![Limit {
            name: format!("target {target_pct:.1} % w.b."),
            value: target_pct,
        }],
        clock: Some(start),
    })
}

/// Air temperatures through the run: plenum, ambient, exhaust and the hottest peanuts, with the crop's plenum cap
/// as a line.
pub fn air_svg(
    title: &str,
    o: &Outcome,
    cap_c: f64,
    start: DateTime<FixedOffset>,
    units: UnitSystem,
) -> String {
    let line = |name: &str, f: fn(&SeriesRow) -> f64| Series {
        name: name.to_string(),
        points: o
            .series
            .iter()
            .map(|r| (r.hours, units.temp_value(f(r))))
            .collect(),
    };
    let cap = units.temp_value(cap_c);
    line_chart(&LineChart {
        title: title.to_string(),
        x_label: "time on air".into(),
        x_unit: "h".into(),
        y_label: "air temperature".into(),
        y_unit: units.temp_unit().into(),
        series: vec![
            line("plenum", |r| r.plenum_c),
            line("ambient", |r| r.ambient_c),
            line("exhaust (flow-weighted)", |r| r.exhaust_c),
            line("hottest peanuts", |r| r.max_peanut_c),
        ],
        limits: vec![Limit {
            name: format!("crop's plenum cap {cap:.0} {}", units.temp_unit()),
            value: cap,
        }],
        clock: Some(start),
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

/// The inlet, permeability blocks, baffles and blocked floor areas of a container, for its top-view maps.
pub fn top_overlays(c: &crate::airflow::Container) -> Vec<Overlay> {
    use crate::airflow::geometry::InletWall;
    let (from_m, to_m) = c.inlet_span_m();
    let mut v = vec![Overlay::Inlet {
        edge: match c.inlet.wall {
            InletWall::Front => MapEdge::Left,
            InletWall::Rear => MapEdge::Right,
            InletWall::Left => MapEdge::Bottom,
            InletWall::Right => MapEdge::Top,
        },
        from_m,
        to_m,
    }];
    v.extend(c.permeability.blocks.iter().map(|b| Overlay::Block {
        x0_m: b.x0_m,
        x1_m: b.x1_m,
        y0_m: b.y0_m,
        y1_m: b.y1_m,
        multiplier: b.multiplier,
    }));
    v.extend(c.baffles.iter().map(|b| Overlay::Baffle {
        x0_m: b.x0_m,
        y0_m: b.y0_m,
        x1_m: b.x1_m,
        y1_m: b.y1_m,
    }));
    v.extend(c.floor.blocked_areas.iter().map(|a| Overlay::BlockedFloor {
        x0_m: a.x0_m,
        x1_m: a.x1_m,
        y0_m: a.y0_m,
        y1_m: a.y1_m,
    }));
    v
}

const TOP_VIEW_NOTE: &str =
    "seen from above: air rises through the perforated floor, out of the page";

fn zone_texts(s: &RunSettings) -> (String, String) {
    (
        format!(
            "below {:.1} % w.b. (over-dried)",
            s.over_dry_kernel_wb * 100.0
        ),
        format!(
            "above {:.1} % w.b. (still wet)",
            (s.target_kernel_wb + s.under_dry_tolerance_wb) * 100.0
        ),
    )
}

/// Final kernel moisture seen from above (per-column mean), marking columns mostly over-dried or still wet.
pub fn final_top_svg(
    spec: &LoadSpec,
    r: &LoadResult,
    units: UnitSystem,
    range: Option<(f64, f64)>,
) -> String {
    let z = &r.zones;
    let marks: Array2<i8> = ndarray::Zip::from(&z.top_over_fraction)
        .and(&z.top_under_fraction)
        .map_collect(|&o, &u| zone_code(o, u));
    let (dry, wet) = zone_texts(&spec.run);
    heat_map(&HeatMap {
        values: z.top_kernel_pct.view(),
        x_extent_m: spec.container.length_m,
        y_extent_m: spec.container.width_m,
        units,
        title: format!(
            "{}: final kernel moisture, column means (top view)",
            spec.name
        ),
        x_label: "length from front wall".into(),
        y_label: "width".into(),
        quantity: "kernel moisture".into(),
        unit: "% w.b.".into(),
        range,
        min_span: MOISTURE_MIN_SPAN_PCT,
        marks: Some(ZoneMarks {
            marks: marks.view(),
            dry: format!("over half the column {dry}"),
            wet: format!("over half the column {wet}"),
        }),
        overlays: top_overlays(&spec.container),
        notes: vec![TOP_VIEW_NOTE.into()],
    })
}

/// Final kernel moisture in a side section along the length (width-averaged), layers bottom to top.
pub fn final_side_svg(
    spec: &LoadSpec,
    r: &LoadResult,
    units: UnitSystem,
    range: Option<(f64, f64)>,
) -> String {
    let z = &r.zones;
    let depth = r.bed.depth_m.iter().cloned().fold(0.0, f64::max);
    let (dry, wet) = zone_texts(&spec.run);
    heat_map(&HeatMap {
        values: z.side_kernel_pct.view(),
        x_extent_m: spec.container.length_m,
        y_extent_m: depth,
        units,
        title: format!(
            "{}: final kernel moisture, side section (width mean)",
            spec.name
        ),
        x_label: "length from front wall".into(),
        y_label: "height in bed".into(),
        quantity: "kernel moisture".into(),
        unit: "% w.b.".into(),
        range,
        min_span: MOISTURE_MIN_SPAN_PCT,
        marks: Some(ZoneMarks {
            marks: z.side_zone.view(),
            dry,
            wet,
        }),
        overlays: vec![],
        notes: vec![format!(
            "side section: air enters at the floor (bottom edge) and leaves at the top; the plenum inlet is in the {} wall",
            match spec.container.inlet.wall {
                crate::airflow::geometry::InletWall::Front => "front (left)",
                crate::airflow::geometry::InletWall::Rear => "rear (right)",
                crate::airflow::geometry::InletWall::Left => "left side",
                crate::airflow::geometry::InletWall::Right => "right side",
            }
        )],
    })
}

/// Air leaving the top surface, per column: where the air goes explains where the zones form.
pub fn airflow_top_svg(
    spec: &LoadSpec,
    r: &LoadResult,
    units: UnitSystem,
    range: Option<(f64, f64)>,
) -> String {
    let v = r
        .airflow
        .top_velocity_m_per_s
        .mapv(|x| units.speed_value(x));
    let mean = v.iter().copied().filter(|x| x.is_finite()).sum::<f64>() / v.len().max(1) as f64;
    heat_map(&HeatMap {
        values: v.view(),
        x_extent_m: spec.container.length_m,
        y_extent_m: spec.container.width_m,
        units,
        title: format!("{}: air leaving the top surface at the start", spec.name),
        x_label: "length from front wall".into(),
        y_label: "width".into(),
        quantity: "superficial velocity".into(),
        unit: units.speed_unit().into(),
        range: range.map(|(a, b)| (units.speed_value(a), units.speed_value(b))),
        min_span: SPEED_MIN_SPAN_SHARE * mean,
        marks: None,
        overlays: top_overlays(&spec.container),
        notes: vec![TOP_VIEW_NOTE.into()],
    })
}

/// The accounts when the load met its stop rule, or at the end of the run.
fn ready(r: &LoadResult) -> Tally {
    r.outcome.ready()
}

/// One row of a comparison.
pub struct CompareRow<'a> {
    /// Strategy label, in the units of the report.
    pub label: String,
    /// The folder of this strategy's files: the strategy in SI, so a set's names do not change with `--units`.
    pub folder: String,
    /// The run.
    pub result: &'a LoadResult,
}

/// A comparison column: its heading and how to read its value from a run.
type Column = (&'static str, Box<dyn Fn(&LoadResult) -> f64>);

/// A side-by-side table; `*` marks the best value in each column (lowest, except none for labels).
pub fn compare_table(
    rows: &[CompareRow<'_>],
    currency: &str,
    fuel_unit: &str,
    u: UnitSystem,
) -> String {
    let fuel_unit = fuel_unit.to_string();
    let fu = fuel_unit.clone();
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
            Box::new(move |r: &LoadResult| {
                u.fuel_per_mass_value(
                    ready(r).fuel_used / (r.outcome.initial_mass_kg / 1000.0),
                    &fu,
                )
            }),
        ),
        ("fan (kWh)", Box::new(|r: &LoadResult| ready(r).fan_kwh)),
        ("energy cost", Box::new(|r: &LoadResult| r.cost.energy)),
        (
            "over-dried (d.m.)",
            Box::new(move |r: &LoadResult| u.mass_value(r.outcome.zones.over_dried_dry_kg)),
        ),
        ("shrink value", Box::new(|r: &LoadResult| r.cost.shrink)),
        (
            "max peanut",
            Box::new(move |r: &LoadResult| u.temp_value(r.outcome.max_peanut_c)),
        ),
    ];
    let mut s = String::new();
    let _ = write!(s, "{:<22}", "strategy");
    for (name, _) in &cols {
        let name = match *name {
            "fuel per tonne" => format!("fuel ({})", u.fuel_per_mass_unit(&fuel_unit)),
            "over-dried (d.m.)" => format!("over-dried ({} d.m.)", u.mass_unit()),
            "max peanut" => format!("max peanut ({})", u.temp_unit()),
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
    s.push_str("* = best (lowest) in its column; fuel, fan and costs to the stop rule; over-dried in dry matter\n");
    s
}

/// The full set of files for one load: summary, outcome, series and pictures (maps on `scales`).
pub fn load_outputs(
    spec: &LoadSpec,
    label: &str,
    r: &LoadResult,
    units: UnitSystem,
    scales: &MapScales,
) -> OutputSet {
    let target = spec.run.target_kernel_wb * 100.0;
    let title = format!("{}: {label}", spec.name);
    let start = r.clock.start;
    let cap = spec.crop.safety.max_plenum_temp_c;
    let mut set = OutputSet::new();
    set.add(
        "summary.txt",
        format!("{}\n{CAUTIONS}\n", summary_text(spec, label, r, units)),
    );
    set.add("outcome.json", outcome_json(spec, label, r));
    set.add("series.csv", series_csv(&r.outcome));
    set.add(
        "drying_curves.svg",
        drying_curves_svg(&title, &r.outcome, target, start),
    );
    set.add(
        "air_temperatures.svg",
        air_svg(&title, &r.outcome, cap, start, units),
    );
    set.add(
        "final_moisture_top.svg",
        final_top_svg(spec, r, units, scales.top),
    );
    set.add(
        "final_moisture_side.svg",
        final_side_svg(spec, r, units, scales.side),
    );
    set.add(
        "airflow_top.svg",
        airflow_top_svg(spec, r, units, scales.air),
    );
    if let Some(m) = &r.airflow.plenum_map {
        let c = &spec.container;
        let range = (scales.plenum).map(|(lo, hi)| (units.speed_value(lo), units.speed_value(hi)));
        set.add(
            "plenum_flow.svg",
            plenum_flow_svg(c, m, units, top_overlays(c), range),
        );
    }
    set
}

/// `starts.csv`: one row per start time.
pub fn starts_csv(loads: &[LoadSpec], results: &[LoadResult]) -> String {
    let fuel_unit = results
        .first()
        .map(|r| r.outcome.fuel_unit.replace('³', "3"))
        .unwrap_or_else(|| "L".into());
    let mut csv = format!(
        "start,hours_to_mean_target_h,hours_to_fraction_target_h,ready_at,fuel_to_ready_{fuel_unit}_per_t,fan_to_ready_kwh,over_dried_pct,final_kernel_pct_wb\n",
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

/// "31.5 h, Tue 2026-09-15 03:30" for a crossing, or "not reached".
fn when(r: &LoadResult, t: Option<Tally>) -> (String, String) {
    match t {
        Some(t) => (
            format!("{:.1} h", t.hours),
            crate::load::clock_at(r.clock.start, t.hours)
                .format("%a %Y-%m-%d %H:%M")
                .to_string(),
        ),
        None => (
            "not reached".into(),
            format!("within {:.1} h on air", r.outcome.hours),
        ),
    }
}

/// The answer of one load: time and clock time to done, fuel, zones, cost.
fn load_answer(spec: &LoadSpec, r: &LoadResult, units: UnitSystem) -> Vec<KeyFigure> {
    let o = &r.outcome;
    let t = ready(r);
    let (ready_h, ready_at) = when(r, o.at_stop_rule);
    let (mean_h, mean_at) = when(r, o.at_mean_target);
    let cur = &spec.prices.currency;
    vec![
        KeyFigure::new(
            format!("done (stop rule {})", o.stop_rule),
            ready_h,
            ready_at,
        ),
        KeyFigure::new(
            format!(
                "mean kernel at {:.1} % w.b.",
                spec.run.target_kernel_wb * 100.0
            ),
            mean_h,
            mean_at,
        ),
        KeyFigure::new(
            format!("{} to done", r.heater.fuel.name),
            units.fuel(t.fuel_used, &o.fuel_unit),
            format!(
                "{:.1} {}/t; fan {:.1} kWh",
                t.fuel_used / (o.initial_mass_kg / 1000.0),
                o.fuel_unit,
                t.fan_kwh
            ),
        ),
        KeyFigure::new(
            "zones at the end",
            format!(
                "{:.1} % over-dried, {:.1} % still wet",
                o.over_dried_fraction * 100.0,
                o.under_dried_fraction * 100.0
            ),
            format!("by dry mass; final kernel {:.2} % w.b.", o.final_kernel_pct),
        ),
        KeyFigure::new(
            "energy cost to done",
            format!("{cur} {:.0}", r.cost.energy),
            format!("shrink worth {cur} {:.0}", r.cost.shrink),
        ),
    ]
}

/// Notes under the answer: a stop rule not met, the good-practice advice.
fn load_notes(spec: &LoadSpec, r: &LoadResult, units: UnitSystem) -> Vec<String> {
    let mut n = Vec::new();
    match r.outcome.stop_reason {
        StopReason::RuleMet => {}
        StopReason::MaxHours => n.push("The time limit came before the stop rule was met.".into()),
        StopReason::WeatherEnded => {
            n.push("The weather record ended before the stop rule was met.".into())
        }
    }
    n.extend(advise(&load_figures(spec, r)).iter().map(|a| a.text(units)));
    n
}

/// The crossings as a table.
fn crossings_table(spec: &LoadSpec, r: &LoadResult, units: UnitSystem) -> Table {
    let o = &r.outcome;
    let target = spec.run.target_kernel_wb * 100.0;
    let rows = [
        (
            format!("mean kernel at {target:.1} % w.b."),
            o.at_mean_target,
        ),
        (
            format!(
                "{:.0} % of the load at or below {target:.1} % w.b.",
                o.fraction_rule * 100.0
            ),
            o.at_fraction_target,
        ),
        (format!("stop rule {}", o.stop_rule), o.at_stop_rule),
    ];
    Table {
        caption: "When the load crossed each line, and the accounts then".into(),
        head: [
            "moment",
            "time on air",
            "clock time",
            "fuel",
            "fan",
            "shrink",
        ]
        .map(String::from)
        .to_vec(),
        rows: rows
            .into_iter()
            .map(|(what, t)| {
                let (h, at) = when(r, t);
                let mut row = vec![what, h, at];
                row.extend(match t {
                    Some(t) => [
                        units.fuel(t.fuel_used, &o.fuel_unit),
                        format!("{:.1} kWh", t.fan_kwh),
                        units.mass(t.shrink_kg),
                    ],
                    None => [String::new(), String::new(), String::new()],
                });
                row
            })
            .collect(),
    }
}

/// A picture of `set` shown in a report, its caption naming the file it is also written as.
pub(crate) fn picture(set: &OutputSet, name: &str, caption: &str) -> Block {
    Block::Picture {
        svg: set.text(name).to_string(),
        caption: format!("{caption} (also written as {name})"),
        zoom: false,
    }
}

/// The HTML report of one load, showing the pictures of its file set.
pub fn load_page(
    spec: &LoadSpec,
    label: &str,
    r: &LoadResult,
    units: UnitSystem,
    set: &OutputSet,
    inputs: Vec<InputRecord>,
) -> Page {
    Page {
        title: format!("{} — {label}", spec.name),
        lead: format!(
            "One load of {} ({} wet at {:.1} % kernel moisture w.b.) on {}, air on {}, heater {label}.",
            spec.crop.name,
            units.mass(r.outcome.initial_mass_kg),
            r.outcome.initial_kernel_pct,
            spec.container.name,
            r.clock.start.format("%a %Y-%m-%d %H:%M %:z")
        ),
        answer: load_answer(spec, r, units),
        notes: load_notes(spec, r, units),
        body: vec![
            Block::Heading("Pictures".into()),
            picture(set, "drying_curves.svg", "Kernel, pod and hull moisture through the run"),
            picture(set, "air_temperatures.svg", "Air temperatures through the run"),
            picture(set, "final_moisture_top.svg", "Final kernel moisture seen from above"),
            picture(set, "final_moisture_side.svg", "Final kernel moisture in a side section"),
            picture(set, "airflow_top.svg", "Air leaving the top surface at the start"),
        ]
        .into_iter()
        .chain(set.has("plenum_flow.svg").then(|| {
            picture(set, "plenum_flow.svg", "Air in the plenum at the start: speed and direction")
        }))
        .chain([
            Block::Heading("Figures".into()),
            Block::Table(crossings_table(spec, r, units)),
            Block::Para(MEANING.into()),
        ])
        .collect(),
        summary: Some(summary_text(spec, label, r, units)),
        inputs,
        cautions: CAUTIONS.into(),
    }
}

/// The folder name of a compared strategy's files.
pub fn strategy_folder(label: &str) -> String {
    label.replace([',', '=', '@'], "_")
}

/// The mean kernel moisture of every compared run on one chart, one colour each, target as a line.
pub fn compare_curves_svg(spec: &LoadSpec, rows: &[CompareRow<'_>], by: &str) -> String {
    let target = spec.run.target_kernel_wb * 100.0;
    line_chart(&LineChart {
        title: format!("{}: mean kernel moisture by {by}", spec.name),
        x_label: "time on air".into(),
        x_unit: "h".into(),
        y_label: "mean kernel moisture".into(),
        y_unit: "% w.b.".into(),
        series: rows
            .iter()
            .map(|r| Series {
                name: r.label.clone(),
                points: r
                    .result
                    .outcome
                    .series
                    .iter()
                    .map(|x| (x.hours, x.mean_kernel_pct))
                    .collect(),
            })
            .collect(),
        limits: vec![Limit {
            name: format!("target {target:.1} % w.b."),
            value: target,
        }],
        clock: rows.first().map(|r| r.result.clock.start),
    })
}

fn compare_html_table(rows: &[CompareRow<'_>], currency: &str, units: UnitSystem) -> Table {
    Table {
        caption: "Strategies side by side (fuel, fan and costs to the stop rule)".into(),
        head: [
            "strategy",
            "done after",
            "done at",
            "fuel to done",
            "fuel per tonne",
            "energy cost",
            "over-dried",
            "still wet",
            "hottest peanuts",
        ]
        .map(String::from)
        .to_vec(),
        rows: rows
            .iter()
            .map(|row| {
                let r = row.result;
                let o = &r.outcome;
                let t = ready(r);
                let (h, at) = when(r, o.at_stop_rule);
                vec![
                    row.label.clone(),
                    h,
                    at,
                    units.fuel(t.fuel_used, &o.fuel_unit),
                    format!(
                        "{:.1} {}/t",
                        t.fuel_used / (o.initial_mass_kg / 1000.0),
                        o.fuel_unit
                    ),
                    format!("{currency} {:.0}", r.cost.energy),
                    format!("{:.1} %", o.over_dried_fraction * 100.0),
                    format!("{:.1} %", o.under_dried_fraction * 100.0),
                    units.temp(o.max_peanut_c),
                ]
            })
            .collect(),
    }
}

/// The best row by `key` (lowest; runs that never met the stop rule count as infinite).
fn best_by<'a>(
    rows: &'a [CompareRow<'a>],
    key: impl Fn(&LoadResult) -> f64,
) -> Option<&'a CompareRow<'a>> {
    rows.iter()
        .filter(|r| key(r.result).is_finite())
        .min_by(|a, b| key(a.result).total_cmp(&key(b.result)))
}

/// The HTML report of a comparison: the answer (fastest, least fuel, fewest over-dried), every strategy's curve on
/// one chart, their top-view maps on one colour scale, the table. `set` is the comparison's own file set.
pub fn compare_page(
    spec: &LoadSpec,
    rows: &[CompareRow<'_>],
    units: UnitSystem,
    set: &OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let done_h = |r: &LoadResult| r.outcome.at_stop_rule.map_or(f64::INFINITY, |t| t.hours);
    let fuel_t = |r: &LoadResult| {
        r.outcome.at_stop_rule.map_or(f64::INFINITY, |t| {
            t.fuel_used / (r.outcome.initial_mass_kg / 1000.0)
        })
    };
    let mut answer = Vec::new();
    if let Some(b) = best_by(rows, done_h) {
        let (h, at) = when(b.result, b.result.outcome.at_stop_rule);
        answer.push(KeyFigure::new(
            "done soonest",
            format!("{}: {h}", b.label),
            at,
        ));
    }
    if let Some(b) = best_by(rows, fuel_t) {
        let o = &b.result.outcome;
        answer.push(KeyFigure::new(
            "least fuel per tonne to done",
            format!("{}: {:.1} {}/t", b.label, fuel_t(b.result), o.fuel_unit),
            "",
        ));
    }
    if let Some(b) = best_by(rows, |r| r.outcome.over_dried_fraction) {
        answer.push(KeyFigure::new(
            "fewest over-dried",
            format!(
                "{}: {:.1} %",
                b.label,
                b.result.outcome.over_dried_fraction * 100.0
            ),
            "of the load by dry mass",
        ));
    }
    let notes = if answer.len() < 3 {
        vec!["At least one strategy did not meet the stop rule within the run.".to_string()]
    } else {
        vec![]
    };
    let mut body = vec![
        Block::Heading("Pictures".into()),
        Block::Picture {
            svg: compare_curves_svg(spec, rows, "heater strategy"),
            caption: "Mean kernel moisture of every strategy (same load, weather and fan)".into(),
            zoom: false,
        },
        Block::Heading(
            "Final moisture seen from above, one colour scale for all strategies".into(),
        ),
    ];
    for r in rows {
        let name = format!("{}/final_moisture_top.svg", r.folder);
        body.push(picture(set, &name, &r.label));
    }
    body.push(Block::Heading("Figures".into()));
    body.push(Block::Table(compare_html_table(
        rows,
        &spec.prices.currency,
        units,
    )));
    Page {
        title: format!("{} — heater strategies compared", spec.name),
        lead: format!(
            "The same load, weather and fan under {} heater strategies, each run to its stop rule ({}).",
            rows.len(),
            spec.run.stop
        ),
        answer,
        notes,
        body,
        summary: Some(printed),
        inputs,
        cautions: CAUTIONS.into(),
    }
}

/// Hours from the first start to done, by start time: a point per start on a clock axis with nights shaded.
pub fn starts_svg(spec: &LoadSpec, loads: &[LoadSpec], results: &[LoadResult]) -> String {
    let t0 = loads.first().map_or(spec.start, |l| l.start);
    let pts = |f: &dyn Fn(&LoadResult) -> Option<f64>| -> Vec<(f64, f64)> {
        loads
            .iter()
            .zip(results)
            .map(|(l, r)| {
                (
                    crate::season::sim::hours_between(t0, l.start),
                    f(r).unwrap_or(f64::NAN),
                )
            })
            .collect()
    };
    line_chart(&LineChart {
        title: format!("{}: hours on air by start time", spec.name),
        x_label: "start, hours after the first start".into(),
        x_unit: "h".into(),
        y_label: "hours on air".into(),
        y_unit: "h".into(),
        series: vec![
            Series {
                name: format!("to done (stop rule {})", spec.run.stop),
                points: pts(&|r| r.outcome.at_stop_rule.map(|t| t.hours)),
            },
            Series {
                name: "to mean kernel at target".into(),
                points: pts(&|r| r.outcome.hours_to_mean_target),
            },
        ],
        limits: vec![],
        clock: Some(t0),
    })
}

/// The HTML report of `starts`: the spread of hours to done, a chart by start time and the table.
pub fn starts_page(
    spec: &LoadSpec,
    loads: &[LoadSpec],
    results: &[LoadResult],
    units: UnitSystem,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let mut done: Vec<f64> = results
        .iter()
        .filter_map(|r| r.outcome.at_stop_rule.map(|t| t.hours))
        .collect();
    done.sort_by(f64::total_cmp);
    let mut answer = vec![KeyFigure::new(
        "met the stop rule",
        format!("{} of {} starts", done.len(), results.len()),
        format!("stop rule {}", spec.run.stop),
    )];
    if !done.is_empty() {
        answer.push(KeyFigure::new(
            "hours to done",
            format!("{:.1} h median", done[done.len() / 2]),
            format!(
                "{:.1} h shortest, {:.1} h longest",
                done[0],
                done[done.len() - 1]
            ),
        ));
    }
    let rows = loads
        .iter()
        .zip(results)
        .map(|(l, r)| {
            let o = &r.outcome;
            let t = o.ready();
            let (h, at) = when(r, o.at_stop_rule);
            vec![
                l.start.format("%a %Y-%m-%d %H:%M").to_string(),
                h,
                at,
                units.fuel(t.fuel_used, &o.fuel_unit),
                format!("{:.1} kWh", t.fan_kwh),
                format!("{:.1} %", o.over_dried_fraction * 100.0),
            ]
        })
        .collect();
    Page {
        title: format!("{} — start times", spec.name),
        lead: format!(
            "The same load started at {} times through the weather record, heater {}.",
            loads.len(),
            spec.heater.spec
        ),
        answer,
        notes: vec![],
        body: vec![
            Block::Heading("Pictures".into()),
            Block::Picture {
                svg: starts_svg(spec, loads, results),
                caption: "Hours on air by start time; a gap is a start that did not get there"
                    .into(),
                zoom: false,
            },
            Block::Heading("Figures".into()),
            Block::Table(Table {
                caption: "One row per start (fuel and fan to done)".into(),
                head: [
                    "air on",
                    "done after",
                    "done at",
                    "fuel",
                    "fan",
                    "over-dried",
                ]
                .map(String::from)
                .to_vec(),
                rows,
            }),
        ],
        summary: Some(printed),
        inputs,
        cautions: CAUTIONS.into(),
    }
}
