//! Over- and under-dried zones by mass. Inside each column the kernel moisture is taken as linear in the cumulative
//! dry mass between layer centres (and constant over the half-layers at the floor and the top), so the mass on either
//! side of a threshold moves continuously as the bed dries: two runs never report the same mass through a
//! coincidence of the grid, as whole-cell counting did. The same profile gives the fraction rule of the run (the
//! mass still above target), the whole-load zone figures and the zone maps (a top view per column and a side
//! section along the length, per layer, averaged across the width).
//!
//! The method is our own choice (stated in the outputs); the thresholds are the trade's (common practice, no source):
//! over-dried below 9 % kernel w.b., still wet above target + 0.5 point.

use ndarray::Array2;

use super::bed::{contiguous, BedState};
use super::layer::LayerMaterial;
use super::run::RunSettings;
use crate::units::{db_from_wb, wb_from_db};

/// Share of the segment from moisture `a` to `b` (linear between them) that lies below `threshold`.
fn share_below(a: f64, b: f64, threshold: f64) -> f64 {
    match (a < threshold, b < threshold) {
        (true, true) => 1.0,
        (false, false) => 0.0,
        (true, false) => (threshold - a) / (b - a),
        (false, true) => (a - threshold) / (a - b),
    }
}

/// Dry mass per m² of one column whose kernel moisture (dry basis) lies below `threshold_db`, with the profile
/// linear in cumulative dry mass between layer centres. `kernel_db` and `dry_matter` run from the floor up.
pub fn column_mass_below(kernel_db: &[f64], dry_matter: &[f64], threshold_db: f64) -> f64 {
    let n = kernel_db.len();
    // re-sliced to one length so the loop below needs no bounds checks
    let dry_matter = &dry_matter[..n];
    if n == 0 {
        return 0.0;
    }
    let end = |k: usize| {
        if kernel_db[k] < threshold_db {
            0.5 * dry_matter[k]
        } else {
            0.0
        }
    };
    let mut below = end(0) + end(n - 1);
    for k in 0..n - 1 {
        let span = 0.5 * (dry_matter[k] + dry_matter[k + 1]);
        below += span * share_below(kernel_db[k], kernel_db[k + 1], threshold_db);
    }
    below
}

/// The zone thresholds of a run, dry basis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Thresholds {
    /// Below this the kernels are over-dried.
    pub over_db: f64,
    /// The target.
    pub target_db: f64,
    /// Above this the kernels are still wet.
    pub under_db: f64,
}

impl Thresholds {
    /// From the run's settings.
    pub fn of(s: &RunSettings) -> Self {
        Thresholds {
            over_db: db_from_wb(s.over_dry_kernel_wb),
            target_db: db_from_wb(s.target_kernel_wb),
            under_db: db_from_wb(s.target_kernel_wb + s.under_dry_tolerance_wb),
        }
    }
}

/// Whole-load zone figures at one moment.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ZoneMasses {
    /// Dry matter of the load, kg.
    pub dry_matter_kg: f64,
    /// Dry matter over-dried (kernels below the over-dry threshold), kg.
    pub over_dried_dry_kg: f64,
    /// Dry matter still wet (kernels above target + tolerance), kg.
    pub still_wet_dry_kg: f64,
    /// Dry matter above target, kg (the fraction rule's measure).
    pub above_target_dry_kg: f64,
    /// Weight lost below what the over-dried part would weigh at target moisture (hulls in equilibrium with the
    /// kernels at the cell's temperature), kg: the over-dry shrink.
    pub shrink_kg: f64,
}

impl ZoneMasses {
    /// Share of the dry matter over-dried.
    pub fn over_fraction(&self) -> f64 {
        self.over_dried_dry_kg / self.dry_matter_kg
    }
    /// Share of the dry matter still wet.
    pub fn under_fraction(&self) -> f64 {
        self.still_wet_dry_kg / self.dry_matter_kg
    }
}

/// Zone figures of a bed (a serial pass over every cell; the run calls it only where it needs them).
pub fn zone_masses<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: &BedState,
    th: &Thresholds,
) -> ZoneMasses {
    let total = bed.dry_matter_kg();
    ZoneMasses {
        dry_matter_kg: total,
        over_dried_dry_kg: dry_kg_below(bed, th.over_db),
        still_wet_dry_kg: total - dry_kg_below(bed, th.under_db),
        above_target_dry_kg: total - dry_kg_below(bed, th.target_db),
        shrink_kg: shrink_kg(material, bed, th.target_db),
    }
}

/// Dry matter of the whole bed whose kernel moisture lies below `threshold_db`, kg (profile of [`column_mass_below`]
/// in every column).
pub fn dry_kg_below(bed: &BedState, threshold_db: f64) -> f64 {
    let per_m2: f64 = bed
        .kernel_db
        .lanes(ndarray::Axis(2))
        .into_iter()
        .zip(bed.dry_matter_kg_per_m2.lanes(ndarray::Axis(2)))
        .map(|(k, d)| column_mass_below(contiguous(&k), contiguous(&d), threshold_db))
        .sum();
    per_m2 * bed.column_area_m2
}

/// Over-dry shrink, kg: for every cell whose kernels are below target, the weight it would have with its kernels at
/// target (hulls in equilibrium with them at the cell's temperature) less its weight now.
pub fn shrink_kg<M: LayerMaterial + ?Sized>(material: &M, bed: &BedState, target_db: f64) -> f64 {
    let mut shrink = 0.0;
    for ((i, j, k), &dm) in bed.dry_matter_kg_per_m2.indexed_iter() {
        if bed.kernel_db[[i, j, k]] < target_db {
            let at_target =
                material.pod_db(material.initial_state(target_db, bed.temp_c[[i, j, k]]));
            let now = material.pod_db(bed.cell(i, j, k));
            shrink += dm * (at_target - now).max(0.0);
        }
    }
    shrink * bed.column_area_m2
}

/// Zone maps of a bed.
#[derive(Debug, Clone, PartialEq)]
pub struct ZoneMaps {
    /// Mean kernel moisture of each column, % w.b., `[nx, ny]`.
    pub top_kernel_pct: Array2<f64>,
    /// Share of each column's dry matter that is over-dried, `[nx, ny]`.
    pub top_over_fraction: Array2<f64>,
    /// Share of each column's dry matter that is still wet, `[nx, ny]`.
    pub top_under_fraction: Array2<f64>,
    /// Mean kernel moisture along the length per layer (averaged over the width), % w.b., `[nx, nz]`.
    pub side_kernel_pct: Array2<f64>,
    /// Zone code per side-section cell: −1 over-dried, 0 in range, +1 still wet (on the width-mean moisture).
    pub side_zone: Array2<i8>,
}

/// Build the zone maps (column shares from the same profile as [`zone_masses`]).
pub fn zone_maps(bed: &BedState, s: &RunSettings) -> ZoneMaps {
    let th = Thresholds::of(s);
    let (nx, ny, nz) = bed.dim();
    let mut top = Array2::zeros((nx, ny));
    let mut over = Array2::zeros((nx, ny));
    let mut under = Array2::zeros((nx, ny));
    for i in 0..nx {
        for j in 0..ny {
            let k = bed.kernel_db.slice(ndarray::s![i, j, ..]);
            let d = bed.dry_matter_kg_per_m2.slice(ndarray::s![i, j, ..]);
            let total = d.sum();
            top[[i, j]] = wb_from_db(k.dot(&d) / total) * 100.0;
            let (ks, ds) = (contiguous(&k), contiguous(&d));
            over[[i, j]] = column_mass_below(ks, ds, th.over_db) / total;
            under[[i, j]] = 1.0 - column_mass_below(ks, ds, th.under_db) / total;
        }
    }
    let mut side = Array2::zeros((nx, nz));
    let mut side_zone = Array2::zeros((nx, nz));
    for i in 0..nx {
        for k in 0..nz {
            let m = bed.kernel_db.slice(ndarray::s![i, .., k]);
            let d = bed.dry_matter_kg_per_m2.slice(ndarray::s![i, .., k]);
            let mean = m.dot(&d) / d.sum();
            side[[i, k]] = wb_from_db(mean) * 100.0;
            side_zone[[i, k]] = if mean < th.over_db {
                -1
            } else if mean > th.under_db {
                1
            } else {
                0
            };
        }
    }
    ZoneMaps {
        top_kernel_pct: top,
        top_over_fraction: over,
        top_under_fraction: under,
        side_kernel_pct: side,
        side_zone,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ndarray::arr1;

    #[test]
    fn a_linear_profile_splits_at_the_crossing() {
        // Four equal layers, moisture 0.08, 0.10, 0.12, 0.14: centres at mass 0.5, 1.5, 2.5, 3.5 of 4. Linear
        // between centres, so 0.11 lies at mass 2.0: half the column is below it.
        let m = arr1(&[0.08, 0.10, 0.12, 0.14]);
        let d = arr1(&[1.0, 1.0, 1.0, 1.0]);
        assert!(
            (column_mass_below(m.as_slice().unwrap(), d.as_slice().unwrap(), 0.11) - 2.0).abs()
                < 1e-12
        );
        // At the driest centre nothing is below (the end half-layer is constant); above the wettest, everything.
        assert!(
            column_mass_below(m.as_slice().unwrap(), d.as_slice().unwrap(), 0.08).abs() < 1e-15
        );
        assert!(
            (column_mass_below(m.as_slice().unwrap(), d.as_slice().unwrap(), 0.20) - 4.0).abs()
                < 1e-15
        );
    }

    #[test]
    fn the_mass_below_moves_continuously_as_a_layer_crosses() {
        // One layer's moisture passes through the threshold: whole-cell counting would jump by a layer's mass.
        let d = arr1(&[1.0, 1.0, 1.0]);
        let at = |x: f64| column_mass_below(&[0.08, x, 0.14], d.as_slice().unwrap(), 0.10);
        let (a, b) = (at(0.10 - 1e-9), at(0.10 + 1e-9));
        assert!((a - b).abs() < 1e-6, "{a} vs {b}");
    }
}
