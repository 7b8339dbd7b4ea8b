//! Anderson acceleration of the Picard outer iteration (`airflow::solve`): from the last few Picard steps
//! y → G(y), the next state is `G(y_k) − Σ γ_j·ΔG_j`, with γ the least-squares fit of the current step's residual
//! `f_k = G(y_k) − y_k` by the differences of earlier residuals ΔF_j, in a weighted norm. The state is what one
//! Picard step carries to the next: every cell's speed, every floor speed (m/s) and the plenum shape δ (Pa).
//! Weights make each part a change relative to its scale: speeds over the mean cell (or floor) speed, so a
//! near-stagnant cell weighs by its small absolute change, and δ over the largest pressure. The fixed point is
//! Picard's own; only the path to it changes.
//!
//! Safeguards: at most `depth` differences are kept; a column whose part orthogonal to the earlier ones is below
//! 1e-10 of its length is dropped (the least squares stays well posed as the steps shrink); the history is
//! cleared when a step's weighted residual grows past twice the last, and the plain Picard step is taken then.
//!
//! References: D. G. Anderson (1965), "Iterative procedures for nonlinear integral equations"; H. F. Walker and
//! P. Ni (2011), "Anderson acceleration for fixed-point iterations" (the least-squares form and the QR solve used
//! here), both from memory.
use std::collections::VecDeque;

/// Anderson mixing state for one outer iteration.
#[derive(Debug, Clone)]
pub(super) struct Anderson {
    depth: usize,
    /// The last step's G(y) and raw residual G(y) − y.
    last: Option<(Vec<f64>, Vec<f64>)>,
    /// The last weighted residual norm.
    last_norm: f64,
    /// Differences of G(y) between consecutive steps, newest last.
    dg: VecDeque<Vec<f64>>,
    /// Differences of the raw residual between consecutive steps, newest last.
    df: VecDeque<Vec<f64>>,
}

impl Anderson {
    /// Mixing over the last `depth` steps.
    pub fn new(depth: usize) -> Self {
        Anderson {
            depth,
            last: None,
            last_norm: f64::INFINITY,
            dg: VecDeque::new(),
            df: VecDeque::new(),
        }
    }

    /// The next state from the state `y` of this step and its Picard image `g` = G(y), in the norm weighted by
    /// `w` (one weight per entry).
    pub fn next(&mut self, y: &[f64], g: &[f64], w: &[f64]) -> Vec<f64> {
        let f: Vec<f64> = g.iter().zip(y).map(|(a, b)| a - b).collect();
        let fnorm = weighted_norm(&f, w);
        if let Some((g0, f0)) = self.last.take() {
            if fnorm > 2.0 * self.last_norm {
                self.dg.clear();
                self.df.clear();
            } else {
                self.dg
                    .push_back(g.iter().zip(&g0).map(|(a, b)| a - b).collect());
                self.df
                    .push_back(f.iter().zip(&f0).map(|(a, b)| a - b).collect());
                if self.dg.len() > self.depth {
                    self.dg.pop_front();
                    self.df.pop_front();
                }
            }
        }
        self.last_norm = fnorm;
        let mut out = g.to_vec();
        let gamma = self.coefficients(&f, w);
        for (gj, dg) in gamma.iter().zip(&self.dg) {
            if *gj != 0.0 {
                for (o, d) in out.iter_mut().zip(dg) {
                    *o -= gj * d;
                }
            }
        }
        self.last = Some((g.to_vec(), f));
        out
    }

    /// γ minimising ‖W(f − ΔF·γ)‖ by modified Gram–Schmidt QR of the weighted columns; a dropped column gets 0.
    fn coefficients(&self, f: &[f64], w: &[f64]) -> Vec<f64> {
        let m = self.df.len();
        let mut q: Vec<Vec<f64>> = Vec::with_capacity(m);
        let mut kept: Vec<usize> = Vec::with_capacity(m);
        let mut r = vec![vec![0.0; m]; m];
        for (j, col) in self.df.iter().enumerate() {
            let mut v: Vec<f64> = col.iter().zip(w).map(|(a, b)| a * b).collect();
            let len0 = norm(&v);
            for (qi, &i) in q.iter().zip(&kept) {
                let h = dot(qi, &v);
                r[i][j] = h;
                for (a, b) in v.iter_mut().zip(qi) {
                    *a -= h * b;
                }
            }
            let len = norm(&v);
            if len0 > 0.0 && len > 1e-10 * len0 {
                r[j][j] = len;
                v.iter_mut().for_each(|a| *a /= len);
                q.push(v);
                kept.push(j);
            }
        }
        let fw: Vec<f64> = f.iter().zip(w).map(|(a, b)| a * b).collect();
        let rhs: Vec<f64> = q.iter().map(|qi| dot(qi, &fw)).collect();
        // Back substitution over the kept columns: R[kept, kept]·γ = Qᵀ·W·f.
        let mut gamma = vec![0.0; m];
        for a in (0..kept.len()).rev() {
            let j = kept[a];
            let mut acc = rhs[a];
            for &l in &kept[a + 1..] {
                acc -= r[j][l] * gamma[l];
            }
            gamma[j] = acc / r[j][j];
        }
        gamma
    }
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

fn norm(a: &[f64]) -> f64 {
    dot(a, a).sqrt()
}

fn weighted_norm(a: &[f64], w: &[f64]) -> f64 {
    a.iter()
        .zip(w)
        .map(|(x, y)| (x * y) * (x * y))
        .sum::<f64>()
        .sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A linear contraction y → A·y + b with a slow mode (0.9) and a fast one (0.1): plain iteration needs
    /// about 200 steps to 1e-9; with two differences kept the mixing is exact for a 2-D linear map after the
    /// history fills, so it lands on the fixed point (4, −2) within a few steps.
    #[test]
    fn solves_a_linear_contraction_in_few_steps() {
        let g = |y: &[f64]| vec![0.9 * y[0] + 0.4, 0.1 * y[1] - 1.8];
        let w = [1.0, 1.0];
        let mut acc = Anderson::new(2);
        let mut y = vec![0.0, 0.0];
        let mut steps = 0;
        while ((y[0] - 4.0f64).abs() + (y[1] + 2.0f64).abs()) > 1e-12 && steps < 50 {
            y = acc.next(&y, &g(&y), &w);
            steps += 1;
        }
        assert!(steps <= 5, "{steps} steps, y = {y:?}");
    }
}
