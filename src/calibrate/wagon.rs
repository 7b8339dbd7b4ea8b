//! The published wagon case on real weather: a standard 4.3 × 2.4 m drying wagon filled level 1.3 m deep, fans
//! sized for 10 m³ of air per minute per m³ of peanuts, 20 → 10 % kernel moisture ("Performance of Semi-Trailer
//! Peanut Drying Units", 2009 abstract, proceedings of the American Peanut Research and Education Society;
//! DOMAIN.md §12). Builds each start date's [`LoadSpec`] (the one load path) and reads hours and propane per tonne
//! at the moment the mean kernel moisture reaches target. I/O-free: the caller reads crop, container and weather.

use std::sync::Arc;

use chrono::{DateTime, FixedOffset, TimeZone};
use rayon::prelude::*;

use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::{Container, Fill, Grid};
use crate::crop::Crop;
use crate::drying::bed::InitialMoisture;
use crate::drying::flow::FanEfficiency;
use crate::drying::heater::{Fuel, StrategySpec};
use crate::drying::material::CropMaterial;
use crate::drying::run::{RunSettings, StopRule};
use crate::load::{
    checked_heater, run_load, AirflowUpdates, FillSpec, LoadError, LoadSpec, Prices,
};
use crate::weather::series::WeatherSeries;

/// The wagon case's fixed settings.
#[derive(Debug, Clone)]
pub struct WagonCase {
    /// The container (its fill is replaced by a level fill `depth_m` deep).
    pub container: Arc<Container>,
    /// Depth of the level load, m (1.3 m published).
    pub depth_m: f64,
    /// Airflow, m³/min per m³ of peanuts (10 published).
    pub specific_airflow: f64,
    /// Initial kernel moisture, wet basis decimal.
    pub initial_kernel_wb: f64,
    /// Target kernel moisture, wet basis decimal.
    pub target_kernel_wb: f64,
    /// Grid.
    pub grid: Grid,
    /// Time step, s.
    pub dt_s: f64,
    /// Give up after, h.
    pub max_hours: f64,
    /// Weather.
    pub weather: Arc<WeatherSeries>,
}

/// Hours and propane of one start date.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct WagonResult {
    /// Hours to the mean kernel moisture at target (NaN if not reached).
    pub hours: f64,
    /// Propane burnt to that moment per tonne of peanuts loaded, L/t.
    pub litres_per_tonne: f64,
}

impl WagonCase {
    /// The published wagon on `container` under `weather`: 1.3 m level, 10 m³/min per m³, 20 → 10 %, a 4 × 2
    /// column grid of 13 layers (0.1 m) and 0.1 h steps (the coarse setting the season uses; the case is level and
    /// uniform, so columns differ only by the plenum's pressure).
    pub fn published(container: Container, weather: Arc<WeatherSeries>) -> Self {
        WagonCase {
            container: Arc::new(container),
            depth_m: 1.3,
            specific_airflow: 10.0,
            initial_kernel_wb: 0.20,
            target_kernel_wb: 0.10,
            grid: Grid {
                nx: 4,
                ny: 2,
                nz: 13,
            },
            dt_s: 360.0,
            max_hours: 120.0,
            weather,
        }
    }

    /// The load spec of one start under one heater strategy (checked against the crop's safety rule).
    pub fn spec(
        &self,
        crop: &Arc<Crop>,
        material: &Arc<CropMaterial>,
        start: DateTime<FixedOffset>,
        heater: StrategySpec,
    ) -> Result<LoadSpec, LoadError> {
        let mut container = (*self.container).clone();
        container.fill = Fill::Level {
            depth_m: self.depth_m,
        };
        let volume = container.length_m * container.width_m * self.depth_m;
        let (heater, _) = checked_heater(crop, heater, None, Fuel::propane(), false)
            .map_err(|e| crate::error::InputError::argument("heater", heater, &e.to_string()))?;
        Ok(LoadSpec {
            name: format!("wagon {start}"),
            crop: crop.clone(),
            material: material.clone(),
            container: Arc::new(container),
            fill: FillSpec::Container,
            flow: FlowSpec::Fixed {
                total_m3_per_s: self.specific_airflow * volume / 60.0,
            },
            efficiency: FanEfficiency {
                fan: 0.55,
                motor: 0.88,
            },
            heater,
            weather: self.weather.clone(),
            start,
            initial: InitialMoisture::Uniform(self.initial_kernel_wb),
            grid: self.grid,
            run: RunSettings {
                dt_s: self.dt_s,
                max_hours: self.max_hours,
                target_kernel_wb: self.target_kernel_wb,
                stop: StopRule::Mean,
                ..RunSettings::default()
            },
            airflow: AirflowUpdates::AtStart,
            prices: Prices {
                currency: "-".into(),
                fuel_per_unit: 0.0,
                electricity_per_kwh: 0.0,
                peanuts_per_tonne: 0.0,
            },
        })
    }

    /// Hours and propane per tonne of one start.
    pub fn run(
        &self,
        crop: &Arc<Crop>,
        start: DateTime<FixedOffset>,
        heater: StrategySpec,
    ) -> Result<WagonResult, LoadError> {
        let material = Arc::new(CropMaterial::new(crop));
        let spec = self.spec(crop, &material, start, heater)?;
        let r = run_load(&spec, &mut ())?;
        let o = &r.outcome;
        Ok(match o.at_mean_target {
            Some(t) => WagonResult {
                hours: t.hours,
                litres_per_tonne: t.fuel_used / (o.initial_mass_kg / 1000.0),
            },
            None => WagonResult {
                hours: f64::NAN,
                litres_per_tonne: f64::NAN,
            },
        })
    }

    /// Every start in order (runs in parallel; each run is independent, so results do not depend on the thread
    /// count).
    pub fn run_all(
        &self,
        crop: &Arc<Crop>,
        starts: &[DateTime<FixedOffset>],
        heater: StrategySpec,
    ) -> Result<Vec<WagonResult>, LoadError> {
        starts
            .par_iter()
            .map(|s| self.run(crop, *s, heater))
            .collect()
    }
}

/// `count` start dates `every_days` apart from day `first_day` of September 2026 (counted on past its end), air on
/// at 3 pm in UTC−5: the bundled TMY3 station's standard time, its year placed in 2026 by `input::wagon`.
pub fn september_starts(first_day: u32, count: u32, every_days: u32) -> Vec<DateTime<FixedOffset>> {
    let tz = FixedOffset::west_opt(5 * 3600).expect("5 h is a valid offset");
    let sep1 = tz
        .with_ymd_and_hms(2026, 9, 1, 15, 0, 0)
        .single()
        .expect("1 September 2026 exists");
    (0..count)
        .map(|i| {
            sep1 + chrono::Duration::days(
                i64::from(first_day) - 1 + i64::from(i) * i64::from(every_days),
            )
        })
        .collect()
}

/// Median of finite values (NaN if none); NaN entries (never reached target) count as above every finite value.
pub fn median(values: &[f64]) -> f64 {
    let mut v: Vec<f64> = values
        .iter()
        .map(|x| if x.is_finite() { *x } else { f64::INFINITY })
        .collect();
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}
