//! Fans and leakage: a tabulated fan curve (static pressure against volumetric flow) interpolated monotonically
//! (Fritsch–Carlson piecewise-cubic Hermite, "PCHIP"), corrected for air density, or a fixed total flow instead;
//! plus a leakage path Q = C·√p that takes air out of the plenum without drying anything.
//!
//! References: Fritsch & Carlson (1980) "Monotone piecewise cubic interpolation", SIAM J. Numer. Anal. 17:238–246
//! (the three-point derivative with the harmonic-mean rule of Fritsch & Butland, as used by common PCHIP codes —
//! from memory); fan laws, density correction P ∝ ρ at the same flow and the 1.204 kg/m³ rating basis: DOMAIN.md
//! §8.1. Leakage as an orifice-like path Q ∝ √p is common practice, no source.
//!
//! A fan file says where the fan sits in the air path (`"position"`): `"ahead-of-burner"` (the default, as on most
//! trailer dryers) draws ambient air and pushes it through the burner; `"after-burner"` draws the heated air. The
//! curve is density-corrected at the air the fan draws (see `airflow::path`).
use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::error::InputError;

/// Density of standard air used for fan ratings, kg/m³ (20 °C, sea level; DOMAIN.md §8.1).
pub const STANDARD_AIR_DENSITY_KG_PER_M3: f64 = 1.204;

/// One rating point as written in a fan file.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FanPoint {
    /// Volumetric flow, m³/min.
    pub flow_m3_per_min: f64,
    /// Static pressure, Pa.
    pub static_pressure_pa: f64,
}

/// Where the fan sits relative to the burner, which decides the air it works on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum FanPosition {
    /// Ahead of the burner (most trailer dryers): the fan draws ambient air.
    #[default]
    AheadOfBurner,
    /// After the burner: the fan draws the heated air.
    AfterBurner,
}

impl FanPosition {
    /// The spelling in a fan file.
    pub fn as_str(self) -> &'static str {
        match self {
            FanPosition::AheadOfBurner => "ahead-of-burner",
            FanPosition::AfterBurner => "after-burner",
        }
    }

    fn parse(text: &str) -> Option<Self> {
        [FanPosition::AheadOfBurner, FanPosition::AfterBurner]
            .into_iter()
            .find(|p| p.as_str() == text)
    }
}

/// A fan file (`models/fans/*.json`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
struct FanFile {
    name: String,
    #[serde(default)]
    description: String,
    #[serde(default)]
    rated_density_kg_per_m3: Option<f64>,
    /// Kept as raw JSON so that a bad value is reported naming the field and its line.
    #[serde(default)]
    position: Option<serde_json::Value>,
    points: Vec<FanPoint>,
}

/// A fan curve: static pressure falling monotonically with flow, interpolated by PCHIP between rating points.
#[derive(Debug, Clone, PartialEq)]
pub struct FanCurve {
    /// Name from the file.
    pub name: String,
    /// Flows at the rating points, m³/s, strictly increasing.
    flow_m3_per_s: Vec<f64>,
    /// Static pressures at the rating points, Pa, strictly decreasing.
    pressure_pa: Vec<f64>,
    /// PCHIP derivatives dP/dQ at the points, Pa·s/m³.
    slope: Vec<f64>,
    /// Air density the ratings refer to, kg/m³.
    pub rated_density_kg_per_m3: f64,
    /// Where the fan sits relative to the burner ([`FanCurve::new`] gives the default, ahead of it).
    pub position: FanPosition,
}

/// Errors in a fan curve.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FanError {
    /// Fewer than two points.
    #[error("fan curve: needs at least 2 points, got {0}")]
    TooFewPoints(usize),
    /// Flow must rise from point to point.
    #[error("fan curve: airflow must rise from point to point (point {index}: {flow_m3_per_min} m³/min after {previous_m3_per_min} m³/min)")]
    FlowNotRising {
        /// 1-based point number.
        index: usize,
        /// Its flow.
        flow_m3_per_min: f64,
        /// The flow before.
        previous_m3_per_min: f64,
    },
    /// Pressure must fall as flow rises.
    #[error("fan curve: pressure must fall as airflow rises (point {index}: {pressure_pa} Pa after {previous_pa} Pa)")]
    PressureNotFalling {
        /// 1-based point number.
        index: usize,
        /// Its pressure.
        pressure_pa: f64,
        /// The pressure before.
        previous_pa: f64,
    },
    /// A value is negative or not finite.
    #[error("fan curve: point {index}: {what} must be a finite number ≥ 0")]
    BadValue {
        /// 1-based point number.
        index: usize,
        /// Which value.
        what: &'static str,
    },
    /// The rated density is not physical.
    #[error("fan curve: rated density {0} kg/m³ must be between 0.5 and 2")]
    BadDensity(f64),
}

impl FanCurve {
    /// Build and validate a curve from rating points (flow in m³/min, static pressure in Pa).
    pub fn new(
        name: &str,
        points: &[FanPoint],
        rated_density_kg_per_m3: f64,
    ) -> Result<Self, FanError> {
        if points.len() < 2 {
            return Err(FanError::TooFewPoints(points.len()));
        }
        if !(0.5..=2.0).contains(&rated_density_kg_per_m3) {
            return Err(FanError::BadDensity(rated_density_kg_per_m3));
        }
        for (n, p) in points.iter().enumerate() {
            if !(p.flow_m3_per_min.is_finite() && p.flow_m3_per_min >= 0.0) {
                return Err(FanError::BadValue {
                    index: n + 1,
                    what: "flow_m3_per_min",
                });
            }
            if !(p.static_pressure_pa.is_finite() && p.static_pressure_pa >= 0.0) {
                return Err(FanError::BadValue {
                    index: n + 1,
                    what: "static_pressure_pa",
                });
            }
            if n > 0 {
                let prev = points[n - 1];
                if p.flow_m3_per_min <= prev.flow_m3_per_min {
                    return Err(FanError::FlowNotRising {
                        index: n + 1,
                        flow_m3_per_min: p.flow_m3_per_min,
                        previous_m3_per_min: prev.flow_m3_per_min,
                    });
                }
                if p.static_pressure_pa >= prev.static_pressure_pa {
                    return Err(FanError::PressureNotFalling {
                        index: n + 1,
                        pressure_pa: p.static_pressure_pa,
                        previous_pa: prev.static_pressure_pa,
                    });
                }
            }
        }
        let q: Vec<f64> = points.iter().map(|p| p.flow_m3_per_min / 60.0).collect();
        let p: Vec<f64> = points.iter().map(|p| p.static_pressure_pa).collect();
        let slope = pchip_slopes(&q, &p);
        Ok(FanCurve {
            name: name.to_string(),
            flow_m3_per_s: q,
            pressure_pa: p,
            slope,
            rated_density_kg_per_m3,
            position: FanPosition::default(),
        })
    }

    /// Parse and validate a fan file; `path` names the file in errors.
    pub fn from_json_str(text: &str, path: &Path) -> Result<Self, InputError> {
        Self::from_json_unlocated(text, path)
            .map_err(|e| crate::input::with_json_line(e, path, text))
    }

    fn from_json_unlocated(text: &str, path: &Path) -> Result<Self, InputError> {
        let f: FanFile = serde_json::from_str(text).map_err(|e| InputError::Parse {
            path: path.to_path_buf(),
            line: Some(e.line() as u64),
            message: e.to_string(),
        })?;
        let _ = &f.description;
        let rho = f
            .rated_density_kg_per_m3
            .unwrap_or(STANDARD_AIR_DENSITY_KG_PER_M3);
        let position =
            match &f.position {
                None => FanPosition::default(),
                Some(v) => v.as_str().and_then(FanPosition::parse).ok_or_else(|| {
                    InputError::Field {
                    path: path.to_path_buf(),
                    line: line_of_key(text, "position"),
                    field: "position".into(),
                    value: v.as_str().map_or_else(|| v.to_string(), str::to_string),
                    expected:
                        "must be \"ahead-of-burner\" (the fan draws ambient air; the default) or \
                               \"after-burner\" (the fan draws the heated air)"
                            .into(),
                }
                })?,
            };
        let mut curve = FanCurve::new(&f.name, &f.points, rho).map_err(|e| InputError::Model {
            line: None,
            path: path.to_path_buf(),
            field: "points".into(),
            message: e.to_string(),
        })?;
        curve.position = position;
        Ok(curve)
    }

    /// Flow range covered by the rating points, m³/s.
    pub fn flow_range_m3_per_s(&self) -> (f64, f64) {
        (
            self.flow_m3_per_s[0],
            *self.flow_m3_per_s.last().unwrap_or(&0.0),
        )
    }

    /// Static pressure (Pa) at flow `q_m3_per_s` for rated-density air; clamped to the rated range ends.
    pub fn rated_pressure_pa(&self, q_m3_per_s: f64) -> f64 {
        let x = &self.flow_m3_per_s;
        let n = x.len();
        if q_m3_per_s <= x[0] {
            return self.pressure_pa[0];
        }
        if q_m3_per_s >= x[n - 1] {
            return self.pressure_pa[n - 1];
        }
        let k = x.partition_point(|&v| v <= q_m3_per_s) - 1;
        let h = x[k + 1] - x[k];
        let t = (q_m3_per_s - x[k]) / h;
        let (y0, y1, d0, d1) = (
            self.pressure_pa[k],
            self.pressure_pa[k + 1],
            self.slope[k],
            self.slope[k + 1],
        );
        let t2 = t * t;
        let t3 = t2 * t;
        (2.0 * t3 - 3.0 * t2 + 1.0) * y0
            + (t3 - 2.0 * t2 + t) * h * d0
            + (-2.0 * t3 + 3.0 * t2) * y1
            + (t3 - t2) * h * d1
    }

    /// Static pressure (Pa) at flow `q_m3_per_s` for air of density `rho_kg_per_m3`: P ∝ ρ at the same flow.
    pub fn pressure_pa(&self, q_m3_per_s: f64, rho_kg_per_m3: f64) -> f64 {
        self.rated_pressure_pa(q_m3_per_s) * rho_kg_per_m3 / self.rated_density_kg_per_m3
    }
}

/// 1-based line of the first `"key"` in `text` (1 if absent: the parser has already accepted the file).
fn line_of_key(text: &str, key: &str) -> u64 {
    let quoted = format!("\"{key}\"");
    text.find(&quoted)
        .map(|at| 1 + text[..at].matches('\n').count() as u64)
        .unwrap_or(1)
}

/// Fritsch–Carlson/Butland derivatives: zero at local extrema or sign changes, weighted harmonic mean otherwise,
/// one-sided three-point formula at the ends with the same monotonicity limiter.
fn pchip_slopes(x: &[f64], y: &[f64]) -> Vec<f64> {
    let n = x.len();
    let h: Vec<f64> = (0..n - 1).map(|k| x[k + 1] - x[k]).collect();
    let delta: Vec<f64> = (0..n - 1).map(|k| (y[k + 1] - y[k]) / h[k]).collect();
    let mut d = vec![0.0; n];
    if n == 2 {
        d[0] = delta[0];
        d[1] = delta[0];
        return d;
    }
    for k in 1..n - 1 {
        if delta[k - 1] * delta[k] > 0.0 {
            let w1 = 2.0 * h[k] + h[k - 1];
            let w2 = h[k] + 2.0 * h[k - 1];
            d[k] = (w1 + w2) / (w1 / delta[k - 1] + w2 / delta[k]);
        }
    }
    let end = |h0: f64, h1: f64, d0: f64, d1: f64| {
        let s = ((2.0 * h0 + h1) * d0 - h0 * d1) / (h0 + h1);
        if s * d0 <= 0.0 {
            0.0
        } else if d0 * d1 <= 0.0 && s.abs() > 3.0 * d0.abs() {
            3.0 * d0
        } else {
            s
        }
    };
    d[0] = end(h[0], h[1], delta[0], delta[1]);
    d[n - 1] = end(h[n - 2], h[n - 3], delta[n - 2], delta[n - 3]);
    d
}

/// Where the total flow comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum FlowSpec {
    /// A fan: the flow is where its curve meets the system's.
    Fan(FanCurve),
    /// A fixed total flow into the plenum, m³/s (bed plus leakage).
    Fixed {
        /// Total flow, m³/s.
        total_m3_per_s: f64,
    },
}

/// Leakage out of the plenum: Q = C·√p (p gauge, Pa; no flow below 0 Pa).
#[inline]
pub fn leakage_m3_per_s(c_m3_per_s_per_sqrt_pa: f64, p_pa: f64) -> f64 {
    c_m3_per_s_per_sqrt_pa * p_pa.max(0.0).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn pts(v: &[(f64, f64)]) -> Vec<FanPoint> {
        v.iter()
            .map(|&(q, p)| FanPoint {
                flow_m3_per_min: q,
                static_pressure_pa: p,
            })
            .collect()
    }

    #[test]
    fn interpolation_passes_through_points_and_stays_monotone() {
        let f = FanCurve::new(
            "f",
            &pts(&[(0.0, 500.0), (150.0, 440.0), (300.0, 250.0), (380.0, 0.0)]),
            1.204,
        )
        .unwrap();
        assert_relative_eq!(f.rated_pressure_pa(150.0 / 60.0), 440.0, epsilon = 1e-9);
        let mut prev = f64::INFINITY;
        for n in 0..=380 {
            let p = f.rated_pressure_pa(n as f64 / 60.0);
            assert!(p <= prev + 1e-12, "not monotone at {n} m³/min");
            assert!((0.0..=500.0).contains(&p));
            prev = p;
        }
    }

    #[test]
    fn density_scales_pressure_at_same_flow() {
        // DOMAIN.md §8.1: Q unchanged, P ∝ ρ.
        let f = FanCurve::new("f", &pts(&[(0.0, 400.0), (300.0, 0.0)]), 1.204).unwrap();
        assert_relative_eq!(
            f.pressure_pa(2.5, 1.1),
            200.0 * 1.1 / 1.204,
            max_relative = 1e-12
        );
    }

    #[test]
    fn rising_pressure_is_rejected_naming_the_point() {
        let e = FanCurve::new(
            "f",
            &pts(&[(0.0, 400.0), (100.0, 380.0), (200.0, 410.0)]),
            1.204,
        )
        .unwrap_err();
        assert!(
            e.to_string().contains("point 3: 410 Pa after 380 Pa"),
            "{e}"
        );
    }
}
