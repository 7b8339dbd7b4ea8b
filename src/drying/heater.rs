//! Heater strategies: how much the burner heats the fan's air before it enters the plenum, and what that costs in
//! fuel. Direct-fired burners put the combustion products (and their water) into the drying air.
//!
//! Strategies (DOMAIN.md §8.2, our own list): no heat; a fixed plenum temperature; a fixed rise over ambient; a
//! humidity-limited rule (heat only as needed to bring plenum RH down to a target, capped at a maximum temperature);
//! any of these restricted to a daily time window; a burner capacity (kW) that caps the heat. Every strategy is also
//! clamped at the crop's maximum safe plenum temperature.
//!
//! **Rise** is counted over *ambient* air, fan heat included: `rise=8` asks for a plenum of ambient + 8 K, and the
//! burner adds only what the fan's own heat has not already given (none at all when the fan warms the air by more
//! than the rise). This is what a burner thermostat set to a differential over outside air does.
//!
//! **The one language** for a strategy, used by `dry`, `compare`, scenario files, buying-point files and season
//! sweeps, is [`StrategySpec`]: `none`, `rise=K`, `plenum=°C`, `rh=%,max=°C`, each optionally followed by a daily
//! burner window `@START-END` in local hours (START 0–23, END 0–24; an END before START wraps past midnight, so
//! `@20-6` is 20:00 to 06:00). Its parser holds the only range check ([`HeaterSpecError`]) and
//! [`StrategySpec::check_safety`] the only safety rule against the crop file's limits.
//!
//! Heat: `P = ṁ_da·(h(T_out, W_out) − h(T_in, W_in)) − ṁ_da·ΔW·h_fg0` (ASHRAE enthalpy form, DOMAIN.md §8.2), solved in
//! closed form so that the plenum, combustion water included, reaches the asked temperature exactly.

use crate::props::psychro::{self, AirState};
use crate::units::{c_to_f, f_to_c, UnitSystem};

/// The grammar, as shown in error messages and help texts.
pub const STRATEGY_GRAMMAR: &str =
    "none, rise=K, plenum=°C or rh=%,max=°C, optionally followed by a burner window @START-END (local hours, e.g. @20-6)";

/// Hard bounds of the language (physical sense, not safety: the crop file's limits are checked by
/// [`StrategySpec::check_safety`]). Rise over ambient, K: above 0, at most this.
pub const RISE_MAX_K: f64 = 30.0;
/// Plenum set-point and humidity-rule cap, °C: `[PLENUM_MIN_C, PLENUM_MAX_C]`.
pub const PLENUM_MIN_C: f64 = 5.0;
/// Upper bound of a plenum set-point or cap, °C.
pub const PLENUM_MAX_C: f64 = 70.0;
/// Plenum RH target, %: `[RH_MIN_PCT, RH_MAX_PCT]`.
pub const RH_MIN_PCT: f64 = 5.0;
/// Upper bound of the RH target, %.
pub const RH_MAX_PCT: f64 = 95.0;

/// How the burner is controlled.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum HeaterStrategy {
    /// Burner off: ambient air (plus fan heat).
    None,
    /// Hold the plenum at a fixed temperature (never cooling below the fan-warmed air).
    FixedPlenum {
        /// Plenum set-point, °C.
        plenum_c: f64,
    },
    /// Hold the plenum at ambient plus a fixed rise (fan heat counted in the rise).
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

/// A strategy as written in the one heater language (see the module docs): the control rule and an optional daily
/// burner window. `FromStr` parses and range-checks it, `Display` writes it back so that it parses to the same value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StrategySpec {
    /// The control rule.
    pub strategy: HeaterStrategy,
    /// Local hours `[start, end)` when the burner may run, start 0–23, end 0–24, never equal; an end before the start
    /// wraps past midnight. `None` = around the clock.
    pub window_h: Option<(u32, u32)>,
}

impl From<HeaterStrategy> for StrategySpec {
    /// The strategy around the clock (no burner window).
    fn from(strategy: HeaterStrategy) -> Self {
        StrategySpec {
            strategy,
            window_h: None,
        }
    }
}

/// A heater strategy string that is refused, by the parser or by the safety rule. Its `Display` is the one message
/// every command shows for it (after its own context, such as the option or the file and field).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("heater strategy {text:?}: {problem}")]
pub struct HeaterSpecError {
    /// The strategy as given (trimmed), or as written back for a safety refusal.
    pub text: String,
    /// What is wrong.
    pub problem: HeaterSpecProblem,
}

/// What is wrong with a heater strategy.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum HeaterSpecProblem {
    /// Nothing was given.
    #[error("is empty; expected {STRATEGY_GRAMMAR}")]
    Empty,
    /// Not one of the strategies.
    #[error("unknown strategy; expected {STRATEGY_GRAMMAR}")]
    Unknown,
    /// A value that is not a finite number.
    #[error("{field}: {value:?} is not a number")]
    NotANumber {
        /// `rise`, `plenum`, `rh` or `max`.
        field: &'static str,
        /// The text found.
        value: String,
    },
    /// A number outside the language's bounds.
    #[error("{field}: {value} {unit} is out of range ({range})")]
    OutOfRange {
        /// `rise`, `plenum`, `rh` or `max`.
        field: &'static str,
        /// The value found.
        value: f64,
        /// Its unit.
        unit: &'static str,
        /// The allowed range, in words.
        range: &'static str,
    },
    /// `rh=…` without `,max=…`.
    #[error("the humidity rule needs a cap, written rh=%,max=°C (e.g. rh=55,max=35)")]
    MissingCap,
    /// Text left after a complete strategy.
    #[error("unexpected {0:?} after the strategy")]
    TrailingText(String),
    /// A burner window whose start and end are the same hour: the burner would never run.
    #[error("burner window @{0} is empty (start and end are the same hour); leave the window out to heat around the clock")]
    EmptyWindow(String),
    /// A burner window that is not `START-END` with START 0–23 and END 0–24.
    #[error("burner window @{0} is not START-END local hours with START 0–23 and END 0–24 (an END before START wraps past midnight, e.g. @20-6)")]
    BadWindow(String),
    /// A set-point above the crop file's safe limits, refused without `--force`.
    #[error("refused: {0}; pass --force to run it anyway")]
    Unsafe(String),
}

fn spec_err(text: &str, problem: HeaterSpecProblem) -> HeaterSpecError {
    HeaterSpecError {
        text: text.to_string(),
        problem,
    }
}

/// How a set-point is written in the user's units: its conversion to SI, its unit and its range in words.
#[derive(Clone, Copy)]
struct Written {
    to_si: fn(f64) -> f64,
    unit: &'static str,
    range: &'static str,
}

fn same(v: f64) -> f64 {
    v
}
fn f_delta_to_k(v: f64) -> f64 {
    UnitSystem::Us.temp_delta_to_si(v)
}

/// (temperature, temperature difference, percent) as written in `units`.
fn written(units: UnitSystem) -> (Written, Written, Written) {
    let pct = Written {
        to_si: same,
        unit: "%",
        range: "5 to 95 %",
    };
    match units {
        UnitSystem::Si => (
            Written {
                to_si: same,
                unit: "°C",
                range: "5 to 70 °C",
            },
            Written {
                to_si: same,
                unit: "K",
                range: "above 0 K and at most 30 K",
            },
            pct,
        ),
        UnitSystem::Us => (
            Written {
                to_si: f_to_c,
                unit: "°F",
                range: "41 to 158 °F",
            },
            Written {
                to_si: f_delta_to_k,
                unit: "°F",
                range: "above 0 °F and at most 54 °F",
            },
            pct,
        ),
    }
}

/// A finite number, written in `w`'s unit, whose SI value lies in `[lo, hi]` (or `(lo, hi]` when `open_lo`), named
/// `field` in errors; returned in SI.
fn bounded(
    value: &str,
    field: &'static str,
    (lo, hi, open_lo): (f64, f64, bool),
    w: Written,
) -> Result<f64, HeaterSpecProblem> {
    let given = value
        .trim()
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
        .ok_or_else(|| HeaterSpecProblem::NotANumber {
            field,
            value: value.trim().to_string(),
        })?;
    let v = (w.to_si)(given);
    // Round-off of the unit conversion (41 °F is 5 °C to 1e-15) must not refuse a bound written exactly.
    let eps = 1e-9 * hi.abs().max(1.0);
    let above_lo = if open_lo { v > lo } else { v >= lo - eps };
    if above_lo && v <= hi + eps {
        Ok(v.clamp(lo, hi))
    } else {
        Err(HeaterSpecProblem::OutOfRange {
            field,
            value: given,
            unit: w.unit,
            range: w.range,
        })
    }
}

fn parse_rule(rule: &str, units: UnitSystem) -> Result<HeaterStrategy, HeaterSpecProblem> {
    let (temp, delta, pct) = written(units);
    let mut parts = rule.split(',');
    let head = parts.next().unwrap_or("");
    let (key, value) = match head.split_once('=') {
        Some((k, v)) => (k.trim(), Some(v)),
        None => (head.trim(), None),
    };
    let plenum = (PLENUM_MIN_C, PLENUM_MAX_C, false);
    let strategy = match (key, value) {
        ("none", None) => HeaterStrategy::None,
        ("rise", Some(v)) => HeaterStrategy::FixedRise {
            rise_k: bounded(v, "rise", (0.0, RISE_MAX_K, true), delta)?,
        },
        ("plenum", Some(v)) => HeaterStrategy::FixedPlenum {
            plenum_c: bounded(v, "plenum", plenum, temp)?,
        },
        ("rh", Some(v)) => {
            let rh = (RH_MIN_PCT, RH_MAX_PCT, false);
            let target_rh_pct = bounded(v, "rh", rh, pct)?;
            let cap = parts.next().ok_or(HeaterSpecProblem::MissingCap)?;
            let max = match cap.split_once('=') {
                Some((k, v)) if k.trim() == "max" => v,
                _ => return Err(HeaterSpecProblem::MissingCap),
            };
            HeaterStrategy::HumidityLimited {
                target_rh_pct,
                max_c: bounded(max, "max", plenum, temp)?,
            }
        }
        _ => return Err(HeaterSpecProblem::Unknown),
    };
    let rest: Vec<&str> = parts.collect();
    if !rest.is_empty() {
        return Err(HeaterSpecProblem::TrailingText(format!(
            ",{}",
            rest.join(",")
        )));
    }
    Ok(strategy)
}

/// `START-END`: START 0–23, END 0–24, different; END < START wraps past midnight.
fn parse_window(window: &str) -> Result<(u32, u32), HeaterSpecProblem> {
    let bad = || HeaterSpecProblem::BadWindow(window.to_string());
    let (a, b) = window.split_once('-').ok_or_else(bad)?;
    let hour = |s: &str, max: u32| s.trim().parse::<u32>().ok().filter(|h| *h <= max);
    let (start, end) = (hour(a, 23).ok_or_else(bad)?, hour(b, 24).ok_or_else(bad)?);
    if start == end {
        return Err(HeaterSpecProblem::EmptyWindow(window.to_string()));
    }
    Ok((start, end))
}

impl std::str::FromStr for StrategySpec {
    type Err = HeaterSpecError;
    /// A strategy written in SI set-points (°C, K): files and the default command line.
    fn from_str(raw: &str) -> Result<Self, HeaterSpecError> {
        StrategySpec::parse_in(raw, UnitSystem::Si)
    }
}

impl StrategySpec {
    /// A strategy written with set-points in `units` (°F and °F differences under `--units us`; humidity in % in
    /// both), held in SI. The one parser: `FromStr` is this with SI.
    pub fn parse_in(raw: &str, units: UnitSystem) -> Result<Self, HeaterSpecError> {
        let text = raw.trim();
        let err = |problem| spec_err(text, problem);
        if text.is_empty() {
            return Err(err(HeaterSpecProblem::Empty));
        }
        let (rule, window) = match text.split_once('@') {
            Some((r, w)) => (r, Some(w.trim())),
            None => (text, None),
        };
        let strategy = parse_rule(rule, units).map_err(err)?;
        let window_h = window.map(parse_window).transpose().map_err(err)?;
        Ok(StrategySpec { strategy, window_h })
    }
}

impl StrategySpec {
    /// The strategy written in `units` (set-points to 0.1 °F in US units, as SI's own digits otherwise): what a
    /// person reads; files keep the SI form of `Display`.
    pub fn text_in(&self, units: UnitSystem) -> String {
        if units == UnitSystem::Si {
            return self.to_string();
        }
        let num = |v: f64| {
            let t = format!("{v:.1}");
            t.strip_suffix(".0").map(str::to_string).unwrap_or(t)
        };
        let mut s = match self.strategy {
            HeaterStrategy::None => "none".to_string(),
            HeaterStrategy::FixedRise { rise_k } => format!("rise={}", num(rise_k * 1.8)),
            HeaterStrategy::FixedPlenum { plenum_c } => format!("plenum={}", num(c_to_f(plenum_c))),
            HeaterStrategy::HumidityLimited {
                target_rh_pct,
                max_c,
            } => format!("rh={target_rh_pct},max={}", num(c_to_f(max_c))),
        };
        if let Some((a, b)) = self.window_h {
            s.push_str(&format!("@{a}-{b}"));
        }
        s
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

impl serde::Serialize for StrategySpec {
    /// As its one-language string.
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

impl<'de> serde::Deserialize<'de> for StrategySpec {
    /// From its one-language string, through the one parser.
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let text = String::deserialize(d)?;
        text.parse().map_err(serde::de::Error::custom)
    }
}

/// The crop file's safe heater limits (its `safety` section).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SafetyLimits {
    /// Highest plenum temperature, °C (`safety.max_plenum_temp_c`).
    pub max_plenum_c: f64,
    /// Highest rise over ambient, K (`safety.max_temp_rise_k`).
    pub max_rise_k: f64,
}

impl From<&crate::crop::CropSafety> for SafetyLimits {
    fn from(s: &crate::crop::CropSafety) -> Self {
        SafetyLimits {
            max_plenum_c: s.max_plenum_temp_c,
            max_rise_k: s.max_temp_rise_k,
        }
    }
}

/// A strategy above the crop's safe limits that runs because `--force` was given.
#[derive(Debug, Clone, PartialEq)]
pub struct SafetyWarning {
    /// The strategy.
    pub spec: StrategySpec,
    /// Which limit it passes, in words.
    pub why: String,
}

impl std::fmt::Display for SafetyWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "heater strategy \"{}\": {}", self.spec, self.why)
    }
}

impl StrategySpec {
    /// The one safety rule: refuse a plenum set-point or humidity-rule cap above `limits.max_plenum_c`, or a rise
    /// above `limits.max_rise_k`, unless `force`; with `force`, say what is passed. Run the heater with
    /// [`StrategySpec::plenum_clamp_c`] afterwards.
    pub fn check_safety(
        &self,
        limits: &SafetyLimits,
        force: bool,
    ) -> Result<Option<SafetyWarning>, HeaterSpecError> {
        let section = "(crop file, section safety)";
        let why = match self.strategy {
            HeaterStrategy::FixedPlenum { plenum_c } if plenum_c > limits.max_plenum_c => format!(
                "a plenum of {plenum_c:.1} °C is above the safe maximum of {:.1} °C {section}",
                limits.max_plenum_c
            ),
            HeaterStrategy::HumidityLimited { max_c, .. } if max_c > limits.max_plenum_c => {
                format!(
                    "a cap of {max_c:.1} °C is above the safe plenum maximum of {:.1} °C {section}",
                    limits.max_plenum_c
                )
            }
            HeaterStrategy::FixedRise { rise_k } if rise_k > limits.max_rise_k => format!(
                "a rise of {rise_k:.1} K is above the safe maximum rise of {:.1} K {section}",
                limits.max_rise_k
            ),
            _ => return Ok(None),
        };
        if force {
            Ok(Some(SafetyWarning { spec: *self, why }))
        } else {
            Err(spec_err(&self.to_string(), HeaterSpecProblem::Unsafe(why)))
        }
    }

    /// The plenum temperature the running heater never exceeds, °C: the crop's safe maximum `max_plenum_c`, or the
    /// strategy's own set-point or cap where that is higher (which [`StrategySpec::check_safety`] lets through only
    /// with `force`). A rise is clamped at the safe maximum even when forced.
    pub fn plenum_clamp_c(&self, max_plenum_c: f64) -> f64 {
        match self.strategy {
            HeaterStrategy::FixedPlenum { plenum_c } => max_plenum_c.max(plenum_c),
            HeaterStrategy::HumidityLimited { max_c, .. } => max_plenum_c.max(max_c),
            HeaterStrategy::None | HeaterStrategy::FixedRise { .. } => max_plenum_c,
        }
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
    /// Heat per kg of dry air that brings `air` to `t_c` with the fuel's combustion water included: with
    /// `ΔW = c·q` (c = water per J) and the water formed as vapour (`h_fg0` per kg, LHV basis),
    /// `h(t, W + ΔW) = h(air) + q + ΔW·h_fg0` solves in closed form to `q = (h(t, W) − h(air)) / (1 − c·c_pv·t)`.
    fn heat_to_reach_j_per_kg(&self, air: AirState, t_c: f64) -> f64 {
        let c = self.fuel.combustion_water_kg_per_j;
        air.heat_to_j_per_kg(t_c) / (1.0 - c * psychro::CP_VAPOUR * t_c)
    }

    fn burner_allowed(&self, local_hour: u32) -> bool {
        match self.window_h {
            None => true,
            // Equal ends are refused by the parser; built by hand they mean an empty window.
            Some((a, b)) if a <= b => local_hour >= a && local_hour < b,
            Some((a, b)) => local_hour >= a || local_hour < b,
        }
    }

    /// Plenum air from `fan_air` (the `ambient` air after the fan's heat) at `local_hour`, for a dry-air flow of
    /// `dry_air_kg_per_s`. A rise is counted over `ambient` (fan heat included, see the module docs); the burner
    /// never cools, so fan air warmer than the asked plenum passes unheated.
    pub fn plenum_air(
        &self,
        ambient: AirState,
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
                HeaterStrategy::FixedRise { rise_k } => ambient.t_c + rise_k,
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
            let heat = self.heat_to_reach_j_per_kg(fan_air, wanted_c.max(fan_air.t_c));
            w_after = fan_air.w + heat.max(0.0) * self.fuel.combustion_water_kg_per_j;
        }
        let mut target_c = wanted_c.min(self.max_plenum_c).max(fan_air.t_c);
        if !self.burner_allowed(local_hour) || dry_air_kg_per_s <= 0.0 {
            target_c = fan_air.t_c;
        }
        let mut heat_w = dry_air_kg_per_s * self.heat_to_reach_j_per_kg(fan_air, target_c);
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

    #[test]
    fn us_set_points_are_read_in_fahrenheit() {
        let us = |t: &str| StrategySpec::parse_in(t, UnitSystem::Us);
        // 95 °F = 35 °C; a 14.4 °F rise = 8 K; RH stays in %.
        let p = us("plenum=95@20-6").unwrap();
        match p.strategy {
            HeaterStrategy::FixedPlenum { plenum_c } => {
                assert_relative_eq!(plenum_c, 35.0, max_relative = 1e-12)
            }
            s => panic!("{s:?}"),
        }
        assert_eq!(p.window_h, Some((20, 6)));
        match us("rise=14.4").unwrap().strategy {
            HeaterStrategy::FixedRise { rise_k } => {
                assert_relative_eq!(rise_k, 8.0, max_relative = 1e-12)
            }
            s => panic!("{s:?}"),
        }
        assert_eq!(us("rh=55,max=95").unwrap(), "rh=55,max=35".parse().unwrap());
        // The range is checked in SI and reported as written: 41–158 °F is 5–70 °C, exactly at the ends.
        assert!(us("plenum=41").is_ok() && us("plenum=158").is_ok());
        let e = us("plenum=200").unwrap_err();
        assert_eq!(
            e.to_string(),
            "heater strategy \"plenum=200\": plenum: 200 °F is out of range (41 to 158 °F)"
        );
        // Written back in US units for people, in SI for files.
        assert_eq!(p.text_in(UnitSystem::Us), "plenum=95@20-6");
        assert_eq!(p.to_string(), "plenum=35@20-6");
    }

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
        let out = dry_fuel.plenum_air(amb, amb, 12, 9.19);
        assert!(
            (out.plenum.rh() - 0.505).abs() < 0.003,
            "rh {}",
            out.plenum.rh()
        );
        let out = heater(HeaterStrategy::FixedRise { rise_k: 5.6 }).plenum_air(amb, amb, 12, 9.19);
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
        .plenum_air(amb, amb, 3, 5.0);
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
        .plenum_air(dry, dry, 3, 5.0);
        assert!(out.heat_w.abs() < 1e-12);
        let out =
            heater(HeaterStrategy::FixedPlenum { plenum_c: 50.0 }).plenum_air(amb, amb, 3, 5.0);
        assert!(out.plenum.t_c <= 35.0 + 1e-9);
    }

    #[test]
    fn strategy_specs_parse_and_print() {
        for text in [
            "none",
            "rise=8",
            "rise=0.5",
            "plenum=35",
            "rh=55,max=38",
            "rise=6@20-6",
            "plenum=30@0-24",
            "rh=5,max=70@23-0",
        ] {
            let spec: StrategySpec = text.parse().unwrap();
            assert_eq!(spec.to_string(), text);
            let json = serde_json::to_string(&spec).unwrap();
            assert_eq!(serde_json::from_str::<StrategySpec>(&json).unwrap(), spec);
        }
        assert_eq!(
            " rise = 8 @ 20 - 6 ".parse::<StrategySpec>().unwrap(),
            "rise=8@20-6".parse::<StrategySpec>().unwrap()
        );
        let problem = |text: &str| text.parse::<StrategySpec>().unwrap_err().problem;
        use HeaterSpecProblem as P;
        assert_eq!(problem("  "), P::Empty);
        assert_eq!(problem("warm"), P::Unknown);
        assert_eq!(problem("rise:8"), P::Unknown);
        assert_eq!(problem("none=1"), P::Unknown);
        assert!(matches!(
            problem("rise=hot"),
            P::NotANumber { field: "rise", .. }
        ));
        assert!(matches!(problem("rise=NaN"), P::NotANumber { .. }));
        assert!(matches!(
            problem("rise=0"),
            P::OutOfRange { field: "rise", .. }
        ));
        assert!(matches!(problem("rise=30.5"), P::OutOfRange { .. }));
        assert!(matches!(
            problem("plenum=4"),
            P::OutOfRange {
                field: "plenum",
                ..
            }
        ));
        assert!(matches!(
            problem("rh=140,max=30"),
            P::OutOfRange { field: "rh", .. }
        ));
        assert!(matches!(
            problem("rh=55,max=71"),
            P::OutOfRange { field: "max", .. }
        ));
        assert_eq!(problem("rh=55"), P::MissingCap);
        assert_eq!(problem("rh=55,cap=35"), P::MissingCap);
        assert!(matches!(problem("rise=8,max=3"), P::TrailingText(_)));
        assert!(matches!(problem("rise=8@6-6"), P::EmptyWindow(_)));
        for bad_window in [
            "@25-3",
            "@24-3",
            "@3-25",
            "@-3-5",
            "@20",
            "@20-",
            "@-6",
            "@a-b",
            "@20-6@1-2",
        ] {
            let text = format!("rise=8{bad_window}");
            assert!(matches!(problem(&text), P::BadWindow(_)), "{text}");
        }
    }

    #[test]
    fn safety_rule_refuses_above_the_crop_limits_unless_forced() {
        let limits = SafetyLimits {
            max_plenum_c: 35.0,
            max_rise_k: 8.0,
        };
        let spec = |t: &str| t.parse::<StrategySpec>().unwrap();
        for ok in ["none", "rise=8", "plenum=35", "rh=55,max=35@20-6"] {
            assert_eq!(spec(ok).check_safety(&limits, false), Ok(None), "{ok}");
            // Exact: the clamp is a `max` of the two values.
            assert_relative_eq!(spec(ok).plenum_clamp_c(35.0), 35.0, epsilon = 0.0);
        }
        for (unsafe_text, clamp_c) in [
            ("rise=8.5", 35.0),
            ("plenum=45", 45.0),
            ("rh=55,max=40", 40.0),
        ] {
            let err = spec(unsafe_text).check_safety(&limits, false).unwrap_err();
            assert!(matches!(err.problem, HeaterSpecProblem::Unsafe(_)), "{err}");
            assert!(err.to_string().contains("pass --force"), "{err}");
            let warning = spec(unsafe_text)
                .check_safety(&limits, true)
                .unwrap()
                .unwrap();
            assert_eq!(warning.spec, spec(unsafe_text));
            assert_relative_eq!(
                spec(unsafe_text).plenum_clamp_c(35.0),
                clamp_c,
                epsilon = 0.0
            );
        }
    }

    #[test]
    fn window_and_capacity() {
        let amb = AirState::from_rh(20.0, 0.80, 101_325.0);
        let mut h = heater(HeaterStrategy::FixedRise { rise_k: 8.0 });
        h.window_h = Some((20, 6));
        assert!(h.plenum_air(amb, amb, 12, 5.0).heat_w.abs() < 1e-12);
        assert!(h.plenum_air(amb, amb, 23, 5.0).heat_w > 0.0);
        assert!(h.plenum_air(amb, amb, 2, 5.0).heat_w > 0.0);
        // A window ending at 24 runs to midnight; 0-24 is all day.
        h.window_h = Some((0, 24));
        assert!((0..24).all(|hour| h.plenum_air(amb, amb, hour, 5.0).heat_w > 0.0));
        h.window_h = Some((20, 24));
        assert!(h.plenum_air(amb, amb, 23, 5.0).heat_w > 0.0);
        assert!(h.plenum_air(amb, amb, 2, 5.0).heat_w.abs() < 1e-12);
        h.window_h = Some((20, 6));
        h.capacity_w = Some(10_000.0);
        let out = h.plenum_air(amb, amb, 2, 5.0);
        assert_relative_eq!(out.heat_w, 10_000.0);
        assert!(out.plenum.t_c < 28.0);
    }

    #[test]
    fn rise_is_over_ambient_with_fan_heat_counted() {
        // `rise=8` on 25 °C / 70 % air that the fan has warmed by 0.3 K: plenum 25 + 8 = 33 °C, the burner adding
        // only the remaining 7.7 K.
        let amb = AirState::from_rh(25.0, 0.70, 101_325.0);
        let fan_air = AirState { t_c: 25.3, ..amb };
        let h = heater(HeaterStrategy::FixedRise { rise_k: 8.0 });
        let out = h.plenum_air(amb, fan_air, 12, 5.0);
        // The heat is solved in closed form with the combustion water included, so only the rounding of the enthalpy
        // inversion remains (measured: 33.000000000000000 °C; before that closed form it fell 0.017 K short).
        assert!((out.plenum.t_c - 33.0).abs() < 1e-12, "{}", out.plenum.t_c);
        // Fan heat above the rise: no burner heat, the fan air passes as it is.
        let hot_fan = AirState { t_c: 33.5, ..amb };
        let out = h.plenum_air(amb, hot_fan, 12, 5.0);
        assert_relative_eq!(out.heat_w, 0.0, epsilon = 0.0);
        assert_eq!(out.plenum, hot_fan);
    }
}
