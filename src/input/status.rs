//! The status file of a load on air (JSON): which dryer set-up (a single-load scenario, for crop, container, fan,
//! heater, grid, stop rule and prices), the scale ticket's net mass, the on-air time and moisture, the observed
//! weather and a forecast, and the readings taken since. Checked field by field and built into a
//! [`LoadStatus`] whose [`crate::load::LoadSpec`] starts at the on-air time.
//!
//! ```json
//! {
//!   "name": "BF-06, ticket 2231",
//!   "scenario": "demo-load",
//!   "net_mass_kg": 6200,
//!   "on_air": "2026-09-18T15:00:00-05:00",
//!   "initial_kernel_moisture_pct": 21.0,
//!   "observed_weather": "observed.csv",
//!   "forecast_weather": "forecast.csv",
//!   "grid": { "nx": 8, "ny": 3, "nz": 12 },
//!   "readings": [
//!     { "time": "2026-09-19T05:00:00-05:00", "moisture_pct": 13.2, "part": "kernel",
//!       "depth_m": 0.1, "along": 0.5, "across": 0.5, "meter": "bench meter A", "accuracy_pct": 0.5 },
//!     { "time": "2026-09-19T05:00:00-05:00", "moisture_pct": 11.0, "meter": "bench meter A" }
//!   ],
//!   "plenum": [ { "time": "2026-09-19T05:00:00-05:00", "temp_c": 27.5, "rh_pct": 48 } ]
//! }
//! ```
//! A reading without `depth_m` is a composite of the whole load; `part` is `kernel` (default) or `pod`;
//! `accuracy_pct` defaults to ±0.5 point (a calibrated meter). Weather paths are taken from the status file's folder
//! first.

use std::path::{Path, PathBuf};

use chrono::{DateTime, FixedOffset};
use serde::Deserialize;

use super::scenario::{GridFile, Scenario};
use super::{check_field, field_err, parse_json, with_json_line};
use crate::airflow::geometry::Grid;
use crate::drying::bed::InitialMoisture;
use crate::error::InputError;
use crate::input::read_text;
use crate::load::FillSpec;
use crate::models::beside;
use crate::status::{LoadStatus, Part, Place, PlenumReading, Reading};
use crate::weather::ensemble::join;
use crate::weather::series::ReadOptions;

/// A meter's accuracy when the file gives none, ± percentage points (a calibrated meter; common practice).
pub const DEFAULT_ACCURACY_PCT: f64 = 0.5;

/// The status file as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StatusFile {
    /// Short name.
    pub name: String,
    /// What it is.
    #[serde(default)]
    pub description: String,
    /// The dryer set-up: a single-load scenario (bundled name or path).
    pub scenario: String,
    /// Net (wet) mass from the scale ticket, kg.
    pub net_mass_kg: f64,
    /// When the air went on, ISO 8601 with offset.
    pub on_air: String,
    /// Kernel moisture when the load went on air, % w.b. (the grade sample).
    pub initial_kernel_moisture_pct: f64,
    /// Weather observed since before the on-air time (any supported format).
    pub observed_weather: String,
    /// Forecast for the coming days (any supported format), starting where the observations end.
    pub forecast_weather: String,
    /// Grid (the scenario's when absent).
    #[serde(default)]
    pub grid: Option<GridFile>,
    /// Moisture readings.
    pub readings: Vec<ReadingFile>,
    /// Plenum readings.
    #[serde(default)]
    pub plenum: Vec<PlenumFile>,
}

/// A moisture reading as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ReadingFile {
    /// When, ISO 8601 with offset.
    pub time: String,
    /// Moisture, % w.b.
    pub moisture_pct: f64,
    /// `kernel` (default) or `pod`.
    #[serde(default)]
    pub part: Option<String>,
    /// Depth below the surface, m; absent for a composite sample.
    #[serde(default)]
    pub depth_m: Option<f64>,
    /// Along the length, 0–1 (default 0.5).
    #[serde(default)]
    pub along: Option<f64>,
    /// Across the width, 0–1 (default 0.5).
    #[serde(default)]
    pub across: Option<f64>,
    /// The meter (free label).
    #[serde(default)]
    pub meter: String,
    /// ± percentage points (default [`DEFAULT_ACCURACY_PCT`]).
    #[serde(default)]
    pub accuracy_pct: Option<f64>,
}

/// A plenum reading as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlenumFile {
    /// When.
    pub time: String,
    /// Dry bulb, °C.
    pub temp_c: f64,
    /// Relative humidity, %.
    #[serde(default)]
    pub rh_pct: Option<f64>,
}

/// A status read from its file.
#[derive(Debug, Clone)]
pub struct StatusInput {
    /// The load on air.
    pub status: LoadStatus,
    /// Its name.
    pub name: String,
    /// Every file read.
    pub inputs: Vec<PathBuf>,
}

pub(crate) fn time_field(
    p: &Path,
    field: &str,
    s: &str,
) -> Result<DateTime<FixedOffset>, InputError> {
    DateTime::parse_from_rfc3339(s).map_err(|e| {
        field_err(
            p,
            field,
            format!("{s:?} is not an ISO 8601 time with offset: {e}"),
        )
    })
}

/// Read and check a status file.
pub fn read_status(path: &Path) -> Result<StatusInput, InputError> {
    let text = read_text(path)?;
    let file: StatusFile = parse_json(path, &text)?;
    from_file(path, file).map_err(|e| with_json_line(e, path, &text))
}

fn from_file(p: &Path, file: StatusFile) -> Result<StatusInput, InputError> {
    let wrap = |field: &'static str| move |e: InputError| field_err(p, field, e.to_string());
    let (sc, _) =
        Scenario::read_named_by(Some(p), &file.scenario, false).map_err(wrap("scenario"))?;
    let mut spec = sc.spec;
    let mut inputs = vec![p.to_path_buf()];
    inputs.extend(sc.inputs);
    let read_weather = |field: &'static str, name: &str| {
        let wp = beside(p, name);
        crate::weather::read(&wp, None, &ReadOptions::default())
            .map(|(w, _)| (w, wp))
            .map_err(wrap(field))
    };
    let (observed, op) = read_weather("observed_weather", &file.observed_weather)?;
    let (fc, fp) = read_weather("forecast_weather", &file.forecast_weather)?;
    inputs.extend([op, fp]);
    let weather =
        join(&observed, &fc).map_err(|e| field_err(p, "forecast_weather", e.to_string()))?;
    let on_air = time_field(p, "on_air", &file.on_air)?;
    if on_air < observed.start() || on_air >= observed.end() {
        return Err(field_err(
            p,
            "on_air",
            format!(
                "{on_air} is outside the observed weather ({} to {})",
                observed.start(),
                observed.end()
            ),
        ));
    }
    let m0 = check_field(
        p,
        "initial_kernel_moisture_pct",
        file.initial_kernel_moisture_pct,
        5.0,
        45.0,
        "% w.b.",
    )?;
    if spec.run.target_kernel_wb * 100.0 >= m0 {
        return Err(field_err(
            p,
            "initial_kernel_moisture_pct",
            format!(
                "{m0} % w.b. is not above the target {} % w.b.",
                spec.run.target_kernel_wb * 100.0
            ),
        ));
    }
    if let Some(g) = file.grid {
        for (f, v) in [("grid.nx", g.nx), ("grid.ny", g.ny), ("grid.nz", g.nz)] {
            check_field(p, f, v as f64, 1.0, 512.0, "")?;
        }
        super::limits::check_cells(
            "grid",
            (g.nx * g.ny * g.nz) as f64,
            super::limits::RUN_BYTES_PER_CELL,
            1.0,
        )
        .map_err(wrap("grid"))?;
        spec.grid = Grid {
            nx: g.nx,
            ny: g.ny,
            nz: g.nz,
        };
    }
    spec.start = on_air;
    spec.initial = InitialMoisture::Uniform(m0 / 100.0);
    spec.weather = std::sync::Arc::new(weather);
    let kg = check_field(p, "net_mass_kg", file.net_mass_kg, 10.0, 60_000.0, "kg")?;
    spec.fill = FillSpec::NetMass(kg);
    let t0 = observed
        .at(on_air)
        .map_err(|e| field_err(p, "on_air", e.to_string()))?
        .t_c;
    let (loaded, _) = spec
        .loaded_container(t0)
        .map_err(|e| field_err(p, "net_mass_kg", e.to_string()))?;
    let bed_depth = match loaded.fill {
        crate::airflow::geometry::Fill::Level { depth_m } => depth_m,
        _ => loaded.wall_height_m,
    };
    let mut readings = Vec::with_capacity(file.readings.len());
    for (i, r) in file.readings.iter().enumerate() {
        readings.push(reading(p, i, r, on_air, observed.end(), bed_depth)?);
    }
    if readings.is_empty() {
        return Err(field_err(
            p,
            "readings",
            "needs at least one moisture reading (its time is \"now\")",
        ));
    }
    let now = readings.iter().map(|r| r.time).max().expect("not empty");
    let mut plenum = Vec::with_capacity(file.plenum.len());
    for (i, r) in file.plenum.iter().enumerate() {
        let f = |name: &str| format!("plenum[{i}].{name}");
        let time = time_field(p, &f("time"), &r.time)?;
        if time <= on_air || time > now {
            return Err(field_err(p, f("time"), format!("{time} is not between the on-air time ({on_air}) and the latest moisture reading ({now})")));
        }
        plenum.push(PlenumReading {
            time,
            t_c: check_field(p, &f("temp_c"), r.temp_c, -30.0, 100.0, "°C")?,
            rh: match r.rh_pct {
                Some(rh) => Some(check_field(p, &f("rh_pct"), rh, 0.0, 100.0, "%")? / 100.0),
                None => None,
            },
        });
    }
    readings.sort_by_key(|r| r.time);
    plenum.sort_by_key(|r| r.time);
    Ok(StatusInput {
        status: LoadStatus {
            spec,
            readings,
            plenum,
            now,
            observed_end: observed.end(),
        },
        name: file.name,
        inputs,
    })
}

pub(crate) fn reading(
    p: &Path,
    i: usize,
    r: &ReadingFile,
    on_air: DateTime<FixedOffset>,
    observed_end: DateTime<FixedOffset>,
    bed_depth_m: f64,
) -> Result<Reading, InputError> {
    let f = |name: &str| format!("readings[{i}].{name}");
    let time = time_field(p, &f("time"), &r.time)?;
    if time <= on_air {
        return Err(field_err(
            p,
            f("time"),
            format!("{time} is not after the on-air time {on_air}"),
        ));
    }
    if time > observed_end {
        return Err(field_err(
            p,
            f("time"),
            format!("{time} is after the observed weather ends ({observed_end}): the replay cannot reach it"),
        ));
    }
    let moisture = check_field(p, &f("moisture_pct"), r.moisture_pct, 1.0, 60.0, "% w.b.")?;
    let accuracy = check_field(
        p,
        &f("accuracy_pct"),
        r.accuracy_pct.unwrap_or(DEFAULT_ACCURACY_PCT),
        0.05,
        5.0,
        "points",
    )?;
    let part = match r.part.as_deref() {
        None | Some("kernel") => Part::Kernel,
        Some("pod") => Part::Pod,
        Some(other) => {
            return Err(field_err(
                p,
                f("part"),
                format!("{other:?}: expected \"kernel\" or \"pod\""),
            ))
        }
    };
    let place = match r.depth_m {
        None => {
            if r.along.is_some() || r.across.is_some() {
                return Err(field_err(
                    p,
                    f("depth_m"),
                    "a probe reading (with along/across) needs its depth below the surface",
                ));
            }
            Place::Composite
        }
        Some(d) => Place::At {
            depth_m: check_field(p, &f("depth_m"), d, 0.0, bed_depth_m, "m")?,
            along: check_field(p, &f("along"), r.along.unwrap_or(0.5), 0.0, 1.0, "")?,
            across: check_field(p, &f("across"), r.across.unwrap_or(0.5), 0.0, 1.0, "")?,
        },
    };
    Ok(Reading {
        time,
        moisture_wb: moisture / 100.0,
        accuracy_wb: accuracy / 100.0,
        part,
        place,
        meter: r.meter.clone(),
    })
}
