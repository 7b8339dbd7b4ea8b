//! Fitting the model to measurements: crop rate constants from a load's moisture samples, and the published wagon
//! case the bundled peanut rates are checked against. I/O-free.

pub mod fit;
pub mod rates;
pub mod samples;
pub mod wagon;
