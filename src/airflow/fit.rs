//! Fitting the bed's permeability to a top-surface airflow survey: one multiplier per survey block (full depth),
//! found by regularised nonlinear least squares (Levenberg–Marquardt within bounds), with a confidence figure for
//! every block from the Gauss–Newton covariance.
//!
//! Unknowns: θ_b = ln m_b, the log of block b's permeability multiplier (m = 1 is the crop's own law), bounded
//! `ln m_min ≤ θ_b ≤ ln m_max`. Objective:
//!
//! ```text
//! Φ(θ) = Σ_b ((u_b(θ) − u_b,meas) / σ_b)²  +  Σ_b (θ_b / s_p)²
//! ```
//!
//! where u_b is the model's mean superficial velocity out of the top of the block's columns, σ_b the reading's
//! standard deviation and s_p the prior standard deviation of ln m (the stated regularisation: a Gaussian prior
//! centred on the crop law, the Tikhonov term of ridge regression). The prior keeps blocks the survey barely sees
//! near 1 instead of letting them wander, and pins the overall level when a fixed total flow makes it unobservable.
//!
//! Sensitivities: forward differences of the whole coupled solve (`solve::solve_from`: Shedd's nonlinear law,
//! floor, plenum, fan and leakage), one solve per block per iteration, run in parallel over blocks, each started
//! from the solution at the iteration's point (bed and 2-D plenum field), as is each trial step: measured on the
//! README's fit (2026-12-04 04:02, load average 1.8, medians of 3 rounds interleaved with the cold solves' code)
//! 18.1 → 9.2 s wall (34.0 → 16.6 s CPU) on its 2-D plenum and 1.69 → 1.06 s on the duct, the same 4 iterations
//! and 165 solves, multipliers and their intervals within 6e-5 relative of the cold solves' (the derivatives' own
//! error is ~1e-5, below).
//!
//! Why not an adjoint of the bed solve: the bed system is symmetric positive definite only with the resistivities
//! frozen, and the frozen-resistivity adjoint misses the law's feedback (raising a block's permeability raises its
//! speed, which raises Shedd's resistivity by the factor 1 + d ln K/d ln q, about 1.3–1.5 at trailer speeds), the
//! floor's quadratic law and the fan's slope; that error would move the fitted point itself (the gradient Jᵀr
//! would be wrong), not only slow the iteration. Differences of the full solve are exact for the discrete model up
//! to the step (1e-3 in ln m; the solve's relative tolerance 1e-8 leaves ~1e-5 relative error in each derivative),
//! need nothing from the solver's internals, and cost n + 1 solves per iteration: at the default 32 × 12 × 16 grid
//! about 20 ms each on the duct (measured; see `benches/airflow.rs` for the whole fit's time).
//!
//! Iteration: at θ, J = ∂r/∂θ by differences; H = JᵀJ + I/s_p², g = Jᵀr + θ/s_p². Blocks at a bound whose gradient
//! pushes outward are held; the free ones take the Levenberg–Marquardt step (H + μ·diag H)δ = −g, projected onto
//! the bounds; a step that does not lower Φ is refused and μ raised ×4, an accepted one lowers μ ÷3. The fit stops
//! when an accepted step moves no ln m by more than `step_tolerance_ln` (or no step lowers Φ), and the covariance
//! C = H⁻¹ is taken from that last iteration's Jacobian, computed at most `step_tolerance_ln` from the final point
//! (a fresh one there would cost n more solves to change the standard deviations by about that much).
//!
//! Confidence per block: sd(ln m_b) = √C_bb, the 95 % interval m·exp(±1.96·sd) (clipped to the bounds), and the
//! data share 1 − C_bb/s_p²: 1 when the survey alone fixes the block, 0 when only the prior does.
//!
//! References: Levenberg–Marquardt and the Gauss–Newton covariance, Nocedal & Wright, "Numerical Optimization"
//! (2006), ch. 10 (from memory); Tikhonov regularisation as a Gaussian prior, Aster, Borchers & Thurber,
//! "Parameter Estimation and Inverse Problems" (2013), ch. 4 and 11 (from memory).
use nalgebra::{DMatrix, DVector};
use rayon::prelude::*;
use serde::Serialize;

use super::bed::BedLaw;
use super::fan::FlowSpec;
use super::geometry::{Container, Grid, Permeability, PermeabilityBlock};
use super::path::AirPath;
use super::solve::{solve_from, AirflowError, AirflowSolution, SolverSettings, WarmStart};

/// One surveyed block of the top surface with its reading, in the model's terms.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurveyBlock {
    /// The block's name in the survey.
    pub name: String,
    /// Start along the length from the front wall, m.
    pub x0_m: f64,
    /// End along the length, m.
    pub x1_m: f64,
    /// Start across the width, m.
    pub y0_m: f64,
    /// End across the width, m.
    pub y1_m: f64,
    /// Measured superficial velocity out of the top, m/s (funnel flow / mouth area).
    pub measured_m_per_s: f64,
    /// Standard deviation of that measurement, m/s (> 0).
    pub sd_m_per_s: f64,
}

/// Settings of the fit (all have defaults).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct FitSettings {
    /// Lowest multiplier allowed.
    pub min_multiplier: f64,
    /// Highest multiplier allowed.
    pub max_multiplier: f64,
    /// Prior standard deviation of ln m around 0 (m = 1).
    pub prior_sd_ln: f64,
    /// Jacobians allowed (each is one iteration).
    pub max_iters: u32,
    /// Stop when an accepted step changes no ln m by more than this.
    pub step_tolerance_ln: f64,
    /// Forward-difference step in ln m.
    pub fd_step_ln: f64,
}

impl Default for FitSettings {
    /// Multipliers 0.1–10; prior sd ln 3 (a block within a factor 3 of the crop law at one standard deviation);
    /// 30 iterations; steps to 1e-4 in ln m (0.01 % in m, far inside any survey's precision); difference step 1e-3.
    fn default() -> Self {
        FitSettings {
            min_multiplier: 0.1,
            max_multiplier: 10.0,
            prior_sd_ln: 3f64.ln(),
            max_iters: 30,
            step_tolerance_ln: 1e-4,
            fd_step_ln: 1e-3,
        }
    }
}

/// Errors of a fit.
#[derive(Debug, thiserror::Error)]
pub enum FitError {
    /// A model solve failed.
    #[error(transparent)]
    Airflow(#[from] AirflowError),
    /// A block holds no grid column centre.
    #[error(
        "survey block {block:?} holds no column centre of the {nx}×{ny} grid: use a finer grid"
    )]
    EmptyBlock {
        /// The block's name.
        block: String,
        /// Columns along the length.
        nx: usize,
        /// Columns across.
        ny: usize,
    },
    /// Bad settings.
    #[error("fit settings: {0}")]
    Settings(String),
    /// The normal equations could not be factored.
    #[error("the fit's normal equations are singular (iteration {iter})")]
    Singular {
        /// The iteration.
        iter: u32,
    },
}

/// The fit's result for one block.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BlockFit {
    /// The block's name.
    pub name: String,
    /// Fitted permeability multiplier.
    pub multiplier: f64,
    /// Standard deviation of ln m from the Gauss–Newton covariance.
    pub sd_ln: f64,
    /// Lower end of the 95 % interval of m.
    pub ci95_low: f64,
    /// Upper end of the 95 % interval of m.
    pub ci95_high: f64,
    /// 1 − C_bb / s_p²: the share of the block's prior uncertainty the survey removed.
    pub data_share: f64,
    /// Measured superficial velocity, m/s.
    pub measured_m_per_s: f64,
    /// Modelled superficial velocity with the fitted map, m/s.
    pub modelled_m_per_s: f64,
    /// Modelled superficial velocity with the uniform map (m = 1 everywhere), m/s.
    pub start_m_per_s: f64,
    /// The reading's standard deviation, m/s.
    pub sd_m_per_s: f64,
    /// Whether the multiplier ended on a bound.
    pub at_bound: bool,
}

/// One iteration of the fit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct FitIteration {
    /// Iteration number (1-based; one Jacobian each).
    pub iter: u32,
    /// Objective Φ at the start of the iteration.
    pub objective: f64,
    /// Its data part Σ r².
    pub misfit: f64,
    /// Damping μ of the accepted step.
    pub damping: f64,
    /// Largest |Δ ln m| of the accepted step (0 when none was accepted).
    pub max_step_ln: f64,
}

/// Where a fit stands, for a progress line: `fit_survey` reports one at the start of every iteration (before its
/// Jacobian, the iteration's costly part) and one when it has finished.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitProgress {
    /// The iteration starting (1-based); in the last report, the iterations used.
    pub iter: u32,
    /// Iterations allowed (`FitSettings::max_iters`).
    pub max_iters: u32,
    /// Objective Φ at the current point: every accepted step lowers it.
    pub objective: f64,
    /// Its data part Σ r² (the prior's term can fall by more than it rises, so it may rise a little on a step).
    pub misfit: f64,
    /// Airflow solves done so far.
    pub solves: u32,
    /// Whether the fit has finished (the last report; the figures are the fit's final ones).
    pub done: bool,
}

/// A whole fit.
#[derive(Debug, Clone, Serialize)]
pub struct SurveyFit {
    /// Per block, in survey order.
    pub blocks: Vec<BlockFit>,
    /// Iterations (Jacobians) used; the last one gives the covariance.
    pub iterations: u32,
    /// Airflow solves used.
    pub solves: u32,
    /// Whether the step tolerance was met (false: `max_iters` ran out).
    pub converged: bool,
    /// The iterations' record.
    pub history: Vec<FitIteration>,
    /// Final objective Φ.
    pub objective: f64,
    /// Final data misfit Σ r² (near 0 when there is one multiplier per reading: the map can match every reading).
    pub misfit: f64,
    /// The settings used.
    pub settings: FitSettings,
    /// The solve with the fitted map.
    #[serde(skip)]
    pub solution: AirflowSolution,
}

/// Columns (i from the front wall, j) whose centres lie in each block, by the rule the container's permeability
/// blocks use (`x0 ≤ x < x1`, `y0 ≤ y < y1`).
pub fn block_columns(
    container: &Container,
    grid: Grid,
    blocks: &[SurveyBlock],
) -> Vec<Vec<(usize, usize)>> {
    let dx = container.length_m / grid.nx as f64;
    let dy = container.width_m / grid.ny as f64;
    blocks
        .iter()
        .map(|b| {
            let mut cols = Vec::new();
            for i in 0..grid.nx {
                let x = (i as f64 + 0.5) * dx;
                for j in 0..grid.ny {
                    let y = (j as f64 + 0.5) * dy;
                    if x >= b.x0_m && x < b.x1_m && y >= b.y0_m && y < b.y1_m {
                        cols.push((i, j));
                    }
                }
            }
            cols
        })
        .collect()
}

/// The container with its permeability map replaced by the survey's blocks at `multipliers` (full depth).
pub fn fitted_container(
    container: &Container,
    blocks: &[SurveyBlock],
    multipliers: &[f64],
) -> Container {
    let mut c = container.clone();
    c.permeability = Permeability {
        cells: None,
        blocks: blocks
            .iter()
            .zip(multipliers)
            .map(|(b, &m)| PermeabilityBlock {
                x0_m: b.x0_m,
                x1_m: b.x1_m,
                y0_m: b.y0_m,
                y1_m: b.y1_m,
                z0_m: None,
                z1_m: None,
                multiplier: m,
            })
            .collect(),
    };
    c
}

/// Mean top velocity over each block's columns, m/s.
pub fn block_velocities(sol: &AirflowSolution, cols: &[Vec<(usize, usize)>]) -> Vec<f64> {
    cols.iter()
        .map(|c| {
            c.iter()
                .map(|&ij| sol.top_velocity_m_per_s[ij])
                .sum::<f64>()
                / c.len() as f64
        })
        .collect()
}

/// The model as the fit sees it: the survey's blocks, their columns and the solve's inputs.
struct Model<'a> {
    container: &'a Container,
    blocks: &'a [SurveyBlock],
    cols: Vec<Vec<(usize, usize)>>,
    flow: &'a FlowSpec,
    law: &'a BedLaw,
    air: &'a AirPath,
    settings: &'a SolverSettings,
}

impl Model<'_> {
    /// The airflow with multipliers `exp(theta)`, started from `from` (a solution for nearby multipliers) when
    /// given.
    fn solve(
        &self,
        theta: &[f64],
        from: Option<&WarmStart>,
    ) -> Result<AirflowSolution, AirflowError> {
        let m: Vec<f64> = theta.iter().map(|t| t.exp()).collect();
        let c = fitted_container(self.container, self.blocks, &m);
        solve_from(&c, self.flow, self.law, self.air, self.settings, from)
    }

    /// Standardised residuals (u_model − u_meas)/σ.
    fn residuals(&self, sol: &AirflowSolution) -> Vec<f64> {
        block_velocities(sol, &self.cols)
            .iter()
            .zip(self.blocks)
            .map(|(u, b)| (u - b.measured_m_per_s) / b.sd_m_per_s)
            .collect()
    }

    /// J[a][b] = ∂r_a/∂θ_b by forward differences, one solve per block in parallel (results in block order, so
    /// the thread count cannot change them), each started from `from`, the solution at `theta`.
    fn jacobian(
        &self,
        theta: &[f64],
        r0: &[f64],
        h: f64,
        from: &WarmStart,
    ) -> Result<DMatrix<f64>, AirflowError> {
        let n = theta.len();
        let cols: Vec<Vec<f64>> = (0..n)
            .into_par_iter()
            .map(|b| {
                let mut t = theta.to_vec();
                t[b] += h;
                let r = self.residuals(&self.solve(&t, Some(from))?);
                Ok(r.iter().zip(r0).map(|(a, z)| (a - z) / h).collect())
            })
            .collect::<Result<_, AirflowError>>()?;
        Ok(DMatrix::from_fn(r0.len(), n, |a, b| cols[b][a]))
    }
}

fn objective(r: &[f64], theta: &[f64], prior_sd: f64) -> (f64, f64) {
    let misfit: f64 = r.iter().map(|v| v * v).sum();
    let prior: f64 = theta.iter().map(|t| (t / prior_sd).powi(2)).sum();
    (misfit + prior, misfit)
}

fn check_settings(s: &FitSettings) -> Result<(), FitError> {
    let ok = s.min_multiplier.is_finite()
        && s.min_multiplier > 0.0
        && s.max_multiplier.is_finite()
        && s.min_multiplier <= 1.0
        && s.max_multiplier >= 1.0
        && s.min_multiplier < s.max_multiplier
        && s.prior_sd_ln.is_finite()
        && s.prior_sd_ln > 0.0
        && s.fd_step_ln > 0.0
        && s.step_tolerance_ln > 0.0
        && s.max_iters >= 1;
    if ok {
        Ok(())
    } else {
        Err(FitError::Settings(format!(
            "bounds must bracket 1 (got {}–{}), the prior sd and the steps must be positive",
            s.min_multiplier, s.max_multiplier
        )))
    }
}

/// Fit one multiplier per survey block. `settings.grid` sets the resolution of every solve. `progress` is told
/// where the fit stands at the start of every iteration and at the end (see [`FitProgress`]; `&mut |_| {}` when
/// nobody watches); it is called on the caller's thread, between solves.
#[allow(clippy::too_many_arguments)]
pub fn fit_survey(
    container: &Container,
    blocks: &[SurveyBlock],
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
    fit: &FitSettings,
    progress: &mut dyn FnMut(FitProgress),
) -> Result<SurveyFit, FitError> {
    check_settings(fit)?;
    let cols = block_columns(container, settings.grid, blocks);
    if let Some(k) = cols.iter().position(Vec::is_empty) {
        return Err(FitError::EmptyBlock {
            block: blocks[k].name.clone(),
            nx: settings.grid.nx,
            ny: settings.grid.ny,
        });
    }
    let model = Model {
        container,
        blocks,
        cols,
        flow,
        law,
        air,
        settings,
    };
    let n = blocks.len();
    let (lo, hi) = (fit.min_multiplier.ln(), fit.max_multiplier.ln());
    let mut theta = vec![0.0; n];
    let mut sol = model.solve(&theta, None)?;
    let start = block_velocities(&sol, &model.cols);
    let mut r = model.residuals(&sol);
    let mut solves = 1u32;
    let mut mu = 1e-3;
    let mut history = Vec::new();
    let mut converged;
    let mut jac;
    let mut iter = 0;
    let report = |iter, (objective, misfit), solves, done| FitProgress {
        iter,
        max_iters: fit.max_iters,
        objective,
        misfit,
        solves,
        done,
    };
    loop {
        iter += 1;
        let (phi, misfit) = objective(&r, &theta, fit.prior_sd_ln);
        progress(report(iter, (phi, misfit), solves, false));
        jac = model.jacobian(&theta, &r, fit.fd_step_ln, &sol.warm)?;
        solves += n as u32;
        let at = (theta.as_slice(), r.as_slice(), &sol.warm);
        let step = lm_step(&model, &jac, at, phi, &mut mu, fit, (lo, hi), iter)?;
        solves += step.solves;
        history.push(FitIteration {
            iter,
            objective: phi,
            misfit,
            damping: mu,
            max_step_ln: step.max_step,
        });
        match step.accepted {
            Some((t, s, rr)) => {
                converged = step.max_step <= fit.step_tolerance_ln;
                theta = t;
                sol = s;
                r = rr;
            }
            // No step lowers Φ even at the largest damping: the point is a minimum to the solve's precision.
            None => converged = true,
        }
        if converged || iter >= fit.max_iters {
            break;
        }
    }
    let (phi, misfit) = objective(&r, &theta, fit.prior_sd_ln);
    let cov = covariance(&jac, fit.prior_sd_ln).ok_or(FitError::Singular { iter })?;
    progress(report(iter, (phi, misfit), solves, true));
    let modelled = block_velocities(&sol, &model.cols);
    let out = (0..n)
        .map(|b| {
            let sd = cov[(b, b)].max(0.0).sqrt();
            let m = theta[b].exp();
            BlockFit {
                name: blocks[b].name.clone(),
                multiplier: m,
                sd_ln: sd,
                ci95_low: (theta[b] - 1.96 * sd).max(lo).exp(),
                ci95_high: (theta[b] + 1.96 * sd).min(hi).exp(),
                data_share: (1.0 - cov[(b, b)] / fit.prior_sd_ln.powi(2)).clamp(0.0, 1.0),
                measured_m_per_s: blocks[b].measured_m_per_s,
                modelled_m_per_s: modelled[b],
                start_m_per_s: start[b],
                sd_m_per_s: blocks[b].sd_m_per_s,
                at_bound: theta[b] <= lo + 1e-12 || theta[b] >= hi - 1e-12,
            }
        })
        .collect();
    Ok(SurveyFit {
        blocks: out,
        iterations: iter,
        solves,
        converged,
        history,
        objective: phi,
        misfit,
        settings: *fit,
        solution: sol,
    })
}

/// H = JᵀJ + I/s_p² and its inverse (the Gauss–Newton covariance of θ).
fn normal_matrix(jac: &DMatrix<f64>, prior_sd: f64) -> DMatrix<f64> {
    let n = jac.ncols();
    jac.transpose() * jac + DMatrix::identity(n, n) / (prior_sd * prior_sd)
}

fn covariance(jac: &DMatrix<f64>, prior_sd: f64) -> Option<DMatrix<f64>> {
    normal_matrix(jac, prior_sd).cholesky().map(|c| c.inverse())
}

/// What one Levenberg–Marquardt iteration did.
struct Step {
    accepted: Option<(Vec<f64>, AirflowSolution, Vec<f64>)>,
    max_step: f64,
    solves: u32,
}

/// One Levenberg–Marquardt step from θ (residuals `r`, solution `from`): damped steps tried until one lowers Φ
/// (μ ×4 after each refusal, ÷3 after success), at most 12 tries, each trial solve started from `from`.
#[allow(clippy::too_many_arguments)]
fn lm_step(
    model: &Model<'_>,
    jac: &DMatrix<f64>,
    (theta, r, from): (&[f64], &[f64], &WarmStart),
    phi: f64,
    mu: &mut f64,
    fit: &FitSettings,
    (lo, hi): (f64, f64),
    iter: u32,
) -> Result<Step, FitError> {
    let n = theta.len();
    let h = normal_matrix(jac, fit.prior_sd_ln);
    let t = DVector::from_column_slice(theta);
    let g = jac.transpose() * DVector::from_column_slice(r) + &t / fit.prior_sd_ln.powi(2);
    // Held: at a bound with the gradient pushing outward.
    let free: Vec<usize> = (0..n)
        .filter(|&b| {
            !((theta[b] <= lo + 1e-12 && g[b] > 0.0) || (theta[b] >= hi - 1e-12 && g[b] < 0.0))
        })
        .collect();
    let mut solves = 0;
    for _ in 0..12 {
        let k = free.len();
        let mut a = DMatrix::from_fn(k, k, |p, q| h[(free[p], free[q])]);
        for p in 0..k {
            a[(p, p)] *= 1.0 + *mu;
        }
        let rhs = DVector::from_fn(k, |p, _| -g[free[p]]);
        let delta = a.cholesky().ok_or(FitError::Singular { iter })?.solve(&rhs);
        let mut next = theta.to_vec();
        for (p, &b) in free.iter().enumerate() {
            next[b] = (theta[b] + delta[p]).clamp(lo, hi);
        }
        let max_step = next
            .iter()
            .zip(theta)
            .map(|(a, b)| (a - b).abs())
            .fold(0.0, f64::max);
        let sol = model.solve(&next, Some(from))?;
        solves += 1;
        let rr = model.residuals(&sol);
        if objective(&rr, &next, fit.prior_sd_ln).0 < phi {
            *mu = (*mu / 3.0).max(1e-9);
            return Ok(Step {
                accepted: Some((next, sol, rr)),
                max_step,
                solves,
            });
        }
        *mu *= 4.0;
    }
    Ok(Step {
        accepted: None,
        max_step: 0.0,
        solves,
    })
}
