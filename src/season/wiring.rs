//! The season planner's deep-bed drier built from the real models: the crop's layer material, the weather series
//! from each load's start, and the airflow solver for each dryer's container and fan, solved for a level bed at the
//! load's depth on the season's (coarse) grid and cached per (container, fan, depth to the millimetre). Each load
//! keeps its airflow field for its whole run at this resolution (no re-solve), a simplification the season's
//! accuracy check measures against the full single-load model.

use std::collections::{BTreeMap, HashMap};
use std::sync::Mutex;

use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::{Container, Fill, Grid};
use crate::airflow::solve::{solve, SolverSettings};
use crate::crop::Crop;
use crate::drying::ambient::SeriesAmbient;
use crate::drying::flow::{field_from_solution, FanEfficiency};
use crate::drying::heater::Fuel;
use crate::drying::material::CropMaterial;
use crate::drying::run::{Ambient, FixedFlow, FlowField, FlowProvider, RunSettings, StopRule};
use crate::error::InputError;
use crate::scenario::{
    bed_law, read_container, read_fan, DEFAULT_FAN_EFFICIENCY, DEFAULT_MOTOR_EFFICIENCY,
};
use crate::season::drier::{ContainerSpec, DeepBedDrier};
use crate::season::scenario::BuyingPoint;
use crate::weather::series::WeatherSeries;

/// The models a season's deep-bed drier needs, loaded once.
pub struct SeasonModels {
    /// Crop.
    pub crop: Crop,
    /// Crop as the layer step sees it.
    pub material: CropMaterial,
    /// Containers by the names the buying point uses.
    pub containers: BTreeMap<String, Container>,
    /// Fan curves by name.
    pub fans: BTreeMap<String, FlowSpec>,
    /// Weather.
    pub weather: WeatherSeries,
    /// Season grid (columns × layers per dryer).
    pub grid: Grid,
    /// Fan and motor efficiency.
    pub efficiency: FanEfficiency,
    cache: Mutex<HashMap<(String, String, i64), FlowField>>,
}

impl SeasonModels {
    /// Load the crop, and every container and fan the buying point names.
    pub fn load(
        bp: &BuyingPoint,
        crop: Crop,
        weather: WeatherSeries,
        grid: Grid,
    ) -> Result<Self, InputError> {
        let mut containers = BTreeMap::new();
        let mut fans = BTreeMap::new();
        for d in &bp.dryers {
            if !containers.contains_key(&d.container) {
                containers.insert(
                    d.container.clone(),
                    read_container(&d.container, &format!("dryer {} container", d.id))?,
                );
            }
            if !fans.contains_key(&d.fan) {
                fans.insert(
                    d.fan.clone(),
                    FlowSpec::Fan(read_fan(&d.fan, &format!("dryer {} fan", d.id))?),
                );
            }
        }
        let material = CropMaterial::new(&crop);
        Ok(SeasonModels {
            crop,
            material,
            containers,
            fans,
            weather,
            grid,
            efficiency: FanEfficiency {
                fan: DEFAULT_FAN_EFFICIENCY,
                motor: DEFAULT_MOTOR_EFFICIENCY,
            },
            cache: Mutex::new(HashMap::new()),
        })
    }

    fn flow_for(&self, container: &str, fan: &str, depth_m: f64) -> Result<FlowField, String> {
        let key = (
            container.to_string(),
            fan.to_string(),
            (depth_m * 1000.0).round() as i64,
        );
        if let Some(f) = self.cache.lock().expect("flow cache lock").get(&key) {
            return Ok(f.clone());
        }
        let mut c = self
            .containers
            .get(container)
            .ok_or_else(|| format!("unknown container {container:?}"))?
            .clone();
        c.fill = Fill::Level {
            depth_m: key.2 as f64 / 1000.0,
        };
        let flow = self
            .fans
            .get(fan)
            .ok_or_else(|| format!("unknown fan {fan:?}"))?;
        // Airflow at standard-ish air (25 °C, 70 %); the run converts to the hour's air density.
        let air =
            crate::props::psychro::AirState::from_rh(25.0, 0.7, crate::props::psychro::P_STD_PA);
        let settings = SolverSettings {
            grid: self.grid,
            ..SolverSettings::default()
        };
        let air = crate::airflow::AirPath::same(air);
        let sol =
            solve(&c, flow, &bed_law(&self.crop), &air, &settings).map_err(|e| e.to_string())?;
        let field = field_from_solution(&sol, &air, self.efficiency);
        self.cache
            .lock()
            .expect("flow cache lock")
            .insert(key, field.clone());
        Ok(field)
    }

    /// The deep-bed drier over these models.
    pub fn drier(&self, target_kernel_pct: f64) -> DeepBedDrier<'_, CropMaterial> {
        let containers = self
            .containers
            .iter()
            .map(|(name, c)| {
                (
                    name.clone(),
                    ContainerSpec {
                        length_m: c.length_m,
                        width_m: c.width_m,
                        max_depth_m: c.wall_height_m,
                        bulk_density_kg_per_m3: self.crop.thermal.bulk_density_kg_per_m3,
                        nx: self.grid.nx,
                        ny: self.grid.ny,
                        nz: self.grid.nz,
                    },
                )
            })
            .collect();
        let weather = &self.weather;
        DeepBedDrier {
            material: &self.material,
            containers,
            ambient: Box::new(move |start| {
                weather.at(start).ok()?;
                Some(Box::new(SeriesAmbient {
                    series: weather,
                    start,
                }) as Box<dyn Ambient>)
            }),
            flow: Box::new(move |dryer, bed| {
                let depth = bed.depth_m.iter().cloned().fold(0.0, f64::max);
                let field = self.flow_for(&dryer.container, &dryer.fan, depth)?;
                Ok(Box::new(FixedFlow(field)) as Box<dyn FlowProvider>)
            }),
            settings: RunSettings {
                dt_s: 0.2 * 3600.0,
                max_hours: 120.0,
                target_kernel_wb: target_kernel_pct / 100.0,
                stop: StopRule::Mean,
                ..RunSettings::default()
            },
            max_plenum_c: self.crop.safety.max_plenum_temp_c,
            fuel: Fuel::propane(),
        }
    }
}
