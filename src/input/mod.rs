//! The input layer: the only place that turns files into the program's validated, unit-converted specifications.
//! `models` resolves names to bundled files (the one resolver); `read` is the one bounded reader every file goes
//! through; this module holds the one set of validation helpers every reader uses; `scenario` builds a [`crate::load::LoadSpec`] from a single-load
//! scenario file; `season` loads what a buying point's dryers name.

pub mod read;
pub mod scenario;
pub mod season;

pub use read::*;

use std::path::Path;

use crate::error::InputError;

/// An error in a structured file's field.
pub fn field_err(path: &Path, field: impl Into<String>, message: impl Into<String>) -> InputError {
    InputError::Model {
        path: path.to_path_buf(),
        field: field.into(),
        message: message.into(),
    }
}

/// Check that a field's value is finite and within `[lo, hi]`, naming the file and field.
pub fn check_field(
    path: &Path,
    field: &str,
    v: f64,
    lo: f64,
    hi: f64,
    unit: &str,
) -> Result<f64, InputError> {
    if v.is_finite() && v >= lo && v <= hi {
        Ok(v)
    } else {
        let unit = if unit.is_empty() {
            String::new()
        } else {
            format!(" {unit}")
        };
        Err(field_err(
            path,
            field,
            format!("{v}{unit} must be between {lo} and {hi}{unit}"),
        ))
    }
}

/// Parse JSON text into `T`, naming the file and line on failure.
pub fn parse_json<T: serde::de::DeserializeOwned>(
    path: &Path,
    text: &str,
) -> Result<T, InputError> {
    serde_json::from_str(text).map_err(|e| InputError::Parse {
        path: path.to_path_buf(),
        line: Some(e.line() as u64),
        message: e.to_string(),
    })
}
