//! Container geometry: a rectangular drying trailer with a perforated floor (parts of it may be blocked) over a
//! plenum fed through an opening in any of its four walls, level or tapered along the length, with flat baffles
//! standing in it; a fill-depth map (level, crowned, sloped or an explicit grid) and a permeability-multiplier map.
//! Parsed from `models/containers/*.json` (no file access here: the caller reads the text) and validated with
//! errors naming the file and field; `Container::discretize` turns it into per-column arrays on an nx × ny grid.
//!
//! References: geometry only; the floor orifice relation it feeds is DOMAIN.md §1.4 (own derivation, common
//! practice for C_d and open area).
use std::path::Path;

use ndarray::{Array2, Array3};
use serde::{Deserialize, Serialize};

use super::plenum::PlenumModel;
use super::plenum_layout::PlenumLayout;
use super::plenum_shape::Plenum2dParams;
use crate::error::InputError;
use crate::input::check_field;

/// Which wall the plenum inlet is in. The x axis runs from the front wall (x = 0) to the rear (x = length), y
/// across from the left wall (y = 0) to the right wall (y = width), left and right as seen from the front wall
/// looking toward the rear.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum InletWall {
    /// The end wall at x = 0 (end entry).
    Front,
    /// The end wall at x = length (end entry).
    Rear,
    /// The side wall at y = 0 (side entry).
    Left,
    /// The side wall at y = width (side entry).
    Right,
}

impl InletWall {
    /// True for the two side walls.
    pub fn is_side(self) -> bool {
        matches!(self, InletWall::Left | InletWall::Right)
    }
}

/// The duct opening through which the fan blows into the plenum.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Inlet {
    /// Wall holding the opening.
    pub wall: InletWall,
    /// Opening width along its wall, m (across the trailer on an end wall, along it on a side wall).
    pub width_m: f64,
    /// Opening height, m (at most the plenum height at the opening).
    pub height_m: f64,
    /// Offset of the opening's centre from the middle of its wall, m (0 = centred): toward the right wall on an
    /// end wall, toward the rear on a side wall.
    #[serde(default)]
    pub offset_m: f64,
    /// Loss coefficient of the transition from fan to inlet, on the inlet velocity pressure (dimensionless).
    #[serde(default)]
    pub transition_loss_coefficient: f64,
}

/// A rectangle of the footprint, m (x along the length from the front wall, y across from the left wall).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FloorArea {
    /// Start along the length, m.
    pub x0_m: f64,
    /// End along the length, m.
    pub x1_m: f64,
    /// Start across the width, m.
    pub y0_m: f64,
    /// End across the width, m.
    pub y1_m: f64,
}

/// The perforated floor between plenum and bed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Floor {
    /// Effective open-area fraction φ (0 < φ ≤ 1).
    pub open_area_fraction: f64,
    /// Orifice discharge coefficient C_d (0 < C_d ≤ 1).
    pub discharge_coefficient: f64,
    /// Parts of the floor that pass no air (solid sheet, a cross member, a covered section): a column passes air
    /// through the share of its floor outside them, so a fully covered column gets no air from below.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub blocked_areas: Vec<FloorArea>,
}

/// A flat plate standing the plenum's full height, from (x0, y0) to (x1, y1) on the plan, m: a baffle or a
/// deflector. On the 2-D plenum's grid it is the staircase of cell faces nearest its line, each a wall with the
/// wall law.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Baffle {
    /// One end along the length, m.
    pub x0_m: f64,
    /// One end across the width, m.
    pub y0_m: f64,
    /// Other end along the length, m.
    pub x1_m: f64,
    /// Other end across the width, m.
    pub y1_m: f64,
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

/// Which plenum model the container's air is solved with (the container file's `"plenum"` object; when it is
/// absent, [`PlenumChoice::Default`]: the 2-D plenum wherever the bed grid resolves it, see
/// [`Container::plenum_model_on`]). The 2-D model's numerical settings may be given; the rest keep
/// [`Plenum2dParams`]'s documented defaults.
/// (`Duct {}` and `Uniform {}` are empty struct variants rather than unit ones so that a stray field beside their
/// `model` is refused: serde ignores extra fields of an internally tagged unit variant.)
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(tag = "model", deny_unknown_fields)]
pub enum PlenumChoice {
    /// No model named: the 2-D plenum where the grid resolves it, else the duct ([`Container::plenum_model_on`]).
    /// Not a name a file can give; left out of written files.
    #[default]
    #[serde(skip)]
    Default,
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

impl PlenumChoice {
    /// True when the file names no model.
    pub fn is_default(&self) -> bool {
        *self == PlenumChoice::Default
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

/// Plenum cells across the inlet's wall from which a container whose file names no plenum model gets the 2-D
/// plenum (fewer: the 1-D duct). With eight, the 0.8 m jet of the bundled 2.4 m trailer spans about three cells
/// and each inlet-wall corner beside it about three: the fewest that still let a jet and its corner eddies be
/// told apart (our own numerical choice). A season's 4 × 2 grid gives 4 and keeps the duct; the scenario's 16 × 6
/// gives 12.
pub const DEFAULT_TWO_D_MIN_CELLS: usize = 8;

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
    /// Plenum height below the floor, m (at the front wall when `plenum_rear_height_m` is given).
    pub plenum_height_m: f64,
    /// Plenum height at the rear wall, m, for a plenum tapered linearly along the length (absent: level).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub plenum_rear_height_m: Option<f64>,
    /// Baffles and deflector plates in the plenum (default: none).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub baffles: Vec<Baffle>,
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
    /// Plenum model (by default chosen for the grid: [`Container::plenum_model_on`]; left out of written files
    /// when not named, so they read as before).
    #[serde(default, skip_serializing_if = "PlenumChoice::is_default")]
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
    /// Share of each column's floor that is open, [nx, ny] (1 = the whole floor; 0 = blocked, no inflow).
    pub floor_open_share: Array2<f64>,
}

/// Shortest baffle accepted, m: a plate shorter than this deflects nothing a plenum grid can resolve.
const MIN_BAFFLE_M: f64 = 0.05;

/// The fine plenum grid the container file's baffles are checked on (cells of about 2.5 cm, so a gap of a few
/// centimetres stays open; the solve's own, coarser grid is checked again when its plenum is built).
fn reference_plenum_grid(length_m: f64, width_m: f64) -> (usize, usize) {
    let n = |v: f64| ((v / 0.025).ceil() as usize).clamp(8, 1024);
    (n(length_m), n(width_m))
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
        if let Some(h) = self.plenum_rear_height_m {
            positive(path, "plenum_rear_height_m", h, "m")?;
        }
        self.validate_inlet(path)?;
        let inl = &self.inlet;
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
        self.validate_floor_areas(path)?;
        self.validate_baffles(path)?;
        self.validate_plenum(path)
    }

    /// The opening fits its wall and the plenum height there.
    fn validate_inlet(&self, path: &Path) -> Result<(), InputError> {
        let inl = &self.inlet;
        positive(path, "inlet.width_m", inl.width_m, "m")?;
        positive(path, "inlet.height_m", inl.height_m, "m")?;
        let (wall, wall_m) = match inl.wall {
            InletWall::Front | InletWall::Rear => ("end", self.width_m),
            InletWall::Left | InletWall::Right => ("side", self.length_m),
        };
        if inl.width_m > wall_m {
            return Err(model_err(
                path,
                "inlet.width_m",
                format!(
                    "{} m is wider than its {wall} wall ({wall_m} m)",
                    inl.width_m
                ),
            ));
        }
        if !inl.offset_m.is_finite() || inl.offset_m.abs() + 0.5 * inl.width_m > 0.5 * wall_m + 1e-9
        {
            return Err(model_err(
                path,
                "inlet.offset_m",
                format!(
                    "an opening {} m wide centred {} m off the middle of its wall does not fit in a {wall_m} m {wall} wall",
                    inl.width_m, inl.offset_m
                ),
            ));
        }
        // the plenum's height over the opening: at its end wall, or the lower end of its span along a side wall
        let (a, b) = self.inlet_span_m();
        let h_at = match inl.wall {
            InletWall::Front => self.plenum_height_at_m(0.0),
            InletWall::Rear => self.plenum_height_at_m(self.length_m),
            InletWall::Left | InletWall::Right => {
                self.plenum_height_at_m(a).min(self.plenum_height_at_m(b))
            }
        };
        if inl.height_m > h_at + 1e-12 {
            return Err(model_err(
                path,
                "inlet.height_m",
                format!(
                    "{} m is taller than the plenum at the opening ({h_at} m)",
                    inl.height_m
                ),
            ));
        }
        Ok(())
    }

    /// Every blocked floor area lies on the footprint and together they leave some floor open.
    fn validate_floor_areas(&self, path: &Path) -> Result<(), InputError> {
        let (l, w) = (self.length_m, self.width_m);
        for (n, a) in self.floor.blocked_areas.iter().enumerate() {
            let inside = |v: f64, hi: f64| v.is_finite() && v >= 0.0 && v <= hi + 1e-9;
            if !(inside(a.x0_m, l) && inside(a.x1_m, l) && a.x1_m > a.x0_m) {
                return Err(model_err(
                    path,
                    &format!("floor.blocked_areas[{n}].x1_m"),
                    format!(
                        "area {}–{} m must lie on the floor, within 0–{l} m, with x1 > x0",
                        a.x0_m, a.x1_m
                    ),
                ));
            }
            if !(inside(a.y0_m, w) && inside(a.y1_m, w) && a.y1_m > a.y0_m) {
                return Err(model_err(
                    path,
                    &format!("floor.blocked_areas[{n}].y1_m"),
                    format!(
                        "area {}–{} m must lie on the floor, within 0–{w} m, with y1 > y0",
                        a.y0_m, a.y1_m
                    ),
                ));
            }
        }
        if !self.floor.blocked_areas.is_empty() && self.open_floor_area_m2() <= 1e-9 * l * w {
            return Err(model_err(
                path,
                "floor.blocked_areas",
                "the blocked areas cover the whole floor: no air could reach the bed",
            ));
        }
        Ok(())
    }

    /// Every baffle lies in the plenum, has a length, and the set leaves every part of the plenum with open floor
    /// over it reachable from the inlet (checked on a fine reference grid; `build` checks the solve's own grid
    /// again). A pocket closed off over blocked floor passes no air and is accepted.
    fn validate_baffles(&self, path: &Path) -> Result<(), InputError> {
        let (l, w) = (self.length_m, self.width_m);
        for (n, b) in self.baffles.iter().enumerate() {
            let inside = |v: f64, hi: f64| v.is_finite() && v >= -1e-9 && v <= hi + 1e-9;
            for (end, x, y) in [("0", b.x0_m, b.y0_m), ("1", b.x1_m, b.y1_m)] {
                if !(inside(x, l) && inside(y, w)) {
                    return Err(model_err(
                        path,
                        &format!("baffles[{n}].x{end}_m"),
                        format!(
                            "end ({x} m, {y} m) is outside the plenum (0–{l} m along, 0–{w} m across)"
                        ),
                    ));
                }
            }
            let len = (b.x1_m - b.x0_m).hypot(b.y1_m - b.y0_m);
            if len < MIN_BAFFLE_M {
                return Err(model_err(
                    path,
                    &format!("baffles[{n}].x1_m"),
                    format!("a baffle {len:.3} m long is shorter than {MIN_BAFFLE_M} m"),
                ));
            }
        }
        let (nx, ny) = reference_plenum_grid(l, w);
        for n in 0..self.baffles.len() {
            let layout = PlenumLayout::new(self, &self.baffles[..=n], nx, ny);
            if let Some(cut) = layout.closed_off(self) {
                let with = if n == 0 {
                    ""
                } else {
                    " (with the baffles before it)"
                };
                return Err(model_err(
                    path,
                    &format!("baffles[{n}]"),
                    format!(
                        "closes {:.2} m² of the plenum off from the inlet{with}, around x = {:.2} m, y = {:.2} m, with {:.2} m² of open floor over it that no air could reach: open a gap to the inlet, or block that floor (floor.blocked_areas)",
                        cut.area_m2, cut.x_m, cut.y_m, cut.open_floor_m2
                    ),
                ));
            }
        }
        Ok(())
    }

    /// Floor left open by the blocked areas, m².
    pub fn open_floor_area_m2(&self) -> f64 {
        self.open_floor_in_m2(0.0, self.length_m, 0.0, self.width_m)
    }

    /// Floor left open by the blocked areas inside the rectangle x0–x1, y0–y1 (m, from the front and left walls),
    /// m²: exact, from the union of the rectangles on the grid of their own edges.
    pub fn open_floor_in_m2(&self, x0: f64, x1: f64, y0: f64, y1: f64) -> f64 {
        let areas = &self.floor.blocked_areas;
        let mut xs: Vec<f64> = vec![x0, x1];
        let mut ys: Vec<f64> = vec![y0, y1];
        for a in areas {
            xs.extend([a.x0_m.clamp(x0, x1), a.x1_m.clamp(x0, x1)]);
            ys.extend([a.y0_m.clamp(y0, y1), a.y1_m.clamp(y0, y1)]);
        }
        xs.sort_by(f64::total_cmp);
        ys.sort_by(f64::total_cmp);
        let mut open = 0.0;
        for xw in xs.windows(2) {
            for yw in ys.windows(2) {
                let (xm, ym) = (0.5 * (xw[0] + xw[1]), 0.5 * (yw[0] + yw[1]));
                let covered = areas
                    .iter()
                    .any(|a| xm > a.x0_m && xm < a.x1_m && ym > a.y0_m && ym < a.y1_m);
                if !covered {
                    open += (xw[1] - xw[0]) * (yw[1] - yw[0]);
                }
            }
        }
        open
    }

    /// Plenum height at `x_m` along the length from the front wall, m (linear between the two end heights).
    pub fn plenum_height_at_m(&self, x_m: f64) -> f64 {
        match self.plenum_rear_height_m {
            None => self.plenum_height_m,
            Some(rear) => {
                let t = (x_m / self.length_m).clamp(0.0, 1.0);
                self.plenum_height_m + (rear - self.plenum_height_m) * t
            }
        }
    }

    /// The opening's extent along its wall, m: y from the left wall on an end wall, x from the front wall on a
    /// side wall.
    pub fn inlet_span_m(&self) -> (f64, f64) {
        let inl = &self.inlet;
        let wall_m = if inl.wall.is_side() {
            self.length_m
        } else {
            self.width_m
        };
        let c = 0.5 * wall_m + inl.offset_m;
        (c - 0.5 * inl.width_m, c + 0.5 * inl.width_m)
    }

    /// Why `model` cannot represent this container's plenum, if it cannot: the 1-D duct marches along the length
    /// from an end wall at one height-averaged cross-section, so a side inlet and baffles need the 2-D model (a
    /// taper it represents: its cross-section follows the height). The uniform plenum has one pressure whatever
    /// the plenum's shape, which is its assumption, so it takes every geometry.
    pub fn plenum_model_limit(&self, model: &PlenumModel) -> Option<(&'static str, String)> {
        if !matches!(model, PlenumModel::Manifold(_)) {
            return None;
        }
        if self.inlet.wall.is_side() {
            return Some((
                "inlet.wall",
                "a side inlet needs the 2-D plenum (\"plenum\": {\"model\": \"2d\"}): the 1-D duct marches from an end wall".into(),
            ));
        }
        if !self.baffles.is_empty() {
            return Some((
                "baffles",
                "baffles need the 2-D plenum (\"plenum\": {\"model\": \"2d\"}): the 1-D duct has no plan to put them in".into(),
            ));
        }
        None
    }

    fn validate_plenum(&self, path: &Path) -> Result<(), InputError> {
        // a named model only: the default takes the 2-D plenum wherever the geometry needs it
        if let Some(model) = self.named_plenum_model() {
            if let Some((field, message)) = self.plenum_model_limit(&model) {
                return Err(model_err(path, field, message));
            }
        }
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

    /// True when the solvers' x axis runs from the rear wall: they count along the length from the inlet's end
    /// wall, which is the rear one here. Outputs always count from the front wall, so they mirror what the
    /// solvers give.
    pub fn solver_mirrored(&self) -> bool {
        self.inlet.wall == InletWall::Rear
    }

    /// The plenum model the container's air is solved with on `grid`: the one its file names, else the default
    /// model for the grid. The default is the 2-D plenum where the plenum grid the bed's columns give
    /// ([`Plenum2dParams::resolution_on`]) has at least [`DEFAULT_TWO_D_MIN_CELLS`] cells across the inlet's
    /// wall, and wherever the geometry needs it (a side inlet, baffles); the 1-D duct on coarser grids, where a
    /// jet and the eddies beside it cannot be told apart (a season's coarse grid).
    pub fn plenum_model_on(&self, grid: Grid) -> PlenumModel {
        self.named_plenum_model().unwrap_or_else(|| {
            let two_d = Plenum2dParams::default();
            let (nx, ny) = two_d.resolution_on(self, grid).plenum_cells(grid);
            let across = if self.inlet.wall.is_side() { nx } else { ny };
            let needs = self.plenum_model_limit(&PlenumModel::default()).is_some();
            if needs || across >= DEFAULT_TWO_D_MIN_CELLS {
                PlenumModel::TwoD(two_d)
            } else {
                PlenumModel::default()
            }
        })
    }

    /// The plenum model the container file names, if it names one.
    pub fn named_plenum_model(&self) -> Option<PlenumModel> {
        Some(match self.plenum {
            PlenumChoice::Default => return None,
            PlenumChoice::Duct {} => PlenumModel::default(),
            PlenumChoice::Uniform {} => PlenumModel::Uniform,
            PlenumChoice::TwoD {
                cells_per_column,
                mixing_length_ratio,
            } => {
                let d = Plenum2dParams::default();
                PlenumModel::TwoD(Plenum2dParams {
                    cells_per_column: cells_per_column.or(d.cells_per_column),
                    mixing_length_ratio: mixing_length_ratio.unwrap_or(d.mixing_length_ratio),
                    ..d
                })
            }
        })
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
        let floor_open_share = Array2::from_shape_fn((nx, ny), |(i, j)| {
            let (x, y) = (x_of(i), y_of(j));
            let (x0, y0) = (x - 0.5 * dx, y - 0.5 * dy);
            // 1e-12 of a column: the rounding of the rectangle sums, not a partly covered floor
            let share = self.open_floor_in_m2(x0, x0 + dx, y0, y0 + dy) / (dx * dy);
            if share < 1e-12 {
                0.0
            } else {
                share.min(1.0)
            }
        });
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
            floor_open_share,
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
                blocked_areas: vec![],
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
            plenum_rear_height_m: None,
            baffles: vec![],
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
