//! The state of a load: hull and kernel moisture (dry basis) and peanut temperature in every cell, with the pod
//! dry matter each cell holds. Cells are indexed `[x, y, z]`: columns over the floor, layers bottom (z = 0) to top.
//! Each column's depth is split into `nz` equal layers (a terrain-following grid), so an uneven fill keeps the same
//! layer count everywhere.

use ndarray::{Array2, Array3, ArrayView1, Axis, Zip};

use super::layer::{CellMoisture, LayerMaterial};
use crate::error::{check_range, InputError};
use crate::units::{db_from_wb, wb_from_db};

/// A column (a lane along the layers) of a bed array as a slice: the bed's arrays are built in standard layout, so
/// each column's layers are contiguous.
pub fn contiguous<'a>(column: &ArrayView1<'a, f64>) -> &'a [f64] {
    column
        .to_slice()
        .expect("bed arrays are in standard layout")
}

/// Moisture, temperature and dry matter of every cell of a load.
#[derive(Debug, Clone, PartialEq)]
pub struct BedState {
    /// Hull moisture, kg water / kg hull dry matter, `[nx, ny, nz]`.
    pub hull_db: Array3<f64>,
    /// Kernel moisture, kg water / kg kernel dry matter.
    pub kernel_db: Array3<f64>,
    /// Start of each cell's present drying curve, dry basis (see `layer::CellMoisture`).
    pub curve_start_db: Array3<f64>,
    /// Peanut temperature, °C.
    pub temp_c: Array3<f64>,
    /// Pod dry matter per cell per m² of floor, kg/m².
    pub dry_matter_kg_per_m2: Array3<f64>,
    /// Floor area of one column, m².
    pub column_area_m2: f64,
    /// Fill depth of each column, m, `[nx, ny]`.
    pub depth_m: Array2<f64>,
}

/// How moisture varies through a fresh load.
#[derive(Debug, Clone, PartialEq)]
pub enum InitialMoisture {
    /// The same kernel moisture (wet basis, decimal) everywhere.
    Uniform(f64),
    /// Kernel moisture (wet basis, decimal) rising or falling linearly from the bottom layer to the top layer.
    Layered {
        /// Bottom layer, wet basis decimal.
        bottom_wb: f64,
        /// Top layer, wet basis decimal.
        top_wb: f64,
    },
    /// Kernel moisture (wet basis, decimal) given for every cell, `[nx, ny, nz]` (zones of a load that differ).
    Cells(ndarray::Array3<f64>),
    /// A load already on air, resumed from its whole state (hull, kernel, curve start, temperature, dry matter):
    /// the status of a load from the operator's readings (`status`). The bed must have the grid's shape and
    /// the depths the container gives.
    Resumed(std::sync::Arc<BedState>),
}

impl InitialMoisture {
    fn kernel_wb(&self, (i, j, k): (usize, usize, usize), nz: usize) -> f64 {
        match *self {
            InitialMoisture::Uniform(m) => m,
            InitialMoisture::Cells(ref a) => a[[i, j, k]],
            InitialMoisture::Resumed(ref b) => wb_from_db(b.kernel_db[[i, j, k]]),
            InitialMoisture::Layered { bottom_wb, top_wb } => {
                let f = if nz > 1 {
                    k as f64 / (nz - 1) as f64
                } else {
                    0.5
                };
                bottom_wb + f * (top_wb - bottom_wb)
            }
        }
    }
}

impl BedState {
    /// A fresh load: `depth_m` per column, `nz` layers, dry-matter bulk density `dry_density_kg_per_m3`, kernel
    /// moisture from `initial`, hulls in equilibrium with their kernels, everything at `temp_c`.
    pub fn new<M: LayerMaterial + ?Sized>(
        material: &M,
        depth_m: Array2<f64>,
        column_area_m2: f64,
        nz: usize,
        dry_density_kg_per_m3: f64,
        initial: &InitialMoisture,
        temp_c: f64,
    ) -> Result<Self, InputError> {
        let (nx, ny) = depth_m.dim();
        if nx == 0 || ny == 0 || nz == 0 {
            return Err(InputError::argument(
                "grid",
                format!("{nx} × {ny} × {nz}"),
                "must have at least one cell",
            ));
        }
        if let Some(d) = depth_m.iter().find(|d| !(d.is_finite() && **d > 0.0)) {
            return Err(InputError::argument(
                "fill depth",
                format!("{d} m"),
                "must be positive",
            ));
        }
        check_range("column area", column_area_m2, 1e-6, 1e6, "m²")?;
        check_range(
            "dry-matter density",
            dry_density_kg_per_m3,
            10.0,
            2000.0,
            "kg/m³",
        )?;
        check_range("initial peanut temperature", temp_c, -20.0, 60.0, "°C")?;
        if let InitialMoisture::Resumed(b) = initial {
            return Self::resumed(b, &depth_m, column_area_m2, nz);
        }
        match initial {
            InitialMoisture::Cells(a) if a.dim() != (nx, ny, nz) => {
                return Err(InputError::argument(
                    "initial moisture map",
                    format!("{:?}", a.dim()),
                    &format!("must have the bed's shape {:?}", (nx, ny, nz)),
                ));
            }
            _ => {}
        }
        for (idx, _) in depth_m.indexed_iter() {
            for k in 0..nz {
                let m = initial.kernel_wb((idx.0, idx.1, k), nz);
                check_range("initial kernel moisture", m * 100.0, 1.0, 60.0, "% w.b.")?;
            }
        }
        let mut hull = Array3::zeros((nx, ny, nz));
        let mut kernel = Array3::zeros((nx, ny, nz));
        let mut start = Array3::zeros((nx, ny, nz));
        let mut dm = Array3::zeros((nx, ny, nz));
        for ((i, j, k), v) in dm.indexed_iter_mut() {
            *v = dry_density_kg_per_m3 * depth_m[[i, j]] / nz as f64;
            let cell = material.initial_state(db_from_wb(initial.kernel_wb((i, j, k), nz)), temp_c);
            hull[[i, j, k]] = cell.hull_db;
            kernel[[i, j, k]] = cell.kernel_db;
            start[[i, j, k]] = cell.curve_start_db;
        }
        Ok(BedState {
            hull_db: hull,
            kernel_db: kernel,
            curve_start_db: start,
            temp_c: Array3::from_elem((nx, ny, nz), temp_c),
            dry_matter_kg_per_m2: dm,
            column_area_m2,
            depth_m,
        })
    }

    /// A resumed bed, checked against the grid and depths it is to run on.
    fn resumed(
        bed: &BedState,
        depth_m: &Array2<f64>,
        column_area_m2: f64,
        nz: usize,
    ) -> Result<Self, InputError> {
        let (nx, ny) = depth_m.dim();
        let same_depths = bed.depth_m.dim() == (nx, ny)
            && (bed.depth_m.iter().zip(depth_m.iter())).all(|(a, b)| (a - b).abs() <= 1e-9 * b);
        if bed.dim() != (nx, ny, nz)
            || !same_depths
            || (bed.column_area_m2 - column_area_m2).abs() > 1e-9 * column_area_m2
        {
            return Err(InputError::argument(
                "resumed bed",
                format!("{:?}", bed.dim()),
                &format!(
                    "must have the grid's shape {:?} and the container's depths",
                    (nx, ny, nz)
                ),
            ));
        }
        Ok(bed.clone())
    }

    /// Grid shape `(nx, ny, nz)`.
    pub fn dim(&self) -> (usize, usize, usize) {
        self.hull_db.dim()
    }

    /// Moisture of one cell.
    pub fn cell(&self, i: usize, j: usize, k: usize) -> CellMoisture {
        CellMoisture {
            hull_db: self.hull_db[[i, j, k]],
            kernel_db: self.kernel_db[[i, j, k]],
            curve_start_db: self.curve_start_db[[i, j, k]],
        }
    }

    /// Total pod dry matter, kg.
    pub fn dry_matter_kg(&self) -> f64 {
        self.dry_matter_kg_per_m2.sum() * self.column_area_m2
    }

    /// Totals of every column, x-major then y (the order of the columns in memory).
    pub fn column_totals<'a, M: LayerMaterial + ?Sized>(
        &'a self,
        material: &'a M,
    ) -> impl Iterator<Item = ColumnTotals> + 'a {
        let lanes = |a: &'a Array3<f64>| a.lanes(Axis(2)).into_iter();
        lanes(&self.hull_db)
            .zip(lanes(&self.kernel_db))
            .zip(lanes(&self.curve_start_db))
            .zip(lanes(&self.temp_c))
            .zip(lanes(&self.dry_matter_kg_per_m2))
            .map(move |((((h, k), c), t), d)| {
                let [h, k, c, t, d] = [h, k, c, t, d].map(|v| contiguous(&v));
                ColumnTotals::of(material, h, k, c, t, d)
            })
    }

    /// Total water held, kg.
    pub fn water_kg<M: LayerMaterial + ?Sized>(&self, material: &M) -> f64 {
        let sum: f64 = self
            .column_totals(material)
            .map(|c| c.pod_water_kg_per_m2)
            .sum();
        sum * self.column_area_m2
    }

    /// Mass-weighted mean kernel moisture, wet basis decimal (the trade's moisture).
    pub fn mean_kernel_wb<M: LayerMaterial + ?Sized>(&self, material: &M) -> f64 {
        let weighted: f64 = self
            .column_totals(material)
            .map(|c| c.kernel_db_dm_kg_per_m2)
            .sum();
        ColumnTotals::mean_kernel_wb(weighted, self.dry_matter_kg_per_m2.sum())
    }

    /// Kernel moisture (wet basis) below which the given mass fraction of the load lies: `quantile(0.9)` is the
    /// moisture that the driest 90 % of the dry matter are at or below.
    pub fn kernel_wb_quantile(&self, fraction: f64) -> f64 {
        let mut cells: Vec<(f64, f64)> = self
            .kernel_db
            .iter()
            .zip(self.dry_matter_kg_per_m2.iter())
            .map(|(&m, &d)| (m, d))
            .collect();
        cells.sort_by(|a, b| a.0.total_cmp(&b.0));
        let total: f64 = cells.iter().map(|c| c.1).sum();
        let mut acc = 0.0;
        for (m, d) in &cells {
            acc += d;
            if acc >= fraction * total - 1e-12 * total {
                return wb_from_db(*m);
            }
        }
        cells.last().map(|c| wb_from_db(c.0)).unwrap_or(0.0)
    }

    /// Total heat held by the peanuts and their water above 0 °C, J (sensible only).
    pub fn sensible_heat_j<M: LayerMaterial + ?Sized>(&self, material: &M) -> f64 {
        let cp_dm = material.cp_dry_j_per_kg_k();
        let sum = Zip::from(&self.hull_db)
            .and(&self.kernel_db)
            .and(&self.curve_start_db)
            .and(&self.dry_matter_kg_per_m2)
            .and(&self.temp_c)
            .fold(
                0.0,
                |sum, &hull_db, &kernel_db, &curve_start_db, &dm, &t| {
                    let pod = material.pod_db(CellMoisture {
                        hull_db,
                        kernel_db,
                        curve_start_db,
                    });
                    sum + dm * (cp_dm + crate::props::psychro::CP_WATER * pod) * t
                },
            );
        sum * self.column_area_m2
    }
}

/// Sums over one column's cells, as the run keeps them up to date from inside its parallel step (so it needs no
/// serial pass over the bed) and as [`BedState::water_kg`] and [`BedState::mean_kernel_wb`] add them up.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ColumnTotals {
    /// Pod water, Σ pod moisture (d.b.) × dry matter, kg/m².
    pub pod_water_kg_per_m2: f64,
    /// Σ kernel moisture (d.b.) × pod dry matter, kg/m²: the kernel share of the dry matter is the same in every
    /// cell, so it cancels in the mass-weighted mean.
    pub kernel_db_dm_kg_per_m2: f64,
    /// Hottest cell, °C (`f64::MIN` for an empty column).
    pub max_temp_c: f64,
}

impl ColumnTotals {
    /// Totals of one column's cells (all views the same length, bottom layer first).
    pub fn of<M: LayerMaterial + ?Sized>(
        material: &M,
        hull_db: &[f64],
        kernel_db: &[f64],
        curve_start_db: &[f64],
        temp_c: &[f64],
        dry_matter_kg_per_m2: &[f64],
    ) -> Self {
        let mut acc = ColumnTotals {
            pod_water_kg_per_m2: 0.0,
            kernel_db_dm_kg_per_m2: 0.0,
            max_temp_c: f64::MIN,
        };
        let n = hull_db.len();
        // re-sliced to one length so the loop below needs no bounds checks
        let (kernel_db, curve_start_db, temp_c, dm) = (
            &kernel_db[..n],
            &curve_start_db[..n],
            &temp_c[..n],
            &dry_matter_kg_per_m2[..n],
        );
        for k in 0..n {
            let pod = material.pod_db(CellMoisture {
                hull_db: hull_db[k],
                kernel_db: kernel_db[k],
                curve_start_db: curve_start_db[k],
            });
            acc.pod_water_kg_per_m2 += pod * dm[k];
            acc.kernel_db_dm_kg_per_m2 += kernel_db[k] * dm[k];
            acc.max_temp_c = f64::max(acc.max_temp_c, temp_c[k]);
        }
        acc
    }

    /// Mass-weighted mean kernel moisture (wet basis) from the summed `kernel_db_dm_kg_per_m2` and the summed dry
    /// matter per m² of the same columns.
    pub fn mean_kernel_wb(kernel_db_dm_kg_per_m2: f64, dry_matter_kg_per_m2: f64) -> f64 {
        wb_from_db(kernel_db_dm_kg_per_m2 / dry_matter_kg_per_m2)
    }
}
