//! Multigrid preconditioner for the bed's 7-point system: vertical-line relaxation with horizontal-only
//! (semi-)coarsening.
//!
//! The bed is shallow and finely layered compared with its column spacing, so the vertical couplings dominate
//! and point or line-Jacobi methods leave the horizontally smooth errors almost untouched. The standard robust
//! remedy for a strong direction is to relax whole lines along it and to coarsen only across it (Trottenberg,
//! Oosterlee & Schüller, "Multigrid" (2001), §5.1–5.2 on line relaxation and semi-coarsening; from memory):
//!
//! - every level keeps all nz layers; 2 × 2 columns are aggregated into one coarse column (an odd count leaves
//!   a last aggregate of one column along that direction) until a single column is left, whose tridiagonal line
//!   is then solved exactly;
//! - the coarse operator sums the fine transmissibilities: vertical, floor and top couplings over the
//!   aggregate's columns, horizontal ones over the faces that cross the aggregate's boundary, the latter
//!   multiplied by a factor (1 gives the Galerkin product Pᵀ·A·P of the piecewise-constant prolongation P;
//!   ½ is what rediscretising on the doubled spacing gives). Every level is an M-matrix, hence SPD;
//! - the smoother is red–black (checkerboard of columns) vertical-line Gauss–Seidel: all columns of one colour
//!   are solved independently (Thomas algorithm with per-level factors) given the other colour;
//! - one V-cycle with pre-smoothing red→black and post-smoothing black→red, restriction Pᵀ and prolongation P,
//!   is a symmetric positive-definite operator, so it can precondition conjugate gradients (Saad, "Iterative
//!   Methods for Sparse Linear Systems" (2003), §9.2 and ch. 13; from memory). The coarse operator need not be
//!   Galerkin for that: a symmetric smoother and any SPD coarse operator keep the cycle SPD.
//!
//! Everything runs over fixed blocks of columns; every output element is computed on its own in a fixed order,
//! so the cycle's result does not depend on the thread count. No I/O.
use rayon::prelude::*;

/// Fixed number of elements per parallel block (results independent of thread count).
pub(crate) const BLOCK: usize = 8192;

/// `f(block, chunk)` on the chunks of `data` of `size` elements, in parallel (a loop of one chunk stays on the
/// calling pool thread: the program runs inside one pool, see DEVELOPERS.md, "Threads").
fn for_blocks<F>(data: &mut [f64], size: usize, f: F)
where
    F: Fn(usize, &mut [f64]) + Sync + Send,
{
    data.par_chunks_mut(size)
        .enumerate()
        .for_each(|(blk, chunk)| f(blk, chunk));
}

/// A cell's diagonal: its boundary term and its couplings to the six neighbours (those at i + 1, j + 1, k + 1 stored
/// at the cell, the others at the neighbour), for cell (i, j, k) at flat index `idx`.
#[allow(clippy::too_many_arguments)]
#[inline]
fn diagonal_at(
    tx: &[f64],
    ty: &[f64],
    tz: &[f64],
    dir: &[f64],
    ny: usize,
    nz: usize,
    (i, j, k): (usize, usize, usize),
    idx: usize,
) -> f64 {
    let mut d = dir[idx] + tx[idx] + ty[idx] + tz[idx];
    if i > 0 {
        d += tx[idx - ny * nz];
    }
    if j > 0 {
        d += ty[idx - nz];
    }
    if k > 0 {
        d += tz[idx - 1];
    }
    d
}

/// Red columns are those with i + j even.
const RED: usize = 0;
/// Black columns are those with i + j odd.
const BLACK: usize = 1;

/// A 7-point operator on an nx × ny × nz grid with layout `(i·ny + j)·nz + k`, stored by its couplings, with
/// the tridiagonal factors of each vertical line.
#[derive(Debug, Clone, Default)]
pub(crate) struct LineOp {
    pub nx: usize,
    pub ny: usize,
    pub nz: usize,
    /// Coupling of each cell to (i + 1, j, k) (0 on the last x-row).
    pub tx: Vec<f64>,
    /// Coupling of each cell to (i, j + 1, k) (0 on the last y-row).
    pub ty: Vec<f64>,
    /// Coupling of each cell to (i, j, k + 1) (0 at the top layer).
    pub tz: Vec<f64>,
    /// Couplings to fixed (Dirichlet) values: floor at k = 0, top at k = nz − 1.
    pub dir: Vec<f64>,
    /// Diagonal: the sum of all couplings of the cell.
    pub diag: Vec<f64>,
    /// Thomas factors of each vertical line (diag, −tz).
    pub cprime: Vec<f64>,
    pub inv_den: Vec<f64>,
}

impl LineOp {
    /// An operator of the given size with all couplings zero.
    pub fn zeros(nx: usize, ny: usize, nz: usize) -> Self {
        let n = nx * ny * nz;
        LineOp {
            nx,
            ny,
            nz,
            tx: vec![0.0; n],
            ty: vec![0.0; n],
            tz: vec![0.0; n],
            dir: vec![0.0; n],
            diag: vec![0.0; n],
            cprime: vec![0.0; n],
            inv_den: vec![0.0; n],
        }
    }

    /// Columns per parallel block.
    #[inline]
    fn cols_per_block(&self) -> usize {
        (BLOCK / self.nz).max(1)
    }

    /// The diagonal of cell `idx` from the couplings, as [`LineOp::finish`] sets it.
    pub fn diagonal(&self, idx: usize) -> f64 {
        let c = idx / self.nz;
        let at = (c / self.ny, c % self.ny, idx % self.nz);
        diagonal_at(
            &self.tx, &self.ty, &self.tz, &self.dir, self.ny, self.nz, at, idx,
        )
    }

    /// Diagonal from the couplings, then the Thomas factors of every vertical line.
    pub fn finish(&mut self) {
        let (ny, nz) = (self.ny, self.nz);
        let cpb = self.cols_per_block();
        let (tx, ty, tz, dir) = (&self.tx, &self.ty, &self.tz, &self.dir);
        let factor = |blk: usize, ((dg, cp), iv): ((&mut [f64], &mut [f64]), &mut [f64])| {
            let c0 = blk * cpb;
            for ci in 0..dg.len() / nz {
                let c = c0 + ci;
                let (i, j) = (c / ny, c % ny);
                let base = c * nz;
                let mut cp_prev = 0.0;
                for k in 0..nz {
                    let idx = base + k;
                    let d = diagonal_at(tx, ty, tz, dir, ny, nz, (i, j, k), idx);
                    let l = ci * nz + k;
                    dg[l] = d;
                    let den = if k > 0 { d + tz[idx - 1] * cp_prev } else { d };
                    let inv = 1.0 / den;
                    iv[l] = inv;
                    cp_prev = -tz[idx] * inv;
                    cp[l] = cp_prev;
                }
            }
        };
        let size = cpb * nz;
        self.diag
            .par_chunks_mut(size)
            .zip(self.cprime.par_chunks_mut(size))
            .zip(self.inv_den.par_chunks_mut(size))
            .enumerate()
            .for_each(|(blk, parts)| factor(blk, parts));
    }

    /// y = A·x.
    pub fn matvec(&self, x: &[f64], y: &mut [f64]) {
        let (cpb, nz) = (self.cols_per_block(), self.nz);
        for_blocks(y, cpb * nz, |blk, chunk| {
            for (ci, yc) in chunk.chunks_mut(nz).enumerate() {
                self.column_product(blk * cpb + ci, x, None, yc);
            }
        });
    }

    /// out = (A·x)_c, or (A·x − b)_c with `minus` = b, for column `c`: one expression for the matrix-vector
    /// product and the residual.
    #[inline]
    fn column_product(&self, c: usize, x: &[f64], minus: Option<&[f64]>, out: &mut [f64]) {
        let (ny, nz) = (self.ny, self.nz);
        let (i, j) = (c / ny, c % ny);
        let base = c * nz;
        let xs = &x[base..base + nz];
        let d = &self.diag[base..base + nz];
        match minus {
            None => (0..nz).for_each(|k| out[k] = d[k] * xs[k]),
            Some(b) => {
                let bs = &b[base..base + nz];
                (0..nz).for_each(|k| out[k] = d[k] * xs[k] - bs[k]);
            }
        }
        self.sub_neighbours(i, j, base, x, out);
        let tz = &self.tz[base..base + nz];
        for k in 0..nz - 1 {
            out[k] -= tz[k] * xs[k + 1];
            out[k + 1] -= tz[k] * xs[k];
        }
    }

    /// out −= Σ (horizontal coupling · neighbour value) for the column at (i, j) starting at `base`.
    #[inline]
    fn sub_neighbours(&self, i: usize, j: usize, base: usize, x: &[f64], out: &mut [f64]) {
        let (nx, ny, nz) = (self.nx, self.ny, self.nz);
        let nyz = ny * nz;
        let mut sub = |t: &[f64], xn: &[f64]| {
            for k in 0..nz {
                out[k] -= t[k] * xn[k];
            }
        };
        if i + 1 < nx {
            sub(&self.tx[base..base + nz], &x[base + nyz..base + nyz + nz]);
        }
        if i > 0 {
            sub(
                &self.tx[base - nyz..base - nyz + nz],
                &x[base - nyz..base - nyz + nz],
            );
        }
        if j + 1 < ny {
            sub(&self.ty[base..base + nz], &x[base + nz..base + 2 * nz]);
        }
        if j > 0 {
            sub(&self.ty[base - nz..base], &x[base - nz..base]);
        }
    }

    /// Solve the vertical line at `base` in place: `v` holds the right-hand side on entry.
    #[inline]
    pub fn line_solve(&self, base: usize, v: &mut [f64]) {
        let nz = self.nz;
        let tz = &self.tz[base..base + nz];
        let iv = &self.inv_den[base..base + nz];
        let cp = &self.cprime[base..base + nz];
        let mut prev = 0.0;
        for k in 0..nz {
            let lower = if k > 0 { tz[k - 1] } else { 0.0 };
            prev = (v[k] + lower * prev) * iv[k];
            v[k] = prev;
        }
        for k in (0..nz - 1).rev() {
            v[k] -= cp[k] * v[k + 1];
        }
    }

    /// Two vertical lines solved as [`LineOp::line_solve`] solves each, their steps interleaved so that the
    /// processor overlaps the two chains of dependent operations.
    #[inline]
    fn line_solve_pair(
        &self,
        (base_a, va): (usize, &mut [f64]),
        (base_b, vb): (usize, &mut [f64]),
    ) {
        let nz = self.nz;
        let (va, vb) = (&mut va[..nz], &mut vb[..nz]);
        let (tza, tzb) = (&self.tz[base_a..base_a + nz], &self.tz[base_b..base_b + nz]);
        let (iva, ivb) = (
            &self.inv_den[base_a..base_a + nz],
            &self.inv_den[base_b..base_b + nz],
        );
        let (cpa, cpb) = (
            &self.cprime[base_a..base_a + nz],
            &self.cprime[base_b..base_b + nz],
        );
        let (mut pa, mut pb) = (0.0, 0.0);
        for k in 0..nz {
            let (la, lb) = if k > 0 {
                (tza[k - 1], tzb[k - 1])
            } else {
                (0.0, 0.0)
            };
            pa = (va[k] + la * pa) * iva[k];
            va[k] = pa;
            pb = (vb[k] + lb * pb) * ivb[k];
            vb[k] = pb;
        }
        for k in (0..nz - 1).rev() {
            va[k] -= cpa[k] * va[k + 1];
            vb[k] -= cpb[k] * vb[k + 1];
        }
    }

    /// One half-sweep of line Gauss–Seidel on the columns of `colour`: their lines are solved given the other
    /// colour's values. The new iterate is built in `tmp` (the other colour copied) and swapped into `x`.
    fn smooth(&self, b: &[f64], x: &mut Vec<f64>, tmp: &mut Vec<f64>, colour: usize) {
        let (ny, nz) = (self.ny, self.nz);
        let cpb = self.cols_per_block();
        {
            let xr: &[f64] = x;
            for_blocks(tmp, cpb * nz, |blk, chunk| {
                let c0 = blk * cpb;
                let mut waiting: Option<(usize, &mut [f64])> = None;
                for (ci, v) in chunk.chunks_mut(nz).enumerate() {
                    let c = c0 + ci;
                    let (i, j) = (c / ny, c % ny);
                    let base = c * nz;
                    if (i + j) % 2 != colour {
                        v.copy_from_slice(&xr[base..base + nz]);
                        continue;
                    }
                    for (vk, bk) in v.iter_mut().zip(&b[base..base + nz]) {
                        *vk = -bk;
                    }
                    self.sub_neighbours(i, j, base, xr, v);
                    for vk in v.iter_mut() {
                        *vk = -*vk;
                    }
                    // lines are solved two at a time (the right-hand sides read only `x`, not the new lines)
                    match waiting.take() {
                        Some((base0, v0)) => self.line_solve_pair((base0, v0), (base, v)),
                        None => waiting = Some((base, v)),
                    }
                }
                if let Some((base0, v0)) = waiting {
                    self.line_solve(base0, v0);
                }
            });
        }
        std::mem::swap(x, tmp);
    }

    /// r = b − A·x on the columns of `colour`, 0 on the others (whose residual the last half-sweep zeroed).
    fn residual_on(&self, b: &[f64], x: &[f64], r: &mut [f64], colour: usize) {
        let (ny, nz) = (self.ny, self.nz);
        let cpb = self.cols_per_block();
        for_blocks(r, cpb * nz, |blk, chunk| {
            for (ci, rc) in chunk.chunks_mut(nz).enumerate() {
                let c = blk * cpb + ci;
                if (c / ny + c % ny) % 2 != colour {
                    rc.iter_mut().for_each(|v| *v = 0.0);
                    continue;
                }
                // −r = A·x − b, then negated
                self.column_product(c, x, Some(b), rc);
                rc.iter_mut().for_each(|v| *v = -*v);
            }
        });
    }

    /// Size of the coarse level that aggregates 2 × 2 columns.
    fn coarse_size(&self) -> (usize, usize) {
        (self.nx.div_ceil(2), self.ny.div_ceil(2))
    }

    /// Coarse operator into `coarse` (already of the coarse size): sums of the fine couplings, horizontal ones
    /// times `h_scale`.
    fn coarsen_into(&self, coarse: &mut LineOp, h_scale: f64) {
        let (nx, ny, nz) = (self.nx, self.ny, self.nz);
        let (nxc, nyc) = (coarse.nx, coarse.ny);
        let cpb = coarse.cols_per_block();
        let fine = |i: usize, j: usize| (i * ny + j) * nz;
        type Parts<'a> = (
            ((&'a mut [f64], &'a mut [f64]), &'a mut [f64]),
            &'a mut [f64],
        );
        let sum = |blk: usize, (((cx, cy), cz), cd): Parts<'_>| {
            let c0 = blk * cpb;
            for ci in 0..cx.len() / nz {
                let cc = c0 + ci;
                let (ic, jc) = (cc / nyc, cc % nyc);
                let is = 2 * ic..(2 * ic + 2).min(nx);
                let js = 2 * jc..(2 * jc + 2).min(ny);
                let out = ci * nz..(ci + 1) * nz;
                let (cx, cy, cz, cd) = (
                    &mut cx[out.clone()],
                    &mut cy[out.clone()],
                    &mut cz[out.clone()],
                    &mut cd[out],
                );
                cz.iter_mut().for_each(|v| *v = 0.0);
                cd.iter_mut().for_each(|v| *v = 0.0);
                for i in is.clone() {
                    for j in js.clone() {
                        let b = fine(i, j);
                        for k in 0..nz {
                            cz[k] += self.tz[b + k];
                            cd[k] += self.dir[b + k];
                        }
                    }
                }
                cx.iter_mut().for_each(|v| *v = 0.0);
                if ic + 1 < nxc {
                    for j in js.clone() {
                        let b = fine(2 * ic + 1, j);
                        for (o, t) in cx.iter_mut().zip(&self.tx[b..b + nz]) {
                            *o += t;
                        }
                    }
                    cx.iter_mut().for_each(|v| *v *= h_scale);
                }
                cy.iter_mut().for_each(|v| *v = 0.0);
                if jc + 1 < nyc {
                    for i in is.clone() {
                        let b = fine(i, 2 * jc + 1);
                        for (o, t) in cy.iter_mut().zip(&self.ty[b..b + nz]) {
                            *o += t;
                        }
                    }
                    cy.iter_mut().for_each(|v| *v *= h_scale);
                }
            }
        };
        let size = cpb * nz;
        coarse
            .tx
            .par_chunks_mut(size)
            .zip(coarse.ty.par_chunks_mut(size))
            .zip(coarse.tz.par_chunks_mut(size))
            .zip(coarse.dir.par_chunks_mut(size))
            .enumerate()
            .for_each(|(blk, parts)| sum(blk, parts));
        coarse.finish();
    }

    /// b_c = Pᵀ·r: sum of the fine residuals over each aggregate, layer by layer.
    fn restrict(&self, r: &[f64], coarse: &LineOp, bc: &mut [f64]) {
        let (nx, ny, nz) = (self.nx, self.ny, self.nz);
        let nyc = coarse.ny;
        let cpb = coarse.cols_per_block();
        for_blocks(bc, cpb * nz, |blk, chunk| {
            let c0 = blk * cpb;
            for (ci, out) in chunk.chunks_mut(nz).enumerate() {
                let cc = c0 + ci;
                let (ic, jc) = (cc / nyc, cc % nyc);
                out.iter_mut().for_each(|v| *v = 0.0);
                for i in 2 * ic..(2 * ic + 2).min(nx) {
                    for j in 2 * jc..(2 * jc + 2).min(ny) {
                        let b = (i * ny + j) * nz;
                        for (o, v) in out.iter_mut().zip(&r[b..b + nz]) {
                            *o += v;
                        }
                    }
                }
            }
        });
    }

    /// x += P·x_c: each fine cell takes its aggregate's value in the same layer.
    fn prolong_add(&self, xc: &[f64], coarse: &LineOp, x: &mut [f64]) {
        let (ny, nz) = (self.ny, self.nz);
        let nyc = coarse.ny;
        let cpb = self.cols_per_block();
        for_blocks(x, cpb * nz, |blk, chunk| {
            let c0 = blk * cpb;
            for (ci, out) in chunk.chunks_mut(nz).enumerate() {
                let c = c0 + ci;
                let (i, j) = (c / ny, c % ny);
                let b = ((i / 2) * nyc + j / 2) * nz;
                for (o, v) in out.iter_mut().zip(&xc[b..b + nz]) {
                    *o += v;
                }
            }
        });
    }
}

/// One coarse level and its work vectors.
#[derive(Debug, Clone)]
struct Level {
    op: LineOp,
    b: Vec<f64>,
    x: Vec<f64>,
    r: Vec<f64>,
    tmp: Vec<f64>,
}

impl Level {
    fn new(nx: usize, ny: usize, nz: usize) -> Self {
        let n = nx * ny * nz;
        Level {
            op: LineOp::zeros(nx, ny, nz),
            b: vec![0.0; n],
            x: vec![0.0; n],
            r: vec![0.0; n],
            tmp: vec![0.0; n],
        }
    }
}

/// Multigrid settings. The defaults were chosen by measured PCG iteration counts (see the `bed` module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct MgSettings {
    /// Factor on the summed horizontal couplings of each coarse level (1 = Galerkin, ½ = rediscretised).
    pub h_scale: f64,
    /// Red–black double sweeps before and after each coarse correction.
    pub sweeps: usize,
}

impl Default for MgSettings {
    fn default() -> Self {
        MgSettings {
            h_scale: 0.5,
            sweeps: 1,
        }
    }
}

/// The coarse levels of the fine operator and the fine level's work vectors.
#[derive(Debug, Clone, Default)]
pub(crate) struct Multigrid {
    levels: Vec<Level>,
    r: Vec<f64>,
    tmp: Vec<f64>,
    settings: MgSettings,
}

impl Default for Level {
    fn default() -> Self {
        Level::new(0, 0, 0)
    }
}

impl Multigrid {
    /// Allocate the hierarchy for `fine`'s size (levels down to one column).
    pub fn new(fine: &LineOp, settings: MgSettings) -> Self {
        let mut levels = Vec::new();
        let (mut nx, mut ny) = (fine.nx, fine.ny);
        while nx * ny > 1 {
            nx = nx.div_ceil(2);
            ny = ny.div_ceil(2);
            levels.push(Level::new(nx, ny, fine.nz));
        }
        let n = fine.nx * fine.ny * fine.nz;
        Multigrid {
            levels,
            r: vec![0.0; n],
            tmp: vec![0.0; n],
            settings,
        }
    }

    /// Rebuild every coarse operator from `fine` (whose factors must be current).
    pub fn rebuild(&mut self, fine: &LineOp) {
        let h = self.settings.h_scale;
        let mut prev = fine;
        for lvl in self.levels.iter_mut() {
            debug_assert_eq!((lvl.op.nx, lvl.op.ny), prev.coarse_size());
            prev.coarsen_into(&mut lvl.op, h);
            prev = &lvl.op;
        }
    }

    /// z = B·r with B one symmetric V-cycle from a zero guess. `z` is swapped with internal buffers of the same
    /// length, so it must be a whole vector of the fine size.
    pub fn apply(&mut self, fine: &LineOp, r: &[f64], z: &mut Vec<f64>) {
        let sweeps = self.settings.sweeps;
        cycle(
            fine,
            r,
            z,
            &mut self.r,
            &mut self.tmp,
            &mut self.levels,
            sweeps,
        );
    }
}

/// One V-cycle on `op` for right-hand side `b` from x = 0; `levels` are the coarser ones.
fn cycle(
    op: &LineOp,
    b: &[f64],
    x: &mut Vec<f64>,
    r: &mut [f64],
    tmp: &mut Vec<f64>,
    levels: &mut [Level],
    sweeps: usize,
) {
    let Some((next, rest)) = levels.split_first_mut() else {
        // one column (or a level that cannot be coarsened): its single line is solved exactly; with several
        // columns, line Gauss–Seidel sweeps stand in (not reached by the hierarchy built in `Multigrid::new`).
        x.copy_from_slice(b);
        if op.nx * op.ny == 1 {
            op.line_solve(0, x);
        } else {
            x.iter_mut().for_each(|v| *v = 0.0);
            for _ in 0..sweeps.max(1) {
                op.smooth(b, x, tmp, RED);
                op.smooth(b, x, tmp, BLACK);
            }
            for _ in 0..sweeps.max(1) {
                op.smooth(b, x, tmp, BLACK);
                op.smooth(b, x, tmp, RED);
            }
        }
        return;
    };
    x.iter_mut().for_each(|v| *v = 0.0);
    for _ in 0..sweeps {
        op.smooth(b, x, tmp, RED);
        op.smooth(b, x, tmp, BLACK);
    }
    if sweeps > 0 {
        op.residual_on(b, x, r, RED);
    } else {
        r.copy_from_slice(b);
    }
    op.restrict(r, &next.op, &mut next.b);
    let Level {
        op: cop,
        b: cb,
        x: cx,
        r: cr,
        tmp: ct,
    } = next;
    cycle(cop, cb, cx, cr, ct, rest, sweeps);
    op.prolong_add(cx, cop, x);
    for _ in 0..sweeps {
        op.smooth(b, x, tmp, BLACK);
        op.smooth(b, x, tmp, RED);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A small heterogeneous operator with floor and top couplings.
    fn op(nx: usize, ny: usize, nz: usize) -> LineOp {
        let mut a = LineOp::zeros(nx, ny, nz);
        let n = nx * ny * nz;
        for idx in 0..n {
            let k = idx % nz;
            let c = idx / nz;
            let (i, j) = (c / ny, c % ny);
            let w = 1.0 + 0.3 * ((idx * 7919) % 11) as f64;
            a.tz[idx] = if k + 1 < nz { 50.0 * w } else { 0.0 };
            a.tx[idx] = if i + 1 < nx { 0.4 * w } else { 0.0 };
            a.ty[idx] = if j + 1 < ny { 0.3 * w } else { 0.0 };
            if k == 0 {
                a.dir[idx] += 20.0;
            }
            if k + 1 == nz {
                a.dir[idx] += 100.0 * w;
            }
        }
        a.finish();
        a
    }

    fn apply_dense(m: &mut Multigrid, a: &LineOp, n: usize) -> Vec<Vec<f64>> {
        (0..n)
            .map(|e| {
                let mut r = vec![0.0; n];
                r[e] = 1.0;
                let mut z = vec![0.0; n];
                m.apply(a, &r, &mut z);
                z
            })
            .collect()
    }

    #[test]
    #[allow(clippy::needless_range_loop)]
    fn v_cycle_is_symmetric_positive_definite() {
        for (nx, ny, nz) in [(5, 3, 4), (4, 1, 3), (1, 3, 2), (3, 3, 1)] {
            for h_scale in [1.0, 0.5] {
                let a = op(nx, ny, nz);
                let mut m = Multigrid::new(&a, MgSettings { h_scale, sweeps: 1 });
                m.rebuild(&a);
                let n = nx * ny * nz;
                let cols = apply_dense(&mut m, &a, n);
                for p in 0..n {
                    assert!(cols[p][p] > 0.0);
                    for q in 0..n {
                        let (bpq, bqp) = (cols[q][p], cols[p][q]);
                        assert!(
                            (bpq - bqp).abs() <= 1e-10 * (bpq.abs() + bqp.abs()).max(1e-300),
                            "{nx}x{ny}x{nz} h={h_scale}: B[{p},{q}]={bpq} B[{q},{p}]={bqp}"
                        );
                    }
                }
                // positive definite: xᵀBx > 0 for a few mixed vectors
                for s in 0..5 {
                    let v: Vec<f64> = (0..n).map(|e| ((e * 31 + s * 17) as f64).sin()).collect();
                    let mut z = vec![0.0; n];
                    m.apply(&a, &v, &mut z);
                    let q: f64 = v.iter().zip(&z).map(|(p, q)| p * q).sum();
                    assert!(q > 0.0);
                }
            }
        }
    }

    #[test]
    fn galerkin_coarse_operator_is_pt_a_p() {
        // With h_scale = 1 the coarse operator equals Pᵀ·A·P applied to any coarse vector.
        let (nx, ny, nz) = (5, 4, 3);
        let a = op(nx, ny, nz);
        let mut m = Multigrid::new(
            &a,
            MgSettings {
                h_scale: 1.0,
                sweeps: 1,
            },
        );
        m.rebuild(&a);
        let c = &m.levels[0].op;
        let nc = c.nx * c.ny * nz;
        let xc: Vec<f64> = (0..nc).map(|e| (e as f64 * 0.37).cos()).collect();
        let mut direct = vec![0.0; nc];
        c.matvec(&xc, &mut direct);
        let mut xf = vec![0.0; nx * ny * nz];
        a.prolong_add(&xc, c, &mut xf);
        let mut axf = vec![0.0; xf.len()];
        a.matvec(&xf, &mut axf);
        let mut ptapx = vec![0.0; nc];
        a.restrict(&axf, c, &mut ptapx);
        for (d, g) in direct.iter().zip(&ptapx) {
            assert!((d - g).abs() <= 1e-11 * d.abs().max(1.0), "{d} vs {g}");
        }
    }
}
