//! The container's plenum on a grid of its own: the depth of every cell (a plenum tapered along the length), the
//! cell faces its baffles block, the faces its inlet feeds, and the check that every cell can be reached from the
//! inlet. The 2-D plenum (`airflow::plenum_shape::Plenum2d`) is built from it, and the container file's baffles are
//! checked with it on a fine reference grid.
//!
//! Orientation is the solver's: x counts from the inlet wall for an end inlet (a rear inlet is mirrored, as
//! `Container::discretize` mirrors the columns) and from the front wall for a side inlet; y from the left wall.
//! Index conventions are `airflow::plenum2d`'s: cells `j·nx + i`, x-faces `j·(nx+1) + i`, y-faces `j·nx + i`.
//!
//! A baffle is a line on the plan; on the grid it becomes the staircase of cell-face segments joining the grid
//! nodes nearest to points along it (stepping along x, then y, between consecutive nodes, so the staircase has no
//! diagonal gap for air to pass). Faces on the plenum's own walls are walls already. References: geometry only.
use std::collections::VecDeque;

use super::geometry::{Baffle, Container, InletWall};
use super::plenum2d::FlowDomain;
use crate::error::InputError;

/// Which velocity component a face carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FaceKind {
    /// A face normal to x (carries u).
    X,
    /// A face normal to y (carries v).
    Y,
}

/// One boundary face of the inlet opening.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InletFace {
    /// Which component the face carries.
    pub kind: FaceKind,
    /// Index of the face among its kind.
    pub face: usize,
    /// Index of the cell inside the plenum next to it.
    pub cell: usize,
    /// Share of the inflow through this face (the shares sum to 1; a partly covered face carries its part).
    pub share: f64,
    /// +1 when inflow runs along the axis, −1 against it (an inlet on the far wall of its axis).
    pub inward: f64,
    /// Face width, m (the cell size along the wall).
    pub width_m: f64,
    /// Plenum depth on the face, m (the flow core's face depth: that of the cell next to it).
    pub depth_m: f64,
    /// Jet momentum flux over its depth-mean value: the plenum depth over the opening's height (at least 1).
    pub momentum_factor: f64,
}

impl InletFace {
    /// Normal velocity on the face (signed as the face's axis), m/s, for a total inflow `inflow_m3_per_s`.
    pub fn velocity_m_per_s(&self, inflow_m3_per_s: f64) -> f64 {
        self.inward * inflow_m3_per_s * self.share / (self.depth_m * self.width_m)
    }
}

/// A part of the plenum no air from the inlet can reach, with open floor over it (a pocket with none passes no
/// air and is accepted: see [`PlenumLayout::closed_off`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ClosedOff {
    /// Its plan area, m².
    pub area_m2: f64,
    /// Its centroid along the length from the front wall, m.
    pub x_m: f64,
    /// Its centroid across the width from the left wall, m.
    pub y_m: f64,
    /// The open floor over it, m².
    pub open_floor_m2: f64,
}

/// The plenum on an nx × ny grid (see the module docs for orientation and indices).
#[derive(Debug, Clone, PartialEq)]
pub struct PlenumLayout {
    /// Cells along x.
    pub nx: usize,
    /// Cells along y.
    pub ny: usize,
    /// Cell size along x, m.
    pub dx: f64,
    /// Cell size along y, m.
    pub dy: f64,
    /// Plenum depth per cell, m.
    pub depth_m: Vec<f64>,
    /// Interior x-faces a baffle blocks.
    pub blocked_x: Vec<bool>,
    /// Interior y-faces a baffle blocks.
    pub blocked_y: Vec<bool>,
    /// Interior faces each baffle blocks, in the order given.
    pub baffle_faces: Vec<usize>,
    /// The inlet's faces.
    pub inlet: Vec<InletFace>,
    length_m: f64,
    mirrored: bool,
}

impl PlenumLayout {
    /// Lay `container`'s plenum, with `baffles` (normally all of the container's), on an nx × ny grid.
    pub fn new(container: &Container, baffles: &[Baffle], nx: usize, ny: usize) -> Self {
        let (l, w) = (container.length_m, container.width_m);
        let (dx, dy) = (l / nx as f64, w / ny as f64);
        let mirrored = container.solver_mirrored();
        let to_solver = |x: f64| if mirrored { l - x } else { x };
        let depth_m: Vec<f64> = (0..nx * ny)
            .map(|c| container.plenum_height_at_m(to_solver((c % nx) as f64 * dx + 0.5 * dx)))
            .collect();
        let mut layout = PlenumLayout {
            nx,
            ny,
            dx,
            dy,
            depth_m,
            blocked_x: vec![false; (nx + 1) * ny],
            blocked_y: vec![false; nx * (ny + 1)],
            baffle_faces: Vec::with_capacity(baffles.len()),
            inlet: Vec::new(),
            length_m: l,
            mirrored,
        };
        for b in baffles {
            let n = layout.block_line((to_solver(b.x0_m), b.y0_m), (to_solver(b.x1_m), b.y1_m));
            layout.baffle_faces.push(n);
        }
        layout.inlet = layout.inlet_faces(container);
        layout
    }

    /// Block the staircase of faces nearest the segment from `a` to `b` (solver coordinates, m); returns the
    /// number of interior faces newly blocked.
    fn block_line(&mut self, a: (f64, f64), b: (f64, f64)) -> usize {
        let (nx, ny) = (self.nx, self.ny);
        let node = |p: (f64, f64)| {
            let i = (p.0 / self.dx).round().clamp(0.0, nx as f64) as usize;
            let j = (p.1 / self.dy).round().clamp(0.0, ny as f64) as usize;
            (i, j)
        };
        let len = (b.0 - a.0).hypot(b.1 - a.1);
        let samples = (len / (0.25 * self.dx.min(self.dy))).ceil() as usize + 1;
        let mut cur = node(a);
        let mut count = 0;
        for s in 1..=samples {
            let t = s as f64 / samples as f64;
            let next = node((a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1)));
            while cur != next {
                let (i, j) = cur;
                if i != next.0 {
                    // a unit segment along y = j·dy: the y-face of cell column min(i, i′) at row line j
                    let i2 = if next.0 > i { i + 1 } else { i - 1 };
                    if j > 0 && j < ny {
                        let k = j * nx + i.min(i2);
                        count += usize::from(!self.blocked_y[k]);
                        self.blocked_y[k] = true;
                    }
                    cur = (i2, j);
                } else {
                    let j2 = if next.1 > j { j + 1 } else { j - 1 };
                    if i > 0 && i < nx {
                        let k = j.min(j2) * (nx + 1) + i;
                        count += usize::from(!self.blocked_x[k]);
                        self.blocked_x[k] = true;
                    }
                    cur = (i, j2);
                }
            }
        }
        count
    }

    /// The boundary faces under the opening, with their shares of the inflow.
    fn inlet_faces(&self, c: &Container) -> Vec<InletFace> {
        let (nx, ny, dx, dy) = (self.nx, self.ny, self.dx, self.dy);
        let (s0, s1) = c.inlet_span_m();
        let cover = |a: f64, d: f64| ((a + d).min(s1) - a.max(s0)).max(0.0) / d;
        let factor = |h: f64| h / c.inlet.height_m.min(h);
        let mut faces = Vec::new();
        match c.inlet.wall {
            InletWall::Front | InletWall::Rear => {
                for j in 0..ny {
                    let share = cover(j as f64 * dy, dy);
                    let cell = j * nx;
                    if share > 0.0 {
                        faces.push(InletFace {
                            kind: FaceKind::X,
                            face: j * (nx + 1),
                            cell,
                            share,
                            inward: 1.0,
                            width_m: dy,
                            depth_m: self.depth_m[cell],
                            momentum_factor: factor(self.depth_m[cell]),
                        });
                    }
                }
            }
            InletWall::Left | InletWall::Right => {
                let right = c.inlet.wall == InletWall::Right;
                for i in 0..nx {
                    let share = cover(i as f64 * dx, dx);
                    let (face, cell) = if right {
                        (ny * nx + i, (ny - 1) * nx + i)
                    } else {
                        (i, i)
                    };
                    if share > 0.0 {
                        faces.push(InletFace {
                            kind: FaceKind::Y,
                            face,
                            cell,
                            share,
                            inward: if right { -1.0 } else { 1.0 },
                            width_m: dx,
                            depth_m: self.depth_m[cell],
                            momentum_factor: factor(self.depth_m[cell]),
                        });
                    }
                }
            }
        }
        let total: f64 = faces.iter().map(|f| f.share).sum();
        faces.iter_mut().for_each(|f| f.share /= total);
        faces
    }

    /// Which cells the inlet's air can reach: those joined to the inlet by a path through faces no baffle blocks.
    pub fn reached(&self) -> Vec<bool> {
        let mut seen = vec![false; self.nx * self.ny];
        let starts: Vec<usize> = self.inlet.iter().map(|f| f.cell).collect();
        self.flood(&starts, &mut seen);
        seen
    }

    /// The first part of the plenum (in cell order) that no path through open faces joins to the inlet and that
    /// has open floor over it (`c`'s blocked areas): air would have to leave through that floor, and none can
    /// reach it. A closed pocket under blocked floor passes no air and is not reported; the 2-D plenum keeps its
    /// air at rest ([`PlenumLayout::apply`]).
    pub fn closed_off(&self, c: &Container) -> Option<ClosedOff> {
        let (nx, ny) = (self.nx, self.ny);
        let mut seen = self.reached();
        while let Some(first) = seen.iter().position(|s| !s) {
            let before = seen.clone();
            self.flood(&[first], &mut seen);
            let (mut n, mut sx, mut sy, mut open) = (0usize, 0.0, 0.0, 0.0);
            for k in (0..nx * ny).filter(|&k| seen[k] && !before[k]) {
                n += 1;
                sx += ((k % nx) as f64 + 0.5) * self.dx;
                sy += ((k / nx) as f64 + 0.5) * self.dy;
                open += self.cell_open_share(c, k) * self.dx * self.dy;
            }
            if open > 0.0 {
                let x = sx / n as f64;
                return Some(ClosedOff {
                    area_m2: n as f64 * self.dx * self.dy,
                    x_m: if self.mirrored { self.length_m - x } else { x },
                    y_m: sy / n as f64,
                    open_floor_m2: open,
                });
            }
        }
        None
    }

    /// Mark every cell reachable from `starts` through faces no baffle blocks.
    fn flood(&self, starts: &[usize], seen: &mut [bool]) {
        let (nx, ny) = (self.nx, self.ny);
        let mut queue: VecDeque<usize> = VecDeque::new();
        for &s in starts {
            if !seen[s] {
                seen[s] = true;
                queue.push_back(s);
            }
        }
        while let Some(c) = queue.pop_front() {
            let (i, j) = (c % nx, c / nx);
            let mut go = |to: usize, blocked: bool, queue: &mut VecDeque<usize>| {
                if !blocked && !seen[to] {
                    seen[to] = true;
                    queue.push_back(to);
                }
            };
            if i > 0 {
                go(c - 1, self.blocked_x[j * (nx + 1) + i], &mut queue);
            }
            if i + 1 < nx {
                go(c + 1, self.blocked_x[j * (nx + 1) + i + 1], &mut queue);
            }
            if j > 0 {
                go(c - nx, self.blocked_y[j * nx + i], &mut queue);
            }
            if j + 1 < ny {
                go(c + nx, self.blocked_y[(j + 1) * nx + i], &mut queue);
            }
        }
    }

    /// Check that this grid resolves every baffle and leaves the whole plenum open to the inlet: the container
    /// file is checked on a fine grid when it is read, but a gap narrower than the solve's plenum cells closes
    /// on them, and a baffle shorter than a cell or within half a cell of a wall vanishes from them. `refine` says
    /// how to get finer plenum cells (it depends on how the caller sized them).
    pub fn check_resolved(&self, c: &Container, refine: &str) -> Result<(), InputError> {
        let grid = format!("{} × {} plenum cells", self.nx, self.ny);
        if let Some(n) = self.baffle_faces.iter().position(|&f| f == 0) {
            return Err(InputError::argument(
                "plenum grid",
                grid,
                &format!(
                    "does not resolve baffles[{n}] (shorter than a plenum cell or within half a cell of a wall): {refine}"
                ),
            ));
        }
        if let Some(cut) = self.closed_off(c) {
            return Err(InputError::argument(
                "plenum grid",
                grid,
                &format!(
                    "closes a gap between baffles: {:.2} m² around x = {:.2} m, y = {:.2} m, with {:.2} m² of open floor, cannot be reached from the inlet; {refine} or widen the gap",
                    cut.area_m2, cut.x_m, cut.y_m, cut.open_floor_m2
                ),
            ));
        }
        Ok(())
    }

    /// The open share (0–1) of each cell's floor: the part outside the container's `floor.blocked_areas`, exact
    /// from the rectangles (`Container::open_floor_in_m2`). Less than 1e-12 of a cell counts as none, as
    /// `Container::discretize` counts a column's.
    pub fn floor_open_share(&self, c: &Container) -> Vec<f64> {
        if c.floor.blocked_areas.is_empty() {
            return vec![1.0; self.nx * self.ny];
        }
        (0..self.nx * self.ny)
            .map(|k| self.cell_open_share(c, k))
            .collect()
    }

    /// The open share of cell `k`'s floor (see [`PlenumLayout::floor_open_share`]).
    fn cell_open_share(&self, c: &Container, k: usize) -> f64 {
        if c.floor.blocked_areas.is_empty() {
            return 1.0;
        }
        let (i, j) = (k % self.nx, k / self.nx);
        let x0 = i as f64 * self.dx;
        let x0 = if self.mirrored {
            self.length_m - x0 - self.dx
        } else {
            x0
        };
        let y0 = j as f64 * self.dy;
        let share = c.open_floor_in_m2(x0, x0 + self.dx, y0, y0 + self.dy) / (self.dx * self.dy);
        if share < 1e-12 {
            0.0
        } else {
            share.min(1.0)
        }
    }

    /// Put the depths, the blocked faces and the inlet's momentum factors into a closed box of the same size (the
    /// inlet velocities are set per solve, from the inflow: [`InletFace::velocity_m_per_s`]). Every face of a cell
    /// the inlet cannot reach (a closed pocket, accepted only with no open floor) is held at zero: no air moves
    /// there, and the pressure correction leaves those cells out.
    pub fn apply(&self, d: &mut FlowDomain) {
        d.depth.copy_from_slice(&self.depth_m);
        let nx = self.nx;
        for (k, _) in self.reached().iter().enumerate().filter(|(_, r)| !**r) {
            let (i, j) = (k % nx, k / nx);
            for f in [j * (nx + 1) + i, j * (nx + 1) + i + 1] {
                d.u_fixed[f] = Some(0.0);
            }
            for f in [j * nx + i, (j + 1) * nx + i] {
                d.v_fixed[f] = Some(0.0);
            }
        }
        for (f, &b) in d.u_fixed.iter_mut().zip(&self.blocked_x) {
            if b {
                *f = Some(0.0);
            }
        }
        for (f, &b) in d.v_fixed.iter_mut().zip(&self.blocked_y) {
            if b {
                *f = Some(0.0);
            }
        }
        for f in &self.inlet {
            match f.kind {
                FaceKind::X => d.u_momentum_factor[f.face] = f.momentum_factor,
                FaceKind::Y => d.v_momentum_factor[f.face] = f.momentum_factor,
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::airflow::geometry::{Fill, Floor, Inlet, Permeability, PlenumChoice};

    fn box_container(wall: InletWall) -> Container {
        Container {
            name: "t".into(),
            description: String::new(),
            length_m: 4.0,
            width_m: 2.0,
            wall_height_m: 1.5,
            plenum_height_m: 0.4,
            plenum_rear_height_m: None,
            baffles: vec![],
            floor: Floor {
                open_area_fraction: 0.2,
                discharge_coefficient: 0.6,
                blocked_areas: vec![],
            },
            inlet: Inlet {
                wall,
                width_m: 1.0,
                height_m: 0.4,
                offset_m: 0.0,
                transition_loss_coefficient: 0.0,
            },
            fill: Fill::Level { depth_m: 1.0 },
            permeability: Permeability::default(),
            leakage_m3_per_s_per_sqrt_pa: 0.0,
            plenum: PlenumChoice::TwoD {
                cells_per_column: None,
                mixing_length_ratio: None,
            },
        }
    }

    #[test]
    fn a_wall_across_the_width_closes_off_the_far_end() {
        let c = box_container(InletWall::Front);
        let wall = Baffle {
            x0_m: 3.0,
            y0_m: 0.0,
            x1_m: 3.0,
            y1_m: 2.0,
        };
        let l = PlenumLayout::new(&c, &[wall], 8, 4);
        assert_eq!(l.baffle_faces, vec![4]);
        let cut = l.closed_off(&c).expect("the last metre is cut off");
        approx::assert_relative_eq!(cut.area_m2, 2.0, max_relative = 1e-12);
        approx::assert_relative_eq!(cut.x_m, 3.5, max_relative = 1e-12);
        // a gap of one cell keeps it open
        let short = Baffle { y1_m: 1.5, ..wall };
        assert!(PlenumLayout::new(&c, &[short], 8, 4)
            .closed_off(&c)
            .is_none());
    }

    #[test]
    fn a_closed_pocket_under_blocked_floor_passes_and_is_held_at_rest() {
        let mut c = box_container(InletWall::Front);
        let wall = Baffle {
            x0_m: 3.0,
            y0_m: 0.0,
            x1_m: 3.0,
            y1_m: 2.0,
        };
        let blocked = |x0_m: f64| crate::airflow::geometry::FloorArea {
            x0_m,
            x1_m: 4.0,
            y0_m: 0.0,
            y1_m: 2.0,
        };
        // the floor behind the wall blocked but for a 0.1 m strip: that strip's air cannot come from anywhere
        c.floor.blocked_areas = vec![blocked(3.1)];
        let l = PlenumLayout::new(&c, &[wall], 8, 4);
        let cut = l.closed_off(&c).expect("open floor in the pocket");
        approx::assert_relative_eq!(cut.open_floor_m2, 0.2, max_relative = 1e-12);
        // all of it blocked: nothing has to reach it
        c.floor.blocked_areas = vec![blocked(3.0)];
        assert!(l.closed_off(&c).is_none());
        assert!(l.check_resolved(&c, "refine").is_ok());
        let mut d = FlowDomain::closed_box(8, 4, l.dx, l.dy, 1.0);
        l.apply(&mut d);
        // the pocket is cells 6 and 7 of each row: all their faces held at zero, the rest of the plenum open
        for j in 0..4 {
            for i in 0..8 {
                let held = [d.u_fixed[j * 9 + i], d.u_fixed[j * 9 + i + 1]]
                    .into_iter()
                    .chain([d.v_fixed[j * 8 + i], d.v_fixed[(j + 1) * 8 + i]])
                    .all(|f| f == Some(0.0));
                assert_eq!(held, i >= 6, "cell ({i}, {j})");
            }
        }
    }

    #[test]
    fn a_diagonal_baffle_is_a_gap_free_staircase() {
        let c = box_container(InletWall::Front);
        // corner to corner: splits the plenum in two with no diagonal leak between cells
        let diag = Baffle {
            x0_m: 0.0,
            y0_m: 0.0,
            x1_m: 4.0,
            y1_m: 2.0,
        };
        let l = PlenumLayout::new(&c, &[diag], 16, 8);
        assert!(l.closed_off(&c).is_some());
    }

    #[test]
    fn side_inlet_faces_carry_the_inflow_into_the_plenum() {
        for (wall, sign) in [(InletWall::Left, 1.0), (InletWall::Right, -1.0)] {
            let mut c = box_container(wall);
            c.inlet.offset_m = 0.75; // centre at x = 2.75 m
            let l = PlenumLayout::new(&c, &[], 8, 4);
            let q: f64 = l
                .inlet
                .iter()
                .map(|f| f.velocity_m_per_s(1.0) * f.depth_m * f.width_m)
                .sum();
            approx::assert_relative_eq!(q, sign, max_relative = 1e-12);
            let cells: Vec<usize> = l.inlet.iter().map(|f| f.cell % 8).collect();
            assert_eq!(cells, vec![4, 5, 6]); // 2.25–3.25 m on 0.5 m cells: halves of 4 and 6, all of 5
        }
    }

    #[test]
    fn a_taper_follows_the_inlet_wall_when_mirrored() {
        let mut c = box_container(InletWall::Rear);
        c.plenum_rear_height_m = Some(0.2);
        let l = PlenumLayout::new(&c, &[], 4, 2);
        // solver x = 0 is the rear wall: the shallow end
        assert!(l.depth_m[0] < l.depth_m[3]);
        approx::assert_relative_eq!(l.depth_m[0], 0.2 + 0.2 * 0.125, max_relative = 1e-12);
    }
}
