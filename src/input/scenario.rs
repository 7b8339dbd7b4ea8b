//! A single-load scenario file (`models/scenarios/*.json`): which crop, container, fan and weather, when the load
//! goes on air, how wet it is and how much of it there is, how the burner is run, the grid, the stop rule and the
//! prices; checked field by field and built into a [`LoadSpec`].

use std::path::{Path, PathBuf};
use std::sync::Arc;

use chrono::DateTime;
use serde::Deserialize;

use super::{check_field, field_err, parse_json, with_json_line};
use crate::airflow::fan::{FanCurve, FlowSpec};
use crate::airflow::geometry::{Container, Grid};
use crate::crop::Crop;
use crate::drying::bed::InitialMoisture;
use crate::drying::flow::FanEfficiency;
use crate::drying::heater::{Fuel, SafetyWarning, StrategySpec};
use crate::drying::material::CropMaterial;
use crate::drying::run::{RunSettings, StopRule};
use crate::error::InputError;
use crate::input::read_text;
use crate::load::{checked_heater, AirflowUpdates, FillSpec, LoadSpec, Prices};
use crate::models::{beside, resolve_named_by};
use crate::weather::series::ReadOptions;

/// The scenario file as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ScenarioFile {
    /// Short name.
    pub name: String,
    /// What the scenario is.
    #[serde(default)]
    pub description: String,
    /// Crop model (bundled name or path; a relative path is taken from the scenario file's folder, then the
    /// working directory, as for every file named here).
    pub crop: String,
    /// Container (bundled name or path).
    pub container: String,
    /// Net (wet) mass of the load, kg: fills the container level to the depth it takes. Without it the container
    /// file's own fill is used.
    #[serde(default)]
    pub net_mass_kg: Option<f64>,
    /// Fan (bundled name or path); or give `flow_m3_per_min`.
    #[serde(default)]
    pub fan: Option<String>,
    /// Fixed total airflow instead of a fan curve, m³/min.
    #[serde(default)]
    pub flow_m3_per_min: Option<f64>,
    /// Fan total efficiency (air power / shaft power).
    #[serde(default = "default_fan_eff")]
    pub fan_efficiency: f64,
    /// Motor efficiency (shaft power / electrical input).
    #[serde(default = "default_motor_eff")]
    pub motor_efficiency: f64,
    /// Weather file (relative paths are taken from the scenario file's folder, then the working directory).
    pub weather: String,
    /// When the air goes on, ISO 8601 with offset.
    pub start: String,
    /// Initial kernel moisture, % w.b.
    pub initial_kernel_moisture_pct: f64,
    /// Optional: kernel moisture of the top layer, % w.b. (the first value is then the bottom layer's).
    #[serde(default)]
    pub initial_kernel_moisture_top_pct: Option<f64>,
    /// Heater.
    pub heater: HeaterFile,
    /// Grid.
    #[serde(default)]
    pub grid: GridFile,
    /// Time step, h.
    #[serde(default = "default_dt_h")]
    pub time_step_h: f64,
    /// Give up after, h.
    #[serde(default = "default_max_h")]
    pub max_hours: f64,
    /// Time-series interval, h.
    #[serde(default = "default_record_h")]
    pub record_every_h: f64,
    /// Target kernel moisture, % w.b. (the crop's default when absent).
    #[serde(default)]
    pub target_kernel_moisture_pct: Option<f64>,
    /// Stop rule: `mean`, `fraction`, `both` (default) or `hours=H`.
    #[serde(default)]
    pub stop_rule: Option<String>,
    /// The fraction rule's share of the load at or below target, % (default 95).
    #[serde(default = "default_fraction_pct")]
    pub fraction_rule_pct: f64,
    /// When the airflow is solved again: `follow` (default) or `at-start`.
    #[serde(default)]
    pub airflow_updates: Option<String>,
    /// Prices.
    pub prices: Prices,
}

/// Fan total efficiency used when a file gives none (vaneaxial ≈ 0.5–0.75, DOMAIN.md §8.1, common practice).
pub const DEFAULT_FAN_EFFICIENCY: f64 = 0.55;
/// Motor efficiency used when a file gives none (small motors ≈ 0.85–0.9, from memory, unverified).
pub const DEFAULT_MOTOR_EFFICIENCY: f64 = 0.88;

fn default_fan_eff() -> f64 {
    DEFAULT_FAN_EFFICIENCY
}
fn default_motor_eff() -> f64 {
    DEFAULT_MOTOR_EFFICIENCY
}
fn default_dt_h() -> f64 {
    0.1
}
fn default_max_h() -> f64 {
    120.0
}
fn default_record_h() -> f64 {
    1.0
}
fn default_fraction_pct() -> f64 {
    95.0
}

/// The heater as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HeaterFile {
    /// Strategy: `none`, `rise=8`, `plenum=35`, `rh=55,max=38`, optionally `@20-6`.
    pub strategy: String,
    /// Burner capacity, kW.
    #[serde(default)]
    pub burner_kw: Option<f64>,
    /// `propane` or `natural-gas`.
    #[serde(default = "default_fuel")]
    pub fuel: String,
}

fn default_fuel() -> String {
    "propane".into()
}

/// Grid as written.
#[derive(Debug, Clone, Copy, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GridFile {
    /// Columns along the length.
    pub nx: usize,
    /// Columns across the width.
    pub ny: usize,
    /// Layers.
    pub nz: usize,
}

impl Default for GridFile {
    fn default() -> Self {
        GridFile {
            nx: 16,
            ny: 6,
            nz: 20,
        }
    }
}

/// A scenario read from its file: the spec, and every file it was built from.
#[derive(Debug, Clone)]
pub struct Scenario {
    /// The load, ready to run.
    pub spec: LoadSpec,
    /// The scenario file.
    pub path: PathBuf,
    /// What the file says it is.
    pub description: String,
    /// Every file read to build it (scenario, crop, container, fan, weather).
    pub inputs: Vec<PathBuf>,
}

/// Read a container by bundled name or path; a path written in the file `from` is taken from beside it.
pub fn read_container(
    from: Option<&Path>,
    name: &str,
    what: &str,
) -> Result<(Container, PathBuf), InputError> {
    let p = resolve_named_by(from, "containers", name, what)?;
    Ok((Container::from_json_str(&read_text(&p)?, &p)?, p))
}

/// Read a fan curve by bundled name or path (a path written in `from` taken from beside it).
pub fn read_fan(
    from: Option<&Path>,
    name: &str,
    what: &str,
) -> Result<(FanCurve, PathBuf), InputError> {
    let p = resolve_named_by(from, "fans", name, what)?;
    Ok((FanCurve::from_json_str(&read_text(&p)?, &p)?, p))
}

/// Read a crop by bundled name or path (a path written in `from` taken from beside it).
pub fn read_crop(
    from: Option<&Path>,
    name: &str,
    what: &str,
) -> Result<(Crop, PathBuf), InputError> {
    let p = resolve_named_by(from, "crops", name, what)?;
    Ok((Crop::from_json_str(&read_text(&p)?, &p)?, p))
}

/// A fuel by name.
pub fn fuel_named(path: &Path, field: &str, name: &str) -> Result<Fuel, InputError> {
    match name {
        "propane" => Ok(Fuel::propane()),
        "natural-gas" => Ok(Fuel::natural_gas()),
        other => Err(field_err(
            path,
            field,
            format!("{other:?}: expected \"propane\" or \"natural-gas\""),
        )),
    }
}

impl Scenario {
    /// Read and check a scenario file (a bundled scenario name or a path). `force` lets a heater above the crop's
    /// safe limits run (its warning is returned).
    pub fn read(
        name_or_path: &str,
        force: bool,
    ) -> Result<(Self, Option<SafetyWarning>), InputError> {
        Self::read_named_by(None, name_or_path, force)
    }

    /// As [`Scenario::read`], for a scenario named inside the file `from` (a path is taken from beside it).
    pub fn read_named_by(
        from: Option<&Path>,
        name_or_path: &str,
        force: bool,
    ) -> Result<(Self, Option<SafetyWarning>), InputError> {
        let path = resolve_named_by(from, "scenarios", name_or_path, "--scenario")?;
        let text = read_text(&path)?;
        let file: ScenarioFile = parse_json(&path, &text)?;
        Self::from_file(path.clone(), file, force).map_err(|e| with_json_line(e, &path, &text))
    }

    /// Check and resolve a parsed scenario.
    pub fn from_file(
        path: PathBuf,
        file: ScenarioFile,
        force: bool,
    ) -> Result<(Self, Option<SafetyWarning>), InputError> {
        let p = path.as_path();
        let wrap = |field: &'static str| move |e: InputError| field_err(p, field, e.to_string());
        let (crop, crop_path) = read_crop(Some(p), &file.crop, "crop").map_err(wrap("crop"))?;
        let (container, container_path) =
            read_container(Some(p), &file.container, "container").map_err(wrap("container"))?;
        let mut inputs = vec![path.clone(), crop_path, container_path];
        let flow = match (&file.fan, file.flow_m3_per_min) {
            (Some(f), None) => {
                let (fan, fan_path) = read_fan(Some(p), f, "fan").map_err(wrap("fan"))?;
                inputs.push(fan_path);
                FlowSpec::Fan(fan)
            }
            (None, Some(q)) => FlowSpec::Fixed {
                total_m3_per_s: check_field(p, "flow_m3_per_min", q, 1.0, 20_000.0, "m³/min")?
                    / 60.0,
            },
            _ => {
                return Err(field_err(
                    p,
                    "fan",
                    "give exactly one of \"fan\" and \"flow_m3_per_min\"",
                ))
            }
        };
        let efficiency = FanEfficiency {
            fan: check_field(p, "fan_efficiency", file.fan_efficiency, 0.1, 0.95, "")?,
            motor: check_field(p, "motor_efficiency", file.motor_efficiency, 0.3, 1.0, "")?,
        };
        let wpath = beside(p, &file.weather);
        let (weather, _) =
            crate::weather::read(&wpath, None, &ReadOptions::default()).map_err(wrap("weather"))?;
        inputs.push(wpath);
        let start = DateTime::parse_from_rfc3339(&file.start).map_err(|e| {
            field_err(
                p,
                "start",
                format!("{:?} is not an ISO 8601 time with offset: {e}", file.start),
            )
        })?;
        if start < weather.start() || start >= weather.end() {
            return Err(field_err(
                p,
                "start",
                format!(
                    "{start} is outside the weather record ({} to {})",
                    weather.start(),
                    weather.end()
                ),
            ));
        }
        let initial = initial_moisture(p, &file)?;
        let fill = match file.net_mass_kg {
            None => FillSpec::Container,
            Some(kg) => FillSpec::NetMass(check_field(p, "net_mass_kg", kg, 10.0, 60_000.0, "kg")?),
        };
        let spec_text = &file.heater.strategy;
        let heater_err = |e: crate::drying::heater::HeaterSpecError| {
            field_err(p, "heater.strategy", e.to_string())
        };
        let strategy: StrategySpec = spec_text.parse().map_err(heater_err)?;
        let burner_w = match file.heater.burner_kw {
            Some(kw) => Some(check_field(p, "heater.burner_kw", kw, 0.0, 10_000.0, "kW")? * 1000.0),
            None => None,
        };
        let fuel = fuel_named(p, "heater.fuel", &file.heater.fuel)?;
        let (heater, warning) =
            checked_heater(&crop, strategy, burner_w, fuel, force).map_err(heater_err)?;
        let run = run_settings(p, &file, &crop)?;
        let airflow = match file.airflow_updates.as_deref() {
            None | Some("follow") => AirflowUpdates::Follow,
            Some("at-start") => AirflowUpdates::AtStart,
            Some(other) => {
                return Err(field_err(
                    p,
                    "airflow_updates",
                    format!("{other:?}: expected \"follow\" or \"at-start\""),
                ))
            }
        };
        let g = file.grid;
        for (f, v) in [("grid.nx", g.nx), ("grid.ny", g.ny), ("grid.nz", g.nz)] {
            check_field(p, f, v as f64, 1.0, 512.0, "")?;
        }
        let cells = (g.nx * g.ny * g.nz) as f64;
        super::limits::check_cells("grid", cells, super::limits::RUN_BYTES_PER_CELL, 1.0)
            .map_err(|e| field_err(p, "grid", e.to_string()))?;
        for (f, v) in [
            ("prices.fuel_per_unit", file.prices.fuel_per_unit),
            (
                "prices.electricity_per_kwh",
                file.prices.electricity_per_kwh,
            ),
            ("prices.peanuts_per_tonne", file.prices.peanuts_per_tonne),
        ] {
            check_field(p, f, v, 0.0, 1e6, "")?;
        }
        let material = CropMaterial::new(&crop);
        let spec = LoadSpec {
            name: file.name.clone(),
            crop: Arc::new(crop),
            material: Arc::new(material),
            container: Arc::new(container),
            fill,
            flow,
            efficiency,
            heater,
            weather: Arc::new(weather),
            start,
            initial,
            grid: Grid {
                nx: g.nx,
                ny: g.ny,
                nz: g.nz,
            },
            run,
            airflow,
            prices: file.prices.clone(),
        };
        let scenario = Scenario {
            spec,
            path,
            description: file.description,
            inputs,
        };
        Ok((scenario, warning))
    }
}

fn initial_moisture(p: &Path, file: &ScenarioFile) -> Result<InitialMoisture, InputError> {
    let field = "initial_kernel_moisture_pct";
    let bottom = check_field(
        p,
        field,
        file.initial_kernel_moisture_pct,
        5.0,
        45.0,
        "% w.b.",
    )?;
    Ok(match file.initial_kernel_moisture_top_pct {
        None => InitialMoisture::Uniform(bottom / 100.0),
        Some(top) => InitialMoisture::Layered {
            bottom_wb: bottom / 100.0,
            top_wb: check_field(
                p,
                "initial_kernel_moisture_top_pct",
                top,
                5.0,
                45.0,
                "% w.b.",
            )? / 100.0,
        },
    })
}

fn run_settings(p: &Path, file: &ScenarioFile, crop: &Crop) -> Result<RunSettings, InputError> {
    let dt_h = check_field(p, "time_step_h", file.time_step_h, 0.005, 1.0, "h")?;
    let max_h = check_field(p, "max_hours", file.max_hours, 1.0, 2000.0, "h")?;
    let record_h = check_field(p, "record_every_h", file.record_every_h, dt_h, 24.0, "h")?;
    let target = match file.target_kernel_moisture_pct {
        Some(t) => check_field(p, "target_kernel_moisture_pct", t, 4.0, 30.0, "% w.b.")?,
        None => crop.safety.target_moisture_wb_pct,
    };
    let lowest = file
        .initial_kernel_moisture_pct
        .min(file.initial_kernel_moisture_top_pct.unwrap_or(f64::MAX));
    if target >= lowest {
        return Err(field_err(
            p,
            "target_kernel_moisture_pct",
            format!("{target} % w.b. is not below the load's initial moisture {lowest} % w.b."),
        ));
    }
    let stop = match &file.stop_rule {
        None => StopRule::Both,
        Some(s) => s
            .parse::<StopRule>()
            .map_err(|e| field_err(p, "stop_rule", e.to_string()))?,
    };
    let fraction = check_field(
        p,
        "fraction_rule_pct",
        file.fraction_rule_pct,
        50.0,
        100.0,
        "%",
    )?;
    Ok(RunSettings {
        dt_s: dt_h * 3600.0,
        max_hours: max_h,
        target_kernel_wb: target / 100.0,
        stop,
        fraction: fraction / 100.0,
        safe_rate_pct_per_h: crop.safety.max_drying_rate_pct_wb_per_h,
        record_every_s: record_h * 3600.0,
        ..RunSettings::default()
    })
}
