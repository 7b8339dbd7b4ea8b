//! Steady 3-D porous flow through the peanut bed: finite volumes with cell-centred pressure on a terrain-following
//! (sigma) grid, the local resistance law frozen per Picard step, and a conjugate-gradient solve preconditioned
//! by one multigrid V-cycle with vertical-line relaxation and horizontal-only coarsening (module `mg`).
//!
//! Law: `−∇p = K(|u|)·u` with `K = packing·K_law(|u|)/m` vertically and `r_h·K` horizontally (m the cell's
//! permeability multiplier, r_h the horizontal/vertical resistance ratio). For Shedd's relation
//! `K_law(q) = a·q/ln(1+b·q)` (ASAE D272; DOMAIN.md §1.1, §1.6), so that along a 1-D column the velocity is exactly
//! the inverse of Shedd's relation on the local gradient. Pressures are gauge, relative to the outside air at the
//! same height (buoyancy and the air's weight cancel for air at ambient density; the stack effect of warm air is
//! neglected).
//!
//! Grid: each column (i, j) of the nx × ny footprint holds its own bed depth D_ij split into nz equal layers (sigma
//! coordinate), so an uneven top needs no masking. Faces: vertical faces carry `T = A/(Σ ½·dz·K)` (harmonic mean
//! of the two half-cells); the top face is Dirichlet p = 0 at half a layer; the bottom face couples the bottom
//! cell to the plenum through half a layer plus the floor, whose orifice law `Δp = ρ/2·(q/(C_d·φ))²`
//! (DOMAIN.md §1.4) is linearised as a resistance `ρ·q/(2(C_d φ)²)` and updated with the bed. Horizontal faces use
//! the two-point flux between neighbouring cells of the same layer index across the column spacing, with face area
//! dy·(dz_a + dz_b)/2. This ignores the sigma grid's cross terms, which is exact for a level fill and first-order
//! in the surface slope otherwise (acceptable for gentle crowns; a steep pile would want the full tensor). Walls
//! are impermeable (no face).
//!
//! Layout: index = (i·ny + j)·nz + k, k = 0 at the floor, so each vertical line is contiguous. Matrix-vector
//! products run in parallel over fixed blocks of columns; each output is computed independently, and dot products
//! are summed per fixed block and then block by block in order, so results do not depend on the thread count.
//!
//! Preconditioner: the layers are thin compared with the column spacing, so the vertical couplings dominate.
//! Block Jacobi on the vertical lines (still available as [`Preconditioner::LineJacobi`]) leaves the
//! horizontally smooth errors of the lowest vertical shape badly conditioned (κ grows as (depth/dx)²), and its CG
//! iterations grew with the grid. The default [`Preconditioner::Multigrid`] is one symmetric V-cycle: red–black
//! (checkerboard of columns) vertical-line Gauss–Seidel, 2 × 2 aggregation of columns on every coarser level with
//! all nz layers kept, down to a single column solved exactly. Coarse transmissibilities are the sums of the fine
//! ones, the horizontal sums halved (what rediscretising on the doubled spacing gives). Measured to 1e-10 from a
//! zero guess on the benchmark trailer (Shedd's law, a packed block): 7, 9, 10 and 10 iterations on 16×6×20,
//! 64×24×32, 128×48×32 and 144×54×64, against 8, 15, 20 and 21 with the plain (Galerkin) sums and 27, 112, 225
//! and 249 with line Jacobi. The hierarchy is rebuilt in every `assemble`; a whole `assemble` took about 20 ms at 144×54×64.
//!
//! References: Brooker (1961/1969) nonlinear Darcy formulation for grain beds (as cited in DOMAIN.md §1.6);
//! conjugate gradients and their preconditioning, Saad, "Iterative Methods for Sparse Linear Systems" (2003),
//! ch. 9–10 and 13 (from memory); line relaxation and semi-coarsening for anisotropic problems, Trottenberg,
//! Oosterlee & Schüller, "Multigrid" (2001), ch. 5 (from memory).
use rayon::prelude::*;

use super::mg::{LineOp, MgSettings, Multigrid, BLOCK};
use crate::props::resistance::Shedd;

/// The resistance law of the crop as the solver uses it: Shedd's relation for real beds, and a linear (Darcy) law
/// kept for verification against exact solutions (`props::resistance::BedResistance` has Ergun instead of Darcy;
/// an Ergun bed can be added here as a third arm when a crop file asks for it).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum ResistanceLaw {
    /// Shedd's relation.
    Shedd(Shedd),
    /// Linear (Darcy) law with a constant resistivity, Pa·s/m².
    Darcy {
        /// Resistivity, Pa·s/m² (Pa/m per m/s).
        resistivity_pa_s_per_m2: f64,
    },
}

/// The bed's resistance: the crop's law times a packing factor, with a horizontal/vertical ratio.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct BedLaw {
    /// The loose-fill law.
    pub law: ResistanceLaw,
    /// Multiplier on the pressure drop for packing in the container (ASAE D272.3: up to 1.5; DOMAIN.md §1.2).
    pub packing_factor: f64,
    /// Horizontal resistance as a fraction of vertical (1 = isotropic).
    pub horizontal_ratio: f64,
}

impl BedLaw {
    /// Vertical resistivity (Pa·s/m²) at superficial speed `q_m_per_s`, packing included.
    #[inline]
    pub fn resistivity(&self, q_m_per_s: f64) -> f64 {
        self.packing_factor
            * match self.law {
                ResistanceLaw::Shedd(s) => s.resistivity(q_m_per_s),
                ResistanceLaw::Darcy {
                    resistivity_pa_s_per_m2,
                } => resistivity_pa_s_per_m2,
            }
    }

    /// Pressure gradient (Pa/m) of loose-fill-times-packing bed at superficial speed q (vertical flow).
    pub fn pressure_gradient_pa_per_m(&self, q_m_per_s: f64) -> f64 {
        self.resistivity(q_m_per_s) * q_m_per_s.abs()
    }

    /// d ln K / d ln q: how strongly the resistivity follows the speed (0 for Darcy, → 1 for a quadratic law).
    #[inline]
    fn log_slope(&self, q_m_per_s: f64) -> f64 {
        match self.law {
            ResistanceLaw::Shedd(s) => {
                let x = s.b * q_m_per_s.abs();
                if x < 1e-6 {
                    0.5 * x
                } else {
                    1.0 - x / ((1.0 + x) * x.ln_1p())
                }
            }
            ResistanceLaw::Darcy { .. } => 0.0,
        }
    }
}

/// Statistics of one linear solve.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct LinearStats {
    /// CG iterations.
    pub iters: u32,
    /// Final ‖b − A·x‖ / ‖b‖.
    pub relative_residual: f64,
}

/// The bed's discrete system and workspace. Rebuilt freely; never serialised.
#[derive(Debug, Clone)]
pub struct BedSystem {
    /// Columns along x.
    pub nx: usize,
    /// Columns along y.
    pub ny: usize,
    /// Layers.
    pub nz: usize,
    /// Column size along x, m.
    pub dx_m: f64,
    /// Column size along y, m.
    pub dy_m: f64,
    /// Depth per column (index i·ny + j), m.
    pub depth_m: Vec<f64>,
    /// Permeability multiplier per cell.
    pub perm: Vec<f64>,
    /// Speed per cell used to evaluate K, m/s (relaxed between Picard steps).
    pub speed_for_k: Vec<f64>,
    /// Floor speed per column used to linearise the floor law, m/s.
    pub floor_speed: Vec<f64>,
    /// Share of each column's floor that is open (1 by default; 0: a blocked floor, no flow from the plenum).
    floor_open: Vec<f64>,
    law: BedLaw,
    floor_c2: f64,
    rho: f64,
    faces: Faces,
    precond: Preconditioner,
    mg: Multigrid,
    r: Vec<f64>,
    z: Vec<f64>,
    pdir: Vec<f64>,
    ap: Vec<f64>,
}

/// Resistivities and face transmissibilities for one set of cell and floor speeds: the linear operator of one
/// outer step. The solver keeps one; the Newton solve evaluates its residual on others.
#[derive(Debug, Clone)]
pub struct Faces {
    kv: Vec<f64>,
    op: LineOp,
    ttop: Vec<f64>,
    tbot: Vec<f64>,
}

impl Faces {
    /// y = A·x with these faces.
    pub fn matvec(&self, x: &[f64], y: &mut [f64]) {
        self.op.matvec(x, y);
    }

    /// Plenum-to-bottom-cell transmissibility per column, m³/(s·Pa).
    pub fn tbot(&self) -> &[f64] {
        &self.tbot
    }

    /// Diagonal of A per cell, m³/(s·Pa).
    pub fn diag(&self) -> &[f64] {
        &self.op.diag
    }

    /// Empty faces for an nx × ny × nz bed.
    pub fn zeros(nx: usize, ny: usize, nz: usize) -> Self {
        Faces {
            kv: vec![0.0; nx * ny * nz],
            op: LineOp::zeros(nx, ny, nz),
            ttop: vec![0.0; nx * ny],
            tbot: vec![0.0; nx * ny],
        }
    }
}

/// The preconditioner of the conjugate-gradient solve.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Preconditioner {
    /// One symmetric multigrid V-cycle with vertical-line Gauss–Seidel and horizontal coarsening (the default).
    #[default]
    Multigrid,
    /// Block Jacobi on the vertical lines (kept for comparison: its iteration count grows with the ratio of
    /// bed depth to column spacing).
    LineJacobi,
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    let parts: Vec<f64> = a
        .par_chunks(BLOCK)
        .zip(b.par_chunks(BLOCK))
        .map(|(x, y)| x.iter().zip(y).map(|(p, q)| p * q).sum::<f64>())
        .collect();
    parts.iter().sum()
}

impl BedSystem {
    /// Build the system for columns of depth `depth_m` and per-cell multipliers `perm`, with an initial uniform
    /// speed guess (m/s) for the resistivity and the floor.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        nx: usize,
        ny: usize,
        nz: usize,
        dx_m: f64,
        dy_m: f64,
        depth_m: Vec<f64>,
        perm: Vec<f64>,
        law: BedLaw,
        floor_open_area: f64,
        floor_cd: f64,
        rho_kg_per_m3: f64,
        speed_guess_m_per_s: f64,
    ) -> Self {
        let n = nx * ny * nz;
        let nc = nx * ny;
        let mut s = BedSystem {
            nx,
            ny,
            nz,
            dx_m,
            dy_m,
            depth_m,
            perm,
            speed_for_k: vec![speed_guess_m_per_s; n],
            floor_speed: vec![speed_guess_m_per_s; nc],
            floor_open: vec![1.0; nc],
            law,
            floor_c2: (floor_cd * floor_open_area).powi(2),
            rho: rho_kg_per_m3,
            faces: Faces::zeros(nx, ny, nz),
            precond: Preconditioner::default(),
            mg: Multigrid::default(),
            r: vec![0.0; n],
            z: vec![0.0; n],
            pdir: vec![0.0; n],
            ap: vec![0.0; n],
        };
        s.mg = Multigrid::new(&s.faces.op, MgSettings::default());
        s.assemble();
        s
    }

    /// Set the open share of each column's floor (index i·ny + j, each in [0, 1]) and reassemble: a share s
    /// scales the open area, so the orifice resistance by 1/s², and a column with none open takes no air from
    /// the plenum (its bottom face is a wall).
    pub fn set_floor_open_share(&mut self, share: &[f64]) {
        if self.floor_open != share {
            self.floor_open.copy_from_slice(share);
            self.assemble();
        }
    }

    /// Choose the preconditioner for later solves.
    pub fn set_preconditioner(&mut self, p: Preconditioner) {
        self.precond = p;
    }

    /// The preconditioner in use.
    pub fn preconditioner(&self) -> Preconditioner {
        self.precond
    }

    /// Number of cells.
    pub fn cells(&self) -> usize {
        self.nx * self.ny * self.nz
    }

    /// Resistivities, transmissibilities and the line operator (diagonal and Thomas factors included, coarse
    /// levels not) for cell speeds `speeds` and floor speeds `floor_speeds`: the one place faces are computed.
    /// Two passes over blocks of columns, in parallel: the resistivities, then each column's couplings (which read
    /// its neighbours' resistivities); every value is computed on its own, the same on any thread count.
    fn fill_faces(&self, speeds: &[f64], floor_speeds: &[f64], f: &mut Faces) {
        let (ny, nz) = (self.ny, self.nz);
        let law = self.law;
        let cpb = (BLOCK / nz).max(1);
        f.kv.par_chunks_mut(cpb * nz)
            .zip(speeds.par_chunks(cpb * nz))
            .zip(self.perm.par_chunks(cpb * nz))
            .for_each(|((kv, u), m)| {
                for (kv, (&u, &m)) in kv.iter_mut().zip(u.iter().zip(m)) {
                    *kv = law.resistivity(u) / m;
                }
            });
        let kv = &f.kv;
        let op = &mut f.op;
        op.tz
            .par_chunks_mut(cpb * nz)
            .zip(op.tx.par_chunks_mut(cpb * nz))
            .zip(op.ty.par_chunks_mut(cpb * nz))
            .zip(op.dir.par_chunks_mut(cpb * nz))
            .zip(f.ttop.par_chunks_mut(cpb))
            .zip(f.tbot.par_chunks_mut(cpb))
            .enumerate()
            .for_each(|(blk, (((((tz, tx), ty), dir), ttop), tbot))| {
                for ci in 0..ttop.len() {
                    let c = blk * cpb + ci;
                    let cols = ci * nz..(ci + 1) * nz;
                    let (tt, tb) = self.column_faces(c, kv, floor_speeds, &mut tz[cols.clone()]);
                    ttop[ci] = tt;
                    tbot[ci] = tb;
                    self.side_faces(
                        c / ny,
                        c % ny,
                        kv,
                        &mut tx[cols.clone()],
                        &mut ty[cols.clone()],
                    );
                    let dir = &mut dir[cols];
                    dir.iter_mut().for_each(|v| *v = 0.0);
                    dir[0] += tb;
                    dir[nz - 1] += tt;
                }
            });
        f.op.finish();
    }

    /// Column `c`'s vertical couplings into `tz` (0 above the top cell), and its top and floor
    /// transmissibilities.
    fn column_faces(
        &self,
        c: usize,
        kv: &[f64],
        floor_speeds: &[f64],
        tz: &mut [f64],
    ) -> (f64, f64) {
        let nz = self.nz;
        let axy = self.dx_m * self.dy_m;
        let dz = self.depth_m[c] / nz as f64;
        let base = c * nz;
        for (k, tz) in tz.iter_mut().enumerate() {
            let idx = base + k;
            *tz = if k + 1 < nz {
                axy / (0.5 * dz * (kv[idx] + kv[idx + 1]))
            } else {
                0.0
            };
        }
        let ttop = axy / (0.5 * dz * kv[base + nz - 1]);
        let open = self.floor_open[c];
        let tbot = if open > 0.0 {
            let r_floor = self.rho * floor_speeds[c].abs() / (2.0 * self.floor_c2 * open * open);
            axy / (0.5 * dz * kv[base] + r_floor)
        } else {
            0.0
        };
        (ttop, tbot)
    }

    /// The couplings of column (i, j) to its neighbours at i + 1 and j + 1, layer by layer, into `tx` and `ty`
    /// (0 on the last row).
    fn side_faces(&self, i: usize, j: usize, kv: &[f64], tx: &mut [f64], ty: &mut [f64]) {
        let (nx, ny, nz) = (self.nx, self.ny, self.nz);
        let rh = self.law.horizontal_ratio;
        let c = i * ny + j;
        let dz_a = self.depth_m[c] / nz as f64;
        for k in 0..nz {
            let idx = c * nz + k;
            tx[k] = if i + 1 < nx {
                let cb = c + ny;
                let dz_b = self.depth_m[cb] / nz as f64;
                let area = self.dy_m * 0.5 * (dz_a + dz_b);
                area / (0.5 * self.dx_m * rh * (kv[idx] + kv[cb * nz + k]))
            } else {
                0.0
            };
            ty[k] = if j + 1 < ny {
                let cb = c + 1;
                let dz_b = self.depth_m[cb] / nz as f64;
                let area = self.dx_m * 0.5 * (dz_a + dz_b);
                area / (0.5 * self.dy_m * rh * (kv[idx] + kv[cb * nz + k]))
            } else {
                0.0
            };
        }
    }

    /// Faces for cell speeds `speeds` and floor speeds `floor_speeds` (m/s), leaving the solver's own untouched.
    pub(crate) fn faces_for(&self, speeds: &[f64], floor_speeds: &[f64], f: &mut Faces) {
        self.fill_faces(speeds, floor_speeds, f);
    }

    /// The solver's own faces (those of the last `assemble`).
    pub(crate) fn faces(&self) -> &Faces {
        &self.faces
    }

    /// z = B·r, the preconditioner of the last `assemble`, for outer solvers that reuse it.
    pub(crate) fn apply_preconditioner(&mut self, r: &[f64], z: &mut Vec<f64>) {
        self.precondition(r, z);
    }

    /// d ln K / d ln q of the bed law at speed `q_m_per_s`.
    pub(crate) fn law_log_slope(&self, q_m_per_s: f64) -> f64 {
        self.law.log_slope(q_m_per_s)
    }

    /// Per column, the floor's share of the resistance between plenum and bottom cell centre (the orifice term,
    /// linear in the floor speed, over the whole), from the last `assemble`.
    pub(crate) fn floor_share(&self) -> Vec<f64> {
        let axy = self.dx_m * self.dy_m;
        (0..self.nx * self.ny)
            .map(|c| {
                let bed = 0.5 * self.depth_m[c] / self.nz as f64 * self.faces.kv[c * self.nz];
                1.0 - bed * self.faces.tbot[c] / axy
            })
            .collect()
    }

    /// Recompute resistivities and transmissibilities from `speed_for_k` and `floor_speed`.
    pub fn assemble(&mut self) {
        let mut faces = std::mem::replace(&mut self.faces, Faces::zeros(0, 0, 0));
        self.fill_faces(&self.speed_for_k, &self.floor_speed, &mut faces);
        self.faces = faces;
        // The coarse levels from the finished fine operator.
        self.mg.rebuild(&self.faces.op);
    }

    /// y = A·x, column by column (each vertical line is a contiguous slice, so the inner loops vectorise).
    fn matvec(&self, x: &[f64], y: &mut [f64]) {
        self.faces.op.matvec(x, y);
    }

    /// z = M⁻¹·r with M the block-diagonal of vertical lines (Thomas algorithm with the operator's stored factors).
    fn line_jacobi(&self, r: &[f64], z: &mut [f64]) {
        let nz = self.nz;
        let op = &self.faces.op;
        let cols_per_block = (BLOCK / nz).max(1);
        z.par_chunks_mut(cols_per_block * nz)
            .zip(r.par_chunks(cols_per_block * nz))
            .enumerate()
            .for_each(|(blk, (zc, rc))| {
                let start = blk * cols_per_block * nz;
                zc.copy_from_slice(rc);
                for (c, line) in zc.chunks_mut(nz).enumerate() {
                    op.line_solve(start + c * nz, line);
                }
            });
    }

    /// z = B·r for the chosen preconditioner. `z` must be a whole vector of the system's size (the multigrid
    /// cycle swaps it with its own buffers).
    fn precondition(&mut self, r: &[f64], z: &mut Vec<f64>) {
        match self.precond {
            Preconditioner::LineJacobi => self.line_jacobi(r, z),
            Preconditioner::Multigrid => self.mg.apply(&self.faces.op, r, z),
        }
    }

    /// Right-hand side for plenum pressures `p_plenum_pa[c]` (per column).
    pub fn rhs(&self, p_plenum_pa: &[f64], b: &mut [f64]) {
        b.iter_mut().for_each(|v| *v = 0.0);
        for (c, &p) in p_plenum_pa.iter().enumerate() {
            b[c * self.nz] = self.faces.tbot[c] * p;
        }
    }

    /// Solve A·x = b by preconditioned CG from the initial guess in `x`, to ‖r‖ ≤ tol·‖b‖.
    pub fn solve_linear(
        &mut self,
        b: &[f64],
        x: &mut [f64],
        tol: f64,
        max_iters: u32,
    ) -> Result<LinearStats, LinearStats> {
        let mut r = std::mem::take(&mut self.r);
        let mut z = std::mem::take(&mut self.z);
        let mut p = std::mem::take(&mut self.pdir);
        let mut ap = std::mem::take(&mut self.ap);
        let result = self.pcg(b, x, tol, max_iters, &mut r, &mut z, &mut p, &mut ap);
        self.r = r;
        self.z = z;
        self.pdir = p;
        self.ap = ap;
        result
    }

    #[allow(clippy::too_many_arguments)]
    fn pcg(
        &mut self,
        b: &[f64],
        x: &mut [f64],
        tol: f64,
        max_iters: u32,
        r: &mut [f64],
        z: &mut Vec<f64>,
        p: &mut [f64],
        ap: &mut [f64],
    ) -> Result<LinearStats, LinearStats> {
        let bnorm = dot(b, b).sqrt();
        if bnorm == 0.0 {
            x.iter_mut().for_each(|v| *v = 0.0);
            return Ok(LinearStats {
                iters: 0,
                relative_residual: 0.0,
            });
        }
        self.matvec(x, ap);
        r.par_iter_mut()
            .with_min_len(BLOCK)
            .zip(b.par_iter().zip(ap.par_iter()))
            .for_each(|(ri, (bi, ai))| *ri = bi - ai);
        let mut rnorm = dot(r, r).sqrt();
        if rnorm <= tol * bnorm {
            return Ok(LinearStats {
                iters: 0,
                relative_residual: rnorm / bnorm,
            });
        }
        self.precondition(r, z);
        p.copy_from_slice(z);
        let mut rz = dot(r, z);
        for it in 1..=max_iters {
            self.matvec(p, ap);
            let pap = dot(p, ap);
            let alpha = rz / pap;
            x.par_iter_mut()
                .with_min_len(BLOCK)
                .zip(p.par_iter())
                .for_each(|(xi, pi)| *xi += alpha * pi);
            r.par_iter_mut()
                .with_min_len(BLOCK)
                .zip(ap.par_iter())
                .for_each(|(ri, ai)| *ri -= alpha * ai);
            rnorm = dot(r, r).sqrt();
            if rnorm <= tol * bnorm {
                return Ok(LinearStats {
                    iters: it,
                    relative_residual: rnorm / bnorm,
                });
            }
            self.precondition(r, z);
            let rz_new = dot(r, z);
            let beta = rz_new / rz;
            rz = rz_new;
            p.par_iter_mut()
                .with_min_len(BLOCK)
                .zip(z.par_iter())
                .for_each(|(pi, zi)| *pi = zi + beta * *pi);
        }
        Err(LinearStats {
            iters: max_iters,
            relative_residual: rnorm / bnorm,
        })
    }

    /// Flow up through the top face of each column, m³/s.
    pub fn top_flow_m3_per_s(&self, p: &[f64]) -> Vec<f64> {
        (0..self.nx * self.ny)
            .map(|c| self.faces.ttop[c] * p[c * self.nz + self.nz - 1])
            .collect()
    }

    /// Flow in through the floor of each column, m³/s, for plenum pressures `p_plenum_pa`.
    pub fn bottom_flow_m3_per_s(&self, p: &[f64], p_plenum_pa: &[f64]) -> Vec<f64> {
        (0..self.nx * self.ny)
            .map(|c| self.faces.tbot[c] * (p_plenum_pa[c] - p[c * self.nz]))
            .collect()
    }

    /// Pressure at the bed's bottom face (just above the floor) per column, Pa.
    pub fn bottom_face_pressure_pa(&self, p: &[f64], p_plenum_pa: &[f64]) -> Vec<f64> {
        let axy = self.dx_m * self.dy_m;
        (0..self.nx * self.ny)
            .map(|c| {
                let q = self.faces.tbot[c] * (p_plenum_pa[c] - p[c * self.nz]) / axy;
                let dz = self.depth_m[c] / self.nz as f64;
                p[c * self.nz] + q * 0.5 * dz * self.faces.kv[c * self.nz]
            })
            .collect()
    }

    /// Sum of the transmissibilities from plenum to bed per column (for the total-conductance closure).
    pub fn tbot(&self) -> &[f64] {
        &self.faces.tbot
    }

    /// Update the speeds that the next `assemble` uses, from pressures `p` (with plenum `p_plenum_pa`).
    /// Each cell's speed moves to the weighted geometric mean `u_old^(n/(1+n))·u_new^(1/(1+n))`, n = d ln K/d ln q,
    /// which damps the Picard map's oscillation (for K ∝ qⁿ at a fixed gradient it lands on the fixed point in one
    /// step). The floor (n = 1) takes the plain geometric mean.
    pub fn update_speeds(&mut self, p: &[f64], p_plenum_pa: &[f64]) {
        let (speeds, floor_q) = self.cell_speeds(&self.faces, p, p_plenum_pa);
        let law = self.law;
        self.speed_for_k = speeds
            .par_iter()
            .with_min_len(1024)
            .zip(self.speed_for_k.par_iter())
            .map(|(&new, &old)| {
                let old = old.max(1e-12);
                let n = law.log_slope(old);
                let w = 1.0 / (1.0 + n);
                (old.ln() * (1.0 - w) + new.ln() * w).exp()
            })
            .collect();
        for (fs, q) in self.floor_speed.iter_mut().zip(floor_q) {
            let old = fs.abs().max(1e-12);
            *fs = (old * q).sqrt();
        }
    }

    /// The speed |u| of every cell (at least 1e-12 m/s) and the floor speed |q| of every column that pressures
    /// `p` give through `faces`: u is the mean of each pair of opposite face fluxes over their areas.
    pub fn cell_speeds(&self, f: &Faces, p: &[f64], p_plenum_pa: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let (nx, ny, nz) = (self.nx, self.ny, self.nz);
        let nyz = ny * nz;
        let axy = self.dx_m * self.dy_m;
        let floor_q: Vec<f64> = (0..nx * ny)
            .map(|c| f.tbot[c] * (p_plenum_pa[c] - p[c * nz]) / axy)
            .collect();
        let speeds: Vec<f64> = (0..nx * ny * nz)
            .into_par_iter()
            .with_min_len(1024)
            .map(|idx| {
                let k = idx % nz;
                let c = idx / nz;
                let i = c / ny;
                let j = c % ny;
                let fb = if k == 0 {
                    floor_q[c] * axy
                } else {
                    f.op.tz[idx - 1] * (p[idx - 1] - p[idx])
                };
                let ft = if k + 1 == nz {
                    f.ttop[c] * p[idx]
                } else {
                    f.op.tz[idx] * (p[idx] - p[idx + 1])
                };
                let uz = 0.5 * (fb + ft) / axy;
                let face_x = |a: usize, b: usize, ca: usize, cb: usize| {
                    let area = self.dy_m * 0.5 * (self.depth_m[ca] + self.depth_m[cb]) / nz as f64;
                    f.op.tx[a] * (p[a] - p[b]) / area
                };
                let face_y = |a: usize, b: usize, ca: usize, cb: usize| {
                    let area = self.dx_m * 0.5 * (self.depth_m[ca] + self.depth_m[cb]) / nz as f64;
                    f.op.ty[a] * (p[a] - p[b]) / area
                };
                let uw = if i > 0 {
                    face_x(idx - nyz, idx, c - ny, c)
                } else {
                    0.0
                };
                let ue = if i + 1 < nx {
                    face_x(idx, idx + nyz, c, c + ny)
                } else {
                    0.0
                };
                let us = if j > 0 {
                    face_y(idx - nz, idx, c - 1, c)
                } else {
                    0.0
                };
                let un = if j + 1 < ny {
                    face_y(idx, idx + nz, c, c + 1)
                } else {
                    0.0
                };
                let ux = 0.5 * (uw + ue);
                let uy = 0.5 * (us + un);
                (ux * ux + uy * uy + uz * uz).sqrt().max(1e-12)
            })
            .collect();
        (speeds, floor_q.iter().map(|q| q.abs().max(1e-12)).collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn sys(nx: usize, ny: usize, nz: usize) -> BedSystem {
        let law = BedLaw {
            law: ResistanceLaw::Darcy {
                resistivity_pa_s_per_m2: 300.0,
            },
            packing_factor: 1.0,
            horizontal_ratio: 0.7,
        };
        let depth: Vec<f64> = (0..nx * ny).map(|c| 1.0 + 0.05 * (c % 5) as f64).collect();
        let perm: Vec<f64> = (0..nx * ny * nz)
            .map(|i| 0.5 + (i % 7) as f64 * 0.1)
            .collect();
        BedSystem::new(nx, ny, nz, 0.2, 0.2, depth, perm, law, 0.2, 0.6, 1.2, 0.2)
    }

    #[test]
    fn preconditioned_cg_solves_and_conserves() {
        let mut s = sys(7, 5, 6);
        let pl: Vec<f64> = (0..35).map(|c| 100.0 + c as f64).collect();
        let mut b = vec![0.0; s.cells()];
        s.rhs(&pl, &mut b);
        let mut x = vec![0.0; s.cells()];
        let st = s.solve_linear(&b, &mut x, 1e-12, 500).unwrap();
        assert!(st.iters < 100);
        let top: f64 = s.top_flow_m3_per_s(&x).iter().sum();
        let bot: f64 = s.bottom_flow_m3_per_s(&x, &pl).iter().sum();
        assert_relative_eq!(top, bot, max_relative = 1e-9);
    }

    #[test]
    fn preconditioner_inverts_each_vertical_line() {
        // With no horizontal coupling (1 column) M = A, so one application solves the system.
        let mut s = sys(1, 1, 9);
        let r: Vec<f64> = (0..9).map(|k| (k as f64).sin() + 2.0).collect();
        let mut z = vec![0.0; 9];
        s.precondition(&r, &mut z);
        let mut az = vec![0.0; 9];
        s.matvec(&z, &mut az);
        for k in 0..9 {
            assert_relative_eq!(az[k], r[k], max_relative = 1e-12);
        }
    }
}

#[cfg(test)]
mod multigrid_tests {
    use super::*;

    /// A 3.2 m × 1.2 m footprint under a 1.2–1.4 m crowned bed of nz layers, Shedd's law with a packed block
    /// and a loose strip (multipliers by position, so that refined grids describe the same bed).
    fn bed(nx: usize, ny: usize, nz: usize) -> BedSystem {
        let (lx, ly) = (3.2, 1.2);
        let (dx, dy) = (lx / nx as f64, ly / ny as f64);
        let law = BedLaw {
            law: ResistanceLaw::Shedd(Shedd { a: 3.8e3, b: 111.0 }),
            packing_factor: 1.5,
            horizontal_ratio: 0.8,
        };
        let centre = |c: usize| ((c / ny) as f64 + 0.5) * dx;
        let depth: Vec<f64> = (0..nx * ny)
            .map(|c| 1.2 + 0.2 * (std::f64::consts::PI * centre(c) / lx).sin())
            .collect();
        let perm: Vec<f64> = (0..nx * ny * nz)
            .map(|idx| {
                let c = idx / nz;
                let (x, y) = (centre(c), ((c % ny) as f64 + 0.5) * dy);
                let z = ((idx % nz) as f64 + 0.5) / nz as f64;
                if (1.0..1.8).contains(&x) && y < 0.7 && z < 0.6 {
                    0.3
                } else if (2.4..2.8).contains(&x) {
                    2.5
                } else {
                    1.0
                }
            })
            .collect();
        BedSystem::new(nx, ny, nz, dx, dy, depth, perm, law, 0.15, 0.6, 1.15, 0.12)
    }

    /// Plenum pressure falling along the length, with a cross-wise ripple.
    fn plenum(s: &BedSystem) -> Vec<f64> {
        (0..s.nx * s.ny)
            .map(|c| {
                let (i, j) = (c / s.ny, c % s.ny);
                let x = (i as f64 + 0.5) / s.nx as f64;
                let y = (j as f64 + 0.5) / s.ny as f64;
                900.0 - 250.0 * x + 40.0 * (6.0 * y).cos()
            })
            .collect()
    }

    fn solve_with(s: &mut BedSystem, pc: Preconditioner, tol: f64) -> (Vec<f64>, LinearStats) {
        s.set_preconditioner(pc);
        let pl = plenum(s);
        let mut b = vec![0.0; s.cells()];
        s.rhs(&pl, &mut b);
        let mut x = vec![0.0; s.cells()];
        let st = s.solve_linear(&b, &mut x, tol, 20_000).unwrap();
        (x, st)
    }

    #[test]
    fn multigrid_and_line_jacobi_reach_the_same_solution() {
        let mut s = bed(20, 9, 14);
        // one Picard update so that the resistivities vary from cell to cell as well as by the multipliers
        let (x0, _) = solve_with(&mut s, Preconditioner::LineJacobi, 1e-8);
        s.update_speeds(&x0, &plenum(&s));
        s.assemble();
        let (mg, st_mg) = solve_with(&mut s, Preconditioner::Multigrid, 1e-12);
        let (lj, st_lj) = solve_with(&mut s, Preconditioner::LineJacobi, 1e-12);
        assert!(st_mg.relative_residual <= 1e-12 && st_lj.relative_residual <= 1e-12);
        let pmax = lj.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let dmax = mg
            .iter()
            .zip(&lj)
            .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
        assert!(dmax <= 1e-9 * pmax, "max difference {dmax:e} of {pmax}");
        assert!(
            st_mg.iters * 3 < st_lj.iters,
            "multigrid {} vs line Jacobi {} iterations",
            st_mg.iters,
            st_lj.iters
        );
    }

    #[test]
    fn multigrid_iterations_stay_bounded_under_refinement() {
        // The same bed on 16×6, 32×12 and 64×24 columns (16 layers): line Jacobi's iterations roughly double
        // with each halving of the column spacing; the multigrid preconditioner's must not grow by more than
        // half over the two refinements.
        let tol = 1e-10;
        let count = |nx: usize, ny: usize, pc| solve_with(&mut bed(nx, ny, 16), pc, tol).1.iters;
        let mg: Vec<u32> = [(16, 6), (32, 12), (64, 24)]
            .iter()
            .map(|&(nx, ny)| count(nx, ny, Preconditioner::Multigrid))
            .collect();
        let lj: Vec<u32> = [(16, 6), (64, 24)]
            .iter()
            .map(|&(nx, ny)| count(nx, ny, Preconditioner::LineJacobi))
            .collect();
        assert!(
            2 * mg[1] <= 3 * mg[0] && 2 * mg[2] <= 3 * mg[0],
            "multigrid iterations {mg:?}"
        );
        // the test can tell a non-scalable preconditioner apart
        assert!(lj[1] >= 2 * lj[0], "line Jacobi iterations {lj:?}");
        assert!(mg[2] * 4 < lj[1], "multigrid {mg:?} vs line Jacobi {lj:?}");
    }

    #[test]
    fn small_and_degenerate_grids_solve() {
        for (nx, ny, nz) in [
            (1, 1, 1),
            (1, 1, 7),
            (1, 5, 4),
            (6, 1, 4),
            (3, 3, 1),
            (4, 2, 10),
            (16, 6, 20),
            (7, 5, 3),
        ] {
            let mut s = bed(nx, ny, nz);
            let (mg, st) = solve_with(&mut s, Preconditioner::Multigrid, 1e-12);
            // measured 1 (one column: the cycle is an exact solve) to 14 (7×5×3, nearly cubic cells)
            assert!(st.iters <= 20, "{nx}x{ny}x{nz}: {} iterations", st.iters);
            let (lj, _) = solve_with(&mut s, Preconditioner::LineJacobi, 1e-12);
            let pmax = lj.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for (a, b) in mg.iter().zip(&lj) {
                assert!((a - b).abs() <= 1e-9 * pmax, "{nx}x{ny}x{nz}: {a} vs {b}");
            }
            let top: f64 = s.top_flow_m3_per_s(&mg).iter().sum();
            let bot: f64 = s.bottom_flow_m3_per_s(&mg, &plenum(&s)).iter().sum();
            assert!(
                (top - bot).abs() <= 1e-9 * bot,
                "{nx}x{ny}x{nz}: {top} vs {bot}"
            );
        }
    }
}
