//! Steady, incompressible, depth-averaged 2-D flow in a shallow box: the flow core of the 2-D plenum.
//!
//! Equations (depth-averaged shallow flow on the floor plan, DOMAIN.md §13; kinematic pressure P = p/ρ):
//!
//! - continuity `∂(h·u)/∂x + ∂(h·v)/∂y = −w`, with w the outflow per unit plan area (floor and leakage), m/s;
//! - momentum `∇·(h·u⊗u) = −h·∇P + ∇·(h·ν_e·∇u) − c_f·|u|·u − β·w·u`, where `c_f·|u|·u` is the friction of the
//!   floor sheet and the plenum bottom (τ/ρ = ½·c_f·|u|·u on each) and β the fraction of the horizontal momentum
//!   the outflow takes with it.
//!
//! Eddy viscosity (our closure, stated): `ν_e = ν + (κ/6)·h·u* + (c_m·h)²·|S|`, u* = √(c_f/2)·|u|, κ = 0.41:
//! the first turbulent term is the depth mean of the parabolic eddy viscosity used in depth-averaged river models
//! (Elder 1959, from memory), the second a Prandtl mixing length tied to the plenum height for the jet's shear
//! layers (DOMAIN.md §13 gives c_m ≈ 0.07–0.1, from memory; the coupled plenum's default is 0.3, a numerical choice
//! explained at `plenum_shape::Plenum2dParams`), bounded by
//! κ times the distance to the nearest wall: a side wall or a baffle (a blocked interior face).
//!
//! Numerics: a staggered (MAC) grid of finite volumes — pressure at cell centres, u on the x-faces, v on the
//! y-faces — and SIMPLEC pressure coupling (Van Doormaal & Raithby 1984, Numer. Heat Transfer 7:147–163, a variant
//! of SIMPLE, Patankar 1980, *Numerical Heat Transfer and Fluid Flow*). Convection: upwind implicit with a deferred
//! correction to the van Leer limited scheme (van Leer 1974, J. Comput. Phys. 14:361–370), which is bounded (TVD)
//! and second order away from extrema; `Scheme::Upwind` and `Scheme::Central` are there for checks. No-slip walls
//! use a second-order one-sided wall gradient (exact for a parabola), also by deferred correction, in laminar flow;
//! in turbulent flow (an eddy viscosity on) side walls and baffles take a wall law instead, τ/ρ = ½·c_f·|u|·u on
//! their area h·Δ, the floor sheet's skin friction: resolving the wall layer with the mixing length κ·y on cells
//! some centimetres wide gives τ/ρ ≈ κ²·u² ≈ 0.17·u², about twenty times the skin friction, which made a narrow
//! plenum lose pressure along its length where the 1-D duct (same friction) regains it. Momentum is
//! relaxed by symmetric Gauss–Seidel sweeps, the pressure correction solved by conjugate gradients preconditioned
//! with one V-cycle of the bed's multigrid (`airflow::mg`, used as a one-layer operator: red–black point
//! Gauss–Seidel and 2 × 2 aggregation; the all-Neumann problem is consistent because inflow equals outflow, its
//! mean is removed and one cell is pinned, see `PressureWork::assemble`).
//!
//! Sinks may answer the local pressure (a porous outflow, as through a floor and a bed): the outflow of a cell is
//! `w₀ + g·(P − P₀)`, linear about a reference state, and the pressure correction carries g on its diagonal (a
//! pressure-dependent mass source linearised as Patankar 1980 linearises source terms, S = S_C + S_P·φ; from
//! memory). The correction equation is then definite and the pressure level is no longer free: it is the one at
//! which the sinks take the prescribed inflow.
//!
//! Two drivers: [`solve_flow`] iterates plain SIMPLEC to the tolerance (the cavity and Poiseuille checks use it);
//! [`advance_flow`] does a fixed number of SIMPLEC iterations with Anderson acceleration, continuing from the kept
//! state, for the coupled plenum–bed loop, which changes the sinks between calls.
//!
//! Boundaries: every boundary face carries a prescribed normal velocity (0 on walls; the inflow on inlet faces);
//! interior faces may be blocked (baffles), and a run of blocked faces acts as a no-slip wall for the velocity
//! parallel to it. A lid speed along the y = W wall is there for the cavity benchmark.
//!
//! The state (u, v, P) lives apart from the solver in [`FlowState`], so a re-solve starts from the last field.
use super::mg::{LineOp, MgSettings, Multigrid};

/// Convection scheme for the momentum equations.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scheme {
    /// First-order upwind (bounded, diffusive).
    Upwind,
    /// Van Leer limited (bounded, second order in smooth regions): the default.
    VanLeer,
    /// Central differences by deferred correction (unbounded at high cell Péclet numbers).
    Central,
}

/// Physical and numerical parameters of a 2-D solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FlowParams {
    /// Molecular kinematic viscosity, m²/s.
    pub nu_m2_per_s: f64,
    /// Skin-friction coefficient c_f of each of the two horizontal surfaces (0 = frictionless).
    pub friction_coefficient: f64,
    /// Depth-mean eddy-viscosity coefficient (κ/6 ≈ 0.068; 0 = laminar).
    pub depth_eddy_coefficient: f64,
    /// Mixing length over local depth, c_m (0 = none).
    pub mixing_length_ratio: f64,
    /// Fraction β of horizontal momentum leaving with the outflow.
    pub outflow_momentum_fraction: f64,
    /// Convection scheme.
    pub scheme: Scheme,
    /// Momentum under-relaxation factor.
    pub relax_velocity: f64,
    /// Pressure under-relaxation factor.
    pub relax_pressure: f64,
    /// Stop when the largest velocity change per iteration and the largest cell mass imbalance, both relative to
    /// the reference speed and flux, fall below this.
    pub tolerance: f64,
    /// Iterations allowed.
    pub max_iters: u32,
}

impl FlowParams {
    /// True when an eddy viscosity is on: then no-slip walls take a wall law instead of the viscous gradient.
    pub fn is_turbulent(&self) -> bool {
        self.depth_eddy_coefficient > 0.0 || self.mixing_length_ratio > 0.0
    }

    /// Laminar flow with kinematic viscosity `nu`: no friction, no eddy viscosity (the benchmark setting).
    pub fn laminar(nu: f64) -> Self {
        FlowParams {
            nu_m2_per_s: nu,
            friction_coefficient: 0.0,
            depth_eddy_coefficient: 0.0,
            mixing_length_ratio: 0.0,
            outflow_momentum_fraction: 1.0,
            scheme: Scheme::VanLeer,
            relax_velocity: 0.8,
            relax_pressure: 1.0,
            tolerance: 1e-7,
            max_iters: 20_000,
        }
    }
}

/// The domain: a rectangle of nx × ny cells with a depth per cell, boundary velocities and blocked faces.
#[derive(Debug, Clone, PartialEq)]
pub struct FlowDomain {
    /// Cells along x.
    pub nx: usize,
    /// Cells along y.
    pub ny: usize,
    /// Cell size along x, m.
    pub dx: f64,
    /// Cell size along y, m.
    pub dy: f64,
    /// Depth h per cell, m, index `j·nx + i`.
    pub depth: Vec<f64>,
    /// Prescribed u on x-faces (`j·(nx+1) + i`): boundary faces always, interior faces when blocked (`Some(0)`).
    pub u_fixed: Vec<Option<f64>>,
    /// Prescribed v on y-faces (`j·nx + i`, j in 0..=ny).
    pub v_fixed: Vec<Option<f64>>,
    /// Momentum-flux factor on each x-face with prescribed inflow: jet momentum = factor × flux × u (h / h_inlet
    /// for a jet filling only part of the depth; 1 otherwise).
    pub u_momentum_factor: Vec<f64>,
    /// Momentum-flux factor on each y-face, as for x.
    pub v_momentum_factor: Vec<f64>,
    /// Speed of the y = ny·dy wall along x (the cavity lid), m/s.
    pub lid_speed: f64,
    /// Outflow from each cell at its reference pressure, m³/s (≥ 0 leaves the plenum).
    pub sink_m3_per_s: Vec<f64>,
    /// How each cell's outflow answers its own pressure, m³/s per m²/s² of kinematic pressure (0: a fixed sink):
    /// the outflow is `sink_m3_per_s + sink_conductance·(P − sink_reference_p)` (see [`FlowDomain::outflow`]).
    pub sink_conductance: Vec<f64>,
    /// Kinematic pressure at which each cell's outflow is `sink_m3_per_s`, m²/s².
    pub sink_reference_p: Vec<f64>,
}

impl FlowDomain {
    /// A closed box of uniform depth with walls on every side and no sinks.
    pub fn closed_box(nx: usize, ny: usize, dx: f64, dy: f64, depth: f64) -> Self {
        let mut u_fixed = vec![None; (nx + 1) * ny];
        for j in 0..ny {
            u_fixed[j * (nx + 1)] = Some(0.0);
            u_fixed[j * (nx + 1) + nx] = Some(0.0);
        }
        let mut v_fixed = vec![None; nx * (ny + 1)];
        for i in 0..nx {
            v_fixed[i] = Some(0.0);
            v_fixed[ny * nx + i] = Some(0.0);
        }
        FlowDomain {
            nx,
            ny,
            dx,
            dy,
            depth: vec![depth; nx * ny],
            u_momentum_factor: vec![1.0; (nx + 1) * ny],
            v_momentum_factor: vec![1.0; nx * (ny + 1)],
            u_fixed,
            v_fixed,
            lid_speed: 0.0,
            sink_m3_per_s: vec![0.0; nx * ny],
            sink_conductance: vec![0.0; nx * ny],
            sink_reference_p: vec![0.0; nx * ny],
        }
    }

    /// Outflow from cell `k` at the pressures of `s`, m³/s: the sink, implicit in the cell's pressure where it
    /// has a conductance.
    pub fn outflow(&self, s: &FlowState, k: usize) -> f64 {
        self.sink_m3_per_s[k] + self.sink_conductance[k] * (s.p[k] - self.sink_reference_p[k])
    }

    fn iu(&self, i: usize, j: usize) -> usize {
        j * (self.nx + 1) + i
    }
    fn iv(&self, i: usize, j: usize) -> usize {
        j * self.nx + i
    }
    fn ic(&self, i: usize, j: usize) -> usize {
        j * self.nx + i
    }
    /// Depth on x-face (i, j).
    fn hu(&self, i: usize, j: usize) -> f64 {
        let a = if i > 0 {
            self.depth[self.ic(i - 1, j)]
        } else {
            0.0
        };
        let b = if i < self.nx {
            self.depth[self.ic(i, j)]
        } else {
            0.0
        };
        if i == 0 {
            b
        } else if i == self.nx {
            a
        } else {
            0.5 * (a + b)
        }
    }
    /// Depth on y-face (i, j).
    fn hv(&self, i: usize, j: usize) -> f64 {
        if j == 0 {
            self.depth[self.ic(i, 0)]
        } else if j == self.ny {
            self.depth[self.ic(i, self.ny - 1)]
        } else {
            0.5 * (self.depth[self.ic(i, j - 1)] + self.depth[self.ic(i, j)])
        }
    }
    /// Is the horizontal line y = y_j between x-centres of cells i−1 and i a wall (for the u-CV at (i, ·))?
    fn wall_y(&self, i: usize, j: usize) -> bool {
        j == 0
            || j == self.ny
            || (self.v_fixed[self.iv(i - 1, j)] == Some(0.0)
                && self.v_fixed[self.iv(i, j)] == Some(0.0))
    }
    /// Is the vertical line x = x_i between y-centres of cells j−1 and j a wall (for the v-CV at (·, j))?
    fn wall_x(&self, i: usize, j: usize) -> bool {
        i == 0
            || i == self.nx
            || (self.u_fixed[self.iu(i, j - 1)] == Some(0.0)
                && self.u_fixed[self.iu(i, j)] == Some(0.0))
    }
}

/// The flow field: u on x-faces, v on y-faces (m/s), kinematic pressure P = p/ρ at cell centres (m²/s²).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FlowState {
    /// u, index `j·(nx+1) + i`.
    pub u: Vec<f64>,
    /// v, index `j·nx + i`.
    pub v: Vec<f64>,
    /// P, index `j·nx + i`.
    pub p: Vec<f64>,
}

impl FlowState {
    /// A state at rest sized for `d`, with the prescribed face velocities in place.
    pub fn at_rest(d: &FlowDomain) -> Self {
        let mut s = FlowState {
            u: vec![0.0; (d.nx + 1) * d.ny],
            v: vec![0.0; d.nx * (d.ny + 1)],
            p: vec![0.0; d.nx * d.ny],
        };
        s.apply_fixed(d);
        s
    }
    fn fits(&self, d: &FlowDomain) -> bool {
        self.u.len() == (d.nx + 1) * d.ny
            && self.v.len() == d.nx * (d.ny + 1)
            && self.p.len() == d.nx * d.ny
    }
    fn apply_fixed(&mut self, d: &FlowDomain) {
        for (u, f) in self.u.iter_mut().zip(&d.u_fixed) {
            if let Some(x) = f {
                *u = *x;
            }
        }
        for (v, f) in self.v.iter_mut().zip(&d.v_fixed) {
            if let Some(x) = f {
                *v = *x;
            }
        }
    }
    /// Cell-centre velocity (u, v) of cell (i, j).
    pub fn centre_velocity(&self, d: &FlowDomain, i: usize, j: usize) -> (f64, f64) {
        (
            0.5 * (self.u[d.iu(i, j)] + self.u[d.iu(i + 1, j)]),
            0.5 * (self.v[d.iv(i, j)] + self.v[d.iv(i, j + 1)]),
        )
    }
}

/// Errors of a 2-D flow solve.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FlowError {
    /// The domain is malformed (sizes, depths).
    #[error("2-D flow domain: {0}")]
    Domain(String),
    /// The iteration did not converge.
    #[error("2-D plenum flow did not converge: {iters} iterations, velocity change {velocity_change:.3e}, mass imbalance {mass_imbalance:.3e}")]
    NotConverged {
        /// Iterations done.
        iters: u32,
        /// Last relative velocity change.
        velocity_change: f64,
        /// Last relative mass imbalance.
        mass_imbalance: f64,
    },
    /// The field became non-finite.
    #[error("2-D plenum flow diverged after {0} iterations")]
    Diverged(u32),
}

/// Convergence record of a 2-D solve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FlowStats {
    /// SIMPLEC iterations.
    pub iters: u32,
    /// Conjugate-gradient iterations summed over the pressure corrections.
    pub pressure_iters: u32,
    /// Final relative velocity change.
    pub velocity_change: f64,
    /// Final relative mass imbalance.
    pub mass_imbalance: f64,
    /// Both below the tolerance at the last iteration.
    pub converged: bool,
}

/// Coefficients of one momentum component: a_P·φ_P = Σ a_nb·φ_nb + b, with d = face area / (a_P/α − Σa_nb).
struct Coeffs {
    ap: Vec<f64>,
    ae: Vec<f64>,
    aw: Vec<f64>,
    an: Vec<f64>,
    as_: Vec<f64>,
    b: Vec<f64>,
    d: Vec<f64>,
}

impl Coeffs {
    fn new(n: usize) -> Self {
        Coeffs {
            ap: vec![0.0; n],
            ae: vec![0.0; n],
            aw: vec![0.0; n],
            an: vec![0.0; n],
            as_: vec![0.0; n],
            b: vec![0.0; n],
            d: vec![0.0; n],
        }
    }
}

/// Face value by the chosen scheme from the far-upwind (if any), upwind and downwind values.
fn face_value(scheme: Scheme, uu: Option<f64>, u: f64, dn: f64) -> f64 {
    match scheme {
        Scheme::Upwind => u,
        Scheme::Central => 0.5 * (u + dn),
        Scheme::VanLeer => {
            let Some(uu) = uu else { return u };
            let den = dn - u;
            if den.abs() < 1e-300 {
                return u;
            }
            let r = (u - uu) / den;
            let psi = (r + r.abs()) / (1.0 + r.abs());
            u + 0.5 * psi * den
        }
    }
}

/// Deferred-correction source for a face: −F_out·(φ_HO − φ_UD), with F_out the flux leaving the CV through it
/// and the stencil given in the direction of increasing index (`m2, m1 | p1, p2` around the face).
fn dc(scheme: Scheme, f_out_pos: f64, m2: Option<f64>, m1: f64, p1: f64, p2: Option<f64>) -> f64 {
    // f_out_pos: flux in the +direction across the face (positive from m1 to p1)
    if f_out_pos >= 0.0 {
        f_out_pos * (face_value(scheme, m2, m1, p1) - m1)
    } else {
        f_out_pos * (face_value(scheme, p2, p1, m1) - p1)
    }
}

/// von Kármán's constant κ.
const KAPPA: f64 = 0.41;

/// Distance from each cell centre to the nearest wall, m: the plenum's four sides and every blocked interior face
/// (a baffle), each face a segment of the plan. Distances beyond `cutoff_m` are not searched: a cell farther than
/// that from every baffle gets its distance to the four sides. Geometry only, so the same for every iteration on a
/// domain; it costs a few neighbourhood passes per baffle face, small beside one momentum assembly.
fn wall_distance(d: &FlowDomain, cutoff_m: f64) -> Vec<f64> {
    let (nx, ny, dx, dy) = (d.nx, d.ny, d.dx, d.dy);
    let mut dist: Vec<f64> = (0..nx * ny)
        .map(|c| {
            let (i, j) = (c % nx, c / nx);
            let xw = (i as f64 + 0.5).min((nx - i) as f64 - 0.5) * dx;
            let yw = (j as f64 + 0.5).min((ny - j) as f64 - 0.5) * dy;
            xw.min(yw)
        })
        .collect();
    // a wall segment from (x0, y0) to (x1, y1), axis-parallel: stamp the cells within the cutoff
    let mut stamp = |x0: f64, x1: f64, y0: f64, y1: f64| {
        let reach = cutoff_m.min((nx as f64 * dx).max(ny as f64 * dy));
        let lo = |v: f64, h: f64| ((v - reach) / h - 0.5).floor().max(0.0) as usize;
        let hi = |v: f64, h: f64, n: usize| (((v + reach) / h).ceil().max(0.0) as usize).min(n);
        for j in lo(y0, dy)..hi(y1, dy, ny) {
            for i in lo(x0, dx)..hi(x1, dx, nx) {
                let (xc, yc) = ((i as f64 + 0.5) * dx, (j as f64 + 0.5) * dy);
                let ex = xc - xc.clamp(x0, x1);
                let ey = yc - yc.clamp(y0, y1);
                let k = j * nx + i;
                dist[k] = dist[k].min(ex.hypot(ey));
            }
        }
    };
    for j in 0..ny {
        for i in 1..nx {
            if d.u_fixed[d.iu(i, j)] == Some(0.0) {
                let x = i as f64 * dx;
                stamp(x, x, j as f64 * dy, (j + 1) as f64 * dy);
            }
        }
    }
    for j in 1..ny {
        for i in 0..nx {
            if d.v_fixed[d.iv(i, j)] == Some(0.0) {
                let y = j as f64 * dy;
                stamp(i as f64 * dx, (i + 1) as f64 * dx, y, y);
            }
        }
    }
    dist
}

/// The wall distances the mixing length's bound needs on `d` ([`wall_distance`] searched only as far as the largest
/// mixing length over κ): geometry alone, computed once per solve call, not per iteration.
fn wall_bound(d: &FlowDomain, prm: &FlowParams) -> Vec<f64> {
    let h_max = d.depth.iter().fold(0.0_f64, |m, h| m.max(*h));
    wall_distance(d, prm.mixing_length_ratio * h_max / KAPPA)
}

/// The fixed geometry one call of [`iterate`] works on (the domain does not change within a call), gathered once
/// so that the iterations do not recompute it per face: the depth on every face, which lines bounding a face's
/// control volume are walls, and each cell's squared mixing length.
struct Geom {
    /// Depth on each x-face ([`FlowDomain::hu`]), index `j·(nx+1) + i`.
    hu: Vec<f64>,
    /// Depth on each y-face ([`FlowDomain::hv`]), index `j·nx + i`.
    hv: Vec<f64>,
    /// For an interior x-face (i, j): the line north of its control volume is a wall ([`FlowDomain::wall_y`]
    /// at (i, j + 1)); false on the boundary faces, which are never assembled.
    wall_n: Vec<bool>,
    /// For an interior x-face (i, j): the line south of its control volume is a wall (`wall_y` at (i, j)).
    wall_s: Vec<bool>,
    /// For an interior y-face (i, j): the line east of its control volume is a wall ([`FlowDomain::wall_x`] at
    /// (i + 1, j)).
    wall_e: Vec<bool>,
    /// For an interior y-face (i, j): the line west of its control volume is a wall (`wall_x` at (i, j)).
    wall_w: Vec<bool>,
    /// Each cell's mixing length squared: `min(c_m·h, κ·wall distance)²` ([`wall_bound`]).
    lm2: Vec<f64>,
    /// Largest depth, m.
    h_max: f64,
}

impl Geom {
    fn new(d: &FlowDomain, prm: &FlowParams) -> Self {
        let (nx, ny) = (d.nx, d.ny);
        let mut hu = vec![0.0; (nx + 1) * ny];
        let (mut wall_n, mut wall_s) = (vec![false; hu.len()], vec![false; hu.len()]);
        for j in 0..ny {
            for i in 0..=nx {
                let k = d.iu(i, j);
                hu[k] = d.hu(i, j);
                if i > 0 && i < nx {
                    wall_n[k] = d.wall_y(i, j + 1);
                    wall_s[k] = d.wall_y(i, j);
                }
            }
        }
        let mut hv = vec![0.0; nx * (ny + 1)];
        let (mut wall_e, mut wall_w) = (vec![false; hv.len()], vec![false; hv.len()]);
        for j in 0..=ny {
            for i in 0..nx {
                let k = d.iv(i, j);
                hv[k] = d.hv(i, j);
                if j > 0 && j < ny {
                    wall_e[k] = d.wall_x(i + 1, j);
                    wall_w[k] = d.wall_x(i, j);
                }
            }
        }
        let lm2 = mixing_lengths_sq(d, prm, &wall_bound(d, prm));
        Geom {
            hu,
            hv,
            wall_n,
            wall_s,
            wall_e,
            wall_w,
            lm2,
            h_max: d.depth.iter().fold(0.0_f64, |m, x| m.max(*x)),
        }
    }
}

/// Each cell's mixing length squared, `min(c_m·h, κ·wall)²`, with `wall` from [`wall_bound`]: the mixing length is
/// also bounded by κ × the distance to the nearest wall, side wall or baffle (Prandtl's wall law).
fn mixing_lengths_sq(d: &FlowDomain, prm: &FlowParams, wall: &[f64]) -> Vec<f64> {
    d.depth
        .iter()
        .zip(wall)
        .map(|(h, w)| {
            let lm = (prm.mixing_length_ratio * h).min(KAPPA * w);
            lm * lm
        })
        .collect()
}

/// The fields one SIMPLEC iteration assembles from, refilled in place every iteration: effective viscosity ν_e and
/// Γ = ν_e·h per cell, each cell's outflow at the current pressure, the face fluxes, and the cell-centre velocity.
struct Fields {
    nu: Vec<f64>,
    gam: Vec<f64>,
    out: Vec<f64>,
    qu: Vec<f64>,
    qv: Vec<f64>,
    uc: Vec<f64>,
    vc: Vec<f64>,
}

impl Fields {
    fn new(d: &FlowDomain) -> Self {
        let n = d.nx * d.ny;
        Fields {
            nu: vec![0.0; n],
            gam: vec![0.0; n],
            out: vec![0.0; n],
            qu: vec![0.0; (d.nx + 1) * d.ny],
            qv: vec![0.0; d.nx * (d.ny + 1)],
            uc: vec![0.0; n],
            vc: vec![0.0; n],
        }
    }

    /// All of them at the state `s`.
    fn fill(&mut self, d: &FlowDomain, s: &FlowState, prm: &FlowParams, geo: &Geom) {
        eddy_viscosity_into(d, s, prm, &geo.lm2, self);
        for (g, (nu, h)) in self.gam.iter_mut().zip(self.nu.iter().zip(&d.depth)) {
            *g = nu * h;
        }
        for (k, o) in self.out.iter_mut().enumerate() {
            *o = d.outflow(s, k);
        }
        for ((q, h), u) in self.qu.iter_mut().zip(&geo.hu).zip(&s.u) {
            *q = h * u * d.dy;
        }
        for ((q, h), v) in self.qv.iter_mut().zip(&geo.hv).zip(&s.v) {
            *q = h * v * d.dx;
        }
    }
}

/// Effective viscosity per cell; `wall` from [`wall_bound`] on the same domain.
#[cfg(test)]
fn eddy_viscosity(d: &FlowDomain, s: &FlowState, prm: &FlowParams, wall: &[f64]) -> Vec<f64> {
    let mut f = Fields::new(d);
    eddy_viscosity_into(d, s, prm, &mixing_lengths_sq(d, prm, wall), &mut f);
    f.nu
}

/// Effective viscosity per cell into `f.nu` (and the cell-centre velocities into `f.uc`, `f.vc`), with `lm2` the
/// squared mixing lengths of [`Geom`].
fn eddy_viscosity_into(
    d: &FlowDomain,
    s: &FlowState,
    prm: &FlowParams,
    lm2: &[f64],
    f: &mut Fields,
) {
    let (nx, ny) = (d.nx, d.ny);
    f.nu.fill(prm.nu_m2_per_s);
    if prm.depth_eddy_coefficient == 0.0 && prm.mixing_length_ratio == 0.0 {
        return;
    }
    let (u, v) = (&s.u[..], &s.v[..]);
    for j in 0..ny {
        let (ur, vr) = (
            &u[j * (nx + 1)..(j + 1) * (nx + 1)],
            &v[j * nx..(j + 2) * nx],
        );
        for (i, (uc, vc)) in f.uc[j * nx..(j + 1) * nx]
            .iter_mut()
            .zip(&mut f.vc[j * nx..(j + 1) * nx])
            .enumerate()
        {
            *uc = 0.5 * (ur[i] + ur[i + 1]);
            *vc = 0.5 * (vr[i] + vr[i + nx]);
        }
    }
    let (uc, vc) = (&f.uc[..], &f.vc[..]);
    let ustar_per_speed = (0.5 * prm.friction_coefficient).sqrt();
    for j in 0..ny {
        let (jl, jh) = (j.saturating_sub(1), (j + 1).min(ny - 1));
        let dy_span = (jh - jl).max(1) as f64 * d.dy;
        for i in 0..nx {
            let c = j * nx + i;
            let ku = j * (nx + 1) + i;
            let h = d.depth[c];
            let speed = (uc[c] * uc[c] + vc[c] * vc[c]).sqrt();
            let ustar = ustar_per_speed * speed;
            let dudx = (u[ku + 1] - u[ku]) / d.dx;
            let dvdy = (v[c + nx] - v[c]) / d.dy;
            let (il, ih) = (i.saturating_sub(1), (i + 1).min(nx - 1));
            let dudy = (uc[jh * nx + i] - uc[jl * nx + i]) / dy_span;
            let dvdx = (vc[j * nx + ih] - vc[j * nx + il]) / ((ih - il).max(1) as f64 * d.dx);
            let shear = (2.0 * (dudx * dudx + dvdy * dvdy) + (dudy + dvdx).powi(2)).sqrt();
            f.nu[c] += prm.depth_eddy_coefficient * h * ustar + lm2[c] * shear;
        }
    }
}

/// A laminar no-slip wall beside a face with coupling `g`: 8/3·g on the face's diagonal, the wall's speed `uw`
/// (a moving lid) on its right-hand side when given, and the deferred g/3·(u₁ − u₂) of the second-order one-sided
/// gradient when there is a second face `u2` inside.
#[inline(always)]
fn no_slip_wall(g: f64, uw: Option<f64>, u1: f64, u2: Option<f64>, b: &mut f64, ap_wall: &mut f64) {
    *ap_wall += 8.0 / 3.0 * g;
    if let Some(uw) = uw {
        *b += 8.0 / 3.0 * g * uw;
    }
    if let Some(u2) = u2 {
        *b -= g / 3.0 * (u1 - u2);
    }
}

/// Assemble the u-momentum equations on interior, unblocked x-faces, from the fields `f` at the state `s`.
fn assemble_u(
    d: &FlowDomain,
    s: &FlowState,
    prm: &FlowParams,
    geo: &Geom,
    f: &Fields,
    c: &mut Coeffs,
) {
    let (nx, ny, dx, dy) = (d.nx, d.ny, d.dx, d.dy);
    let rl = nx + 1;
    let turbulent = prm.is_turbulent();
    let (gam, out, qu, qv) = (&f.gam[..], &f.out[..], &f.qu[..], &f.qv[..]);
    let (u, v, p) = (&s.u[..], &s.v[..], &s.p[..]);
    let alpha = prm.relax_velocity;
    for j in 0..ny {
        for i in 1..nx {
            let k = j * rl + i;
            if d.u_fixed[k].is_some() {
                c.d[k] = 0.0;
                continue;
            }
            // cell (i, j) east of the face, (i − 1, j) west; its index is also that of y-face (i, j)
            let cc = j * nx + i;
            let uk = u[k];
            let hf = geo.hu[k];
            let fe = 0.5 * (qu[k] + qu[k + 1]);
            let fw = 0.5 * (qu[k - 1] + qu[k]);
            let fnn = 0.5 * (qv[cc - 1 + nx] + qv[cc + nx]);
            let fs = 0.5 * (qv[cc - 1] + qv[cc]);
            let sink = 0.5 * (out[cc - 1] + out[cc]);
            let de = gam[cc] * dy / dx;
            let dw = gam[cc - 1] * dy / dx;
            let mut b = 0.0;
            let mut ap_wall = 0.0;
            // north / south: interior shear, or a wall: in turbulent flow the wall law (the side wall's skin
            // friction, as on the floor sheet; see the module docs), in laminar flow no slip with a second-order
            // one-sided gradient, τ·A = g·(9u₁ − u₂ − 8u_w)/3: implicit 8/3·g on u₁ − u_w, deferred g/3·(u₁ − u₂)
            let wall_law = || 0.5 * prm.friction_coefficient * uk.abs() * hf * dx;
            let g_wall = || 0.5 * (gam[cc - 1] + gam[cc]) * dx / dy;
            let dn = if !geo.wall_n[k] {
                0.25 * (gam[cc - 1] + gam[cc] + gam[cc + nx - 1] + gam[cc + nx]) * dx / dy
            } else if turbulent {
                ap_wall += wall_law();
                0.0
            } else {
                let uw = if j + 1 == ny { d.lid_speed } else { 0.0 };
                let u2 = j.checked_sub(1).map(|j2| u[j2 * rl + i]);
                no_slip_wall(g_wall(), Some(uw), uk, u2, &mut b, &mut ap_wall);
                0.0
            };
            let ds = if !geo.wall_s[k] {
                0.25 * (gam[cc - 1] + gam[cc] + gam[cc - nx - 1] + gam[cc - nx]) * dx / dy
            } else if turbulent {
                ap_wall += wall_law();
                0.0
            } else {
                let u2 = (j + 1 < ny).then(|| u[(j + 1) * rl + i]);
                no_slip_wall(g_wall(), Some(0.0), uk, u2, &mut b, &mut ap_wall);
                0.0
            };
            let ae = de + (-fe).max(0.0);
            let aw = dw + fw.max(0.0);
            let an = dn + (-fnn).max(0.0);
            let as_ = ds + fs.max(0.0);
            let net = fe - fw + fnn - fs;
            let vbar = 0.25 * (v[cc - 1] + v[cc] + v[cc - 1 + nx] + v[cc + nx]);
            let speed = (uk.powi(2) + vbar * vbar).sqrt();
            let fric = prm.friction_coefficient * speed * dx * dy;
            let ap = ae
                + aw
                + an
                + as_
                + ap_wall
                + (net + prm.outflow_momentum_fraction * sink).max(0.0)
                + fric;
            // deferred corrections to the chosen convection scheme; a far-upwind value beyond the grid is None
            let sc = prm.scheme;
            let at = |ok: bool, kk: usize| ok.then(|| u[kk]);
            b -= dc(sc, fe, Some(u[k - 1]), uk, u[k + 1], at(i + 2 <= nx, k + 2));
            b += dc(
                sc,
                fw,
                at(i >= 2, k.wrapping_sub(2)),
                u[k - 1],
                uk,
                Some(u[k + 1]),
            );
            if !geo.wall_n[k] {
                let south = at(j >= 1, k.wrapping_sub(rl));
                b -= dc(sc, fnn, south, uk, u[k + rl], at(j + 2 < ny, k + 2 * rl));
            }
            if !geo.wall_s[k] {
                let north = at(j + 1 < ny, k + rl);
                b += dc(
                    sc,
                    fs,
                    at(j >= 2, k.wrapping_sub(2 * rl)),
                    u[k - rl],
                    uk,
                    north,
                );
            }
            // a jet filling part of the depth brings factor × its depth-mean momentum flux
            if i == 1 {
                b += fw.max(0.0) * (d.u_momentum_factor[k - 1] - 1.0) * u[k - 1];
            }
            if i == nx - 1 {
                b += (-fe).max(0.0) * (d.u_momentum_factor[k + 1] - 1.0) * u[k + 1];
            }
            b += hf * dy * (p[cc - 1] - p[cc]);
            c.ap[k] = ap / alpha;
            c.b[k] = b + (1.0 - alpha) / alpha * ap * uk;
            c.ae[k] = ae;
            c.aw[k] = aw;
            c.an[k] = an;
            c.as_[k] = as_;
            c.d[k] = hf * dy / (ap / alpha - ae - aw - an - as_).max(1e-300);
        }
    }
}

/// Assemble the v-momentum equations on interior, unblocked y-faces, from the fields `f` at the state `s`.
fn assemble_v(
    d: &FlowDomain,
    s: &FlowState,
    prm: &FlowParams,
    geo: &Geom,
    f: &Fields,
    c: &mut Coeffs,
) {
    let (nx, ny, dx, dy) = (d.nx, d.ny, d.dx, d.dy);
    let rl = nx + 1;
    let turbulent = prm.is_turbulent();
    let (gam, out, qu, qv) = (&f.gam[..], &f.out[..], &f.qu[..], &f.qv[..]);
    let (u, v, p) = (&s.u[..], &s.v[..], &s.p[..]);
    let alpha = prm.relax_velocity;
    for j in 1..ny {
        for i in 0..nx {
            // face (i, j): cell (i, j) north of it has the same index, cell (i, j − 1) south is k − nx
            let k = j * nx + i;
            if d.v_fixed[k].is_some() {
                c.d[k] = 0.0;
                continue;
            }
            let ku = j * rl + i;
            let vk = v[k];
            let hf = geo.hv[k];
            let fnn = 0.5 * (qv[k] + qv[k + nx]);
            let fs = 0.5 * (qv[k - nx] + qv[k]);
            let fe = 0.5 * (qu[ku + 1 - rl] + qu[ku + 1]);
            let fw = 0.5 * (qu[ku - rl] + qu[ku]);
            let sink = 0.5 * (out[k - nx] + out[k]);
            let dn = gam[k] * dx / dy;
            let ds = gam[k - nx] * dx / dy;
            let mut b = 0.0;
            let mut ap_wall = 0.0;
            // east / west, as north / south for u (no moving wall here)
            let wall_law = || 0.5 * prm.friction_coefficient * vk.abs() * hf * dy;
            let g_wall = || 0.5 * (gam[k - nx] + gam[k]) * dy / dx;
            let de = if !geo.wall_e[k] {
                0.25 * (gam[k - nx] + gam[k] + gam[k + 1 - nx] + gam[k + 1]) * dy / dx
            } else if turbulent {
                ap_wall += wall_law();
                0.0
            } else {
                let v2 = (i >= 1).then(|| v[k - 1]);
                no_slip_wall(g_wall(), None, vk, v2, &mut b, &mut ap_wall);
                0.0
            };
            let dw = if !geo.wall_w[k] {
                0.25 * (gam[k - nx] + gam[k] + gam[k - 1 - nx] + gam[k - 1]) * dy / dx
            } else if turbulent {
                ap_wall += wall_law();
                0.0
            } else {
                let v2 = (i + 1 < nx).then(|| v[k + 1]);
                no_slip_wall(g_wall(), None, vk, v2, &mut b, &mut ap_wall);
                0.0
            };
            let ae = de + (-fe).max(0.0);
            let aw = dw + fw.max(0.0);
            let an = dn + (-fnn).max(0.0);
            let as_ = ds + fs.max(0.0);
            let net = fe - fw + fnn - fs;
            let ubar = 0.25 * (u[ku - rl] + u[ku + 1 - rl] + u[ku] + u[ku + 1]);
            let speed = (vk.powi(2) + ubar * ubar).sqrt();
            let fric = prm.friction_coefficient * speed * dx * dy;
            let ap = ae
                + aw
                + an
                + as_
                + ap_wall
                + (net + prm.outflow_momentum_fraction * sink).max(0.0)
                + fric;
            let sc = prm.scheme;
            let at = |ok: bool, kk: usize| ok.then(|| v[kk]);
            b -= dc(
                sc,
                fnn,
                Some(v[k - nx]),
                vk,
                v[k + nx],
                at(j + 2 <= ny, k + 2 * nx),
            );
            b += dc(
                sc,
                fs,
                at(j >= 2, k.wrapping_sub(2 * nx)),
                v[k - nx],
                vk,
                Some(v[k + nx]),
            );
            if !geo.wall_e[k] {
                let west = at(i >= 1, k.wrapping_sub(1));
                b -= dc(sc, fe, west, vk, v[k + 1], at(i + 2 < nx, k + 2));
            }
            if !geo.wall_w[k] {
                let east = at(i + 1 < nx, k + 1);
                b += dc(sc, fw, at(i >= 2, k.wrapping_sub(2)), v[k - 1], vk, east);
            }
            if j == 1 {
                b += fs.max(0.0) * (d.v_momentum_factor[k - nx] - 1.0) * v[k - nx];
            }
            if j == ny - 1 {
                b += (-fnn).max(0.0) * (d.v_momentum_factor[k + nx] - 1.0) * v[k + nx];
            }
            b += hf * dx * (p[k - nx] - p[k]);
            c.ap[k] = ap / alpha;
            c.b[k] = b + (1.0 - alpha) / alpha * ap * vk;
            c.ae[k] = ae;
            c.aw[k] = aw;
            c.an[k] = an;
            c.as_[k] = as_;
            c.d[k] = hf * dx / (ap / alpha - ae - aw - an - as_).max(1e-300);
        }
    }
}

/// One momentum component's face field for [`sweep_pair`]: values, coefficients, fixed faces, row length and rows.
struct SweepField<'a> {
    phi: &'a mut [f64],
    c: &'a Coeffs,
    fixed: &'a [Option<f64>],
    rl: usize,
    rows: usize,
}

impl SweepField<'_> {
    /// Gauss–Seidel update of face (i, j) from its neighbours' current values.
    #[inline(always)]
    fn update(&mut self, i: usize, j: usize) {
        let (rl, k) = (self.rl, j * self.rl + i);
        let (c, phi) = (self.c, &mut *self.phi);
        if self.fixed[k].is_some() || c.ap[k] == 0.0 {
            return;
        }
        let mut s = c.b[k];
        if i + 1 < rl {
            s += c.ae[k] * phi[k + 1];
        }
        if i > 0 {
            s += c.aw[k] * phi[k - 1];
        }
        if j + 1 < self.rows {
            s += c.an[k] * phi[k + rl];
        }
        if j > 0 {
            s += c.as_[k] * phi[k - rl];
        }
        phi[k] = s / c.ap[k];
    }

    /// Face `i` of row `r` of a forward sweep (rows, then faces along a row, in increasing order), or of a
    /// backward sweep (both decreasing); nothing outside the field.
    #[inline(always)]
    fn step(&mut self, r: usize, i: usize, backward: bool) {
        if r < self.rows && i < self.rl {
            if backward {
                self.update(self.rl - 1 - i, self.rows - 1 - r);
            } else {
                self.update(i, r);
            }
        }
    }
}

/// `n` symmetric Gauss–Seidel sweeps on each of two face fields, fixed faces kept: each field's faces are updated
/// in exactly the order of sweeping it alone, the two fields' updates interleaved so that the processor overlaps
/// their chains of dependent operations (each update waits for its neighbour's).
fn sweep_pair(a: &mut SweepField<'_>, b: &mut SweepField<'_>, n: usize) {
    let (rows, rl) = (a.rows.max(b.rows), a.rl.max(b.rl));
    for _ in 0..n {
        for backward in [false, true] {
            for r in 0..rows {
                for i in 0..rl {
                    a.step(r, i, backward);
                    b.step(r, i, backward);
                }
            }
        }
    }
}

/// Work space of the pressure correction: its operator as a one-layer [`LineOp`] (so the bed's multigrid serves
/// as the preconditioner) with the multigrid hierarchy, and the conjugate-gradient vectors.
struct PressureWork {
    op: LineOp,
    mg: Multigrid,
    r: Vec<f64>,
    z: Vec<f64>,
    pdir: Vec<f64>,
    q: Vec<f64>,
    /// True when some sink answers its pressure: the operator is then definite, with no mean to remove.
    definite: bool,
}

impl PressureWork {
    /// For the grid of `d`: the operator is laid out as one layer of `ny` columns whose "vertical" lines run along
    /// the plenum's x (cell `j·nx + i` keeps its index). The multigrid then relaxes whole rows along x by exact
    /// line solves, red–black by row (zebra), and coarsens across the width only (semi-coarsening): rows of
    /// `nx` cells, not lines of one cell each.
    fn new(d: &FlowDomain) -> Self {
        let op = LineOp::zeros(1, d.ny, d.nx);
        let mg = Multigrid::new(&op, MgSettings::default());
        let n = d.nx * d.ny;
        PressureWork {
            op,
            mg,
            r: vec![0.0; n],
            z: vec![0.0; n],
            pdir: vec![0.0; n],
            q: vec![0.0; n],
            definite: false,
        }
    }

    /// The pressure-correction operator A for the momentum factors `cu.d`, `cv.d`: coupling h·Δ·d across every
    /// face, with cell 0 pinned (a Dirichlet coupling equal to its own diagonal). The pin makes the all-Neumann
    /// operator definite without changing the answer: for a right-hand side of zero sum, summing the rows of
    /// (A + pin)·x = r gives x₀ = 0, so x solves A·x = r. A cell with no open face (enclosed by baffles) is
    /// decoupled by a unit Dirichlet coupling. A sink that answers its pressure adds its conductance to its cell's
    /// diagonal (the change of the outflow with the correction); with any such sink A is definite and nothing is
    /// pinned: the pressure level is then the one at which the sinks take the inflow.
    fn assemble(&mut self, d: &FlowDomain, geo: &Geom, cu: &Coeffs, cv: &Coeffs) {
        let (nx, ny) = (d.nx, d.ny);
        let op = &mut self.op;
        for j in 0..ny {
            for i in 0..nx {
                let k = d.ic(i, j);
                op.tz[k] = if i + 1 < nx {
                    let f = d.iu(i + 1, j);
                    geo.hu[f] * d.dy * cu.d[f]
                } else {
                    0.0
                };
                op.ty[k] = if j + 1 < ny {
                    let f = d.iv(i, j + 1);
                    geo.hv[f] * d.dx * cv.d[f]
                } else {
                    0.0
                };
                op.dir[k] = d.sink_conductance[k];
            }
        }
        let d0 = op.diagonal(0);
        for k in 0..nx * ny {
            if op.diagonal(k) <= 0.0 {
                op.dir[k] = 1.0;
            }
        }
        self.definite = d.sink_conductance.iter().any(|&g| g > 0.0);
        if !self.definite && d0 > 0.0 {
            op.dir[0] = d0;
        }
        op.finish();
        self.mg.rebuild(&self.op);
    }

    /// Solve A·x = r − mean(r) to `tol` relative by conjugate gradients preconditioned with one multigrid
    /// V-cycle, then remove the mean of x (for a definite A: A·x = r as it is). Returns the iterations.
    fn solve(&mut self, r: &[f64], tol: f64, x: &mut [f64]) -> u32 {
        let n = r.len();
        let singular = !self.definite;
        let mean = if singular {
            r.iter().sum::<f64>() / n as f64
        } else {
            0.0
        };
        let res = &mut self.r;
        for (a, b) in res.iter_mut().zip(r) {
            *a = b - mean;
        }
        x.iter_mut().for_each(|v| *v = 0.0);
        let norm0 = dot(res, res).sqrt();
        if norm0 == 0.0 {
            return 0;
        }
        self.mg.apply(&self.op, res, &mut self.z);
        self.pdir.copy_from_slice(&self.z);
        let mut rz = dot(res, &self.z);
        let mut it = 0;
        while it < n as u32 + 100 {
            it += 1;
            self.op.matvec(&self.pdir, &mut self.q);
            let pq = dot(&self.pdir, &self.q);
            if pq <= 0.0 {
                break;
            }
            let a = rz / pq;
            for k in 0..n {
                x[k] += a * self.pdir[k];
                res[k] -= a * self.q[k];
            }
            if dot(res, res).sqrt() <= tol * norm0 {
                break;
            }
            self.mg.apply(&self.op, res, &mut self.z);
            let rz1 = dot(res, &self.z);
            let beta = rz1 / rz;
            rz = rz1;
            for (p, z) in self.pdir.iter_mut().zip(&self.z) {
                *p = z + beta * *p;
            }
        }
        if singular {
            let m = x.iter().sum::<f64>() / n as f64;
            x.iter_mut().for_each(|v| *v -= m);
        }
        it
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// `dot(v, x)` for every `v` of `vs`, each summed in index order as [`dot`] sums it (the same result to the
/// bit), four at a time in one pass so that their additions overlap (a last group of fewer is padded with
/// repeats whose sums are dropped).
fn dots<'a>(vs: impl IntoIterator<Item = &'a [f64]>, x: &[f64]) -> Vec<f64> {
    let vs: Vec<&[f64]> = vs.into_iter().collect();
    let mut out = Vec::with_capacity(vs.len());
    for g in vs.chunks(4) {
        let pick = |i: usize| g[i.min(g.len() - 1)];
        let (a, b, c, d) = (pick(0), pick(1), pick(2), pick(3));
        let mut s = [-0.0_f64; 4];
        for ((((xk, a), b), c), d) in x.iter().zip(a).zip(b).zip(c).zip(d) {
            s[0] += a * xk;
            s[1] += b * xk;
            s[2] += c * xk;
            s[3] += d * xk;
        }
        out.extend_from_slice(&s[..g.len()]);
    }
    out
}

fn check_domain(d: &FlowDomain) -> Result<(), FlowError> {
    let bad = |m: &str| Err(FlowError::Domain(m.to_string()));
    if d.nx < 2 || d.ny < 2 {
        return bad("need at least 2 × 2 cells");
    }
    if !(d.dx > 0.0 && d.dy > 0.0) {
        return bad("cell sizes must be positive");
    }
    if d.depth.len() != d.nx * d.ny || d.depth.iter().any(|h| !(h.is_finite() && *h > 0.0)) {
        return bad("depth must be positive on every cell");
    }
    if d.sink_conductance
        .iter()
        .any(|g| !(g.is_finite() && *g >= 0.0))
    {
        return bad("sink conductances must be finite and not negative");
    }
    if d.u_fixed.len() != (d.nx + 1) * d.ny
        || d.v_fixed.len() != d.nx * (d.ny + 1)
        || d.sink_m3_per_s.len() != d.nx * d.ny
        || d.sink_conductance.len() != d.nx * d.ny
        || d.sink_reference_p.len() != d.nx * d.ny
        || d.u_momentum_factor.len() != d.u_fixed.len()
        || d.v_momentum_factor.len() != d.v_fixed.len()
    {
        return bad("array sizes do not match the grid");
    }
    for j in 0..d.ny {
        if d.u_fixed[d.iu(0, j)].is_none() || d.u_fixed[d.iu(d.nx, j)].is_none() {
            return bad("every boundary x-face needs a prescribed velocity");
        }
    }
    for i in 0..d.nx {
        if d.v_fixed[d.iv(i, 0)].is_none() || d.v_fixed[d.iv(i, d.ny)].is_none() {
            return bad("every boundary y-face needs a prescribed velocity");
        }
    }
    Ok(())
}

/// Net volumetric imbalance per cell (outflow − inflow + sink at the cell's pressure), m³/s; zero when continuity
/// holds.
pub fn mass_imbalance(d: &FlowDomain, s: &FlowState) -> Vec<f64> {
    let mut r = vec![0.0; d.nx * d.ny];
    for j in 0..d.ny {
        for i in 0..d.nx {
            let out = d.hu(i + 1, j) * s.u[d.iu(i + 1, j)] * d.dy
                - d.hu(i, j) * s.u[d.iu(i, j)] * d.dy
                + d.hv(i, j + 1) * s.v[d.iv(i, j + 1)] * d.dx
                - d.hv(i, j) * s.v[d.iv(i, j)] * d.dx;
            r[d.ic(i, j)] = out + d.outflow(s, d.ic(i, j));
        }
    }
    r
}

/// Net volumetric imbalance per cell as [`mass_imbalance`], on the face depths of `geo`, into `r`.
fn mass_imbalance_into(d: &FlowDomain, geo: &Geom, s: &FlowState, r: &mut [f64]) {
    let (nx, rl) = (d.nx, d.nx + 1);
    let (hu, hv, u, v) = (&geo.hu[..], &geo.hv[..], &s.u[..], &s.v[..]);
    for j in 0..d.ny {
        for i in 0..nx {
            let (c, ku) = (j * nx + i, j * rl + i);
            let out = hu[ku + 1] * u[ku + 1] * d.dy - hu[ku] * u[ku] * d.dy
                + hv[c + nx] * v[c + nx] * d.dx
                - hv[c] * v[c] * d.dx;
            r[c] = out + d.outflow(s, c);
        }
    }
}

/// Work space of the SIMPLEC iteration, kept across the iterations of one call.
struct Work {
    geo: Geom,
    fields: Fields,
    cu: Coeffs,
    cv: Coeffs,
    pc: Vec<f64>,
    /// The mass imbalance (negated: the pressure correction's right-hand side), then the one after the step.
    r: Vec<f64>,
    /// The velocities before the step.
    u0: Vec<f64>,
    v0: Vec<f64>,
    pressure: PressureWork,
}

impl Work {
    fn new(d: &FlowDomain, prm: &FlowParams) -> Self {
        let (nu, nv) = ((d.nx + 1) * d.ny, d.nx * (d.ny + 1));
        Work {
            geo: Geom::new(d, prm),
            fields: Fields::new(d),
            cu: Coeffs::new(nu),
            cv: Coeffs::new(nv),
            pc: vec![0.0; d.nx * d.ny],
            r: vec![0.0; d.nx * d.ny],
            u0: vec![0.0; nu],
            v0: vec![0.0; nv],
            pressure: PressureWork::new(d),
        }
    }
}

/// One SIMPLEC iteration on `state`: momentum assembled at the current field and relaxed, the pressure correction
/// solved, velocities and pressure corrected. Returns the relative velocity change, the relative mass imbalance
/// (see [`FlowParams::tolerance`]) and the conjugate-gradient iterations.
fn simplec_step(
    d: &FlowDomain,
    prm: &FlowParams,
    state: &mut FlowState,
    w: &mut Work,
) -> (f64, f64, u32) {
    let Work {
        geo,
        fields,
        cu,
        cv,
        pc,
        r,
        u0,
        v0,
        pressure,
    } = w;
    fields.fill(d, state, prm, geo);
    assemble_u(d, state, prm, geo, fields, cu);
    assemble_v(d, state, prm, geo, fields, cv);
    u0.copy_from_slice(&state.u);
    v0.copy_from_slice(&state.v);
    let mut su = SweepField {
        phi: &mut state.u,
        c: cu,
        fixed: &d.u_fixed,
        rl: d.nx + 1,
        rows: d.ny,
    };
    let mut sv = SweepField {
        phi: &mut state.v,
        c: cv,
        fixed: &d.v_fixed,
        rl: d.nx,
        rows: d.ny + 1,
    };
    sweep_pair(&mut su, &mut sv, 2);
    mass_imbalance_into(d, geo, state, r);
    r.iter_mut().for_each(|x| *x = -*x);
    pressure.assemble(d, geo, cu, cv);
    let pressure_iters = pressure.solve(r, 0.05, pc);
    for j in 0..d.ny {
        for i in 1..d.nx {
            let k = d.iu(i, j);
            state.u[k] += cu.d[k] * (pc[d.ic(i - 1, j)] - pc[d.ic(i, j)]);
        }
    }
    for j in 1..d.ny {
        for i in 0..d.nx {
            let k = d.iv(i, j);
            state.v[k] += cv.d[k] * (pc[d.ic(i, j - 1)] - pc[d.ic(i, j)]);
        }
    }
    for (p, c) in state.p.iter_mut().zip(pc.iter()) {
        *p += prm.relax_pressure * c;
    }
    let vref = state
        .u
        .iter()
        .chain(&state.v)
        .fold(d.lid_speed.abs(), |m, x| m.max(x.abs()))
        .max(1e-300);
    let du = state.u.iter().zip(u0.iter()).map(|(a, b)| (a - b).abs());
    let dvv = state.v.iter().zip(v0.iter()).map(|(a, b)| (a - b).abs());
    let dv = du.chain(dvv).fold(0.0, f64::max) / vref;
    let qref = vref * geo.h_max * d.dx.max(d.dy);
    mass_imbalance_into(d, geo, state, r);
    let dm = r.iter().fold(0.0_f64, |m, x| m.max(x.abs())) / qref;
    (dv, dm, pressure_iters)
}

/// Anderson acceleration of the SIMPLEC fixed-point map x ↦ G(x), x = (u, v, P) (Walker & Ni 2011, "Anderson
/// acceleration for fixed-point iterations", SIAM J. Numer. Anal. 49:1715–1735; from memory): the next iterate is
/// G(x_k) − ΔG·γ with γ minimising ‖f_k − ΔF·γ‖, f = G(x) − x, over the last `depth` differences. Linear
/// combinations of fields that conserve mass conserve mass, and fixed boundary values stay (their differences
/// are zero). P enters the least-squares norm divided by the largest speed, so its m²/s² weigh as m/s.
struct Anderson {
    depth: usize,
    df: Vec<Vec<f64>>,
    dg: Vec<Vec<f64>>,
    /// Inner products of the kept `df`, `gram[i][j] = df[i]·df[j]`, updated as differences come and go.
    gram: Vec<Vec<f64>>,
    last: Option<(Vec<f64>, Vec<f64>)>,
    /// Vectors no longer in use, filled again instead of allocating new ones.
    spare: Vec<Vec<f64>>,
}

impl Anderson {
    fn new(depth: usize) -> Self {
        Anderson {
            depth,
            df: Vec::new(),
            dg: Vec::new(),
            gram: Vec::new(),
            last: None,
            spare: Vec::new(),
        }
    }

    fn reset(&mut self) {
        self.clear_history();
        if let Some((f, g)) = self.last.take() {
            self.spare.extend([f, g]);
        }
    }

    fn clear_history(&mut self) {
        self.spare.append(&mut self.df);
        self.spare.append(&mut self.dg);
        self.gram.clear();
    }

    /// An empty vector, a spare one when there is one.
    fn take(&mut self) -> Vec<f64> {
        let mut v = self.spare.pop().unwrap_or_default();
        v.clear();
        v
    }

    /// `x` is the iterate before the step, `s` holds G(x) on entry and the accelerated iterate on exit. The inner
    /// products are summed element by element in index order, as [`dot`] sums them, several at once in one pass.
    fn mix(&mut self, x: &[f64], s: &mut FlowState, vref: f64) {
        if self.depth == 0 {
            return;
        }
        let (nu, nv) = (s.u.len(), s.v.len());
        let mut g = self.take();
        for part in [&s.u, &s.v, &s.p] {
            g.extend_from_slice(part);
        }
        let wp = 1.0 / vref.max(1e-300);
        let mut f = self.take();
        let (gv, gp) = g.split_at(nu + nv);
        let (xv, xp) = x.split_at(nu + nv);
        f.extend(gv.iter().zip(xv).map(|(a, b)| a - b));
        f.extend(gp.iter().zip(xp).map(|(a, b)| (a - b) * wp));
        if let Some((mut f0, mut g0)) = self.last.take() {
            if self.df.len() == self.depth {
                let (df, dg) = (self.df.remove(0), self.dg.remove(0));
                self.spare.extend([df, dg]);
                self.gram.remove(0);
                self.gram.iter_mut().for_each(|row| {
                    row.remove(0);
                });
            }
            // f0 and g0 become the new differences f − f0 and g − g0
            for (a, b) in f0.iter_mut().zip(&f) {
                *a = b - *a;
            }
            for (a, b) in g0.iter_mut().zip(&g) {
                *a = b - *a;
            }
            let row = dots(self.df.iter().chain([&f0]).map(|v| &v[..]), &f0);
            for (r, v) in self.gram.iter_mut().zip(&row) {
                r.push(*v);
            }
            self.gram.push(row);
            self.df.push(f0);
            self.dg.push(g0);
        }
        let mut rhs = dots(self.df.iter().map(|v| &v[..]), &f);
        let m = self.df.len();
        if m > 0 {
            // normal equations of the small least-squares problem, lightly regularised
            let mut a = vec![0.0; m * m];
            for i in 0..m {
                a[i * m..(i + 1) * m].copy_from_slice(&self.gram[i]);
            }
            let tr = (0..m).map(|i| a[i * m + i]).sum::<f64>() / m as f64;
            for i in 0..m {
                a[i * m + i] += 1e-12 * tr;
            }
            match solve_small(&mut a, &mut rhs, m) {
                Some(gamma) => {
                    // G(x) − ΔG·γ, written over s (which holds G(x)), or G(x) kept if that is not finite
                    for (gj, dgj) in gamma.iter().zip(&self.dg) {
                        let (du, rest) = dgj.split_at(nu);
                        let (dv, dp) = rest.split_at(nv);
                        for (part, d) in [(&mut s.u, du), (&mut s.v, dv), (&mut s.p, dp)] {
                            for (o, d) in part.iter_mut().zip(d) {
                                *o -= gj * d;
                            }
                        }
                    }
                    let finite = |v: &[f64]| v.iter().all(|x| x.is_finite());
                    if !(finite(&s.u) && finite(&s.v) && finite(&s.p)) {
                        s.u.copy_from_slice(&g[..nu]);
                        s.v.copy_from_slice(&g[nu..nu + nv]);
                        s.p.copy_from_slice(&g[nu + nv..]);
                        self.clear_history();
                    }
                }
                None => self.clear_history(),
            }
        }
        self.last = Some((f, g));
    }
}

/// Solve the m × m system `a·x = b` by Gaussian elimination with partial pivoting; None if singular.
fn solve_small(a: &mut [f64], b: &mut [f64], m: usize) -> Option<Vec<f64>> {
    for c in 0..m {
        let piv = (c..m).max_by(|&i, &j| a[i * m + c].abs().total_cmp(&a[j * m + c].abs()))?;
        if a[piv * m + c] == 0.0 || !a[piv * m + c].is_finite() {
            return None;
        }
        if piv != c {
            for k in 0..m {
                a.swap(c * m + k, piv * m + k);
            }
            b.swap(c, piv);
        }
        for i in c + 1..m {
            let f = a[i * m + c] / a[c * m + c];
            for k in c..m {
                a[i * m + k] -= f * a[c * m + k];
            }
            b[i] -= f * b[c];
        }
    }
    let mut x = vec![0.0; m];
    for c in (0..m).rev() {
        let s: f64 = (c + 1..m).map(|k| a[c * m + k] * x[k]).sum();
        x[c] = (b[c] - s) / a[c * m + c];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// SIMPLEC iterations on `state`, at least `min` and at most `max`, stopping once the velocity change and the mass
/// imbalance are both below the tolerance (the state is then the plain step's result); with `anderson` > 0 the
/// steps in between are Anderson-accelerated over that many differences.
fn iterate(
    d: &FlowDomain,
    prm: &FlowParams,
    state: &mut FlowState,
    (min, max): (u32, u32),
    anderson: usize,
) -> Result<FlowStats, FlowError> {
    check_domain(d)?;
    if !state.fits(d) {
        *state = FlowState::at_rest(d);
    }
    state.apply_fixed(d);
    let mut w = Work::new(d, prm);
    let mut acc = Anderson::new(anderson);
    let mut stats = FlowStats {
        iters: 0,
        pressure_iters: 0,
        velocity_change: f64::INFINITY,
        mass_imbalance: f64::INFINITY,
        converged: false,
    };
    let mut x = Vec::new();
    for it in 1..=max {
        if anderson > 0 {
            x.clear();
            for part in [&state.u, &state.v, &state.p] {
                x.extend_from_slice(part);
            }
        }
        let (dv, dm, pi) = simplec_step(d, prm, state, &mut w);
        if !(dv.is_finite() && dm.is_finite()) {
            return Err(FlowError::Diverged(it));
        }
        let worse = dv > 10.0 * stats.velocity_change;
        stats.iters = it;
        stats.pressure_iters += pi;
        stats.velocity_change = dv;
        stats.mass_imbalance = dm;
        stats.converged = dv < prm.tolerance && dm < prm.tolerance;
        if (it >= min && stats.converged) || it == max {
            break;
        }
        if anderson > 0 {
            if worse {
                acc.reset();
            }
            let vref = state
                .u
                .iter()
                .chain(&state.v)
                .fold(0.0_f64, |m, v| m.max(v.abs()));
            acc.mix(&x, state, vref);
        }
    }
    Ok(stats)
}

/// Solve for the steady flow, starting from `state` (warm start) and leaving the solution in it.
pub fn solve_flow(
    d: &FlowDomain,
    prm: &FlowParams,
    state: &mut FlowState,
) -> Result<FlowStats, FlowError> {
    let st = iterate(d, prm, state, (3, prm.max_iters), 0)?;
    if st.converged && st.iters >= 3 {
        Ok(st)
    } else {
        Err(FlowError::NotConverged {
            iters: st.iters,
            velocity_change: st.velocity_change,
            mass_imbalance: st.mass_imbalance,
        })
    }
}

/// `iters` SIMPLEC iterations from `state`, Anderson-accelerated over the last `anderson` differences (0: plain):
/// an inexact solve for an outer iteration that changes the sinks between calls and continues from the kept
/// field. `(min, max)`: at least `min` iterations and at most `max`, ending between once the tolerance is met.
/// A coupled solve to a tight tolerance does all of them (`min == max`): stopping after one iteration once the
/// per-iteration change is below the tolerance left the coupled loop creeping along the plenum's slowest mode
/// (measured on the 6.4 m trailer: 44 outer iterations against 31 when every call does 20). Never fails for want
/// of convergence (the caller reads [`FlowStats::converged`]); fails only on a malformed domain or a non-finite
/// field.
pub fn advance_flow(
    d: &FlowDomain,
    prm: &FlowParams,
    state: &mut FlowState,
    (min, max): (u32, u32),
    anderson: usize,
) -> Result<FlowStats, FlowError> {
    let max = max.max(1);
    iterate(d, prm, state, (min.clamp(1, max), max), anderson)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A 40 × 40 box of 0.1 m cells, 1 m deep, with a baffle along y = 2 m from x = 1.5 to 2.5 m (blocked y-faces),
    /// and a uniform shear u = a·y: every cell's strain rate is a, so ν_e − ν = l_m²·a shows the mixing length.
    #[test]
    fn a_cell_beside_a_baffle_gets_the_wall_bounded_mixing_length() {
        let n = 40;
        let mut d = FlowDomain::closed_box(n, n, 0.1, 0.1, 1.0);
        for i in 15..25 {
            d.v_fixed[20 * n + i] = Some(0.0);
        }
        let a = 2.0;
        let mut s = FlowState::at_rest(&d);
        for j in 0..n {
            for i in 1..n {
                s.u[j * (n + 1) + i] = a * (j as f64 + 0.5) * 0.1;
            }
        }
        let prm = FlowParams {
            mixing_length_ratio: 0.3,
            ..FlowParams::laminar(1e-5)
        };
        let nu = eddy_viscosity(&d, &s, &prm, &wall_bound(&d, &prm));
        let lm = |c: usize| ((nu[c] - 1e-5) / a).sqrt();
        // cell (20, 20) sits on the baffle, 2 m from every side wall: l_m = κ·dy/2, not c_m·h = 0.3 m
        approx::assert_relative_eq!(lm(20 * n + 20), KAPPA * 0.05, max_relative = 1e-12);
        // cell (26, 20): its nearest wall point is the baffle's end (2.5, 2.0), √(0.15² + 0.05²) m away
        approx::assert_relative_eq!(
            lm(20 * n + 26),
            KAPPA * 0.15f64.hypot(0.05),
            max_relative = 1e-12
        );
        // a cell 1 m from the baffle and the walls: the plenum-height mixing length
        approx::assert_relative_eq!(lm(30 * n + 10), 0.3, max_relative = 1e-12);
    }
}
