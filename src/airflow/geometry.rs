//! Container geometry: a rectangular drying trailer with a perforated floor over a plenum fed through an end wall,
//! a fill-depth map (level, crowned, sloped or an explicit grid) and a permeability-multiplier map.
//! Parsed from `models/containers/*.json` (no file access here: the caller reads the text) and validated with
//! errors naming the file and field; `Container::discretize` turns it into per-column arrays on an nx × ny grid.
//!
//! References: geometry only; the floor orifice relation it feeds is DOMAIN.md §1.4 (own derivation, common
//! practice for C_d and open area).
use std::path::Path;

use ndarray::{Array2, Array3};
use serde::{Deserialize, Serialize};

use super::plenum::PlenumModel;
use super::plenum_shape::Plenum2dParams;
use crate::error::InputError;
use crate::input::check_field;

/// Which end wall the plenum inlet is in. The x axis runs from the front wall (x = 0) to the rear (x = length).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum InletWall {
    /// The wall at x = 0.
    Front,
    /// The wall at x = length.
    Rear,
}

/// The duct opening through which the fan blows into the plenum.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Inlet {
    /// End wall holding the opening.
    pub wall: InletWall,
    /// Opening width across the trailer, m.
    pub width_m: f64,
    /// Opening height, m (at most the plenum height).
    pub height_m: f64,
    /// Lateral offset of the opening's centre from the trailer centreline, m (0 = centred).
    #[serde(default)]
    pub offset_m: f64,
    /// Loss coefficient of the transition from fan to inlet, on the inlet velocity pressure (dimensionless).
    #[serde(default)]
    pub transition_loss_coefficient: f64,
}

/// The perforated floor between plenum and bed.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Floor {
    /// Effective open-area fraction φ (0 < φ ≤ 1).
    pub open_area_fraction: f64,
    /// Orifice discharge coefficient C_d (0 < C_d ≤ 1).
    pub discharge_coefficient: f64,
}

/// How deep the peanuts lie over the footprint.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(tag = "shape", rename_all = "lowercase", deny_unknown_fields)]
pub enum Fill {
    /// The same depth everywhere.
    Level {
        /// Depth, m.
        depth_m: f64,
    },
    /// A dome: `edge_depth_m` along the walls rising to `peak_depth_m` in the middle,
    /// `D = edge + (peak − edge)·(1 − ξ²)(1 − η²)` with ξ, η ∈ [−1, 1] across length and width.
    Crowned {
        /// Depth at the walls, m.
        edge_depth_m: f64,
        /// Depth at the centre, m.
        peak_depth_m: f64,
    },
    /// Linear along the length from front (x = 0) to rear.
    Sloped {
        /// Depth at the front wall, m.
        front_depth_m: f64,
        /// Depth at the rear wall, m.
        rear_depth_m: f64,
    },
    /// A piecewise-constant map: `depths_m[i][j]`, i along the length (front to rear), j across the width.
    Grid {
        /// Depths, m; rows along the length, every row the same length.
        depths_m: Vec<Vec<f64>>,
    },
}

/// A rectangular block of different permeability (heights measured up from the floor; omit for the full depth).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PermeabilityBlock {
    /// Start along the length, m.
    pub x0_m: f64,
    /// End along the length, m.
    pub x1_m: f64,
    /// Start across the width, m.
    pub y0_m: f64,
    /// End across the width, m.
    pub y1_m: f64,
    /// Lower height above the floor, m.
    #[serde(default)]
    pub z0_m: Option<f64>,
    /// Upper height above the floor, m.
    #[serde(default)]
    pub z1_m: Option<f64>,
    /// Multiplier on permeability (velocity per unit gradient); 0.5 = twice the resistance.
    pub multiplier: f64,
}

/// Where the bed is more or less permeable than the crop law says.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Permeability {
    /// Piecewise-constant column map `cells[i][j]` over the footprint (i along the length), any shape.
    #[serde(default)]
    pub cells: Option<Vec<Vec<f64>>>,
    /// Blocks applied after the map, multiplying it.
    #[serde(default)]
    pub blocks: Vec<PermeabilityBlock>,
}

/// Which plenum model the container's air is solved with (the container file's `"plenum"` object; the 1-D duct
/// when it is absent). The 2-D model's numerical settings may be given; the rest keep
/// [`Plenum2dParams`]'s documented defaults.
/// (`Duct {}` and `Uniform {}` are empty struct variants rather than unit ones so that a stray field beside their
/// `model` is refused: serde ignores extra fields of an internally tagged unit variant.)
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "model", deny_unknown_fields)]
pub enum PlenumChoice {
    /// The 1-D dividing-flow duct along the length (`airflow::plenum`).
    #[serde(rename = "duct")]
    Duct {},
    /// One pressure under the whole floor.
    #[serde(rename = "uniform")]
    Uniform {},
    /// The 2-D depth-averaged plenum flow (`airflow::plenum2d`).
    #[serde(rename = "2d")]
    TwoD {
        /// Plenum cells along each side of a bed column (1–8).
        #[serde(default)]
        cells_per_column: Option<usize>,
        /// Mixing length over plenum height, c_m (0.05–1).
        #[serde(default)]
        mixing_length_ratio: Option<f64>,
    },
}

impl Default for PlenumChoice {
    fn default() -> Self {
        PlenumChoice::Duct {}
    }
}

impl PlenumChoice {
    /// True for the default, the 1-D duct.
    pub fn is_duct(&self) -> bool {
        *self == PlenumChoice::Duct {}
    }

    /// The model named `name` (`duct`, `uniform` or `2d`, as in the container file) with its default settings,
    /// or `self` when it already is that model (so a file's own 2-D settings stay); `None` for another name.
    pub fn switched_to(&self, name: &str) -> Option<Self> {
        let wanted = match name {
            "duct" => PlenumChoice::Duct {},
            "uniform" => PlenumChoice::Uniform {},
            "2d" => PlenumChoice::TwoD {
                cells_per_column: None,
                mixing_length_ratio: None,
            },
            _ => return None,
        };
        Some(
            if std::mem::discriminant(self) == std::mem::discriminant(&wanted) {
                *self
            } else {
                wanted
            },
        )
    }
}

/// The plenum model names, as the container file and the command line spell them.
pub const PLENUM_MODEL_NAMES: &str = "duct, uniform or 2d";

/// A loaded drying container.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Container {
    /// Short name (`trailer-6m`).
    pub name: String,
    /// Free-text description.
    #[serde(default)]
    pub description: String,
    /// Inside length, m.
    pub length_m: f64,
    /// Inside width, m.
    pub width_m: f64,
    /// Side-wall height above the floor, m.
    pub wall_height_m: f64,
    /// Plenum height below the floor, m.
    pub plenum_height_m: f64,
    /// Perforated floor.
    pub floor: Floor,
    /// Plenum inlet.
    pub inlet: Inlet,
    /// Fill depth.
    pub fill: Fill,
    /// Permeability multipliers (default: uniform 1).
    #[serde(default)]
    pub permeability: Permeability,
    /// Leakage from the plenum (doors, seams): Q = C·√p, C in m³/(s·Pa^0.5); 0 = tight.
    #[serde(default)]
    pub leakage_m3_per_s_per_sqrt_pa: f64,
    /// Plenum model (default: the 1-D duct; left out of written files when it is the default, so they read as before).
    #[serde(default, skip_serializing_if = "PlenumChoice::is_duct")]
    pub plenum: PlenumChoice,
}

/// Grid resolution: nx columns along the length, ny across, nz layers in every column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Grid {
    /// Columns along the length.
    pub nx: usize,
    /// Columns across the width.
    pub ny: usize,
    /// Layers per column (terrain-following: each column's depth is split into nz equal layers).
    pub nz: usize,
}

impl Default for Grid {
    /// 32 × 12 columns, 16 layers: a quick but resolved default.
    fn default() -> Self {
        Grid {
            nx: 32,
            ny: 12,
            nz: 16,
        }
    }
}

/// A container on a grid: what the solver needs, per column and per cell.
#[derive(Debug, Clone)]
pub struct DiscreteContainer {
    /// The resolution.
    pub grid: Grid,
    /// Column size along the length, m.
    pub dx_m: f64,
    /// Column size across the width, m.
    pub dy_m: f64,
    /// Bed depth per column, m, [nx, ny], already in plenum-inlet orientation (x = 0 at the front wall).
    pub depth_m: Array2<f64>,
    /// Permeability multiplier per cell [nx, ny, nz] (k = 0 at the floor).
    pub permeability: Array3<f64>,
}

fn model_err(path: &Path, field: &str, message: impl Into<String>) -> InputError {
    InputError::Model {
        line: None,
        path: path.to_path_buf(),
        field: field.to_string(),
        message: message.into(),
    }
}

fn positive(path: &Path, field: &str, v: f64, unit: &str) -> Result<(), InputError> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(model_err(
            path,
            field,
            format!("{v} {unit} must be a positive number"),
        ))
    }
}

fn check_map(path: &Path, field: &str, map: &[Vec<f64>], what: &str) -> Result<(), InputError> {
    if map.is_empty() || map[0].is_empty() {
        return Err(model_err(path, field, "map is empty"));
    }
    let n = map[0].len();
    for (i, row) in map.iter().enumerate() {
        if row.len() != n {
            return Err(model_err(
                path,
                &format!("{field}[{i}]"),
                format!(
                    "row has {} values but row 0 has {n}: the map must be rectangular",
                    row.len()
                ),
            ));
        }
        for (j, &v) in row.iter().enumerate() {
            if !(v.is_finite() && v > 0.0) {
                return Err(model_err(
                    path,
                    &format!("{field}[{i}][{j}]"),
                    format!("{v} must be a positive {what}"),
                ));
            }
        }
    }
    Ok(())
}

impl Container {
    /// Parse and validate a container from JSON text; `path` is used only to name the file in errors.
    pub fn from_json_str(text: &str, path: &Path) -> Result<Self, InputError> {
        let c: Container = serde_json::from_str(text).map_err(|e| InputError::Parse {
            path: path.to_path_buf(),
            line: Some(e.line() as u64),
            message: e.to_string(),
        })?;
        c.validate(path)
            .map_err(|e| crate::input::with_json_line(e, path, text))?;
        Ok(c)
    }

    /// Check every dimension and map; `path` names the source in errors.
    pub fn validate(&self, path: &Path) -> Result<(), InputError> {
        positive(path, "length_m", self.length_m, "m")?;
        positive(path, "width_m", self.width_m, "m")?;
        positive(path, "wall_height_m", self.wall_height_m, "m")?;
        positive(path, "plenum_height_m", self.plenum_height_m, "m")?;
        let f = &self.floor;
        if !(f.open_area_fraction.is_finite()
            && f.open_area_fraction > 0.0
            && f.open_area_fraction <= 1.0)
        {
            return Err(model_err(
                path,
                "floor.open_area_fraction",
                format!(
                    "{} must be above 0 and at most 1 (a floor with no open area passes no air)",
                    f.open_area_fraction
                ),
            ));
        }
        if !(f.discharge_coefficient.is_finite()
            && f.discharge_coefficient > 0.0
            && f.discharge_coefficient <= 1.0)
        {
            return Err(model_err(
                path,
                "floor.discharge_coefficient",
                format!("{} must be above 0 and at most 1", f.discharge_coefficient),
            ));
        }
        let inl = &self.inlet;
        positive(path, "inlet.width_m", inl.width_m, "m")?;
        positive(path, "inlet.height_m", inl.height_m, "m")?;
        if inl.height_m > self.plenum_height_m {
            return Err(model_err(
                path,
                "inlet.height_m",
                format!(
                    "{} m is taller than the plenum ({} m)",
                    inl.height_m, self.plenum_height_m
                ),
            ));
        }
        if inl.width_m > self.width_m {
            return Err(model_err(
                path,
                "inlet.width_m",
                format!(
                    "{} m is wider than its wall ({} m)",
                    inl.width_m, self.width_m
                ),
            ));
        }
        if !inl.offset_m.is_finite()
            || inl.offset_m.abs() + 0.5 * inl.width_m > 0.5 * self.width_m + 1e-9
        {
            return Err(model_err(
                path,
                "inlet.offset_m",
                format!(
                    "an opening {} m wide centred {} m off the centreline does not fit in a {} m wall",
                    inl.width_m, inl.offset_m, self.width_m
                ),
            ));
        }
        if !(inl.transition_loss_coefficient.is_finite() && inl.transition_loss_coefficient >= 0.0)
        {
            return Err(model_err(
                path,
                "inlet.transition_loss_coefficient",
                format!("{} must be 0 or more", inl.transition_loss_coefficient),
            ));
        }
        if !(self.leakage_m3_per_s_per_sqrt_pa.is_finite()
            && self.leakage_m3_per_s_per_sqrt_pa >= 0.0)
        {
            return Err(model_err(
                path,
                "leakage_m3_per_s_per_sqrt_pa",
                format!("{} must be 0 or more", self.leakage_m3_per_s_per_sqrt_pa),
            ));
        }
        let wall = self.wall_height_m;
        let depth_ok = |field: &str, d: f64| -> Result<(), InputError> {
            positive(path, field, d, "m")?;
            if d > wall {
                return Err(model_err(
                    path,
                    field,
                    format!("fill depth {d} m is over the wall height {wall} m"),
                ));
            }
            Ok(())
        };
        match &self.fill {
            Fill::Level { depth_m } => depth_ok("fill.depth_m", *depth_m)?,
            Fill::Crowned {
                edge_depth_m,
                peak_depth_m,
            } => {
                depth_ok("fill.edge_depth_m", *edge_depth_m)?;
                depth_ok("fill.peak_depth_m", *peak_depth_m)?;
            }
            Fill::Sloped {
                front_depth_m,
                rear_depth_m,
            } => {
                depth_ok("fill.front_depth_m", *front_depth_m)?;
                depth_ok("fill.rear_depth_m", *rear_depth_m)?;
            }
            Fill::Grid { depths_m } => {
                check_map(path, "fill.depths_m", depths_m, "depth in m")?;
                for (i, row) in depths_m.iter().enumerate() {
                    for (j, &d) in row.iter().enumerate() {
                        depth_ok(&format!("fill.depths_m[{i}][{j}]"), d)?;
                    }
                }
            }
        }
        if let Some(cells) = &self.permeability.cells {
            check_map(path, "permeability.cells", cells, "multiplier")?;
        }
        for (n, b) in self.permeability.blocks.iter().enumerate() {
            let field = |s: &str| format!("permeability.blocks[{n}].{s}");
            if !(b.multiplier.is_finite() && b.multiplier > 0.0) {
                return Err(model_err(
                    path,
                    &field("multiplier"),
                    format!("{} must be a positive multiplier", b.multiplier),
                ));
            }
            let inside = |v: f64, hi: f64| v.is_finite() && v >= 0.0 && v <= hi + 1e-9;
            if !(inside(b.x0_m, self.length_m) && inside(b.x1_m, self.length_m) && b.x1_m > b.x0_m)
            {
                return Err(model_err(
                    path,
                    &field("x1_m"),
                    format!(
                        "block {}–{} m must lie within 0–{} m with x1 > x0",
                        b.x0_m, b.x1_m, self.length_m
                    ),
                ));
            }
            if !(inside(b.y0_m, self.width_m) && inside(b.y1_m, self.width_m) && b.y1_m > b.y0_m) {
                return Err(model_err(
                    path,
                    &field("y1_m"),
                    format!(
                        "block {}–{} m must lie within 0–{} m with y1 > y0",
                        b.y0_m, b.y1_m, self.width_m
                    ),
                ));
            }
            let z0 = b.z0_m.unwrap_or(0.0);
            let z1 = b.z1_m.unwrap_or(wall);
            if !(inside(z0, wall) && inside(z1, wall) && z1 > z0) {
                return Err(model_err(
                    path,
                    &field("z1_m"),
                    format!("heights {z0}–{z1} m must lie within 0–{wall} m with z1 > z0"),
                ));
            }
        }
        self.validate_plenum(path)
    }

    fn validate_plenum(&self, path: &Path) -> Result<(), InputError> {
        if let PlenumChoice::TwoD {
            cells_per_column,
            mixing_length_ratio,
        } = self.plenum
        {
            if let Some(n) = cells_per_column {
                check_field(path, "plenum.cells_per_column", n as f64, 1.0, 8.0, "")?;
            }
            if let Some(c) = mixing_length_ratio {
                check_field(path, "plenum.mixing_length_ratio", c, 0.05, 1.0, "")?;
            }
        }
        Ok(())
    }

    /// The plenum model the container file asks for.
    pub fn plenum_model(&self) -> PlenumModel {
        match self.plenum {
            PlenumChoice::Duct {} => PlenumModel::default(),
            PlenumChoice::Uniform {} => PlenumModel::Uniform,
            PlenumChoice::TwoD {
                cells_per_column,
                mixing_length_ratio,
            } => {
                let d = Plenum2dParams::default();
                PlenumModel::TwoD(Plenum2dParams {
                    cells_per_column: cells_per_column.unwrap_or(d.cells_per_column),
                    mixing_length_ratio: mixing_length_ratio.unwrap_or(d.mixing_length_ratio),
                    ..d
                })
            }
        }
    }

    /// Footprint area, m².
    pub fn floor_area_m2(&self) -> f64 {
        self.length_m * self.width_m
    }

    /// Inlet opening area, m².
    pub fn inlet_area_m2(&self) -> f64 {
        self.inlet.width_m * self.inlet.height_m
    }

    /// Put the container on a grid. Coordinates in the result have x = 0 at the **inlet** wall (a rear inlet is
    /// mirrored), so the plenum always marches from index 0. Fails on a grid with a zero dimension.
    pub fn discretize(&self, grid: Grid) -> Result<DiscreteContainer, InputError> {
        for (name, n) in [("nx", grid.nx), ("ny", grid.ny), ("nz", grid.nz)] {
            if n == 0 || n > 4096 {
                return Err(InputError::argument(
                    &format!("--{name}"),
                    n,
                    "must be between 1 and 4096",
                ));
            }
        }
        let (nx, ny, nz) = (grid.nx, grid.ny, grid.nz);
        let dx = self.length_m / nx as f64;
        let dy = self.width_m / ny as f64;
        let flip = self.inlet.wall == InletWall::Rear;
        // physical x of column i's centre (from the front wall)
        let x_of = |i: usize| {
            let ii = if flip { nx - 1 - i } else { i };
            (ii as f64 + 0.5) * dx
        };
        let y_of = |j: usize| (j as f64 + 0.5) * dy;
        let lookup = |map: &[Vec<f64>], x: f64, y: f64| {
            let ni = map.len();
            let nj = map[0].len();
            let i = ((x / self.length_m * ni as f64) as usize).min(ni - 1);
            let j = ((y / self.width_m * nj as f64) as usize).min(nj - 1);
            map[i][j]
        };
        let depth = Array2::from_shape_fn((nx, ny), |(i, j)| {
            let (x, y) = (x_of(i), y_of(j));
            match &self.fill {
                Fill::Level { depth_m } => *depth_m,
                Fill::Crowned {
                    edge_depth_m,
                    peak_depth_m,
                } => {
                    let xi = 2.0 * x / self.length_m - 1.0;
                    let eta = 2.0 * y / self.width_m - 1.0;
                    edge_depth_m
                        + (peak_depth_m - edge_depth_m) * (1.0 - xi * xi) * (1.0 - eta * eta)
                }
                Fill::Sloped {
                    front_depth_m,
                    rear_depth_m,
                } => front_depth_m + (rear_depth_m - front_depth_m) * x / self.length_m,
                Fill::Grid { depths_m } => lookup(depths_m, x, y),
            }
        });
        let perm = Array3::from_shape_fn((nx, ny, nz), |(i, j, k)| {
            let (x, y) = (x_of(i), y_of(j));
            let z = (k as f64 + 0.5) / nz as f64 * depth[[i, j]];
            let mut m = match &self.permeability.cells {
                Some(c) => lookup(c, x, y),
                None => 1.0,
            };
            for b in &self.permeability.blocks {
                let z0 = b.z0_m.unwrap_or(0.0);
                let z1 = b.z1_m.unwrap_or(f64::INFINITY);
                if x >= b.x0_m && x < b.x1_m && y >= b.y0_m && y < b.y1_m && z >= z0 && z < z1 {
                    m *= b.multiplier;
                }
            }
            m
        });
        Ok(DiscreteContainer {
            grid,
            dx_m: dx,
            dy_m: dy,
            depth_m: depth,
            permeability: perm,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Container {
        Container {
            name: "t".into(),
            description: String::new(),
            length_m: 6.0,
            width_m: 2.0,
            wall_height_m: 1.5,
            plenum_height_m: 0.3,
            floor: Floor {
                open_area_fraction: 0.2,
                discharge_coefficient: 0.6,
            },
            inlet: Inlet {
                wall: InletWall::Rear,
                width_m: 0.5,
                height_m: 0.3,
                offset_m: 0.0,
                transition_loss_coefficient: 0.0,
            },
            fill: Fill::Sloped {
                front_depth_m: 1.0,
                rear_depth_m: 1.4,
            },
            permeability: Permeability::default(),
            leakage_m3_per_s_per_sqrt_pa: 0.0,
            plenum: PlenumChoice::Duct {},
        }
    }

    #[test]
    fn rear_inlet_is_mirrored_so_index_zero_is_the_inlet_end() {
        let d = sample()
            .discretize(Grid {
                nx: 4,
                ny: 1,
                nz: 2,
            })
            .unwrap();
        assert!(d.depth_m[[0, 0]] > d.depth_m[[3, 0]]);
        approx::assert_relative_eq!(
            d.depth_m[[0, 0]],
            1.0 + 0.4 * 5.25 / 6.0,
            max_relative = 1e-12
        );
    }

    #[test]
    fn crowned_fill_peaks_in_the_middle() {
        let mut c = sample();
        c.fill = Fill::Crowned {
            edge_depth_m: 1.0,
            peak_depth_m: 1.4,
        };
        let d = c
            .discretize(Grid {
                nx: 5,
                ny: 5,
                nz: 2,
            })
            .unwrap();
        assert!(d.depth_m[[2, 2]] > d.depth_m[[0, 2]]);
        assert!(d.depth_m[[2, 2]] > d.depth_m[[2, 0]]);
    }
}
