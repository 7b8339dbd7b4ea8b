//! Crop models: constants loaded and validated from `models/crops/*.json`.
