//! Deep-bed drying of one load (Thompson-style layer model), heater strategies, batch runs and zone accounting.
//! Pure computation: no I/O.

pub mod ambient;
pub mod bed;
pub mod flow;
pub mod heater;
pub mod layer;
pub mod material;
pub mod run;
pub mod zones;
