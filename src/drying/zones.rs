//! Where over- and under-dried zones lie at the end of a run: a top view (per column) and a side section (along the
//! length, per layer, averaged across the width), each as mass-weighted kernel moisture and zone shares.

use ndarray::Array2;

use super::bed::BedState;
use super::run::RunSettings;
use crate::units::{db_from_wb, wb_from_db};

/// Zone maps of a bed.
#[derive(Debug, Clone, PartialEq)]
pub struct ZoneMaps {
    /// Mean kernel moisture of each column, % w.b., `[nx, ny]`.
    pub top_kernel_pct: Array2<f64>,
    /// Share of each column's dry matter that is over-dried, `[nx, ny]`.
    pub top_over_fraction: Array2<f64>,
    /// Share of each column's dry matter that is under-dried, `[nx, ny]`.
    pub top_under_fraction: Array2<f64>,
    /// Mean kernel moisture along the length per layer (averaged over the width), % w.b., `[nx, nz]`.
    pub side_kernel_pct: Array2<f64>,
    /// Zone code per side-section cell: −1 over-dried, 0 in range, +1 under-dried (on the width-mean moisture).
    pub side_zone: Array2<i8>,
}

/// Build the zone maps.
pub fn zone_maps(bed: &BedState, s: &RunSettings) -> ZoneMaps {
    let (nx, ny, nz) = bed.dim();
    let over_db = db_from_wb(s.over_dry_kernel_wb);
    let under_db = db_from_wb(s.target_kernel_wb + s.under_dry_tolerance_wb);
    let mut top = Array2::zeros((nx, ny));
    let mut over = Array2::zeros((nx, ny));
    let mut under = Array2::zeros((nx, ny));
    let mut side = Array2::zeros((nx, nz));
    let mut side_zone = Array2::zeros((nx, nz));
    for i in 0..nx {
        for j in 0..ny {
            let (mut w, mut d, mut o, mut u) = (0.0, 0.0, 0.0, 0.0);
            for k in 0..nz {
                let dm = bed.dry_matter_kg_per_m2[[i, j, k]];
                let m = bed.kernel_db[[i, j, k]];
                w += m * dm;
                d += dm;
                if m < over_db {
                    o += dm;
                }
                if m > under_db {
                    u += dm;
                }
            }
            top[[i, j]] = wb_from_db(w / d) * 100.0;
            over[[i, j]] = o / d;
            under[[i, j]] = u / d;
        }
        for k in 0..nz {
            let (mut w, mut d) = (0.0, 0.0);
            for j in 0..ny {
                let dm = bed.dry_matter_kg_per_m2[[i, j, k]];
                w += bed.kernel_db[[i, j, k]] * dm;
                d += dm;
            }
            let m = w / d;
            side[[i, k]] = wb_from_db(m) * 100.0;
            side_zone[[i, k]] = if m < over_db {
                -1
            } else if m > under_db {
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
