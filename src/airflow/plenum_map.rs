//! The 2-D plenum's flow field as the outputs show it: depth-mean velocity and static pressure at the centre of
//! every plenum cell, in the output orientation (i = 0 at the front wall, j = 0 at y = 0), so the plenum maps lie
//! under the bed's maps whichever end the inlet is in.
use ndarray::Array2;

use super::plenum2d::{FlowDomain, FlowState};

/// The plenum flow field on its own grid (finer than the bed's columns: `cells_per_column` per side).
#[derive(Debug, Clone, PartialEq)]
pub struct PlenumMap {
    /// Cell size along the length, m.
    pub dx_m: f64,
    /// Cell size across the width, m.
    pub dy_m: f64,
    /// Depth-mean velocity along the length at each cell centre, m/s (positive toward the rear wall), [nx, ny].
    pub u_m_per_s: Array2<f64>,
    /// Depth-mean velocity across the width, m/s (positive toward y = width), [nx, ny].
    pub v_m_per_s: Array2<f64>,
    /// Static pressure, Pa gauge, [nx, ny]; NaN in a cell whose every face is held at zero (a closed pocket the
    /// inlet's air cannot reach: no air moves there and nothing sets its pressure).
    pub pressure_pa: Array2<f64>,
}

/// How a solver-oriented field becomes a map: the plenum air's density, the inlet static pressure (Pa gauge) the
/// kinematic field is referred to, and whether the solver's x runs from the rear wall.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapFrame {
    /// Plenum air density, kg/m³.
    pub rho_kg_per_m3: f64,
    /// Static pressure at the inlet, Pa gauge.
    pub inlet_pa: f64,
    /// The solver's i = 0 is the rear wall (inlet in the rear wall).
    pub flip: bool,
}

impl PlenumMap {
    /// The map of a solved field `s` on `d`, whose kinematic pressure at the inlet is `p_inlet_kinematic` (m²/s²).
    pub fn from_solver(
        d: &FlowDomain,
        s: &FlowState,
        p_inlet_kinematic: f64,
        frame: MapFrame,
    ) -> Self {
        let (nx, ny) = (d.nx, d.ny);
        let src = |i: usize| if frame.flip { nx - 1 - i } else { i };
        let sign = if frame.flip { -1.0 } else { 1.0 };
        let centre = |i: usize, j: usize| s.centre_velocity(d, src(i), j);
        PlenumMap {
            dx_m: d.dx,
            dy_m: d.dy,
            u_m_per_s: Array2::from_shape_fn((nx, ny), |(i, j)| sign * centre(i, j).0),
            v_m_per_s: Array2::from_shape_fn((nx, ny), |(i, j)| centre(i, j).1),
            pressure_pa: Array2::from_shape_fn((nx, ny), |(i, j)| {
                if enclosed(d, src(i), j) {
                    f64::NAN
                } else {
                    frame.inlet_pa
                        + frame.rho_kg_per_m3 * (s.p[j * nx + src(i)] - p_inlet_kinematic)
                }
            }),
        }
    }

    /// Speed at each cell centre, m/s.
    pub fn speed_m_per_s(&self) -> Array2<f64> {
        ndarray::Zip::from(&self.u_m_per_s)
            .and(&self.v_m_per_s)
            .map_collect(|u, v| u.hypot(*v))
    }

    /// Static pressure along a line across the width at fraction `y_frac` (0 = the y = 0 wall, 0.5 = the centre
    /// line, 1 = the far wall): (distance from the front wall, m; Pa) per cell along the length. On the centre line
    /// of an even grid this is the mean of the two middle rows.
    pub fn pressure_along(&self, y_frac: f64) -> Vec<(f64, f64)> {
        let (nx, ny) = self.pressure_pa.dim();
        let (j0, j1, w) = line_between(y_frac, ny);
        self.profile(nx, self.dx_m, w, |i| ([i, j0], [i, j1]))
    }

    /// Static pressure along a line across the width at fraction `x_frac` of the length (0 = the front wall,
    /// 1 = the rear wall): (distance from the y = 0 wall, m; Pa) per cell across the width, as
    /// [`PlenumMap::pressure_along`] is along the length.
    pub fn pressure_across(&self, x_frac: f64) -> Vec<(f64, f64)> {
        let (nx, ny) = self.pressure_pa.dim();
        let (i0, i1, w) = line_between(x_frac, nx);
        self.profile(ny, self.dy_m, w, |j| ([i0, j], [i1, j]))
    }

    /// (cell-centre distance, m; Pa) for `n` cells `step_m` apart, each the pressure at the pair of cells `at`
    /// gives, weighted `1 − w` and `w`: one line between two rows or columns of cells.
    fn profile(
        &self,
        n: usize,
        step_m: f64,
        w: f64,
        at: impl Fn(usize) -> ([usize; 2], [usize; 2]),
    ) -> Vec<(f64, f64)> {
        let p = &self.pressure_pa;
        (0..n)
            .map(|k| {
                let (a, b) = at(k);
                ((k as f64 + 0.5) * step_m, (1.0 - w) * p[a] + w * p[b])
            })
            .collect()
    }
}

/// True when every face of cell (i, j) of `d` is held at zero velocity (`airflow::plenum2d`'s face indices).
fn enclosed(d: &FlowDomain, i: usize, j: usize) -> bool {
    let nx = d.nx;
    let held = |f: &Option<f64>| *f == Some(0.0);
    held(&d.u_fixed[j * (nx + 1) + i])
        && held(&d.u_fixed[j * (nx + 1) + i + 1])
        && held(&d.v_fixed[j * nx + i])
        && held(&d.v_fixed[(j + 1) * nx + i])
}

/// The two cell rows a line at fraction `frac` across `n` cells lies between, and the second's weight: a line
/// through cell centres takes that cell alone; 0 and 1 take the cells along the walls.
fn line_between(frac: f64, n: usize) -> (usize, usize, f64) {
    let t = (frac.clamp(0.0, 1.0) * n as f64 - 0.5).clamp(0.0, (n - 1) as f64);
    let (a, b) = (t.floor() as usize, t.ceil() as usize);
    (a, b, t - a as f64)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn field() -> (FlowDomain, FlowState) {
        let d = FlowDomain::closed_box(4, 3, 0.5, 0.4, 0.3);
        let mut s = FlowState::at_rest(&d);
        for (k, u) in s.u.iter_mut().enumerate() {
            *u = k as f64;
        }
        for (k, p) in s.p.iter_mut().enumerate() {
            *p = k as f64;
        }
        (d, s)
    }

    #[test]
    fn flipped_map_mirrors_the_length_and_reverses_u() {
        let (d, s) = field();
        let frame = MapFrame {
            rho_kg_per_m3: 1.2,
            inlet_pa: 100.0,
            flip: false,
        };
        let a = PlenumMap::from_solver(&d, &s, 1.0, frame);
        let b = PlenumMap::from_solver(
            &d,
            &s,
            1.0,
            MapFrame {
                flip: true,
                ..frame
            },
        );
        for i in 0..4 {
            for j in 0..3 {
                // The same stored values, mirrored: bit for bit.
                let same = |x: f64, y: f64| x.to_bits() == y.to_bits();
                assert!(same(a.u_m_per_s[[i, j]], -b.u_m_per_s[[3 - i, j]]));
                assert!(same(a.pressure_pa[[i, j]], b.pressure_pa[[3 - i, j]]));
            }
        }
        // p at cell (i=2, j=1) is kinematic 1·4+2 = 6 → 100 + 1.2·(6 − 1)
        assert!((a.pressure_pa[[2, 1]] - 106.0).abs() < 1e-12);
    }

    #[test]
    fn centre_line_of_an_odd_grid_is_its_middle_row() {
        let (d, s) = field();
        let frame = MapFrame {
            rho_kg_per_m3: 1.0,
            inlet_pa: 0.0,
            flip: false,
        };
        let m = PlenumMap::from_solver(&d, &s, 0.0, frame);
        let c = m.pressure_along(0.5);
        assert_eq!(c.len(), 4);
        assert!((c[1].0 - 0.75).abs() < 1e-12);
        // A middle row (weight 1 on it, 0 on the next) and the two wall rows: the stored values, bit for bit.
        let same = |x: f64, y: f64| x.to_bits() == y.to_bits();
        assert!(same(c[1].1, m.pressure_pa[[1, 1]]));
        assert!(same(m.pressure_along(0.0)[3].1, m.pressure_pa[[3, 0]]));
        assert!(same(m.pressure_along(1.0)[3].1, m.pressure_pa[[3, 2]]));
    }

    #[test]
    fn a_line_across_the_width_runs_along_its_cell_column() {
        let (d, s) = field();
        let frame = MapFrame {
            rho_kg_per_m3: 1.0,
            inlet_pa: 0.0,
            flip: false,
        };
        let m = PlenumMap::from_solver(&d, &s, 0.0, frame);
        let same = |x: f64, y: f64| x.to_bits() == y.to_bits();
        // the end walls: the first and last cells along the length, across all three cells of the width
        let (front, rear) = (m.pressure_across(0.0), m.pressure_across(1.0));
        assert_eq!(front.len(), 3);
        assert!((front[2].0 - 1.0).abs() < 1e-12);
        for j in 0..3 {
            assert!(same(front[j].1, m.pressure_pa[[0, j]]));
            assert!(same(rear[j].1, m.pressure_pa[[3, j]]));
        }
        // the middle of four cells along the length lies halfway between the second and the third
        let mid = m.pressure_across(0.5);
        assert!((mid[1].1 - 0.5 * (m.pressure_pa[[1, 1]] + m.pressure_pa[[2, 1]])).abs() < 1e-12);
        // 0.625 of the length is the third cell's centre: that cell alone
        assert!(same(m.pressure_across(0.625)[1].1, m.pressure_pa[[2, 1]]));
    }
}
