//! The reports of `airflow fit`: the printed fit, the fitted container file, the per-block residual table, the
//! fit record, and maps of the measured and modelled airflow (on one colour scale), the residuals, the fitted
//! multipliers and their uncertainty, and the HTML report (`report.html`), which leads with the multipliers and
//! how much of each the survey determined.
use std::fmt::Write as _;

use ndarray::Array2;

use super::html::{Block, InputRecord, KeyFigure, Page, Table};
use super::load::{picture, CAUTIONS};
use super::output::OutputSet;
use super::svg::{heat_map, HeatMap, Overlay};
use crate::airflow::fit::{BlockFit, SurveyBlock, SurveyFit};
use crate::airflow::{AirflowSolution, Container, FlowSpec};
use crate::units::UnitSystem;

const MEMORY: &str = "writing to memory cannot fail";

/// A finished fit with what it was fitted to.
pub struct FitReport<'a> {
    /// The container file's contents with the fitted map.
    pub fitted: &'a Container,
    /// The survey file's name as given.
    pub survey_name: &'a str,
    /// The survey's blocks in the model's terms.
    pub blocks: &'a [SurveyBlock],
    /// Each block's columns (i from the front wall, j).
    pub cols: &'a [Vec<(usize, usize)>],
    /// The fit.
    pub fit: &'a SurveyFit,
    /// The flow it was fitted with.
    pub flow: &'a FlowSpec,
    /// What the solves ran with (air, bed law, settings), for `fit.json`.
    pub run: serde_json::Value,
    /// Units of the printed table and the maps' axes.
    pub units: UnitSystem,
}

impl FitReport<'_> {
    fn sol(&self) -> &AirflowSolution {
        &self.fit.solution
    }

    /// Mean bed depth under each block, m.
    fn depths(&self) -> Vec<f64> {
        self.cols
            .iter()
            .map(|c| c.iter().map(|&ij| self.sol().depth_m[ij]).sum::<f64>() / c.len() as f64)
            .collect()
    }

    /// Superficial velocity (m/s) → specific airflow (m³/min per m³) for each block.
    fn specific(&self, v: impl Fn(&BlockFit) -> f64) -> Vec<f64> {
        self.fit
            .blocks
            .iter()
            .zip(self.depths())
            .map(|(b, d)| v(b) * 60.0 / d)
            .collect()
    }

    /// A per-block value painted onto the grid's columns.
    fn raster(&self, values: &[f64]) -> Array2<f64> {
        let g = self.sol().grid;
        let mut a = Array2::from_elem((g.nx, g.ny), f64::NAN);
        for (c, v) in self.cols.iter().zip(values) {
            for &ij in c {
                a[ij] = *v;
            }
        }
        a
    }
}

/// The printed account of a fit: convergence, the whole-survey figures and one line per block.
pub fn fit_human(r: &FitReport<'_>, u: UnitSystem) -> String {
    let f = r.fit;
    let mut o = String::new();
    let _ = writeln!(
        o,
        "fitted {} blocks of survey {} on {}, plenum model {}: {} iterations ({} airflow solves){}",
        f.blocks.len(),
        r.survey_name,
        r.fitted.name,
        super::airflow::plenum_model_text(r.fitted, r.sol().grid),
        f.iterations,
        f.solves,
        if f.converged {
            String::new()
        } else {
            format!(
                " — NOT converged within {} iterations",
                f.settings.max_iters
            )
        }
    );
    let _ = writeln!(
        o,
        "misfit Σ((model − measured)/sd)² = {:.2} over {} readings, {:.2} with the prior's term (one multiplier per \
         reading can match every reading, so a small misfit says nothing about the noise: the intervals come from \
         the stated reading sd)",
        f.misfit,
        f.blocks.len(),
        f.objective
    );
    if f.misfit > 2.0 * f.blocks.len() as f64 {
        let _ = writeln!(
            o,
            "warning: the misfit is over twice the number of readings, so no map within the bounds matches the \
             survey: check the fan or flow (the readings' total against it), the fill and the reading sd"
        );
    }
    let meas = r.specific(|b| b.measured_m_per_s);
    let model = r.specific(|b| b.modelled_m_per_s);
    let _ = writeln!(
        o,
        "{:>8} {:>22} {:>22} {:>10} {:>17} {:>10}",
        "block", "measured", "model", "multiplier", "95 % interval", "data share"
    );
    for ((b, m), y) in f.blocks.iter().zip(&meas).zip(&model) {
        let _ = writeln!(
            o,
            "{:>8} {:>22} {:>22} {:>10.3} {:>7.3} – {:<7.3} {:>9.0} %{}",
            b.name,
            u.specific_airflow(*m),
            u.specific_airflow(*y),
            b.multiplier,
            b.ci95_low,
            b.ci95_high,
            100.0 * b.data_share,
            if b.at_bound { "  at a bound" } else { "" }
        );
    }
    let sm = &r.sol().summary;
    let _ = writeln!(
        o,
        "with the fitted map: {} through the bed, {} overall, plenum mean {}",
        u.flow(sm.bed_flow_m3_per_s),
        u.specific_airflow(sm.specific_airflow_m3_per_min_per_m3),
        u.pressure(sm.mean_plenum_pressure_pa)
    );
    o
}

fn blocks_csv(r: &FitReport<'_>) -> Vec<u8> {
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record([
        "block",
        "x0_m",
        "x1_m",
        "y0_m",
        "y1_m",
        "depth_m",
        "measured_m3_per_min_per_m3",
        "modelled_m3_per_min_per_m3",
        "uniform_map_m3_per_min_per_m3",
        "residual_m3_per_min_per_m3",
        "reading_sd_m3_per_min_per_m3",
        "standardised_residual",
        "multiplier",
        "ci95_low",
        "ci95_high",
        "sd_ln_multiplier",
        "data_share",
        "at_bound",
    ])
    .expect(MEMORY);
    let depths = r.depths();
    for ((s, b), d) in r.blocks.iter().zip(&r.fit.blocks).zip(depths) {
        let k = 60.0 / d;
        w.write_record([
            b.name.clone(),
            format!("{:.4}", s.x0_m),
            format!("{:.4}", s.x1_m),
            format!("{:.4}", s.y0_m),
            format!("{:.4}", s.y1_m),
            format!("{d:.4}"),
            format!("{:.4}", b.measured_m_per_s * k),
            format!("{:.4}", b.modelled_m_per_s * k),
            format!("{:.4}", b.start_m_per_s * k),
            format!("{:.4}", (b.modelled_m_per_s - b.measured_m_per_s) * k),
            format!("{:.4}", b.sd_m_per_s * k),
            format!(
                "{:.3}",
                (b.modelled_m_per_s - b.measured_m_per_s) / b.sd_m_per_s
            ),
            format!("{:.5}", b.multiplier),
            format!("{:.5}", b.ci95_low),
            format!("{:.5}", b.ci95_high),
            format!("{:.5}", b.sd_ln),
            format!("{:.4}", b.data_share),
            b.at_bound.to_string(),
        ])
        .expect(MEMORY);
    }
    w.into_inner().expect(MEMORY)
}

fn map(
    r: &FitReport<'_>,
    values: &Array2<f64>,
    title: &str,
    quantity: &str,
    unit: &str,
    range: Option<(f64, f64)>,
) -> String {
    let overlays = r
        .blocks
        .iter()
        .zip(&r.fit.blocks)
        .map(|(b, f)| Overlay::Block {
            x0_m: b.x0_m,
            x1_m: b.x1_m,
            y0_m: b.y0_m,
            y1_m: b.y1_m,
            multiplier: f.multiplier,
        })
        .collect();
    heat_map(&HeatMap {
        values: values.view(),
        x_extent_m: r.fitted.length_m,
        y_extent_m: r.fitted.width_m,
        units: r.units,
        title: format!("{}: {title}", r.fitted.name),
        x_label: "distance from front wall".into(),
        y_label: "across".into(),
        quantity: quantity.into(),
        unit: unit.into(),
        range,
        min_span: 0.0,
        marks: None,
        overlays,
        notes: vec!["Survey blocks outlined, each labelled with its fitted multiplier.".into()],
    })
}

/// The fit's files: `container.json` (the container with the fitted map), `blocks.csv`, `fit.json` and the maps
/// `measured.svg` and `modelled.svg` (one colour scale), `residual.svg`, `multiplier.svg`, `uncertainty.svg`.
pub fn fit_outputs(r: &FitReport<'_>) -> OutputSet {
    let container = serde_json::to_string_pretty(r.fitted).expect(MEMORY) + "\n";
    let f = r.fit;
    let record = serde_json::json!({
        "survey": r.survey_name,
        "container": r.fitted.name,
        "flow": match r.flow {
            FlowSpec::Fan(fan) => serde_json::json!({ "fan": fan.name }),
            FlowSpec::Fixed { total_m3_per_s } => serde_json::json!({ "fixed_m3_per_min": total_m3_per_s * 60.0 }),
        },
        "run": r.run,
        "fit_settings": f.settings,
        "iterations": f.iterations,
        "solves": f.solves,
        "converged": f.converged,
        "misfit": f.misfit,
        "objective": f.objective,
        "history": f.history,
        "blocks": f.blocks,
        "operating_point": r.sol().operating_point,
        "summary": r.sol().summary,
    });
    let meas = r.raster(&r.specific(|b| b.measured_m_per_s));
    let model = r.raster(&r.specific(|b| b.modelled_m_per_s));
    let all = meas
        .iter()
        .chain(model.iter())
        .copied()
        .filter(|v| v.is_finite());
    let range = all.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), v| {
        (a.min(v), b.max(v))
    });
    let std_res: Vec<f64> = f
        .blocks
        .iter()
        .map(|b| (b.modelled_m_per_s - b.measured_m_per_s) / b.sd_m_per_s)
        .collect();
    let rmax = std_res.iter().fold(1.0f64, |m, v| m.max(v.abs()));
    let mult: Vec<f64> = f.blocks.iter().map(|b| b.multiplier).collect();
    let factor: Vec<f64> = f.blocks.iter().map(|b| (1.96 * b.sd_ln).exp()).collect();
    let spec = "specific airflow";
    // The same number in both systems (m³/min per m³ = cfm/ft³); only the label changes.
    let unit = match r.units {
        UnitSystem::Si => "m³/min per m³",
        UnitSystem::Us => "cfm/ft³",
    };
    let mut set = OutputSet::new();
    set.add("container.json", container);
    set.add("blocks.csv", blocks_csv(r));
    set.add(
        "fit.json",
        serde_json::to_string_pretty(&record).expect(MEMORY) + "\n",
    );
    set.add(
        "measured.svg",
        map(
            r,
            &meas,
            "measured airflow (survey)",
            spec,
            unit,
            Some(range),
        ),
    );
    set.add(
        "modelled.svg",
        map(
            r,
            &model,
            "modelled airflow (fitted map)",
            spec,
            unit,
            Some(range),
        ),
    );
    set.add(
        "residual.svg",
        map(
            r,
            &r.raster(&std_res),
            "residual (model − measured) / reading sd",
            "standardised residual",
            "sd",
            Some((-rmax, rmax)),
        ),
    );
    set.add(
        "multiplier.svg",
        map(
            r,
            &r.raster(&mult),
            "fitted permeability multiplier",
            "multiplier",
            "×",
            None,
        ),
    );
    set.add(
        "uncertainty.svg",
        map(
            r,
            &r.raster(&factor),
            "95 % uncertainty factor of the multiplier (×/÷)",
            "factor",
            "×/÷",
            None,
        ),
    );
    set
}

/// The HTML report of a fit: the multipliers and their data share first, then the maps of the set (measured and
/// modelled on one colour scale, residual, multiplier, uncertainty), the per-block table, the printed account,
/// the inputs (container, fan, crop, survey) and the cautions. `notes` are the advice lines of the fitted map.
pub fn fit_page(
    r: &FitReport<'_>,
    notes: Vec<String>,
    set: &OutputSet,
    printed: String,
    inputs: Vec<InputRecord>,
) -> Page {
    let (f, u) = (r.fit, r.units);
    let span = |v: &mut dyn Iterator<Item = f64>| {
        v.fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), x| {
            (a.min(x), b.max(x))
        })
    };
    let (m_lo, m_hi) = span(&mut f.blocks.iter().map(|b| b.multiplier));
    let mut share: Vec<f64> = f.blocks.iter().map(|b| b.data_share).collect();
    share.sort_by(f64::total_cmp);
    let median_share = share.get(share.len() / 2).copied().unwrap_or(f64::NAN);
    let low_share = share.iter().filter(|&&d| d < 0.5).count();
    let at_bound = f.blocks.iter().filter(|b| b.at_bound).count();
    let sm = &r.sol().summary;
    let mut all_notes = Vec::new();
    if !f.converged {
        all_notes.push(format!(
            "The fit did NOT converge within {} iterations: the map is not a best fit.",
            f.settings.max_iters
        ));
    }
    if f.misfit > 2.0 * f.blocks.len() as f64 {
        all_notes.push("The misfit is over twice the number of readings, so no map within the bounds matches the survey: check the fan or flow (the readings' total against it), the fill and the reading sd.".into());
    }
    if at_bound > 0 {
        all_notes.push(format!(
            "{at_bound} blocks ended at a multiplier bound: the survey asks for more than the bounds allow there."
        ));
    }
    all_notes.extend(notes);
    let pic = |name: &str, caption: &str| picture(set, name, caption);
    Page {
        title: format!("{} — airflow fit", r.fitted.name),
        lead: format!(
            "A permeability multiplier per survey block, fitted to the survey {} ({} blocks) by regularised least squares: {} iterations, {} airflow solves.",
            r.survey_name,
            f.blocks.len(),
            f.iterations,
            f.solves
        ),
        answer: vec![
            KeyFigure::new(
                "multipliers",
                format!("{m_lo:.2} – {m_hi:.2}"),
                format!("{} blocks; 1 is the crop's own law", f.blocks.len()),
            ),
            KeyFigure::new(
                "data share",
                format!("median {:.0} %", 100.0 * median_share),
                format!("{low_share} blocks under 50 %: there the prior, not the survey, sets the multiplier"),
            ),
            KeyFigure::new(
                "misfit",
                format!("{:.2}", f.misfit),
                format!("Σ((model − measured)/sd)² over {} readings", f.blocks.len()),
            ),
            KeyFigure::new(
                "through the bed, fitted map",
                u.flow(sm.bed_flow_m3_per_s),
                format!("{} overall", u.specific_airflow(sm.specific_airflow_m3_per_min_per_m3)),
            ),
        ],
        notes: all_notes,
        body: vec![
            Block::Heading("Pictures".into()),
            pic("measured.svg", "Measured airflow per block (the survey), on the modelled map's colour scale"),
            pic("modelled.svg", "Modelled airflow with the fitted map, on the measured map's colour scale"),
            pic("residual.svg", "Residual: (model − measured) / reading sd"),
            pic("multiplier.svg", "Fitted permeability multiplier per block"),
            pic("uncertainty.svg", "95 % uncertainty factor of each multiplier (×/÷)"),
            Block::Heading("Figures".into()),
            Block::Table(blocks_table(r)),
        ],
        summary: Some(printed),
        inputs,
        cautions: CAUTIONS.into(),
    }
}

fn blocks_table(r: &FitReport<'_>) -> Table {
    let u = r.units;
    let meas = r.specific(|b| b.measured_m_per_s);
    let model = r.specific(|b| b.modelled_m_per_s);
    Table {
        caption: "Each block: measured and modelled airflow, multiplier, its 95 % interval and data share".into(),
        head: ["block", "measured", "modelled", "multiplier", "95 % interval", "data share"]
            .map(String::from)
            .to_vec(),
        rows: r
            .fit
            .blocks
            .iter()
            .zip(meas.iter().zip(&model))
            .map(|(b, (m, y))| {
                vec![
                    b.name.clone(),
                    u.specific_airflow(*m),
                    u.specific_airflow(*y),
                    format!("{:.3}{}", b.multiplier, if b.at_bound { " (at a bound)" } else { "" }),
                    format!("{:.3} – {:.3}", b.ci95_low, b.ci95_high),
                    format!("{:.0} %", 100.0 * b.data_share),
                ]
            })
            .collect(),
    }
}
