//! The drying seam: the event simulation asks a [`LoadDrier`] how one load dries on one dryer from a start time,
//! and never calls the deep-bed model itself. Three driers:
//!
//! * [`FixedTimeDrier`]: drying time from a function of the load (the test seam; no physics).
//! * [`RateRuleDrier`]: a rule of thumb (hours = moisture to remove / rate; propane from a per-kg-water figure).
//!   Common practice, no source; a stand-in until the deep-bed drier is wired to real crops, weather and airflow.
//! * [`DeepBedDrier`]: builds a [`BedState`] for the dryer's container and runs [`run_batch`] under the weather
//!   from the load's start, generic over the material, an ambient factory and a flow factory.
//!
//! Shrink by the dry-matter method (DOMAIN.md §7.3, Hellevang via NDSU).

use std::collections::BTreeMap;

use chrono::{DateTime, FixedOffset};
use ndarray::Array2;

use super::arrivals::Load;
use super::scenario::DryerUnit;
use super::SeasonError;
use crate::drying::bed::{BedState, InitialMoisture};
use crate::drying::heater::{Fuel, Heater, HeaterStrategy};
use crate::drying::layer::LayerMaterial;
use crate::drying::run::{run_batch, Ambient, FlowProvider, RunError, RunSettings, StopReason};
use crate::units::db_from_wb;

/// What drying one load cost and gave.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct DryingResult {
    /// Hours on air (to target if reached, else until the run stopped).
    pub hours: f64,
    /// Propane burnt, L.
    pub fuel_l: f64,
    /// Fan electricity, kWh.
    pub kwh: f64,
    /// Mean kernel moisture when taken off air, % w.b.
    pub moisture_out_pct: f64,
    /// Mass over-dried (below the over-dry threshold), kg.
    pub over_dried_kg: f64,
    /// Weight lost below the target moisture, kg.
    pub shrink_kg: f64,
    /// Whether the load reached target.
    pub finished: bool,
}

/// Dries one load on one dryer from a start time. Must depend on nothing else (so results are reproducible and
/// sweeps can run in parallel).
pub trait LoadDrier: Sync {
    /// Dry `load` on `dryer` starting at `start`.
    fn dry(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        start: DateTime<FixedOffset>,
    ) -> Result<DryingResult, SeasonError>;
}

type HoursFn = dyn Fn(&Load, &DryerUnit) -> f64 + Send + Sync;

/// Drying time from a function of the load and dryer; takes every load to `target_pct` with no fuel, and fan
/// energy at the dryer's `fan_kw`. For tests of the queue logic.
pub struct FixedTimeDrier {
    hours: Box<HoursFn>,
    /// Moisture reported at the end, % w.b.
    pub target_pct: f64,
}

impl std::fmt::Debug for FixedTimeDrier {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("FixedTimeDrier")
            .field("target_pct", &self.target_pct)
            .finish_non_exhaustive()
    }
}

impl FixedTimeDrier {
    /// A drier whose time for a load is `hours(load, dryer)`.
    pub fn new(
        target_pct: f64,
        hours: impl Fn(&Load, &DryerUnit) -> f64 + Send + Sync + 'static,
    ) -> Self {
        FixedTimeDrier {
            hours: Box::new(hours),
            target_pct,
        }
    }
}

impl LoadDrier for FixedTimeDrier {
    fn dry(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        _start: DateTime<FixedOffset>,
    ) -> Result<DryingResult, SeasonError> {
        let h = (self.hours)(load, dryer);
        if !(h.is_finite() && h >= 0.0) {
            return Err(SeasonError::Drying {
                load: load.id.clone(),
                dryer: dryer.id.clone(),
                message: format!("drying time {h} h is not a finite, non-negative number"),
            });
        }
        Ok(DryingResult {
            hours: h,
            fuel_l: 0.0,
            kwh: dryer.fan_kw * h,
            moisture_out_pct: self.target_pct.min(load.moisture_pct),
            over_dried_kg: 0.0,
            shrink_kg: 0.0,
            finished: true,
        })
    }
}

/// Water removed drying `mass_kg` from `m0_pct` to `m1_pct` (wet basis), kg: dry matter is conserved, so
/// W₁ = W₀(100 − m₀)/(100 − m₁) (DOMAIN.md §7.3).
pub fn water_removed_kg(mass_kg: f64, m0_pct: f64, m1_pct: f64) -> f64 {
    mass_kg - mass_kg * (100.0 - m0_pct) / (100.0 - m1_pct)
}

/// A rule of thumb, not a simulation: hours = (initial − target) / rate; propane = water removed × energy per kg
/// water / heating value; fan kWh = fan power × hours. Defaults: 0.5 points/h (the trade's safe batch rate), 7.2 MJ
/// per kg water and 25.5 MJ/L (the middle of DOMAIN.md §7.4's 20–30 L/t range and its HHV); unheated dryers dry at
/// half the rate with no propane (our own assumption). All common practice, no source.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateRuleDrier {
    /// Target kernel moisture, % w.b.
    pub target_pct: f64,
    /// Heated drying rate, percentage points per hour.
    pub rate_pct_per_h: f64,
    /// Rate factor when the burner is off.
    pub unheated_rate_factor: f64,
    /// Burner heat per kg water removed, MJ/kg.
    pub mj_per_kg_water: f64,
    /// Propane heating value used with that figure, MJ/L.
    pub propane_mj_per_l: f64,
}

impl RateRuleDrier {
    /// The rule with its default figures and the given target.
    pub fn new(target_pct: f64) -> Self {
        RateRuleDrier {
            target_pct,
            rate_pct_per_h: 0.5,
            unheated_rate_factor: 0.5,
            mj_per_kg_water: 7.2,
            propane_mj_per_l: 25.5,
        }
    }
}

impl LoadDrier for RateRuleDrier {
    fn dry(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        _start: DateTime<FixedOffset>,
    ) -> Result<DryingResult, SeasonError> {
        let points = (load.moisture_pct - self.target_pct).max(0.0);
        let heated = !matches!(dryer.heater.strategy, HeaterStrategy::None);
        let rate = if heated {
            self.rate_pct_per_h
        } else {
            self.rate_pct_per_h * self.unheated_rate_factor
        };
        let hours = points / rate;
        let water = water_removed_kg(load.mass_kg, load.moisture_pct, self.target_pct).max(0.0);
        let fuel_l = if heated {
            water * self.mj_per_kg_water / self.propane_mj_per_l
        } else {
            0.0
        };
        Ok(DryingResult {
            hours,
            fuel_l,
            kwh: dryer.fan_kw * hours,
            moisture_out_pct: self.target_pct.min(load.moisture_pct),
            over_dried_kg: 0.0,
            shrink_kg: 0.0,
            finished: true,
        })
    }
}

/// The geometry and grid of one container type, for building a bed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ContainerSpec {
    /// Floor length, m.
    pub length_m: f64,
    /// Floor width, m.
    pub width_m: f64,
    /// Deepest fill the walls allow, m.
    pub max_depth_m: f64,
    /// Bulk density of peanuts as loaded (wet), kg/m³.
    pub bulk_density_kg_per_m3: f64,
    /// Columns along the length.
    pub nx: usize,
    /// Columns across.
    pub ny: usize,
    /// Layers.
    pub nz: usize,
}

type AmbientFactory<'a> =
    dyn Fn(DateTime<FixedOffset>) -> Option<Box<dyn Ambient + 'a>> + Sync + 'a;
type FlowFactory<'a> =
    dyn Fn(&DryerUnit, &BedState) -> Result<Box<dyn FlowProvider + 'a>, String> + Sync + 'a;

/// Runs the deep-bed model for each load: a level bed of the load's mass in the dryer's container, uniform
/// initial moisture, peanuts at the ambient temperature of the start, the dryer's heater strategy and burner.
pub struct DeepBedDrier<'a, M: LayerMaterial + ?Sized> {
    /// The crop material.
    pub material: &'a M,
    /// Container types by name (`DryerUnit::container`).
    pub containers: BTreeMap<String, ContainerSpec>,
    /// Weather from a start time (`None` if the record does not cover it).
    pub ambient: Box<AmbientFactory<'a>>,
    /// Airflow for a dryer and its fresh bed (cache inside if the field is the same for every load).
    pub flow: Box<FlowFactory<'a>>,
    /// Run settings (target moisture, time step, limits).
    pub settings: RunSettings,
    /// Crop's safe plenum maximum, °C.
    pub max_plenum_c: f64,
    /// Fuel burnt (propane, by the litre, for the season's costs).
    pub fuel: Fuel,
}

impl<M: LayerMaterial + ?Sized> std::fmt::Debug for DeepBedDrier<'_, M> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("DeepBedDrier")
            .field("containers", &self.containers)
            .field("settings", &self.settings)
            .finish_non_exhaustive()
    }
}

impl<M: LayerMaterial + ?Sized> DeepBedDrier<'_, M> {
    /// The fresh bed for `load` in `spec`: depth from mass and bulk density, dry matter from the pod moisture of
    /// kernels at the load's moisture with hulls in equilibrium.
    pub fn bed_for(
        &self,
        load: &Load,
        spec: &ContainerSpec,
        temp_c: f64,
    ) -> Result<BedState, String> {
        let area = spec.length_m * spec.width_m;
        let depth = load.mass_kg / (spec.bulk_density_kg_per_m3 * area);
        if depth > spec.max_depth_m {
            return Err(format!(
                "{:.0} kg fills {depth:.2} m, deeper than the container's {:.2} m",
                load.mass_kg, spec.max_depth_m
            ));
        }
        let kernel_wb = load.moisture_pct / 100.0;
        let cell = self.material.initial_state(db_from_wb(kernel_wb), temp_c);
        let pod_db = self.material.pod_db(cell);
        let dry_kg = load.mass_kg / (1.0 + pod_db);
        let dry_density = dry_kg / (area * depth);
        let columns = (spec.nx * spec.ny) as f64;
        BedState::new(
            self.material,
            Array2::from_elem((spec.nx, spec.ny), depth),
            area / columns,
            spec.nz,
            dry_density,
            &InitialMoisture::Uniform(kernel_wb),
            temp_c,
        )
        .map_err(|e| e.to_string())
    }
}

impl<M: LayerMaterial + ?Sized> LoadDrier for DeepBedDrier<'_, M> {
    fn dry(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        start: DateTime<FixedOffset>,
    ) -> Result<DryingResult, SeasonError> {
        let fail = |message: String| SeasonError::Drying {
            load: load.id.clone(),
            dryer: dryer.id.clone(),
            message,
        };
        let spec = self.containers.get(&dryer.container).ok_or_else(|| {
            fail(format!(
                "container type {:?} is not known to the drier",
                dryer.container
            ))
        })?;
        let ambient = (self.ambient)(start).ok_or_else(|| {
            fail(format!(
                "the weather record does not cover {}",
                start.to_rfc3339()
            ))
        })?;
        let first = ambient.at(0.0).ok_or_else(|| {
            fail(format!(
                "the weather record does not cover {}",
                start.to_rfc3339()
            ))
        })?;
        let mut bed = self.bed_for(load, spec, first.air.t_c).map_err(fail)?;
        let mut flow = (self.flow)(dryer, &bed).map_err(fail)?;
        let heater = Heater {
            strategy: dryer.heater.strategy,
            window_h: dryer.heater.window_h,
            capacity_w: dryer.burner_kw.map(|kw| kw * 1000.0),
            max_plenum_c: dryer.heater.plenum_clamp_c(self.max_plenum_c),
            fuel: self.fuel,
        };
        let out = match run_batch(
            self.material,
            &mut bed,
            ambient.as_ref(),
            flow.as_mut(),
            &heater,
            &self.settings,
            &mut (),
        ) {
            Ok(o) => o,
            // Already at or below target: nothing to dry; it still takes its slot for the turnaround.
            Err(RunError::TargetNotBelowInitial { .. }) => {
                return Ok(DryingResult {
                    hours: 0.0,
                    fuel_l: 0.0,
                    kwh: 0.0,
                    moisture_out_pct: load.moisture_pct,
                    over_dried_kg: 0.0,
                    shrink_kg: 0.0,
                    finished: true,
                })
            }
            Err(e) => return Err(fail(e.to_string())),
        };
        Ok(DryingResult {
            hours: out.hours_to_mean_target.unwrap_or(out.hours),
            fuel_l: out.fuel_used,
            kwh: out.fan_kwh,
            moisture_out_pct: out.final_kernel_pct,
            over_dried_kg: out.over_dried_fraction * out.final_mass_kg,
            shrink_kg: out.shrink_kg,
            finished: out.stop_reason == StopReason::TargetReached,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn dry_matter_shrink_matches_domain_table() {
        // DOMAIN.md §7.3 check values (computed there): 1000 kg 18 → 10 % loses 88.9 kg; 25 → 10 % 166.7 kg;
        // 18 → 8 % 108.7 kg. Tolerance 0.05 kg (table rounding).
        assert_relative_eq!(water_removed_kg(1000.0, 18.0, 10.0), 88.9, epsilon = 0.05);
        assert_relative_eq!(water_removed_kg(1000.0, 25.0, 10.0), 166.7, epsilon = 0.05);
        assert_relative_eq!(water_removed_kg(1000.0, 18.0, 8.0), 108.7, epsilon = 0.05);
    }

    #[test]
    fn rate_rule_propane_is_in_the_trades_range() {
        // DOMAIN.md §7.4: ≈ 20–30 L propane per tonne dried (18 → 10 %), common practice.
        let d = RateRuleDrier::new(10.0);
        let load = Load {
            id: "x".into(),
            arrival: DateTime::parse_from_rfc3339("2026-09-08T12:00:00-04:00").unwrap(),
            mass_kg: 1000.0,
            moisture_pct: 18.0,
            notes: String::new(),
        };
        let dryer = DryerUnit {
            id: "D".into(),
            container: "c".into(),
            fan: "f".into(),
            capacity_kg: 6000.0,
            fan_kw: 4.0,
            burner_kw: None,
            heater: HeaterStrategy::FixedRise { rise_k: 8.0 }.into(),
        };
        let r = d.dry(&load, &dryer, load.arrival).unwrap();
        assert!((20.0..=30.0).contains(&r.fuel_l), "{}", r.fuel_l);
        assert_relative_eq!(r.hours, 16.0, epsilon = 1e-12);
        assert_relative_eq!(r.kwh, 64.0, epsilon = 1e-9);
    }
}
