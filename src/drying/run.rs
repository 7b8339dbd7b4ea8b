//! A run of one load, step by step: [`Run::step`] advances the bed one time step under the weather from the start
//! time, re-solving the airflow when the air or the bed has changed enough, and returns a [`StepReport`]; separate
//! pieces keep the stop rules (`stop`), the accounts (`accounts`), the records (`record`) and the physical bounds
//! checked after every step (`bounds`). [`Run::run_to_end`] steps until the stop rule holds, the time limit passes
//! or the weather ends, showing every step and the bed to an observer.
//!
//! The air path: the fan draws ambient air and warms it by its own heat; the heater brings it to the plenum; the
//! airflow is solved with the fan at the ambient air and the plenum and bed at the plenum air, and the dry-air mass
//! flux it gives is what crosses every layer.

use ndarray::Array2;
use rayon::prelude::*;

pub use super::accounts::Balances;
use super::accounts::{ColumnFlux, RateWatch, StepAir};
use super::bed::{BedState, ColumnTotals};
use super::bounds::{Bounds, Violation};
use super::heater::Heater;
use super::layer::{
    step_columns4, ColumnForcing, ColumnMut, ColumnStepTotals, LayerAir, LayerMaterial,
};
pub use super::record::SeriesRow;
use super::record::{record, PathAir};
use super::stop::{Levels, StopTracker};
pub use super::stop::{StopRule, Tally};
use super::zones::{
    column_mass_below, dry_kg_below, shrink_kg, zone_masses, Thresholds, ZoneMasses,
};
use crate::airflow::solve::AirflowError;
use crate::props::lanes::four;
use crate::props::psychro::{self, AirState};
use crate::units::wb_from_db;

/// The moisture bound is the wetter of the starting bed and the isotherms' ceiling, times this: free water condensed
/// on the pods on a humid night is physical but not bounded by the isotherm (our own allowance; the check is there
/// to catch a state that runs away, not a wet night).
const CONDENSATE_ALLOWANCE: f64 = 1.25;

/// One sample of ambient weather.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AmbientSample {
    /// Outdoor air.
    pub air: AirState,
    /// Local clock hour (0–23), for heater time windows.
    pub local_hour: u32,
}

/// Ambient weather as the run sees it: seconds since the run's start → air state.
pub trait Ambient: Sync {
    /// The weather `elapsed_s` after the start, or `None` past the end of the record.
    fn at(&self, elapsed_s: f64) -> Option<AmbientSample>;
}

/// Fixed weather, for tests and "what if" checks.
#[derive(Debug, Clone, Copy)]
pub struct ConstantAmbient(pub AirState);

impl Ambient for ConstantAmbient {
    fn at(&self, elapsed_s: f64) -> Option<AmbientSample> {
        Some(AmbientSample {
            air: self.0,
            local_hour: ((elapsed_s / 3600.0) as u64 % 24) as u32,
        })
    }
}

/// The airflow through the load at one moment.
#[derive(Debug, Clone, PartialEq)]
pub struct FlowField {
    /// Dry-air mass flux through each column, kg/(s·m²), `[nx, ny]`.
    pub dry_air_flux_kg_per_m2_s: Array2<f64>,
    /// Fan shaft power drawn, W (becomes heat in the air stream).
    pub fan_power_w: f64,
    /// Fan electrical input, W (for kWh; ≥ shaft power).
    pub electric_power_w: f64,
    /// Air leaving through leaks without crossing the peanuts, m³/s.
    pub leakage_m3_per_s: f64,
    /// Plenum static pressure, mean, Pa.
    pub plenum_pa: f64,
}

impl FlowField {
    /// A field from superficial velocities at `air` (no fan power, no leakage): for tests and fixed-flow studies.
    pub fn from_velocity(velocity_m_per_s: Array2<f64>, air: &AirState) -> Self {
        let v = air.specific_volume_m3_per_kg();
        FlowField {
            dry_air_flux_kg_per_m2_s: velocity_m_per_s.mapv(|q| q / v),
            fan_power_w: 0.0,
            electric_power_w: 0.0,
            leakage_m3_per_s: 0.0,
            plenum_pa: 0.0,
        }
    }

    /// Dry air through the bed, kg/s.
    pub fn dry_air_kg_per_s(&self, column_area_m2: f64) -> f64 {
        self.dry_air_flux_kg_per_m2_s.sum() * column_area_m2
    }
}

/// Gives the run its airflow; asked again when the fan's or the plenum's air density or the bed's moisture has
/// moved past the run's thresholds. A fixed field ignores all three.
pub trait FlowProvider {
    /// Airflow with `ambient` air outside (what a fan ahead of the burner draws), the plenum and bed at
    /// `plenum_air`, and the bed at mean pod moisture `mean_pod_db`.
    fn flow(
        &mut self,
        ambient: &AirState,
        plenum_air: &AirState,
        mean_pod_db: f64,
    ) -> Result<FlowField, AirflowError>;

    /// The run has settled its start's airflow (`Run::new`): every later request is a re-solve during the run.
    fn start_settled(&mut self) {}
}

/// A flow field that does not change.
#[derive(Debug, Clone)]
pub struct FixedFlow(pub FlowField);

impl FlowProvider for FixedFlow {
    fn flow(&mut self, _: &AirState, _: &AirState, _: f64) -> Result<FlowField, AirflowError> {
        Ok(self.0.clone())
    }
}

/// Why a run stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StopReason {
    /// The stop rule holds.
    RuleMet,
    /// The time limit passed first.
    MaxHours,
    /// The weather record ended first.
    WeatherEnded,
}

/// Numerical and reporting settings of a run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RunSettings {
    /// Time step, s (DOMAIN.md §6.1: 0.1–0.25 h for heated air).
    pub dt_s: f64,
    /// Give up after this many hours.
    pub max_hours: f64,
    /// Target kernel moisture, wet basis decimal.
    pub target_kernel_wb: f64,
    /// Rule that ends the run.
    pub stop: StopRule,
    /// Share of the dry matter the fraction rule wants at or below target (0–1).
    pub fraction: f64,
    /// Record a time-series row every this many seconds.
    pub record_every_s: f64,
    /// Re-solve airflow when the fan's or the plenum's air density has changed by this relative amount.
    pub reflow_density_rel: f64,
    /// …or mean pod moisture by this much (dry basis).
    pub reflow_moisture_db: f64,
    /// Kernel moisture below which the peanuts count as over-dried, wet basis decimal.
    pub over_dry_kernel_wb: f64,
    /// Above target + this, the peanuts count as still wet, wet basis decimal.
    pub under_dry_tolerance_wb: f64,
    /// Batch-average drying rate counted as too fast, percentage points per hour.
    pub safe_rate_pct_per_h: f64,
    /// Add up the adiabatic-saturation bound of the plenum air each step (`Balances::adiabatic_capacity_kg`,
    /// DOMAIN.md §6.3; a wet-bulb solve a step). Runs whose balances nobody reads (a season's loads) leave it off,
    /// and their two bound figures are NaN.
    pub adiabatic_bound: bool,
}

impl Default for RunSettings {
    /// Defaults from practice (common practice, no source): 10 % kernel w.b. target; run until both the mean and
    /// 95 % of the load are at target; over-dried below 9 %; still wet above 10.5 %; 0.5 %-points/h safe rate
    /// (DOMAIN.md §7.2). Numerics: 0.1 h steps.
    fn default() -> Self {
        RunSettings {
            dt_s: 360.0,
            max_hours: 120.0,
            target_kernel_wb: 0.10,
            stop: StopRule::Both,
            fraction: 0.95,
            record_every_s: 3600.0,
            reflow_density_rel: 0.01,
            reflow_moisture_db: 0.01,
            over_dry_kernel_wb: 0.09,
            under_dry_tolerance_wb: 0.005,
            safe_rate_pct_per_h: 0.5,
            adiabatic_bound: true,
        }
    }
}

/// The result of a run.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Outcome {
    /// The rule the run was asked to meet.
    pub stop_rule: StopRule,
    /// Why it stopped.
    pub stop_reason: StopReason,
    /// Hours simulated.
    pub hours: f64,
    /// Hours until the mean kernel moisture reached target, if it did.
    pub hours_to_mean_target: Option<f64>,
    /// Hours until the fraction rule held, if it did.
    pub hours_to_fraction_target: Option<f64>,
    /// The fraction used for that rule.
    pub fraction_rule: f64,
    /// Accounts when the mean reached target (interpolated inside the step).
    pub at_mean_target: Option<Tally>,
    /// Accounts when the fraction rule held.
    pub at_fraction_target: Option<Tally>,
    /// Accounts when the stop rule was met (the later of the two for `both`; the end for `hours`).
    pub at_stop_rule: Option<Tally>,
    /// Mean kernel moisture at the start, % w.b.
    pub initial_kernel_pct: f64,
    /// …at the end.
    pub final_kernel_pct: f64,
    /// Pod moisture at the end, % w.b.
    pub final_pod_pct: f64,
    /// Wet mass at the start, kg.
    pub initial_mass_kg: f64,
    /// Wet mass at the end (the weight sold if taken off air now), kg.
    pub final_mass_kg: f64,
    /// Water removed, kg.
    pub water_removed_kg: f64,
    /// Fuel burnt to the end of the run, in the fuel's unit.
    pub fuel_used: f64,
    /// The fuel's unit.
    pub fuel_unit: String,
    /// Fuel per tonne of wet peanuts at the start, to the end of the run.
    pub fuel_per_tonne: f64,
    /// Fan electricity to the end of the run, kWh.
    pub fan_kwh: f64,
    /// Heat per kg water removed (burner + fan), kJ/kg.
    pub energy_kj_per_kg_water: f64,
    /// Zones by mass at the end.
    pub zones: ZoneMasses,
    /// Mass fraction over-dried at the end.
    pub over_dried_fraction: f64,
    /// Mass fraction still wet at the end.
    pub under_dried_fraction: f64,
    /// Over-dry shrink at the end: weight lost below target moisture, kg.
    pub shrink_kg: f64,
    /// Largest hourly drop of mean kernel moisture, percentage points per hour.
    pub max_rate_pct_per_h: f64,
    /// Hours with a drying rate above the safe rate.
    pub hours_above_safe_rate: f64,
    /// Hottest peanut temperature reached, °C.
    pub max_peanut_c: f64,
    /// Number of airflow solves.
    pub airflow_solves: u32,
    /// Water and energy accounts.
    pub balances: Balances,
    /// Time series.
    #[serde(skip)]
    pub series: Vec<SeriesRow>,
}

impl Outcome {
    /// The accounts when the load met its stop rule, or at the end of the run if it did not.
    pub fn ready(&self) -> Tally {
        self.at_stop_rule.unwrap_or(Tally {
            hours: self.hours,
            fuel_used: self.fuel_used,
            fan_kwh: self.fan_kwh,
            water_removed_kg: self.water_removed_kg,
            shrink_kg: self.shrink_kg,
        })
    }
}

/// Errors of a run.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The weather record does not cover the start.
    #[error("the weather record does not cover the run's start")]
    NoWeatherAtStart,
    /// The weather record ends inside the next step.
    #[error("the weather record ends within the step after hour {hours:.2}")]
    NoWeather {
        /// Hours on air when the step was asked for.
        hours: f64,
    },
    /// Target is not below the initial moisture.
    #[error("target kernel moisture {target:.1} % w.b. is not below the load's initial moisture {initial:.1} % w.b.")]
    TargetNotBelowInitial {
        /// Target, %.
        target: f64,
        /// Initial, %.
        initial: f64,
    },
    /// The airflow solve failed.
    #[error("airflow: {0}")]
    Airflow(#[from] AirflowError),
    /// A state left its physical bounds.
    #[error("non-physical state at hour {hours:.2}: {quantity} = {value} in cell (x {}, y {}, layer {}) (bound {bound})", .cell.0, .cell.1, .cell.2)]
    NonPhysical {
        /// Which quantity.
        quantity: &'static str,
        /// Its value.
        value: f64,
        /// The bound it broke (NaN for a non-finite value).
        bound: f64,
        /// The cell: column along the length, across, layer from the floor.
        cell: (usize, usize, usize),
        /// When.
        hours: f64,
    },
    /// `step` was called after the run had stopped.
    #[error("the run has already stopped")]
    Finished,
}

/// What one step did.
#[derive(Debug, Clone, PartialEq)]
pub struct StepReport {
    /// Steps done so far (1 after the first).
    pub step: u64,
    /// Hours on air at the end of the step.
    pub hours: f64,
    /// The step's length, s.
    pub dt_s: f64,
    /// Ambient air at the step's middle.
    pub ambient: AmbientSample,
    /// Plenum air.
    pub plenum: AirState,
    /// Flow-weighted exhaust air.
    pub exhaust: AirState,
    /// Burner heat, W.
    pub heat_w: f64,
    /// Dry air through the bed, kg/s.
    pub dry_air_kg_per_s: f64,
    /// Whether the airflow was solved again for this step.
    pub airflow_solved: bool,
    /// Mean kernel moisture after the step, wet basis decimal.
    pub mean_kernel_wb: f64,
    /// Share of the dry matter above target after the step.
    pub above_target_fraction: f64,
    /// Accounts at the end of the step (shrink only where the stop rules needed it, else NaN).
    pub tally: Tally,
    /// The time-series row recorded at this step, if any.
    pub row: Option<SeriesRow>,
    /// Set when this step ended the run.
    pub stop: Option<StopReason>,
}

/// Observers see every step with the bed after it (probes, progress, writers); tests pass `()`.
pub trait RunObserver {
    /// A step was taken; `bed` is the state after it.
    fn on_step(&mut self, _report: &StepReport, _bed: &BedState) {}
}
impl RunObserver for () {}

/// Four columns' slices as the layer step takes them (fewer at the end of the bed): hull, kernel, curve start,
/// temperature, dry matter.
type Quad<'a> = (
    (
        ((&'a mut [f64], &'a mut [f64]), &'a mut [f64]),
        &'a mut [f64],
    ),
    &'a [f64],
);

/// Below this many cells a step runs its columns on the calling thread: handing a few hundred cells to the pool
/// and back costs more than stepping them (a 4 × 2 × 10 season bed takes about 10 µs a step).
const PARALLEL_MIN_CELLS: usize = 512;

struct ColumnResult {
    totals: ColumnStepTotals,
    exhaust: LayerAir,
    dry_air_kg_per_m2: f64,
    after: ColumnTotals,
    below_target_dm: f64,
    violation: Option<Violation>,
}

/// The airflow the run is using and the states it was solved for.
struct FlowState {
    field: FlowField,
    fan_density: f64,
    plenum_density: f64,
    pod_db: f64,
    solves: u32,
}

/// What the bed held at the start, for the accounts and the outcome.
#[derive(Debug, Clone, Copy)]
struct StartFigures {
    dry_kg: f64,
    dry_per_area: f64,
    mass_kg: f64,
    kernel_wb: f64,
    sensible_j: f64,
}

/// A load being dried.
pub struct Run<'a, M: LayerMaterial + ?Sized> {
    material: &'a M,
    bed: BedState,
    ambient: &'a dyn Ambient,
    provider: &'a mut dyn FlowProvider,
    heater: Heater,
    settings: RunSettings,
    thresholds: Thresholds,
    flow: FlowState,
    bounds: Bounds,
    tracker: StopTracker,
    bal: Balances,
    rate: RateWatch,
    start: StartFigures,
    /// Dry matter of each column, kg/m² (it does not change over a run).
    column_dm: Vec<f64>,
    water_kg: f64,
    levels: Levels,
    tally: Tally,
    shrink_at_tally: bool,
    max_peanut_c: f64,
    t_s: f64,
    steps: u64,
    series: Vec<SeriesRow>,
    next_record_s: f64,
    stopped: Option<StopReason>,
    /// The last step's column results, four columns a group as the layer step goes (the last group padded with
    /// `None`); [`in_column_order`] reads them in column order.
    results: Vec<[Option<ColumnResult>; 4]>,
}

impl<'a, M: LayerMaterial + ?Sized> Run<'a, M> {
    /// Set up a run of `bed` (moved in; [`Run::finish`] gives it back).
    pub fn new(
        material: &'a M,
        bed: BedState,
        ambient: &'a dyn Ambient,
        provider: &'a mut dyn FlowProvider,
        heater: Heater,
        settings: RunSettings,
    ) -> Result<Self, RunError> {
        let initial_kernel_wb = bed.mean_kernel_wb(material);
        if settings.target_kernel_wb >= initial_kernel_wb {
            return Err(RunError::TargetNotBelowInitial {
                target: settings.target_kernel_wb * 100.0,
                initial: initial_kernel_wb * 100.0,
            });
        }
        let first = ambient.at(0.0).ok_or(RunError::NoWeatherAtStart)?;
        let dry_kg = bed.dry_matter_kg();
        let water_kg = bed.water_kg(material);
        let plenum0 = start_plenum_estimate(&heater, &first);
        let field = provider.flow(&first.air, &plenum0, water_kg / dry_kg)?;
        let density = first.air.density_kg_per_m3();
        let t_max = bed.temp_c.iter().copied().fold(f64::MIN, f64::max);
        let m_max = (bed.hull_db.iter().chain(bed.kernel_db.iter()))
            .copied()
            .fold(0.0, f64::max);
        let thresholds = Thresholds::of(&settings);
        let levels = Levels {
            mean_kernel_wb: initial_kernel_wb,
            above_target_fraction: 1.0
                - dry_kg_below(&bed, thresholds.target_db) / bed.dry_matter_kg(),
        };
        let tally = Tally {
            shrink_kg: shrink_kg(material, &bed, thresholds.target_db),
            ..Tally::default()
        };
        let mut tracker =
            StopTracker::new(settings.stop, settings.target_kernel_wb, settings.fraction);
        tracker.start(&levels, &tally);
        let mut run = Run {
            material,
            ambient,
            provider,
            heater,
            thresholds,
            flow: FlowState {
                field,
                fan_density: density,
                plenum_density: plenum0.density_kg_per_m3(),
                pod_db: water_kg / dry_kg,
                solves: 1,
            },
            bounds: Bounds::new(
                t_max,
                m_max.max(material.moisture_ceiling_db()) * CONDENSATE_ALLOWANCE,
            ),
            tracker,
            bal: Balances {
                water_start_kg: water_kg,
                ..Balances::default().with_adiabatic_bound(settings.adiabatic_bound)
            },
            rate: RateWatch::new(initial_kernel_wb, settings.safe_rate_pct_per_h),
            start: StartFigures {
                dry_kg,
                dry_per_area: bed.dry_matter_kg_per_m2.sum(),
                mass_kg: dry_kg + water_kg,
                kernel_wb: initial_kernel_wb,
                sensible_j: bed.sensible_heat_j(material),
            },
            column_dm: (bed.dry_matter_kg_per_m2.as_slice())
                .expect("bed arrays are in standard layout")
                .chunks(bed.dim().2)
                .map(|d| d.iter().sum())
                .collect(),
            water_kg,
            levels,
            tally,
            shrink_at_tally: true,
            max_peanut_c: t_max,
            t_s: 0.0,
            steps: 0,
            series: Vec::new(),
            next_record_s: settings.record_every_s,
            stopped: None,
            results: Vec::new(),
            bed,
            settings,
        };
        run.settle_start(&first)?;
        run.provider.start_settled();
        let row = record(
            material,
            &run.bed,
            0.0,
            levels.above_target_fraction,
            &first,
            None,
            0.0,
        );
        run.series.push(row);
        Ok(run)
    }

    /// The first airflow was solved for an estimate of the start's plenum air (no fan heat, no burner limit:
    /// [`start_plenum_estimate`]); solve again if the plenum air the fan and burner deliver with that airflow is
    /// further from it than the run's re-solve threshold (at most 1 %, even when the run keeps its first airflow).
    fn settle_start(&mut self, first: &AmbientSample) -> Result<(), RunError> {
        let (plenum, _, _) = self.plenum_for(first);
        let d = plenum.density_kg_per_m3();
        let tolerance = self.settings.reflow_density_rel.min(0.01);
        if (d / self.flow.plenum_density - 1.0).abs() > tolerance {
            self.flow.field = self.provider.flow(&first.air, &plenum, self.flow.pod_db)?;
            self.flow.plenum_density = d;
            self.flow.solves += 1;
        }
        Ok(())
    }

    /// The bed as it is now.
    pub fn bed(&self) -> &BedState {
        &self.bed
    }

    /// Hours on air so far.
    pub fn hours(&self) -> f64 {
        self.t_s / 3600.0
    }

    /// Why the run stopped, once it has.
    pub fn stop_reason(&self) -> Option<StopReason> {
        self.stopped
    }

    /// The end of the run's time, s: the time limit, or the fixed hours of an `hours` rule if sooner.
    fn limit_s(&self) -> f64 {
        let rule = match self.settings.stop {
            StopRule::Hours(h) => h,
            _ => f64::INFINITY,
        };
        self.settings.max_hours.min(rule) * 3600.0
    }

    /// Plenum air for `sample` with the present airflow: fan heat, then the burner.
    fn plenum_for(&self, sample: &AmbientSample) -> (AirState, f64, f64) {
        let f = &self.flow.field;
        let dry_air = f.dry_air_kg_per_s(self.bed.column_area_m2);
        let fan_air = if dry_air > 0.0 {
            let h = sample.air.enthalpy_j_per_kg() + f.fan_power_w / dry_air;
            AirState {
                t_c: psychro::temperature_from_enthalpy_c(h, sample.air.w),
                ..sample.air
            }
        } else {
            sample.air
        };
        let heat = self
            .heater
            .plenum_air(sample.air, fan_air, sample.local_hour, dry_air);
        (heat.plenum, heat.heat_w, dry_air)
    }

    /// The air path for this step, re-solving the airflow first if the fan's or plenum's air or the bed's moisture
    /// moved past the thresholds. Returns plenum air, burner heat, dry air kg/s and whether it re-solved.
    fn air_path(&mut self, sample: &AmbientSample) -> Result<(AirState, f64, f64, bool), RunError> {
        let (plenum, heat_w, dry_air) = self.plenum_for(sample);
        let s = &self.settings;
        let fan_d = sample.air.density_kg_per_m3();
        let plenum_d = plenum.density_kg_per_m3();
        let pod_db = self.water_kg / self.start.dry_kg;
        let f = &self.flow;
        let moved = (fan_d / f.fan_density - 1.0).abs() > s.reflow_density_rel
            || (plenum_d / f.plenum_density - 1.0).abs() > s.reflow_density_rel
            || (pod_db - f.pod_db).abs() > s.reflow_moisture_db;
        if !moved {
            return Ok((plenum, heat_w, dry_air, false));
        }
        let field = self.provider.flow(&sample.air, &plenum, pod_db)?;
        self.flow = FlowState {
            field,
            fan_density: fan_d,
            plenum_density: plenum_d,
            pod_db,
            solves: self.flow.solves + 1,
        };
        let (plenum, heat_w, dry_air) = self.plenum_for(sample);
        Ok((plenum, heat_w, dry_air, true))
    }

    /// The layer step over every column in parallel; results kept in column order.
    fn step_columns(&mut self, plenum: &AirState, dt_s: f64) {
        let nz = self.bed.dim().2;
        let material = self.material;
        let bounds = self.bounds;
        let target_db = self.thresholds.target_db;
        let base = ColumnForcing {
            air_in: LayerAir {
                t_c: plenum.t_c,
                w: plenum.w,
            },
            dry_air_kg_per_m2_s: 0.0,
            p_pa: plenum.p_pa,
            dt_s,
        };
        let flux = self
            .flow
            .field
            .dry_air_flux_kg_per_m2_s
            .as_slice()
            .expect("flow arrays are in standard layout");
        let bed = &mut self.bed;
        let layout = "bed arrays are in standard layout";
        let hull = bed.hull_db.as_slice_mut().expect(layout);
        let kernel = bed.kernel_db.as_slice_mut().expect(layout);
        let start = bed.curve_start_db.as_slice_mut().expect(layout);
        let temp = bed.temp_c.as_slice_mut().expect(layout);
        let dm = bed.dry_matter_kg_per_m2.as_slice().expect(layout);
        // Columns go four at a time, in fixed groups by index (0–3, 4–7, …) whatever the thread count, so every
        // column is stepped the same way on any number of threads.
        let quad = |((((h, k), c), t), d): Quad<'_>, g: &[f64]| -> [Option<ColumnResult>; 4] {
            let q = g.len();
            let (mut hs, mut ks, mut cs, mut ts) = (
                h.chunks_mut(nz),
                k.chunks_mut(nz),
                c.chunks_mut(nz),
                t.chunks_mut(nz),
            );
            let mut ds = d.chunks(nz);
            // a group of fewer than four is padded with empty columns
            let mut next = || ColumnMut {
                hull_db: hs.next().unwrap_or_default(),
                kernel_db: ks.next().unwrap_or_default(),
                curve_start_db: cs.next().unwrap_or_default(),
                temp_c: ts.next().unwrap_or_default(),
                dry_matter_kg_per_m2: ds.next().unwrap_or_default(),
            };
            let columns = [next(), next(), next(), next()];
            let forcing = four(|l| ColumnForcing {
                dry_air_kg_per_m2_s: g.get(l).copied().unwrap_or(0.0),
                ..base
            });
            let stepped = step_columns4(material, columns, forcing);
            let (h, k, c, t) = (&*h, &*k, &*c, &*t);
            four(|l| {
                (l < q).then(|| {
                    let cells = l * nz..(l + 1) * nz;
                    let (h, k, c, t, d) = (
                        &h[cells.clone()],
                        &k[cells.clone()],
                        &c[cells.clone()],
                        &t[cells.clone()],
                        &d[cells],
                    );
                    let (exhaust, totals) = stepped[l];
                    ColumnResult {
                        violation: bounds.check_column(h, k, t, &totals),
                        totals,
                        exhaust,
                        dry_air_kg_per_m2: g[l] * dt_s,
                        after: ColumnTotals::of(material, h, k, c, t, d),
                        below_target_dm: column_mass_below(k, d, target_db),
                    }
                })
            })
        };
        let group = 4 * nz;
        if hull.len() < PARALLEL_MIN_CELLS {
            // A small bed (a season's coarse grid) steps faster on this thread than handed to the pool and back.
            let quads = (hull.chunks_mut(group).zip(kernel.chunks_mut(group)))
                .zip(start.chunks_mut(group))
                .zip(temp.chunks_mut(group))
                .zip(dm.chunks(group))
                .zip(flux.chunks(4));
            self.results.clear();
            self.results.extend(quads.map(|(cells, g)| quad(cells, g)));
        } else {
            (hull.par_chunks_mut(group).zip(kernel.par_chunks_mut(group)))
                .zip(start.par_chunks_mut(group))
                .zip(temp.par_chunks_mut(group))
                .zip(dm.par_chunks(group))
                .zip(flux.par_chunks(4))
                .map(|(cells, g)| quad(cells, g))
                .collect_into_vec(&mut self.results);
        }
    }

    /// The first out-of-bounds cell, in column order.
    fn check_bounds(&self, hours: f64) -> Result<(), RunError> {
        let ny = self.bed.dim().1;
        match in_column_order(&self.results)
            .enumerate()
            .find_map(|(c, r)| r.violation.map(|v| (c, v)))
        {
            None => Ok(()),
            Some((c, v)) => Err(RunError::NonPhysical {
                quantity: v.quantity,
                value: v.value,
                bound: v.bound,
                cell: (c / ny, c % ny, v.layer),
                hours,
            }),
        }
    }

    /// Advance one time step.
    pub fn step(&mut self) -> Result<StepReport, RunError> {
        if self.stopped.is_some() {
            return Err(RunError::Finished);
        }
        let dt_s = self.settings.dt_s.min(self.limit_s() - self.t_s);
        let sample = self
            .ambient
            .at(self.t_s + 0.5 * dt_s)
            .ok_or(RunError::NoWeather {
                hours: self.t_s / 3600.0,
            })?;
        let (plenum, heat_w, dry_air, solved) = self.air_path(&sample)?;
        self.bounds.admit(&sample.air);
        self.bounds.admit(&plenum);
        self.step_columns(&plenum, dt_s);
        let hours = (self.t_s + dt_s) / 3600.0;
        self.check_bounds(hours)?;
        let air = StepAir {
            ambient: sample.air,
            plenum,
            heat_w,
            electric_w: self.flow.field.electric_power_w,
            dry_air_kg_per_s: dry_air,
            dt_s,
            column_area_m2: self.bed.column_area_m2,
        };
        let removed = self.bal.add_step(
            &air,
            in_column_order(&self.results).map(|r| ColumnFlux {
                totals: &r.totals,
                exhaust_t_c: r.exhaust.t_c,
                exhaust_w: r.exhaust.w,
                dry_air_kg: r.dry_air_kg_per_m2 * self.bed.column_area_m2,
            }),
        );
        if self.settings.adiabatic_bound {
            self.bal.add_adiabatic_bound(&air, removed);
        }
        self.t_s += dt_s;
        self.steps += 1;
        let before = self.levels;
        self.update_totals();
        self.rate.observe(hours, self.levels.mean_kernel_wb);
        let tally = self.cross(&before);
        let exhaust = mean_exhaust(in_column_order(&self.results), plenum.p_pa);
        let row = self.maybe_record(
            &sample,
            PathAir {
                plenum,
                exhaust,
                heat_w,
            },
        );
        let stop = self.check_stop(hours);
        let row = match (row, stop) {
            (None, Some(_)) => Some(self.record_row(
                &sample,
                PathAir {
                    plenum,
                    exhaust,
                    heat_w,
                },
            )),
            (r, _) => r,
        };
        Ok(StepReport {
            step: self.steps,
            hours,
            dt_s,
            ambient: sample,
            plenum,
            exhaust,
            heat_w,
            dry_air_kg_per_s: dry_air,
            airflow_solved: solved,
            mean_kernel_wb: self.levels.mean_kernel_wb,
            above_target_fraction: self.levels.above_target_fraction,
            tally,
            row,
            stop,
        })
    }

    /// Bed totals from the columns' results (summed in column order).
    fn update_totals(&mut self) {
        let (mut water, mut kernel_dm, mut above, mut peak) = (0.0, 0.0, 0.0, f64::MIN);
        for (r, dm) in in_column_order(&self.results).zip(&self.column_dm) {
            water += r.after.pod_water_kg_per_m2;
            kernel_dm += r.after.kernel_db_dm_kg_per_m2;
            above += dm - r.below_target_dm;
            peak = f64::max(peak, r.after.max_temp_c);
        }
        self.water_kg = water * self.bed.column_area_m2;
        self.levels = Levels {
            mean_kernel_wb: ColumnTotals::mean_kernel_wb(kernel_dm, self.start.dry_per_area),
            above_target_fraction: above / self.start.dry_per_area,
        };
        self.max_peanut_c = self.max_peanut_c.max(peak);
    }

    /// Accounts now, and any crossing in the step just taken (accounts interpolated to it). Shrink takes a pass
    /// over the bed, so it is evaluated only at the ends of steps in which a rule may cross.
    fn cross(&mut self, before: &Levels) -> Tally {
        let mut now = Tally {
            hours: self.t_s / 3600.0,
            fuel_used: self.heater.fuel.quantity_for_heat(self.bal.burner_heat_j),
            fan_kwh: self.bal.fan_electric_j / 3.6e6,
            water_removed_kg: self.bal.water_start_kg - self.water_kg,
            shrink_kg: f64::NAN,
        };
        let mut start = self.tally;
        let (mean_before, frac_before) = (self.tracker.mean, self.tracker.fraction);
        let mut probe = self.tracker.clone();
        probe.update(before, &self.levels, &start, &now);
        let crosses = probe.mean != mean_before || probe.fraction != frac_before;
        let soon = probe.may_cross_soon(before, &self.levels);
        if crosses || soon {
            now.shrink_kg = shrink_kg(self.material, &self.bed, self.thresholds.target_db);
        }
        if crosses {
            if !self.shrink_at_tally {
                // The last step gave no sign of a crossing: the step's end value stands for its start.
                start.shrink_kg = now.shrink_kg;
            }
            self.tracker.update(before, &self.levels, &start, &now);
        }
        self.shrink_at_tally = crosses || soon;
        self.tally = now;
        now
    }

    fn record_row(&mut self, sample: &AmbientSample, air: PathAir) -> SeriesRow {
        let row = record(
            self.material,
            &self.bed,
            self.t_s / 3600.0,
            self.levels.above_target_fraction,
            sample,
            Some(air),
            self.flow.field.electric_power_w,
        );
        self.series.push(row);
        self.next_record_s = self.t_s + self.settings.record_every_s;
        row
    }

    fn maybe_record(&mut self, sample: &AmbientSample, air: PathAir) -> Option<SeriesRow> {
        (self.t_s >= self.next_record_s - 1e-9).then(|| self.record_row(sample, air))
    }

    /// Whether the run ends after this step, and why.
    fn check_stop(&mut self, hours: f64) -> Option<StopReason> {
        let end_of_time = self.t_s >= self.limit_s() - 1e-6;
        let rule_met = match self.settings.stop {
            StopRule::Hours(h) => end_of_time && h <= self.settings.max_hours,
            _ => self.tracker.met().is_some(),
        };
        let reason = if rule_met {
            Some(StopReason::RuleMet)
        } else if end_of_time || hours >= self.settings.max_hours - 1e-9 {
            Some(StopReason::MaxHours)
        } else {
            let next_dt = self.settings.dt_s.min(self.limit_s() - self.t_s);
            self.ambient
                .at(self.t_s + 0.5 * next_dt)
                .is_none()
                .then_some(StopReason::WeatherEnded)
        };
        self.stopped = reason;
        reason
    }

    /// Step until the run stops, showing every step and the bed to `observer`.
    pub fn run_to_end(
        mut self,
        observer: &mut dyn RunObserver,
    ) -> Result<(Outcome, BedState), RunError> {
        while self.stopped.is_none() {
            let report = self.step()?;
            observer.on_step(&report, &self.bed);
        }
        Ok(self.finish())
    }

    /// The outcome so far and the bed.
    pub fn finish(self) -> (Outcome, BedState) {
        let material = self.material;
        let bed = self.bed;
        let water_end = self.water_kg;
        let mut bal = self.bal;
        bal.water_end_kg = water_end;
        bal.sensible_storage_j = bed.sensible_heat_j(material) - self.start.sensible_j;
        let fuel_used = self.heater.fuel.quantity_for_heat(bal.burner_heat_j);
        let zones = zone_masses(material, &bed, &self.thresholds);
        let removed = bal.water_start_kg - water_end;
        let at_stop_rule = match self.settings.stop {
            StopRule::Hours(_) if self.stopped == Some(StopReason::RuleMet) => Some(Tally {
                shrink_kg: zones.shrink_kg,
                ..self.tally
            }),
            _ => self.tracker.met(),
        };
        let outcome = Outcome {
            stop_rule: self.settings.stop,
            stop_reason: self.stopped.unwrap_or(StopReason::MaxHours),
            hours: self.t_s / 3600.0,
            hours_to_mean_target: self.tracker.mean.map(|t| t.hours),
            hours_to_fraction_target: self.tracker.fraction.map(|t| t.hours),
            fraction_rule: self.settings.fraction,
            at_mean_target: self.tracker.mean,
            at_fraction_target: self.tracker.fraction,
            at_stop_rule,
            initial_kernel_pct: self.start.kernel_wb * 100.0,
            final_kernel_pct: self.levels.mean_kernel_wb * 100.0,
            final_pod_pct: wb_from_db(water_end / self.start.dry_kg) * 100.0,
            initial_mass_kg: self.start.mass_kg,
            final_mass_kg: self.start.dry_kg + water_end,
            water_removed_kg: removed,
            fuel_used,
            fuel_unit: self.heater.fuel.unit.to_string(),
            fuel_per_tonne: fuel_used / (self.start.mass_kg / 1000.0),
            fan_kwh: bal.fan_electric_j / 3.6e6,
            energy_kj_per_kg_water: if removed > 0.0 {
                (bal.burner_heat_j + bal.fan_electric_j) / removed / 1000.0
            } else {
                f64::NAN
            },
            over_dried_fraction: zones.over_fraction(),
            under_dried_fraction: zones.under_fraction(),
            shrink_kg: zones.shrink_kg,
            zones,
            max_rate_pct_per_h: self.rate.max_pct_per_h,
            hours_above_safe_rate: self.rate.hours_fast,
            max_peanut_c: self.max_peanut_c,
            airflow_solves: self.flow.solves,
            balances: bal,
            series: self.series,
        };
        (outcome, bed)
    }
}

/// The plenum air expected at the start before any airflow is known: the heater on ambient air without fan heat
/// and without a burner limit (a rise or set-point does not depend on the mass flow otherwise). The run's first
/// airflow is solved for it; a caller that solves the start's airflow itself (for the bed's geometry) uses the same
/// air, so the run finds that solution instead of solving again.
pub fn start_plenum_estimate(heater: &Heater, first: &AmbientSample) -> AirState {
    let unlimited = Heater {
        capacity_w: None,
        ..*heater
    };
    unlimited
        .plenum_air(first.air, first.air, first.local_hour, 1.0)
        .plenum
}

/// Column results kept four columns a group, in column order.
fn in_column_order(results: &[[Option<ColumnResult>; 4]]) -> impl Iterator<Item = &ColumnResult> {
    results.iter().flatten().flatten()
}

fn mean_exhaust<'r>(results: impl Iterator<Item = &'r ColumnResult>, p_pa: f64) -> AirState {
    let (mut air, mut h, mut w) = (0.0, 0.0, 0.0);
    for r in results {
        air += r.dry_air_kg_per_m2;
        h += r.dry_air_kg_per_m2 * psychro::enthalpy_j_per_kg(r.exhaust.t_c, r.exhaust.w);
        w += r.dry_air_kg_per_m2 * r.exhaust.w;
    }
    if air <= 0.0 {
        return AirState {
            t_c: f64::NAN,
            w: f64::NAN,
            p_pa,
        };
    }
    let (h, w) = (h / air, w / air);
    AirState {
        t_c: psychro::temperature_from_enthalpy_c(h, w),
        w,
        p_pa,
    }
}
