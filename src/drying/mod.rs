//! Deep-bed drying of one load (Thompson-style layer model), heater strategies, a stepwise run with its stop rules, accounts, records and bounds, and zones by mass.
//! Pure computation: no I/O.

pub mod accounts;
pub mod ambient;
pub mod bed;
pub mod bounds;
pub mod flow;
pub mod heater;
pub mod layer;
pub mod material;
pub mod record;
pub mod run;
pub mod stop;
pub mod zones;
