//! Resistance of a crop bed and of its perforated floor to airflow: Shedd's equation (ASAE/ASABE D272), the Ergun
//! equation, the D272.3 packing and moisture multipliers, the horizontal/vertical resistance ratio and an orifice
//! stand-in for the perforated-floor loss.
//!
//! Every bed law is written as a flow-dependent resistivity for the porous-flow solver, `−∇P = K(|u|)·u`:
//! - Shedd: `ΔP/L = a·Q² / ln(1 + b·Q)`, `K(q) = a·q / ln(1 + b·q)` → `a/b` as q → 0 (Darcy limit);
//! - Ergun: `ΔP/L = A·Q + B·Q²` with `A = 150·μ·(1−ε)²/(ε³·d_p²)` and `B = 1.75·ρ·(1−ε)/(ε³·d_p)`, `K(q) = A + B·q`.
//!
//! ΔP/L in Pa/m, Q the superficial velocity in m³/(s·m²) = m/s. Crop constants live in `models/crops/*.json`.
//! A [`BedAirflowLaw`] multiplies the pressure drop of a law (packing × moisture factor, per cell if need be); the
//! permeability multiplier a solver sees is its inverse.
//!
//! References: Shedd (1953) Agric. Eng. 34:616–619; ASAE D272.3 MAR96 (equation, notes on packing 1.5 and
//! high-moisture loose fill 0.80); Ergun (1952) Chem. Eng. Prog. 48(2):89–94; horizontal resistance: Kay, Bern &
//! Hurburgh (1989) Trans. ASAE; see DOMAIN.md §1.

use crate::error::{check_range, InputError};

/// Shedd's relation for one crop.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Shedd {
    /// a, Pa·s²/m³.
    pub a: f64,
    /// b, m²·s/m³.
    pub b: f64,
}

impl Shedd {
    /// Shedd constants, both finite and positive.
    pub fn new(a: f64, b: f64) -> Result<Self, InputError> {
        let s = Shedd { a, b };
        s.validate()?;
        Ok(s)
    }

    /// Check the constants (for values that arrived by deserialisation rather than [`Shedd::new`]).
    pub fn validate(&self) -> Result<(), InputError> {
        check_positive("shedd a", self.a, "Pa·s²/m³")?;
        check_positive("shedd b", self.b, "m²·s/m³")?;
        Ok(())
    }

    /// Pressure gradient (Pa/m) at superficial velocity `q_m_per_s` (its magnitude is used).
    #[inline]
    pub fn pressure_gradient_pa_per_m(&self, q_m_per_s: f64) -> f64 {
        self.resistivity(q_m_per_s) * q_m_per_s.abs()
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

    /// Superficial velocity (m/s) that gives pressure gradient `g_pa_per_m` (its magnitude is used): the inverse of
    /// Shedd's relation, relative error below 1e-13 (tested against bisection over G = 1e-7…1e13).
    ///
    /// In the dimensionless variables x = b·q and G = g·b²/a the relation reads x² = G·ln(1 + x). The function
    /// h(x) = x² − G·ln(1 + x) is convex with h(0) = 0 and h′(0) < 0, so its positive root is unique.
    /// - Start, G < 0.1: Padé form of the series x = G − G²/2 + …, x ≈ G·(1 + G/6)/(1 + 2G/3).
    /// - Start, G ≥ 0.1: two steps of the fixed-point map x ← √(G·ln(1 + x)) from x = G, with a cheap logarithm,
    ///   then Aitken-style extrapolation with the map's contraction ratio at the root, r = G/(2x(1 + x)) (from
    ///   ln(1 + x) = x²/G there): x ≈ (x₂ − r·x₁)/(1 − r). This lands within 1.5 % of the root.
    /// - Two Halley steps (cubic convergence) with the exact logarithm, written with a single division each.
    ///
    /// A fixed number of steps keeps the call branch-light; it sits in the airflow solver's inner loop, so keep it
    /// under 100 ns (`benches/resistance.rs`).
    #[inline]
    pub fn velocity_from_gradient(&self, g_pa_per_m: f64) -> f64 {
        let g = g_pa_per_m.abs();
        // One division serves both scalings: G = g·b²/a = g·b³/(ab) and q = x/b = x·a/(ab).
        let inv_ab = 1.0 / (self.a * self.b);
        let big_g = g * self.b * self.b * self.b * inv_ab;
        let to_q = self.a * inv_ab;
        if big_g < 1e-8 {
            // Darcy limit with its first correction: x = G − G²/2 + O(G³), relative error < 1e-16 here (and
            // G = 0 gives 0 rather than the 0/0 of a Halley step).
            return (big_g - 0.5 * big_g * big_g) * to_q;
        }
        let mut x = if big_g < 0.1 {
            big_g * (1.0 + big_g / 6.0) / (1.0 + big_g * (2.0 / 3.0))
        } else {
            let x1 = (big_g * ln_approx(1.0 + big_g)).sqrt();
            let x2 = (big_g * ln_approx(1.0 + x1)).sqrt();
            // (x₂ − r·x₁)/(1 − r) with r = G/D, D = 2x₂(1 + x₂), as one division.
            let d = 2.0 * x2 * (1.0 + x2);
            (x2 * d - big_g * x1) / (d - big_g)
        };
        for _ in 0..2 {
            // Halley: x ← x − 2h·h′/(2h′² − h·h″), with h′ = 2x − G/y and h″ = 2 + G/y², y = 1 + x; multiplying
            // through by y² leaves one division.
            let y = 1.0 + x;
            let h = x * x - big_g * ln_1p_fast(x);
            let d1y = 2.0 * x * y - big_g;
            let d2y2 = 2.0 * y * y + big_g;
            x -= 2.0 * h * d1y * y / (2.0 * d1y * d1y - h * d2y2);
        }
        x * to_q
    }
}

/// ln(1 + x) for x ≥ 0: `ln(1 + x)` (about 1.6× faster than `ln_1p` on the development machine) where rounding
/// 1 + x costs at most 1e-14 relative (x > 0.01), `ln_1p` below.
#[inline]
fn ln_1p_fast(x: f64) -> f64 {
    if x > 0.01 {
        (1.0 + x).ln()
    } else {
        x.ln_1p()
    }
}

/// Crude natural logarithm of a positive normal number (absolute error below 6e-3), for starting guesses only:
/// x = 2^e·m with m in [1/√2, √2) taken from the bits without a branch (the offset trick of musl's `log`: adding
/// bits(1) − bits(1/√2) carries into the exponent exactly when the mantissa is at or above √2), then the cubic
/// Taylor polynomial of ln(1 + u), u = m − 1.
#[inline]
fn ln_approx(x: f64) -> f64 {
    const MANTISSA: u64 = (1u64 << 52) - 1;
    const BITS_SQRT_HALF: u64 = 0x3fe6_a09e_667f_3bcd;
    const OFFSET: u64 = 0x3ff0_0000_0000_0000 - BITS_SQRT_HALF;
    let ix = x.to_bits() + OFFSET;
    let e = (ix >> 52) as i64 - 1023;
    let m = f64::from_bits((ix & MANTISSA) + BITS_SQRT_HALF);
    let u = m - 1.0;
    e as f64 * std::f64::consts::LN_2 + u * (1.0 + u * (-0.5 + u * (1.0 / 3.0)))
}

/// Ergun's packed-bed relation: viscous plus inertial loss, from porosity and an equivalent particle diameter.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Ergun {
    /// Bed porosity ε (void fraction), 0 < ε < 1.
    pub porosity: f64,
    /// Equivalent particle diameter d_p, m.
    pub particle_diameter_m: f64,
    /// Dynamic viscosity of air μ, Pa·s (≈ 1.85e-5 at 30 °C).
    pub viscosity_pa_s: f64,
    /// Density of air ρ, kg/m³ (≈ 1.16 at 30 °C).
    pub density_kg_per_m3: f64,
}

impl Ergun {
    /// Ergun parameters, validated: 0 < ε < 1, d_p, μ and ρ finite and positive.
    pub fn new(
        porosity: f64,
        particle_diameter_m: f64,
        viscosity_pa_s: f64,
        density_kg_per_m3: f64,
    ) -> Result<Self, InputError> {
        let e = Ergun {
            porosity,
            particle_diameter_m,
            viscosity_pa_s,
            density_kg_per_m3,
        };
        e.validate()?;
        Ok(e)
    }

    /// Check the parameters (for values that arrived by deserialisation rather than [`Ergun::new`]).
    pub fn validate(&self) -> Result<(), InputError> {
        check_open_unit("ergun porosity", self.porosity)?;
        check_positive("ergun particle_diameter_m", self.particle_diameter_m, "m")?;
        check_positive("ergun viscosity_pa_s", self.viscosity_pa_s, "Pa·s")?;
        check_positive("ergun density_kg_per_m3", self.density_kg_per_m3, "kg/m³")?;
        Ok(())
    }

    /// Equivalent diameter that makes Ergun reproduce a Shedd curve at a reference superficial velocity, for the
    /// given porosity and air properties; returns the fitted law. The fit is exact at `q_ref_m_per_s` and drifts
    /// away from it (DOMAIN.md §1.5: within about ±4 % over 0.05–0.3 m/s for peanuts at ε = 0.45).
    ///
    /// With x = 1/d_p the Ergun gradient is α·x² + β·x (α = 150·μ·(1−ε)²·Q/ε³, β = 1.75·ρ·(1−ε)·Q²/ε³), so
    /// x = 2·g / (β + √(β² + 4·α·g)), the cancellation-free root of the quadratic.
    pub fn fit_to_shedd(
        shedd: &Shedd,
        porosity: f64,
        q_ref_m_per_s: f64,
        viscosity_pa_s: f64,
        density_kg_per_m3: f64,
    ) -> Result<Self, InputError> {
        shedd.validate()?;
        check_open_unit("ergun porosity", porosity)?;
        check_positive("ergun fit q_ref_m_per_s", q_ref_m_per_s, "m/s")?;
        check_positive("ergun viscosity_pa_s", viscosity_pa_s, "Pa·s")?;
        check_positive("ergun density_kg_per_m3", density_kg_per_m3, "kg/m³")?;
        let eps3 = porosity.powi(3);
        let alpha = 150.0 * viscosity_pa_s * (1.0 - porosity).powi(2) * q_ref_m_per_s / eps3;
        let beta = 1.75 * density_kg_per_m3 * (1.0 - porosity) * q_ref_m_per_s.powi(2) / eps3;
        let g = shedd.pressure_gradient_pa_per_m(q_ref_m_per_s);
        let inv_d = 2.0 * g / (beta + (beta * beta + 4.0 * alpha * g).sqrt());
        Ergun::new(porosity, 1.0 / inv_d, viscosity_pa_s, density_kg_per_m3)
    }

    /// Viscous coefficient A = 150·μ·(1−ε)²/(ε³·d_p²), Pa·s/m².
    #[inline]
    pub fn viscous_coefficient(&self) -> f64 {
        let e = self.porosity;
        150.0 * self.viscosity_pa_s * (1.0 - e) * (1.0 - e)
            / (e * e * e * self.particle_diameter_m * self.particle_diameter_m)
    }

    /// Inertial coefficient B = 1.75·ρ·(1−ε)/(ε³·d_p), Pa·s²/m³.
    #[inline]
    pub fn inertial_coefficient(&self) -> f64 {
        let e = self.porosity;
        1.75 * self.density_kg_per_m3 * (1.0 - e) / (e * e * e * self.particle_diameter_m)
    }

    /// Pressure gradient (Pa/m) at superficial velocity `q_m_per_s` (its magnitude is used).
    #[inline]
    pub fn pressure_gradient_pa_per_m(&self, q_m_per_s: f64) -> f64 {
        self.resistivity(q_m_per_s) * q_m_per_s.abs()
    }

    /// Resistivity K(q) = A + B·|q|, Pa·s/m².
    #[inline]
    pub fn resistivity(&self, q_m_per_s: f64) -> f64 {
        self.viscous_coefficient() + self.inertial_coefficient() * q_m_per_s.abs()
    }

    /// Superficial velocity (m/s) for pressure gradient `g_pa_per_m` (its magnitude is used): the positive root of
    /// B·q² + A·q − g = 0 in the form q = 2g / (A + √(A² + 4Bg)), which has no cancellation at small g.
    #[inline]
    pub fn velocity_from_gradient(&self, g_pa_per_m: f64) -> f64 {
        let g = g_pa_per_m.abs();
        let a = self.viscous_coefficient();
        let b = self.inertial_coefficient();
        2.0 * g / (a + (a * a + 4.0 * b * g).sqrt())
    }
}

/// A bed resistance law: one of the published forms.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(tag = "law", rename_all = "snake_case")]
pub enum BedResistance {
    /// Shedd's equation (D272 constants per crop).
    Shedd(Shedd),
    /// Ergun's equation (porosity and equivalent diameter).
    Ergun(Ergun),
}

impl BedResistance {
    /// Check the constants of whichever law this is.
    pub fn validate(&self) -> Result<(), InputError> {
        match self {
            BedResistance::Shedd(s) => s.validate(),
            BedResistance::Ergun(e) => e.validate(),
        }
    }

    /// Pressure gradient (Pa/m) at superficial velocity `q_m_per_s` (its magnitude is used).
    #[inline]
    pub fn pressure_gradient_pa_per_m(&self, q_m_per_s: f64) -> f64 {
        match self {
            BedResistance::Shedd(s) => s.pressure_gradient_pa_per_m(q_m_per_s),
            BedResistance::Ergun(e) => e.pressure_gradient_pa_per_m(q_m_per_s),
        }
    }

    /// Resistivity K(q) = (ΔP/L)/q, Pa·s/m², finite at q = 0.
    #[inline]
    pub fn resistivity(&self, q_m_per_s: f64) -> f64 {
        match self {
            BedResistance::Shedd(s) => s.resistivity(q_m_per_s),
            BedResistance::Ergun(e) => e.resistivity(q_m_per_s),
        }
    }

    /// Superficial velocity (m/s) for a pressure-gradient magnitude (Pa/m).
    #[inline]
    pub fn velocity_from_gradient(&self, g_pa_per_m: f64) -> f64 {
        match self {
            BedResistance::Shedd(s) => s.velocity_from_gradient(g_pa_per_m),
            BedResistance::Ergun(e) => e.velocity_from_gradient(g_pa_per_m),
        }
    }
}

/// D272.3 note: clean, loose fill of high-moisture product (in equilibrium with RH above 85 %) has about 0.80 of the
/// tabulated resistance [published: ASAE D272.3 MAR96, note to the chart; DOMAIN.md §1.2].
pub const HIGH_MOISTURE_FACTOR: f64 = 0.80;
/// Equilibrium relative humidity (decimal) above which [`HIGH_MOISTURE_FACTOR`] applies (same D272.3 note).
pub const HIGH_MOISTURE_ERH: f64 = 0.85;
/// Largest packing factor the D272.3 note gives for packing in the container ("up to 1.50").
pub const D272_MAX_PACKING_FACTOR: f64 = 1.5;

/// The D272.3 moisture factor for product whose equilibrium RH (decimal) is `erh`: 0.80 above 85 %, else 1.0. A
/// step, as the note gives it; callers that want a gradual fade as pods dry must supply their own factor.
#[inline]
pub fn d272_moisture_factor(erh: f64) -> f64 {
    if erh > HIGH_MOISTURE_ERH {
        HIGH_MOISTURE_FACTOR
    } else {
        1.0
    }
}

/// Valid range of a packing factor: 1.0 is loose fill, D272.3 gives up to 1.5 for packing; up to 3.0 is accepted
/// to leave room for fines and trash (DOMAIN.md §1.2: "> 1, depends on amount").
pub const PACKING_FACTOR_RANGE: (f64, f64) = (1.0, 3.0);
/// Valid range of a moisture factor (D272.3 gives 0.80; 0.5–1.0 accepted).
pub const MOISTURE_FACTOR_RANGE: (f64, f64) = (0.5, 1.0);
/// Valid range of a total pressure-drop multiplier (cell or bed): any value in this range is accepted, since fill
/// method alone can change resistance by about an order of magnitude (DOMAIN.md §1.2, Molenda et al.).
pub const MULTIPLIER_RANGE: (f64, f64) = (0.05, 20.0);
/// Valid range of the horizontal-to-vertical resistance ratio: covers the 0.4–0.6 reported for elongated kernels
/// (DOMAIN.md §1.3) and the isotropic 1.0 assumed for peanut pods; values far outside are taken as input errors.
pub const HORIZONTAL_RATIO_RANGE: (f64, f64) = (0.2, 1.5);
/// Default horizontal-to-vertical resistance ratio for peanut pods: isotropic, no data found [common practice, no
/// source; DOMAIN.md §1.3].
pub const PEANUT_HORIZONTAL_RATIO: f64 = 1.0;

/// A bed law scaled for one bed or one cell: pressure drop = `multiplier` × the law's, and horizontal resistivity =
/// `horizontal_ratio` × vertical. The permeability multiplier a solver sees is `1 / multiplier`.
///
/// ```
/// use dryfront::props::resistance::{BedAirflowLaw, BedResistance, Shedd, HIGH_MOISTURE_FACTOR};
/// // Illustrative constants; real ones come from the crop file.
/// let shedd = Shedd::new(3.80e3, 111.0)?;
/// // Packed trailer (1.5) of wet, clean pods (0.80): 1.2 × the loose-fill pressure drop.
/// let law = BedAirflowLaw::with_factors(BedResistance::Shedd(shedd), 1.5, HIGH_MOISTURE_FACTOR)?;
/// let g_pa_per_m = law.pressure_gradient_pa_per_m(0.2);
/// assert!((law.velocity_from_gradient(g_pa_per_m) - 0.2).abs() < 1e-12);
/// // A cell dumped denser than the rest of the bed.
/// let cell = law.scaled(1.3)?;
/// assert!(cell.velocity_from_gradient(g_pa_per_m) < 0.2);
/// # Ok::<(), dryfront::error::InputError>(())
/// ```
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct BedAirflowLaw {
    law: BedResistance,
    multiplier: f64,
    horizontal_ratio: f64,
}

impl BedAirflowLaw {
    /// A law with a total multiplier on ΔP (in [`MULTIPLIER_RANGE`]) and an isotropic bed.
    pub fn new(law: BedResistance, multiplier: f64) -> Result<Self, InputError> {
        law.validate()?;
        check_range(
            "resistance multiplier",
            multiplier,
            MULTIPLIER_RANGE.0,
            MULTIPLIER_RANGE.1,
            "(× ΔP)",
        )?;
        Ok(BedAirflowLaw {
            law,
            multiplier,
            horizontal_ratio: 1.0,
        })
    }

    /// A law with the D272.3 corrections: multiplier = packing factor (in [`PACKING_FACTOR_RANGE`]) × moisture factor
    /// (in [`MOISTURE_FACTOR_RANGE`]; 1.0 for none, [`HIGH_MOISTURE_FACTOR`] for high-moisture loose fill).
    pub fn with_factors(
        law: BedResistance,
        packing_factor: f64,
        moisture_factor: f64,
    ) -> Result<Self, InputError> {
        check_range(
            "packing factor",
            packing_factor,
            PACKING_FACTOR_RANGE.0,
            PACKING_FACTOR_RANGE.1,
            "(× ΔP)",
        )?;
        check_range(
            "moisture factor",
            moisture_factor,
            MOISTURE_FACTOR_RANGE.0,
            MOISTURE_FACTOR_RANGE.1,
            "(× ΔP)",
        )?;
        BedAirflowLaw::new(law, packing_factor * moisture_factor)
    }

    /// The same law with a horizontal-to-vertical resistance ratio (in [`HORIZONTAL_RATIO_RANGE`]).
    pub fn with_horizontal_ratio(self, ratio: f64) -> Result<Self, InputError> {
        check_range(
            "horizontal resistance ratio",
            ratio,
            HORIZONTAL_RATIO_RANGE.0,
            HORIZONTAL_RATIO_RANGE.1,
            "(horizontal / vertical)",
        )?;
        Ok(BedAirflowLaw {
            horizontal_ratio: ratio,
            ..self
        })
    }

    /// This law scaled for one cell: multiplier × `cell_multiplier` (the product must stay in [`MULTIPLIER_RANGE`]).
    pub fn scaled(&self, cell_multiplier: f64) -> Result<Self, InputError> {
        if !cell_multiplier.is_finite() || cell_multiplier <= 0.0 {
            return Err(InputError::argument(
                "cell resistance multiplier",
                cell_multiplier,
                "must be finite and greater than 0",
            ));
        }
        let m = self.multiplier * cell_multiplier;
        check_range(
            "resistance multiplier",
            m,
            MULTIPLIER_RANGE.0,
            MULTIPLIER_RANGE.1,
            "(× ΔP, bed × cell)",
        )?;
        Ok(BedAirflowLaw {
            multiplier: m,
            ..*self
        })
    }

    /// The underlying published law.
    pub fn law(&self) -> &BedResistance {
        &self.law
    }

    /// Total multiplier on ΔP.
    pub fn multiplier(&self) -> f64 {
        self.multiplier
    }

    /// Multiplier on permeability: the inverse of [`BedAirflowLaw::multiplier`].
    pub fn permeability_multiplier(&self) -> f64 {
        1.0 / self.multiplier
    }

    /// Horizontal-to-vertical resistance ratio.
    pub fn horizontal_ratio(&self) -> f64 {
        self.horizontal_ratio
    }

    /// Vertical pressure gradient (Pa/m) at superficial velocity `q_m_per_s` (magnitude).
    #[inline]
    pub fn pressure_gradient_pa_per_m(&self, q_m_per_s: f64) -> f64 {
        self.multiplier * self.law.pressure_gradient_pa_per_m(q_m_per_s)
    }

    /// Vertical resistivity K(q), Pa·s/m², for speed `q_m_per_s`; horizontal is `horizontal_ratio` × this.
    #[inline]
    pub fn resistivity(&self, q_m_per_s: f64) -> f64 {
        self.multiplier * self.law.resistivity(q_m_per_s)
    }

    /// Vertical superficial velocity (m/s) for a pressure-gradient magnitude (Pa/m).
    #[inline]
    pub fn velocity_from_gradient(&self, g_pa_per_m: f64) -> f64 {
        self.law
            .velocity_from_gradient(g_pa_per_m / self.multiplier)
    }

    /// Superficial velocity vector (m/s) from the pressure gradient vector ∇P = `[∂P/∂x, ∂P/∂y, ∂P/∂z]` (Pa/m, z
    /// vertical) in an anisotropic bed: u = −∇P / K, with K = r·K_v(|u|) horizontally and K_v(|u|) vertically.
    ///
    /// Taking norms, |u|·K_v(|u|) = √((g_x/r)² + (g_y/r)² + g_z²) =: g_eff, so |u| is the isotropic inverse at
    /// g_eff and each component follows from K_v(|u|) = g_eff/|u|.
    #[inline]
    pub fn velocity_from_gradient_xyz(&self, grad_pa_per_m: [f64; 3]) -> [f64; 3] {
        let r = self.horizontal_ratio;
        let [gx, gy, gz] = grad_pa_per_m;
        let g_eff = ((gx / r).powi(2) + (gy / r).powi(2) + gz * gz).sqrt();
        if g_eff == 0.0 {
            return [0.0; 3];
        }
        let speed = self.velocity_from_gradient(g_eff);
        // 1/K_v = speed / g_eff.
        let inv_k = speed / g_eff;
        [-gx / r * inv_k, -gy / r * inv_k, -gz * inv_k]
    }
}

/// Pressure drop (Pa) across a perforated floor at superficial velocity `q_m_per_s` (magnitude used), treating the
/// holes as sharp-edged orifices: ΔP = (ρ/2)·(Q/(C_d·φ))².
///
/// This is a **stand-in** for the ASAE D272.3 perforated-sheet relation, whose equation and constants could not be
/// read (DOMAIN.md §1.4, own derivation from orifice physics). C_d ≈ 0.6–0.8 for punched holes and an effective φ
/// of 0.5–0.8 × nominal where pods cover holes are common practice, no source. Arguments are not checked here (it
/// sits in a solver loop); build a [`PerforatedFloor`] to validate them once.
#[inline]
pub fn floor_pressure_drop_pa(
    q_m_per_s: f64,
    open_area_fraction: f64,
    discharge_coefficient: f64,
    air_density_kg_per_m3: f64,
) -> f64 {
    let hole_velocity = q_m_per_s.abs() / (discharge_coefficient * open_area_fraction);
    0.5 * air_density_kg_per_m3 * hole_velocity * hole_velocity
}

/// Superficial velocity (m/s) through a perforated floor for a pressure drop `dp_pa` (magnitude used): inverse of
/// [`floor_pressure_drop_pa`], Q = C_d·φ·√(2·ΔP/ρ). Same stand-in caveat.
#[inline]
pub fn floor_velocity_from_pressure_drop(
    dp_pa: f64,
    open_area_fraction: f64,
    discharge_coefficient: f64,
    air_density_kg_per_m3: f64,
) -> f64 {
    discharge_coefficient * open_area_fraction * (2.0 * dp_pa.abs() / air_density_kg_per_m3).sqrt()
}

/// A perforated floor with validated geometry (orifice stand-in for the D272.3 sheet relation; see
/// [`floor_pressure_drop_pa`]).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct PerforatedFloor {
    /// Open-area fraction φ (effective, after pods and trash), 0 < φ ≤ 1.
    pub open_area_fraction: f64,
    /// Discharge coefficient C_d of the holes, 0 < C_d ≤ 1.
    pub discharge_coefficient: f64,
}

impl PerforatedFloor {
    /// A floor, validated: 0 < φ ≤ 1, 0 < C_d ≤ 1.
    pub fn new(open_area_fraction: f64, discharge_coefficient: f64) -> Result<Self, InputError> {
        let f = PerforatedFloor {
            open_area_fraction,
            discharge_coefficient,
        };
        f.validate()?;
        Ok(f)
    }

    /// Check the geometry (for values that arrived by deserialisation rather than [`PerforatedFloor::new`]).
    pub fn validate(&self) -> Result<(), InputError> {
        check_half_open_unit("floor open_area_fraction", self.open_area_fraction)?;
        check_half_open_unit("floor discharge_coefficient", self.discharge_coefficient)?;
        Ok(())
    }

    /// Pressure drop (Pa) at superficial velocity `q_m_per_s` for air of density `air_density_kg_per_m3`.
    #[inline]
    pub fn pressure_drop_pa(&self, q_m_per_s: f64, air_density_kg_per_m3: f64) -> f64 {
        floor_pressure_drop_pa(
            q_m_per_s,
            self.open_area_fraction,
            self.discharge_coefficient,
            air_density_kg_per_m3,
        )
    }

    /// Superficial velocity (m/s) for a pressure drop (Pa).
    #[inline]
    pub fn velocity_from_pressure_drop(&self, dp_pa: f64, air_density_kg_per_m3: f64) -> f64 {
        floor_velocity_from_pressure_drop(
            dp_pa,
            self.open_area_fraction,
            self.discharge_coefficient,
            air_density_kg_per_m3,
        )
    }
}

fn check_positive(name: &str, value: f64, unit: &str) -> Result<(), InputError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(InputError::argument(
            name,
            format!("{value} {unit}"),
            "must be finite and greater than 0",
        ))
    }
}

fn check_open_unit(name: &str, value: f64) -> Result<(), InputError> {
    if value.is_finite() && value > 0.0 && value < 1.0 {
        Ok(())
    } else {
        Err(InputError::argument(
            name,
            value,
            "must be between 0 and 1, both excluded",
        ))
    }
}

fn check_half_open_unit(name: &str, value: f64) -> Result<(), InputError> {
    if value.is_finite() && value > 0.0 && value <= 1.0 {
        Ok(())
    } else {
        Err(InputError::argument(
            name,
            value,
            "must be greater than 0 and at most 1",
        ))
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
        for q in [1e-9, 1e-6, 1e-3, 0.01, 0.05, 0.2, 0.3, 1.0, 3.0, 100.0] {
            let g = s.pressure_gradient_pa_per_m(q);
            assert_relative_eq!(s.velocity_from_gradient(g), q, max_relative = 1e-12);
        }
        assert!(s.velocity_from_gradient(0.0).abs() < f64::MIN_POSITIVE);
        // Garbage in stays visibly garbage (the solver's physical checks stop on it).
        assert!(!s.velocity_from_gradient(f64::NAN).is_finite());
        assert!(!s.velocity_from_gradient(f64::INFINITY).is_finite());
    }

    /// Root of x² = G·ln(1 + x) by bisection (200 halvings of [0, √(G·ln(1+G))]): slow, obviously right.
    fn root_by_bisection(big_g: f64) -> f64 {
        let (mut lo, mut hi) = (0.0_f64, (big_g * big_g.ln_1p()).sqrt() * (1.0 + 1e-12));
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if mid * mid - big_g * mid.ln_1p() > 0.0 {
                hi = mid;
            } else {
                lo = mid;
            }
        }
        0.5 * (lo + hi)
    }

    #[test]
    fn inverse_matches_bisection_over_twenty_decades() {
        // a = b² makes G equal to the gradient, so the sweep covers G directly.
        let s = Shedd { a: 100.0, b: 10.0 };
        let mut worst: f64 = 0.0;
        for i in 0..=2000 {
            // G from 1e-7 (series branch) to 1e13 (far beyond any bed).
            let big_g = 10f64.powf(-7.0 + 0.01 * f64::from(i));
            let x = s.velocity_from_gradient(big_g) * s.b;
            let x_ref = root_by_bisection(big_g);
            worst = worst.max((x / x_ref - 1.0).abs());
        }
        println!("Shedd inverse vs bisection, worst relative error: {worst:e}");
        assert!(worst < 1e-13, "worst relative error {worst}");
    }

    #[test]
    fn approximate_log_is_within_6e_3() {
        for i in 0..=2000 {
            let x = 10f64.powf(-3.0 + 0.005 * f64::from(i));
            assert!((ln_approx(x) - x.ln()).abs() < 6e-3, "{x}");
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
