//! `dryfront weather …`: summarise, clean and synthesise hourly weather.
//!
//! The drying-potential figure uses a temporary kernel isotherm (Cromarty, Ellis & Roberts 1982 seed equation with
//! oil content 0.48 d.b., DOMAIN.md §2.3) until the crop models are wired in.
use std::path::{Path, PathBuf};

use crate::units::UnitSystem;
use anyhow::Context;
use chrono::{Datelike, Duration, FixedOffset, NaiveDate, TimeZone};

use crate::report::output::{check_files, check_target, OutputSet};
use crate::report::weather::{series_csv, warnings_list};
use crate::weather::{
    self, csv::parse_offset, summarize, ClimateStats, ReadOptions, SeasonPlan, WeatherFormat,
    WeatherSeries,
};

/// Weather commands.
#[derive(Debug, clap::Subcommand)]
pub enum WeatherCommand {
    /// Check and summarise a weather file (EPW, TMY3 or our CSV); optionally write the cleaned hourly series.
    Summary(SummaryArgs),
    /// Generate seeded synthetic seasons from a sample weather file or from monthly statistics (JSON).
    Synth(SynthArgs),
}

/// File-format choice.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FormatArg {
    /// Detect from the extension and first line.
    Auto,
    /// EnergyPlus EPW.
    Epw,
    /// The project's CSV schema.
    Csv,
    /// NSRDB TMY3 CSV.
    Tmy3,
}

/// How to read a weather file.
#[derive(Debug, clap::Args)]
pub struct ReadArgs {
    /// File format.
    #[arg(long, value_enum, default_value = "auto")]
    pub format: FormatArg,
    /// Longest gap (hours, per quantity) filled by linear interpolation; longer gaps are errors.
    #[arg(long = "max-gap-h", default_value_t = 3)]
    pub max_gap_h: usize,
    /// UTC offset for CSV timestamps without one, e.g. -05:00 (overrides a `# utc_offset=` line).
    #[arg(long = "utc-offset", allow_hyphen_values = true)]
    pub utc_offset: Option<String>,
    /// Calendar year to place a typical-year file (TMY3, or an EPW mixing years) in; must not be a leap year.
    /// Default for TMY3: the year of --from, else 2025.
    #[arg(long)]
    pub year: Option<i32>,
}

/// `weather summary` arguments.
#[derive(Debug, clap::Args)]
pub struct SummaryArgs {
    /// Weather file.
    pub file: PathBuf,
    /// How to read the file.
    #[command(flatten)]
    pub read: ReadArgs,
    /// First local day to summarise (YYYY-MM-DD); default the start of the file.
    #[arg(long)]
    pub from: Option<NaiveDate>,
    /// Number of days from --from (default: to the end of the file).
    #[arg(long)]
    pub days: Option<u32>,
    /// RH thresholds (%) for the "hours below" counts.
    #[arg(long = "rh-below", value_delimiter = ',', default_values_t = [50.0, 60.0, 70.0])]
    pub rh_below: Vec<f64>,
    /// Crop whose kernel equilibrium moisture measures the air's drying potential (bundled name or path).
    #[arg(long, default_value = "peanut-inshell")]
    pub crop: String,
    /// Write the cleaned hourly series (our CSV schema, filled hours flagged) here.
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Print one line per day.
    #[arg(long)]
    pub daily: bool,
    /// Units for everything printed (`us`: °F, °F differences, in. Hg, in.); written files stay SI.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
}

/// `weather synth` arguments.
#[derive(Debug, clap::Args)]
#[command(group(clap::ArgGroup::new("input").required(true).args(["from_sample", "stats"])))]
pub struct SynthArgs {
    /// Estimate monthly statistics from this weather file.
    #[arg(long = "from-sample")]
    pub from_sample: Option<PathBuf>,
    /// Monthly statistics (JSON; see weather-samples/README.md).
    #[arg(long)]
    pub stats: Option<PathBuf>,
    /// How to read the file.
    #[command(flatten)]
    pub read: ReadArgs,
    /// Number of seasons.
    #[arg(long, default_value_t = 1)]
    pub seasons: u64,
    /// Master seed.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// First local day of each season.
    #[arg(long)]
    pub start: NaiveDate,
    /// Days per season.
    #[arg(long, default_value_t = 91)]
    pub days: u32,
    /// Output folder: season_000.csv, … and stats.json (an earlier set there is replaced whole).
    #[arg(long)]
    pub out: PathBuf,
    /// Write into the --out folder even though it holds files dryfront did not write (they are removed).
    #[arg(long)]
    pub replace: bool,
    /// Units for everything printed (`us`: °F, °F differences, in. Hg, in.); written files stay SI.
    #[arg(long, value_enum, default_value_t = UnitSystem::Si)]
    pub units: UnitSystem,
}

/// Run a weather command.
pub fn run(cmd: WeatherCommand) -> anyhow::Result<()> {
    match cmd {
        WeatherCommand::Summary(a) => run_summary(a),
        WeatherCommand::Synth(a) => run_synth(a),
    }
}

fn read_options(r: &ReadArgs, default_year: Option<i32>) -> anyhow::Result<ReadOptions> {
    let utc_offset = match &r.utc_offset {
        Some(s) => Some(parse_offset(s).ok_or_else(|| {
            crate::error::InputError::argument("--utc-offset", s, "must be an offset like -05:00")
        })?),
        None => None,
    };
    Ok(ReadOptions {
        max_gap_h: r.max_gap_h,
        utc_offset,
        year: r.year.or(default_year),
    })
}

fn load(path: &Path, r: &ReadArgs, from: Option<NaiveDate>) -> anyhow::Result<WeatherSeries> {
    let text = crate::input::read_text(path)?;
    let format = match r.format {
        FormatArg::Auto => weather::detect_format(path, &text),
        FormatArg::Epw => WeatherFormat::Epw,
        FormatArg::Csv => WeatherFormat::Csv,
        FormatArg::Tmy3 => WeatherFormat::Tmy3,
    };
    let default_year = (format == WeatherFormat::Tmy3).then(|| from.map_or(2025, |d| d.year()));
    let opts = read_options(r, default_year)?;
    Ok(weather::parse(path, &text, format, &opts)?)
}

fn local_midnight(offset: FixedOffset, d: NaiveDate) -> chrono::DateTime<FixedOffset> {
    offset
        .from_local_datetime(&d.and_hms_opt(0, 0, 0).expect("midnight"))
        .single()
        .expect("fixed offsets have no gaps")
}

fn run_summary(a: SummaryArgs) -> anyhow::Result<()> {
    let full = load(&a.file, &a.read, a.from)?;
    let warnings = full.warnings().to_vec();
    let warnings_path = a.out.as_ref().map(|o| o.with_extension("warnings.txt"));
    if let Some(first) = warnings.first() {
        eprintln!(
            "dryfront: warning: {}: {} values filled, recomputed or assumed (first: line {}, field {:?}); {}",
            a.file.display(),
            warnings.len(),
            first.line,
            first.field,
            warnings_path.as_ref().map_or(
                "--out FILE also writes the full list".to_string(),
                |p| format!("full list in {}", p.display())
            )
        );
    }
    for th in &a.rh_below {
        crate::error::check_range("--rh-below", *th, 0.0, 100.0, "%")?;
    }
    let series = if a.from.is_some() || a.days.is_some() {
        let start = a
            .from
            .map_or(full.start(), |d| local_midnight(full.site().utc_offset, d));
        let dur = match a.days {
            Some(0) => anyhow::bail!("--days: 0 must be at least 1"),
            Some(n) => Duration::days(n as i64),
            None => full.end() - start + Duration::hours(1),
        };
        if start + dur > full.end() + Duration::hours(1) {
            anyhow::bail!(
                "{}: --from/--days reach {}, but the file ends at {}",
                a.file.display(),
                (start + dur - Duration::hours(1)).format("%Y-%m-%d %H:%M%:z"),
                full.end().format("%Y-%m-%d %H:%M%:z")
            );
        }
        full.slice(start, dur)
            .with_context(|| format!("{}: cannot take --from/--days", a.file.display()))?
    } else {
        full
    };
    // Drying potential: the kernel isotherm of the chosen crop (the trade grades on kernel moisture).
    let crop = crate::crop::Crop::load_named(&a.crop)?;
    let inputs = vec![a.file.clone(), crop.path.clone()];
    if let Some(out) = &a.out {
        let list = warnings_path.as_deref().expect("set with --out");
        check_files(&[out.as_path(), list], &inputs)?;
    }
    let iso = crop.moisture.kernel().sorption.desorption;
    let emc = move |t_c: f64, rh: f64| iso.emc_db(t_c, rh);
    let s = summarize(&series, &a.rh_below, Some(&emc));
    let u = a.units;
    let fc = series.fill_counts();
    println!("file: {}", a.file.display());
    if !series.site().name.is_empty() {
        println!("site: {}", series.site().name);
    }
    println!(
        "period: {} to {} ({} h, UTC offset {})",
        series.start().format("%Y-%m-%d %H:%M"),
        series.end().format("%Y-%m-%d %H:%M"),
        s.hours,
        series.site().utc_offset
    );
    println!(
        "filled by interpolation: {} h with any value filled (whole rows absent in the file: {} h; dry bulb {} h, \
         humidity {} h, pressure {} h)",
        s.filled_hours, fc.missing_rows, fc.t, fc.rh, fc.p
    );
    if series.pressure_assumed() {
        println!(
            "pressure: not in the file; standard atmosphere at the site elevation used ({})",
            u.barometric(series.p_pa()[0])
        );
    }
    println!(
        "mean dry bulb: {}; mean RH: {:.1} %; mean daily range: {}",
        u.temp(s.t_mean_c),
        s.rh_mean_pct,
        u.temp_delta(s.diurnal_range_k)
    );
    for (th, h) in &s.hours_rh_below {
        println!(
            "hours with RH below {th:.0} %: {h} h ({:.1} % of hours)",
            100.0 * *h as f64 / s.hours as f64
        );
    }
    if let (Some(m), Some(med)) = (s.mean_emc_db, s.median_emc_db) {
        println!(
            "drying potential: kernel EMC of ambient air, mean {:.2} % d.b. ({:.2} % w.b.), median {:.2} % d.b. \
             ({:.2} % w.b.) [temporary isotherm: Cromarty 1982 kernel, oil 0.48 d.b.]",
            100.0 * m,
            100.0 * crate::units::wb_from_db(m),
            100.0 * med,
            100.0 * crate::units::wb_from_db(med)
        );
    }
    let day_means = |f: fn(&weather::DailyStats) -> f64| {
        s.daily.iter().map(f).sum::<f64>() / s.daily.len() as f64
    };
    println!(
        "daily means over {} days: T min {}, mean {}, max {}; RH min {:.1} %, mean {:.1} %, max {:.1} %",
        s.daily.len(),
        u.temp(day_means(|d| d.t_min_c)),
        u.temp(day_means(|d| d.t_mean_c)),
        u.temp(day_means(|d| d.t_max_c)),
        day_means(|d| d.rh_min_pct),
        day_means(|d| d.rh_mean_pct),
        day_means(|d| d.rh_max_pct)
    );
    if a.daily {
        let (t, rain) = match u {
            UnitSystem::Si => ("c", "mm"),
            UnitSystem::Us => ("f", "in"),
        };
        println!(
            "date,hours,t_min_{t},t_mean_{t},t_max_{t},rh_min_pct,rh_mean_pct,rh_max_pct,rain_{rain}"
        );
        for d in &s.daily {
            println!(
                "{},{},{:.1},{:.1},{:.1},{:.1},{:.1},{:.1},{}",
                d.date,
                d.hours,
                u.temp_value(d.t_min_c),
                u.temp_value(d.t_mean_c),
                u.temp_value(d.t_max_c),
                d.rh_min_pct,
                d.rh_mean_pct,
                d.rh_max_pct,
                d.rain_mm.map_or(String::new(), |r| match u {
                    UnitSystem::Si => format!("{r:.1}"),
                    UnitSystem::Us => format!("{:.2}", r / crate::units::MM_PER_IN),
                })
            );
        }
    }
    if let Some(out) = &a.out {
        let list_path = warnings_path.expect("set with --out");
        let mut set = OutputSet::new();
        let csv = series_csv(&series, &[format!("cleaned from {}", a.file.display())]);
        // Both files sit in the same folder (the list's name is the series' with another extension).
        set.add(file_name(out)?, csv);
        set.add(file_name(&list_path)?, warnings_list(&a.file, &warnings));
        set.commit_files(parent(out), &inputs)?;
        println!("wrote {} ({} h)", out.display(), series.len());
        println!(
            "wrote {} ({} warnings)",
            list_path.display(),
            warnings.len()
        );
    }
    Ok(())
}

fn file_name(p: &Path) -> anyhow::Result<&std::ffi::OsStr> {
    p.file_name()
        .with_context(|| format!("--out: {} names no file", p.display()))
}

fn parent(p: &Path) -> &Path {
    match p.parent() {
        Some(d) if !d.as_os_str().is_empty() => d,
        _ => Path::new("."),
    }
}

fn run_synth(a: SynthArgs) -> anyhow::Result<()> {
    let mut inputs: Vec<PathBuf> = Vec::new();
    let stats = match (&a.from_sample, &a.stats) {
        (Some(sample), None) => {
            inputs.push(sample.clone());
            let series = load(sample, &a.read, Some(a.start))?;
            let st = ClimateStats::from_series(
                &series,
                &format!("estimated from {}", sample.display()),
            )?;
            st.validate(sample)?;
            st
        }
        (None, Some(path)) => {
            inputs.push(path.clone());
            let text = crate::input::read_text(path)?;
            ClimateStats::from_json(path, &text)?
        }
        _ => anyhow::bail!("give exactly one of --from-sample FILE or --stats FILE.json"),
    };
    check_target(&a.out, &inputs, a.replace)?;
    if a.seasons == 0 || a.seasons > 10_000 {
        anyhow::bail!("--seasons: {} must be between 1 and 10000", a.seasons);
    }
    let plan = SeasonPlan {
        start: a.start,
        days: a.days,
        seed: a.seed,
    };
    let seasons = weather::generate_seasons(&stats, &plan, a.seasons)
        .with_context(|| format!("{}: field \"months\"", inputs[0].display()))?;
    let json = serde_json::to_string_pretty(&stats)? + "\n";
    let mut set = OutputSet::new();
    set.add("stats.json", json);
    let mut lines = Vec::new();
    for (i, s) in seasons.iter().enumerate() {
        let name = format!("season_{i:03}.csv");
        let note = format!(
            "synthetic season {i} of {}: dryfront weather synth --seed {} --start {} --days {}",
            a.seasons, a.seed, a.start, a.days
        );
        set.add(&name, series_csv(s, &[note]));
        let sum = summarize(s, &[60.0], None);
        lines.push(format!(
            "wrote {} ({} h; mean {}, mean RH {:.1} %, mean daily range {}, {})",
            a.out.join(&name).display(),
            s.len(),
            a.units.temp(sum.t_mean_c),
            sum.rh_mean_pct,
            a.units.temp_delta(sum.diurnal_range_k),
            s.rain_mm()
                .map_or("no rain amounts".to_string(), |r| format!(
                    "rain {}",
                    a.units.rain(r.iter().sum::<f64>())
                ))
        ));
    }
    set.commit(&a.out, &inputs, a.replace)?;
    for l in lines {
        println!("{l}");
    }
    println!("wrote {}", a.out.join("stats.json").display());
    Ok(())
}
