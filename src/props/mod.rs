//! Property models: moist air, sorption isotherms, thin-layer drying, airflow resistance and thermal properties.
//! Pure functions of state and constants; no I/O.

pub mod lanes;
pub mod psychro;
pub mod resistance;
pub mod sorption;
pub mod thermal;
pub mod thin_layer;
