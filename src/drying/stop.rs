//! Stop rules the trade uses and the times at which they are met. A load is graded on kernel moisture, wet basis:
//! the mass-weighted mean at or below target, or a fraction of the load (95 % of the dry matter by default) at or
//! below target, or both, or simply a fixed number of hours on air (common practice, no source).
//!
//! Crossing times are interpolated inside the step in which a level passes its limit, and the run's accounts (fuel,
//! fan energy, water removed, shrink) are interpolated to the same moment, so a halved step moves the figures only
//! as much as the physics does.

use serde::{Deserialize, Serialize};

/// When a run ends.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum StopRule {
    /// Mass-weighted mean kernel moisture at or below target.
    Mean,
    /// The set fraction of the dry matter at or below target (the rest no more than that wet).
    Fraction,
    /// Both of these (the default: the whole load is ready, not just its mean).
    Both,
    /// A fixed time on air, h.
    Hours(f64),
}

impl std::fmt::Display for StopRule {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            StopRule::Mean => write!(f, "mean"),
            StopRule::Fraction => write!(f, "fraction"),
            StopRule::Both => write!(f, "both"),
            StopRule::Hours(h) => write!(f, "hours={h}"),
        }
    }
}

/// A stop rule as written: `mean`, `fraction`, `both` or `hours=H`.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("stop rule {0:?}: expected mean, fraction, both or hours=H (H from 0.1 to 2000 h)")]
pub struct StopRuleError(pub String);

impl std::str::FromStr for StopRule {
    type Err = StopRuleError;
    fn from_str(s: &str) -> Result<Self, StopRuleError> {
        let t = s.trim();
        match t {
            "mean" => Ok(StopRule::Mean),
            "fraction" => Ok(StopRule::Fraction),
            "both" => Ok(StopRule::Both),
            _ => t
                .strip_prefix("hours=")
                .and_then(|h| h.trim().parse::<f64>().ok())
                .filter(|h| h.is_finite() && (0.1..=2000.0).contains(h))
                .map(StopRule::Hours)
                .ok_or_else(|| StopRuleError(s.to_string())),
        }
    }
}

/// The run's accounts at one moment, for interpolation to a crossing time.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Tally {
    /// Hours on air.
    pub hours: f64,
    /// Fuel burnt, in the fuel's unit.
    pub fuel_used: f64,
    /// Fan electricity, kWh.
    pub fan_kwh: f64,
    /// Water removed from the peanuts, kg.
    pub water_removed_kg: f64,
    /// Over-dry shrink, kg (see `zones::shrink_kg`).
    pub shrink_kg: f64,
}

impl Tally {
    fn lerp(&self, other: &Tally, f: f64) -> Tally {
        let l = |a: f64, b: f64| a + f * (b - a);
        Tally {
            hours: l(self.hours, other.hours),
            fuel_used: l(self.fuel_used, other.fuel_used),
            fan_kwh: l(self.fan_kwh, other.fan_kwh),
            water_removed_kg: l(self.water_removed_kg, other.water_removed_kg),
            shrink_kg: l(self.shrink_kg, other.shrink_kg),
        }
    }
}

/// Levels the rules watch, at one moment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Levels {
    /// Mean kernel moisture, wet basis decimal.
    pub mean_kernel_wb: f64,
    /// Share of the dry matter above target.
    pub above_target_fraction: f64,
}

/// Tracks when the mean and the fraction rule are first met.
#[derive(Debug, Clone, PartialEq)]
pub struct StopTracker {
    rule: StopRule,
    target_wb: f64,
    /// Largest share of the dry matter allowed above target (1 − fraction).
    allowed_above: f64,
    /// When the mean reached target.
    pub mean: Option<Tally>,
    /// When the fraction rule held.
    pub fraction: Option<Tally>,
}

impl StopTracker {
    /// For `rule`, target `target_wb` and the fraction rule's `fraction` (0–1).
    pub fn new(rule: StopRule, target_wb: f64, fraction: f64) -> Self {
        StopTracker {
            rule,
            target_wb,
            allowed_above: 1.0 - fraction,
            mean: None,
            fraction: None,
        }
    }

    /// Whether a level may cross in the coming step, judged from the last step's change with a safety factor of 3
    /// (the run then keeps the shrink at the step's start for interpolation).
    pub fn may_cross_soon(&self, before: &Levels, now: &Levels) -> bool {
        let near =
            |prev: f64, cur: f64, limit: f64| cur - limit <= 3.0 * (prev - cur).max(0.0) + 1e-4;
        (self.mean.is_none() && near(before.mean_kernel_wb, now.mean_kernel_wb, self.target_wb))
            || (self.fraction.is_none()
                && near(
                    before.above_target_fraction,
                    now.above_target_fraction,
                    self.allowed_above,
                ))
    }

    /// Record crossings in the step from `(before, t0)` to `(now, t1)`.
    pub fn update(&mut self, before: &Levels, now: &Levels, t0: &Tally, t1: &Tally) {
        let at = |prev: f64, cur: f64, limit: f64| {
            let f = if prev > cur {
                ((prev - limit) / (prev - cur)).clamp(0.0, 1.0)
            } else {
                1.0
            };
            t0.lerp(t1, f)
        };
        if self.mean.is_none() && now.mean_kernel_wb <= self.target_wb {
            self.mean = Some(at(
                before.mean_kernel_wb,
                now.mean_kernel_wb,
                self.target_wb,
            ));
        }
        if self.fraction.is_none() && now.above_target_fraction <= self.allowed_above {
            self.fraction = Some(at(
                before.above_target_fraction,
                now.above_target_fraction,
                self.allowed_above,
            ));
        }
    }

    /// Record levels already met at the start (hour 0).
    pub fn start(&mut self, now: &Levels, t0: &Tally) {
        self.update(now, now, t0, t0);
    }

    /// The moment the rule was met, if it was (for `Hours`, none: the run's end is that moment).
    pub fn met(&self) -> Option<Tally> {
        match self.rule {
            StopRule::Mean => self.mean,
            StopRule::Fraction => self.fraction,
            StopRule::Both => match (self.mean, self.fraction) {
                (Some(a), Some(b)) => Some(if a.hours >= b.hours { a } else { b }),
                _ => None,
            },
            StopRule::Hours(_) => None,
        }
    }

    /// The rule.
    pub fn rule(&self) -> StopRule {
        self.rule
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rules_parse_and_print() {
        for s in ["mean", "fraction", "both", "hours=36"] {
            assert_eq!(s.parse::<StopRule>().unwrap().to_string(), s);
        }
        for bad in [
            "",
            "median",
            "hours=",
            "hours=-1",
            "hours=0",
            "hours=nan",
            "hours=1e9",
        ] {
            assert!(bad.parse::<StopRule>().is_err(), "{bad}");
        }
    }

    #[test]
    fn crossing_interpolates_the_accounts() {
        let mut t = StopTracker::new(StopRule::Both, 0.10, 0.95);
        let t0 = Tally {
            hours: 10.0,
            fuel_used: 100.0,
            ..Tally::default()
        };
        let t1 = Tally {
            hours: 11.0,
            fuel_used: 110.0,
            ..Tally::default()
        };
        let a = Levels {
            mean_kernel_wb: 0.1010,
            above_target_fraction: 0.5,
        };
        let b = Levels {
            mean_kernel_wb: 0.0990,
            above_target_fraction: 0.3,
        };
        t.update(&a, &b, &t0, &t1);
        let m = t.mean.unwrap();
        assert!((m.hours - 10.5).abs() < 1e-9 && (m.fuel_used - 105.0).abs() < 1e-9);
        assert!(t.fraction.is_none() && t.met().is_none());
    }
}
