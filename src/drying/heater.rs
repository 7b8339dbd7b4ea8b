//! Heater strategies: how much the burner heats the fan's air before it enters the plenum, and what that costs in
//! fuel. Direct-fired burners put the combustion products (and their water) into the drying air.
//!
//! Strategies (DOMAIN.md §8.2, our own list): no heat; a fixed plenum temperature; a fixed rise over ambient; a
//! humidity-limited rule (heat only as needed to bring plenum RH down to a target, capped at a maximum temperature);
//! any of these restricted to a daily time window; a burner capacity (kW) that caps the rise. Every strategy is also
//! clamped at the crop's maximum safe plenum temperature.
//! Heat: `P = ṁ_da·(h(T_out, W) − h(T_in, W))` (ASHRAE enthalpy form, DOMAIN.md §8.2).

use crate::props::psychro::{self, AirState};

/// How the burner is controlled.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(tag = "kind", rename_all = "kebab-case", deny_unknown_fields)]
pub enum HeaterStrategy {
    /// Burner off: ambient air (plus fan heat).
    None,
    /// Hold the plenum at a fixed temperature (never cooling below ambient).
    FixedPlenum {
        /// Plenum set-point, °C.
        plenum_c: f64,
    },
    /// Raise ambient air by a fixed amount.
    FixedRise {
        /// Rise over ambient, K.
        rise_k: f64,
    },
    /// Heat only as needed to bring plenum RH down to `target_rh_pct`, never above `max_c`.
    HumidityLimited {
        /// Plenum RH target, %.
        target_rh_pct: f64,
        /// Plenum temperature cap, °C.
        max_c: f64,
    },
}

/// A strategy as written on the command line or in a scenario, with an optional daily burner window:
/// `none`, `rise=8`, `plenum=35`, `rh=55,max=38`, each optionally followed by `@20-6` (burner on from 20:00 to
/// 06:00 local time).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StrategySpec {
    /// The control rule.
    pub strategy: HeaterStrategy,
    /// Local hours `[start, end)` when the burner may run.
    pub window_h: Option<(u32, u32)>,
}

impl std::str::FromStr for StrategySpec {
    type Err = String;
    fn from_str(text: &str) -> Result<Self, String> {
        let text = text.trim();
        let (rule, window) = match text.split_once('@') {
            Some((r, w)) => (r.trim(), Some(w.trim())),
            None => (text, None),
        };
        let num = |s: &str, what: &str| -> Result<f64, String> {
            s.trim()
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite())
                .ok_or_else(|| format!("{what}: {s:?} is not a number"))
        };
        let mut parts = rule.split(',');
        let head = parts.next().unwrap_or("");
        let (key, value) = head
            .split_once('=')
            .map(|(k, v)| (k.trim(), Some(v)))
            .unwrap_or((head.trim(), None));
        let strategy = match (key, value) {
            ("none", None) => HeaterStrategy::None,
            ("rise", Some(v)) => {
                let rise_k = num(v, "rise")?;
                if !(0.0..=40.0).contains(&rise_k) {
                    return Err(format!("rise: {rise_k} K must be between 0 and 40 K"));
                }
                HeaterStrategy::FixedRise { rise_k }
            }
            ("plenum", Some(v)) => HeaterStrategy::FixedPlenum { plenum_c: num(v, "plenum")? },
            ("rh", Some(v)) => {
                let target_rh_pct = num(v, "rh")?;
                if !(5.0..=95.0).contains(&target_rh_pct) {
                    return Err(format!("rh: {target_rh_pct} % must be between 5 and 95 %"));
                }
                let max = parts.next().and_then(|p| p.trim().strip_prefix("max=")).ok_or("rh needs a cap: rh=55,max=38")?;
                HeaterStrategy::HumidityLimited { target_rh_pct, max_c: num(max, "max")? }
            }
            _ => {
                return Err(format!(
                    "unknown heater strategy {text:?}: expected none, rise=K, plenum=°C or rh=%,max=°C, optionally @start-end hours"
                ))
            }
        };
        if let Some(extra) = parts.next() {
            return Err(format!("unexpected {extra:?} in heater strategy {text:?}"));
        }
        let window_h = match window {
            None => None,
            Some(w) => {
                let (a, b) = w.split_once('-').ok_or_else(|| {
                    format!("burner window {w:?}: expected START-END hours, e.g. 20-6")
                })?;
                let hour = |s: &str| {
                    s.trim()
                        .parse::<u32>()
                        .ok()
                        .filter(|h| *h <= 24)
                        .ok_or_else(|| format!("burner window: {s:?} is not an hour 0–24"))
                };
                Some((hour(a)? % 24, hour(b)? % 24))
            }
        };
        Ok(StrategySpec { strategy, window_h })
    }
}

impl std::fmt::Display for StrategySpec {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.strategy {
            HeaterStrategy::None => write!(f, "none")?,
            HeaterStrategy::FixedRise { rise_k } => write!(f, "rise={rise_k}")?,
            HeaterStrategy::FixedPlenum { plenum_c } => write!(f, "plenum={plenum_c}")?,
            HeaterStrategy::HumidityLimited {
                target_rh_pct,
                max_c,
            } => write!(f, "rh={target_rh_pct},max={max_c}")?,
        }
        if let Some((a, b)) = self.window_h {
            write!(f, "@{a}-{b}")?;
        }
        Ok(())
    }
}

impl HeaterStrategy {
    /// The highest plenum temperature this strategy asks for on air at `ambient_c` (for safety checks).
    pub fn highest_setpoint_c(&self, ambient_c: f64) -> f64 {
        match *self {
            HeaterStrategy::None => ambient_c,
            HeaterStrategy::FixedPlenum { plenum_c } => plenum_c,
            HeaterStrategy::FixedRise { rise_k } => ambient_c + rise_k,
            HeaterStrategy::HumidityLimited { max_c, .. } => max_c,
        }
    }
}

/// A fuel and the burner that burns it.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Fuel {
    /// Name, e.g. "propane".
    #[serde(skip)]
    pub name: &'static str,
    /// Heating value used for the burner (lower heating value for a direct-fired burner), J per unit.
    pub heating_value_j_per_unit: f64,
    /// Unit of the fuel quantity (L for propane, m³ for natural gas).
    #[serde(skip)]
    pub unit: &'static str,
    /// Share of the heating value that reaches the air (≈ 1 for direct-fired), decimal.
    pub burner_efficiency: f64,
    /// Water formed per J of fuel heat released, kg/J (added to the drying air).
    pub combustion_water_kg_per_j: f64,
}

impl Fuel {
    /// Propane by the litre: LHV 46.0 MJ/kg (Menon, Piping Calculations Manual, via DOMAIN.md §8.2) × liquid
    /// density 0.508 kg/L (DOMAIN.md §8.2) = 23.37 MJ/L; burner efficiency 1.0 of LHV for direct firing (common
    /// practice, no source); combustion water 1.63 kg per kg propane (stoichiometry, C₃H₈ + 5 O₂ → 3 CO₂ + 4 H₂O).
    pub fn propane() -> Self {
        let lhv_j_per_kg = 46.0e6;
        Fuel {
            name: "propane",
            heating_value_j_per_unit: lhv_j_per_kg * 0.508,
            unit: "L",
            burner_efficiency: 1.0,
            combustion_water_kg_per_j: 1.634 / lhv_j_per_kg,
        }
    }
    /// Natural gas by the cubic metre: LHV ≈ 34.0 MJ/m³ (from memory, unverified; pipeline gas varies, set it
    /// from the supplier's figure); combustion water ≈ 2.25 kg per kg CH₄ at LHV 50.0 MJ/kg (stoichiometry,
    /// CH₄ + 2 O₂ → CO₂ + 2 H₂O; LHV from memory).
    pub fn natural_gas() -> Self {
        Fuel {
            name: "natural gas",
            heating_value_j_per_unit: 34.0e6,
            unit: "m³",
            burner_efficiency: 1.0,
            combustion_water_kg_per_j: 2.246 / 50.0e6,
        }
    }
    /// Fuel quantity (in `unit`) for heat `heat_j` delivered to the air.
    pub fn quantity_for_heat(&self, heat_j: f64) -> f64 {
        heat_j / (self.heating_value_j_per_unit * self.burner_efficiency)
    }
}

/// Burner and control settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Heater {
    /// Control strategy.
    pub strategy: HeaterStrategy,
    /// Local hours `[start, end)` when the burner may run (wrapping past midnight if start > end); `None` = always.
    pub window_h: Option<(u32, u32)>,
    /// Burner capacity, W (caps the rise); `None` = unlimited.
    pub capacity_w: Option<f64>,
    /// Plenum temperature never exceeded, °C (the crop's safe maximum).
    pub max_plenum_c: f64,
    /// The fuel burnt.
    pub fuel: Fuel,
}

/// The plenum air the heater delivers and the heat it took.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HeaterOutput {
    /// Air entering the plenum (after fan heat and burner, with combustion water).
    pub plenum: AirState,
    /// Heat released into the air, W.
    pub heat_w: f64,
}

impl Heater {
    fn burner_allowed(&self, local_hour: u32) -> bool {
        match self.window_h {
            None => true,
            Some((a, b)) if a <= b => local_hour >= a && local_hour < b,
            Some((a, b)) => local_hour >= a || local_hour < b,
        }
    }

    /// Plenum air from `fan_air` (ambient air already warmed by the fan) at `local_hour`, for a dry-air flow of
    /// `dry_air_kg_per_s`.
    pub fn plenum_air(
        &self,
        fan_air: AirState,
        local_hour: u32,
        dry_air_kg_per_s: f64,
    ) -> HeaterOutput {
        // Combustion water raises the humidity ratio a little; the humidity-limited target is found on the wetter
        // air by a short fixed-point iteration (three passes reach 1e-4 K here).
        let mut w_after = fan_air.w;
        let mut wanted_c = fan_air.t_c;
        for _ in 0..3 {
            wanted_c = match self.strategy {
                HeaterStrategy::None => fan_air.t_c,
                HeaterStrategy::FixedPlenum { plenum_c } => plenum_c,
                HeaterStrategy::FixedRise { rise_k } => fan_air.t_c + rise_k,
                HeaterStrategy::HumidityLimited {
                    target_rh_pct,
                    max_c,
                } => {
                    if fan_air.rh() <= target_rh_pct / 100.0 {
                        fan_air.t_c
                    } else {
                        // Temperature at which the air's humidity ratio has the target RH: a dew-point inversion.
                        let p_ws =
                            psychro::vapour_pressure_from_humidity_ratio(w_after, fan_air.p_pa)
                                / (target_rh_pct / 100.0);
                        psychro::dew_point_from_vapour_pressure_c(p_ws).min(max_c)
                    }
                }
            };
            if dry_air_kg_per_s > 0.0 {
                let heat = dry_air_kg_per_s * fan_air.heat_to_j_per_kg(wanted_c.max(fan_air.t_c));
                w_after = fan_air.w
                    + heat.max(0.0) * self.fuel.combustion_water_kg_per_j / dry_air_kg_per_s;
            }
        }
        let mut target_c = wanted_c.min(self.max_plenum_c).max(fan_air.t_c);
        if !self.burner_allowed(local_hour) || dry_air_kg_per_s <= 0.0 {
            target_c = fan_air.t_c;
        }
        let mut heat_w = dry_air_kg_per_s * fan_air.heat_to_j_per_kg(target_c);
        if let Some(cap) = self.capacity_w {
            if heat_w > cap {
                heat_w = cap;
            }
        }
        if heat_w <= 0.0 {
            return HeaterOutput {
                plenum: fan_air,
                heat_w: 0.0,
            };
        }
        // Combustion water joins the air; the heat raises the enthalpy of the (now slightly wetter) air.
        let dw = heat_w * self.fuel.combustion_water_kg_per_j / dry_air_kg_per_s;
        let w = fan_air.w + dw;
        // The water is formed as vapour at the flame: its enthalpy is part of the heat released (LHV basis).
        let h = fan_air.enthalpy_j_per_kg() + heat_w / dry_air_kg_per_s + dw * psychro::HFG0;
        let t_c = psychro::temperature_from_enthalpy_c(h, w);
        HeaterOutput {
            plenum: AirState {
                t_c,
                w,
                p_pa: fan_air.p_pa,
            },
            heat_w,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn heater(strategy: HeaterStrategy) -> Heater {
        Heater {
            strategy,
            window_h: None,
            capacity_w: None,
            max_plenum_c: 35.0,
            fuel: Fuel::propane(),
        }
    }

    #[test]
    fn domain_heater_check_value() {
        // DOMAIN.md §8.2 (computed with CoolProp 8.0.0): 25 °C / 70 % ambient, +5.6 K at 9.19 kg/s dry air →
        // 53.1 kW, heated RH 50.5 %, propane 4.2 kg/h, combustion water +0.00021 kg/kg.
        // The RH figure there leaves out combustion water, so it is checked on a dry-burning fuel.
        let amb = AirState::from_rh(25.0, 0.70, 101_325.0);
        let mut dry_fuel = heater(HeaterStrategy::FixedRise { rise_k: 5.6 });
        dry_fuel.fuel.combustion_water_kg_per_j = 0.0;
        let out = dry_fuel.plenum_air(amb, 12, 9.19);
        assert!(
            (out.plenum.rh() - 0.505).abs() < 0.003,
            "rh {}",
            out.plenum.rh()
        );
        let out = heater(HeaterStrategy::FixedRise { rise_k: 5.6 }).plenum_air(amb, 12, 9.19);
        assert_relative_eq!(out.heat_w, 53.1e3, max_relative = 0.01);
        let dw = out.plenum.w - amb.w;
        assert!((dw - 0.00021).abs() < 0.00002, "dw {dw}");
        let kg_per_h = out.heat_w * 3600.0 / 46.0e6;
        assert!((kg_per_h - 4.2).abs() < 0.1, "{kg_per_h}");
    }

    #[test]
    fn humidity_limited_reaches_target_and_respects_cap() {
        let amb = AirState::from_rh(20.0, 0.80, 101_325.0);
        let out = heater(HeaterStrategy::HumidityLimited {
            target_rh_pct: 55.0,
            max_c: 40.0,
        })
        .plenum_air(amb, 3, 5.0);
        assert!(
            (out.plenum.rh() - 0.55).abs() < 0.005,
            "rh {}",
            out.plenum.rh()
        );
        let dry = AirState::from_rh(28.0, 0.40, 101_325.0);
        let out = heater(HeaterStrategy::HumidityLimited {
            target_rh_pct: 55.0,
            max_c: 40.0,
        })
        .plenum_air(dry, 3, 5.0);
        assert!(out.heat_w.abs() < 1e-12);
        let out = heater(HeaterStrategy::FixedPlenum { plenum_c: 50.0 }).plenum_air(amb, 3, 5.0);
        assert!(out.plenum.t_c <= 35.0 + 1e-9);
    }

    #[test]
    fn strategy_specs_parse_and_print() {
        for text in ["none", "rise=8", "plenum=35", "rh=55,max=38", "rise=6@20-6"] {
            let spec: StrategySpec = text.parse().unwrap();
            assert_eq!(spec.to_string(), text);
        }
        assert_eq!(
            "rise=8@20-6".parse::<StrategySpec>().unwrap().window_h,
            Some((20, 6))
        );
        for bad in [
            "warm",
            "rise=hot",
            "rh=55",
            "rise=8@25-3",
            "rise=8,max=3",
            "rh=140,max=30",
            "rise=-3",
        ] {
            assert!(bad.parse::<StrategySpec>().is_err(), "{bad}");
        }
    }

    #[test]
    fn window_and_capacity() {
        let amb = AirState::from_rh(20.0, 0.80, 101_325.0);
        let mut h = heater(HeaterStrategy::FixedRise { rise_k: 8.0 });
        h.window_h = Some((20, 6));
        assert!(h.plenum_air(amb, 12, 5.0).heat_w.abs() < 1e-12);
        assert!(h.plenum_air(amb, 23, 5.0).heat_w > 0.0);
        assert!(h.plenum_air(amb, 2, 5.0).heat_w > 0.0);
        h.capacity_w = Some(10_000.0);
        let out = h.plenum_air(amb, 2, 5.0);
        assert_relative_eq!(out.heat_w, 10_000.0);
        assert!(out.plenum.t_c < 28.0);
    }
}
