//! The drying seam: the event simulation asks a [`LoadDrier`] how one load dries on one dryer from a start time,
//! and never calls the deep-bed model itself. Three driers:
//!
//! * [`FixedTimeDrier`]: drying time from a function of the load (the test seam; no physics).
//! * [`RateRuleDrier`]: a rule of thumb (hours = moisture to remove / rate; propane from a per-kg-water figure).
//!   Common practice, no source; a stand-in until the deep-bed drier is wired to real crops, weather and airflow.
//! * [`DeepBedDrier`]: builds each load's [`LoadSpec`] from a [`LoadTemplate`] and dries it through
//!   [`run_load`], the same path as a single load.
//!
//! Shrink by the dry-matter method (DOMAIN.md §7.3, Hellevang via NDSU).

use std::collections::{BTreeMap, HashMap};
use std::sync::{Arc, Mutex};

use chrono::{DateTime, FixedOffset};

use super::arrivals::Load;
use super::scenario::DryerUnit;
use super::{DryingFailure, SeasonError};
use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::{Container, Grid};
use crate::crop::Crop;
use crate::drying::bed::InitialMoisture;
use crate::drying::flow::FanEfficiency;
use crate::drying::heater::{Fuel, HeaterStrategy};
use crate::drying::material::CropMaterial;
use crate::drying::run::{RunError, RunSettings, StopReason};
use crate::load::{
    checked_heater, run_load, AirflowUpdates, FillSpec, LoadError, LoadResult, LoadSpec, Prices,
};
use crate::weather::series::WeatherSeries;

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
    /// Air through the bed per volume of peanuts at the load's start, m³/min per m³ (`None` for a drier that solves
    /// no airflow): what explains a season's fuel per tonne (advice::USUAL_AIRFLOW_M3_MIN_PER_M3).
    pub air_per_m3: Option<f64>,
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
                failure: DryingFailure::BadTime(h),
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
            air_per_m3: None,
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
            air_per_m3: None,
        })
    }
}

/// What the season's deep-bed drier builds every load from: the shared models and the settings of the season's
/// runs (the coarse grid and the airflow solved once at each load's start by default). Each load becomes a
/// [`LoadSpec`] through [`LoadTemplate::spec_for`] and dries through [`run_load`], exactly as `dryfront dry` does.
#[derive(Debug, Clone)]
pub struct LoadTemplate {
    /// Crop.
    pub crop: Arc<Crop>,
    /// Crop as the layer step sees it.
    pub material: Arc<CropMaterial>,
    /// Weather.
    pub weather: Arc<WeatherSeries>,
    /// Containers by the names the buying point's dryers use.
    pub containers: BTreeMap<String, Arc<Container>>,
    /// Fans by name.
    pub fans: BTreeMap<String, FlowSpec>,
    /// Fan and motor efficiency.
    pub efficiency: FanEfficiency,
    /// Fuel every burner burns.
    pub fuel: Fuel,
    /// Prices.
    pub prices: Prices,
    /// Grid of every load's bed.
    pub grid: Grid,
    /// Time step, limits, target and stop rule.
    pub run: RunSettings,
    /// When the airflow is re-solved.
    pub airflow: AirflowUpdates,
    /// Let heaters above the crop's safe limits run.
    pub force: bool,
}

impl LoadTemplate {
    /// The spec of `load` on `dryer`, air on at `start`: level fill of the load's net mass, uniform moisture.
    pub fn spec_for(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        start: DateTime<FixedOffset>,
    ) -> Result<LoadSpec, SeasonError> {
        let fail = |failure: DryingFailure| SeasonError::Drying {
            load: load.id.clone(),
            dryer: dryer.id.clone(),
            failure,
        };
        let container = (self.containers.get(&dryer.container))
            .ok_or_else(|| fail(DryingFailure::UnknownContainer(dryer.container.clone())))?;
        let flow = (self.fans.get(&dryer.fan))
            .ok_or_else(|| fail(DryingFailure::UnknownFan(dryer.fan.clone())))?;
        let burner_w = dryer.burner_kw.map(|kw| kw * 1000.0);
        let (heater, _) =
            checked_heater(&self.crop, dryer.heater, burner_w, self.fuel, self.force)?;
        Ok(LoadSpec {
            name: load.id.clone(),
            crop: self.crop.clone(),
            material: self.material.clone(),
            container: container.clone(),
            fill: FillSpec::NetMass(load.mass_kg),
            flow: flow.clone(),
            efficiency: self.efficiency,
            heater,
            weather: self.weather.clone(),
            start,
            initial: InitialMoisture::Uniform(load.moisture_pct / 100.0),
            grid: self.grid,
            run: self.run,
            airflow: self.airflow,
            prices: self.prices.clone(),
        })
    }
}

/// The deep-bed model for each load, through the one load path. A drying it has done once is not done again: a
/// sweep's cases share each season's drier, and where two cases put the same load on the same kind of dryer at the
/// same instant (every case before its queues part, or two policies that agree) the second is answered from the
/// first, the same to the bit, since the result depends on nothing but [`DryingKey`].
#[derive(Debug)]
pub struct DeepBedDrier {
    /// What each load is built from.
    pub template: LoadTemplate,
    /// Dryings done, by everything of the load and dryer that [`LoadTemplate::spec_for`] reads.
    done: Mutex<HashMap<DryingKey, DryingResult>>,
}

/// What a deep-bed drying depends on besides its drier's template: exactly the fields of the load and the dryer
/// that [`LoadTemplate::spec_for`] reads (not their ids, which name the run only), and the start. Floats by their
/// bits, the heater by its text (which parses back to the same strategy, so equal texts are equal strategies).
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct DryingKey {
    mass_kg: u64,
    moisture_pct: u64,
    container: String,
    fan: String,
    burner_kw: Option<u64>,
    heater: String,
    start: DateTime<FixedOffset>,
}

impl DryingKey {
    /// The key of `load` on `dryer` from `start`.
    pub fn of(load: &Load, dryer: &DryerUnit, start: DateTime<FixedOffset>) -> Self {
        DryingKey {
            mass_kg: load.mass_kg.to_bits(),
            moisture_pct: load.moisture_pct.to_bits(),
            container: dryer.container.clone(),
            fan: dryer.fan.clone(),
            burner_kw: dryer.burner_kw.map(f64::to_bits),
            heater: dryer.heater.to_string(),
            start,
        }
    }
}

impl DeepBedDrier {
    /// A drier building every load from `template`, with nothing dried yet.
    pub fn new(template: LoadTemplate) -> Self {
        DeepBedDrier {
            template,
            done: Mutex::new(HashMap::new()),
        }
    }

    /// How many different dryings it has done (each answered once, however often it was asked).
    pub fn dryings(&self) -> usize {
        self.remembered().len()
    }

    /// One drying through the load path (errors are not remembered: they name the load and dryer).
    fn dry_once(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        start: DateTime<FixedOffset>,
    ) -> Result<DryingResult, SeasonError> {
        let spec = self.template.spec_for(load, dryer, start)?;
        match run_load(&spec, &mut ()) {
            Ok(r) => Ok(drying_result(&r)),
            // Already at or below target: nothing to dry; it still takes its slot for the turnaround.
            Err(LoadError::Run(RunError::TargetNotBelowInitial { .. })) => Ok(DryingResult {
                hours: 0.0,
                fuel_l: 0.0,
                kwh: 0.0,
                moisture_out_pct: load.moisture_pct,
                over_dried_kg: 0.0,
                shrink_kg: 0.0,
                finished: true,
                air_per_m3: None,
            }),
            Err(e) => Err(SeasonError::Drying {
                load: load.id.clone(),
                dryer: dryer.id.clone(),
                failure: DryingFailure::Load(Box::new(e)),
            }),
        }
    }

    fn remembered(&self) -> std::sync::MutexGuard<'_, HashMap<DryingKey, DryingResult>> {
        // A panic elsewhere cannot leave the map half-written (inserts are whole), so a poisoned lock is still good.
        self.done.lock().unwrap_or_else(|p| p.into_inner())
    }
}

/// A season's figures of a dried load.
pub fn drying_result(r: &LoadResult) -> DryingResult {
    let out = &r.outcome;
    let ready = out.ready();
    DryingResult {
        hours: ready.hours,
        fuel_l: ready.fuel_used,
        kwh: ready.fan_kwh,
        moisture_out_pct: out.final_kernel_pct,
        over_dried_kg: out.over_dried_fraction * out.final_mass_kg,
        shrink_kg: ready.shrink_kg,
        finished: out.stop_reason == StopReason::RuleMet,
        air_per_m3: Some(r.airflow.summary.specific_airflow_m3_per_min_per_m3),
    }
}

impl LoadDrier for DeepBedDrier {
    fn dry(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        start: DateTime<FixedOffset>,
    ) -> Result<DryingResult, SeasonError> {
        let key = DryingKey::of(load, dryer, start);
        if let Some(r) = self.remembered().get(&key) {
            return Ok(*r);
        }
        let result = self.dry_once(load, dryer, start)?;
        self.remembered().insert(key, result);
        Ok(result)
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
