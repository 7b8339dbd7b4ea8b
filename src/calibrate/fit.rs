//! Bounded weighted least squares by Levenberg–Marquardt with forward-difference sensitivities, and the
//! Gauss–Newton covariance of the result.
//!
//! Minimises `S(p) = Σ wᵢ·(yᵢ(p) − ŷᵢ)²` over parameters held inside `[lo, hi]`. Each iteration builds the Jacobian
//! by forward differences (step `FD_REL_STEP`·|p|, taken into the box), solves `(JᵀWJ + λ·diag(JᵀWJ))·δ = −JᵀWr`
//! (Marquardt's scaling), projects the step into the bounds, and accepts it if `S` falls (λ/3) or rejects it (λ·4).
//! It stops when the relative fall of `S` and the relative step are both below the tolerances, or after
//! `max_iterations`. The systems are at most a few parameters wide, so they are solved by Cholesky here rather than
//! through a linear-algebra crate.
//!
//! Covariance: `s²·(JᵀWJ)⁻¹` with `s² = S/(n − p)` at the optimum (the weights need only be relative); a parameter
//! at a bound is reported with its interval but flagged. Confidence intervals use Student's t with n − p degrees
//! of freedom (statrs). Everything runs in a fixed order: the result does not depend on the thread count as long as
//! the model function does not.

use statrs::distribution::{ContinuousCDF, StudentsT};

/// Relative finite-difference step. Large on purpose: a deep-bed run's sampled moisture is not smooth in the rate
/// constants below about 1e-3 relative (sorption switches between desorption and adsorption, the equilibrium cap and
/// condensation turn on and off in single cells); on noise-free samples the weighted sum of squares wanders by
/// about 0.03–0.1 along a line where it should fall smoothly, and a 1e-3 step stalled the fit short of the truth.
pub const FD_REL_STEP: f64 = 1e-2;

/// One fitted parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamSpec {
    /// Name for reports.
    pub name: String,
    /// Starting value.
    pub start: f64,
    /// Lower bound.
    pub lo: f64,
    /// Upper bound.
    pub hi: f64,
}

/// Stopping rules.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitSettings {
    /// Most iterations.
    pub max_iterations: usize,
    /// Stop when S falls by less than this fraction in an accepted step…
    pub s_rel_tol: f64,
    /// …and every parameter moved by less than this fraction of its value.
    pub step_rel_tol: f64,
    /// Confidence level of the reported intervals, e.g. 0.95.
    pub confidence: f64,
}

impl Default for FitSettings {
    fn default() -> Self {
        FitSettings {
            max_iterations: 30,
            s_rel_tol: 1e-6,
            step_rel_tol: 1e-4,
            confidence: 0.95,
        }
    }
}

/// A fit's result.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct FitResult {
    /// Fitted values.
    pub values: Vec<f64>,
    /// Half-widths of the confidence intervals (NaN where the data do not determine the parameter).
    pub half_width: Vec<f64>,
    /// Whether each parameter ended on a bound.
    pub at_bound: Vec<bool>,
    /// Covariance (row-major p × p).
    pub covariance: Vec<f64>,
    /// Model values at the optimum.
    pub model: Vec<f64>,
    /// Weighted sum of squares at the start and at the optimum.
    pub s_start: f64,
    /// Weighted sum of squares at the optimum.
    pub s_final: f64,
    /// Accepted iterations.
    pub iterations: usize,
    /// Model evaluations in all.
    pub evaluations: usize,
    /// Whether the tolerances were met (not just the iteration limit).
    pub converged: bool,
}

/// Errors of a fit.
#[derive(Debug, thiserror::Error)]
pub enum FitError<E> {
    /// The model failed.
    #[error(transparent)]
    Model(E),
    /// Bad set-up.
    #[error("fit: {0}")]
    Setup(String),
}

fn wss(model: &[f64], data: &[f64], w: &[f64]) -> f64 {
    model
        .iter()
        .zip(data)
        .zip(w)
        .map(|((m, d), w)| w * (m - d) * (m - d))
        .sum()
}

/// Solve `a·x = b` for a symmetric positive definite `a` (n × n, row-major) by Cholesky; `None` if not positive.
pub fn cholesky_solve(a: &[f64], b: &[f64]) -> Option<Vec<f64>> {
    let n = b.len();
    let mut l = vec![0.0; n * n];
    for i in 0..n {
        for j in 0..=i {
            let s: f64 = (0..j).map(|k| l[i * n + k] * l[j * n + k]).sum();
            if i == j {
                let d = a[i * n + i] - s;
                if d.partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
                    return None;
                }
                l[i * n + i] = d.sqrt();
            } else {
                l[i * n + j] = (a[i * n + j] - s) / l[j * n + j];
            }
        }
    }
    let mut y = vec![0.0; n];
    for i in 0..n {
        y[i] = (b[i] - (0..i).map(|k| l[i * n + k] * y[k]).sum::<f64>()) / l[i * n + i];
    }
    let mut x = vec![0.0; n];
    for i in (0..n).rev() {
        x[i] = (y[i] - (i + 1..n).map(|k| l[k * n + i] * x[k]).sum::<f64>()) / l[i * n + i];
    }
    Some(x)
}

/// Jacobian by forward differences (row-major n × p) at `p` with model values `y0`.
fn jacobian<E>(
    params: &[ParamSpec],
    p: &[f64],
    y0: &[f64],
    f: &mut impl FnMut(&[f64]) -> Result<Vec<f64>, E>,
    evals: &mut usize,
) -> Result<Vec<f64>, FitError<E>> {
    let (n, np) = (y0.len(), p.len());
    let mut j = vec![0.0; n * np];
    for (c, spec) in params.iter().enumerate() {
        let mut h = FD_REL_STEP * p[c].abs().max(1e-6 * (spec.hi - spec.lo));
        if p[c] + h > spec.hi {
            h = -h;
        }
        let mut q = p.to_vec();
        q[c] += h;
        let y = f(&q).map_err(FitError::Model)?;
        *evals += 1;
        for r in 0..n {
            j[r * np + c] = (y[r] - y0[r]) / h;
        }
    }
    Ok(j)
}

/// `JᵀWJ` and `JᵀW(y − ŷ)`.
fn normal(j: &[f64], w: &[f64], resid: &[f64], np: usize) -> (Vec<f64>, Vec<f64>) {
    let mut a = vec![0.0; np * np];
    let mut g = vec![0.0; np];
    for (r, (wr, rr)) in w.iter().zip(resid).enumerate() {
        let row = &j[r * np..(r + 1) * np];
        for c in 0..np {
            g[c] += row[c] * wr * rr;
            for d in 0..np {
                a[c * np + d] += row[c] * wr * row[d];
            }
        }
    }
    (a, g)
}

/// Fit `f` (parameters → model values, one per datum) to `data` with weights `w`.
pub fn levenberg_marquardt<E>(
    params: &[ParamSpec],
    data: &[f64],
    w: &[f64],
    settings: &FitSettings,
    mut f: impl FnMut(&[f64]) -> Result<Vec<f64>, E>,
) -> Result<FitResult, FitError<E>> {
    let np = params.len();
    if np == 0 || data.len() <= np || w.len() != data.len() {
        return Err(FitError::Setup(format!(
            "{} data for {np} parameters: need more data than parameters",
            data.len()
        )));
    }
    let mut p: Vec<f64> = params.iter().map(|s| s.start.clamp(s.lo, s.hi)).collect();
    let mut y = f(&p).map_err(FitError::Model)?;
    let mut evals = 1;
    let s_start = wss(&y, data, w);
    let mut s = s_start;
    let (mut lambda, mut iterations, mut converged) = (1e-2, 0, false);
    let mut j = jacobian(params, &p, &y, &mut f, &mut evals)?;
    while iterations < settings.max_iterations {
        let resid: Vec<f64> = y.iter().zip(data).map(|(m, d)| m - d).collect();
        let (a, g) = normal(&j, w, &resid, np);
        let mut accepted = false;
        for _ in 0..12 {
            let mut damped = a.clone();
            for c in 0..np {
                damped[c * np + c] += lambda * a[c * np + c].max(1e-12);
            }
            let neg_g: Vec<f64> = g.iter().map(|x| -x).collect();
            let Some(delta) = cholesky_solve(&damped, &neg_g) else {
                lambda *= 4.0;
                continue;
            };
            let q: Vec<f64> = (0..np)
                .map(|c| (p[c] + delta[c]).clamp(params[c].lo, params[c].hi))
                .collect();
            let yq = f(&q).map_err(FitError::Model)?;
            evals += 1;
            let sq = wss(&yq, data, w);
            if sq < s {
                let small_step = (0..np)
                    .all(|c| (q[c] - p[c]).abs() <= settings.step_rel_tol * p[c].abs().max(1e-12));
                let small_fall = (s - sq) <= settings.s_rel_tol * s;
                (p, y, s) = (q, yq, sq);
                lambda = (lambda / 3.0).max(1e-9);
                accepted = true;
                converged = small_step && small_fall;
                break;
            }
            lambda *= 4.0;
        }
        if !accepted {
            // No step lowers S any more: the optimum within rounding.
            converged = true;
            break;
        }
        iterations += 1;
        j = jacobian(params, &p, &y, &mut f, &mut evals)?;
        if converged {
            break;
        }
    }
    let resid: Vec<f64> = y.iter().zip(data).map(|(m, d)| m - d).collect();
    let (a, _) = normal(&j, w, &resid, np);
    let dof = (data.len() - np) as f64;
    let s2 = s / dof;
    let mut covariance = vec![f64::NAN; np * np];
    for c in 0..np {
        let e: Vec<f64> = (0..np).map(|d| if d == c { 1.0 } else { 0.0 }).collect();
        if let Some(col) = cholesky_solve(&a, &e) {
            for d in 0..np {
                covariance[d * np + c] = s2 * col[d];
            }
        }
    }
    let t = StudentsT::new(0.0, 1.0, dof)
        .map(|d| d.inverse_cdf(0.5 + 0.5 * settings.confidence))
        .unwrap_or(f64::NAN);
    let half_width = (0..np).map(|c| t * covariance[c * np + c].sqrt()).collect();
    let at_bound = (0..np)
        .map(|c| {
            let span = params[c].hi - params[c].lo;
            p[c] <= params[c].lo + 1e-9 * span || p[c] >= params[c].hi - 1e-9 * span
        })
        .collect();
    Ok(FitResult {
        values: p,
        half_width,
        at_bound,
        covariance,
        model: y,
        s_start,
        s_final: s,
        iterations,
        evaluations: evals,
        converged,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An exponential decay with known constants and small deterministic noise is fitted back inside its
    /// intervals; the intervals shrink as the noise does.
    #[test]
    fn exponential_decay_is_fitted_back() {
        let t: Vec<f64> = (0..20).map(|i| i as f64).collect();
        let (a, k) = (3.0, 0.2);
        let noise: Vec<f64> = (0..20).map(|i| 0.01 * ((i * 7 % 5) as f64 - 2.0)).collect();
        let data: Vec<f64> = t
            .iter()
            .zip(&noise)
            .map(|(t, n)| a * (-k * t).exp() + n)
            .collect();
        let params = [
            ParamSpec {
                name: "a".into(),
                start: 1.0,
                lo: 0.1,
                hi: 10.0,
            },
            ParamSpec {
                name: "k".into(),
                start: 0.05,
                lo: 0.01,
                hi: 1.0,
            },
        ];
        let w = vec![1.0; 20];
        let r = levenberg_marquardt(&params, &data, &w, &FitSettings::default(), |p| {
            Ok::<_, ()>(t.iter().map(|t| p[0] * (-p[1] * t).exp()).collect())
        })
        .unwrap();
        assert!(r.converged);
        assert!((r.values[0] - a).abs() < r.half_width[0], "{r:?}");
        assert!((r.values[1] - k).abs() < r.half_width[1], "{r:?}");
        // The noise is ±0.02: the intervals are small but not zero.
        assert!(r.half_width[1] > 0.0 && r.half_width[1] < 0.01, "{r:?}");
    }

    /// A parameter the model ignores has no interval (singular normal matrix).
    #[test]
    fn undetermined_parameter_has_no_interval() {
        let params = [
            ParamSpec {
                name: "a".into(),
                start: 1.0,
                lo: 0.0,
                hi: 5.0,
            },
            ParamSpec {
                name: "unused".into(),
                start: 1.0,
                lo: 0.0,
                hi: 5.0,
            },
        ];
        let data = [2.0, 2.1, 1.9, 2.0];
        let r = levenberg_marquardt(&params, &data, &[1.0; 4], &FitSettings::default(), |p| {
            Ok::<_, ()>(vec![p[0]; 4])
        })
        .unwrap();
        assert!((r.values[0] - 2.0).abs() < 1e-6);
        assert!(r.half_width[1].is_nan());
    }
}
