//! dryfront: a simulator for curing farmer-stock (in-shell) peanuts in forced-air drying trailers, and for the
//! buying points that run fleets of them.
//!
//! The numerical core (`props`, `airflow`, `drying`, `season`) does no I/O and never prints. Parsing and writing
//! live in `crop` loading, `weather`, `report` and `cli`. See `DEVELOPERS.md` for the module map.
#![warn(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod airflow;
pub mod cli;
pub mod crop;
pub mod drying;
pub mod error;
pub mod input;
pub mod models;
pub mod outfile;
pub mod props;
pub mod report;
pub mod scenario;
pub mod season;
pub mod units;
pub mod weather;
