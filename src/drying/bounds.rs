//! Physical bounds checked after every step, so a non-physical state stops the run where it appears instead of
//! spreading through a season: every value finite; air leaving any layer at most saturated; moisture between zero
//! and the crop's moisture ceiling; peanut temperatures no hotter than the air that entered so far could bring them
//! to, and no colder than each layer's own floor.
//!
//! Temperature bounds, from the moist-air process the layer step models (ASHRAE Fundamentals ch. 1 forms used by
//! `props::psychro`): peanuts cannot be heated above the temperature of dry air with the inlet air's enthalpy (the
//! end of its adiabatic line when all its vapour is adsorbed; the starting bed's own temperatures widen it). The
//! lower bound is per layer and is checked by the layer step itself (`layer::ColumnStepTotals::below_floor`): a
//! layer ends no colder than both it and the air entering it were, or else no colder than that air's dew point.
//! There is no lower bound from the plenum air alone: air dried by adsorption in a lower layer can evaporatively
//! cool the layers above below the plenum air's dew point, as a desiccant cooler does.

use super::layer::ColumnStepTotals;
use crate::props::psychro::{self, AirState};

/// Round-off allowed on temperatures, K: the enthalpy-to-temperature inversion of the layer step is exact to about
/// 1e-10 K; this leaves room for sums over a whole column.
const TEMP_TOL_K: f64 = 1e-6;
/// Round-off allowed on RH (decimal): the layer step caps exhaust air at saturation.
pub const RH_TOL: f64 = 1e-9;

/// The bounds in force.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bounds {
    /// Hottest allowed peanut temperature, °C.
    pub t_hi_c: f64,
    /// Highest allowed moisture, dry basis.
    pub m_hi_db: f64,
}

/// A value outside its bound, in one cell.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Violation {
    /// Layer, from the floor (0).
    pub layer: usize,
    /// Which quantity.
    pub quantity: &'static str,
    /// Its value.
    pub value: f64,
    /// The bound it broke (NaN for a non-finite value).
    pub bound: f64,
}

impl Bounds {
    /// Bounds for a starting bed: its hottest peanuts, and the moisture ceiling.
    pub fn new(t_max_c: f64, m_hi_db: f64) -> Self {
        Bounds {
            t_hi_c: t_max_c,
            m_hi_db,
        }
    }

    /// Widen for air entering the bed.
    pub fn admit(&mut self, inlet: &AirState) {
        let dry_end = inlet.enthalpy_j_per_kg() / psychro::CP_DRY_AIR;
        self.t_hi_c = self.t_hi_c.max(dry_end.max(inlet.t_c));
    }

    /// Check one column after its step, with the step's own totals (largest exhaust RH, a layer below its floor).
    pub fn check_column(
        &self,
        hull_db: &[f64],
        kernel_db: &[f64],
        temp_c: &[f64],
        totals: &ColumnStepTotals,
    ) -> Option<Violation> {
        let max_rh_out = totals.max_rh_out;
        let v = |layer, quantity, value, bound| {
            Some(Violation {
                layer,
                quantity,
                value,
                bound,
            })
        };
        if max_rh_out.is_nan() || max_rh_out > 1.0 + RH_TOL {
            return v(
                temp_c.len().saturating_sub(1),
                "air RH leaving a layer",
                max_rh_out,
                1.0,
            );
        }
        // One pass with no early exit screens the column; only a column that fails it is searched for its first
        // violation, in the order below. The limits are capped at the largest finite value, so that the screen's
        // comparisons also fail for infinities (and, as every comparison does, for NaN).
        let (m_hi, t_hi) = (
            self.m_hi_db.min(f64::MAX),
            (self.t_hi_c + TEMP_TOL_K).min(f64::MAX),
        );
        let n = temp_c.len();
        let (hull, kernel) = (&hull_db[..n], &kernel_db[..n]);
        let mut in_bounds = true;
        for k in 0..n {
            let (h, m, t) = (hull[k], kernel[k], temp_c[k]);
            in_bounds &= (h >= 0.0)
                & (h <= m_hi)
                & (m >= 0.0)
                & (m <= m_hi)
                & (t >= -f64::MAX)
                & (t <= t_hi);
        }
        let n = if in_bounds { 0 } else { n };
        for k in 0..n {
            for (name, m) in [
                ("hull moisture (d.b.)", hull_db[k]),
                ("kernel moisture (d.b.)", kernel_db[k]),
            ] {
                if !m.is_finite() {
                    return v(k, name, m, f64::NAN);
                }
                if m < 0.0 {
                    return v(k, name, m, 0.0);
                }
                if m > self.m_hi_db {
                    return v(k, name, m, self.m_hi_db);
                }
            }
            let t = temp_c[k];
            if !t.is_finite() {
                return v(k, "peanut temperature (°C)", t, f64::NAN);
            }
            if t > self.t_hi_c + TEMP_TOL_K {
                return v(k, "peanut temperature (°C)", t, self.t_hi_c);
            }
        }
        if let Some((k, t, floor)) = totals.below_floor {
            return v(
                k,
                "peanut temperature below its layer's floor (°C)",
                t,
                floor,
            );
        }
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Each out-of-bounds value, put in one layer of an otherwise good column, is named with its layer and bound;
    /// the good column passes.
    #[test]
    fn check_column_names_every_kind_of_violation() {
        let b = Bounds::new(40.0, 0.5);
        let totals = ColumnStepTotals {
            max_rh_out: 0.9,
            ..ColumnStepTotals::default()
        };
        let (hull, kernel, temp) = ([0.2; 4], [0.3; 4], [30.0; 4]);
        assert_eq!(b.check_column(&hull, &kernel, &temp, &totals), None);
        let cases: [(usize, f64, &str, f64); 10] = [
            (0, f64::NAN, "hull moisture (d.b.)", f64::NAN),
            (0, f64::INFINITY, "hull moisture (d.b.)", f64::NAN),
            (0, -1e-12, "hull moisture (d.b.)", 0.0),
            (0, 0.5 + 1e-12, "hull moisture (d.b.)", 0.5),
            (1, f64::NEG_INFINITY, "kernel moisture (d.b.)", f64::NAN),
            (1, -1e-12, "kernel moisture (d.b.)", 0.0),
            (1, 0.6, "kernel moisture (d.b.)", 0.5),
            (2, f64::NAN, "peanut temperature (°C)", f64::NAN),
            (2, f64::NEG_INFINITY, "peanut temperature (°C)", f64::NAN),
            (2, 40.0 + 2.0 * TEMP_TOL_K, "peanut temperature (°C)", 40.0),
        ];
        for (what, value, quantity, bound) in cases {
            let (mut h, mut k, mut t) = (hull, kernel, temp);
            [&mut h, &mut k, &mut t][what][3] = value;
            let v = b
                .check_column(&h, &k, &t, &totals)
                .unwrap_or_else(|| panic!("{quantity} = {value} passed"));
            assert_eq!((v.layer, v.quantity), (3, quantity), "{value}");
            assert!(
                v.bound.to_bits() == bound.to_bits(),
                "{value}: bound {}",
                v.bound
            );
        }
        // At the hot bound within round-off: passes.
        let mut t = temp;
        t[3] = 40.0 + 0.5 * TEMP_TOL_K;
        assert_eq!(b.check_column(&hull, &kernel, &t, &totals), None);
        for rh in [f64::NAN, 1.0 + 2.0 * RH_TOL] {
            let wet = ColumnStepTotals {
                max_rh_out: rh,
                ..totals
            };
            let v = b
                .check_column(&hull, &kernel, &temp, &wet)
                .expect("wet air");
            assert_eq!(v.quantity, "air RH leaving a layer");
        }
        let cold = ColumnStepTotals {
            below_floor: Some((1, 10.0, 12.0)),
            ..totals
        };
        let v = b
            .check_column(&hull, &kernel, &temp, &cold)
            .expect("cold layer");
        assert_eq!((v.layer, v.value, v.bound), (1, 10.0, 12.0));
    }
}
