//! `dryfront dry`, `dryfront compare` and `dryfront starts`: one load through the deep-bed model, the same load under
//! several heater strategies side by side, and the same load started at different times through the season.
use std::io::IsTerminal;
use std::path::PathBuf;

use anyhow::Context;
use rayon::prelude::*;

use crate::drying::bed::BedState;
use crate::drying::heater::{SafetyWarning, StrategySpec};
use crate::drying::run::{RunObserver, StepReport, StopRule};
use crate::input::scenario::Scenario;
use crate::load::{checked_heater, run_load, LoadResult, LoadSpec};
use crate::report::load::{
    compare_page, compare_table, load_outputs, load_page, starts_csv, starts_page, strategy_folder,
    summary_text, CompareRow, MapScales, CAUTIONS,
};
use crate::report::output::{check_target, OutputSet};
use crate::units::UnitSystem;

/// Options shared by the load commands.
#[derive(Debug, Clone, clap::Args)]
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
    /// When the load is done (overrides the scenario): `mean` (mean kernel moisture at target), `fraction` (95 % of
    /// the load at or below target, or the scenario's fraction), `both` (the default: the whole load ready) or
    /// `hours=H` (a fixed time on air).
    #[arg(long)]
    pub stop: Option<StopRule>,
    /// Units for everything printed and for summary.txt (`us`: °F, °F differences, cfm, in. of water, lb, gal);
    /// heater set-points on the command line are read in the same units. CSV and JSON files stay SI.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
    /// Folder for the output files (created if missing; an earlier set there is replaced whole); nothing is
    /// written without it.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
}

/// Arguments of `dryfront dry`.
#[derive(Debug, clap::Args)]
pub struct DryArgs {
    /// Scenario and outputs.
    #[command(flatten)]
    pub load: LoadOptions,
    /// Heater strategy, overriding the scenario's: `none`, `rise=8`, `plenum=35`, `rh=55,max=35`, each optionally
    /// with a burner window `@20-6` (local hours); set-points in °C and K, or °F with `--units us`.
    #[arg(long)]
    pub strategy: Option<String>,
}

/// Arguments of `dryfront compare`.
#[derive(Debug, clap::Args)]
pub struct CompareArgs {
    /// Scenario and outputs.
    #[command(flatten)]
    pub load: LoadOptions,
    /// Strategies to compare, separated by `;` (set-points in °F with `--units us`).
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
    fn on_step(&mut self, step: &StepReport, _bed: &BedState) {
        if self.enabled && step.hours >= self.next_h {
            eprint!(
                "\r  {:6.1} h on air: mean kernel {:5.2} % w.b., {:4.1} % of the load above target   ",
                step.hours,
                step.mean_kernel_wb * 100.0,
                step.above_target_fraction * 100.0
            );
            self.next_h = step.hours + 1.0;
        }
    }
}

/// The scenario with the command line's overrides; the heater's safety warning when `--force` let it run.
pub(super) fn setup(opts: &LoadOptions) -> anyhow::Result<(Scenario, Option<SafetyWarning>)> {
    let (mut sc, warning) = Scenario::read(&opts.scenario, opts.force)?;
    let spec = &mut sc.spec;
    if let Some(pct) = opts.initial_pct {
        crate::error::check_range("--initial-pct", pct, 5.0, 45.0, "% w.b.")?;
        if pct <= spec.run.target_kernel_wb * 100.0 {
            anyhow::bail!(
                "--initial-pct: {pct} % w.b. is not above the target of {:.1} % w.b.",
                spec.run.target_kernel_wb * 100.0
            );
        }
        spec.initial = crate::drying::bed::InitialMoisture::Uniform(pct / 100.0);
    }
    if let Some(stop) = opts.stop {
        spec.run.stop = stop;
    }
    crate::error::check_range("--start-offset-h", opts.start_offset_h, 0.0, 1e5, "h")?;
    let start = crate::load::clock_at(spec.start, opts.start_offset_h);
    if start >= spec.weather.end() {
        anyhow::bail!(
            "--start-offset-h: {} h puts the start at {start}, past the end of the weather record {}",
            opts.start_offset_h,
            spec.weather.end()
        );
    }
    spec.start = start;
    Ok((sc, warning))
}

pub(super) fn warn(warning: &Option<SafetyWarning>) {
    if let Some(w) = warning {
        eprintln!("dryfront: warning: {w} (running because of --force)");
    }
}

/// Refuse early an output folder that is, holds or lies inside an input, or holds foreign files.
pub(super) fn check_out(opts: &LoadOptions, sc: &Scenario) -> anyhow::Result<()> {
    if let Some(dir) = &opts.out {
        check_target(dir, &sc.inputs, opts.replace)?;
    }
    Ok(())
}

/// Write a command's set into `--out` (when given) and say so with `said(dir)`.
pub(super) fn commit(
    opts: &LoadOptions,
    sc: &Scenario,
    set: &OutputSet,
    said: impl Fn(&std::path::Path) -> String,
) -> anyhow::Result<()> {
    if let Some(dir) = &opts.out {
        set.commit(dir, &sc.inputs, opts.replace)?;
        println!("{}", said(dir));
    }
    Ok(())
}

/// `dryfront dry`.
pub fn run_dry(args: DryArgs) -> anyhow::Result<()> {
    let (sc, set) = dry(&args)?;
    let names: Vec<String> = set.names().map(|n| n.display().to_string()).collect();
    commit(&args.load, &sc, &set, |dir| {
        format!(
            "  wrote {} files to {}: {}",
            names.len(),
            dir.display(),
            names.join(", ")
        )
    })?;
    println!("{CAUTIONS}");
    Ok(())
}

/// Run `dry` and print its summary; its files as a set, and the scenario (whose inputs the set must not replace).
pub fn dry(args: &DryArgs) -> anyhow::Result<(Scenario, OutputSet)> {
    let (mut sc, mut warning) = setup(&args.load)?;
    if let Some(text) = &args.strategy {
        let spec = StrategySpec::parse_in(text, args.load.units).context("--strategy")?;
        let h = sc.spec.heater;
        let (heater, w) = checked_heater(&sc.spec.crop, spec, h.burner_w, h.fuel, args.load.force)
            .context("--strategy")?;
        sc.spec.heater = heater;
        warning = w;
    }
    check_out(&args.load, &sc)?;
    warn(&warning);
    let label = sc.spec.heater.spec.text_in(args.load.units);
    let mut progress = Progress {
        enabled: std::io::stderr().is_terminal(),
        next_h: 0.0,
    };
    let result = run_load(&sc.spec, &mut progress)
        .with_context(|| format!("running {}", sc.path.display()))?;
    if progress.enabled {
        eprintln!();
    }
    print!(
        "{}",
        summary_text(&sc.spec, &label, &result, args.load.units)
    );
    let units = args.load.units;
    let mut set = load_outputs(&sc.spec, &label, &result, units, &MapScales::default());
    let page = load_page(
        &sc.spec,
        &label,
        &result,
        units,
        &set,
        super::inputs_as_run(&sc.inputs)?,
    );
    set.add("report.html", page.render());
    Ok((sc, set))
}

/// `dryfront compare`.
pub fn run_compare(args: CompareArgs) -> anyhow::Result<()> {
    let (sc, set) = compare(&args)?;
    commit(&args.load, &sc, &set, |dir| {
        format!(
            "  wrote report.html, compare.txt and one folder per strategy to {}",
            dir.display()
        )
    })?;
    println!("{CAUTIONS}");
    Ok(())
}

/// Run `compare` and print its table; its files (`compare.txt` and one folder per strategy) as a set.
pub fn compare(args: &CompareArgs) -> anyhow::Result<(Scenario, OutputSet)> {
    let (sc, warning) = setup(&args.load)?;
    check_out(&args.load, &sc)?;
    warn(&warning);
    let specs: Vec<StrategySpec> = args
        .strategies
        .split(';')
        .map(|s| StrategySpec::parse_in(s, args.load.units).context("--strategies"))
        .collect::<Result<_, _>>()?;
    let h = sc.spec.heater;
    let loads = specs
        .iter()
        .map(|s| {
            let (heater, w) =
                checked_heater(&sc.spec.crop, *s, h.burner_w, h.fuel, args.load.force)
                    .context("--strategies")?;
            warn(&w);
            Ok(LoadSpec {
                heater,
                ..sc.spec.clone()
            })
        })
        .collect::<anyhow::Result<Vec<_>>>()?;
    eprintln!(
        "comparing {} strategies on {} (in parallel)…",
        specs.len(),
        sc.spec.name
    );
    let progress = super::progress::Progress::new("compare", loads.len());
    let results: Vec<LoadResult> = loads
        .par_iter()
        .map(|l| {
            let r = run_load(l, &mut ());
            progress.tick();
            r
        })
        .collect::<Result<_, _>>()?;
    let rows: Vec<CompareRow> = specs
        .iter()
        .zip(&results)
        .map(|(s, r)| CompareRow {
            label: s.text_in(args.load.units),
            folder: strategy_folder(&s.to_string()),
            result: r,
        })
        .collect();
    let table = compare_table(
        &rows,
        &sc.spec.prices.currency,
        h.fuel.unit,
        args.load.units,
    );
    let heading = format!(
        "{} — same load, weather and fan; heater strategies side by side (run to: {})",
        sc.spec.name, sc.spec.run.stop
    );
    println!("{heading}");
    print!("{table}");
    let mut set = OutputSet::new();
    set.add("compare.txt", format!("{table}\n{CAUTIONS}\n"));
    let scales = MapScales::across(&results);
    for row in &rows {
        set.add_set(
            row.folder.clone(),
            load_outputs(&sc.spec, &row.label, row.result, args.load.units, &scales),
        );
    }
    let page = compare_page(
        &sc.spec,
        &rows,
        args.load.units,
        &set,
        format!("{heading}\n{table}"),
        super::inputs_as_run(&sc.inputs)?,
    );
    set.add("report.html", page.render());
    Ok((sc, set))
}

fn hours_cell(h: Option<f64>) -> String {
    h.map(|x| format!("{x:.1}"))
        .unwrap_or_else(|| "not reached".into())
}

/// `dryfront starts`.
pub fn run_starts(args: StartsArgs) -> anyhow::Result<()> {
    let (sc, _) = setup(&args.load)?;
    check_out(&args.load, &sc)?;
    if !(args.every_h.is_finite() && args.every_h > 0.0) {
        anyhow::bail!("--every-h: {} h must be positive", args.every_h);
    }
    if args.count == 0 || args.count > 1000 {
        anyhow::bail!("--count: {} must be between 1 and 1000", args.count);
    }
    let loads: Vec<LoadSpec> = (0..args.count)
        .map(|i| LoadSpec {
            start: crate::load::clock_at(sc.spec.start, i as f64 * args.every_h),
            ..sc.spec.clone()
        })
        .collect();
    let last = loads[loads.len() - 1].start;
    if last >= sc.spec.weather.end() {
        anyhow::bail!(
            "--count/--every-h: the last start {last} is past the end of the weather record {}",
            sc.spec.weather.end()
        );
    }
    eprintln!(
        "running {} start times on {} (in parallel)…",
        loads.len(),
        sc.spec.name
    );
    let progress = super::progress::Progress::new("starts", loads.len());
    let results: Vec<LoadResult> = loads
        .par_iter()
        .map(|l| {
            let r = run_load(l, &mut ());
            progress.tick();
            r
        })
        .collect::<Result<_, _>>()?;
    let u = args.load.units;
    let fuel_unit = results
        .first()
        .map(|r| u.fuel_per_mass_unit(&r.outcome.fuel_unit))
        .unwrap_or_default();
    println!(
        "{} — the same load started at different times ({})",
        sc.spec.name,
        sc.spec.heater.spec.text_in(u)
    );
    println!(
        "{:<24} {:>10} {:>12} {:>18} {:>14} {:>9} {:>11}",
        "start",
        "h to mean",
        "h to whole",
        "ready at",
        format!("fuel ({fuel_unit})"),
        "fan kWh",
        "over-dried"
    );
    for (l, r) in loads.iter().zip(&results) {
        let o = &r.outcome;
        let ready = o.ready();
        let per_t =
            u.fuel_per_mass_value(ready.fuel_used / (o.initial_mass_kg / 1000.0), &o.fuel_unit);
        let ready_at = r
            .clock
            .stop_rule
            .map(|t| t.format("%m-%d %H:%M").to_string())
            .unwrap_or_else(|| "not reached".into());
        println!(
            "{:<24} {:>10} {:>12} {:>18} {:>14.2} {:>9.1} {:>10.1}%",
            l.start.format("%Y-%m-%d %H:%M %:z"),
            hours_cell(o.hours_to_mean_target),
            hours_cell(o.hours_to_fraction_target),
            ready_at,
            per_t,
            ready.fan_kwh,
            o.over_dried_fraction * 100.0
        );
    }
    let mut done: Vec<f64> = results
        .iter()
        .filter_map(|r| r.outcome.at_stop_rule.map(|t| t.hours))
        .collect();
    if !done.is_empty() {
        done.sort_by(f64::total_cmp);
        println!(
            "  hours until the stop rule ({}) held: {:.1} h shortest, {:.1} h median, {:.1} h longest ({} of {} met it)",
            sc.spec.run.stop,
            done[0],
            done[done.len() / 2],
            done[done.len() - 1],
            done.len(),
            results.len()
        );
    }
    let mut set = OutputSet::new();
    set.add("starts.csv", starts_csv(&loads, &results));
    if args.load.out.is_some() {
        let page = starts_page(
            &sc.spec,
            &loads,
            &results,
            args.load.units,
            String::new(),
            super::inputs_as_run(&sc.inputs)?,
        );
        set.add("report.html", page.render());
    }
    commit(&args.load, &sc, &set, |dir| {
        format!("  wrote starts.csv and report.html to {}", dir.display())
    })?;
    println!("{CAUTIONS}");
    Ok(())
}
