//! What a season reads: the buying point's file, its arrivals file, and the crop, containers and fans its dryers
//! name, built into the [`LoadTemplate`] every load of the season is dried from.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use chrono::{DateTime, FixedOffset};

use super::field_err;
use super::scenario::{
    fuel_named, read_container, read_crop, read_fan, DEFAULT_FAN_EFFICIENCY,
    DEFAULT_MOTOR_EFFICIENCY,
};
use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::Grid;
use crate::drying::flow::FanEfficiency;
use crate::drying::material::CropMaterial;
use crate::drying::run::RunSettings;
use crate::error::InputError;
use crate::input::read_text;
use crate::load::{AirflowUpdates, Prices};
use crate::season::arrivals::{parse_arrivals_csv, Load};
use crate::season::drier::LoadTemplate;
use crate::season::scenario::BuyingPoint;
use crate::weather::series::WeatherSeries;

/// Read and validate a buying point's file.
pub fn read_buying_point(path: &Path) -> Result<BuyingPoint, InputError> {
    BuyingPoint::from_json(path, &read_text(path)?)
}

/// Read an arrivals CSV file (see [`parse_arrivals_csv`]), refusing arrivals outside `range` when given.
pub fn read_arrivals_csv(
    path: &Path,
    range: Option<(DateTime<FixedOffset>, DateTime<FixedOffset>)>,
) -> Result<Vec<Load>, InputError> {
    let text = read_text(path)?;
    parse_arrivals_csv(path, text.as_bytes(), range)
}

/// The season's settings of every load's run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SeasonRunSettings {
    /// Grid of each load's bed.
    pub grid: Grid,
    /// Time step, s.
    pub dt_s: f64,
    /// When the airflow is re-solved.
    pub airflow: AirflowUpdates,
    /// Let heaters above the crop's safe limits run.
    pub force: bool,
}

impl Default for SeasonRunSettings {
    /// Coarse and fast: a 4 × 2 × 10 grid, 0.2 h steps, the airflow solved once at each load's start (the
    /// season's accuracy is checked against the full model in `tests/season_resolution.rs`).
    fn default() -> Self {
        SeasonRunSettings {
            grid: Grid {
                nx: 4,
                ny: 2,
                nz: 10,
            },
            dt_s: 0.2 * 3600.0,
            airflow: AirflowUpdates::AtStart,
            force: false,
        }
    }
}

/// Load the crop, and every container and fan the buying point's dryers name; returns the template and the
/// files read.
pub fn season_template(
    bp: &BuyingPoint,
    bp_path: &Path,
    crop: &str,
    weather: Arc<WeatherSeries>,
    settings: &SeasonRunSettings,
) -> Result<(LoadTemplate, Vec<PathBuf>), InputError> {
    let (crop, crop_path) = read_crop(None, crop, "--crop")?;
    let mut inputs = vec![crop_path];
    let mut containers = BTreeMap::new();
    let mut fans = BTreeMap::new();
    for (i, d) in bp.dryers.iter().enumerate() {
        let named = |field: &str| {
            let field = format!("dryers[{i}].{field}");
            move |e: InputError| field_err(bp_path, field, e.to_string())
        };
        if !containers.contains_key(&d.container) {
            let (c, p) = read_container(Some(bp_path), &d.container, "container")
                .map_err(named("container"))?;
            containers.insert(d.container.clone(), Arc::new(c));
            inputs.push(p);
        }
        if !fans.contains_key(&d.fan) {
            let (f, p) = read_fan(Some(bp_path), &d.fan, "fan").map_err(named("fan"))?;
            fans.insert(d.fan.clone(), FlowSpec::Fan(f));
            inputs.push(p);
        }
    }
    let run = RunSettings {
        dt_s: settings.dt_s,
        max_hours: 120.0,
        target_kernel_wb: bp.rules.target_kernel_pct / 100.0,
        stop: bp.rules.stop_rule,
        safe_rate_pct_per_h: crop.safety.max_drying_rate_pct_wb_per_h,
        // a season keeps each load's hours, fuel and shrink, not its balances
        adiabatic_bound: false,
        ..RunSettings::default()
    };
    let template = LoadTemplate {
        material: Arc::new(CropMaterial::new(&crop)),
        crop: Arc::new(crop),
        weather,
        containers,
        fans,
        efficiency: FanEfficiency {
            fan: DEFAULT_FAN_EFFICIENCY,
            motor: DEFAULT_MOTOR_EFFICIENCY,
        },
        fuel: fuel_named(bp_path, "fuel", &bp.fuel)?,
        prices: Prices {
            currency: bp.prices.currency.clone(),
            fuel_per_unit: bp.prices.propane_per_l,
            electricity_per_kwh: bp.prices.electricity_per_kwh,
            peanuts_per_tonne: bp.prices.peanuts_per_tonne,
        },
        grid: settings.grid,
        run,
        airflow: settings.airflow,
        force: settings.force,
    };
    Ok((template, inputs))
}

/// Read a sweep shard file and check it on its own (the merge checks that shards belong together); errors name the
/// file, the field and, where found, its line.
pub fn read_shard(
    path: &Path,
) -> Result<(crate::season::shard::ShardFile, crate::season::sweep::Shard), InputError> {
    let text = read_text(path)?;
    let file: crate::season::shard::ShardFile = crate::input::parse_json(path, &text)?;
    match file.check(path) {
        Ok((shard, _)) => Ok((file, shard)),
        Err(e) => Err(crate::input::with_json_line(e, path, &text)),
    }
}
