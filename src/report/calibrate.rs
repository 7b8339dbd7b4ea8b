//! What `dryfront calibrate` writes: the fit table, the residuals (CSV), measured against modelled moisture (SVG),
//! the new crop file with the fitted constants marked "calibrated", and the HTML report (`report.html`), which
//! leads with the constants before and after with their intervals.

use std::fmt::Write as _;

use serde_json::Value;

use super::html::{Block, InputRecord, KeyFigure, Page, Table};
use super::load::{picture, CAUTIONS};
use super::output::OutputSet;
use super::svg::{line_chart, LineChart, Series};
use crate::calibrate::rates::{Calibration, LoadRecord};
use crate::calibrate::samples::{Measure, Place};
use crate::units::UnitSystem;

/// A sample's place in `units` (SI in `residuals.csv`).
fn place_text(p: Place, units: UnitSystem) -> String {
    match p {
        Place::Composite => "composite".into(),
        Place::Point { x_m, y_m, depth_m } => format!(
            "x {}, y {}, {} deep",
            units.length(x_m),
            units.length(y_m),
            units.length(depth_m)
        ),
    }
}

fn measure_text(m: Measure) -> &'static str {
    match m {
        Measure::Kernel => "kernel",
        Measure::Pod => "pod",
    }
}

/// The printed fit: each constant before and after with its interval, then the residual summary.
pub fn fit_table(cal: &Calibration, confidence: f64) -> String {
    let f = &cal.fit;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{:<20} {:>12} {:>12} {:>22} {:>10}  unit",
        "constant",
        "before",
        "fitted",
        format!("{:.0} % interval", confidence * 100.0),
        "range"
    );
    for (n, c) in cal.constants.iter().enumerate() {
        let (lo, hi) = c.bounds();
        let hw = f.half_width[n];
        let interval = if hw.is_finite() {
            format!("{:.4} – {:.4}", f.values[n] - hw, f.values[n] + hw)
        } else {
            "not determined".into()
        };
        let _ = writeln!(
            s,
            "{:<20} {:>12.4} {:>12.4} {:>22} {:>10}  {}{}",
            c.name(),
            cal.before[n],
            f.values[n],
            interval,
            format!("{lo}–{hi}"),
            c.unit(),
            if f.at_bound[n] {
                "  (at its bound)"
            } else {
                ""
            }
        );
    }
    let rms = |m: &[f64]| {
        let n = m.len() as f64;
        (m.iter()
            .zip(&cal.measured)
            .map(|(a, b)| (a - b) * (a - b))
            .sum::<f64>()
            / n)
            .sqrt()
    };
    let _ = writeln!(
        s,
        "samples {}; rms residual {:.2} %-points w.b. before, {:.2} after; weighted sum of squares {:.3} → {:.3}; {} iterations, {} model runs of every load{}",
        cal.measured.len(),
        rms(&cal.model_before),
        rms(&f.model),
        f.s_start,
        f.s_final,
        f.iterations,
        f.evaluations,
        if f.converged { "" } else { " (iteration limit: not converged)" }
    );
    s
}

/// Residuals, one row per sample.
pub fn residuals_csv(cal: &Calibration, records: &[LoadRecord]) -> String {
    let mut s = String::from(
        "record,line,hours,place,measure,method,measured_wb_pct,model_before_wb_pct,model_fitted_wb_pct,residual_pct_points\n",
    );
    let mut n = 0;
    for r in records {
        for smp in &r.samples {
            let fitted = cal.fit.model[n];
            let _ = writeln!(
                s,
                "{},{},{:.3},{},{},{},{:.2},{:.3},{:.3},{:.3}",
                r.name,
                smp.line,
                smp.hours,
                place_text(smp.place, UnitSystem::Si),
                measure_text(smp.measure),
                smp.method.name(),
                smp.moisture_wb_pct,
                cal.model_before[n],
                fitted,
                fitted - smp.moisture_wb_pct
            );
            n += 1;
        }
    }
    s
}

/// Points of one chart line: (hours, moisture %).
type Points = Vec<(f64, f64)>;

/// Measured and modelled moisture against hours on air, one group of lines per record, place and measure (so a
/// line never joins a grab sample to a composite): measured, modelled before and after the fit; places in `units`.
pub fn plot_svg(cal: &Calibration, records: &[LoadRecord], units: UnitSystem) -> String {
    let mut series = Vec::new();
    let mut n = 0;
    for r in records {
        // Groups in order of first appearance.
        let mut groups: Vec<(String, [Points; 3])> = Vec::new();
        for s in &r.samples {
            let key = format!("{} {}", place_text(s.place, units), measure_text(s.measure));
            let g = match groups.iter().position(|(k, _)| *k == key) {
                Some(i) => i,
                None => {
                    groups.push((key, [Vec::new(), Vec::new(), Vec::new()]));
                    groups.len() - 1
                }
            };
            let pts = &mut groups[g].1;
            pts[0].push((s.hours, s.moisture_wb_pct));
            pts[1].push((s.hours, cal.model_before[n]));
            pts[2].push((s.hours, cal.fit.model[n]));
            n += 1;
        }
        for (key, pts) in groups {
            for (label, mut p) in ["measured", "model before", "model fitted"]
                .into_iter()
                .zip(pts)
            {
                p.sort_by(|a, b| a.0.total_cmp(&b.0));
                series.push(Series {
                    name: format!("{}, {key}: {label}", r.spec.name),
                    points: p,
                });
            }
        }
    }
    line_chart(&LineChart {
        title: "Measured and modelled moisture at the sampled places".into(),
        x_label: "time on air".into(),
        x_unit: "h".into(),
        y_label: "moisture (w.b.)".into(),
        y_unit: "%".into(),
        series,
        limits: vec![],
        clock: None,
    })
}

/// The crop file text with the fitted constants replaced: value, status "calibrated" and `source`. Other fields are
/// kept; keys come out in sorted order (the loader reads any order).
pub fn calibrated_crop_json(
    original: &str,
    cal: &Calibration,
    source: &str,
) -> Result<String, serde_json::Error> {
    let mut root: Value = serde_json::from_str(original)?;
    for (n, c) in cal.constants.iter().enumerate() {
        for field in c.fields() {
            let mut v = &mut root;
            for part in field.split('.') {
                v = &mut v[part];
            }
            if let Value::Object(o) = v {
                o.insert("value".into(), Value::from(cal.fit.values[n]));
                o.insert("status".into(), Value::from("calibrated"));
                o.insert("source".into(), Value::from(source));
            }
        }
    }
    let mut s = serde_json::to_string_pretty(&root)?;
    s.push('\n');
    Ok(s)
}

/// The printed residuals: one line per sample, places in `units`.
pub fn residual_table(cal: &Calibration, records: &[LoadRecord], units: UnitSystem) -> String {
    let mut s = format!(
        "{:<6} {:>8} {:<34} {:<7} {:>9} {:>9} {:>9} {:>9}\n",
        "line", "hours", "place", "measure", "measured", "before", "fitted", "residual"
    );
    let mut n = 0;
    for r in records {
        let _ = writeln!(s, "{}", r.name);
        for smp in &r.samples {
            let fitted = cal.fit.model[n];
            let _ = writeln!(
                s,
                "{:<6} {:>6.1} h {:<34} {:<7} {:>7.2} % {:>7.2} % {:>7.2} % {:>+9.2}",
                smp.line,
                smp.hours,
                place_text(smp.place, units),
                measure_text(smp.measure),
                smp.moisture_wb_pct,
                cal.model_before[n],
                fitted,
                fitted - smp.moisture_wb_pct
            );
            n += 1;
        }
    }
    s.push_str("(moisture % wet basis; residual = fitted − measured, %-points)\n");
    s
}

/// Root-mean-square of model − measured, %-points.
fn rms(cal: &Calibration, model: &[f64]) -> f64 {
    let n = model.len().max(1) as f64;
    (model
        .iter()
        .zip(&cal.measured)
        .map(|(a, b)| (a - b) * (a - b))
        .sum::<f64>()
        / n)
        .sqrt()
}

/// The HTML report of a calibration: each constant before and after with its interval, the residuals before and
/// after, then the measured-vs-model picture of the set, the constants and residuals as tables, the summary as
/// printed, the inputs (scenarios, weather, samples) and the cautions.
pub fn calibrate_page(
    (cal, records, confidence): (&Calibration, &[LoadRecord], f64),
    units: UnitSystem,
    set: &OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let f = &cal.fit;
    let level = format!("{:.0} %", confidence * 100.0);
    let interval = |k: usize| {
        let hw = f.half_width[k];
        if hw.is_finite() {
            format!(
                "{level} interval {:.4} – {:.4}",
                f.values[k] - hw,
                f.values[k] + hw
            )
        } else {
            "not determined by the samples".into()
        }
    };
    let mut answer: Vec<KeyFigure> = cal
        .constants
        .iter()
        .enumerate()
        .map(|(k, c)| {
            KeyFigure::new(
                format!("{} (was {:.4})", c.name(), cal.before[k]),
                format!("{:.4} {}", f.values[k], c.unit()),
                interval(k),
            )
        })
        .collect();
    answer.push(KeyFigure::new(
        "rms residual",
        format!("{:.2} %-points w.b.", rms(cal, &f.model)),
        format!("before the fit {:.2}", rms(cal, &cal.model_before)),
    ));
    let mut notes = Vec::new();
    if !f.converged {
        notes.push(format!(
            "The fit stopped at its iteration limit ({} iterations) without converging: the constants are not a best fit.",
            f.iterations
        ));
    }
    for (k, c) in cal.constants.iter().enumerate() {
        if f.at_bound[k] {
            notes.push(format!(
                "{} ended at its bound: leave it as it was rather than use the fitted value.",
                c.name()
            ));
        } else if !f.half_width[k].is_finite() {
            notes.push(format!(
                "{}: the samples do not determine it; leave it as it was.",
                c.name()
            ));
        }
    }
    Page {
        title: format!("{} — calibration", cal.crop.name),
        lead: format!(
            "{} constants of {} fitted to {} moisture samples of {} loads by weighted least squares (Levenberg–Marquardt), {} iterations.",
            cal.constants.len(),
            cal.crop.name,
            cal.measured.len(),
            records.len(),
            f.iterations
        ),
        answer,
        notes,
        body: vec![
            Block::Heading("Pictures".into()),
            picture(
                set,
                "measured-vs-model.svg",
                "Measured moisture and the model before and after the fit at each sampled place",
            ),
            Block::Heading("Figures".into()),
            Block::Table(constants_table(cal, &level)),
            Block::Table(residuals_html(cal, records, units)),
        ],
        summary: Some(printed),
        inputs,
        cautions: CAUTIONS.into(),
    }
}

fn constants_table(cal: &Calibration, level: &str) -> Table {
    let f = &cal.fit;
    Table {
        caption: "Constants before and after the fit".into(),
        head: vec![
            "constant".into(),
            "before".into(),
            "fitted".into(),
            format!("{level} interval"),
            "allowed range".into(),
            "unit".into(),
        ],
        rows: cal
            .constants
            .iter()
            .enumerate()
            .map(|(k, c)| {
                let (lo, hi) = c.bounds();
                let hw = f.half_width[k];
                vec![
                    c.name().into(),
                    format!("{:.4}", cal.before[k]),
                    format!(
                        "{:.4}{}",
                        f.values[k],
                        if f.at_bound[k] { " (at its bound)" } else { "" }
                    ),
                    if hw.is_finite() {
                        format!("{:.4} – {:.4}", f.values[k] - hw, f.values[k] + hw)
                    } else {
                        "not determined".into()
                    },
                    format!("{lo} – {hi}"),
                    c.unit().into(),
                ]
            })
            .collect(),
    }
}

fn residuals_html(cal: &Calibration, records: &[LoadRecord], units: UnitSystem) -> Table {
    let mut rows = Vec::new();
    let mut n = 0;
    for r in records {
        for smp in &r.samples {
            let fitted = cal.fit.model[n];
            rows.push(vec![
                r.name.clone(),
                smp.line.to_string(),
                format!("{:.1} h", smp.hours),
                place_text(smp.place, units),
                measure_text(smp.measure).into(),
                format!("{:.2}", smp.moisture_wb_pct),
                format!("{:.2}", cal.model_before[n]),
                format!("{fitted:.2}"),
                format!("{:+.2}", fitted - smp.moisture_wb_pct),
            ]);
            n += 1;
        }
    }
    Table {
        caption: "Each sample: moisture % w.b.; residual = fitted − measured, %-points".into(),
        head: [
            "record",
            "line",
            "on air",
            "place",
            "measure",
            "measured",
            "model before",
            "model fitted",
            "residual",
        ]
        .map(String::from)
        .to_vec(),
        rows,
    }
}
