//! A single-load scenario: which crop, container, fan and weather, when the load goes on air, how wet it is, how
//! the burner is run, the grid and the prices. Read from JSON (`models/scenarios/*.json`), checked field by field,
//! resolved into everything a batch run needs, and run.

use std::path::{Path, PathBuf};

use chrono::{DateTime, FixedOffset};
use serde::Deserialize;

use crate::airflow::bed::{BedLaw, ResistanceLaw};
use crate::airflow::fan::{FanCurve, FlowSpec};
use crate::airflow::geometry::{Container, Grid};
use crate::airflow::solve::{AirflowSolution, SolverSettings};
use crate::crop::Crop;
use crate::drying::ambient::SeriesAmbient;
use crate::drying::bed::{BedState, InitialMoisture};
use crate::drying::flow::{FanEfficiency, SolvedFlow};
use crate::drying::heater::{
    Fuel, Heater, HeaterSpecError, SafetyLimits, SafetyWarning, StrategySpec,
};
use crate::drying::layer::LayerMaterial;
use crate::drying::material::CropMaterial;
use crate::drying::run::{
    run_batch, FlowProvider, Outcome, RunError, RunObserver, RunSettings, StopRule,
};
use crate::drying::zones::{zone_maps, ZoneMaps};
use crate::error::InputError;
use crate::models::{read_text, resolve};
use crate::units::db_from_wb;
use crate::weather::series::{ReadOptions, WeatherSeries};

/// The scenario file as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ScenarioFile {
    /// Short name.
    pub name: String,
    /// What the scenario is.
    #[serde(default)]
    pub description: String,
    /// Crop model (bundled name or path).
    pub crop: String,
    /// Container (bundled name or path).
    pub container: String,
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
    /// Prices.
    pub prices: Prices,
}

/// Fan total efficiency used when a scenario gives none (vaneaxial ≈ 0.5–0.75, DOMAIN.md §8.1, common practice).
pub const DEFAULT_FAN_EFFICIENCY: f64 = 0.55;
/// Motor efficiency used when a scenario gives none (small motors ≈ 0.85–0.9, from memory, unverified).
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

/// The heater as written.
#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct HeaterFile {
    /// Strategy spec: `none`, `rise=8`, `plenum=35`, `rh=55,max=38`, optionally `@20-6`.
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

/// Prices, in one currency.
#[derive(Debug, Clone, Deserialize, serde::Serialize)]
#[serde(deny_unknown_fields)]
pub struct Prices {
    /// Currency label, e.g. "USD".
    pub currency: String,
    /// Fuel, per L (propane) or m³ (natural gas).
    pub fuel_per_unit: f64,
    /// Electricity, per kWh.
    pub electricity_per_kwh: f64,
    /// Peanuts, per tonne as sold (for shrink).
    pub peanuts_per_tonne: f64,
}

/// Everything a run of one load needs, resolved and checked.
pub struct LoadSetup {
    /// The scenario file's path.
    pub path: PathBuf,
    /// As written.
    pub file: ScenarioFile,
    /// Crop.
    pub crop: Crop,
    /// Crop as the layer step sees it.
    pub material: CropMaterial,
    /// Container.
    pub container: Container,
    /// Fan or fixed flow.
    pub flow: FlowSpec,
    /// Weather.
    pub weather: WeatherSeries,
    /// The weather file.
    pub weather_path: PathBuf,
    /// Start.
    pub start: DateTime<FixedOffset>,
    /// Heater strategy.
    pub strategy: StrategySpec,
    /// Burner capacity, W.
    pub burner_w: Option<f64>,
    /// Fuel.
    pub fuel: Fuel,
    /// Run settings.
    pub settings: RunSettings,
    /// Grid.
    pub grid: Grid,
}

/// Errors of a load run.
#[derive(Debug, thiserror::Error)]
pub enum LoadError {
    /// Bad input.
    #[error(transparent)]
    Input(#[from] InputError),
    /// The airflow solve failed.
    #[error("airflow: {0}")]
    Airflow(#[from] crate::airflow::solve::AirflowError),
    /// The run failed.
    #[error(transparent)]
    Run(#[from] RunError),
}

fn field_err(path: &Path, field: &str, message: impl Into<String>) -> InputError {
    InputError::Model {
        path: path.to_path_buf(),
        field: field.to_string(),
        message: message.into(),
    }
}

fn check(
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
        Err(field_err(
            path,
            field,
            format!("{v} {unit} must be between {lo} and {hi} {unit}"),
        ))
    }
}

/// The bed law of a crop.
pub fn bed_law(crop: &Crop) -> BedLaw {
    BedLaw {
        law: ResistanceLaw::Shedd(crop.resistance.shedd),
        packing_factor: crop.resistance.packing_factor,
        horizontal_ratio: crop.resistance.horizontal_ratio,
    }
}

/// Read a container by bundled name or path.
pub fn read_container(name: &str, what: &str) -> Result<Container, InputError> {
    let p = resolve("containers", name, what)?;
    Container::from_json_str(&read_text(&p)?, &p)
}

/// Read a fan curve by bundled name or path.
pub fn read_fan(name: &str, what: &str) -> Result<FanCurve, InputError> {
    let p = resolve("fans", name, what)?;
    FanCurve::from_json_str(&read_text(&p)?, &p)
}

impl LoadSetup {
    /// Read and check a scenario file (a bundled scenario name or a path).
    pub fn read(name_or_path: &str) -> Result<Self, InputError> {
        let path = resolve("scenarios", name_or_path, "--scenario")?;
        let text = read_text(&path)?;
        let file: ScenarioFile = serde_json::from_str(&text).map_err(|e| InputError::Parse {
            path: path.clone(),
            line: Some(e.line() as u64),
            message: e.to_string(),
        })?;
        Self::from_file(path, file)
    }

    /// Check and resolve a parsed scenario.
    pub fn from_file(path: PathBuf, file: ScenarioFile) -> Result<Self, InputError> {
        let p = path.as_path();
        let crop = Crop::load_named(&file.crop).map_err(|e| field_err(p, "crop", e.to_string()))?;
        let container = read_container(&file.container, "container")
            .map_err(|e| field_err(p, "container", e.to_string()))?;
        let flow = match (&file.fan, file.flow_m3_per_min) {
            (Some(f), None) => {
                FlowSpec::Fan(read_fan(f, "fan").map_err(|e| field_err(p, "fan", e.to_string()))?)
            }
            (None, Some(q)) => FlowSpec::Fixed {
                total_m3_per_s: check(p, "flow_m3_per_min", q, 1.0, 20_000.0, "m³/min")? / 60.0,
            },
            _ => {
                return Err(field_err(
                    p,
                    "fan",
                    "give exactly one of \"fan\" and \"flow_m3_per_min\"",
                ))
            }
        };
        check(p, "fan_efficiency", file.fan_efficiency, 0.1, 0.95, "")?;
        check(p, "motor_efficiency", file.motor_efficiency, 0.3, 1.0, "")?;
        let weather_path = {
            let rel = PathBuf::from(&file.weather);
            let beside = p.parent().map(|d| d.join(&rel));
            match beside {
                Some(b) if rel.is_relative() && b.is_file() => b,
                _ => {
                    let in_tree = Path::new(env!("CARGO_MANIFEST_DIR")).join(&rel);
                    if rel.is_relative() && !rel.is_file() && in_tree.is_file() {
                        in_tree
                    } else {
                        rel
                    }
                }
            }
        };
        let (weather, _) = crate::weather::read(&weather_path, None, &ReadOptions::default())?;
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
        check(
            p,
            "initial_kernel_moisture_pct",
            file.initial_kernel_moisture_pct,
            5.0,
            45.0,
            "% w.b.",
        )?;
        if let Some(top) = file.initial_kernel_moisture_top_pct {
            check(
                p,
                "initial_kernel_moisture_top_pct",
                top,
                5.0,
                45.0,
                "% w.b.",
            )?;
        }
        let strategy: StrategySpec = file
            .heater
            .strategy
            .parse()
            .map_err(|e: HeaterSpecError| field_err(p, "heater.strategy", e.to_string()))?;
        let burner_w = match file.heater.burner_kw {
            Some(kw) => Some(check(p, "heater.burner_kw", kw, 0.0, 10_000.0, "kW")? * 1000.0),
            None => None,
        };
        let fuel = match file.heater.fuel.as_str() {
            "propane" => Fuel::propane(),
            "natural-gas" => Fuel::natural_gas(),
            other => {
                return Err(field_err(
                    p,
                    "heater.fuel",
                    format!("{other:?}: expected \"propane\" or \"natural-gas\""),
                ))
            }
        };
        let g = file.grid;
        for (f, v) in [("grid.nx", g.nx), ("grid.ny", g.ny), ("grid.nz", g.nz)] {
            check(p, f, v as f64, 1.0, 512.0, "")?;
        }
        let dt_h = check(p, "time_step_h", file.time_step_h, 0.005, 1.0, "h")?;
        let max_h = check(p, "max_hours", file.max_hours, 1.0, 2000.0, "h")?;
        let record_h = check(p, "record_every_h", file.record_every_h, dt_h, 24.0, "h")?;
        let target = match file.target_kernel_moisture_pct {
            Some(t) => check(p, "target_kernel_moisture_pct", t, 4.0, 30.0, "% w.b.")?,
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
        for (f, v) in [
            ("prices.fuel_per_unit", file.prices.fuel_per_unit),
            (
                "prices.electricity_per_kwh",
                file.prices.electricity_per_kwh,
            ),
            ("prices.peanuts_per_tonne", file.prices.peanuts_per_tonne),
        ] {
            check(p, f, v, 0.0, 1e6, "")?;
        }
        let settings = RunSettings {
            dt_s: dt_h * 3600.0,
            max_hours: max_h,
            target_kernel_wb: target / 100.0,
            stop: StopRule::Mean,
            also_report: StopRule::Fraction(0.95),
            safe_rate_pct_per_h: crop.safety.max_drying_rate_pct_wb_per_h,
            record_every_s: record_h * 3600.0,
            ..RunSettings::default()
        };
        let material = CropMaterial::new(&crop);
        Ok(LoadSetup {
            path,
            grid: Grid {
                nx: g.nx,
                ny: g.ny,
                nz: g.nz,
            },
            file,
            crop,
            material,
            container,
            flow,
            weather,
            weather_path,
            start,
            strategy,
            burner_w,
            fuel,
            settings,
        })
    }

    /// The heater for a strategy (the scenario's unless given).
    pub fn heater(&self, spec: Option<StrategySpec>) -> Heater {
        let spec = spec.unwrap_or(self.strategy);
        Heater {
            strategy: spec.strategy,
            window_h: spec.window_h,
            capacity_w: self.burner_w,
            max_plenum_c: self.crop.safety.max_plenum_temp_c,
            fuel: self.fuel,
        }
    }

    /// The heater for a strategy (the scenario's unless given) after the one safety rule,
    /// [`StrategySpec::check_safety`] against the crop's `safety` section: refused above its limits unless `force`;
    /// with `force` the running clamp moves to what was asked ([`StrategySpec::plenum_clamp_c`]).
    pub fn checked_heater(
        &self,
        spec: Option<StrategySpec>,
        force: bool,
    ) -> Result<(Heater, Option<SafetyWarning>), HeaterSpecError> {
        let spec = spec.unwrap_or(self.strategy);
        let warning = spec.check_safety(&SafetyLimits::from(&self.crop.safety), force)?;
        let mut heater = self.heater(Some(spec));
        heater.max_plenum_c = spec.plenum_clamp_c(heater.max_plenum_c);
        Ok((heater, warning))
    }
}

/// What a run of one load produced.
pub struct LoadResult {
    /// Outcome and time series.
    pub outcome: Outcome,
    /// Final bed.
    pub bed: BedState,
    /// Airflow solution at the start of the run (what the airflow map shows).
    pub airflow: AirflowSolution,
    /// Zone maps at the end.
    pub zones: ZoneMaps,
    /// The heater used.
    pub heater: Heater,
    /// Propane, electricity and shrink cost.
    pub cost: Cost,
}

/// Costs of a run.
#[derive(Debug, Clone, Copy, serde::Serialize)]
pub struct Cost {
    /// Fuel cost.
    pub fuel: f64,
    /// Electricity cost.
    pub electricity: f64,
    /// Value of the shrink (weight lost below target).
    pub shrink: f64,
    /// Fuel plus electricity.
    pub energy: f64,
}

/// Run the load with `heater` (from [`LoadSetup::checked_heater`]), starting `offset_h` after the scenario's start.
pub fn run_load(
    setup: &LoadSetup,
    heater: Heater,
    offset_h: f64,
    observer: &mut dyn RunObserver,
) -> Result<LoadResult, LoadError> {
    let start = setup.start + chrono::Duration::seconds((offset_h * 3600.0).round() as i64);
    let ambient = SeriesAmbient {
        series: &setup.weather,
        start,
    };
    let first = setup
        .weather
        .at(start)
        .map_err(|e| InputError::argument("start", start, &e.to_string()))?;
    let material = &setup.material;
    let crop = &setup.crop;
    let settings = SolverSettings {
        grid: setup.grid,
        ..SolverSettings::default()
    };
    let mut flow = SolvedFlow {
        container: &setup.container,
        flow: setup.flow.clone(),
        law: bed_law(crop),
        settings,
        efficiency: FanEfficiency {
            fan: setup.file.fan_efficiency,
            motor: setup.file.motor_efficiency,
        },
        bed_erh: Box::new(|pod_db: f64| pod_erh(material, pod_db, 25.0)),
        last: None,
        last_key: None,
    };
    let nz = setup.grid.nz;
    let kernel0 = setup.file.initial_kernel_moisture_pct / 100.0;
    let initial = match setup.file.initial_kernel_moisture_top_pct {
        None => InitialMoisture::Uniform(kernel0),
        Some(top) => InitialMoisture::Layered {
            bottom_wb: kernel0,
            top_wb: top / 100.0,
        },
    };
    let pod_db = material.pod_db(material.initial_state(db_from_wb(kernel0), first.t_c));
    let dry_density = crop.dry_matter_density_kg_per_m3(100.0 * pod_db / (1.0 + pod_db));
    // The start's airflow solve also gives the bed's geometry (terrain-following layers, column depths); the run's
    // first request for the same air and moisture factor reuses it instead of solving again.
    FlowProvider::flow(&mut flow, &first.air, pod_db).map_err(RunError::Airflow)?;
    let start_sol = flow.last.clone().expect("a successful solve is kept");
    let mut bed = BedState::new(
        material,
        start_sol.depth_m.clone(),
        start_sol.dx_m * start_sol.dy_m,
        nz,
        dry_density,
        &initial,
        first.t_c,
    )?;
    let outcome = run_batch(
        material,
        &mut bed,
        &ambient,
        &mut flow,
        &heater,
        &setup.settings,
        observer,
    )?;
    let zones = zone_maps(&bed, &setup.settings);
    let prices = &setup.file.prices;
    let fuel = outcome.fuel_used * prices.fuel_per_unit;
    let electricity = outcome.fan_kwh * prices.electricity_per_kwh;
    let shrink = outcome.shrink_kg / 1000.0 * prices.peanuts_per_tonne;
    Ok(LoadResult {
        outcome,
        bed,
        airflow: start_sol,
        zones,
        heater,
        cost: Cost {
            fuel,
            electricity,
            shrink,
            energy: fuel + electricity,
        },
    })
}

/// Equilibrium RH of pods at mean pod moisture `pod_db` with hull and kernel in equilibrium with each other
/// (bisection on the kernel moisture).
pub fn pod_erh<M: LayerMaterial + ?Sized>(material: &M, pod_db: f64, t_c: f64) -> f64 {
    let (mut lo, mut hi) = (0.001, 2.0);
    for _ in 0..50 {
        let mid = 0.5 * (lo + hi);
        if material.pod_db(material.initial_state(mid, t_c)) > pod_db {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    material.surface_erh(material.initial_state(0.5 * (lo + hi), t_c), t_c)
}
