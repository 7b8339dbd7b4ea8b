//! A load already on air, in the present tense: where it stands from the operator's readings (`readings`), and when
//! it will be done (`forecast`). Pure computation; the status file is read by `input::status`.
//!
//! Method: the load is replayed from its on-air time with the observed weather through the one load path
//! ([`crate::load::run_load`], the stepwise run, stopped by the rule `hours=H` at the latest reading); an observer
//! notes what the replayed bed says at each reading's own time and place. The replay's bed is then adjusted, with
//! the smallest change, until every reading agrees with it within the reading's stated accuracy (see
//! [`readings::adjust`]); the residuals before and after are reported. The forecast resumes the adjusted bed
//! (the whole state: hull, kernel, drying-curve start, temperature) through the same load path with the observed
//! weather followed by the forecast.

pub mod forecast;
pub mod readings;

use chrono::{DateTime, FixedOffset};

use crate::load::{LoadError, LoadSpec};

pub use forecast::{Finish, ForecastSettings, Percentiles, StatusForecast, WhatIf};
pub use readings::{Part, Place, PlenumReading, Reading, ReadingCheck};

/// A load on air as the status file gives it, ready to replay.
#[derive(Debug, Clone)]
pub struct LoadStatus {
    /// The load from its on-air time (`start`), its scale-ticket net mass, its moisture when it went on air, and
    /// the observed weather followed by the forecast.
    pub spec: LoadSpec,
    /// Moisture readings, in time order.
    pub readings: Vec<Reading>,
    /// Plenum readings, in time order (compared with the replay; they do not change the bed).
    pub plenum: Vec<PlenumReading>,
    /// Now: the latest reading, where the forecast starts.
    pub now: DateTime<FixedOffset>,
    /// The last observed hour (the forecast's weather follows it).
    pub observed_end: DateTime<FixedOffset>,
}

/// Errors of a status or forecast.
#[derive(Debug, thiserror::Error)]
pub enum StatusError {
    /// The load's run failed.
    #[error(transparent)]
    Load(#[from] LoadError),
    /// A reading lies outside the replay.
    #[error("reading at {0} lies outside the replay")]
    ReadingOutside(DateTime<FixedOffset>),
}

/// Hours from `a` to `b`.
pub fn hours_between(a: DateTime<FixedOffset>, b: DateTime<FixedOffset>) -> f64 {
    (b - a).num_milliseconds() as f64 / 3.6e6
}
