//! `dryfront airflow fit`: fit a permeability multiplier per block of a top-surface airflow survey and write the
//! container with the fitted map, the residual table, the maps and the confidence figures. The container, crop,
//! fan or flow, air and grid options are those of `dryfront airflow` (loaded by the same code); the survey is read
//! by `input::survey`, the fit is `airflow::fit`, the files are `report::airflow_fit`.
use std::path::PathBuf;

use crate::airflow::fit::{block_columns, fit_survey, fitted_container, FitProgress, FitSettings};
use crate::error::check_range;
use crate::input::survey::read_survey;
use crate::report::airflow_fit::{fit_human, fit_outputs, fit_page, FitReport};
use crate::report::output::check_target;

/// The options of `dryfront airflow fit`.
#[derive(Debug, clap::Args)]
pub struct FitArgs {
    /// The survey: a CSV with one row per block (block, x0_m, x1_m, y0_m, y1_m, funnel_mouth_m2,
    /// reading_m3_per_min); see the README.
    #[arg(long)]
    pub survey: PathBuf,
    /// Standard deviation of one reading, % of the reading (funnel and anemometer together; a reading under a
    /// quarter of the survey's mean gets the sd of a quarter of the mean).
    #[arg(long, default_value_t = 10.0)]
    pub reading_sd_pct: f64,
    /// Lowest permeability multiplier a block may take.
    #[arg(long, default_value_t = 0.1)]
    pub min_multiplier: f64,
    /// Highest permeability multiplier a block may take.
    #[arg(long, default_value_t = 10.0)]
    pub max_multiplier: f64,
    /// The prior (the regularisation): a block's multiplier lies within this factor of 1 at one standard
    /// deviation (ln m ~ N(0, ln(factor)²)).
    #[arg(long, default_value_t = 3.0)]
    pub prior_factor: f64,
    /// Iterations (Jacobians) allowed.
    #[arg(long, default_value_t = 30)]
    pub max_iters: u32,
    /// The container, crop, fan or flow, air, grid and output options of `dryfront airflow`.
    #[command(flatten)]
    pub opts: Box<super::airflow::AirflowOptions>,
}

impl FitArgs {
    fn settings(&self) -> anyhow::Result<FitSettings> {
        let lo = check_range("--min-multiplier", self.min_multiplier, 1e-3, 1.0, "")?;
        let hi = check_range("--max-multiplier", self.max_multiplier, 1.0, 1e3, "")?;
        if lo >= hi {
            anyhow::bail!("--min-multiplier {lo} must be below --max-multiplier {hi}");
        }
        let prior = check_range("--prior-factor", self.prior_factor, 1.01, 1e3, "")?;
        let iters = check_range("--max-iters", f64::from(self.max_iters), 1.0, 200.0, "")?;
        Ok(FitSettings {
            min_multiplier: lo,
            max_multiplier: hi,
            prior_sd_ln: prior.ln(),
            max_iters: iters as u32,
            ..FitSettings::default()
        })
    }
}

/// The fit's progress in the printed summary's words: where the iteration stands, the misfit and the airflow
/// solves so far (the fit's cost). Short enough for an 80-column terminal with the label, the seconds and the
/// padding while the iteration counts have two digits, the misfit is under 100 000, the solves under 10 000 and
/// the seconds under 1 000 (a longer line would wrap, and each update would then leave a line behind).
fn progress_state(p: &FitProgress) -> String {
    let s = if p.solves == 1 { "" } else { "s" };
    let figures = format!("misfit {:.2}, {} solve{s}", p.misfit, p.solves);
    if p.done {
        let s = if p.iter == 1 { "" } else { "s" };
        format!("done in {} iteration{s}, {figures}", p.iter)
    } else {
        format!("iteration {} of at most {}, {figures}", p.iter, p.max_iters)
    }
}

/// Run the fit.
pub fn run(args: FitArgs) -> anyhow::Result<()> {
    let fs = args.settings()?;
    let sd = check_range("--reading-sd-pct", args.reading_sd_pct, 0.1, 100.0, "%")? / 100.0;
    let o = &args.opts;
    let mut l = super::airflow::load(o)?;
    l.inputs.push(args.survey.clone());
    if let Some(dir) = &o.out {
        check_target(dir, &l.inputs, o.replace)?;
    }
    let survey = read_survey(&args.survey)?;
    let blocks = survey.blocks_for(&l.container, l.settings.grid, sd)?;
    let bar = super::progress::Progress::new("airflow fit", 0);
    let fit = fit_survey(
        &l.container,
        &blocks,
        &l.flow,
        &l.law,
        &l.air,
        &l.settings,
        &fs,
        &mut |p| bar.note(&progress_state(&p)),
    );
    bar.end();
    let fit = fit?;
    let mult: Vec<f64> = fit.blocks.iter().map(|b| b.multiplier).collect();
    let mut fitted = fitted_container(&l.container, &blocks, &mult);
    let survey_name = args.survey.display().to_string();
    fitted.description = format!(
        "{} Permeability map fitted by `dryfront airflow fit` to the survey {survey_name} ({} blocks).",
        fitted.description.trim_end(),
        blocks.len()
    );
    let (air, bed) = l.run_json()?;
    let report = FitReport {
        fitted: &fitted,
        survey_name: &survey_name,
        blocks: &blocks,
        cols: &block_columns(&l.container, l.settings.grid, &blocks),
        fit: &fit,
        flow: &l.flow,
        run: serde_json::json!({
            "air": air,
            "bed_moisture": bed,
            "bed_law": l.law,
            "settings": l.settings,
            "reading_sd_pct": args.reading_sd_pct,
        }),
        units: o.units,
    };
    let advice: Vec<String> = crate::report::airflow::airflow_advice(&fitted, &fit.solution)
        .iter()
        .map(|a| a.text(o.units))
        .collect();
    let mut printed = l.human(o.units) + &fit_human(&report, o.units);
    for a in &advice {
        printed.push_str(a);
        printed.push('\n');
    }
    print!("{printed}");
    if let Some(dir) = &o.out {
        let mut set = fit_outputs(&report);
        let page = fit_page(
            &report,
            advice,
            &set,
            printed,
            super::inputs_as_run(&l.inputs)?,
        );
        set.add("report.html", page.render());
        set.commit(dir, &l.inputs, o.replace)?;
        let names: Vec<String> = set.names().map(|n| n.display().to_string()).collect();
        println!("wrote {} to {}", names.join(", "), dir.display());
    }
    Ok(())
}
