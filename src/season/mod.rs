//! Season planner: a buying point's dryer fleet over a whole harvest. Loads arrive (from a file or a seeded
//! generator), wait for a free dryer, are picked by a dispatch policy and dried through a seam (`LoadDrier`) so the
//! event logic never touches the deep-bed model directly; sweeps run many scenarios in parallel.
//!
//! References: the event loop is a plain discrete-event simulation (next-event time advance); the queue checks use
//! Little's law (L = λW, Little 1961). Everything else is our own.
//!
//! Pure computation: the buying point's and arrivals files are read by `input::season`.

pub mod arrivals;
pub mod dispatch;
pub mod drier;
pub mod kpi;
pub mod scenario;
pub mod shard;
pub mod sim;
pub mod sweep;

use crate::error::InputError;

/// Errors of the season planner.
#[derive(Debug, thiserror::Error)]
pub enum SeasonError {
    /// Bad input: a scenario, an arrivals file or an argument.
    #[error(transparent)]
    Input(#[from] InputError),
    /// A dryer's heater is refused (above the crop's safe limits without `force`).
    #[error(transparent)]
    Heater(#[from] crate::drying::heater::HeaterSpecError),
    /// The drying of one load failed.
    #[error("load {load:?} on dryer {dryer:?}: {failure}")]
    Drying {
        /// The load's id.
        load: String,
        /// The dryer's id.
        dryer: String,
        /// What went wrong (shown in the message, so not also chained as a source).
        failure: DryingFailure,
    },
}

/// Why one load could not be dried.
#[derive(Debug, thiserror::Error)]
pub enum DryingFailure {
    /// The load's run failed (bad weather cover, airflow, a non-physical state).
    #[error(transparent)]
    Load(#[from] Box<crate::load::LoadError>),
    /// A drier's time function gave no usable time.
    #[error("drying time {0} h is not a finite, non-negative number")]
    BadTime(f64),
    /// The dryer names a container the drier was not given.
    #[error("container {0:?} is not loaded")]
    UnknownContainer(String),
    /// The dryer names a fan the drier was not given.
    #[error("fan {0:?} is not loaded")]
    UnknownFan(String),
}
