//! Deep-bed drying of one load (Thompson-style layer model), heater strategies, batch runs.
