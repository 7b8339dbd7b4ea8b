//! `dryfront dry`, `dryfront compare` and `dryfront starts`: one load through the deep-bed model, the same load under
//! several heater strategies side by side, and the same load started at different times through the season.
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use anyhow::Context;
use rayon::prelude::*;

use crate::drying::heater::{Heater, StrategySpec};
use crate::drying::run::{RunObserver, SeriesRow};
use crate::outfile::write_atomic;
use crate::report::load::{
    air_svg, airflow_top_svg, compare_table, drying_curves_svg, final_side_svg, final_top_svg,
    outcome_json, series_csv, summary_text, CompareRow, CAUTIONS,
};
use crate::scenario::{run_load, LoadResult, LoadSetup};
use crate::units::UnitSystem;

/// Options shared by the load commands.
#[derive(Debug, clap::Args)]
pub struct LoadOptions {
    /// Scenario: a bundled name (`demo-load`) or a path to a scenario JSON file.
    #[arg(long, default_value = "demo-load")]
    pub scenario: String,
    /// Start the air this many hours after the scenario's start time.
    #[arg(long, default_value_t = 0.0)]
    pub start_offset_h: f64,
    /// Initial kernel moisture, % w.b. (overrides the scenario).
    #[arg(long)]
    pub initial_pct: Option<f64>,
    /// Run a heater strategy above the crop's safe plenum maximum anyway (it is refused otherwise).
    #[arg(long)]
    pub force: bool,
    /// Units for the printed summary.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
    /// Folder for the output files (created if missing); nothing is written without it.
    #[arg(long)]
    pub out: Option<PathBuf>,
}

/// Arguments of `dryfront dry`.
#[derive(Debug, clap::Args)]
pub struct DryArgs {
    /// Scenario and outputs.
    #[command(flatten)]
    pub load: LoadOptions,
    /// Heater strategy, overriding the scenario's: `none`, `rise=8` (over ambient air, fan heat counted),
    /// `plenum=35`, `rh=55,max=35`, each optionally with a daily burner window `@START-END` in local hours
    /// (`@20-6` wraps past midnight: 20:00 to 06:00).
    #[arg(long)]
    pub strategy: Option<StrategySpec>,
}

/// Arguments of `dryfront compare`.
#[derive(Debug, clap::Args)]
pub struct CompareArgs {
    /// Scenario and outputs.
    #[command(flatten)]
    pub load: LoadOptions,
    /// Strategies to compare, separated by `;`, each as for `dry --strategy`.
    #[arg(
        long,
        default_value = "none;rise=5;rise=8;plenum=35;rh=55,max=35;rise=8@18-9"
    )]
    pub strategies: String,
}

/// Arguments of `dryfront starts`.
#[derive(Debug, clap::Args)]
pub struct StartsArgs {
    /// Scenario and outputs.
    #[command(flatten)]
    pub load: LoadOptions,
    /// Hours between start times.
    #[arg(long, default_value_t = 24.0)]
    pub every_h: f64,
    /// Number of start times.
    #[arg(long, default_value_t = 10)]
    pub count: usize,
}

struct Progress {
    enabled: bool,
    next_h: f64,
}

impl RunObserver for Progress {
    fn on_row(&mut self, row: &SeriesRow) {
        if self.enabled && row.hours >= self.next_h {
            eprint!(
                "\r  {:6.1} h on air: mean kernel {:5.2} % w.b.   ",
                row.hours, row.mean_kernel_pct
            );
            self.next_h = row.hours + 1.0;
        }
    }
}

fn setup(opts: &LoadOptions) -> anyhow::Result<LoadSetup> {
    let mut setup = LoadSetup::read(&opts.scenario)?;
    if let Some(pct) = opts.initial_pct {
        crate::error::check_range("--initial-pct", pct, 5.0, 45.0, "% w.b.")?;
        if pct <= setup.settings.target_kernel_wb * 100.0 {
            anyhow::bail!(
                "--initial-pct: {pct} % w.b. is not above the target of {:.1} % w.b.",
                setup.settings.target_kernel_wb * 100.0
            );
        }
        setup.file.initial_kernel_moisture_pct = pct;
        setup.file.initial_kernel_moisture_top_pct = None;
    }
    if !opts.start_offset_h.is_finite() || opts.start_offset_h < 0.0 {
        anyhow::bail!(
            "--start-offset-h: {} h must be zero or more",
            opts.start_offset_h
        );
    }
    Ok(setup)
}

/// The heater for `spec` (the scenario's own when `None`) after the safety rule; a refusal names the option or the
/// scenario's field, a forced excess is printed as a warning.
fn checked_heater(
    setup: &LoadSetup,
    spec: Option<StrategySpec>,
    option: &str,
    force: bool,
) -> anyhow::Result<Heater> {
    let (heater, warning) = setup
        .checked_heater(spec, force)
        .with_context(|| match spec {
            Some(_) => option.to_string(),
            None => format!("{}: field \"heater.strategy\"", setup.path.display()),
        })?;
    if let Some(w) = warning {
        eprintln!("dryfront: warning: {w} (running because of --force)");
    }
    Ok(heater)
}

fn inputs(setup: &LoadSetup) -> Vec<&Path> {
    vec![setup.path.as_path(), setup.weather_path.as_path()]
}

fn write(dir: &Path, name: &str, text: &str, setup: &LoadSetup) -> anyhow::Result<()> {
    write_atomic(&dir.join(name), text.as_bytes(), &inputs(setup))?;
    Ok(())
}

/// Write the full set of files for one run into `dir`.
pub fn write_load_outputs(
    dir: &Path,
    setup: &LoadSetup,
    label: &str,
    r: &LoadResult,
) -> anyhow::Result<Vec<String>> {
    let target = setup.settings.target_kernel_wb * 100.0;
    let files = vec![
        (
            "summary.txt",
            format!(
                "{}\n{CAUTIONS}\n",
                summary_text(setup, label, r, UnitSystem::Si)
            ),
        ),
        ("outcome.json", outcome_json(setup, label, r)),
        ("series.csv", series_csv(&r.outcome)),
        (
            "drying_curves.svg",
            drying_curves_svg(&format!("{}: {label}", setup.file.name), &r.outcome, target),
        ),
        (
            "air_temperatures.svg",
            air_svg(&format!("{}: {label}", setup.file.name), &r.outcome),
        ),
        (
            "final_moisture_top.svg",
            final_top_svg(setup, r, &setup.settings),
        ),
        (
            "final_moisture_side.svg",
            final_side_svg(setup, r, &setup.settings),
        ),
        ("airflow_top.svg", airflow_top_svg(setup, r)),
    ];
    let mut names = Vec::new();
    for (name, text) in &files {
        write(dir, name, text, setup)?;
        names.push(name.to_string());
    }
    Ok(names)
}

/// `dryfront dry`.
pub fn run_dry(args: DryArgs) -> anyhow::Result<()> {
    let setup = setup(&args.load)?;
    let heater = checked_heater(&setup, args.strategy, "--strategy", args.load.force)?;
    let label = args.strategy.unwrap_or(setup.strategy).to_string();
    let mut progress = Progress {
        enabled: std::io::stderr().is_terminal(),
        next_h: 0.0,
    };
    let result = run_load(&setup, heater, args.load.start_offset_h, &mut progress)
        .with_context(|| format!("running {}", setup.path.display()))?;
    if progress.enabled {
        eprintln!();
    }
    print!("{}", summary_text(&setup, &label, &result, args.load.units));
    if let Some(dir) = &args.load.out {
        let names = write_load_outputs(dir, &setup, &label, &result)?;
        println!(
            "  wrote {} files to {}: {}",
            names.len(),
            dir.display(),
            names.join(", ")
        );
    }
    println!("{CAUTIONS}");
    Ok(())
}

/// `dryfront compare`.
pub fn run_compare(args: CompareArgs) -> anyhow::Result<()> {
    let setup = setup(&args.load)?;
    let specs: Vec<StrategySpec> = args
        .strategies
        .split(';')
        .map(|s| s.parse::<StrategySpec>().context("--strategies"))
        .collect::<Result<_, _>>()?;
    let heaters = specs
        .iter()
        .map(|s| checked_heater(&setup, Some(*s), "--strategies", args.load.force))
        .collect::<Result<Vec<_>, _>>()?;
    eprintln!(
        "comparing {} strategies on {} (in parallel)…",
        specs.len(),
        setup.file.name
    );
    let results: Vec<LoadResult> = heaters
        .par_iter()
        .map(|h| run_load(&setup, *h, args.load.start_offset_h, &mut ()))
        .collect::<Result<_, _>>()?;
    let rows: Vec<CompareRow> = specs
        .iter()
        .zip(&results)
        .map(|(s, r)| CompareRow {
            label: s.to_string(),
            result: r,
        })
        .collect();
    let table = compare_table(&rows, &setup.file.prices.currency, setup.fuel.unit);
    println!(
        "{} — same load, weather and fan; heater strategies side by side",
        setup.file.name
    );
    print!("{table}");
    if let Some(dir) = &args.load.out {
        write(
            dir,
            "compare.txt",
            &format!("{table}\n{CAUTIONS}\n"),
            &setup,
        )?;
        for (spec, r) in specs.iter().zip(&results) {
            let sub = dir.join(spec.to_string().replace([',', '=', '@'], "_"));
            write_load_outputs(&sub, &setup, &spec.to_string(), r)?;
        }
        println!(
            "  wrote compare.txt and one folder per strategy to {}",
            dir.display()
        );
    }
    println!("{CAUTIONS}");
    Ok(())
}

/// `dryfront starts`.
pub fn run_starts(args: StartsArgs) -> anyhow::Result<()> {
    let setup = setup(&args.load)?;
    if !(args.every_h.is_finite() && args.every_h > 0.0) {
        anyhow::bail!("--every-h: {} h must be positive", args.every_h);
    }
    if args.count == 0 || args.count > 1000 {
        anyhow::bail!("--count: {} must be between 1 and 1000", args.count);
    }
    let heater = checked_heater(&setup, None, "", args.load.force)?;
    let offsets: Vec<f64> = (0..args.count)
        .map(|i| args.load.start_offset_h + i as f64 * args.every_h)
        .collect();
    let last =
        setup.start + chrono::Duration::seconds((offsets[offsets.len() - 1] * 3600.0) as i64);
    if last >= setup.weather.end() {
        anyhow::bail!(
            "--count/--every-h: the last start {last} is past the end of the weather record {}",
            setup.weather.end()
        );
    }
    eprintln!(
        "running {} start times on {} (in parallel)…",
        offsets.len(),
        setup.file.name
    );
    let results: Vec<LoadResult> = offsets
        .par_iter()
        .map(|&h| run_load(&setup, heater, h, &mut ()))
        .collect::<Result<_, _>>()?;
    let mut csv = String::from(
        "start,hours_to_target_h,fuel_per_tonne,fan_kwh,over_dried_pct,final_kernel_pct_wb\n",
    );
    println!(
        "{} — the same load started at different times ({})",
        setup.file.name, setup.strategy
    );
    println!(
        "{:<26} {:>18} {:>14} {:>10} {:>16}",
        "start", "hours to target", "fuel (L/t)", "fan kWh", "over-dried (%)"
    );
    for (h, r) in offsets.iter().zip(&results) {
        let t = setup.start + chrono::Duration::seconds((h * 3600.0) as i64);
        let o = &r.outcome;
        let hours = o
            .hours_to_mean_target
            .map(|x| format!("{x:.1}"))
            .unwrap_or_else(|| "not reached".into());
        println!(
            "{:<26} {:>18} {:>14.1} {:>10.1} {:>16.1}",
            t.format("%Y-%m-%d %H:%M %:z"),
            hours,
            o.fuel_per_tonne,
            o.fan_kwh,
            o.over_dried_fraction * 100.0
        );
        csv.push_str(&format!(
            "{},{},{:.3},{:.3},{:.3},{:.3}\n",
            t.to_rfc3339(),
            o.hours_to_mean_target
                .map(|x| format!("{x:.3}"))
                .unwrap_or_default(),
            o.fuel_per_tonne,
            o.fan_kwh,
            o.over_dried_fraction * 100.0,
            o.final_kernel_pct
        ));
    }
    let reached: Vec<f64> = results
        .iter()
        .filter_map(|r| r.outcome.hours_to_mean_target)
        .collect();
    if !reached.is_empty() {
        let mut sorted = reached.clone();
        sorted.sort_by(f64::total_cmp);
        println!(
            "  hours to target: {:.1} h shortest, {:.1} h median, {:.1} h longest ({} of {} reached target)",
            sorted[0],
            sorted[sorted.len() / 2],
            sorted[sorted.len() - 1],
            reached.len(),
            results.len()
        );
    }
    if let Some(dir) = &args.load.out {
        write(dir, "starts.csv", &csv, &setup)?;
        println!("  wrote starts.csv to {}", dir.display());
    }
    println!("{CAUTIONS}");
    Ok(())
}
