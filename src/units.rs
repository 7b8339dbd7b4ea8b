//! Unit conversions at the boundary (SI inside, US customary on request) and the moisture-basis newtypes.
//!
//! Moisture is tracked dry basis inside the core; the trade speaks wet basis. `M = m/(1−m)`, `m = M/(1+M)`.
//! Conversion factors are from NIST Special Publication 811 (2008 edition), "Guide for the Use of the International
//! System of Units (SI)", appendix B: exact definitions (foot, pound, US gallon, BTU_IT, short ton, US bushel, mile)
//! except the inch of water, taken at 4 °C (249.082 Pa), and the inch of mercury, taken at 0 °C (3386.389 Pa).
//!
//! `UnitSystem` formats every quantity kind the program prints (one method per kind, the unit written after the
//! number) and reads every quantity a command line takes in the user's units (`*_to_si`). Machine files (CSV, JSON)
//! stay SI with the unit in each column name; money is written one way everywhere by [`money`].

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
/// Joules per British thermal unit (International Table; exact).
pub const J_PER_BTU: f64 = 1_055.055_852_62;
/// Kilograms per short ton (2000 lb; exact).
pub const KG_PER_SHORT_TON: f64 = 907.184_74;
/// Pascal per inch of mercury (0 °C), NIST SP 811.
pub const PA_PER_IN_HG: f64 = 3386.389;
/// Metres per second per mile per hour (exact).
pub const M_S_PER_MPH: f64 = 0.447_04;
/// Millimetres per inch (exact).
pub const MM_PER_IN: f64 = 25.4;

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
    /// volume per minute per volume, so the number is the same: m³/min per m³ = cfm per ft³, the unit the peanut
    /// trade quotes fans in (common practice; grain's cfm per bushel is not used for peanut wagons).
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
    /// An air velocity (in a bed or a jet) with its unit.
    pub fn velocity(self, m_per_s: f64) -> String {
        match self {
            UnitSystem::Si => format!("{m_per_s:.3} m/s"),
            UnitSystem::Us => format!("{:.1} ft/min", m_per_s * 60.0 / M_PER_FT),
        }
    }
    /// A wind speed with its unit.
    pub fn wind(self, m_per_s: f64) -> String {
        match self {
            UnitSystem::Si => format!("{m_per_s:.1} m/s"),
            UnitSystem::Us => format!("{:.1} mph", m_per_s / M_S_PER_MPH),
        }
    }
    /// A mass flow (dry air) with its unit.
    pub fn mass_flow(self, kg_per_s: f64) -> String {
        match self {
            UnitSystem::Si => format!("{kg_per_s:.3} kg/s"),
            UnitSystem::Us => format!("{:.2} lb/min", kg_per_s * 60.0 / KG_PER_LB),
        }
    }
    /// A mass flux through a surface with its unit.
    pub fn mass_flux(self, kg_per_m2_s: f64) -> String {
        match self {
            UnitSystem::Si => format!("{kg_per_m2_s:.3} kg/(s·m²)"),
            UnitSystem::Us => format!(
                "{:.3} lb/(min·ft²)",
                kg_per_m2_s * 60.0 / KG_PER_LB * M_PER_FT * M_PER_FT
            ),
        }
    }
    /// A density with its unit.
    pub fn density(self, kg_per_m3: f64) -> String {
        match self {
            UnitSystem::Si => format!("{kg_per_m3:.3} kg/m³"),
            UnitSystem::Us => format!("{:.4} lb/ft³", kg_per_m3 / KG_PER_LB * M3_PER_FT3),
        }
    }
    /// A bulk volume (of peanuts) with its unit.
    pub fn bulk_volume(self, m3: f64) -> String {
        match self {
            UnitSystem::Si => format!("{m3:.1} m³"),
            UnitSystem::Us => format!("{:.0} ft³", m3 / M3_PER_FT3),
        }
    }
    /// Energy per mass (per kg of water removed) with its unit.
    pub fn specific_energy(self, kj_per_kg: f64) -> String {
        match self {
            UnitSystem::Si => format!("{kj_per_kg:.0} kJ/kg"),
            UnitSystem::Us => format!("{:.0} BTU/lb", kj_per_kg * 1000.0 * KG_PER_LB / J_PER_BTU),
        }
    }
    /// Electrical energy: kWh in both systems (the unit on the meter).
    pub fn energy_kwh(self, kwh: f64) -> String {
        format!("{kwh:.1} kWh")
    }
    /// A burner or fan power with its unit (kW; BTU/h in US units).
    pub fn power(self, w: f64) -> String {
        match self {
            UnitSystem::Si => format!("{:.1} kW", w / 1000.0),
            UnitSystem::Us => format!("{:.0} BTU/h", w * 3600.0 / J_PER_BTU),
        }
    }
    /// A load's or a season's mass in tonnes (short tons in US units).
    pub fn tonnes(self, kg: f64) -> String {
        match self {
            UnitSystem::Si => format!("{:.1} t", kg / 1000.0),
            UnitSystem::Us => format!("{:.1} ton", kg / KG_PER_SHORT_TON),
        }
    }
    /// Fuel volume per tonne of peanuts (L/t; gal/ton in US units). `unit` is the fuel's own unit; a fuel not in
    /// litres keeps its unit per tonne or per ton.
    pub fn fuel_per_mass(self, amount_per_t: f64, unit: &str) -> String {
        match (self, unit) {
            (UnitSystem::Si, _) => format!("{amount_per_t:.1} {unit}/t"),
            (UnitSystem::Us, "L") => format!(
                "{:.2} gal/ton",
                amount_per_t / L_PER_GAL * KG_PER_SHORT_TON / 1000.0
            ),
            (UnitSystem::Us, _) => {
                format!("{:.1} {unit}/ton", amount_per_t * KG_PER_SHORT_TON / 1000.0)
            }
        }
    }
    /// A fuel amount in the fuel's unit (litres become gallons in US units).
    pub fn fuel(self, amount: f64, unit: &str) -> String {
        if unit == "L" {
            self.volume_l(amount)
        } else {
            format!("{amount:.1} {unit}")
        }
    }
    /// A barometric pressure with its unit (kPa; in. Hg in US units).
    pub fn barometric(self, p_pa: f64) -> String {
        match self {
            UnitSystem::Si => format!("{:.3} kPa", p_pa / 1000.0),
            UnitSystem::Us => format!("{:.3} in. Hg", p_pa / PA_PER_IN_HG),
        }
    }
    /// A rainfall depth with its unit.
    pub fn rain(self, mm: f64) -> String {
        match self {
            UnitSystem::Si => format!("{mm:.1} mm"),
            UnitSystem::Us => format!("{:.2} in.", mm / MM_PER_IN),
        }
    }
    /// The unit of `temp` (for table headings).
    pub fn temp_unit(self) -> &'static str {
        match self {
            UnitSystem::Si => "°C",
            UnitSystem::Us => "°F",
        }
    }
    /// A temperature as a bare number in this system (for tables whose heading carries the unit).
    pub fn temp_value(self, t_c: f64) -> f64 {
        match self {
            UnitSystem::Si => t_c,
            UnitSystem::Us => c_to_f(t_c),
        }
    }
    /// The unit of `mass` (for table headings).
    pub fn mass_unit(self) -> &'static str {
        match self {
            UnitSystem::Si => "kg",
            UnitSystem::Us => "lb",
        }
    }
    /// A mass as a bare number in this system.
    pub fn mass_value(self, kg: f64) -> f64 {
        match self {
            UnitSystem::Si => kg,
            UnitSystem::Us => kg / KG_PER_LB,
        }
    }
    /// The unit of fuel per mass for a fuel measured in `unit` (for table headings).
    pub fn fuel_per_mass_unit(self, unit: &str) -> String {
        match (self, unit) {
            (UnitSystem::Si, _) => format!("{unit}/t"),
            (UnitSystem::Us, "L") => "gal/ton".into(),
            (UnitSystem::Us, _) => format!("{unit}/ton"),
        }
    }
    /// Fuel per tonne as a bare number in this system.
    pub fn fuel_per_mass_value(self, amount_per_t: f64, unit: &str) -> f64 {
        match (self, unit) {
            (UnitSystem::Si, _) => amount_per_t,
            (UnitSystem::Us, "L") => amount_per_t / L_PER_GAL * KG_PER_SHORT_TON / 1000.0,
            (UnitSystem::Us, _) => amount_per_t * KG_PER_SHORT_TON / 1000.0,
        }
    }

    /// A temperature given in this system (°C or °F), in °C.
    pub fn temp_to_si(self, t: f64) -> f64 {
        match self {
            UnitSystem::Si => t,
            UnitSystem::Us => f_to_c(t),
        }
    }
    /// A temperature difference given in this system (K or °F), in K.
    pub fn temp_delta_to_si(self, dt: f64) -> f64 {
        match self {
            UnitSystem::Si => dt,
            UnitSystem::Us => dt / 1.8,
        }
    }
    /// A volumetric flow given in this system (m³/min or cfm), in m³/min.
    pub fn flow_to_si_m3_per_min(self, q: f64) -> f64 {
        match self {
            UnitSystem::Si => q,
            UnitSystem::Us => q * M3_PER_FT3,
        }
    }
    /// A static pressure given in this system (Pa or in. of water), in Pa.
    pub fn pressure_to_si_pa(self, p: f64) -> f64 {
        match self {
            UnitSystem::Si => p,
            UnitSystem::Us => p * PA_PER_IN_WATER,
        }
    }
    /// A length given in this system (m or ft), in m.
    pub fn length_to_si_m(self, l: f64) -> f64 {
        match self {
            UnitSystem::Si => l,
            UnitSystem::Us => l * M_PER_FT,
        }
    }
}

/// Money, written one way everywhere: the currency code (ISO 4217, from the buying point or scenario file), a
/// space, and the amount to the whole unit (`USD 2070`, `USD -15`).
pub fn money(code: &str, amount: f64) -> String {
    format!("{code} {amount:.0}")
}

/// A column-name-safe form of a currency code for machine files (`shrink_value_USD`): letters and digits only.
pub fn currency_column(code: &str) -> String {
    let c: String = code.chars().filter(|c| c.is_ascii_alphanumeric()).collect();
    if c.is_empty() {
        "currency".into()
    } else {
        c
    }
}

/// Values for pictures and tables: the number in the chosen system and its unit, apart, so a chart can scale an
/// axis and label it once.
impl UnitSystem {
    /// A length as a number in this system.
    pub fn length_value(self, m: f64) -> f64 {
        match self {
            UnitSystem::Si => m,
            UnitSystem::Us => m / M_PER_FT,
        }
    }
    /// The length unit.
    pub fn length_unit(self) -> &'static str {
        match self {
            UnitSystem::Si => "m",
            UnitSystem::Us => "ft",
        }
    }
    /// An air speed as a number in this system (m/s, or ft/min).
    pub fn speed_value(self, m_per_s: f64) -> f64 {
        match self {
            UnitSystem::Si => m_per_s,
            UnitSystem::Us => m_per_s * 60.0 / M_PER_FT,
        }
    }
    /// The air speed unit.
    pub fn speed_unit(self) -> &'static str {
        match self {
            UnitSystem::Si => "m/s",
            UnitSystem::Us => "ft/min",
        }
    }
    /// A pressure as a number in this system (Pa, or in. of water).
    pub fn pressure_value(self, p_pa: f64) -> f64 {
        match self {
            UnitSystem::Si => p_pa,
            UnitSystem::Us => p_pa / PA_PER_IN_WATER,
        }
    }
    /// The pressure unit.
    pub fn pressure_unit(self) -> &'static str {
        match self {
            UnitSystem::Si => "Pa",
            UnitSystem::Us => "in. water",
        }
    }
    /// A volumetric flow as a number in this system (m³/min, or cfm).
    pub fn flow_value(self, q_m3_per_s: f64) -> f64 {
        match self {
            UnitSystem::Si => q_m3_per_s * 60.0,
            UnitSystem::Us => m3s_to_cfm(q_m3_per_s),
        }
    }
    /// The volumetric flow unit.
    pub fn flow_unit(self) -> &'static str {
        match self {
            UnitSystem::Si => "m³/min",
            UnitSystem::Us => "cfm",
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
    fn nist_sp811_factors() {
        // NIST SP 811 appendix B.8 (rounded values as printed there).
        assert_relative_eq!(J_PER_BTU, 1.055_056e3, max_relative = 1e-6);
        assert_relative_eq!(KG_PER_SHORT_TON, 9.071_847e2, max_relative = 1e-7);
        // 1 BTU_IT/lb = 2.326 kJ/kg exactly (SP 811 B.8, "British thermal unit_IT per pound").
        assert_relative_eq!(J_PER_BTU / KG_PER_LB, 2326.0, max_relative = 1e-12);
        // 1 ft/min = 5.08e-3 m/s exactly.
        assert_eq!(UnitSystem::Us.velocity(5.08e-3 * 100.0), "100.0 ft/min");
        // 10 m³/min per m³ is 12.4 cfm per bushel (1 bu = 1.2445 ft³).
        assert_eq!(UnitSystem::Us.specific_airflow(10.0), "10.00 cfm/ft³");
        // 1 L/t = 0.2397 gal/ton (907.18 kg per ton, 3.7854 L per gal).
        assert_eq!(UnitSystem::Us.fuel_per_mass(100.0, "L"), "23.97 gal/ton");
        assert_eq!(UnitSystem::Us.specific_energy(2326.0), "1000 BTU/lb");
    }

    #[test]
    fn inputs_in_us_units_come_back_in_si() {
        let u = UnitSystem::Us;
        assert_relative_eq!(u.temp_to_si(95.0), 35.0, max_relative = 1e-12);
        assert_relative_eq!(u.temp_delta_to_si(14.4), 8.0, max_relative = 1e-12);
        assert_relative_eq!(
            u.flow_to_si_m3_per_min(1000.0),
            28.316_846_592,
            max_relative = 1e-12
        );
        assert_relative_eq!(u.pressure_to_si_pa(1.0), 249.082, max_relative = 1e-12);
        assert_relative_eq!(UnitSystem::Si.temp_to_si(35.0), 35.0);
    }

    #[test]
    fn money_is_written_one_way() {
        assert_eq!(money("USD", 2070.4), "USD 2070");
        assert_eq!(currency_column("$"), "currency");
        assert_eq!(currency_column("USD"), "USD");
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
