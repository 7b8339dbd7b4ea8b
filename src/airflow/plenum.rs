//! The plenum under the floor as a 1-D dividing-flow manifold along the trailer's length: air enters as a jet
//! through the end-wall inlet, leaves through the floor (and leaks), and its static pressure is not uniform — it
//! rises away from the inlet as the jet's excess momentum is recovered and as the flow decelerates (static regain),
//! and falls with wall friction.
//!
//! Model (own formulation on a standard basis). x runs from the inlet wall; A = W·h is the plenum cross-section,
//! Q(x) the axial flow, U = Q/A. Mass: dQ/dx = −q'(x), the floor outflow plus leakage per unit length, taken from
//! the bed solve. Axial momentum on a slice dx (the dividing-flow manifold balance):
//!
//! `A·dp = −dJ + β·ρ·U·A·dU − τ_w·P·dx`,  `J = χ(x)·ρ·Q²/A`,  `τ_w·P/A = f·ρ·U²/(2·D_h)`,
//!
//! where the outflow leaves carrying a fraction β of the local axial velocity (β = 1: it takes its full axial
//! momentum, which reduces the balance to Bernoulli static regain dp = −ρ·U·dU), f is a Darcy friction factor on the
//! hydraulic diameter D_h = 4A/P, and χ is a momentum-profile factor for the inlet jet: χ(0) = A/A_inlet, so that
//! J(0) = ρ·Q·U_inlet (a jet of the inlet's area), relaxing as `χ = 1 + (A/A_in − 1)·exp(−x/L_mix)` over a mixing
//! length `L_mix = c_mix·D_h,inlet`. Relaxing χ converts jet momentum into static pressure as a sudden expansion
//! does (Borda–Carnot, the 1-D momentum theorem). The pressure at x = 0 is the jet's static pressure at the inlet
//! plane, `p_inlet = P_fan,static − K_t·ρ·U_inlet²/2` (transition loss K_t from the container file).
//!
//! Basis: the momentum balance for dividing-flow manifolds with an outflow momentum coefficient is that of
//! Acrivos, Babcock & Pigford (1959) Chem. Eng. Sci. 10:112–124 and Bajura & Jones (1976) J. Fluids Eng.
//! 98:654–665 — cited from memory, not verified; static regain as in ASHRAE duct design practice (from memory);
//! the jet mixing factor and the defaults for β, f and c_mix are our own reduced-order choices (from memory:
//! a round free jet's potential core is about 5–6 diameters long). It is 1-D: the inlet's lateral offset does not
//! change the pressure across the width (a limitation; each row of columns across the width sees the same p(x)).
//!
//! Taper: a plenum whose height varies linearly along the length has A = W·h(x). The slice balance keeps its form
//! with the outflow term written on the flow, `A·dp = −dJ + β·ρ·U·dQ − τ_w·P·dx` (the sloping wall's pressure
//! force p·dA cancels against the pressure's own change of area), which for β = 1, χ = 1, f = 0 is Bernoulli,
//! `dp = −ρ·U·dU`, with U = Q/A(x); for a level plenum dQ = A·dU and it is the balance above. Each slice takes
//! A at its ends for U and the mean for the pressure force and D_h.
use serde::{Deserialize, Serialize};

/// Parameters of the manifold model (numerical-model settings, so they have documented defaults).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ManifoldParams {
    /// Fraction β of the local axial velocity carried by the air leaving through the floor (1 = Bernoulli regain).
    pub outflow_momentum_fraction: f64,
    /// Darcy friction factor of the plenum walls and floor supports.
    pub friction_factor: f64,
    /// Jet mixing length in inlet hydraulic diameters.
    pub mixing_length_diameters: f64,
}

impl Default for ManifoldParams {
    /// β = 1, f = 0.03, mixing over 6 inlet diameters (our own defaults, from memory; see module docs).
    fn default() -> Self {
        ManifoldParams {
            outflow_momentum_fraction: 1.0,
            friction_factor: 0.03,
            mixing_length_diameters: 6.0,
        }
    }
}

/// How the plenum's static pressure is modelled.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub enum PlenumModel {
    /// One pressure under the whole floor (the classical assumption; used for limit checks).
    Uniform,
    /// The 1-D dividing-flow manifold described in the module docs.
    Manifold(ManifoldParams),
    /// The 2-D depth-averaged plenum flow (`airflow::plenum2d`, coupled through `airflow::plenum_shape`).
    TwoD(super::plenum_shape::Plenum2dParams),
}

impl PlenumModel {
    /// The model's name as the container file and the command line spell it (`duct`, `uniform`, `2d`).
    pub fn name(&self) -> &'static str {
        match self {
            PlenumModel::Uniform => "uniform",
            PlenumModel::Manifold(_) => "duct",
            PlenumModel::TwoD(_) => "2d",
        }
    }
}

impl Default for PlenumModel {
    fn default() -> Self {
        PlenumModel::Manifold(ManifoldParams::default())
    }
}

/// Plenum geometry needed by the manifold model.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlenumGeometry {
    /// Plenum length along x, m.
    pub length_m: f64,
    /// Plenum width, m.
    pub width_m: f64,
    /// Plenum height at the inlet wall, m.
    pub height_m: f64,
    /// Plenum height at the far end wall, m (the height varies linearly between the two; equal for a level
    /// plenum).
    pub far_height_m: f64,
    /// Inlet opening area, m².
    pub inlet_area_m2: f64,
    /// Inlet opening hydraulic diameter, m.
    pub inlet_hydraulic_diameter_m: f64,
}

/// The plenum's pressure distribution relative to the inlet-plane static pressure.
#[derive(Debug, Clone, PartialEq)]
pub struct PlenumProfile {
    /// p(x_i) − p_inlet at each column-row centre, Pa (length nx).
    pub rise_pa: Vec<f64>,
    /// Axial velocity at each column-row centre, m/s.
    pub velocity_m_per_s: Vec<f64>,
}

/// March the manifold balance from the inlet wall.
///
/// `outflow_m3_per_s[i]` is the air leaving row i (all columns across the width, plus its share of leakage);
/// the inflow is their sum. Returns p − p_inlet at row centres. Uniform model, and the 2-D model (which has no
/// row profile; see `airflow::plenum_shape`): all zeros.
pub fn profile(
    model: &PlenumModel,
    geom: &PlenumGeometry,
    outflow_m3_per_s: &[f64],
    rho_kg_per_m3: f64,
) -> PlenumProfile {
    let nx = outflow_m3_per_s.len();
    let params = match model {
        PlenumModel::Uniform | PlenumModel::TwoD(_) => {
            return PlenumProfile {
                rise_pa: vec![0.0; nx],
                velocity_m_per_s: vec![0.0; nx],
            }
        }
        PlenumModel::Manifold(p) => p,
    };
    let (w, len) = (geom.width_m, geom.length_m);
    let area = |x: f64| w * (geom.height_m + (geom.far_height_m - geom.height_m) * x / len);
    let a = area(0.0);
    let dx = len / nx as f64;
    let l_mix = (params.mixing_length_diameters * geom.inlet_hydraulic_diameter_m).max(1e-9);
    let chi = |x: f64| 1.0 + (a / geom.inlet_area_m2 - 1.0).max(0.0) * (-x / l_mix).exp();
    let beta = params.outflow_momentum_fraction;
    let total: f64 = outflow_m3_per_s.iter().sum();
    let mut q_face = total;
    let mut p_face = 0.0;
    let mut rise = Vec::with_capacity(nx);
    let mut vel = Vec::with_capacity(nx);
    for (i, &out) in outflow_m3_per_s.iter().enumerate() {
        let x0 = i as f64 * dx;
        let (a0, a1) = (area(x0), area(x0 + dx));
        let am = 0.5 * (a0 + a1);
        let dh = 4.0 * am / (2.0 * (w + am / w));
        let q1 = (q_face - out).max(0.0);
        let (u0, u1) = (q_face / a0, q1 / a1);
        let j0 = chi(x0) * rho_kg_per_m3 * q_face * u0;
        let j1 = chi(x0 + dx) * rho_kg_per_m3 * q1 * u1;
        let um = 0.5 * (u0 + u1);
        let dp = -(j1 - j0) / am + beta * rho_kg_per_m3 * um * (q1 - q_face) / am
            - params.friction_factor * rho_kg_per_m3 * um * um / (2.0 * dh) * dx;
        rise.push(p_face + 0.5 * dp);
        vel.push(um);
        p_face += dp;
        q_face = q1;
    }
    PlenumProfile {
        rise_pa: rise,
        velocity_m_per_s: vel,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn geom(h: f64) -> PlenumGeometry {
        PlenumGeometry {
            length_m: 6.0,
            width_m: 2.4,
            height_m: h,
            far_height_m: h,
            inlet_area_m2: 2.4 * h,
            inlet_hydraulic_diameter_m: 4.0 * 2.4 * h / (2.0 * (2.4 + h)),
        }
    }

    #[test]
    fn frictionless_full_width_inlet_recovers_bernoulli_regain() {
        // β = 1, f = 0, inlet as wide as the plenum (no jet): p_end − p_in = ρU₀²/2 (Bernoulli).
        let m = PlenumModel::Manifold(ManifoldParams {
            outflow_momentum_fraction: 1.0,
            friction_factor: 0.0,
            mixing_length_diameters: 6.0,
        });
        let n = 400;
        let out = vec![3.0 / n as f64; n];
        let g = geom(0.4);
        let p = profile(&m, &g, &out, 1.2);
        let u0: f64 = 3.0 / (2.4 * 0.4);
        // last centre is half a row short of the end; regain is quadratic in Q so the gap is O(1/n²)
        assert_relative_eq!(p.rise_pa[n - 1], 0.5 * 1.2 * u0 * u0, max_relative = 1e-4);
    }

    #[test]
    fn frictionless_taper_follows_bernoulli_along_its_changing_section() {
        // β = 1, f = 0, no jet: a plenum halving in height with no outflow over its first half and all of it over
        // its second; Bernoulli on U = Q/A(x) gives at the middle p − p_in = ρ/2·(U₀² − U_mid²) with the full flow,
        // and at the end, where nothing is left, ρ/2·U₀².
        let m = PlenumModel::Manifold(ManifoldParams {
            outflow_momentum_fraction: 1.0,
            friction_factor: 0.0,
            mixing_length_diameters: 6.0,
        });
        let n = 800;
        let out: Vec<f64> = (0..n)
            .map(|i| if i < n / 2 { 0.0 } else { 3.0 / (n / 2) as f64 })
            .collect();
        let mut g = geom(0.4);
        g.far_height_m = 0.2;
        let p = profile(&m, &g, &out, 1.2);
        let u0: f64 = 3.0 / (2.4 * 0.4);
        let u_mid: f64 = 3.0 / (2.4 * 0.3);
        // half a row short of the middle: the area there differs by O(1/n), so its U² by 1/n relative
        assert_relative_eq!(
            p.rise_pa[n / 2 - 1],
            0.6 * (u0 * u0 - u_mid * u_mid),
            max_relative = 5e-3
        );
        assert_relative_eq!(p.rise_pa[n - 1], 0.6 * u0 * u0, max_relative = 1e-4);
    }

    #[test]
    fn jet_momentum_raises_pressure_toward_far_wall() {
        let m = PlenumModel::default();
        let mut g = geom(0.4);
        g.inlet_area_m2 = 0.3;
        g.inlet_hydraulic_diameter_m = 0.55;
        let out = vec![0.1; 30];
        let p = profile(&m, &g, &out, 1.2);
        assert!(p.rise_pa[29] > p.rise_pa[0] + 10.0);
    }
}
