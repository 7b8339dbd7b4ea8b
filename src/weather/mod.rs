//! Hourly weather series, readers (EPW, the project's CSV schema, NSRDB TMY3) with strict checks, a summary for
//! drying, and a seeded synthetic season generator.
//!
//! Every reader returns a [`WeatherSeries`] on a regular hourly grid or an [`InputError`] naming the file, line
//! and field. Short gaps (at most [`ReadOptions::max_gap_h`] hours per quantity) are filled linearly and counted
//! ([`WeatherSeries::fill_counts`]); longer gaps, duplicate, out-of-order or off-grid hours are errors.
//! References: EnergyPlus Auxiliary Programs, "Weather Converter Program", EPW data dictionary (EPW); Wilcox &
//! Marion 2008, NREL/TP-581-43156 (TMY3); `weather-samples/README.md` (our CSV schema).
use std::path::Path;

pub mod csv;
pub mod ensemble;
pub mod epw;
pub mod series;
pub mod summary;
pub mod synth;
pub mod tmy3;

pub use self::csv::{parse_csv, read_csv};
pub use epw::{parse_epw, read_epw};
pub use series::{
    AirSample, FillCounts, OutsideSeries, ReadOptions, ReadWarning, Site, WeatherSeries,
};
pub use summary::{summarize, DailyStats, Summary};
pub use synth::{generate_season, generate_seasons, ClimateStats, MonthStats, SeasonPlan};
pub use tmy3::{parse_tmy3, read_tmy3};

use crate::error::InputError;

/// The weather file formats the readers understand.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WeatherFormat {
    /// EnergyPlus weather file.
    Epw,
    /// The project's CSV schema.
    Csv,
    /// NSRDB TMY3 CSV.
    Tmy3,
}

/// Guess the format: `.epw` extension or a first line starting with `LOCATION` → EPW; a first line of 7 fields
/// (by commas, or by semicolons when the line has no comma) whose first is a number (the TMY3 site line) → TMY3;
/// anything else → our CSV.
pub fn detect_format(path: &Path, text: &str) -> WeatherFormat {
    let first = text
        .trim_start_matches('\u{feff}')
        .lines()
        .next()
        .unwrap_or("");
    let ext_epw = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("epw"));
    if ext_epw || first.starts_with("LOCATION") {
        return WeatherFormat::Epw;
    }
    // A semicolon-separated TMY3 site line is still recognised, so that its reader can say what is wrong.
    let sep = if first.contains(',') { ',' } else { ';' };
    let fields: Vec<&str> = first.split(sep).collect();
    if fields.len() == 7 && fields[0].trim().parse::<u64>().is_ok() {
        return WeatherFormat::Tmy3;
    }
    WeatherFormat::Csv
}

/// Parse text in the given format.
pub fn parse(
    path: &Path,
    text: &str,
    format: WeatherFormat,
    opts: &ReadOptions,
) -> Result<WeatherSeries, InputError> {
    match format {
        WeatherFormat::Epw => parse_epw(path, text, opts),
        WeatherFormat::Csv => parse_csv(path, text, opts),
        WeatherFormat::Tmy3 => parse_tmy3(path, text, opts),
    }
}

/// Read a weather file, detecting its format unless one is given.
pub fn read(
    path: &Path,
    format: Option<WeatherFormat>,
    opts: &ReadOptions,
) -> Result<(WeatherSeries, WeatherFormat), InputError> {
    let text = crate::input::read_text(path)?;
    let format = format.unwrap_or_else(|| detect_format(path, &text));
    Ok((parse(path, &text, format, opts)?, format))
}
