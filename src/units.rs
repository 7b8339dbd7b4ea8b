//! Unit conversions at the boundary (SI inside, US customary on request) and the moisture-basis newtypes.
//!
//! Moisture is tracked dry basis inside the core; the trade speaks wet basis. `M = m/(1−m)`, `m = M/(1+M)`.
//! Conversion factors are exact definitions (NIST SP 811) except the inch of water, taken at 4 °C
//! (249.082 Pa, NIST SP 811 appendix B).

/// Moisture content, dry basis, decimal: kg water per kg dry matter. The core's basis.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize, serde::Deserialize)]
pub struct MoistureDb(pub f64);

/// Moisture content, wet basis, decimal: kg water per kg wet product. Readers and reports only.
#[derive(Debug, Clone, Copy, PartialEq, PartialOrd, serde::Serialize, serde::Deserialize)]
pub struct MoistureWb(pub f64);

impl MoistureDb {
    /// Convert to wet basis.
    pub fn to_wb(self) -> MoistureWb {
        MoistureWb(self.0 / (1.0 + self.0))
    }
}

impl MoistureWb {
    /// Convert to dry basis.
    pub fn to_db(self) -> MoistureDb {
        MoistureDb(self.0 / (1.0 - self.0))
    }
    /// From percent wet basis.
    pub fn from_pct(pct: f64) -> Self {
        MoistureWb(pct / 100.0)
    }
    /// As percent wet basis.
    pub fn pct(self) -> f64 {
        self.0 * 100.0
    }
}

/// Dry-basis decimal from wet-basis decimal.
#[inline]
pub fn db_from_wb(m_wb: f64) -> f64 {
    m_wb / (1.0 - m_wb)
}

/// Wet-basis decimal from dry-basis decimal.
#[inline]
pub fn wb_from_db(m_db: f64) -> f64 {
    m_db / (1.0 + m_db)
}

/// Pascal per inch of water (4 °C), NIST SP 811.
pub const PA_PER_IN_WATER: f64 = 249.082;
/// Cubic metres per cubic foot (exact).
pub const M3_PER_FT3: f64 = 0.028_316_846_592;
/// Kilograms per pound (exact).
pub const KG_PER_LB: f64 = 0.453_592_37;
/// Litres per US gallon (exact).
pub const L_PER_GAL: f64 = 3.785_411_784;
/// Metres per foot (exact).
pub const M_PER_FT: f64 = 0.3048;

/// °C → °F.
pub fn c_to_f(t_c: f64) -> f64 {
    t_c * 1.8 + 32.0
}
/// °F → °C.
pub fn f_to_c(t_f: f64) -> f64 {
    (t_f - 32.0) / 1.8
}
/// m³/s → ft³/min.
pub fn m3s_to_cfm(q_m3_per_s: f64) -> f64 {
    q_m3_per_s * 60.0 / M3_PER_FT3
}
/// ft³/min → m³/s.
pub fn cfm_to_m3s(q_cfm: f64) -> f64 {
    q_cfm * M3_PER_FT3 / 60.0
}

/// Which unit system the user wants to read.
#[derive(
    Debug,
    Clone,
    Copy,
    PartialEq,
    Eq,
    Default,
    clap::ValueEnum,
    serde::Serialize,
    serde::Deserialize,
)]
pub enum UnitSystem {
    /// SI: °C, Pa, m³/min, kg, L.
    #[default]
    Si,
    /// US customary: °F, in. of water, cfm, lb, gal.
    Us,
}

impl UnitSystem {
    /// A temperature with its unit.
    pub fn temp(self, t_c: f64) -> String {
        match self {
            UnitSystem::Si => format!("{t_c:.2} °C"),
            UnitSystem::Us => format!("{:.2} °F", c_to_f(t_c)),
        }
    }
    /// A temperature difference with its unit.
    pub fn temp_delta(self, dt_k: f64) -> String {
        match self {
            UnitSystem::Si => format!("{dt_k:.2} K"),
            UnitSystem::Us => format!("{:.2} °F", dt_k * 1.8),
        }
    }
    /// A pressure with its unit.
    pub fn pressure(self, p_pa: f64) -> String {
        match self {
            UnitSystem::Si => format!("{p_pa:.1} Pa"),
            UnitSystem::Us => format!("{:.3} in. water", p_pa / PA_PER_IN_WATER),
        }
    }
    /// A volumetric flow with its unit.
    pub fn flow(self, q_m3_per_s: f64) -> String {
        match self {
            UnitSystem::Si => format!("{:.1} m³/min", q_m3_per_s * 60.0),
            UnitSystem::Us => format!("{:.0} cfm", m3s_to_cfm(q_m3_per_s)),
        }
    }
    /// A mass with its unit.
    pub fn mass(self, kg: f64) -> String {
        match self {
            UnitSystem::Si => format!("{kg:.1} kg"),
            UnitSystem::Us => format!("{:.1} lb", kg / KG_PER_LB),
        }
    }
    /// A liquid volume with its unit.
    pub fn volume_l(self, l: f64) -> String {
        match self {
            UnitSystem::Si => format!("{l:.1} L"),
            UnitSystem::Us => format!("{:.2} gal", l / L_PER_GAL),
        }
    }
    /// A specific airflow (air volume per minute per volume of crop) with its unit. Both systems' units are a
    /// volume per minute per volume, so the number is the same: m³/min per m³ = cfm per ft³.
    pub fn specific_airflow(self, per_min: f64) -> String {
        match self {
            UnitSystem::Si => format!("{per_min:.2} m³/min per m³"),
            UnitSystem::Us => format!("{per_min:.2} cfm/ft³"),
        }
    }
    /// A length with its unit.
    pub fn length(self, m: f64) -> String {
        match self {
            UnitSystem::Si => format!("{m:.3} m"),
            UnitSystem::Us => format!("{:.2} ft", m / M_PER_FT),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn moisture_basis_round_trip() {
        // DOMAIN.md section 0.2: M% = 100·m%/(100−m%); 20 % w.b. = 25 % d.b.
        assert_relative_eq!(MoistureWb(0.20).to_db().0, 0.25, max_relative = 1e-12);
        assert_relative_eq!(MoistureDb(0.25).to_wb().0, 0.20, max_relative = 1e-12);
    }

    #[test]
    fn us_conversions() {
        assert_relative_eq!(c_to_f(35.0), 95.0, max_relative = 1e-12);
        assert_relative_eq!(f_to_c(c_to_f(12.3)), 12.3, max_relative = 1e-12);
        // 1 m³/s = 2118.88 cfm (NIST SP 811).
        assert_relative_eq!(m3s_to_cfm(1.0), 2118.88, max_relative = 1e-5);
        assert_relative_eq!(cfm_to_m3s(m3s_to_cfm(3.7)), 3.7, max_relative = 1e-12);
    }
}
