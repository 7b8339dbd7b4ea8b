//! A buying point as the season planner sees it: its dryer units, turnaround between loads, operating rules and
//! prices, read from a scenario JSON of our own (`models/buying-points/*.json`) and validated field by field.
//!
//! Container and fan names are plain strings here; the integrator resolves them against the airflow models. No
//! reference beyond the trade's own vocabulary (common practice, no source).

use std::path::Path;

use chrono::{DateTime, Duration, FixedOffset};
use serde::{Deserialize, Serialize};

use crate::drying::heater::StrategySpec;
use crate::drying::stop::StopRule;
use crate::error::InputError;
use crate::input::{check_field, field_err};

/// One dryer unit: a container type with its fan and burner.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DryerUnit {
    /// Unique id shown in schedules ("D01").
    pub id: String,
    /// Container type name (resolved by the integrator).
    pub container: String,
    /// Fan model name (resolved by the integrator).
    pub fan: String,
    /// Largest net load the container takes, kg.
    pub capacity_kg: f64,
    /// Fan electrical input at its usual operating point, kW (for the simple drier's energy estimate).
    pub fan_kw: f64,
    /// Burner capacity, kW; absent = not limited.
    #[serde(default)]
    pub burner_kw: Option<f64>,
    /// How the burner is controlled, in the one heater language (`"rise=8@20-6"`, see [`StrategySpec`]).
    pub heater: StrategySpec,
}

/// The harvest window the scenario covers.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SeasonWindow {
    /// First moment of the season, ISO 8601 with offset.
    pub start: DateTime<FixedOffset>,
    /// Length, days.
    pub days: u32,
}

impl SeasonWindow {
    /// End of the season (exclusive).
    pub fn end(&self) -> DateTime<FixedOffset> {
        self.start + Duration::days(i64::from(self.days))
    }
}

/// Rules the yard works by.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct OperatingRules {
    /// Longest a load may wait between arrival and its air going on, h.
    pub max_wait_h: f64,
    /// Target kernel moisture, % w.b.
    pub target_kernel_pct: f64,
    /// When a load is taken off air: `mean`, `fraction`, `both` (default) or `hours=H` (see `drying::stop`).
    #[serde(default = "default_stop_rule", with = "stop_rule_text")]
    pub stop_rule: StopRule,
    /// Local hours `[open, close)` when a load may be put on air (wrapping past midnight if open > close); absent =
    /// around the clock.
    #[serde(default)]
    pub hours_of_operation: Option<[u32; 2]>,
}

fn default_fuel() -> String {
    "propane".into()
}

fn default_stop_rule() -> StopRule {
    StopRule::Both
}

/// A stop rule written as its text form (`both`, `hours=36`).
mod stop_rule_text {
    use crate::drying::stop::StopRule;
    use serde::{Deserialize, Deserializer, Serializer};

    pub fn serialize<S: Serializer>(r: &StopRule, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&r.to_string())
    }

    pub fn deserialize<'de, D: Deserializer<'de>>(d: D) -> Result<StopRule, D::Error> {
        let text = String::deserialize(d)?;
        text.parse().map_err(serde::de::Error::custom)
    }
}

/// Prices, in the scenario's currency.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Prices {
    /// Currency symbol or code shown beside money ("$").
    pub currency: String,
    /// Propane, per litre.
    pub propane_per_l: f64,
    /// Electricity, per kWh.
    pub electricity_per_kwh: f64,
    /// Farmer-stock peanuts, per tonne (values shrink).
    pub peanuts_per_tonne: f64,
}

/// A buying point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct BuyingPoint {
    /// Name (invented for the demos).
    pub name: String,
    /// Free text.
    #[serde(default)]
    pub notes: String,
    /// The harvest window.
    pub season: SeasonWindow,
    /// Time to unhook, move and hook up between loads on one dryer, h.
    pub turnaround_h: f64,
    /// Operating rules.
    pub rules: OperatingRules,
    /// Prices.
    pub prices: Prices,
    /// Fuel every burner burns: `propane` (the default, and for now the only one a season accepts, since its prices
    /// and figures are in litres of propane).
    #[serde(default = "default_fuel")]
    pub fuel: String,
    /// The dryer units.
    pub dryers: Vec<DryerUnit>,
}

/// The first `dryers[i].heater` string that the heater language refuses, as an error naming that field (serde's
/// own message for it would name only the line).
fn heater_error(path: &Path, text: &str) -> Option<InputError> {
    let v: serde_json::Value = serde_json::from_str(text).ok()?;
    v.get("dryers")?
        .as_array()?
        .iter()
        .enumerate()
        .find_map(|(i, d)| {
            let e = d.get("heater")?.as_str()?.parse::<StrategySpec>().err()?;
            Some(field_err(
                path,
                format!("dryers[{i}].heater"),
                e.to_string(),
            ))
        })
}

impl BuyingPoint {
    /// Parse and validate a scenario from JSON text; `path` names the source in errors.
    pub fn from_json(path: &Path, text: &str) -> Result<Self, InputError> {
        let bp: BuyingPoint = serde_json::from_str(text).map_err(|e| {
            heater_error(path, text).unwrap_or_else(|| InputError::Parse {
                path: path.to_path_buf(),
                line: Some(e.line() as u64),
                message: e.to_string(),
            })
        })?;
        bp.validate(path)
            .map_err(|e| crate::input::with_json_line(e, path, text))?;
        Ok(bp)
    }

    /// Check every field's range; errors name the file and the dotted field.
    pub fn validate(&self, path: &Path) -> Result<(), InputError> {
        if self.dryers.is_empty() {
            return Err(field_err(
                path,
                "dryers",
                "a buying point needs at least one dryer (found 0)",
            ));
        }
        if self.season.days == 0 || self.season.days > 366 {
            return Err(field_err(
                path,
                "season.days",
                format!("{} must be between 1 and 366 days", self.season.days),
            ));
        }
        check_field(path, "turnaround_h", self.turnaround_h, 0.0, 48.0, "h")?;
        check_field(
            path,
            "rules.max_wait_h",
            self.rules.max_wait_h,
            0.0,
            240.0,
            "h",
        )?;
        check_field(
            path,
            "rules.target_kernel_pct",
            self.rules.target_kernel_pct,
            5.0,
            20.0,
            "% w.b.",
        )?;
        if let Some([a, b]) = self.rules.hours_of_operation {
            if a > 23 || b > 24 || a == b {
                return Err(field_err(
                    path,
                    "rules.hours_of_operation",
                    format!(
                        "[{a}, {b}] must be two different local hours, open 0–23 and close 0–24"
                    ),
                ));
            }
        }
        if self.fuel != "propane" {
            return Err(field_err(
                path,
                "fuel",
                format!(
                    "{:?}: a season's prices and figures are in litres of propane, so \"propane\" is the only fuel it takes",
                    self.fuel
                ),
            ));
        }
        let p = &self.prices;
        check_field(
            path,
            "prices.propane_per_l",
            p.propane_per_l,
            0.0,
            100.0,
            &p.currency,
        )?;
        check_field(
            path,
            "prices.electricity_per_kwh",
            p.electricity_per_kwh,
            0.0,
            100.0,
            &p.currency,
        )?;
        check_field(
            path,
            "prices.peanuts_per_tonne",
            p.peanuts_per_tonne,
            0.0,
            1.0e5,
            &p.currency,
        )?;
        let mut seen = std::collections::BTreeSet::new();
        for (i, d) in self.dryers.iter().enumerate() {
            let f = |name: &str| format!("dryers[{i}].{name}");
            if d.id.trim().is_empty() {
                return Err(field_err(path, f("id"), "must not be empty"));
            }
            if !seen.insert(d.id.clone()) {
                return Err(field_err(
                    path,
                    f("id"),
                    format!("{:?} is used twice", d.id),
                ));
            }
            if d.container.trim().is_empty() {
                return Err(field_err(
                    path,
                    f("container"),
                    "must name a container type",
                ));
            }
            if d.fan.trim().is_empty() {
                return Err(field_err(path, f("fan"), "must name a fan"));
            }
            check_field(
                path,
                &f("capacity_kg"),
                d.capacity_kg,
                100.0,
                60_000.0,
                "kg",
            )?;
            check_field(path, &f("fan_kw"), d.fan_kw, 0.0, 200.0, "kW")?;
            if let Some(kw) = d.burner_kw {
                check_field(path, &f("burner_kw"), kw, 0.0, 5_000.0, "kW")?;
            }
            // The heater was parsed and range-checked by `StrategySpec` (see `from_json`).
        }
        Ok(())
    }

    /// The same buying point with `n` dryers: the listed units repeated in order (the k-th copy of unit "D01"
    /// is "D01-k"), or the first `n` of them.
    pub fn with_dryer_count(&self, n: usize) -> BuyingPoint {
        let m = self.dryers.len();
        let dryers = (0..n)
            .map(|i| {
                let mut d = self.dryers[i % m].clone();
                if i >= m {
                    d.id = format!("{}-{}", d.id, i / m + 1);
                }
                d
            })
            .collect();
        BuyingPoint {
            dryers,
            ..self.clone()
        }
    }

    /// The same buying point with every burner on `strategy` (its burner window included).
    pub fn with_heater(&self, strategy: StrategySpec) -> BuyingPoint {
        let mut bp = self.clone();
        for d in &mut bp.dryers {
            d.heater = strategy;
        }
        bp
    }

    /// Whether a load may be put on air at `t` (local hour of `t`'s own offset).
    pub fn is_open(&self, t: DateTime<FixedOffset>) -> bool {
        use chrono::Timelike;
        match self.rules.hours_of_operation {
            None => true,
            Some([a, b]) => {
                let h = t.hour();
                if a < b {
                    h >= a && h < b
                } else {
                    h >= a || h < b
                }
            }
        }
    }

    /// The first moment at or after `t` when the yard is open.
    pub fn next_open(&self, t: DateTime<FixedOffset>) -> DateTime<FixedOffset> {
        use chrono::Timelike;
        if self.is_open(t) {
            return t;
        }
        let open = self.rules.hours_of_operation.map(|[a, _]| a).unwrap_or(0);
        let top_of_hour = t
            - Duration::minutes(i64::from(t.minute()))
            - Duration::seconds(i64::from(t.second()))
            - Duration::nanoseconds(i64::from(t.nanosecond()));
        let mut c = top_of_hour;
        for _ in 0..25 {
            c += Duration::hours(1);
            if c.hour() == open {
                return c;
            }
        }
        c
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const SMALL: &str = include_str!("../../models/buying-points/wrenfield.json");
    const BIG: &str = include_str!("../../models/buying-points/bramble-fork.json");

    #[test]
    fn bundled_scenarios_validate() {
        let s = BuyingPoint::from_json(Path::new("wrenfield.json"), SMALL).unwrap();
        assert!(s.dryers.len() >= 2);
        let b = BuyingPoint::from_json(Path::new("bramble-fork.json"), BIG).unwrap();
        assert!((6..=8).contains(&b.dryers.len()));
    }

    #[test]
    fn zero_dryers_is_an_error_naming_the_field() {
        let mut v: serde_json::Value = serde_json::from_str(SMALL).unwrap();
        v["dryers"] = serde_json::json!([]);
        let err = BuyingPoint::from_json(Path::new("bp.json"), &v.to_string()).unwrap_err();
        let msg = err.to_string();
        assert!(
            msg.contains("bp.json") && msg.contains("\"dryers\""),
            "{msg}"
        );
    }

    #[test]
    fn unknown_field_is_an_error() {
        let mut v: serde_json::Value = serde_json::from_str(SMALL).unwrap();
        v["turnaround_hours"] = serde_json::json!(1.0);
        let err = BuyingPoint::from_json(Path::new("bp.json"), &v.to_string()).unwrap_err();
        assert!(err.to_string().contains("turnaround_hours"), "{err}");
    }

    #[test]
    fn bad_capacity_names_dryer_index() {
        let mut v: serde_json::Value = serde_json::from_str(SMALL).unwrap();
        v["dryers"][1]["capacity_kg"] = serde_json::json!(-5.0);
        let err = BuyingPoint::from_json(Path::new("bp.json"), &v.to_string()).unwrap_err();
        assert!(err.to_string().contains("dryers[1].capacity_kg"), "{err}");
    }

    #[test]
    fn bad_heater_names_dryer_index_with_the_languages_message() {
        let mut v: serde_json::Value = serde_json::from_str(SMALL).unwrap();
        v["dryers"][1]["heater"] = "rise=8@20-20".into();
        let err = BuyingPoint::from_json(Path::new("bp.json"), &v.to_string()).unwrap_err();
        let want = "rise=8@20-20"
            .parse::<StrategySpec>()
            .unwrap_err()
            .to_string();
        assert_eq!(
            err.to_string(),
            format!("bp.json: field \"dryers[1].heater\": {want}")
        );
        // The old tagged-object form is no longer a heater.
        v["dryers"][1]["heater"] = serde_json::json!({"kind": "fixed-rise", "rise_k": 8.0});
        let err = BuyingPoint::from_json(Path::new("bp.json"), &v.to_string()).unwrap_err();
        assert!(
            matches!(err, InputError::Parse { line: Some(_), .. }),
            "{err}"
        );
    }

    #[test]
    fn heater_window_is_kept() {
        let mut v: serde_json::Value = serde_json::from_str(SMALL).unwrap();
        v["dryers"][0]["heater"] = "rise=8@20-6".into();
        let b = BuyingPoint::from_json(Path::new("bp.json"), &v.to_string()).unwrap();
        assert_eq!(b.dryers[0].heater.window_h, Some((20, 6)));
        assert_eq!(b.dryers[0].heater.to_string(), "rise=8@20-6");
    }

    #[test]
    fn next_open_waits_for_opening_hour() {
        let mut b = BuyingPoint::from_json(Path::new("x"), SMALL).unwrap();
        b.rules.hours_of_operation = Some([6, 22]);
        let t = DateTime::parse_from_rfc3339("2026-09-10T23:30:00-04:00").unwrap();
        let o = b.next_open(t);
        assert_eq!(o.to_rfc3339(), "2026-09-11T06:00:00-04:00");
        let inside = DateTime::parse_from_rfc3339("2026-09-10T12:15:00-04:00").unwrap();
        assert_eq!(b.next_open(inside), inside);
    }
}
