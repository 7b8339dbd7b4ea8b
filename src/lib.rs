//! dryfront: a simulator for curing farmer-stock (in-shell) peanuts in forced-air drying trailers, and for the
//! buying points that run fleets of them.
//!
//! The numerical core (`props`, `airflow`, `drying`, `load`, `season`) does no I/O and never prints. Files are
//! read by the input layer (`input`, `models`, `crop` and `weather` parsing) and written by `report`; `cli` is a
//! thin front end. See `DEVELOPERS.md` for the module map.
#![warn(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod advice;
pub mod airflow;
pub mod board;
pub mod calibrate;
pub mod cli;
pub mod crop;
pub mod drying;
pub mod error;
pub mod input;
pub mod load;
pub mod models;
pub mod props;
pub mod report;
pub mod season;
pub mod status;
pub mod units;
pub mod weather;
