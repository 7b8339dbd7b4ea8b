//! Newton–Krylov for the coupled airflow: the bed's pressures, the speeds its resistivities are evaluated at, the
//! floor speeds and the inlet static pressure solved together, so that the outer iteration converges
//! quadratically near the solution instead of linearly as Picard does. A warm start from the last solution
//! (a re-solve for slightly different air or bed) then takes 3 or 4 outer steps on the bundled trailer for air
//! 3 K warmer (measured: `tests/airflow_newton.rs` and the `airflow` bench in DEVELOPERS.md; the target was one or
//! two): the first step from the old solution moves the pressures too little.
//!
//! Unknowns `x = (p, ln s, ln s_floor, p_in)`; residuals, each made dimensionless with scales fixed for one step:
//! the flux balance of every cell `A(s)·p − b(s, p_in + δ)` over the cell's diagonal and the largest pressure
//! (a relative pressure error); `ln s − ln S(p, s)`, where S is the speed the pressures drive through the faces
//! built on s (the fixed point Picard iterates to); the same for the floor; and the plenum's volume balance,
//! bed inflow plus leakage minus the flow the fan (or the fixed flow) delivers at p_in, over that flow; and
//! the plenum's shape, `δ − shape(floor outflows)` over the largest pressure, through the `Plenum` trait on every
//! evaluation (lagging δ by one outer step, as Picard does, made Newton's steps overshoot and diverge on the
//! bundled trailer's duct). The shape must then be a smooth function of the outflows: true of the uniform and
//! 1-D plenums, not of the 2-D plenum's iterative solve, which keeps Picard (`airflow::solve`).
//!
//! Each step solves `J·dx = −F` by right-preconditioned restarted GMRES to a forcing tolerance
//! `η = min(0.1, ‖F‖)` (which keeps the order 2; Eisenstat & Walker's analysis, from memory), with `J·v` a forward
//! difference of F. The preconditioner is block-diagonal: the bed's multigrid V-cycle (on the Picard operator at
//! the step's speeds) for the pressures, the local derivative 1 + d ln K/d ln q for each cell's speed (the
//! 1-D Newton derivative of the fixed point), 1 + the floor's share of the resistance for the floor speeds, and
//! the plenum's direct conductance for p_in, and 1 for δ. A backtracking line search on ‖F‖ (Armijo, halving) guards the
//! first steps from a cold start, which begin from a few Picard steps.
//!
//! References: Kelley, "Solving Nonlinear Equations with Newton's Method" (2003), ch. 3 (Newton–Krylov, forward
//! difference directional derivatives, forcing terms, line search) (from memory); Saad & Schultz, GMRES (1986)
//! (from memory).
use super::bed::{BedSystem, Faces};
use super::fan::{leakage_m3_per_s, FlowSpec};
use super::plenum_shape::Plenum;

/// What closes the plenum's volume balance: fan (or fixed flow), inlet transition loss and leakage.
pub(super) struct Closure<'a> {
    /// Fan curve or fixed flow.
    pub flow: &'a FlowSpec,
    /// Leakage coefficient, m³/(s·√Pa).
    pub leak_c: f64,
    /// Inlet opening area, m².
    pub a_in_m2: f64,
    /// Inlet transition loss coefficient.
    pub k_transition: f64,
    /// Plenum air density, kg/m³.
    pub rho: f64,
    /// Fan air density, kg/m³.
    pub rho_fan: f64,
    /// Fan volumetric flow per plenum volumetric flow.
    pub to_fan: f64,
}

impl Closure<'_> {
    /// Plenum flow (m³/s at the plenum air) the fan delivers against inlet static pressure `p_in`: the root of
    /// `P_fan(q·v_fan/v_pl) − K_t·ρ(q/A)²/2 = p_in` within the rated range (clamped at its ends).
    pub fn plenum_flow_m3_per_s(&self, p_in: f64) -> f64 {
        match self.flow {
            FlowSpec::Fixed { total_m3_per_s } => *total_m3_per_s,
            FlowSpec::Fan(fan) => {
                let g = |q: f64| {
                    let u = q / self.a_in_m2;
                    fan.pressure_pa(q * self.to_fan, self.rho_fan)
                        - self.k_transition * 0.5 * self.rho * u * u
                        - p_in
                };
                let (fan_lo, fan_hi) = fan.flow_range_m3_per_s();
                let (mut lo, mut hi) = (fan_lo / self.to_fan, fan_hi / self.to_fan);
                if g(lo) <= 0.0 {
                    return lo;
                }
                if g(hi) >= 0.0 {
                    return hi;
                }
                for _ in 0..200 {
                    let mid = 0.5 * (lo + hi);
                    if g(mid) > 0.0 {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                    if hi - lo <= 1e-15 * hi {
                        break;
                    }
                }
                0.5 * (lo + hi)
            }
        }
    }
}

/// The Newton iterate: pressures and the speeds their faces are built on.
#[derive(Debug, Clone)]
pub(super) struct Iterate {
    /// Cell pressures, Pa (solver order).
    pub p: Vec<f64>,
    /// Cell speeds the resistivities are evaluated at, m/s.
    pub speeds: Vec<f64>,
    /// Floor speeds per column, m/s.
    pub floor_speeds: Vec<f64>,
    /// Inlet static pressure, Pa.
    pub p_in: f64,
    /// Plenum pressure minus inlet pressure per column, Pa.
    pub delta: Vec<f64>,
}

/// Residual scales fixed for one Newton step.
struct Scales {
    /// 1 / largest pressure.
    pressure: f64,
    /// 1 / (diagonal · largest pressure) per cell.
    flux: Vec<f64>,
    /// 1 / plenum flow.
    flow: f64,
}

/// The nonlinear system, the plenum's shape δ among its unknowns (`δ − shape(floor outflows)`).
pub(super) struct System<'a> {
    /// The bed's discrete system (reassembled at each step's base).
    pub sys: &'a mut BedSystem,
    /// Fan and leakage.
    pub closure: &'a Closure<'a>,
    /// The plenum (its shape is called on every residual).
    pub plenum: &'a mut dyn Plenum,
    /// False for a uniform plenum (δ stays zero).
    pub manifold: bool,
    probe: Faces,
    scales: Scales,
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

impl<'a> System<'a> {
    /// The system of `sys`, `closure` and `plenum`.
    pub fn new(
        sys: &'a mut BedSystem,
        closure: &'a Closure<'a>,
        plenum: &'a mut dyn Plenum,
        manifold: bool,
    ) -> Self {
        let probe = Faces::zeros(sys.nx, sys.ny, sys.nz);
        System {
            sys,
            closure,
            plenum,
            manifold,
            probe,
            scales: Scales {
                pressure: 1.0,
                flux: Vec::new(),
                flow: 1.0,
            },
        }
    }

    fn n(&self) -> usize {
        self.sys.cells()
    }

    fn nc(&self) -> usize {
        self.sys.nx * self.sys.ny
    }

    /// Pack an iterate into x.
    pub fn pack(&self, it: &Iterate) -> Vec<f64> {
        let mut x = it.p.clone();
        x.extend(it.speeds.iter().map(|s| s.ln()));
        x.extend(it.floor_speeds.iter().map(|s| s.ln()));
        x.push(it.p_in);
        x.extend_from_slice(&it.delta);
        x
    }

    /// Unpack x into an iterate.
    pub fn unpack(&self, x: &[f64]) -> Iterate {
        let (n, nc) = (self.n(), self.nc());
        Iterate {
            p: x[..n].to_vec(),
            speeds: x[n..2 * n].iter().map(|v| v.exp()).collect(),
            floor_speeds: x[2 * n..2 * n + nc].iter().map(|v| v.exp()).collect(),
            p_in: x[2 * n + nc],
            delta: x[2 * n + nc + 1..].to_vec(),
        }
    }

    /// Make `it` the step's base: assemble the solver (and its preconditioner) at its speeds and fix the scales.
    fn rebase(&mut self, it: &Iterate) {
        self.sys.speed_for_k.copy_from_slice(&it.speeds);
        self.sys.floor_speed.copy_from_slice(&it.floor_speeds);
        self.sys.assemble();
        let pmax = it.p.iter().fold(0.0f64, |m, v| m.max(v.abs())).max(1e-6);
        self.scales.pressure = 1.0 / pmax;
        self.scales.flux = self
            .sys
            .faces()
            .diag()
            .iter()
            .map(|d| 1.0 / (d * pmax))
            .collect();
        self.scales.flow = 1.0 / self.closure.plenum_flow_m3_per_s(it.p_in).max(1e-9);
    }

    /// F(x) into `out`.
    fn residual(&mut self, x: &[f64], out: &mut [f64]) {
        let (n, nc) = (self.n(), self.nc());
        let nz = self.sys.nz;
        let it = self.unpack(x);
        let mut probe = std::mem::replace(&mut self.probe, Faces::zeros(0, 0, 0));
        self.sys.faces_for(&it.speeds, &it.floor_speeds, &mut probe);
        let p_pl: Vec<f64> = it.delta.iter().map(|d| it.p_in + d).collect();
        let (r1, rest) = out.split_at_mut(n);
        probe.matvec(&it.p, r1);
        for (c, &pp) in p_pl.iter().enumerate() {
            r1[c * nz] -= probe.tbot()[c] * pp;
        }
        for (r, s) in r1.iter_mut().zip(&self.scales.flux) {
            *r *= s;
        }
        let (speeds, floor_q) = self.sys.cell_speeds(&probe, &it.p, &p_pl);
        let (r2, rest) = rest.split_at_mut(n);
        for ((r, &xs), s) in r2.iter_mut().zip(&x[n..2 * n]).zip(&speeds) {
            *r = xs - s.ln();
        }
        let (r3, rest) = rest.split_at_mut(nc);
        let (r4, r5) = rest.split_at_mut(1);
        for ((r, &xs), q) in r3.iter_mut().zip(&x[2 * n..2 * n + nc]).zip(&floor_q) {
            *r = xs - q.ln();
        }
        let outflow: Vec<f64> = (0..nc)
            .map(|c| probe.tbot()[c] * (p_pl[c] - it.p[c * nz]))
            .collect();
        let q_bed: f64 = outflow.iter().sum();
        let dbar = it.delta.iter().sum::<f64>() / nc as f64;
        let leak = leakage_m3_per_s(self.closure.leak_c, it.p_in + dbar);
        r4[0] = (q_bed + leak - self.closure.plenum_flow_m3_per_s(it.p_in)) * self.scales.flow;
        self.probe = probe;
        let shape = if self.manifold {
            self.plenum
                .shape_pa(&outflow, leak, self.closure.rho, None)
                .unwrap_or_else(|_| vec![f64::NAN; nc])
        } else {
            vec![0.0; nc]
        };
        for ((r, d), sh) in r5.iter_mut().zip(&it.delta).zip(&shape) {
            *r = (d - sh) * self.scales.pressure;
        }
    }

    /// Block-diagonal preconditioner z = M⁻¹·v at the step's base (see the module docs).
    fn precondition(&mut self, v: &[f64], z: &mut [f64], local: &Local) {
        let (n, nc) = (self.n(), self.nc());
        let r: Vec<f64> = v[..n]
            .iter()
            .zip(&self.scales.flux)
            .map(|(a, s)| a / s)
            .collect();
        let mut zp = vec![0.0; n];
        self.sys.apply_preconditioner(&r, &mut zp);
        z[..n].copy_from_slice(&zp);
        for i in 0..n {
            z[n + i] = v[n + i] / local.speed[i];
        }
        for c in 0..nc {
            z[2 * n + c] = v[2 * n + c] / local.floor[c];
        }
        z[2 * n + nc] = v[2 * n + nc] / local.p_in;
        for (zc, vc) in z[2 * n + nc + 1..].iter_mut().zip(&v[2 * n + nc + 1..]) {
            *zc = vc / self.scales.pressure;
        }
    }
}

/// The local (diagonal) derivatives the preconditioner divides by.
struct Local {
    speed: Vec<f64>,
    floor: Vec<f64>,
    p_in: f64,
}

fn local_derivatives(s: &System<'_>, it: &Iterate) -> Local {
    let speed = it
        .speeds
        .iter()
        .map(|&u| 1.0 + s.sys.law_log_slope(u))
        .collect();
    let floor = s.sys.floor_share().iter().map(|t| 1.0 + t).collect();
    // d(volume balance)/d p_in with the bed's pressures held: the floor's direct conductance, the leakage's and
    // the fan's slope (by a central difference of the closure).
    let g: f64 = s.sys.faces().tbot().iter().sum();
    let h = 1e-4 * it.p_in.abs().max(1.0);
    let dq = (s.closure.plenum_flow_m3_per_s(it.p_in + h)
        - s.closure.plenum_flow_m3_per_s(it.p_in - h))
        / (2.0 * h);
    let nc = s.nc() as f64;
    let dbar = it.delta.iter().sum::<f64>() / nc;
    let dl = (leakage_m3_per_s(s.closure.leak_c, it.p_in + dbar + h)
        - leakage_m3_per_s(s.closure.leak_c, it.p_in + dbar - h))
        / (2.0 * h);
    Local {
        speed,
        floor,
        p_in: (g + dl - dq) * s.scales.flow,
    }
}

/// One Newton step's result.
pub(super) struct Step {
    /// The new iterate.
    pub iterate: Iterate,
    /// ‖F‖ before the step (at the step's own scales).
    pub residual: f64,
    /// Largest pressure change over the largest pressure.
    pub change: f64,
    /// GMRES iterations (one preconditioner application each).
    pub krylov_iters: u32,
}

/// GMRES restart length.
const RESTART: usize = 30;
/// Most GMRES iterations per Newton step.
const MAX_KRYLOV: usize = 300;

/// One Newton–Krylov step with line search from `it` (δ frozen).
pub(super) fn step(s: &mut System<'_>, it: &Iterate) -> Step {
    s.rebase(it);
    let x = s.pack(it);
    let m = x.len();
    let mut f = vec![0.0; m];
    s.residual(&x, &mut f);
    let fnorm = norm(&f);
    let local = local_derivatives(s, it);
    let eta = fnorm.min(0.1);
    let (dx, krylov_iters) = gmres(s, &x, &f, eta * fnorm, &local);
    // Backtracking line search on ‖F‖.
    let mut lambda = 1.0;
    let mut trial = vec![0.0; m];
    let mut ft = vec![0.0; m];
    for _ in 0..12 {
        for ((t, a), d) in trial.iter_mut().zip(&x).zip(&dx) {
            *t = a + lambda * d;
        }
        s.residual(&trial, &mut ft);
        let nt = norm(&ft);
        if nt.is_finite() && nt <= (1.0 - 1e-4 * lambda) * fnorm {
            break;
        }
        lambda *= 0.5;
    }
    let n = s.n();
    let pmax = trial[..n].iter().fold(0.0f64, |a, v| a.max(v.abs()));
    let dmax = dx[..n]
        .iter()
        .fold(0.0f64, |a, v| a.max((lambda * v).abs()));
    Step {
        iterate: s.unpack(&trial),
        residual: fnorm,
        change: if pmax > 0.0 { dmax / pmax } else { 0.0 },
        krylov_iters,
    }
}

/// J·v by a forward difference of F around x (f = F(x)).
fn jv(s: &mut System<'_>, x: &[f64], f: &[f64], v: &[f64], out: &mut [f64]) {
    let vn = norm(v);
    if vn == 0.0 {
        out.iter_mut().for_each(|o| *o = 0.0);
        return;
    }
    let h = f64::EPSILON.sqrt() * (1.0 + norm(x) / (x.len() as f64).sqrt()) / vn;
    let xp: Vec<f64> = x.iter().zip(v).map(|(a, b)| a + h * b).collect();
    s.residual(&xp, out);
    for (o, fi) in out.iter_mut().zip(f) {
        *o = (*o - fi) / h;
    }
}

/// Right-preconditioned restarted GMRES for J·dx = −f to ‖f + J·dx‖ ≤ tol. Returns dx and the iterations.
fn gmres(s: &mut System<'_>, x: &[f64], f: &[f64], tol: f64, local: &Local) -> (Vec<f64>, u32) {
    let m = x.len();
    let mut dx = vec![0.0; m];
    let mut iters = 0u32;
    let mut r: Vec<f64> = f.iter().map(|v| -v).collect();
    let mut work = vec![0.0; m];
    let mut z = vec![0.0; m];
    loop {
        let beta = norm(&r);
        if beta <= tol || iters as usize >= MAX_KRYLOV {
            return (dx, iters);
        }
        let mut basis: Vec<Vec<f64>> = vec![r.iter().map(|v| v / beta).collect()];
        let mut zs: Vec<Vec<f64>> = Vec::new();
        let mut h = vec![vec![0.0; RESTART]; RESTART + 1];
        let (mut cs, mut sn) = (vec![0.0; RESTART], vec![0.0; RESTART]);
        let mut g = vec![0.0; RESTART + 1];
        g[0] = beta;
        let mut k_done = 0;
        for k in 0..RESTART {
            s.precondition(&basis[k], &mut z, local);
            jv(s, x, f, &z, &mut work);
            zs.push(z.clone());
            iters += 1;
            // Modified Gram–Schmidt.
            for (j, b) in basis.iter().enumerate() {
                let hj = dot(&work, b);
                h[j][k] = hj;
                for (w, bi) in work.iter_mut().zip(b) {
                    *w -= hj * bi;
                }
            }
            let hn = norm(&work);
            h[k + 1][k] = hn;
            for j in 0..k {
                let t = cs[j] * h[j][k] + sn[j] * h[j + 1][k];
                h[j + 1][k] = -sn[j] * h[j][k] + cs[j] * h[j + 1][k];
                h[j][k] = t;
            }
            let d = (h[k][k] * h[k][k] + h[k + 1][k] * h[k + 1][k]).sqrt();
            cs[k] = h[k][k] / d;
            sn[k] = h[k + 1][k] / d;
            h[k][k] = d;
            h[k + 1][k] = 0.0;
            g[k + 1] = -sn[k] * g[k];
            g[k] *= cs[k];
            k_done = k + 1;
            if g[k + 1].abs() <= tol || hn == 0.0 || iters as usize >= MAX_KRYLOV {
                break;
            }
            basis.push(work.iter().map(|v| v / hn).collect());
        }
        // Back substitution for the coefficients, then dx += Σ y_j·M⁻¹v_j.
        let mut y = vec![0.0; k_done];
        for i in (0..k_done).rev() {
            let mut acc = g[i];
            for j in i + 1..k_done {
                acc -= h[i][j] * y[j];
            }
            y[i] = acc / h[i][i];
        }
        for (yj, zj) in y.iter().zip(&zs) {
            for (d, zi) in dx.iter_mut().zip(zj) {
                *d += yj * zi;
            }
        }
        // True residual for the restart: −f − J·dx.
        jv(s, x, f, &dx, &mut work);
        for ((ri, fi), wi) in r.iter_mut().zip(f).zip(&work) {
            *ri = -fi - wi;
        }
        if g[k_done].abs() <= tol {
            return (dx, iters);
        }
    }
}
