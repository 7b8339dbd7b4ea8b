//! The run's time series: one row every recording interval (and at the end), with the bed's moisture and
//! temperature figures and the air at each point of the path.

use ndarray::{Array3, Zip};

use super::bed::BedState;
use super::layer::LayerMaterial;
use super::run::AmbientSample;
use crate::props::psychro::AirState;
use crate::units::wb_from_db;

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
    /// Share of the dry matter still above target, %.
    pub above_target_pct: f64,
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

/// The air along the path at a recorded moment (`None` before the first step).
#[derive(Debug, Clone, Copy)]
pub struct PathAir {
    /// Plenum air.
    pub plenum: AirState,
    /// Flow-weighted exhaust.
    pub exhaust: AirState,
    /// Burner heat, W.
    pub heat_w: f64,
}

/// A row for the bed as it is at `hours`.
pub fn record<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: &BedState,
    hours: f64,
    above_target_fraction: f64,
    sample: &AmbientSample,
    air: Option<PathAir>,
    fan_electric_w: f64,
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
    let air = air.unwrap_or(PathAir {
        plenum: sample.air,
        exhaust: AirState {
            t_c: f64::NAN,
            ..sample.air
        },
        heat_w: 0.0,
    });
    let exhaust = air.exhaust;
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
        above_target_pct: above_target_fraction * 100.0,
        ambient_c: sample.air.t_c,
        ambient_rh_pct: sample.air.rh() * 100.0,
        plenum_c: air.plenum.t_c,
        plenum_rh_pct: air.plenum.rh() * 100.0,
        exhaust_c: exhaust.t_c,
        exhaust_rh_pct: if exhaust.t_c.is_finite() {
            exhaust.rh() * 100.0
        } else {
            f64::NAN
        },
        heat_kw: air.heat_w / 1000.0,
        fan_kw: fan_electric_w / 1000.0,
        max_peanut_c: bed.temp_c.iter().cloned().fold(f64::MIN, f64::max),
    }
}
