//! Season planner: a buying point's dryer fleet over a whole harvest. Loads arrive (from a file or a seeded
//! generator), wait for a free dryer, are picked by a dispatch policy and dried through a seam (`LoadDrier`) so the
//! event logic never touches the deep-bed model directly; sweeps run many scenarios in parallel.
//!
//! References: the event loop is a plain discrete-event simulation (next-event time advance); the queue checks use
//! Little's law (L = λW, Little 1961). Everything else is our own.
//!
//! Pure computation apart from the arrivals reader (`arrivals::read_arrivals_csv`); the buying point's file is
//! read by `input::season`.

pub mod arrivals;
pub mod dispatch;
pub mod drier;
pub mod kpi;
pub mod scenario;
pub mod sim;
pub mod sweep;

use crate::error::InputError;

/// Errors of the season planner.
#[derive(Debug, thiserror::Error)]
pub enum SeasonError {
    /// Bad input: a scenario, an arrivals file or an argument.
    #[error(transparent)]
    Input(#[from] InputError),
    /// The drying of one load failed.
    #[error("load {load:?} on dryer {dryer:?}: {message}")]
    Drying {
        /// The load's id.
        load: String,
        /// The dryer's id.
        dryer: String,
        /// What went wrong.
        message: String,
    },
}
