//! Moisture and plenum readings, what the simulated bed says at a reading's place, and the adjustment of the bed to
//! the readings.

use chrono::{DateTime, FixedOffset};
use ndarray::Array3;

use crate::drying::bed::BedState;
use crate::drying::layer::LayerMaterial;
use crate::units::{db_from_wb, wb_from_db};

/// What the meter measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Part {
    /// Kernels (shelled sample).
    Kernel,
    /// Whole pods (hull and kernel).
    Pod,
}

/// Where the sample was taken.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Place {
    /// A composite of the whole load (mass-weighted over every cell).
    Composite,
    /// One probe: along the container's length and across its width (0–1 from the front left corner), at a depth
    /// below the surface, m.
    At {
        /// Along the length, 0–1.
        along: f64,
        /// Across the width, 0–1.
        across: f64,
        /// Depth below the bed's surface, m.
        depth_m: f64,
    },
}

/// One moisture reading.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Reading {
    /// When it was taken.
    pub time: DateTime<FixedOffset>,
    /// Moisture, wet basis decimal.
    pub moisture_wb: f64,
    /// The meter's accuracy, ± wet basis decimal.
    pub accuracy_wb: f64,
    /// Kernel or pod.
    pub part: Part,
    /// Where.
    pub place: Place,
    /// The meter, as the operator names it (a free label).
    pub meter: String,
}

/// One plenum reading.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct PlenumReading {
    /// When.
    pub time: DateTime<FixedOffset>,
    /// Dry bulb, °C.
    pub t_c: f64,
    /// Relative humidity, decimal, if read.
    pub rh: Option<f64>,
}

/// A reading against the simulated bed.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ReadingCheck {
    /// The reading, wet basis decimal.
    pub reading_wb: f64,
    /// The replay at the reading's time and place, before adjusting.
    pub replay_wb: f64,
    /// The adjusted bed at the same place, carried back to the reading's time along the replay's drying since.
    pub adjusted_wb: f64,
    /// Whether the replay was within the reading's accuracy.
    pub replay_within: bool,
}

/// The cells a reading samples: `(i, j, k)` ranges.
fn cells(bed: &BedState, place: &Place) -> Vec<(usize, usize, usize)> {
    let (nx, ny, nz) = bed.dim();
    match *place {
        Place::Composite => (0..nx)
            .flat_map(|i| (0..ny).flat_map(move |j| (0..nz).map(move |k| (i, j, k))))
            .collect(),
        Place::At {
            along,
            across,
            depth_m,
        } => {
            let i = ((along * nx as f64) as usize).min(nx - 1);
            let j = ((across * ny as f64) as usize).min(ny - 1);
            vec![(i, j, layer_at(bed, i, j, depth_m))]
        }
    }
}

/// The layer holding the point `depth_m` below the surface of column `(i, j)`.
fn layer_at(bed: &BedState, i: usize, j: usize, depth_m: f64) -> usize {
    let nz = bed.dim().2;
    let d = bed.depth_m[[i, j]];
    let from_floor = (d - depth_m).clamp(0.0, d);
    ((from_floor / d * nz as f64) as usize).min(nz - 1)
}

/// What the bed says a reading of `part` at `place` would show, wet basis decimal (dry-matter-weighted over the
/// sampled cells, as a composite sample mixes them).
pub fn sample<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: &BedState,
    part: Part,
    place: &Place,
) -> f64 {
    let (mut sum, mut dm) = (0.0, 0.0);
    for (i, j, k) in cells(bed, place) {
        let d = bed.dry_matter_kg_per_m2[[i, j, k]];
        let m = match part {
            Part::Kernel => bed.kernel_db[[i, j, k]],
            Part::Pod => material.pod_db(bed.cell(i, j, k)),
        };
        sum += m * d;
        dm += d;
    }
    wb_from_db(sum / dm)
}

/// How far `value` lies outside `reading ± accuracy` (0 inside), wet basis decimal.
pub fn outside_band(value: f64, r: &Reading) -> f64 {
    let (lo, hi) = (r.moisture_wb - r.accuracy_wb, r.moisture_wb + r.accuracy_wb);
    if value < lo {
        value - lo
    } else if value > hi {
        value - hi
    } else {
        0.0
    }
}

/// Sweeps of the adjustment at most (each sweep visits every reading once).
const MAX_SWEEPS: usize = 200;
/// The adjustment stops when no reading is further than this outside its band, wet basis decimal (0.0001
/// percentage points: far below any meter's resolution).
const BAND_TOL_WB: f64 = 1e-6;

/// Scale the moisture (hull, kernel and drying-curve start, by the same factor) of every cell by
/// `exp(g · weight(cell))`.
fn scale(bed: &mut BedState, g: f64, weight: &Array3<f64>) {
    for (((h, k), c), w) in bed
        .hull_db
        .iter_mut()
        .zip(bed.kernel_db.iter_mut())
        .zip(bed.curve_start_db.iter_mut())
        .zip(weight.iter())
    {
        let f = (g * w).exp();
        *h *= f;
        *k *= f;
        *c *= f;
    }
}

/// The weight of a reading's correction in each cell: a composite moves every cell alike; a probe moves the layers
/// within half the bed's depth of its own, fading linearly to nothing (a probe stands for its depth across the
/// whole floor, since the airflow makes a deep bed's moisture vary with depth far more than across the floor).
fn weight(bed: &BedState, place: &Place) -> Array3<f64> {
    let (nx, ny, nz) = bed.dim();
    match *place {
        Place::Composite => Array3::from_elem((nx, ny, nz), 1.0),
        Place::At { .. } => {
            let (_, _, k0) = cells(bed, place)[0];
            let half = (nz as f64 / 2.0).max(1.0);
            Array3::from_shape_fn((nx, ny, nz), |(_, _, k)| {
                (1.0 - (k as f64 - k0 as f64).abs() / half).max(0.0)
            })
        }
    }
}

/// Adjust `bed` so that every reading agrees with it within its accuracy, changing it as little as the readings
/// allow: readings are visited in turn (a sweep), each moving the moisture of the cells it stands for by the
/// factor that brings its value to the near edge of its band; sweeps repeat until all agree (readings that
/// overlap converge as alternating projections do) or `MAX_SWEEPS` pass. A replay already within every
/// band is left exactly as it was. Returns the largest distance still outside a band (0 when all agree).
pub fn adjust<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: &mut BedState,
    readings: &[Reading],
) -> f64 {
    let weights: Vec<Array3<f64>> = readings.iter().map(|r| weight(bed, &r.place)).collect();
    for _ in 0..MAX_SWEEPS {
        let mut worst = 0.0f64;
        for (r, w) in readings.iter().zip(&weights) {
            let now = sample(material, bed, r.part, &r.place);
            let off = outside_band(now, r);
            worst = worst.max(off.abs());
            if off.abs() > BAND_TOL_WB {
                let goal = now - off;
                scale(bed, (db_from_wb(goal) / db_from_wb(now)).ln(), w);
            }
        }
        if worst <= BAND_TOL_WB {
            return 0.0;
        }
    }
    readings
        .iter()
        .map(|r| outside_band(sample(material, bed, r.part, &r.place), r).abs())
        .fold(0.0, f64::max)
}
