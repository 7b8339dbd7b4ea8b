//! `dryfront calibrate`: fit a crop's drying constants to the moisture samples of one or more loads and write the
//! calibrated crop file, the residuals and a plot.
use std::path::PathBuf;

use anyhow::Context;

use crate::calibrate::fit::FitSettings;
use crate::calibrate::rates::{calibrate, Constant, LoadRecord};
use crate::input::samples::{read_samples, SampledLoad};
use crate::input::scenario::Scenario;
use crate::report::calibrate::{
    calibrate_page, calibrated_crop_json, fit_table, plot_svg, residual_table, residuals_csv,
};
use crate::report::output::{check_target, OutputSet};
use crate::units::UnitSystem;

/// Arguments of `dryfront calibrate`.
#[derive(Debug, clap::Args)]
pub struct CalibrateArgs {
    /// A load record: its scenario (bundled name or path) and its moisture samples CSV. Repeat for more loads; all
    /// must name the same crop.
    #[arg(long = "load", num_args = 2, value_names = ["SCENARIO", "SAMPLES"], required = true)]
    pub load: Vec<String>,
    /// Constants to fit, comma-separated: `hull-rate`, `kernel-rate`, `activation-energy`.
    #[arg(long, value_delimiter = ',', default_value = "hull-rate,kernel-rate")]
    pub fit: Vec<String>,
    /// Most Levenberg–Marquardt iterations.
    #[arg(long, default_value_t = 30)]
    pub max_iterations: usize,
    /// Units of the printed places, the plot and `report.html` (the crop file and `residuals.csv` stay SI).
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
    /// Folder for the calibrated crop file, residuals, plot and `report.html` (created if missing; an earlier set
    /// there is replaced whole); nothing is written without it.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
}

fn constant_named(name: &str) -> anyhow::Result<Constant> {
    Constant::ALL
        .into_iter()
        .find(|c| c.name() == name)
        .ok_or_else(|| {
            let names: Vec<&str> = Constant::ALL.iter().map(|c| c.name()).collect();
            anyhow::anyhow!("--fit: {name:?} is not one of {}", names.join(", "))
        })
}

/// Read every load record: its scenario and its samples (checked against the load's start and container).
fn records(args: &CalibrateArgs) -> anyhow::Result<(Vec<LoadRecord>, Vec<PathBuf>)> {
    let mut out = Vec::new();
    let mut inputs = Vec::new();
    for pair in args.load.chunks(2) {
        let (sc, _) = Scenario::read(&pair[0], false)?;
        let c = &sc.spec.container;
        let load = SampledLoad {
            start: sc.spec.start,
            length_m: c.length_m,
            width_m: c.width_m,
            max_depth_m: c.wall_height_m,
        };
        let path = PathBuf::from(&pair[1]);
        let samples = read_samples(&path, &load)?;
        inputs.extend(sc.inputs.iter().cloned());
        inputs.push(path.clone());
        out.push(LoadRecord {
            name: format!("{} ({})", sc.spec.name, path.display()),
            spec: sc.spec,
            samples,
        });
    }
    Ok((out, inputs))
}

/// `dryfront calibrate`.
pub fn run(args: CalibrateArgs) -> anyhow::Result<()> {
    let constants = args
        .fit
        .iter()
        .map(|n| constant_named(n))
        .collect::<anyhow::Result<Vec<_>>>()?;
    crate::error::check_range(
        "--max-iterations",
        args.max_iterations as f64,
        1.0,
        200.0,
        "",
    )?;
    let (records, inputs) = records(&args)?;
    if let Some(dir) = &args.out {
        check_target(dir, &inputs, args.replace)?;
    }
    let crop = records[0].spec.crop.clone();
    if let Some(r) = records.iter().find(|r| r.spec.crop.path != crop.path) {
        anyhow::bail!(
            "--load: {} uses the crop {}, the first load {}: calibrate one crop at a time",
            r.name,
            r.spec.crop.path.display(),
            crop.path.display()
        );
    }
    let settings = FitSettings {
        max_iterations: args.max_iterations,
        ..FitSettings::default()
    };
    let n: usize = records.iter().map(|r| r.samples.len()).sum();
    eprintln!(
        "fitting {} to {n} samples of {} loads (each iteration runs every load {} times)…",
        constants
            .iter()
            .map(|c| c.name())
            .collect::<Vec<_>>()
            .join(", "),
        records.len(),
        constants.len() + 1
    );
    let cal = calibrate(&crop, &records, &constants, &settings)?;
    let printed = format!(
        "{} — fitted to {n} moisture samples\n{}{}",
        crop.name,
        fit_table(&cal, settings.confidence),
        residual_table(&cal, &records, args.units)
    );
    print!("{printed}");
    let date = chrono::Utc::now().format("%Y-%m-%d");
    let names: Vec<String> = records.iter().map(|r| r.name.clone()).collect();
    let fitted: Vec<String> = cal
        .constants
        .iter()
        .enumerate()
        .map(|(k, c)| {
            format!(
                "{} {:.4} ± {:.4} {}",
                c.name(),
                cal.fit.values[k],
                cal.fit.half_width[k],
                c.unit()
            )
        })
        .collect();
    let source = format!(
        "calibrated {date} by `dryfront calibrate` (weighted least squares, Levenberg-Marquardt, 95 % intervals) to {n} moisture samples of: {}; fitted {}",
        names.join("; "),
        fitted.join(", ")
    );
    if let Some(dir) = &args.out {
        let original = crate::input::read_text(&crop.path)?;
        let json = calibrated_crop_json(&original, &cal, &source)
            .with_context(|| format!("rewriting {}", crop.path.display()))?;
        let mut set = OutputSet::new();
        set.add(format!("{}-calibrated.json", crop.name), json);
        set.add("residuals.csv", residuals_csv(&cal, &records));
        set.add(
            "measured-vs-model.svg",
            plot_svg(&cal, &records, args.units),
        );
        let page = calibrate_page(
            (&cal, &records, settings.confidence),
            args.units,
            &set,
            printed,
            super::inputs_as_run(&inputs)?,
        );
        set.add("report.html", page.render());
        set.commit(dir, &inputs, args.replace)?;
        println!(
            "  wrote report.html, {}-calibrated.json, residuals.csv and measured-vs-model.svg to {}",
            crop.name,
            dir.display()
        );
    }
    Ok(())
}
