//! The thin command-line front end: parse, load, call the library, write outputs. Only this module uses `anyhow`.
use clap::{Parser, Subcommand};

pub mod airflow;
pub mod airflow_fit;
pub mod board;
pub mod calibrate;
pub mod demo;
pub mod design;
pub mod dry;
pub mod progress;
pub mod props;
pub mod season;
pub mod status;
pub mod weather;

/// dryfront: curing farmer-stock peanuts in forced-air drying trailers, from property look-ups to whole seasons.
///
/// A simulation is no substitute for a calibrated moisture meter. Propane burners, hot plenums and wet peanuts
/// carry fire, carbon-monoxide and mycotoxin risks: follow local codes, the equipment manuals and licensed practice.
#[derive(Debug, Parser)]
#[command(name = "dryfront", version, about, long_about = LONG_ABOUT, propagate_version = true)]
pub struct Args {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

const LONG_ABOUT: &str = "dryfront simulates curing farmer-stock (in-shell) peanuts in forced-air drying trailers: \
airflow through plenum, floor and bed; kernel and hull moisture in every cell under hourly weather; heater strategies, \
fuel and shrink; and dryer scheduling over a buying point's season.\n\n\
Start with `dryfront demo`. Every command has --help.\n\n\
Cautions: a simulation is no substitute for a calibrated moisture meter. Propane burners and hot plenums carry fire \
and carbon-monoxide risks, and wet peanuts held warm risk mold and aflatoxin: follow local codes (NFPA 58 for LP gas), \
the equipment manuals and licensed practice.";

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Run the bundled demo scenario end to end and write its outputs to a folder.
    Demo(demo::DemoArgs),
    /// Quick property look-ups at the dryer: EMC, heated-air state, bed pressure drop.
    #[command(subcommand)]
    Props(props::PropsCommand),
    /// Summarise, clean or synthesise hourly weather.
    #[command(subcommand)]
    Weather(weather::WeatherCommand),
    /// Dry one load through the deep-bed model: hours to target, zones, fuel, pictures.
    Dry(dry::DryArgs),
    /// Run one load under several heater strategies side by side.
    Compare(dry::CompareArgs),
    /// Run one load from several start times through the weather record.
    Starts(dry::StartsArgs),
    /// Run one load on several containers, fans, plenum models or fill depths side by side: airflow evenness,
    /// hours to the whole load, over-dried and still-wet mass, fuel and fan energy.
    Design(design::DesignArgs),
    /// Solve the airflow through a loaded container (plenum, floor, bed and fan together); `airflow fit` fits its
    /// permeability map to a top-surface airflow survey.
    Airflow(airflow::AirflowArgs),
    /// Fit a crop's drying constants to moisture samples of real loads and write the calibrated crop file.
    Calibrate(calibrate::CalibrateArgs),
    /// A load on air now: replay from its on-air time, adjust to the moisture readings, forecast its finish (with
    /// a weather ensemble) and compare heater choices for the remaining time.
    Status(status::StatusArgs),
    /// The buying point's board now: loads on the dryers forecast from their readings, the yard dispatched over
    /// the next hours (which load on which dryer when, finish ranges, waits, fuel) and a Gantt picture.
    Board(board::BoardArgs),
    /// Plan a buying point's harvest: dryer scheduling over a season, sweeps over dryer counts and seasons.
    #[command(subcommand)]
    Season(season::SeasonCommand),
}

/// The inputs of a run as its report lists them (name, size, SHA-256), each file read once through the one
/// reader, repeated paths listed once.
pub(crate) fn inputs_as_run(
    paths: &[std::path::PathBuf],
) -> anyhow::Result<Vec<crate::report::html::InputRecord>> {
    let mut seen = std::collections::BTreeSet::new();
    paths
        .iter()
        .filter(|p| seen.insert(p.as_path()))
        .map(|p| {
            let bytes = crate::input::read::read_bytes(p)?;
            Ok(crate::report::html::InputRecord::of(p, &bytes))
        })
        .collect()
}

/// Run one parsed command line inside one worker pool, entered once: every parallel loop below then starts on a
/// pool thread, so a loop too small to split runs where it is instead of being handed from the main thread to the
/// pool and back (the pool's size follows `RAYON_NUM_THREADS`, else the core count).
pub fn run(args: Args) -> anyhow::Result<()> {
    let pool = rayon::ThreadPoolBuilder::new()
        .build()
        .map_err(|e| anyhow::anyhow!("could not start the worker threads: {e}"))?;
    pool.install(|| run_command(args))
}

fn run_command(args: Args) -> anyhow::Result<()> {
    match args.command {
        Command::Demo(a) => demo::run(a),
        Command::Props(c) => props::run(c),
        Command::Weather(c) => weather::run(c),
        Command::Airflow(a) => airflow::run(a),
        Command::Dry(a) => dry::run_dry(a),
        Command::Compare(a) => dry::run_compare(a),
        Command::Starts(a) => dry::run_starts(a),
        Command::Design(a) => design::run(a),
        Command::Calibrate(a) => calibrate::run(a),
        Command::Season(c) => season::run(c),
        Command::Status(a) => status::run(a),
        Command::Board(a) => board::run(a),
    }
}
