//! The plenum as the coupled solve sees it: given the floor outflow of every column and the leakage, return the
//! plenum static-pressure shape δ per column, relative to the inlet static pressure. Three implementations behind
//! one trait, chosen by [`PlenumModel`]: one uniform pressure, the 1-D duct of `airflow::plenum`, and the 2-D
//! depth-averaged flow of `airflow::plenum2d`, which keeps its own flow field between calls (warm start).
//!
//! Column arrays are in the solver's orientation: index `i·ny + j`, i = 0 at the inlet wall.
//!
//! The 2-D plenum runs on a grid of its own ([`Plenum2dParams::resolution_on`]): r × r cells under each column, or on
//! very fine bed grids one cell under s × s columns. The transfer is conservative: a column's outflow leaves through
//! its cells in proportion to the open share of each cell's floor (a cell under a blocked floor area passes none; a
//! column with no open floor, which takes no air, spreads its zero evenly), and its δ is the mean over its cells with
//! the same weights, the pressure under the floor the air leaves through; under a coarser plenum each column's air
//! leaves through its one cell, and all the columns over a cell see its pressure (piecewise constant: on the trailer
//! with a 0.8 m plenum, 2 × 2 columns of 0.1 m per cell gave a column-flow CV of 0.0298 against 0.0246 on one cell per
//! column). The leakage leaves evenly from the cells the inlet's air reaches. A pocket closed off by baffles is
//! accepted only over blocked floor (`PlenumLayout::closed_off`); its air is held at rest and its pressure, which
//! nothing sets, is left out of the map (NaN: no air there). The plenum's shape on that grid comes from
//! `airflow::plenum_layout`: the depth of each cell (a taper), the faces baffles block, and the inlet, a set of
//! boundary faces on its wall (an end wall or a side wall) covering the opening's width at its offset (partly covered
//! faces carry their share); the jet fills `inlet height / plenum height` of the depth, so it enters with a momentum
//! flux of `h/h_inlet` times its depth-mean value. The inlet static pressure is the mean over the cells along the
//! opening.
//!
//! Status: the coupled loop calls the 2-D plenum inexactly: 20 Anderson-accelerated SIMPLEC iterations per call
//! (fewer in a loose re-solve, below) from the kept field (`SIMPLEC_PER_CALL`, `RELAX_ACCELERATED`,
//! `ANDERSON_DEPTH`), and stops only when the bed has
//! settled and the plenum meets its own tolerance ([`Plenum::converged`]). Within a call the floor outflow answers
//! the plenum pressure through each column's conductance to the bed ([`FloorResponse`]), so the plenum's pressure
//! distribution meets the bed's resistance inside the plenum's own iterations rather than only from one outer step
//! to the next; the coupled fixed point is unchanged. Measured 2026-12-03 (bench set-up, load average 5–8), against
//! the fixed sink of before: at 32 × 12 × 10, 20 outer / 380 SIMPLEC iterations and about 0.5 s of CPU (34 / 660,
//! 0.9–1.4 s before); at 64 × 24 × 32, 105 / 2 080 and 20 s (186 / 3 700, 30 s before) — still far from the
//! issue's 0.5 s: the plenum's own SIMPLEC convergence, not the coupling, is now the limit; it needs many more
//! iterations on a finer plenum grid. Those figures are for 2 plenum cells per column side (a 128 × 48 plenum
//! grid of 0.05 m cells); the default now keeps plenum cells no narrower than a quarter of the plenum's height
//! ([`Plenum2dParams::resolution_on`]), one per 0.1 m column there, and the pressure correction relaxes whole
//! rows: 21 outer / 400 SIMPLEC iterations and about 0.6 s of CPU cold, 16 / 300 warm (current figures:
//! DEVELOPERS.md, bench `airflow 2-D plenum`). The earlier record follows. With the default mixing length c_m = 0.3 (see
//! [`Plenum2dParams`]) it converges on the bundled trailer (12 m/s jet through a 0.8 × 0.4 m inlet into a 0.4 m
//! plenum); with c_m = 0.1 plain SIMPLEC does not (limit cycle). Measured 2026-12-03 on the shared machine (load
//! average 8–15): at 32 × 12 × 10, 31 outer / 600 SIMPLEC iterations, about 1 s of CPU (it was 352 outer
//! iterations and 23 s of CPU with plain SIMPLEC to 1e-7 on every call); at 64 × 24 × 32 with the fan, 150 outer /
//! 2 980 SIMPLEC iterations, about 26–31 s of CPU, against the 0.5 s and about 0.2 s for the 1-D duct; a
//! warm re-solve (from the kept field and its shape) took 129 / 2 560, 0.8 of cold; the plenum was the whole cost,
//! and the container file had to choose it (`"plenum": {"model": "2d"}`). Since 2026-12-04 it is the default
//! wherever the bed grid resolves it (`Container::plenum_model_on`), a loose re-solve's calls end once the plenum
//! meets its tolerance after at least `LOOSE_MIN_PER_CALL` iterations, and a solve's warm start carries the
//! plenum's own field ([`Plenum::kept_state`]), into a kept plenum or a fresh one.
use serde::{Deserialize, Serialize};

use super::geometry::{Container, Grid};
use super::plenum::{profile, PlenumGeometry, PlenumModel};
use super::plenum2d::{
    advance_flow, FlowDomain, FlowError, FlowParams, FlowState, FlowStats, Scheme,
};
use super::plenum_layout::{FaceKind, InletFace, PlenumLayout};
use super::plenum_map::{MapFrame, PlenumMap};
use crate::error::InputError;

/// Kinematic viscosity of air near 30 °C, m²/s (ASHRAE 2017 ch. 33 tables, about 1.6e-5; from memory).
const NU_AIR: f64 = 1.6e-5;

/// SIMPLEC iterations per [`Plenum::shape_pa`] call of the 2-D plenum. The coupled loop changes the floor outflow
/// between calls, so solving the plenum fully each time is wasted work; its stop test waits for
/// [`Plenum::converged`]. Measured on the 6.4 m trailer at 32 × 12 × 10 (2026-12-03): 10 per call took 98 outer
/// iterations and 970 SIMPLEC iterations, 20 per call 31 and 600.
const SIMPLEC_PER_CALL: u32 = 20;
/// The plenum's own tolerance (relative velocity change and mass imbalance per SIMPLEC iteration) over the coupled
/// loop's outer tolerance: 1e-7 for a reported airflow's 1e-8.
const TOLERANCE_PER_OUTER: f64 = 10.0;
/// From this outer tolerance up (a drying run's re-solve, `drying::flow::RESOLVE_TOLERANCE`), a call of the 2-D
/// plenum may end after [`LOOSE_MIN_PER_CALL`] iterations once the plenum meets its own tolerance: started from
/// the last solution, the sinks move only by the re-solve's small correction, and more iterations add nothing.
/// Tighter solves do all [`SIMPLEC_PER_CALL`] (ending calls early there took 68 outer steps cold at 64 × 24 × 32
/// against 21, and 38 warm against 16, measured 2026-12-04).
const LOOSE_OUTER_TOLERANCE: f64 = 1e-6;
/// Fewest SIMPLEC iterations of a call in a loose re-solve. Measured 2026-12-04 on the bench's run's re-solve at
/// 64 × 24 × 32 (6 outer steps at 20 per call, 100 SIMPLEC iterations): 10 at least took 6 / 50, 5 took 6 / 25,
/// 2 took 9 / 16, the fewest outer steps times their bed solves and plenum iterations at 5.
const LOOSE_MIN_PER_CALL: u32 = 5;

/// Differences kept by the Anderson acceleration of the plenum's SIMPLEC iterations (`plenum2d::advance_flow`).
/// Measured on the 6.4 m trailer at 32 × 12 × 10 with the floor response on (2026-12-03, the bench's set-up): 5
/// differences took 28 outer / 540 SIMPLEC iterations, 10 took 20 / 380, 20 also 20 / 380 at a higher cost per
/// iteration. Keeping the differences from one call to the next instead of starting each call afresh diverged.
const ANDERSON_DEPTH: usize = 10;

/// Momentum relaxation of the accelerated inexact solve, in place of the 0.5 that [`Plenum2d::new`] sets for a
/// plain SIMPLEC solve. Measured on the 6.4 m trailer at 32 × 12 × 10 with 20 iterations per call (2026-12-03):
/// plain SIMPLEC at 0.85 took 197 outer / 2016 SIMPLEC iterations; Anderson-accelerated at 0.85, 44 / 459 (one
/// iteration per call once converged; 31 / 600 with all 20, as now); Anderson-accelerated at 0.5 stalled with a
/// velocity change of 1.4e-5 per iteration. The converged field is the same (it does not depend on relaxation).
const RELAX_ACCELERATED: f64 = 0.85;

/// Settings of the 2-D plenum (numerical-model settings with documented defaults).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Plenum2dParams {
    /// Plenum cells along each side of a bed column; `None`: chosen from the columns' size
    /// ([`Plenum2dParams::resolution_on`]).
    pub cells_per_column: Option<usize>,
    /// Skin-friction coefficient c_f of the floor sheet and of the plenum bottom, each.
    pub friction_coefficient: f64,
    /// Mixing length over plenum height, c_m.
    pub mixing_length_ratio: f64,
    /// Depth-mean eddy-viscosity coefficient (κ/6).
    pub depth_eddy_coefficient: f64,
    /// Fraction of horizontal momentum leaving with the floor outflow.
    pub outflow_momentum_fraction: f64,
}

impl Default for Plenum2dParams {
    /// Plenum cells per column side chosen from the bed grid (see [`Plenum2dParams::resolution_on`]);
    /// c_f = 0.0075, a quarter of the duct's Darcy factor 0.03 so both models share one wall friction; κ/6 =
    /// 0.41/6 (DOMAIN.md §13, from memory); β = 1 as in the duct. c_m = 0.3, three times the top of DOMAIN.md
    /// §13's 0.07–0.1: with 0.1 the trailer's jet gives no steady solution (SIMPLEC limit cycle of 0.3–3.5 %
    /// velocity change per iteration), with 0.3 it converges. This is a numerical choice, not a calibrated one.
    fn default() -> Self {
        Plenum2dParams {
            cells_per_column: None,
            friction_coefficient: 0.0075,
            mixing_length_ratio: 0.3,
            depth_eddy_coefficient: 0.41 / 6.0,
            outflow_momentum_fraction: 1.0,
        }
    }
}

/// Plenum cells no narrower than about this fraction of the plenum's height, where the bed's columns allow
/// ([`Plenum2dParams::resolution_on`]).
const FINEST_CELL_PER_HEIGHT: f64 = 0.25;

/// How the plenum's grid meets the bed's columns: `per_column` plenum cells along each side of a column, or one
/// plenum cell over `columns_per_cell` columns along each side (one of the two is 1).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct PlenumResolution {
    /// Plenum cells along each side of a column.
    pub per_column: usize,
    /// Columns along each side of a plenum cell.
    pub columns_per_cell: usize,
}

impl PlenumResolution {
    /// The plenum grid's size under `grid`'s columns.
    pub fn plenum_cells(&self, grid: Grid) -> (usize, usize) {
        let (r, s) = (self.per_column, self.columns_per_cell);
        (grid.nx * r / s, grid.ny * r / s)
    }
}

impl Plenum2dParams {
    /// The plenum grid for `grid`'s columns on `container`: the file's own cells per column, else plenum cells
    /// close to a quarter of the plenum's lowest height and no narrower where the columns allow: 2 per column
    /// side, 1 where 2 would be narrower, and on columns narrower still one plenum cell over the most columns
    /// (dividing the grid evenly) that keep it no wider than the quarter height. A depth-averaged model does not
    /// resolve horizontal features much smaller than its depth, and finer plenum cells cost many more SIMPLEC
    /// iterations for little change (our own numerical choice). Measured on the 6.4 m trailer with its 0.4 m
    /// plenum and fan `vane-3kw` at 32 × 12 × 10 columns (2026-12-03): plenum cells of 0.2, 0.1 and 0.05 m gave a
    /// column-flow CV of 0.0831, 0.0858 and 0.0865, and top-surface velocities at most 1.6 % and 0.37 % of the
    /// mean from the 0.05 m cells' (the 0.1 m cells are this rule's choice there); the 0.05 m cells took 109
    /// outer / 2 160 SIMPLEC iterations and 19 s of CPU against 20 / 380 and 0.7 s.
    pub fn resolution_on(&self, container: &Container, grid: Grid) -> PlenumResolution {
        let finer = |r: usize| PlenumResolution {
            per_column: r,
            columns_per_cell: 1,
        };
        if let Some(r) = self.cells_per_column {
            return finer(r.max(1));
        }
        let h = container
            .plenum_height_at_m(0.0)
            .min(container.plenum_height_at_m(container.length_m));
        let quarter = FINEST_CELL_PER_HEIGHT * h;
        let column = (container.length_m / grid.nx as f64).min(container.width_m / grid.ny as f64);
        if column / 2.0 >= quarter * (1.0 - 1e-9) {
            return finer(2);
        }
        let mut s = ((quarter / column) * (1.0 + 1e-9)).floor().max(1.0) as usize;
        while !grid.nx.is_multiple_of(s) || !grid.ny.is_multiple_of(s) {
            s -= 1;
        }
        PlenumResolution {
            per_column: 1,
            columns_per_cell: s,
        }
    }
}

/// How the bed's inflow answers the plenum pressure near the state the coupled loop last solved: column c takes
/// `outflow[c] + conductance[c]·(p_c − p_in − shape[c])` when its plenum pressure p_c moves (p_in: the inlet
/// static pressure, held). A plenum solved iteratively (the 2-D flow) can then let its floor outflow answer its
/// own pressure within its iterations instead of only between outer steps; the answer at the coupled fixed point
/// is the same, where every column's pressure is the one its outflow was computed at.
#[derive(Debug, Clone, Copy)]
pub struct FloorResponse<'a> {
    /// Change of each column's floor outflow per pascal of its plenum pressure, m³/(s·Pa).
    pub conductance_m3_per_s_per_pa: &'a [f64],
    /// The plenum shape δ per column (Pa) the outflow was computed with.
    pub shape_pa: &'a [f64],
}

/// The plenum's one job in the coupled loop.
pub trait Plenum {
    /// Plenum static pressure minus inlet static pressure under each column, Pa, for the floor outflow of each
    /// column (m³/s) and the leakage (m³/s, spread evenly over the plenum), at plenum air density `rho`; with
    /// `response`, how that outflow answers the plenum pressure (a plenum may ignore it: the uniform and the duct
    /// plenums, which are solved directly, do).
    fn shape_pa(
        &mut self,
        outflow_m3_per_s: &[f64],
        leakage_m3_per_s: f64,
        rho_kg_per_m3: f64,
        response: Option<FloorResponse<'_>>,
    ) -> Result<Vec<f64>, FlowError>;
    /// True if δ is always zero (then the coupled loop needs no shape solve).
    fn is_uniform(&self) -> bool {
        false
    }
    /// The plenum's own flow field after the last call, for the outputs (only a plenum that has one).
    fn flow_map(&self, _frame: MapFrame) -> Option<PlenumMap> {
        None
    }
    /// True when the plenum's own iteration met its tolerance in the last [`Plenum::shape_pa`] call. A plenum
    /// solved inexactly (a few iterations per call, continuing from its kept state) answers false until it has;
    /// the coupled loop does not stop before it does. Direct models always answer true.
    fn converged(&self) -> bool {
        true
    }
    /// Per column (in the solver's order), true when the column lies wholly over a closed pocket of the plenum,
    /// whose air the inlet's does not reach; empty when there is none (every model but the 2-D plenum).
    fn pocket_columns(&self) -> Vec<bool> {
        Vec::new()
    }
    /// Let a plenum solved iteratively meet a tolerance in proportion to the coupled loop's `outer` tolerance,
    /// and in a loose re-solve end its calls once it does (a direct model ignores it).
    fn set_outer_tolerance(&mut self, _outer: f64) {}
    /// The state the plenum keeps between calls, flattened, or empty if it keeps none (a direct model): with
    /// [`Plenum::set_kept_state`], how a re-solve's predicted start (`WarmStart::predicted`) reaches the 2-D flow.
    fn kept_state(&self) -> Vec<f64> {
        Vec::new()
    }
    /// Replace the kept state by `state`, one from [`Plenum::kept_state`] (of this plenum or of another of the same
    /// container and grid, as a warm start with a fresh plenum carries it) or a linear combination of several;
    /// ignored if it does not fit.
    fn set_kept_state(&mut self, _state: &[f64]) {}
}

/// One pressure under the whole floor.
pub struct UniformPlenum;

impl Plenum for UniformPlenum {
    fn shape_pa(
        &mut self,
        q: &[f64],
        _: f64,
        _: f64,
        _: Option<FloorResponse<'_>>,
    ) -> Result<Vec<f64>, FlowError> {
        Ok(vec![0.0; q.len()])
    }
    fn is_uniform(&self) -> bool {
        true
    }
}

/// The 1-D dividing-flow duct along the length (`airflow::plenum`).
pub struct DuctPlenum {
    model: PlenumModel,
    geom: PlenumGeometry,
    ny: usize,
}

impl Plenum for DuctPlenum {
    fn shape_pa(
        &mut self,
        q: &[f64],
        leak: f64,
        rho: f64,
        _: Option<FloorResponse<'_>>,
    ) -> Result<Vec<f64>, FlowError> {
        let nx = q.len() / self.ny;
        let mut rows = vec![leak / nx as f64; nx];
        for (c, v) in q.iter().enumerate() {
            rows[c / self.ny] += v;
        }
        let rise = profile(&self.model, &self.geom, &rows, rho).rise_pa;
        Ok((0..q.len()).map(|c| rise[c / self.ny]).collect())
    }
}

/// A share of one column's outflow leaving through one plenum cell (index `j·nx + i` of the plenum grid; the
/// shares of a column's links sum to 1). Finer plenum: each cell has one link, to its column; coarser: one per
/// column under it.
#[derive(Debug, Clone, Copy)]
struct Link {
    cell: usize,
    column: usize,
    share: f64,
}

/// The 2-D depth-averaged plenum, with its flow field kept between calls.
pub struct Plenum2d {
    domain: FlowDomain,
    params: FlowParams,
    state: FlowState,
    grid: Grid,
    /// Where each column's outflow leaves the plenum, grouped by plenum cell (see [`Link`]).
    links: Vec<Link>,
    /// Share of the leakage leaving through each plenum cell: even over the cells the inlet's air reaches, none in
    /// a closed pocket.
    leak_share: Vec<f64>,
    /// The cells the inlet's air reaches (false in a closed pocket, whose air is at rest).
    reached: Vec<bool>,
    /// The inlet's boundary faces with their shares of the inflow.
    inlet: Vec<InletFace>,
    /// Last solve's record.
    pub last: Option<FlowStats>,
    /// SIMPLEC iterations summed over all calls.
    pub total_iters: u32,
    /// Fewest SIMPLEC iterations of a call (all [`SIMPLEC_PER_CALL`] but in a loose re-solve).
    min_per_call: u32,
}

impl Plenum2d {
    /// Build the plenum grid under `grid`'s columns of `container` (inlet at x = 0 of the solver orientation for
    /// an end inlet; see `airflow::plenum_layout`). [`build`] checks first that the grid resolves the baffles.
    pub fn new(container: &Container, grid: Grid, p: &Plenum2dParams) -> Self {
        let res = p.resolution_on(container, grid);
        let (nx, ny) = res.plenum_cells(grid);
        let layout = PlenumLayout::new(container, &container.baffles, nx, ny);
        let mut domain = FlowDomain::closed_box(nx, ny, layout.dx, layout.dy, 1.0);
        layout.apply(&mut domain);
        let reached = layout.reached();
        let links = links(&layout.floor_open_share(container), &reached, grid, res);
        let n_reached = reached.iter().filter(|r| **r).count() as f64;
        let leak_share = reached
            .iter()
            .map(|&r| if r { 1.0 / n_reached } else { 0.0 })
            .collect();
        let inlet = layout.inlet;
        let params = FlowParams {
            nu_m2_per_s: NU_AIR,
            friction_coefficient: p.friction_coefficient,
            depth_eddy_coefficient: p.depth_eddy_coefficient,
            mixing_length_ratio: p.mixing_length_ratio,
            outflow_momentum_fraction: p.outflow_momentum_fraction,
            scheme: Scheme::VanLeer,
            relax_velocity: 0.5,
            relax_pressure: 1.0,
            tolerance: 1e-7,
            max_iters: 20_000,
        };
        let state = FlowState::at_rest(&domain);
        Plenum2d {
            domain,
            params,
            state,
            grid,
            links,
            leak_share,
            reached,
            inlet,
            last: None,
            total_iters: 0,
            min_per_call: SIMPLEC_PER_CALL,
        }
    }

    /// The plenum grid and its current flow field.
    pub fn field(&self) -> (&FlowDomain, &FlowState) {
        (&self.domain, &self.state)
    }

    /// Kinematic static pressure at the inlet: the mean over the cells along the opening, m²/s².
    fn inlet_kinematic(&self) -> f64 {
        self.inlet
            .iter()
            .map(|f| f.share * self.state.p[f.cell])
            .sum()
    }

    /// δ per column of the kept flow field: the mean over each column's cells of P − P_inlet, times ρ, weighted
    /// by each cell's share of the column's outflow. Cells in a closed pocket count for nothing: nothing sets the
    /// pressure of air at rest in a sealed pocket, so a column wholly over one (no open floor, no air) reports the
    /// inlet static pressure.
    fn shape_of_state(&self, rho: f64) -> Vec<f64> {
        let p_in = self.inlet_kinematic();
        let mut out = vec![0.0; self.grid.nx * self.grid.ny];
        for l in self.links.iter().filter(|l| self.reached[l.cell]) {
            out[l.column] += rho * (self.state.p[l.cell] - p_in) * l.share;
        }
        out
    }

    /// Let each plenum cell's outflow answer its pressure as `response` says, a column's conductance divided
    /// over its cells as its outflow is (kinematic: ρ·g), about the state the outflow was computed at: the kept field, shifted
    /// under each column by the difference between the shape the bed saw and the kept field's. Without a
    /// response the sinks are fixed.
    fn set_response(&mut self, response: Option<FloorResponse<'_>>, rho: f64) {
        let now = self.shape_of_state(rho);
        let d = &mut self.domain;
        // each link's conductance (its column's, divided over its plenum cells as its air is: through the open
        // floor) and the plenum pressure its outflow was computed at
        let link = |l: &Link| {
            let (g, at) = response.map_or((0.0, now[l.column]), |f| {
                (
                    f.conductance_m3_per_s_per_pa[l.column],
                    f.shape_pa[l.column],
                )
            });
            let reference = self.state.p[l.cell] + (at - now[l.column]) / rho;
            (rho * g.max(0.0) * l.share, reference)
        };
        for group in self.links.chunk_by(|a, b| a.cell == b.cell) {
            let k = group[0].cell;
            let (g, reference) = match group {
                [one] => link(one),
                // a cell over several columns: their summed conductance about their weighted reference
                _ => {
                    let (g, gp) = group
                        .iter()
                        .map(link)
                        .fold((0.0, 0.0), |(g, gp), (gk, pk)| (g + gk, gp + gk * pk));
                    (g, if g > 0.0 { gp / g } else { self.state.p[k] })
                }
            };
            d.sink_conductance[k] = g;
            d.sink_reference_p[k] = reference;
        }
    }
}

/// Where each column's outflow leaves the plenum, in plenum-cell order. A finer plenum (r × r cells per column):
/// each cell's share of its column's outflow is in proportion to the open share of its floor; under a column with
/// none open (which takes no air) evenly over its cells the inlet's air `reached`, or over all its cells if it
/// lies wholly in a closed pocket. A closed pocket has no open floor (`PlenumLayout::closed_off`), so it gets no
/// share of a column's air. A coarser plenum (one cell over s × s columns): each column's whole outflow leaves
/// through its cell (a column's blocked floor is already in its outflow).
fn links(open: &[f64], reached: &[bool], grid: Grid, res: PlenumResolution) -> Vec<Link> {
    let (nx, _) = res.plenum_cells(grid);
    let (r, s) = (res.per_column, res.columns_per_cell);
    if s > 1 {
        let column = |k: usize, a: usize, b: usize| (k % nx * s + a) * grid.ny + k / nx * s + b;
        return (0..open.len())
            .flat_map(|k| (0..s * s).map(move |ab| (k, ab / s, ab % s)))
            .map(|(k, a, b)| Link {
                cell: k,
                column: column(k, a, b),
                share: 1.0,
            })
            .collect();
    }
    let col = |k: usize| ((k % nx) / r) * grid.ny + (k / nx) / r;
    let mut total = vec![0.0; grid.nx * grid.ny];
    let mut n_reached = vec![0usize; grid.nx * grid.ny];
    for (k, s) in open.iter().enumerate() {
        total[col(k)] += s;
        n_reached[col(k)] += usize::from(reached[k]);
    }
    open.iter()
        .enumerate()
        .map(|(k, s)| {
            let (t, n) = (total[col(k)], n_reached[col(k)]);
            let share = if t > 0.0 {
                s / t
            } else if n > 0 {
                f64::from(u8::from(reached[k])) / n as f64
            } else {
                1.0 / (r * r) as f64
            };
            Link {
                cell: k,
                column: col(k),
                share,
            }
        })
        .collect()
}

impl Plenum for Plenum2d {
    fn shape_pa(
        &mut self,
        q: &[f64],
        leak: f64,
        rho: f64,
        response: Option<FloorResponse<'_>>,
    ) -> Result<Vec<f64>, FlowError> {
        self.set_response(response, rho);
        let d = &mut self.domain;
        d.sink_m3_per_s.fill(0.0);
        for l in &self.links {
            d.sink_m3_per_s[l.cell] += q[l.column] * l.share;
        }
        for (sink, share) in d.sink_m3_per_s.iter_mut().zip(&self.leak_share) {
            *sink += leak * share;
        }
        let inflow: f64 = q.iter().sum::<f64>() + leak;
        for f in &self.inlet {
            let v = Some(f.velocity_m_per_s(inflow));
            match f.kind {
                FaceKind::X => d.u_fixed[f.face] = v,
                FaceKind::Y => d.v_fixed[f.face] = v,
            }
        }
        let prm = FlowParams {
            relax_velocity: RELAX_ACCELERATED,
            ..self.params
        };
        let calls = (self.min_per_call, SIMPLEC_PER_CALL);
        let stats = advance_flow(d, &prm, &mut self.state, calls, ANDERSON_DEPTH)?;
        self.total_iters += stats.iters;
        self.last = Some(stats);
        Ok(self.shape_of_state(rho))
    }

    fn converged(&self) -> bool {
        self.last.is_some_and(|s| s.converged)
    }

    fn pocket_columns(&self) -> Vec<bool> {
        let mut reached = vec![false; self.grid.nx * self.grid.ny];
        for l in self.links.iter().filter(|l| self.reached[l.cell]) {
            reached[l.column] = true;
        }
        reached.iter().map(|r| !r).collect()
    }

    fn set_outer_tolerance(&mut self, outer: f64) {
        self.params.tolerance = TOLERANCE_PER_OUTER * outer;
        self.min_per_call = if outer >= LOOSE_OUTER_TOLERANCE {
            LOOSE_MIN_PER_CALL
        } else {
            SIMPLEC_PER_CALL
        };
    }

    /// u, then v, then P; empty before the first call.
    fn kept_state(&self) -> Vec<f64> {
        let s = &self.state;
        match self.last {
            Some(_) => [&s.u[..], &s.v[..], &s.p[..]].concat(),
            None => Vec::new(),
        }
    }

    fn set_kept_state(&mut self, state: &[f64]) {
        let s = &mut self.state;
        let (nu, nv) = (s.u.len(), s.v.len());
        if state.len() == nu + nv + s.p.len() {
            s.u.copy_from_slice(&state[..nu]);
            s.v.copy_from_slice(&state[nu..nu + nv]);
            s.p.copy_from_slice(&state[nu + nv..]);
        }
    }

    fn flow_map(&self, frame: MapFrame) -> Option<PlenumMap> {
        let p_in = self.inlet_kinematic();
        Some(PlenumMap::from_solver(
            &self.domain,
            &self.state,
            p_in,
            frame,
        ))
    }
}

/// The plenum `model` asks for, for `container` on `grid`. Refused: a geometry the model cannot represent (a side
/// inlet or baffles in the 1-D duct: `Container::plenum_model_limit`), and a 2-D plenum grid too coarse for the
/// baffles (`PlenumLayout::check_resolved`).
pub fn build(
    model: &PlenumModel,
    container: &Container,
    grid: Grid,
) -> Result<Box<dyn Plenum + Send>, InputError> {
    if let Some((field, message)) = container.plenum_model_limit(model) {
        return Err(InputError::argument(
            "plenum model",
            format!("duct for container {:?} ({field})", container.name),
            &format!("cannot be used: {message}"),
        ));
    }
    Ok(match model {
        PlenumModel::Uniform => Box::new(UniformPlenum),
        PlenumModel::Manifold(_) => {
            let inl = container.inlet;
            // the duct marches from the inlet wall: its height there first
            let front = if container.solver_mirrored() {
                container.length_m
            } else {
                0.0
            };
            Box::new(DuctPlenum {
                model: *model,
                geom: PlenumGeometry {
                    length_m: container.length_m,
                    width_m: container.width_m,
                    height_m: container.plenum_height_at_m(front),
                    far_height_m: container.plenum_height_at_m(container.length_m - front),
                    inlet_area_m2: container.inlet_area_m2(),
                    inlet_hydraulic_diameter_m: 2.0 * inl.width_m * inl.height_m
                        / (inl.width_m + inl.height_m),
                },
                ny: grid.ny,
            })
        }
        PlenumModel::TwoD(p) => {
            let res = p.resolution_on(container, grid);
            let (nx, ny) = res.plenum_cells(grid);
            // Finer columns do not refine a plenum already coarser than them: its cells keep to a quarter of the
            // plenum's height unless the file sets them per column.
            let refine = if res.columns_per_cell > 1 {
                "set plenum.cells_per_column in the container file (finer --nx/--ny keep these plenum cells)"
            } else {
                "refine the grid (--nx/--ny or plenum.cells_per_column)"
            };
            PlenumLayout::new(container, &container.baffles, nx, ny)
                .check_resolved(container, refine)?;
            Box::new(Plenum2d::new(container, grid, p))
        }
    })
}
