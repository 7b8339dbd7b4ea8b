//! One load on one dryer, as every command builds it: a validated, unit-converted, I/O-free [`LoadSpec`] (crop,
//! container and fill, fan or fixed flow, heater, fuel, weather, start, initial moisture, grid, time step, stop rule,
//! prices), and [`run_load`], the one way a load is dried. `dry`, `compare`, `starts` and the season's drier all
//! come here; files become specs only in the input layer (`input`).
//!
//! The bed's dry matter comes from the crop's bulk density at the load's starting pod moisture; a load given by its
//! net mass (a scale ticket, a season's arrival) fills the container level to the depth that mass takes.

use std::sync::Arc;

use chrono::{DateTime, Duration, FixedOffset};

use crate::airflow::bed::{BedLaw, ResistanceLaw};
use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::{Container, Fill, Grid};
use crate::airflow::solve::{AirflowError, AirflowSolution, SolverSettings};
use crate::crop::Crop;
use crate::drying::ambient::SeriesAmbient;
use crate::drying::bed::{BedState, InitialMoisture};
use crate::drying::flow::{FanEfficiency, SolvedFlow, RESOLVE_TOLERANCE};
use crate::drying::heater::{
    Fuel, Heater, HeaterSpecError, SafetyLimits, SafetyWarning, StrategySpec,
};
use crate::drying::layer::LayerMaterial;
use crate::drying::material::CropMaterial;
use crate::drying::run::{
    start_plenum_estimate, Ambient, FlowProvider, Outcome, Run, RunError, RunObserver, RunSettings,
    Tally,
};
use crate::drying::zones::{zone_maps, ZoneMaps};
use crate::error::InputError;
use crate::units::db_from_wb;
use crate::weather::series::WeatherSeries;

/// Prices, in one currency.
#[derive(Debug, Clone, PartialEq, serde::Deserialize, serde::Serialize)]
#[serde(deny_unknown_fields)]
pub struct Prices {
    /// Currency code or symbol, e.g. "USD".
    pub currency: String,
    /// Fuel, per L (propane) or m³ (natural gas).
    pub fuel_per_unit: f64,
    /// Electricity, per kWh.
    pub electricity_per_kwh: f64,
    /// Peanuts, per tonne as sold (for shrink).
    pub peanuts_per_tonne: f64,
}

/// How the load fills its container.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum FillSpec {
    /// As the container file says.
    Container,
    /// Level, as deep as this net (wet) mass lies, kg.
    NetMass(f64),
}

/// When the airflow is solved again during a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AirflowUpdates {
    /// Whenever the fan's or the plenum's air density or the bed's moisture moves past the run's thresholds.
    Follow,
    /// Once at the start (for the start's air and bed), then kept: the season's coarse, fast setting.
    AtStart,
}

/// The heater of a load.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HeaterSetup {
    /// Strategy and burner window.
    pub spec: StrategySpec,
    /// Burner capacity, W.
    pub burner_w: Option<f64>,
    /// Fuel.
    pub fuel: Fuel,
    /// Plenum temperature never exceeded while running, °C (the crop's safe maximum, or what `--force` allowed).
    pub max_plenum_c: f64,
}

impl HeaterSetup {
    /// The heater as the run uses it.
    pub fn heater(&self) -> Heater {
        Heater {
            strategy: self.spec.strategy,
            window_h: self.spec.window_h,
            capacity_w: self.burner_w,
            max_plenum_c: self.max_plenum_c,
            fuel: self.fuel,
        }
    }
}

/// One load on one dryer, ready to run. Shared models are behind `Arc` so a season's thousand specs cost little.
#[derive(Debug, Clone)]
pub struct LoadSpec {
    /// Short name for reports.
    pub name: String,
    /// Crop.
    pub crop: Arc<Crop>,
    /// Crop as the layer step sees it.
    pub material: Arc<CropMaterial>,
    /// Container.
    pub container: Arc<Container>,
    /// How it is filled.
    pub fill: FillSpec,
    /// Fan curve or fixed flow.
    pub flow: FlowSpec,
    /// Fan and motor efficiency.
    pub efficiency: FanEfficiency,
    /// Heater.
    pub heater: HeaterSetup,
    /// Weather.
    pub weather: Arc<WeatherSeries>,
    /// When the air goes on.
    pub start: DateTime<FixedOffset>,
    /// Initial kernel moisture.
    pub initial: InitialMoisture,
    /// Grid.
    pub grid: Grid,
    /// Time step, limits, target, stop rule, zone thresholds.
    pub run: RunSettings,
    /// When the airflow is re-solved.
    pub airflow: AirflowUpdates,
    /// Prices.
    pub prices: Prices,
}

/// Errors of a load run.
#[derive(Debug, thiserror::Error)]
pub enum LoadError {
    /// Bad input.
    #[error(transparent)]
    Input(#[from] InputError),
    /// The airflow solve failed.
    #[error("airflow: {0}")]
    Airflow(#[from] AirflowError),
    /// The run failed.
    #[error(transparent)]
    Run(#[from] RunError),
}

/// Costs of a run, to the moment the load met its stop rule (or to the end of the run if it did not).
#[derive(Debug, Clone, Copy, serde::Serialize)]
pub struct Cost {
    /// Fuel cost.
    pub fuel: f64,
    /// Electricity cost.
    pub electricity: f64,
    /// Value of the over-dry shrink.
    pub shrink: f64,
    /// Fuel plus electricity.
    pub energy: f64,
}

/// Local clock times of a run.
#[derive(Debug, Clone, Copy, serde::Serialize)]
pub struct ClockTimes {
    /// Air on (as simulated).
    pub start: DateTime<FixedOffset>,
    /// Mean kernel moisture at target.
    pub mean_target: Option<DateTime<FixedOffset>>,
    /// The fraction rule met.
    pub fraction_target: Option<DateTime<FixedOffset>>,
    /// The stop rule met.
    pub stop_rule: Option<DateTime<FixedOffset>>,
    /// The run's end.
    pub end: DateTime<FixedOffset>,
}

/// What a run of one load produced.
pub struct LoadResult {
    /// Outcome and time series.
    pub outcome: Outcome,
    /// Final bed.
    pub bed: BedState,
    /// Airflow solution at the start of the run, for the start's plenum air (what the airflow map shows).
    pub airflow: AirflowSolution,
    /// Zone maps at the end.
    pub zones: ZoneMaps,
    /// The heater used.
    pub heater: Heater,
    /// Costs to the stop rule (or the end).
    pub cost: Cost,
    /// Clock times.
    pub clock: ClockTimes,
}

/// The bed law of a crop.
pub fn bed_law(crop: &Crop) -> BedLaw {
    BedLaw {
        law: ResistanceLaw::Shedd(crop.resistance.shedd),
        packing_factor: crop.resistance.packing_factor,
        horizontal_ratio: crop.resistance.horizontal_ratio,
    }
}

/// Temperature at which the bed's equilibrium RH is taken for the D272 wet factor, °C: a fixed reference (our own
/// choice), so the factor follows the bed's moisture only and the airflow is not re-solved for the weather's swings.
pub const BED_ERH_REFERENCE_C: f64 = 25.0;

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

/// The local time `hours` after `start`.
pub fn clock_at(start: DateTime<FixedOffset>, hours: f64) -> DateTime<FixedOffset> {
    start + Duration::milliseconds((hours * 3.6e6).round() as i64)
}

impl LoadSpec {
    /// Mean starting kernel moisture, wet basis decimal (layered loads: the mean of bottom and top).
    pub fn initial_kernel_wb(&self) -> f64 {
        match &self.initial {
            InitialMoisture::Uniform(m) => *m,
            InitialMoisture::Layered { bottom_wb, top_wb } => 0.5 * (bottom_wb + top_wb),
            InitialMoisture::Cells(a) => a.mean().unwrap_or(f64::NAN),
            InitialMoisture::Resumed(b) => b.mean_kernel_wb(&*self.material),
        }
    }

    /// The container as loaded: its own fill, or level at the depth the net mass takes; with the bed's dry-matter
    /// density, kg/m³.
    pub fn loaded_container(&self, peanut_c: f64) -> Result<(Container, f64), InputError> {
        let m = &*self.material;
        let pod_db = m.pod_db(m.initial_state(db_from_wb(self.initial_kernel_wb()), peanut_c));
        let dry_density = self
            .crop
            .dry_matter_density_kg_per_m3(100.0 * pod_db / (1.0 + pod_db));
        let mut c = (*self.container).clone();
        if let FillSpec::NetMass(kg) = self.fill {
            let area = c.length_m * c.width_m;
            let depth = kg / (1.0 + pod_db) / dry_density / area;
            if !(depth > 0.0 && depth <= c.wall_height_m) {
                return Err(InputError::argument(
                    "net mass",
                    format!("{kg:.0} kg"),
                    &format!(
                        "fills {} {depth:.2} m deep; its walls are {:.2} m",
                        c.name, c.wall_height_m
                    ),
                ));
            }
            c.fill = Fill::Level { depth_m: depth };
        }
        Ok((c, dry_density))
    }
}

/// The flow provider of a spec: the airflow solver on the loaded container (for [`AirflowUpdates::AtStart`] the
/// run's re-solve thresholds are lifted, so it is asked only at the start).
fn provider<'a>(spec: &'a LoadSpec, container: &'a Container) -> SolvedFlow<'a> {
    let material = spec.material.clone();
    SolvedFlow {
        container,
        flow: spec.flow.clone(),
        law: bed_law(&spec.crop),
        settings: SolverSettings::for_container(container, spec.grid),
        resolve_tolerance: RESOLVE_TOLERANCE,
        efficiency: spec.efficiency,
        bed_erh: Box::new(move |pod_db: f64| pod_erh(&*material, pod_db, BED_ERH_REFERENCE_C)),
        last: None,
        first: None,
        settled: false,
        last_key: None,
        earlier: Vec::new(),
        plenum: None,
    }
}

/// Run one load until its stop rule holds, the time limit passes or the weather ends.
pub fn run_load(spec: &LoadSpec, observer: &mut dyn RunObserver) -> Result<LoadResult, LoadError> {
    let ambient = SeriesAmbient {
        series: &spec.weather,
        start: spec.start,
    };
    let first = spec
        .weather
        .at(spec.start)
        .map_err(|e| InputError::argument("start", spec.start, &e.to_string()))?;
    let (container, dry_density) = spec.loaded_container(first.t_c)?;
    let material = &*spec.material;
    let mut flow = provider(spec, &container);
    let pod_db =
        material.pod_db(material.initial_state(db_from_wb(spec.initial_kernel_wb()), first.t_c));
    // The start's airflow solve also gives the bed's geometry (terrain-following layers, column depths); the run's
    // first request for the same air and moisture reuses it instead of solving again.
    let heater = spec.heater.heater();
    let plenum0 =
        start_plenum_estimate(&heater, &ambient.at(0.0).ok_or(RunError::NoWeatherAtStart)?);
    FlowProvider::flow(&mut flow, &first.air, &plenum0, pod_db)?;
    let geometry_sol = flow.first.take().expect("a successful solve is kept");
    let bed = BedState::new(
        material,
        geometry_sol.depth_m.clone(),
        geometry_sol.dx_m * geometry_sol.dy_m,
        spec.grid.nz,
        dry_density,
        &spec.initial,
        first.t_c,
    )?;
    let mut settings = spec.run;
    if spec.airflow == AirflowUpdates::AtStart {
        settings.reflow_density_rel = f64::INFINITY;
        settings.reflow_moisture_db = f64::INFINITY;
    }
    let run = Run::new(material, bed, &ambient, &mut flow, heater, settings)?;
    let (outcome, bed) = run.run_to_end(observer)?;
    // The airflow the load started with: solved again for the start's plenum air, unless that air was the same.
    let start_sol = flow.first.take().unwrap_or(geometry_sol);
    let zones = zone_maps(&bed, &spec.run);
    let ready = outcome.ready();
    let cost = cost_of(&spec.prices, &ready);
    let at = |t: Option<Tally>| t.map(|t| clock_at(spec.start, t.hours));
    let clock = ClockTimes {
        start: spec.start,
        mean_target: at(outcome.at_mean_target),
        fraction_target: at(outcome.at_fraction_target),
        stop_rule: at(outcome.at_stop_rule),
        end: clock_at(spec.start, outcome.hours),
    };
    Ok(LoadResult {
        outcome,
        bed,
        airflow: start_sol,
        zones,
        heater,
        cost,
        clock,
    })
}

/// Costs of the accounts in `t`.
pub fn cost_of(p: &Prices, t: &Tally) -> Cost {
    let fuel = t.fuel_used * p.fuel_per_unit;
    let electricity = t.fan_kwh * p.electricity_per_kwh;
    Cost {
        fuel,
        electricity,
        shrink: t.shrink_kg / 1000.0 * p.peanuts_per_tonne,
        energy: fuel + electricity,
    }
}

/// The heater of a load after the one safety rule (`StrategySpec::check_safety` against the crop's limits): a
/// strategy above them is refused unless `force`; with `force` the running clamp moves to what was asked and the
/// warning to show is returned.
pub fn checked_heater(
    crop: &Crop,
    spec: StrategySpec,
    burner_w: Option<f64>,
    fuel: Fuel,
    force: bool,
) -> Result<(HeaterSetup, Option<SafetyWarning>), HeaterSpecError> {
    let warning = spec.check_safety(&SafetyLimits::from(&crop.safety), force)?;
    let setup = HeaterSetup {
        spec,
        burner_w,
        fuel,
        max_plenum_c: spec.plenum_clamp_c(crop.safety.max_plenum_temp_c),
    };
    Ok((setup, warning))
}
