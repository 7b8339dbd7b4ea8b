//! The reports of `dryfront design`: the same load and weather on several containers, fans, plenum models or fill
//! depths, side by side — airflow (bed flow, CV, lowest/mean column), hours to the mean and to the fraction rule,
//! over-dried and still-wet mass, fuel per tonne and fan energy, the best of each column marked — with the maps of
//! every variant on one colour scale.
use std::fmt::Write as _;

use super::html::{Block, InputRecord, KeyFigure, Page, Table};
use super::load::{compare_curves_svg, load_outputs, CompareRow, MapScales, CAUTIONS};
use super::output::OutputSet;
use crate::load::{LoadResult, LoadSpec};
use crate::units::UnitSystem;

/// Which way a column is better.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Better {
    Lower,
    Higher,
}

/// One column of the design table: heading (with its unit), value in the report's units, which way is better,
/// decimals shown, and its name in `design.csv` (which holds the values in SI units).
struct Figure {
    head: String,
    value: Box<dyn Fn(&LoadResult) -> f64>,
    better: Better,
    decimals: usize,
    csv: &'static str,
}

fn per_tonne(r: &LoadResult) -> f64 {
    r.outcome.ready().fuel_used / (r.outcome.initial_mass_kg / 1000.0)
}

fn hours(h: Option<f64>) -> f64 {
    h.unwrap_or(f64::INFINITY)
}

fn figures(u: UnitSystem, fuel_unit: &str, fraction_pct: f64) -> Vec<Figure> {
    let fu = fuel_unit.to_string();
    let sm = |r: &LoadResult| r.airflow.summary;
    vec![
        Figure {
            head: format!("bed air ({})", u.flow_unit()),
            value: Box::new(move |r| u.flow_value(sm(r).bed_flow_m3_per_s)),
            better: Better::Higher,
            decimals: 0,
            csv: "bed_flow_m3_per_min",
        },
        Figure {
            head: "column CV (%)".into(),
            value: Box::new(move |r| 100.0 * sm(r).column_flow_cv),
            better: Better::Lower,
            decimals: 1,
            csv: "column_flow_cv_pct",
        },
        Figure {
            head: "lowest/mean".into(),
            value: Box::new(move |r| sm(r).min_over_mean),
            better: Better::Higher,
            decimals: 2,
            csv: "lowest_over_mean_column",
        },
        Figure {
            head: "h to mean".into(),
            value: Box::new(|r| hours(r.outcome.hours_to_mean_target)),
            better: Better::Lower,
            decimals: 1,
            csv: "hours_to_mean_target",
        },
        Figure {
            head: format!("h to {fraction_pct:.0} % rule"),
            value: Box::new(|r| hours(r.outcome.hours_to_fraction_target)),
            better: Better::Lower,
            decimals: 1,
            csv: "hours_to_fraction_target",
        },
        Figure {
            head: format!("over-dried ({} d.m.)", u.mass_unit()),
            value: Box::new(move |r| u.mass_value(r.outcome.zones.over_dried_dry_kg)),
            better: Better::Lower,
            decimals: 0,
            csv: "over_dried_dry_kg",
        },
        Figure {
            head: format!("still wet ({} d.m.)", u.mass_unit()),
            value: Box::new(move |r| u.mass_value(r.outcome.zones.still_wet_dry_kg)),
            better: Better::Lower,
            decimals: 0,
            csv: "still_wet_dry_kg",
        },
        Figure {
            head: format!("fuel ({})", u.fuel_per_mass_unit(fuel_unit)),
            value: Box::new(move |r| u.fuel_per_mass_value(per_tonne(r), &fu)),
            better: Better::Lower,
            decimals: 1,
            csv: "fuel_per_tonne",
        },
        Figure {
            head: "fan (kWh)".into(),
            value: Box::new(|r| r.outcome.ready().fan_kwh),
            better: Better::Lower,
            decimals: 1,
            csv: "fan_kwh",
        },
    ]
}

/// The best value of a column among the rows (runs that never reached a figure are left out).
fn best(f: &Figure, rows: &[CompareRow<'_>]) -> Option<f64> {
    let vals = rows
        .iter()
        .map(|r| (f.value)(r.result))
        .filter(|v| v.is_finite());
    match f.better {
        Better::Lower => vals.reduce(f64::min),
        Better::Higher => vals.reduce(f64::max),
    }
}

/// A cell's text and whether it is the column's best.
fn cell(f: &Figure, r: &LoadResult, best: Option<f64>) -> (String, bool) {
    let v = (f.value)(r);
    if !v.is_finite() {
        return ("not reached".into(), false);
    }
    let is_best = best.is_some_and(|b| (v - b).abs() <= 1e-9 * b.abs().max(1.0));
    (format!("{v:.*}", f.decimals), is_best)
}

/// The side-by-side table as printed; `*` marks the best of each column.
pub fn design_table(spec: &LoadSpec, rows: &[CompareRow<'_>], u: UnitSystem) -> String {
    let figs = figures(u, spec.heater.fuel.unit, spec.run.fraction * 100.0);
    let w0 = rows
        .iter()
        .map(|r| r.label.chars().count())
        .max()
        .unwrap_or(0)
        .max(7)
        + 2;
    let mut s = format!("{:<w0$}", "variant");
    let widths: Vec<usize> = figs
        .iter()
        .map(|f| f.head.chars().count().max(8) + 1)
        .collect();
    for (f, w) in figs.iter().zip(&widths) {
        let _ = write!(s, " {:>w$}", f.head);
    }
    s.push('\n');
    for row in rows {
        let _ = write!(s, "{:<w0$}", row.label);
        for (f, w) in figs.iter().zip(&widths) {
            let (text, is_best) = cell(f, row.result, best(f, rows));
            let _ = write!(
                s,
                " {:>w$}{}",
                text,
                if is_best { "*" } else { " " },
                w = w - 1
            );
        }
        s.push('\n');
    }
    s.push_str(
        "* = best in its column (most air, most even, soonest, least over-dried, still wet, fuel and fan energy); \
         fuel and fan to the stop rule; masses in dry matter at the end of the run\n",
    );
    s
}

/// `design.csv`: one row per variant, SI units, figures as in the table.
pub fn design_csv(spec: &LoadSpec, rows: &[CompareRow<'_>]) -> String {
    let figs = figures(
        UnitSystem::Si,
        spec.heater.fuel.unit,
        spec.run.fraction * 100.0,
    );
    let mut w = csv::Writer::from_writer(Vec::new());
    let head = ["variant", "folder"]
        .into_iter()
        .chain(figs.iter().map(|f| f.csv));
    w.write_record(head).expect("writing to memory cannot fail");
    for r in rows {
        let vals = figs.iter().map(|f| {
            let v = (f.value)(r.result);
            if v.is_finite() {
                format!("{v:.6}")
            } else {
                String::new()
            }
        });
        let rec: Vec<String> = [r.label.clone(), r.folder.clone()]
            .into_iter()
            .chain(vals)
            .collect();
        w.write_record(&rec).expect("writing to memory cannot fail");
    }
    String::from_utf8(w.into_inner().expect("writing to memory cannot fail"))
        .expect("CSV of UTF-8 text")
}

/// Every variant's files, on shared colour scales: its load set in its folder (with its plenum map when the
/// variant's plenum model has one).
pub fn design_outputs(specs: &[LoadSpec], rows: &[CompareRow<'_>], u: UnitSystem) -> OutputSet {
    let scales = MapScales::across(rows.iter().map(|r| r.result));
    let mut set = OutputSet::new();
    for (spec, row) in specs.iter().zip(rows) {
        set.add_set(
            row.folder.clone(),
            load_outputs(spec, &row.label, row.result, u, &scales),
        );
    }
    set
}

fn gallery(set: &OutputSet, rows: &[CompareRow<'_>], name: &str) -> Option<Block> {
    let pics: Vec<(String, String)> = rows
        .iter()
        .filter_map(|r| {
            let path = format!("{}/{name}", r.folder);
            set.get(&path).map(|_| {
                (
                    set.text(&path).to_string(),
                    format!("{} (also written as {path})", r.label),
                )
            })
        })
        .collect();
    (!pics.is_empty()).then_some(Block::Gallery(pics))
}

fn html_table(spec: &LoadSpec, rows: &[CompareRow<'_>], u: UnitSystem) -> Table {
    let figs = figures(u, spec.heater.fuel.unit, spec.run.fraction * 100.0);
    Table {
        caption:
            "Variants side by side (★ = best in its column; fuel and fan energy to the stop rule)"
                .into(),
        head: std::iter::once("variant".to_string())
            .chain(figs.iter().map(|f| f.head.clone()))
            .collect(),
        rows: rows
            .iter()
            .map(|row| {
                std::iter::once(row.label.clone())
                    .chain(figs.iter().map(|f| {
                        let (t, b) = cell(f, row.result, best(f, rows));
                        if b {
                            format!("{t} ★")
                        } else {
                            t
                        }
                    }))
                    .collect()
            })
            .collect(),
    }
}

/// The best row by `key` in the direction `better`, with its value.
fn best_row<'a>(
    rows: &'a [CompareRow<'a>],
    key: impl Fn(&LoadResult) -> f64,
    better: Better,
) -> Option<(&'a CompareRow<'a>, f64)> {
    let ranked = rows
        .iter()
        .map(|r| (r, key(r.result)))
        .filter(|x| x.1.is_finite());
    match better {
        Better::Lower => ranked.min_by(|a, b| a.1.total_cmp(&b.1)),
        Better::Higher => ranked.max_by(|a, b| a.1.total_cmp(&b.1)),
    }
}

/// The HTML report of a design comparison.
pub fn design_page(
    spec: &LoadSpec,
    rows: &[CompareRow<'_>],
    u: UnitSystem,
    set: &OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let mut answer = Vec::new();
    if let Some((b, h)) = best_row(
        rows,
        |r| hours(r.outcome.hours_to_fraction_target),
        Better::Lower,
    ) {
        answer.push(KeyFigure::new(
            "whole load ready soonest",
            format!("{}: {h:.1} h", b.label),
            format!("{:.0} % of the load at target", spec.run.fraction * 100.0),
        ));
    }
    if let Some((b, cv)) = best_row(rows, |r| r.airflow.summary.column_flow_cv, Better::Lower) {
        answer.push(KeyFigure::new(
            "most even airflow",
            format!("{}: CV {:.1} %", b.label, 100.0 * cv),
            format!(
                "lowest column / mean {:.2}",
                b.result.airflow.summary.min_over_mean
            ),
        ));
    }
    if let Some((b, f)) = best_row(rows, per_tonne, Better::Lower) {
        answer.push(KeyFigure::new(
            "least fuel per tonne",
            format!(
                "{}: {:.1} {}",
                b.label,
                u.fuel_per_mass_value(f, spec.heater.fuel.unit),
                u.fuel_per_mass_unit(spec.heater.fuel.unit)
            ),
            "per tonne loaded, to the stop rule",
        ));
    }
    let mut body = vec![
        Block::Heading("Figures".into()),
        Block::Table(html_table(spec, rows, u)),
        Block::Heading("Drying curves".into()),
        Block::Picture {
            svg: compare_curves_svg(spec, rows, "variant"),
            caption: "Mean kernel moisture of every variant (same load and weather)".into(),
            zoom: false,
        },
    ];
    for (name, heading) in [
        (
            "airflow_top.svg",
            "Air leaving the top surface, one colour scale for all variants",
        ),
        (
            "plenum_flow.svg",
            "Air in the plenum (2-D plenum variants), one colour scale",
        ),
        (
            "final_moisture_top.svg",
            "Final moisture seen from above, one colour scale for all variants",
        ),
        (
            "final_moisture_side.svg",
            "Final moisture in the side section, one colour scale",
        ),
    ] {
        if let Some(g) = gallery(set, rows, name) {
            body.push(Block::Heading(heading.into()));
            body.push(g);
        }
    }
    Page {
        title: format!("{} — designs compared", spec.name),
        lead: format!(
            "The same load and weather on {} container, fan, plenum or fill variants, each run through the \
             deep-bed model to its stop rule ({}).",
            rows.len(),
            spec.run.stop
        ),
        notes: if answer.len() < 3 {
            vec!["At least one variant did not reach a figure within the run.".into()]
        } else {
            vec![]
        },
        answer,
        body,
        summary: Some(printed),
        inputs,
        cautions: CAUTIONS.into(),
    }
}
