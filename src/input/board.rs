//! The board file of a buying point (JSON): the buying point (its dryers, rules, prices), now, the observed
//! weather and a forecast, what is on each dryer since when with its readings, and the loads in the yard. Built
//! into the season template every load dries from, the loads on the dryers as [`LoadStatus`]es and the yard as
//! arrivals.
//!
//! ```json
//! {
//!   "name": "Bramble Fork, Saturday 5 am",
//!   "buying_point": "../../models/buying-points/bramble-fork.json",
//!   "crop": "peanut-inshell",
//!   "now": "2026-09-19T05:00:00-05:00",
//!   "policy": "wait-limit",
//!   "observed_weather": "observed.csv",
//!   "forecast_weather": "forecast.csv",
//!   "on_dryers": [ { "dryer": "BF-06", "load": "2231", "net_mass_kg": 6200,
//!                    "on_air": "2026-09-18T15:00:00-05:00", "initial_kernel_moisture_pct": 21.0,
//!                    "readings": [ { "time": "2026-09-19T04:30:00-05:00", "moisture_pct": 14.6 } ] } ],
//!   "yard": [ { "load": "2240", "arrival": "2026-09-19T03:10:00-05:00", "net_mass_kg": 5100,
//!               "kernel_moisture_pct": 19.5 } ]
//! }
//! ```
//! Readings are as in the status file (`input::status`); a yard load arriving after `now` is an expected truck.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use chrono::{DateTime, FixedOffset};
use serde::Deserialize;

use super::season::{read_buying_point, season_template, SeasonRunSettings};
use super::status::{reading, time_field, ReadingFile};
use super::{check_field, field_err, parse_json, with_json_line};
use crate::board::OnDryer;
use crate::drying::run::StopRule;
use crate::error::InputError;
use crate::input::read_text;
use crate::models::beside;
use crate::season::arrivals::Load;
use crate::season::dispatch::DispatchPolicy;
use crate::season::drier::LoadTemplate;
use crate::season::scenario::BuyingPoint;
use crate::status::LoadStatus;
use crate::weather::ensemble::join;
use crate::weather::series::ReadOptions;

/// The board file as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BoardFile {
    /// Short name.
    pub name: String,
    /// The buying point's file (path, taken from the board file's folder first).
    pub buying_point: String,
    /// Crop model (bundled name or path).
    #[serde(default = "default_crop")]
    pub crop: String,
    /// Now, ISO 8601 with offset.
    pub now: String,
    /// Dispatch policy: `fcfs`, `wettest`, `shortest`, `wait-limit` (default).
    #[serde(default)]
    pub policy: Option<String>,
    /// Weather observed up to now.
    pub observed_weather: String,
    /// Forecast, starting where the observations end.
    pub forecast_weather: String,
    /// Loads on dryers.
    #[serde(default)]
    pub on_dryers: Vec<OnDryerFile>,
    /// Loads in the yard (or expected).
    #[serde(default)]
    pub yard: Vec<YardFile>,
}

fn default_crop() -> String {
    "peanut-inshell".into()
}

/// A load on a dryer as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct OnDryerFile {
    /// Dryer id.
    pub dryer: String,
    /// Load id.
    pub load: String,
    /// Net mass from the scale ticket, kg.
    pub net_mass_kg: f64,
    /// Air on.
    pub on_air: String,
    /// Kernel moisture when it went on air, % w.b.
    pub initial_kernel_moisture_pct: f64,
    /// Readings since.
    #[serde(default)]
    pub readings: Vec<ReadingFile>,
}

/// A yard load as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct YardFile {
    /// Load id.
    pub load: String,
    /// Arrival (past: waiting; future: expected).
    pub arrival: String,
    /// Net mass, kg.
    pub net_mass_kg: f64,
    /// Kernel moisture, % w.b.
    pub kernel_moisture_pct: f64,
}

/// A board read from its file.
#[derive(Debug, Clone)]
pub struct BoardInput {
    /// Name.
    pub name: String,
    /// The buying point.
    pub bp: BuyingPoint,
    /// What every load dries from (season settings: coarse grid, airflow at each start), with the observed
    /// weather followed by the forecast.
    pub template: LoadTemplate,
    /// Now.
    pub now: DateTime<FixedOffset>,
    /// Policy.
    pub policy: DispatchPolicy,
    /// Loads on dryers.
    pub on_dryers: Vec<OnDryer>,
    /// The yard, by arrival.
    pub yard: Vec<Load>,
    /// The last observed hour.
    pub observed_end: DateTime<FixedOffset>,
    /// Every file read.
    pub inputs: Vec<PathBuf>,
}

/// Read and check a board file.
pub fn read_board(path: &Path) -> Result<BoardInput, InputError> {
    let text = read_text(path)?;
    let file: BoardFile = parse_json(path, &text)?;
    from_file(path, file).map_err(|e| with_json_line(e, path, &text))
}

fn from_file(p: &Path, file: BoardFile) -> Result<BoardInput, InputError> {
    let wrap = |field: String| move |e: InputError| field_err(p, field, e.to_string());
    let bp_path = beside(p, &file.buying_point);
    let bp = read_buying_point(&bp_path).map_err(wrap("buying_point".into()))?;
    let read_weather = |field: &str, name: &str| {
        let wp = beside(p, name);
        crate::weather::read(&wp, None, &ReadOptions::default())
            .map(|(w, _)| (w, wp))
            .map_err(wrap(field.into()))
    };
    let (observed, op) = read_weather("observed_weather", &file.observed_weather)?;
    let (fc, fp) = read_weather("forecast_weather", &file.forecast_weather)?;
    let weather =
        join(&observed, &fc).map_err(|e| field_err(p, "forecast_weather", e.to_string()))?;
    let now = time_field(p, "now", &file.now)?;
    if now <= observed.start() || now > observed.end() {
        return Err(field_err(
            p,
            "now",
            format!(
                "{now} is outside the observed weather ({} to {})",
                observed.start(),
                observed.end()
            ),
        ));
    }
    let policy = match file.policy.as_deref() {
        None => DispatchPolicy::WaitLimit,
        Some(s) => DispatchPolicy::from_name(s).ok_or_else(|| {
            field_err(
                p,
                "policy",
                format!("{s:?}: expected fcfs, wettest, shortest or wait-limit"),
            )
        })?,
    };
    let (mut template, mut inputs) = season_template(
        &bp,
        &bp_path,
        &file.crop,
        Arc::new(weather),
        &SeasonRunSettings::default(),
    )
    .map_err(wrap("buying_point".into()))?;
    // The board reports both the mean and the whole-load time of every load; it runs each to both.
    if !matches!(template.run.stop, StopRule::Hours(_)) {
        template.run.stop = StopRule::Both;
    }
    inputs.extend([p.to_path_buf(), bp_path, op, fp]);
    let mut on_dryers = Vec::new();
    for (i, o) in file.on_dryers.iter().enumerate() {
        on_dryers.push(on_dryer(
            p,
            i,
            o,
            &bp,
            &template,
            now,
            observed.end(),
            &on_dryers,
        )?);
    }
    let largest = bp.dryers.iter().map(|d| d.capacity_kg).fold(0.0, f64::max);
    let mut yard = Vec::new();
    for (i, y) in file.yard.iter().enumerate() {
        let f = |n: &str| format!("yard[{i}].{n}");
        if y.load.trim().is_empty() || yard.iter().any(|l: &Load| l.id == y.load) {
            return Err(field_err(
                p,
                f("load"),
                format!("{:?}: load ids must be given and differ", y.load),
            ));
        }
        yard.push(Load {
            id: y.load.clone(),
            arrival: time_field(p, &f("arrival"), &y.arrival)?,
            mass_kg: check_field(p, &f("net_mass_kg"), y.net_mass_kg, 10.0, largest, "kg")?,
            moisture_pct: check_field(
                p,
                &f("kernel_moisture_pct"),
                y.kernel_moisture_pct,
                5.0,
                45.0,
                "% w.b.",
            )?,
            notes: String::new(),
        });
    }
    yard.sort_by_key(|l| l.arrival);
    Ok(BoardInput {
        name: file.name,
        bp,
        template,
        now,
        policy,
        on_dryers,
        yard,
        observed_end: observed.end(),
        inputs,
    })
}

#[allow(clippy::too_many_arguments)]
fn on_dryer(
    p: &Path,
    i: usize,
    o: &OnDryerFile,
    bp: &BuyingPoint,
    template: &LoadTemplate,
    now: DateTime<FixedOffset>,
    observed_end: DateTime<FixedOffset>,
    before: &[OnDryer],
) -> Result<OnDryer, InputError> {
    let f = |n: &str| format!("on_dryers[{i}].{n}");
    let d = bp
        .dryers
        .iter()
        .position(|d| d.id == o.dryer)
        .ok_or_else(|| {
            field_err(
                p,
                f("dryer"),
                format!("{:?} is not a dryer of {}", o.dryer, bp.name),
            )
        })?;
    if before.iter().any(|b| b.dryer_index == d) {
        return Err(field_err(
            p,
            f("dryer"),
            format!("{:?} already has a load on it", o.dryer),
        ));
    }
    let dryer = &bp.dryers[d];
    let mass = check_field(
        p,
        &f("net_mass_kg"),
        o.net_mass_kg,
        10.0,
        dryer.capacity_kg,
        "kg",
    )?;
    let on_air = time_field(p, &f("on_air"), &o.on_air)?;
    if on_air < template.weather.start() || on_air >= now {
        return Err(field_err(
            p,
            f("on_air"),
            format!(
                "{on_air} is not between the observed weather's start ({}) and now ({now})",
                template.weather.start()
            ),
        ));
    }
    let m0 = check_field(
        p,
        &f("initial_kernel_moisture_pct"),
        o.initial_kernel_moisture_pct,
        5.0,
        45.0,
        "% w.b.",
    )?;
    if m0 <= bp.rules.target_kernel_pct {
        return Err(field_err(
            p,
            f("initial_kernel_moisture_pct"),
            format!(
                "{m0} % w.b. is not above the target {} % w.b.",
                bp.rules.target_kernel_pct
            ),
        ));
    }
    let load = Load {
        id: o.load.clone(),
        arrival: on_air,
        mass_kg: mass,
        moisture_pct: m0,
        notes: String::new(),
    };
    let spec = template
        .spec_for(&load, dryer, on_air)
        .map_err(|e| field_err(p, f("dryer"), e.to_string()))?;
    let t0 = template
        .weather
        .at(on_air)
        .map_err(|e| field_err(p, f("on_air"), e.to_string()))?
        .t_c;
    let (loaded, _) = spec
        .loaded_container(t0)
        .map_err(|e| field_err(p, f("net_mass_kg"), e.to_string()))?;
    let depth = match loaded.fill {
        crate::airflow::geometry::Fill::Level { depth_m } => depth_m,
        _ => loaded.wall_height_m,
    };
    let mut readings = Vec::new();
    for (k, r) in o.readings.iter().enumerate() {
        let rd = reading(p, k, r, on_air, observed_end, depth)
            .map_err(|e| rename(e, &format!("readings[{k}]"), &f(&format!("readings[{k}]"))))?;
        if rd.time > now {
            return Err(field_err(
                p,
                f(&format!("readings[{k}].time")),
                format!("{} is after now ({now})", rd.time),
            ));
        }
        readings.push(rd);
    }
    readings.sort_by_key(|r| r.time);
    Ok(OnDryer {
        dryer_index: d,
        load_id: o.load.clone(),
        status: LoadStatus {
            spec,
            readings,
            plenum: vec![],
            now,
            observed_end,
        },
    })
}

/// A reading's field error renamed under its load (`readings[0].time` → `on_dryers[2].readings[0].time`).
fn rename(e: InputError, from: &str, to: &str) -> InputError {
    match e {
        InputError::Model {
            path,
            line,
            field,
            message,
        } => InputError::Model {
            path,
            line,
            field: field.replacen(from, to, 1),
            message,
        },
        other => other,
    }
}
