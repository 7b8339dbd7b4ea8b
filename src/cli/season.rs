//! `dryfront season …`: plan a buying point's harvest. `run` simulates one season and writes the schedule, the
//! daily table, key figures and two SVG charts; `sweep` runs many dryer counts, policies and heater strategies
//! over many seeded seasons and reports P10/P50/P90 of each figure and the smallest dryer count that holds the
//! wait limit.

use std::path::{Path, PathBuf};

use anyhow::{bail, Context};

use crate::airflow::geometry::Grid;
use crate::crop::Crop;
use crate::drying::heater::{SafetyLimits, StrategySpec};
use crate::input::season::{
    read_arrivals_csv, read_buying_point, read_shard, season_template, SeasonRunSettings,
};
use crate::report::gantt::{gantt_svg, queue_svg};
use crate::report::output::{check_target, OutputSet};
use crate::report::season::{
    air_note, arrivals_csv, daily_csv, heater_label, kpis_csv, schedule_csv, season_page,
    shard_json, sweep_answer, sweep_csv, sweep_page,
};
use crate::season::arrivals::{generate, ArrivalParams, Load};
use crate::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use crate::season::drier::{DeepBedDrier, LoadDrier, LoadTemplate, RateRuleDrier};
use crate::season::kpi::{daily, kpis};
use crate::season::scenario::BuyingPoint;
use crate::season::shard::{merge, ShardFile, SweepSetup};
use crate::season::sim::simulate;
use crate::season::sweep::{
    assemble, season_seed, sweep_shard, CaseResult, SeasonInputs, Shard, SweepGrid,
};
use crate::units::UnitSystem;
use crate::weather::series::{ReadOptions, WeatherSeries};
use crate::weather::synth::{generate_seasons, ClimateStats, SeasonPlan};

/// Season commands.
#[derive(Debug, clap::Subcommand)]
pub enum SeasonCommand {
    /// Simulate one season at a buying point and write its schedule, daily table, key figures and charts.
    Run(RunArgs),
    /// Run many dryer counts, policies and heater strategies over many seeded seasons.
    Sweep(SweepArgs),
    /// Put the shard files of a sweep run with `--shard K/N` back together into the sweep's own result.
    Merge(MergeArgs),
}

/// Arguments of `dryfront season merge`.
#[derive(Debug, clap::Args)]
pub struct MergeArgs {
    /// Every shard file of one sweep (`sweep-shard-K-of-N.json`), in any order.
    #[arg(required = true)]
    pub shards: Vec<PathBuf>,
    /// Folder for the merged result (the sweep's `sweep.csv`, as a single-machine sweep writes it).
    #[arg(long)]
    pub out: PathBuf,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
    /// Units for everything printed (`us`: short tons, lb, gal); files stay SI.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
}

/// Which drier dries each load.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum DrierChoice {
    /// The deep-bed model (crop, weather, each dryer's container and fan) on the season grid.
    DeepBed,
    /// A rule of thumb (0.5 points per hour, propane per kg of water removed): NOT a deep-bed simulation.
    RateRule,
}

/// Models for the deep-bed drier.
#[derive(Debug, Clone, clap::Args)]
pub struct DeepBedOptions {
    /// Crop model (bundled name or path); its `safety` section also sets the heater limits checked for every drier.
    #[arg(long, default_value = "peanut-inshell")]
    pub crop: String,
    /// Season grid per dryer, NXxNYxNZ (columns along × across × layers); coarse by default for speed. `2x1x5`
    /// screens large sweeps in about a fifth of the time, each load's hours still within 3 % of the fine model
    /// (README, "How the physics is checked").
    #[arg(long, default_value = "4x2x10", value_parser = parse_grid)]
    pub grid: Grid,
}

fn parse_grid(s: &str) -> Result<Grid, String> {
    let parts: Vec<usize> = s
        .split('x')
        .map(|p| p.trim().parse::<usize>())
        .collect::<Result<_, _>>()
        .map_err(|_| format!("{s:?} must look like 4x2x10"))?;
    match parts.as_slice() {
        [nx, ny, nz]
            if (1..=256).contains(nx) && (1..=256).contains(ny) && (1..=128).contains(nz) =>
        {
            Ok(Grid {
                nx: *nx,
                ny: *ny,
                nz: *nz,
            })
        }
        _ => Err(format!(
            "{s:?} must look like 4x2x10 (each count 1–256, layers 1–128)"
        )),
    }
}

fn default_weather() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("weather-samples/cypress-neck-2026/season_000.csv")
}

fn default_stats() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("weather-samples/cypress-neck-stats.json")
}

/// Arguments of `dryfront season run`.
#[derive(Debug, clap::Args)]
pub struct RunArgs {
    /// Buying-point scenario (JSON), e.g. models/buying-points/bramble-fork.json.
    #[arg(long)]
    pub scenario: PathBuf,
    /// Arrivals CSV: load_id, arrival (ISO 8601 with offset), net_mass_kg, kernel_moisture_pct[, notes].
    #[arg(
        long,
        conflicts_with = "generate",
        required_unless_present = "generate"
    )]
    pub arrivals: Option<PathBuf>,
    /// Draw the arrivals from the seeded generator instead of a file.
    #[arg(long)]
    pub generate: bool,
    /// Seed of the generator.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Loads to draw with --generate.
    #[arg(long, default_value_t = 250)]
    pub loads: usize,
    /// Rain days for the generator, as season day numbers from 0, comma-separated (fewer deliveries that day and
    /// the next).
    #[arg(long, default_value = "")]
    pub rain_days: String,
    /// Dispatch policy: fcfs, wettest, shortest or wait-limit.
    #[arg(long, default_value = "fcfs", value_parser = parse_policy)]
    pub policy: DispatchPolicy,
    /// Drier used for each load.
    #[arg(long, value_enum, default_value_t = DrierChoice::DeepBed)]
    pub drier: DrierChoice,
    /// Weather for the deep-bed drier (EPW, TMY3 or our CSV); defaults to the bundled demo season.
    #[arg(long)]
    pub weather: Option<PathBuf>,
    /// Deep-bed drier models.
    #[command(flatten)]
    pub models: DeepBedOptions,
    /// Run dryer heaters above the crop's safe limits anyway (they are refused otherwise).
    #[arg(long)]
    pub force: bool,
    /// Folder for the outputs (created if missing; an earlier set there is replaced whole).
    #[arg(long)]
    pub out: PathBuf,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
    /// Units for everything printed (`us`: short tons, lb, gal, °F set-points in --heaters); files stay SI.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
}

impl RunArgs {
    /// The demo's season: 120 generated loads (seed 2026) at `scenario`, deep-bed drier, wait-limit policy.
    pub fn demo(scenario: PathBuf, out: PathBuf, units: UnitSystem) -> Self {
        RunArgs {
            scenario,
            arrivals: None,
            generate: true,
            seed: 2026,
            loads: 120,
            rain_days: String::new(),
            policy: DispatchPolicy::WaitLimit,
            drier: DrierChoice::DeepBed,
            weather: None,
            models: DeepBedOptions {
                crop: "peanut-inshell".into(),
                grid: Grid {
                    nx: 4,
                    ny: 2,
                    nz: 10,
                },
            },
            force: false,
            out,
            replace: false,
            units,
        }
    }
}

/// Arguments of `dryfront season sweep`.
#[derive(Debug, clap::Args)]
pub struct SweepArgs {
    /// Buying-point scenario (JSON).
    #[arg(long)]
    pub scenario: PathBuf,
    /// Dryer counts: a range `4..10` (inclusive), a list `4,6,8` or one count.
    #[arg(long, default_value = "4..10")]
    pub dryers: String,
    /// Policies, comma-separated (fcfs, wettest, shortest, wait-limit).
    #[arg(long, default_value = "fcfs,wait-limit")]
    pub policies: String,
    /// Heater strategies on every dryer, separated by `;`: `scenario` (each dryer's own, as in the file) or a
    /// strategy as for `dry --strategy` (`none`, `rise=8`, `plenum=35`, `rh=55,max=35`, each optionally with a burner
    /// window `@20-6`), e.g. "scenario;none;rise=8;rh=55,max=35". A rise is over ambient air, fan heat counted.
    #[arg(long, default_value = "scenario")]
    pub heaters: String,
    /// Run heater strategies above the crop's safe limits anyway (they are refused otherwise).
    #[arg(long)]
    pub force: bool,
    /// Seasons (arrival draws; weather draws once the deep-bed drier is wired in).
    #[arg(long, default_value_t = 10)]
    pub seasons: usize,
    /// Seed of the whole sweep.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Loads per season.
    #[arg(long, default_value_t = 250)]
    pub loads: usize,
    /// Rain days for the generator (season day numbers from 0, comma-separated), the same in every season.
    // INTEGRATE: take rain flags per season from the weather generator instead.
    #[arg(long, default_value = "")]
    pub rain_days: String,
    /// Drier used for each load.
    #[arg(long, value_enum, default_value_t = DrierChoice::DeepBed)]
    pub drier: DrierChoice,
    /// Monthly climate statistics (JSON) from which each season's weather is generated for the deep-bed drier
    /// (season i uses weather seed --seed + i); defaults to the bundled demo site.
    #[arg(long)]
    pub weather_stats: Option<PathBuf>,
    /// Deep-bed drier models.
    #[command(flatten)]
    pub models: DeepBedOptions,
    /// Folder for the outputs (created if missing; an earlier set there is replaced whole).
    #[arg(long)]
    pub out: PathBuf,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
    /// Units for everything printed (`us`: short tons, lb, gal, °F set-points in --heaters); files stay SI.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
    /// Run only shard K of N of the sweep's (case, season) runs (1 ≤ K ≤ N) and write them as
    /// `sweep-shard-K-of-N.json`; `season merge` puts the N shard files together into the sweep's result.
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
}

fn parse_policy(s: &str) -> Result<DispatchPolicy, String> {
    DispatchPolicy::from_name(s.trim()).ok_or_else(|| {
        format!("{s:?} is not a policy (expected fcfs, wettest, shortest or wait-limit)")
    })
}

fn parse_counts(s: &str) -> anyhow::Result<Vec<usize>> {
    let err =
        || format!("--dryers: {s:?} must be a range like 4..10, a list like 4,6,8, or one count");
    let v: Vec<usize> = if let Some((a, b)) = s.split_once("..") {
        let a: usize = a.trim().parse().with_context(err)?;
        let b: usize = b.trim().trim_start_matches('=').parse().with_context(err)?;
        if a > b {
            bail!("{}", err());
        }
        (a..=b).collect()
    } else {
        s.split(',')
            .map(|x| x.trim().parse::<usize>())
            .collect::<Result<_, _>>()
            .with_context(err)?
    };
    if v.is_empty() || v.contains(&0) || v.iter().any(|&n| n > 1000) {
        bail!("--dryers: {s:?}: every count must be between 1 and 1000");
    }
    Ok(v)
}

/// `--heaters`: `;`-separated strategies in the heater language, or `scenario` (`None`) for each dryer's own.
fn parse_heaters(s: &str, units: UnitSystem) -> anyhow::Result<Vec<Option<StrategySpec>>> {
    s.split(';')
        .map(|h| match h.trim() {
            "scenario" => Ok(None),
            h => Ok(Some(StrategySpec::parse_in(h, units).context("--heaters")?)),
        })
        .collect()
}

/// The one safety rule on `spec`, with `context` naming where it came from; a forced excess is printed once.
fn check_heater(
    spec: &StrategySpec,
    limits: &SafetyLimits,
    force: bool,
    context: impl FnOnce() -> String,
    warned: &mut Vec<StrategySpec>,
) -> anyhow::Result<()> {
    if let Some(w) = spec.check_safety(limits, force).with_context(context)? {
        if !warned.contains(spec) {
            eprintln!("dryfront: warning: {w} (running because of --force)");
            warned.push(*spec);
        }
    }
    Ok(())
}

/// The safety rule on every dryer's own heater, errors naming the file and `dryers[i].heater`.
fn check_dryer_heaters(
    bp: &BuyingPoint,
    path: &Path,
    limits: &SafetyLimits,
    force: bool,
    warned: &mut Vec<StrategySpec>,
) -> anyhow::Result<()> {
    for (i, d) in bp.dryers.iter().enumerate() {
        let context = || format!("{}: field \"dryers[{i}].heater\"", path.display());
        check_heater(&d.heater, limits, force, context, warned)?;
    }
    Ok(())
}

/// Each dryer's heater as written in the heater language.
fn heaters_line(bp: &BuyingPoint, u: UnitSystem) -> String {
    let each: Vec<String> = bp
        .dryers
        .iter()
        .map(|d| format!("{} {}", d.id, d.heater.text_in(u)))
        .collect();
    format!("heaters: {}", each.join("; "))
}

fn template(
    bp: &BuyingPoint,
    bp_path: &Path,
    opts: &DeepBedOptions,
    weather: WeatherSeries,
    force: bool,
) -> anyhow::Result<(LoadTemplate, Vec<PathBuf>)> {
    let settings = SeasonRunSettings {
        grid: opts.grid,
        force,
        ..SeasonRunSettings::default()
    };
    Ok(season_template(
        bp,
        bp_path,
        &opts.crop,
        std::sync::Arc::new(weather),
        &settings,
    )?)
}

fn make_drier<'a>(
    choice: DrierChoice,
    bp: &BuyingPoint,
    template: Option<&'a LoadTemplate>,
) -> Box<dyn LoadDrier + 'a> {
    match (choice, template) {
        (DrierChoice::DeepBed, Some(t)) => Box::new(DeepBedDrier::new(t.clone())),
        _ => Box::new(RateRuleDrier::new(bp.rules.target_kernel_pct)),
    }
}

fn drier_note(choice: DrierChoice) -> &'static str {
    match choice {
        DrierChoice::RateRule => {
            "drier: rate-rule (a rule of thumb: 0.5 points/h, propane in proportion to the water removed; not a deep-bed simulation)"
        }
        DrierChoice::DeepBed => {
            "drier: deep-bed model through the single-load path on the season grid (airflow solved at each load's start)"
        }
    }
}

fn parse_rain_days(s: &str, days: u32) -> anyhow::Result<Vec<bool>> {
    let mut v = vec![false; days as usize];
    for x in s.split(',').map(str::trim).filter(|x| !x.is_empty()) {
        let d: usize = x
            .parse()
            .ok()
            .filter(|&d| d < days as usize)
            .with_context(|| {
                format!(
                    "--rain-days: {x:?} must be a season day number from 0 to {}",
                    days - 1
                )
            })?;
        v[d] = true;
    }
    Ok(v)
}

fn default_params(
    bp: &BuyingPoint,
    loads: usize,
    rain_days: &str,
) -> anyhow::Result<ArrivalParams> {
    let mut p = ArrivalParams::new(bp.season.start, bp.season.days, loads);
    p.rain_days = parse_rain_days(rain_days, bp.season.days)?;
    let largest = bp.dryers.iter().map(|d| d.capacity_kg).fold(0.0, f64::max);
    p.mass_bounds_kg.1 = p.mass_bounds_kg.1.min(largest);
    p.mass_bounds_kg.0 = p.mass_bounds_kg.0.min(0.5 * p.mass_bounds_kg.1);
    Ok(p)
}

fn predictor(bp: &BuyingPoint) -> MoistureRatePredictor {
    MoistureRatePredictor {
        target_pct: bp.rules.target_kernel_pct,
        rate_pct_per_h: 0.5,
    }
}

/// Run a season command.
pub fn run(cmd: SeasonCommand) -> anyhow::Result<()> {
    match cmd {
        SeasonCommand::Run(a) => run_one(a),
        SeasonCommand::Sweep(a) => run_sweep(a),
        SeasonCommand::Merge(a) => run_merge(a),
    }
}

fn run_one(a: RunArgs) -> anyhow::Result<()> {
    let (set, inputs) = season_run(&a)?;
    set.commit(&a.out, &inputs, a.replace)?;
    Ok(())
}

/// Simulate one season and print its figures; its files as a set, and the files it read.
pub fn season_run(a: &RunArgs) -> anyhow::Result<(OutputSet, Vec<PathBuf>)> {
    let bp = read_buying_point(&a.scenario)?;
    let crop = Crop::load_named(&a.models.crop)?;
    let mut inputs = vec![a.scenario.clone(), crop.path.clone()];
    let limits = SafetyLimits::from(&crop.safety);
    check_dryer_heaters(&bp, &a.scenario, &limits, a.force, &mut Vec::new())?;
    let models = match a.drier {
        DrierChoice::DeepBed => {
            let path = a.weather.clone().unwrap_or_else(default_weather);
            let (weather, _) = crate::weather::read(&path, None, &ReadOptions::default())?;
            inputs.push(path);
            let (t, read) = template(&bp, &a.scenario, &a.models, weather, a.force)?;
            inputs.extend(read);
            Some(t)
        }
        DrierChoice::RateRule => None,
    };
    // Arrivals must fall inside the season and, for the deep-bed drier, inside the weather record.
    let range = match &models {
        Some(m) => Some((
            bp.season.start.max(m.weather.start()),
            bp.season.end().min(m.weather.end()),
        )),
        None => Some((bp.season.start, bp.season.end())),
    };
    let (loads, generated): (Vec<Load>, bool) = match &a.arrivals {
        Some(p) => {
            inputs.push(p.clone());
            (read_arrivals_csv(p, range)?, false)
        }
        None => {
            if a.loads == 0 {
                bail!("--loads: 0 must be at least 1");
            }
            crate::input::limits::check_memory(
                "--loads",
                a.loads as f64 * crate::input::limits::SEASON_BYTES_PER_LOAD,
                &format!("{} loads × 1 KiB", a.loads),
            )?;
            (
                generate(&default_params(&bp, a.loads, &a.rain_days)?, a.seed)?,
                true,
            )
        }
    };
    check_target(&a.out, &inputs, a.replace)?;
    let drier = make_drier(a.drier, &bp, models.as_ref());
    let run = simulate(
        &bp,
        &loads,
        drier.as_ref(),
        a.policy,
        &predictor(&bp),
        bp.season.end(),
    )?;
    let k = kpis(&run, &bp);
    let days = daily(
        &run,
        &loads
            .iter()
            .map(|l| (l.arrival, l.mass_kg))
            .collect::<Vec<_>>(),
    );
    let cur = &bp.prices.currency;
    let title = format!(
        "{} — {} dryers, {}",
        bp.name,
        bp.dryers.len(),
        a.policy.name()
    );
    let mut set = OutputSet::new();
    set.add("schedule.csv", schedule_csv(&run, &bp));
    set.add("daily.csv", daily_csv(&days));
    set.add("kpis.csv", kpis_csv(&k, cur));
    set.add("gantt.svg", gantt_svg(&run, &format!("Dryers: {title}")));
    set.add(
        "queue.svg",
        queue_svg(&run, &format!("Queue and occupancy: {title}")),
    );
    if generated {
        set.add("arrivals.csv", arrivals_csv(&loads));
    }
    println!(
        "{}: {} dryers, policy {}, {} loads ({})",
        bp.name,
        bp.dryers.len(),
        a.policy.name(),
        loads.len(),
        if generated {
            format!("generated, seed {}", a.seed)
        } else {
            "from file".to_string()
        }
    );
    let printed = format!(
        "{}\n{}\n{}{}",
        drier_note(a.drier),
        heaters_line(&bp, a.units),
        k.summary(cur, a.units),
        air_note(&run, a.units)
    );
    print!("{printed}");
    println!(
        "wait limit {:.1} h; outputs in {}",
        bp.rules.max_wait_h,
        a.out.display()
    );
    let page = season_page(
        (&title, cur),
        &run,
        &k,
        a.units,
        &set,
        printed,
        super::inputs_as_run(&inputs)?,
    );
    set.add("report.html", page.render());
    Ok((set, inputs))
}

fn run_sweep(a: SweepArgs) -> anyhow::Result<()> {
    let shard = a.shard.as_deref().map(Shard::parse).transpose()?;
    let bp = read_buying_point(&a.scenario)?;
    let counts = parse_counts(&a.dryers)?;
    let policies: Vec<DispatchPolicy> = a
        .policies
        .split(',')
        .map(|s| parse_policy(s).map_err(|e| anyhow::anyhow!("--policies: {e}")))
        .collect::<anyhow::Result<_>>()?;
    let heaters = parse_heaters(&a.heaters, a.units)?;
    let crop = Crop::load_named(&a.models.crop)?;
    let mut inputs = vec![a.scenario.clone(), crop.path.clone()];
    let limits = SafetyLimits::from(&crop.safety);
    let mut warned = Vec::new();
    for h in &heaters {
        match h {
            None => check_dryer_heaters(&bp, &a.scenario, &limits, a.force, &mut warned)?,
            Some(spec) => check_heater(spec, &limits, a.force, || "--heaters".into(), &mut warned)?,
        }
    }
    if a.seasons == 0 {
        bail!("--seasons: 0 must be at least 1");
    }
    if a.loads == 0 {
        bail!("--loads: 0 must be at least 1");
    }
    // Every (case, season) keeps its season's loads and figures while the sweep runs.
    let runs = (counts.len() * policies.len() * heaters.len() * a.seasons) as f64;
    crate::input::limits::check_memory(
        "--dryers/--policies/--heaters/--seasons/--loads",
        runs * a.loads as f64 * crate::input::limits::SEASON_BYTES_PER_LOAD,
        &format!("{runs:.0} season runs × {} loads × 1 KiB", a.loads),
    )?;
    let params = default_params(&bp, a.loads, &a.rain_days)?;
    let choice = a.drier;
    let end = bp.season.end();
    let models: Vec<LoadTemplate> = match choice {
        DrierChoice::DeepBed => {
            let path = a.weather_stats.clone().unwrap_or_else(default_stats);
            let stats = ClimateStats::from_json(&path, &crate::input::read_text(&path)?)?;
            inputs.push(path);
            // Each season gets its own generated weather, a week longer than the season so late loads finish.
            let plan = SeasonPlan {
                start: bp.season.start.date_naive(),
                days: bp.season.days + 7,
                seed: a.seed,
            };
            let seasons = generate_seasons(&stats, &plan, a.seasons as u64)?;
            let mut models = Vec::new();
            for w in seasons {
                let (t, read) = template(&bp, &a.scenario, &a.models, w, a.force)?;
                inputs.extend(read);
                models.push(t);
            }
            models
        }
        DrierChoice::RateRule => Vec::new(),
    };
    check_target(&a.out, &inputs, a.replace)?;
    let season_inputs = |s: usize| -> Result<SeasonInputs<'_>, crate::season::SeasonError> {
        Ok(SeasonInputs {
            loads: generate(&params, season_seed(a.seed, s))?,
            drier: make_drier(choice, &bp, models.get(s)),
            season_end: end,
        })
    };
    let grid = SweepGrid {
        dryer_counts: counts,
        policies: policies.clone(),
        heaters: heaters.clone(),
    };
    let setup = SweepSetup {
        args: format!(
            "dryers={} policies={} heaters={} force={} seasons={} seed={} loads={} rain_days={} drier={:?} \
             weather_stats={} models={:?}",
            a.dryers,
            a.policies,
            a.heaters,
            a.force,
            a.seasons,
            a.seed,
            a.loads,
            a.rain_days,
            a.drier,
            a.weather_stats.is_some(),
            a.models
        ),
        inputs_digest: inputs_digest(&inputs)?,
        name: bp.name.clone(),
        currency: bp.prices.currency.clone(),
        max_wait_h: bp.rules.max_wait_h,
        dryer_counts: grid.dryer_counts.clone(),
        policies: policies.iter().map(|p| p.name().to_string()).collect(),
        heaters: heaters
            .iter()
            .map(|h| heater_label(h, UnitSystem::Si))
            .collect(),
        seasons: a.seasons,
        loads: a.loads,
        seed: a.seed,
        drier_note: drier_note(a.drier).into(),
    };
    let bar = super::progress::Progress::new("season sweep", 0);
    let progress = |done: usize, total: usize| bar.show(done, total);
    let runs = sweep_shard(
        &bp,
        &grid,
        a.seasons,
        &season_inputs,
        &predictor(&bp),
        &progress,
        shard.unwrap_or(Shard::WHOLE),
    )?;
    let mut set = OutputSet::new();
    match shard {
        Some(shard) => {
            let name = format!("sweep-shard-{}-of-{}.json", shard.index + 1, shard.count);
            set.add(&name, shard_json(&ShardFile::new(setup, shard, &runs)));
            set.commit(&a.out, &inputs, a.replace)?;
            println!(
                "{}: shard {shard}: {} of the sweep's {} runs ({} cases × {} seasons) in {}; put the {} shards together \
                 with `dryfront season merge`",
                bp.name,
                runs.len(),
                grid.cases().len() * a.seasons,
                grid.cases().len(),
                a.seasons,
                a.out.join(&name).display(),
                shard.count
            );
        }
        None => {
            let res =
                assemble(&grid, a.seasons, &runs).expect("the whole sweep holds every run once");
            write_sweep(&setup, &grid, &res, (&inputs, &a.out, a.replace), a.units)?;
        }
    }
    Ok(())
}

fn run_merge(a: MergeArgs) -> anyhow::Result<()> {
    let mut files = Vec::with_capacity(a.shards.len());
    for path in &a.shards {
        let (file, _) = read_shard(path)?;
        files.push((path.clone(), file));
    }
    let (setup, grid, res) = merge(&files)?;
    write_sweep(&setup, &grid, &res, (&a.shards, &a.out, a.replace), a.units)
}

/// The check that shards read the same inputs: every input file's SHA-256, read through the one reader.
fn inputs_digest(inputs: &[PathBuf]) -> anyhow::Result<String> {
    let hashes: Vec<String> = super::inputs_as_run(inputs)?
        .into_iter()
        .map(|r| r.sha256)
        .collect();
    Ok(hashes.join(","))
}

/// A whole sweep's result, from one machine or merged shards: `sweep.csv` and `report.html` written over
/// (`inputs`, `out`, `replace`), and the answer on screen.
fn write_sweep(
    setup: &SweepSetup,
    grid: &SweepGrid,
    res: &[CaseResult],
    (inputs, out, replace): (&[PathBuf], &Path, bool),
    units: UnitSystem,
) -> anyhow::Result<()> {
    let head = format!(
        "{}: {} cases × {} seasons of {} loads (seed {})\n{}\n",
        setup.name,
        res.len(),
        setup.seasons,
        setup.loads,
        setup.seed,
        setup.drier_note
    );
    let answer = sweep_answer(res, grid, setup.max_wait_h, &setup.currency, units);
    let mut set = OutputSet::new();
    set.add("sweep.csv", sweep_csv(res, &setup.currency));
    let page = sweep_page(
        &setup.name,
        res,
        setup.seasons,
        setup.max_wait_h,
        format!("{head}{answer}"),
        super::inputs_as_run(inputs)?,
    );
    set.add("report.html", page.render());
    set.commit(out, inputs, replace)?;
    print!("{head}{answer}");
    println!(
        "P10/P50/P90 of every figure per case in {}",
        out.join("sweep.csv").display()
    );
    Ok(())
}
