//! A load's moisture samples (CSV): when, where and what was measured, and how. Our own schema (README, "Moisture
//! samples"):
//!
//! ```text
//! time,location,x_m,y_m,depth_m,measure,moisture_wb_pct,method
//! 2026-09-18T21:00:00-05:00,point,1.0,1.2,0.2,kernel,18.4,oven
//! 2026-09-19T03:00:00-05:00,composite,,,,kernel,16.9,meter
//! ```
//!
//! `time` ISO 8601 with offset, not before the load's start; `location` `point` (then `x_m` along the length from
//! the air-inlet end, `y_m` across from the left wall, `depth_m` below the peanuts' surface, all inside the
//! container) or `composite` (the whole load; the three places empty); `measure` `kernel` or `pod`;
//! `moisture_wb_pct` % wet basis, 1–60; `method` `oven`, `sensor` or `meter` (sets the sample's weight).
//! Lines starting with `#` are comments.

use std::path::Path;

use chrono::{DateTime, FixedOffset};

use super::read::header_columns;
use super::{check_line_number, line_err, read_text, SEMICOLON_HINT, UNCLOSED_QUOTE};
use crate::calibrate::samples::{Measure, Method, Place, Sample};
use crate::error::InputError;

/// The columns, in any order.
pub const COLUMNS: [&str; 8] = [
    "time",
    "location",
    "x_m",
    "y_m",
    "depth_m",
    "measure",
    "moisture_wb_pct",
    "method",
];

/// Moisture accepted, % w.b.
pub const MOISTURE_RANGE_PCT: (f64, f64) = (1.0, 60.0);

/// The load a samples file belongs to: its start and the container's size.
#[derive(Debug, Clone, Copy)]
pub struct SampledLoad {
    /// When the air went on.
    pub start: DateTime<FixedOffset>,
    /// Container length, m.
    pub length_m: f64,
    /// Container width, m.
    pub width_m: f64,
    /// Deepest the peanuts can lie (the wall height), m.
    pub max_depth_m: f64,
}

/// Read a samples file.
pub fn read_samples(path: &Path, load: &SampledLoad) -> Result<Vec<Sample>, InputError> {
    parse_samples(path, &read_text(path)?, load)
}

/// Parse samples text; `path` names the file in errors.
pub fn parse_samples(
    path: &Path,
    text: &str,
    load: &SampledLoad,
) -> Result<Vec<Sample>, InputError> {
    let perr = |line: Option<u64>, message: String| InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    };
    let mut rdr = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(true)
        .comment(Some(b'#'))
        .from_reader(text.as_bytes());
    let headers = rdr
        .headers()
        .map_err(|e| perr(e.position().map(|p| p.line()), e.to_string()))?
        .clone();
    let idx = header_columns(path, &headers, &COLUMNS.join(", "), &COLUMNS)?;
    let mut out = Vec::new();
    for rec in rdr.records() {
        let rec = rec.map_err(|e| perr(e.position().map(|p| p.line()), e.to_string()))?;
        let line = rec.position().map(|p| p.line()).unwrap_or(0);
        if rec.iter().any(|f| f.contains(['\n', '\r'])) {
            return Err(perr(Some(line), UNCLOSED_QUOTE.into()));
        }
        if rec.len() == 1 && rec[0].contains(';') {
            return Err(perr(
                Some(line),
                format!("row is separated by ';': {SEMICOLON_HINT}"),
            ));
        }
        if rec.len() != headers.len() {
            return Err(perr(
                Some(line),
                format!(
                    "{} fields where the header names {} ({})",
                    rec.len(),
                    headers.len(),
                    headers.iter().collect::<Vec<_>>().join(", ")
                ),
            ));
        }
        let get = |k: usize| &rec[idx[k]];
        out.push(sample(path, line, load, get)?);
    }
    if out.is_empty() {
        return Err(perr(
            None,
            "no samples: the file has a header but no rows".into(),
        ));
    }
    Ok(out)
}

fn sample<'r>(
    path: &Path,
    line: u64,
    load: &SampledLoad,
    get: impl Fn(usize) -> &'r str,
) -> Result<Sample, InputError> {
    let t = get(0);
    let time = DateTime::parse_from_rfc3339(t).map_err(|_| {
        line_err(
            path,
            line,
            "time",
            t,
            "must be an ISO 8601 time with offset, e.g. 2026-09-18T21:00:00-05:00",
        )
    })?;
    let hours = (time - load.start).num_milliseconds() as f64 / 3.6e6;
    if hours < 0.0 {
        return Err(line_err(
            path,
            line,
            "time",
            t,
            format!("is before the load's start ({})", load.start.to_rfc3339()),
        ));
    }
    let place = match get(1) {
        "composite" => {
            for (k, name) in COLUMNS.iter().enumerate().take(5).skip(2) {
                if !get(k).is_empty() {
                    return Err(line_err(
                        path,
                        line,
                        name,
                        get(k),
                        "must be empty for a composite sample",
                    ));
                }
            }
            Place::Composite
        }
        "point" => Place::Point {
            x_m: check_line_number(path, line, "x_m", get(2), (0.0, load.length_m), "m")?,
            y_m: check_line_number(path, line, "y_m", get(3), (0.0, load.width_m), "m")?,
            depth_m: check_line_number(
                path,
                line,
                "depth_m",
                get(4),
                (0.0, load.max_depth_m),
                "m",
            )?,
        },
        other => {
            return Err(line_err(
                path,
                line,
                "location",
                other,
                "must be \"point\" or \"composite\"",
            ))
        }
    };
    let measure = match get(5) {
        "kernel" => Measure::Kernel,
        "pod" => Measure::Pod,
        other => {
            return Err(line_err(
                path,
                line,
                "measure",
                other,
                "must be \"kernel\" or \"pod\"",
            ))
        }
    };
    let moisture_wb_pct = check_line_number(
        path,
        line,
        "moisture_wb_pct",
        get(6),
        MOISTURE_RANGE_PCT,
        "% w.b.",
    )?;
    let method = match get(7) {
        "oven" => Method::Oven,
        "sensor" => Method::Sensor,
        "meter" => Method::Meter,
        other => {
            return Err(line_err(
                path,
                line,
                "method",
                other,
                "must be \"oven\", \"sensor\" or \"meter\"",
            ))
        }
    };
    Ok(Sample {
        hours,
        place,
        measure,
        moisture_wb_pct,
        method,
        line,
    })
}
