//! A batch run of one load: step the bed under the weather from a start time until a stop rule holds, the time limit
//! passes or the weather ends, re-solving the airflow when the air or the bed has changed enough, and account for
//! water, energy, fuel and fan electricity as it goes.
//!
//! Stop rules are on kernel moisture, wet basis, as the trade grades it: the mass-weighted mean at or below target,
//! or a given fraction of the dry matter at or below target (the wettest rest above it).

use ndarray::{Array2, Array3, Zip};
use rayon::prelude::*;

use super::bed::{BedState, ColumnTotals};
use super::heater::Heater;
use super::layer::{
    step_column, ColumnForcing, ColumnMut, ColumnStepTotals, LayerAir, LayerMaterial,
};
use crate::props::psychro::{self, AirState};
use crate::units::{db_from_wb, wb_from_db};

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
    /// Superficial air velocity leaving each column, m/s (volume at the plenum air state), `[nx, ny]`.
    pub velocity_m_per_s: Array2<f64>,
    /// Fan shaft power drawn, W (becomes heat in the air stream).
    pub fan_power_w: f64,
    /// Fan electrical input, W (for kWh; ≥ shaft power).
    pub electric_power_w: f64,
    /// Air leaving through leaks without crossing the peanuts, m³/s.
    pub leakage_m3_per_s: f64,
    /// Plenum static pressure, mean, Pa.
    pub plenum_pa: f64,
}

/// Gives the run its airflow; asked again when the air density or the bed's moisture has moved past the run's
/// thresholds. A fixed field ignores both.
pub trait FlowProvider {
    /// Airflow for plenum air `air` and bed mean pod moisture `mean_pod_db`.
    fn flow(&mut self, air: &AirState, mean_pod_db: f64) -> Result<FlowField, String>;
}

/// A flow field that does not change.
#[derive(Debug, Clone)]
pub struct FixedFlow(pub FlowField);

impl FlowProvider for FixedFlow {
    fn flow(&mut self, _: &AirState, _: f64) -> Result<FlowField, String> {
        Ok(self.0.clone())
    }
}

/// Which condition ends the run.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum StopRule {
    /// Mass-weighted mean kernel moisture at or below target.
    Mean,
    /// This fraction (0–1) of the dry matter at or below target.
    Fraction(f64),
}

/// Why a run stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum StopReason {
    /// The stop rule holds.
    TargetReached,
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
    /// Second rule whose time is also reported (the run does not wait for it).
    pub also_report: StopRule,
    /// Record a time-series row every this many seconds.
    pub record_every_s: f64,
    /// Re-solve airflow when plenum air density has changed by this relative amount.
    pub reflow_density_rel: f64,
    /// …or mean pod moisture by this much (dry basis).
    pub reflow_moisture_db: f64,
    /// Kernel moisture below which a cell counts as over-dried, wet basis decimal.
    pub over_dry_kernel_wb: f64,
    /// Above target + this, a cell counts as under-dried, wet basis decimal.
    pub under_dry_tolerance_wb: f64,
    /// Batch-average drying rate counted as too fast, percentage points per hour.
    pub safe_rate_pct_per_h: f64,
}

impl Default for RunSettings {
    /// Defaults from practice (common practice, no source): 10 % kernel w.b. target; over-dried below 9 %;
    /// under-dried above 10.5 %; 0.5 %-points/h safe rate (DOMAIN.md §7.2). Numerics: 0.1 h steps.
    fn default() -> Self {
        RunSettings {
            dt_s: 360.0,
            max_hours: 120.0,
            target_kernel_wb: 0.10,
            stop: StopRule::Mean,
            also_report: StopRule::Fraction(0.95),
            record_every_s: 3600.0,
            reflow_density_rel: 0.01,
            reflow_moisture_db: 0.01,
            over_dry_kernel_wb: 0.09,
            under_dry_tolerance_wb: 0.005,
            safe_rate_pct_per_h: 0.5,
        }
    }
}

/// One row of the run's time series.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct SeriesRow {
    /// Hours since start.
    pub hours: f64,
    /// Mean kernel moisture, % w.b.
    pub mean_kernel_pct: f64,
    /// Mean pod moisture, % w.b.
    pub mean_pod_pct: f64,
    /// Mean hull moisture, % w.b.
    pub mean_hull_pct: f64,
    /// Mean kernel moisture of the top layer, % w.b.
    pub top_kernel_pct: f64,
    /// Mean kernel moisture of the bottom layer, % w.b.
    pub bottom_kernel_pct: f64,
    /// Mean hull moisture of the top layer, % w.b.
    pub top_hull_pct: f64,
    /// Wettest cell's kernel moisture, % w.b.
    pub wettest_kernel_pct: f64,
    /// Driest cell's kernel moisture, % w.b.
    pub driest_kernel_pct: f64,
    /// Ambient dry bulb, °C.
    pub ambient_c: f64,
    /// Ambient RH, %.
    pub ambient_rh_pct: f64,
    /// Plenum dry bulb, °C.
    pub plenum_c: f64,
    /// Plenum RH, %.
    pub plenum_rh_pct: f64,
    /// Flow-weighted exhaust dry bulb, °C.
    pub exhaust_c: f64,
    /// Exhaust RH, %.
    pub exhaust_rh_pct: f64,
    /// Burner heat, kW.
    pub heat_kw: f64,
    /// Fan electrical power, kW.
    pub fan_kw: f64,
    /// Hottest peanut temperature, °C.
    pub max_peanut_c: f64,
}

/// Water and energy accounts of a run, for the balances.
#[derive(Debug, Clone, Copy, Default, PartialEq, serde::Serialize)]
pub struct Balances {
    /// Water held by the peanuts at the start, kg.
    pub water_start_kg: f64,
    /// …at the end, kg.
    pub water_end_kg: f64,
    /// Water the air carried off (exhaust minus plenum humidity, integrated), kg.
    pub water_to_air_kg: f64,
    /// Burner heat released into the air (LHV basis), J.
    pub burner_heat_j: f64,
    /// Enthalpy the burner and fan added to the air (plenum minus ambient), J.
    pub air_heating_j: f64,
    /// Enthalpy carried off by the exhaust above ambient air, J.
    pub exhaust_excess_j: f64,
    /// Change of sensible heat stored in the peanuts and their water, J.
    pub sensible_storage_j: f64,
    /// Heat of sorption taken by bound water beyond free-water latent heat, J.
    pub sorption_heat_j: f64,
    /// Fan electricity, J.
    pub fan_electric_j: f64,
    /// Water condensed from over-saturated air back onto the peanuts, kg.
    pub condensate_kg: f64,
    /// Largest one-step water removal relative to the adiabatic-saturation bound of the plenum air (can pass 1
    /// briefly while warm peanuts give up their own heat).
    pub max_removal_vs_adiabatic: f64,
    /// Water the air could have carried off over the run had it left saturated at its wet bulb (DOMAIN.md §6.3),
    /// kg. Removal cannot exceed this plus what the peanuts' own sensible heat can evaporate.
    pub adiabatic_capacity_kg: f64,
}

/// The result of a batch run.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Outcome {
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
    /// Mean kernel moisture at the start, % w.b.
    pub initial_kernel_pct: f64,
    /// …at the end.
    pub final_kernel_pct: f64,
    /// Pod moisture at the end, % w.b.
    pub final_pod_pct: f64,
    /// Wet mass at the start, kg.
    pub initial_mass_kg: f64,
    /// Wet mass at the end, kg.
    pub final_mass_kg: f64,
    /// Water removed, kg.
    pub water_removed_kg: f64,
    /// Fuel burnt, in the fuel's unit.
    pub fuel_used: f64,
    /// The fuel's unit.
    pub fuel_unit: String,
    /// Fuel per tonne of wet peanuts at the start.
    pub fuel_per_tonne: f64,
    /// Fan electricity, kWh.
    pub fan_kwh: f64,
    /// Heat per kg water removed (burner + fan), kJ/kg.
    pub energy_kj_per_kg_water: f64,
    /// Mass fraction over-dried at the end.
    pub over_dried_fraction: f64,
    /// Mass fraction under-dried at the end.
    pub under_dried_fraction: f64,
    /// Shrink: weight lost by cells dried below target, kg.
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

/// Errors of a run.
#[derive(Debug, thiserror::Error)]
pub enum RunError {
    /// The weather record does not cover the start.
    #[error("the weather record does not cover the run's start")]
    NoWeatherAtStart,
    /// Target is not below the initial moisture.
    #[error("target kernel moisture {target:.1} % w.b. is not below the load's initial moisture {initial:.1} % w.b.")]
    TargetNotBelowInitial {
        /// Target, %.
        target: f64,
        /// Initial, %.
        initial: f64,
    },
    /// The airflow provider failed.
    #[error("airflow: {0}")]
    Airflow(String),
    /// A state became non-physical.
    #[error("non-physical {quantity} = {value} at hour {hours:.2}")]
    NonPhysical {
        /// Which quantity.
        quantity: &'static str,
        /// Its value.
        value: f64,
        /// When.
        hours: f64,
    },
}

/// Observers see every recorded row (progress bars, writers); tests pass `()`.
pub trait RunObserver {
    /// A new time-series row.
    fn on_row(&mut self, _row: &SeriesRow) {}
}
impl RunObserver for () {}

struct ColumnResult {
    totals: ColumnStepTotals,
    exhaust: LayerAir,
    dry_air_kg_per_m2: f64,
    /// The column's state after the step.
    after: ColumnTotals,
}

/// Run one load. `bed` is advanced in place.
pub fn run_batch<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: &mut BedState,
    ambient: &dyn Ambient,
    flow: &mut dyn FlowProvider,
    heater: &Heater,
    settings: &RunSettings,
    observer: &mut dyn RunObserver,
) -> Result<Outcome, RunError> {
    let (nx, ny, nz) = bed.dim();
    let area = bed.column_area_m2;
    let initial_kernel_wb = bed.mean_kernel_wb(material);
    // Bed totals that the loop reads every step, kept up to date from the columns' results so that no serial pass
    // over the bed is needed: mean kernel moisture (wet basis) and water held (kg).
    let mut mean_kernel_now = initial_kernel_wb;
    if settings.target_kernel_wb >= initial_kernel_wb {
        return Err(RunError::TargetNotBelowInitial {
            target: settings.target_kernel_wb * 100.0,
            initial: initial_kernel_wb * 100.0,
        });
    }
    let first = ambient.at(0.0).ok_or(RunError::NoWeatherAtStart)?;
    let dry_kg = bed.dry_matter_kg();
    let water_start = bed.water_kg(material);
    let mut water_now = water_start;
    let dry_per_area: f64 = bed.dry_matter_kg_per_m2.sum();
    let sensible_start = bed.sensible_heat_j(material);
    let initial_mass = dry_kg + water_start;

    let mut bal = Balances {
        water_start_kg: water_start,
        ..Default::default()
    };
    let mut field = flow
        .flow(&first.air, water_start / dry_kg)
        .map_err(RunError::Airflow)?;
    let mut solves = 1u32;
    let mut field_density = first.air.density_kg_per_m3();
    let mut field_moisture = water_start / dry_kg;

    let mut t_s = 0.0;
    let mut next_record;
    let mut hours_mean = None;
    let mut hours_frac = None;
    let mut prev_levels = (f64::NAN, f64::NAN);
    let mut fuel_heat_j = 0.0;
    let mut max_peanut = bed.temp_c.iter().cloned().fold(f64::MIN, f64::max);
    let mut series = Vec::new();
    let mut last_hour_kernel = (0.0, initial_kernel_wb);
    let mut max_rate = 0.0f64;
    let mut hours_fast = 0.0;
    let fraction = match (settings.stop, settings.also_report) {
        (StopRule::Fraction(f), _) | (_, StopRule::Fraction(f)) => f,
        _ => 0.95,
    };
    let stop_reason;
    let mut results: Vec<ColumnResult> = Vec::with_capacity(nx * ny);
    let row = record(material, bed, 0.0, &first, None, &field);
    observer.on_row(&row);
    series.push(row);
    next_record = settings.record_every_s;
    let mut last_recorded_s = 0.0;

    loop {
        let hours = t_s / 3600.0;
        let mean_kernel = mean_kernel_now;
        let target = settings.target_kernel_wb;
        // Crossing times are interpolated within the step, so they do not jump by whole steps.
        // The fraction rule needs a sort of every cell; it can only hold once the mean is at most
        // fraction·target + (1 − fraction)·60 % (the rest no wetter than 60 % w.b.; wet-basis means are near enough
        // mass-weighted for this bound), so it is evaluated only from there on.
        let quantile =
            if hours_frac.is_none() && mean_kernel <= fraction * target + (1.0 - fraction) * 0.6 {
                bed.kernel_wb_quantile(fraction)
            } else {
                f64::INFINITY
            };
        let crossing = |prev: f64, now: f64| {
            let f = if prev.is_finite() && prev > now {
                ((prev - target) / (prev - now)).clamp(0.0, 1.0)
            } else {
                1.0
            };
            (hours - settings.dt_s / 3600.0 * (1.0 - f)).max(0.0)
        };
        if hours_mean.is_none() && mean_kernel <= target {
            hours_mean = Some(if t_s > 0.0 {
                crossing(prev_levels.0, mean_kernel)
            } else {
                0.0
            });
        }
        if hours_frac.is_none() && quantile <= target {
            hours_frac = Some(if t_s > 0.0 {
                crossing(prev_levels.1, quantile)
            } else {
                0.0
            });
        }
        prev_levels = (mean_kernel, quantile);
        let done = match settings.stop {
            StopRule::Mean => hours_mean.is_some(),
            StopRule::Fraction(_) => hours_frac.is_some(),
        };
        // Hourly drying-rate bookkeeping.
        if hours - last_hour_kernel.0 >= 1.0 - 1e-9 {
            let rate = (last_hour_kernel.1 - mean_kernel) * 100.0 / (hours - last_hour_kernel.0);
            max_rate = max_rate.max(rate);
            if rate > settings.safe_rate_pct_per_h {
                hours_fast += hours - last_hour_kernel.0;
            }
            last_hour_kernel = (hours, mean_kernel);
        }
        let sample = ambient.at(t_s + 0.5 * settings.dt_s);
        let stop = if done {
            Some(StopReason::TargetReached)
        } else if hours >= settings.max_hours - 1e-9 {
            Some(StopReason::MaxHours)
        } else if sample.is_none() {
            Some(StopReason::WeatherEnded)
        } else {
            None
        };
        let (None, Some(sample)) = (stop, sample) else {
            stop_reason = stop.unwrap_or(StopReason::WeatherEnded);
            if t_s > last_recorded_s + 1e-9 || series.is_empty() {
                // Final row so the series ends where the run ends.
                let at = sample.unwrap_or(first);
                let row = record(material, bed, hours, &at, None, &field);
                observer.on_row(&row);
                series.push(row);
            }
            break;
        };

        // Airflow: re-solve when the air density or the bed's moisture has moved enough.
        let density = sample.air.density_kg_per_m3();
        let mean_pod = water_now / dry_kg;
        if (density / field_density - 1.0).abs() > settings.reflow_density_rel
            || (mean_pod - field_moisture).abs() > settings.reflow_moisture_db
        {
            field = flow
                .flow(&sample.air, mean_pod)
                .map_err(RunError::Airflow)?;
            solves += 1;
            field_density = density;
            field_moisture = mean_pod;
        }

        // Fan heat, then the burner.
        let total_m3_s: f64 = field.velocity_m_per_s.sum() * area;
        let v_amb = sample.air.specific_volume_m3_per_kg();
        let dry_air_kg_s = total_m3_s / v_amb;
        let fan_air = if dry_air_kg_s > 0.0 {
            let h = sample.air.enthalpy_j_per_kg() + field.fan_power_w / dry_air_kg_s;
            AirState {
                t_c: psychro::temperature_from_enthalpy_c(h, sample.air.w),
                ..sample.air
            }
        } else {
            sample.air
        };
        let heat = heater.plenum_air(sample.air, fan_air, sample.local_hour, dry_air_kg_s);
        let plenum = heat.plenum;
        fuel_heat_j += heat.heat_w * settings.dt_s;
        bal.burner_heat_j += heat.heat_w * settings.dt_s;
        bal.fan_electric_j += field.electric_power_w * settings.dt_s;

        // The layer step, columns in parallel; results kept in column order.
        let forcing_base = ColumnForcing {
            air_in: LayerAir {
                t_c: plenum.t_c,
                w: plenum.w,
            },
            dry_air_kg_per_m2_s: 0.0,
            p_pa: plenum.p_pa,
            dt_s: settings.dt_s,
        };
        let flux: Vec<f64> = field.velocity_m_per_s.iter().map(|q| q / v_amb).collect();
        let hull = bed
            .hull_db
            .as_slice_mut()
            .expect("bed arrays are in standard layout");
        let kernel = bed
            .kernel_db
            .as_slice_mut()
            .expect("bed arrays are in standard layout");
        let start = bed
            .curve_start_db
            .as_slice_mut()
            .expect("bed arrays are in standard layout");
        let temp = bed
            .temp_c
            .as_slice_mut()
            .expect("bed arrays are in standard layout");
        let dm = bed
            .dry_matter_kg_per_m2
            .as_slice()
            .expect("bed arrays are in standard layout");
        hull.par_chunks_mut(nz)
            .zip(kernel.par_chunks_mut(nz))
            .zip(start.par_chunks_mut(nz))
            .zip(temp.par_chunks_mut(nz))
            .zip(dm.par_chunks(nz))
            .zip(flux.par_iter())
            .map(|(((((h, k), c), t), d), &g)| {
                let forcing = ColumnForcing {
                    dry_air_kg_per_m2_s: g,
                    ..forcing_base
                };
                let column = ColumnMut {
                    hull_db: &mut *h,
                    kernel_db: &mut *k,
                    curve_start_db: &mut *c,
                    temp_c: &mut *t,
                    dry_matter_kg_per_m2: d,
                };
                let (exhaust, totals) = step_column(material, column, forcing);
                ColumnResult {
                    totals,
                    exhaust,
                    dry_air_kg_per_m2: g * settings.dt_s,
                    after: ColumnTotals::of(
                        material,
                        (&*h).into(),
                        (&*k).into(),
                        (&*c).into(),
                        (&*t).into(),
                        d.into(),
                    ),
                }
            })
            .collect_into_vec(&mut results);

        // Accounts, summed in column order (independent of thread count).
        let h_amb = sample.air.enthalpy_j_per_kg();
        let h_plenum = plenum.enthalpy_j_per_kg();
        let mut removed = 0.0;
        let (mut pod_water, mut kernel_db_dm, mut peak) = (0.0, 0.0, f64::MIN);
        for r in &results {
            pod_water += r.after.pod_water_kg_per_m2;
            kernel_db_dm += r.after.kernel_db_dm_kg_per_m2;
            peak = f64::max(peak, r.after.max_temp_c);
            let air_kg = r.dry_air_kg_per_m2 * area;
            if air_kg <= 0.0 {
                continue;
            }
            removed += r.totals.water_removed_kg_per_m2 * area;
            bal.water_to_air_kg += air_kg * (r.exhaust.w - plenum.w);
            bal.air_heating_j += air_kg * (h_plenum - h_amb);
            bal.exhaust_excess_j +=
                air_kg * (psychro::enthalpy_j_per_kg(r.exhaust.t_c, r.exhaust.w) - h_amb);
            bal.sorption_heat_j += r.totals.sorption_heat_j_per_m2 * area;
            bal.condensate_kg += r.totals.condensate_kg_per_m2 * area;
        }
        // Physical bound: the air cannot take up more than it would leaving saturated at its wet bulb.
        let t_wb = psychro::wet_bulb_c(plenum.t_c, plenum.w, plenum.p_pa);
        let bound = dry_air_kg_s
            * settings.dt_s
            * (psychro::saturation_humidity_ratio(t_wb, plenum.p_pa) - plenum.w);
        bal.adiabatic_capacity_kg += bound.max(0.0);
        if bound > 0.0 {
            bal.max_removal_vs_adiabatic = bal.max_removal_vs_adiabatic.max(removed / bound);
        }

        water_now = pod_water * area;
        mean_kernel_now = ColumnTotals::mean_kernel_wb(kernel_db_dm, dry_per_area);
        t_s += settings.dt_s;
        if !peak.is_finite() {
            return Err(RunError::NonPhysical {
                quantity: "peanut temperature",
                value: peak,
                hours: t_s / 3600.0,
            });
        }
        max_peanut = max_peanut.max(peak);
        if t_s >= next_record - 1e-9 {
            let exhaust = mean_exhaust(&results, plenum.p_pa);
            let row = record(
                material,
                bed,
                t_s / 3600.0,
                &sample,
                Some((plenum, exhaust, heat.heat_w)),
                &field,
            );
            observer.on_row(&row);
            series.push(row);
            last_recorded_s = t_s;
            next_record = t_s + settings.record_every_s;
        }
    }

    let water_end = bed.water_kg(material);
    bal.water_end_kg = water_end;
    bal.sensible_storage_j = bed.sensible_heat_j(material) - sensible_start;
    let final_mass = dry_kg + water_end;
    let fuel_used = heater.fuel.quantity_for_heat(fuel_heat_j);
    let (over, under, shrink) = zones(material, bed, settings);
    let fan_kwh = bal.fan_electric_j / 3.6e6;
    let removed = water_start - water_end;
    Ok(Outcome {
        stop_reason,
        hours: t_s / 3600.0,
        hours_to_mean_target: hours_mean,
        hours_to_fraction_target: hours_frac,
        fraction_rule: fraction,
        initial_kernel_pct: initial_kernel_wb * 100.0,
        final_kernel_pct: bed.mean_kernel_wb(material) * 100.0,
        final_pod_pct: wb_from_db(water_end / dry_kg) * 100.0,
        initial_mass_kg: initial_mass,
        final_mass_kg: final_mass,
        water_removed_kg: removed,
        fuel_used,
        fuel_unit: heater.fuel.unit.to_string(),
        fuel_per_tonne: fuel_used / (initial_mass / 1000.0),
        fan_kwh,
        energy_kj_per_kg_water: if removed > 0.0 {
            (bal.burner_heat_j + bal.fan_electric_j) / removed / 1000.0
        } else {
            f64::NAN
        },
        over_dried_fraction: over,
        under_dried_fraction: under,
        shrink_kg: shrink,
        max_rate_pct_per_h: max_rate,
        hours_above_safe_rate: hours_fast,
        max_peanut_c: max_peanut,
        airflow_solves: solves,
        balances: bal,
        series,
    })
}

fn mean_exhaust(results: &[ColumnResult], p_pa: f64) -> AirState {
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

fn record<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: &BedState,
    hours: f64,
    sample: &AmbientSample,
    air: Option<(AirState, AirState, f64)>,
    field: &FlowField,
) -> SeriesRow {
    let (nx, ny, nz) = bed.dim();
    let layer_mean = |a: &Array3<f64>, k: usize| {
        let (mut s, mut d) = (0.0, 0.0);
        for i in 0..nx {
            for j in 0..ny {
                let dm = bed.dry_matter_kg_per_m2[[i, j, k]];
                s += a[[i, j, k]] * dm;
                d += dm;
            }
        }
        wb_from_db(s / d) * 100.0
    };
    let all_mean = |a: &Array3<f64>| {
        let s: f64 = Zip::from(a)
            .and(&bed.dry_matter_kg_per_m2)
            .fold(0.0, |acc, &m, &d| acc + m * d);
        wb_from_db(s / bed.dry_matter_kg_per_m2.sum()) * 100.0
    };
    let wettest = bed.kernel_db.iter().cloned().fold(f64::MIN, f64::max);
    let driest = bed.kernel_db.iter().cloned().fold(f64::MAX, f64::min);
    let (plenum, exhaust, heat_w) = air.unwrap_or((
        sample.air,
        AirState {
            t_c: f64::NAN,
            ..sample.air
        },
        0.0,
    ));
    SeriesRow {
        hours,
        mean_kernel_pct: bed.mean_kernel_wb(material) * 100.0,
        mean_pod_pct: wb_from_db(bed.water_kg(material) / bed.dry_matter_kg()) * 100.0,
        mean_hull_pct: all_mean(&bed.hull_db),
        top_kernel_pct: layer_mean(&bed.kernel_db, nz - 1),
        bottom_kernel_pct: layer_mean(&bed.kernel_db, 0),
        top_hull_pct: layer_mean(&bed.hull_db, nz - 1),
        wettest_kernel_pct: wb_from_db(wettest) * 100.0,
        driest_kernel_pct: wb_from_db(driest) * 100.0,
        ambient_c: sample.air.t_c,
        ambient_rh_pct: sample.air.rh() * 100.0,
        plenum_c: plenum.t_c,
        plenum_rh_pct: plenum.rh() * 100.0,
        exhaust_c: exhaust.t_c,
        exhaust_rh_pct: if exhaust.t_c.is_finite() {
            exhaust.rh() * 100.0
        } else {
            f64::NAN
        },
        heat_kw: heat_w / 1000.0,
        fan_kw: field.electric_power_w / 1000.0,
        max_peanut_c: bed.temp_c.iter().cloned().fold(f64::MIN, f64::max),
    }
}

/// Mass fractions over- and under-dried, and shrink (kg lost by cells below target), at the end of a run.
pub fn zones<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: &BedState,
    s: &RunSettings,
) -> (f64, f64, f64) {
    let over_db = db_from_wb(s.over_dry_kernel_wb);
    let under_db = db_from_wb(s.target_kernel_wb + s.under_dry_tolerance_wb);
    let target_db = db_from_wb(s.target_kernel_wb);
    let (mut over, mut under, mut shrink, mut total) = (0.0, 0.0, 0.0, 0.0);
    for ((i, j, k), &dm) in bed.dry_matter_kg_per_m2.indexed_iter() {
        let m = bed.kernel_db[[i, j, k]];
        total += dm;
        if m < over_db {
            over += dm;
        }
        if m > under_db {
            under += dm;
        }
        if m < target_db {
            // Weight this cell would have if its kernels were at target (hulls in equilibrium with them).
            let at_target =
                material.pod_db(material.initial_state(target_db, bed.temp_c[[i, j, k]]));
            let now = material.pod_db(bed.cell(i, j, k));
            shrink += dm * (at_target - now).max(0.0);
        }
    }
    (over / total, under / total, shrink * bed.column_area_m2)
}
