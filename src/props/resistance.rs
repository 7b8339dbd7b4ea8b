//! Resistance of a bed of crop to airflow: Shedd's equation (ASAE/ASABE D272) and its inverse.
//!
//! Shedd: `ΔP/L = a·Q² / ln(1 + b·Q)` with ΔP/L in Pa/m and Q the superficial velocity in m³/(s·m²) = m/s.
//! Constants per crop live in `models/crops/*.json`. Written as a flow-dependent resistivity for the porous-flow
//! solver: `−∇P = K(|u|)·u`, `K(q) = a·q / ln(1 + b·q)`, which tends to `a/b` as q → 0 (Darcy limit).
//!
//! References: Shedd (1953) Agric. Eng. 34:616–619; ASAE D272.3 MAR96.

/// Shedd's relation for one crop.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Shedd {
    /// a, Pa·s²/m³.
    pub a: f64,
    /// b, m²·s/m³.
    pub b: f64,
}

impl Shedd {
    /// Pressure gradient (Pa/m) at superficial velocity `q_m_per_s` (≥ 0).
    #[inline]
    pub fn pressure_gradient_pa_per_m(&self, q_m_per_s: f64) -> f64 {
        let q = q_m_per_s.abs();
        if q < 1e-12 {
            return self.a / self.b * q;
        }
        self.a * q * q / (self.b * q).ln_1p()
    }

    /// Resistivity K(q) = (ΔP/L)/q, Pa·s/m², finite at q = 0 (limit a/b).
    #[inline]
    pub fn resistivity(&self, q_m_per_s: f64) -> f64 {
        let x = self.b * q_m_per_s.abs();
        if x < 1e-8 {
            // ln(1+x) = x − x²/2 + … ⇒ a·q/ln(1+bq) ≈ (a/b)(1 + x/2)
            return self.a / self.b * (1.0 + 0.5 * x);
        }
        self.a * q_m_per_s.abs() / x.ln_1p()
    }

    /// Superficial velocity (m/s) that gives pressure gradient `g_pa_per_m` (≥ 0): the inverse of Shedd's relation,
    /// by safeguarded Newton iteration from the Darcy and quadratic-limit guesses (relative error < 1e-12).
    #[inline]
    pub fn velocity_from_gradient(&self, g_pa_per_m: f64) -> f64 {
        let g = g_pa_per_m.abs();
        if g == 0.0 {
            return 0.0;
        }
        // Darcy guess q = g·b/a overestimates (resistivity grows with q); start below it.
        let mut q = (g * self.b / self.a).min((g * (1.0 + self.b).ln() / self.a).sqrt().max(1e-9));
        for _ in 0..60 {
            let x = self.b * q;
            let l = x.ln_1p();
            let f = self.a * q * q / l - g;
            // d/dq [a q²/ln(1+bq)] = a q (2 l − x/(1+x)) / l²
            let df = self.a * q * (2.0 * l - x / (1.0 + x)) / (l * l);
            let step = f / df;
            let next = if q - step <= 0.0 { 0.5 * q } else { q - step };
            if (next - q).abs() <= 1e-13 * next {
                return next;
            }
            q = next;
        }
        q
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn inverse_round_trips() {
        let s = Shedd {
            a: 3.80e3,
            b: 111.0,
        };
        for q in [1e-6, 1e-3, 0.01, 0.05, 0.2, 0.3, 1.0, 3.0] {
            let g = s.pressure_gradient_pa_per_m(q);
            assert_relative_eq!(s.velocity_from_gradient(g), q, max_relative = 1e-10);
        }
    }

    #[test]
    fn resistivity_is_continuous_at_zero() {
        let s = Shedd { a: 2.07e4, b: 30.4 };
        assert_relative_eq!(s.resistivity(0.0), s.a / s.b, max_relative = 1e-12);
        assert_relative_eq!(
            s.resistivity(1e-7),
            s.pressure_gradient_pa_per_m(1e-7) / 1e-7,
            max_relative = 1e-6
        );
    }
}
