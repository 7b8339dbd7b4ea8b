//! Moist-air psychrometrics at a stated barometric pressure: saturation vapour pressure, humidity ratio, relative
//! humidity, enthalpy, wet-bulb and dew-point temperature, specific volume and density, latent heat of free water.
//!
//! Formulation: ASHRAE Handbook—Fundamentals (2017), chapter 1 — Hyland–Wexler saturation pressure over ice and
//! water (eqs. 5–6, switching at the triple point 0.01 °C), humidity ratio (eq. 20), enthalpy (eq. 32), specific
//! volume (eq. 26), wet-bulb relation (eqs. 33 and 35), standard atmosphere pressure from elevation (eq. 3). The latent
//! heat of free water uses the ASABE D271 forms (from memory; within 0.06 % of IAPWS-95 at 25–70 °C, see tests).
//! Temperatures in °C, pressures in Pa, humidity ratio in kg water per kg dry air, enthalpy per kg dry air.

/// Standard sea-level atmospheric pressure, Pa.
pub const P_STD_PA: f64 = 101_325.0;
/// Ratio of molar masses of water and dry air (ASHRAE 2017 ch. 1 eq. 20).
pub const EPS_WATER_AIR: f64 = 0.621_945;
/// Triple point of water, °C; the saturation curve switches from ice to water here.
const T_TRIPLE_C: f64 = 0.01;
/// Specific heat of dry air, J/(kg·K) (ASHRAE 2017 eq. 32, 1.006 kJ/kg·K).
pub const CP_DRY_AIR: f64 = 1006.0;
/// Specific heat of water vapour, J/(kg·K) (ASHRAE 2017 eq. 32, 1.86 kJ/kg·K).
pub const CP_VAPOUR: f64 = 1860.0;
/// Specific heat of liquid water, J/(kg·K) (ASHRAE 2017 eq. 35, 4.186 kJ/kg·K).
pub const CP_WATER: f64 = 4186.0;
/// Enthalpy of vaporisation at 0 °C in the enthalpy datum, J/kg (ASHRAE 2017 eq. 32).
pub const HFG0: f64 = 2_501_000.0;

/// Barometric pressure (Pa) of the standard atmosphere at an elevation (m above sea level); ASHRAE 2017 eq. 3.
pub fn pressure_at_elevation_pa(elevation_m: f64) -> f64 {
    P_STD_PA * (1.0 - 2.255_77e-5 * elevation_m).powf(5.2559)
}

/// Saturation vapour pressure (Pa) over liquid water (t ≥ 0.01 °C) or ice (below), Hyland–Wexler.
#[inline]
pub fn saturation_pressure_pa(t_c: f64) -> f64 {
    ln_saturation_pressure(t_c + 273.15).exp()
}

#[inline]
fn ln_saturation_pressure(t_k: f64) -> f64 {
    if t_k >= T_TRIPLE_C + 273.15 {
        -5.800_220_6e3 / t_k + 1.391_499_3 - 4.864_023_9e-2 * t_k + 4.176_476_8e-5 * t_k * t_k
            - 1.445_209_3e-8 * t_k * t_k * t_k
            + 6.545_967_3 * t_k.ln()
    } else {
        -5.674_535_9e3 / t_k + 6.392_524_7 - 9.677_843e-3 * t_k
            + 6.221_570_1e-7 * t_k * t_k
            + 2.074_782_5e-9 * t_k.powi(3)
            - 9.484_024e-13 * t_k.powi(4)
            + 4.163_501_9 * t_k.ln()
    }
}

#[inline]
fn d_ln_saturation_pressure(t_k: f64) -> f64 {
    if t_k >= T_TRIPLE_C + 273.15 {
        5.800_220_6e3 / (t_k * t_k) - 4.864_023_9e-2 + 2.0 * 4.176_476_8e-5 * t_k
            - 3.0 * 1.445_209_3e-8 * t_k * t_k
            + 6.545_967_3 / t_k
    } else {
        5.674_535_9e3 / (t_k * t_k) - 9.677_843e-3
            + 2.0 * 6.221_570_1e-7 * t_k
            + 3.0 * 2.074_782_5e-9 * t_k * t_k
            - 4.0 * 9.484_024e-13 * t_k.powi(3)
            + 4.163_501_9 / t_k
    }
}

/// Humidity ratio (kg/kg dry air) from partial vapour pressure; ASHRAE 2017 eq. 20.
#[inline]
pub fn humidity_ratio_from_vapour_pressure(p_w_pa: f64, p_pa: f64) -> f64 {
    EPS_WATER_AIR * p_w_pa / (p_pa - p_w_pa)
}

/// Partial vapour pressure (Pa) from humidity ratio; inverse of ASHRAE 2017 eq. 20.
#[inline]
pub fn vapour_pressure_from_humidity_ratio(w: f64, p_pa: f64) -> f64 {
    p_pa * w / (EPS_WATER_AIR + w)
}

/// Humidity ratio of saturated air at `t_c`.
#[inline]
pub fn saturation_humidity_ratio(t_c: f64, p_pa: f64) -> f64 {
    humidity_ratio_from_vapour_pressure(saturation_pressure_pa(t_c), p_pa)
}

/// Saturation pressure over liquid water, Pa, from [`SaturationTable`] (see there for accuracy); outside the table
/// the exact formula is used. Inner loops should fetch the table once ([`SaturationTable::get`]) and call
/// [`SaturationTable::pressure_pa`].
#[inline]
pub fn saturation_pressure_tabulated_pa(t_c: f64) -> f64 {
    SaturationTable::get().pressure_pa(t_c)
}

const SAT_TABLE_STEP_K: f64 = 0.25;
const SAT_TABLE_INV_STEP: f64 = 1.0 / SAT_TABLE_STEP_K;
const SAT_TABLE_INTERVALS: usize = 800;

/// [`saturation_pressure_pa`] tabulated for the layer step's inner loop: the cubic Hermite interpolant on nodes
/// 0.25 K apart from the triple point to 200 °C, with the exact slopes (eq. 6 differentiated) at the nodes, stored
/// per interval as the four coefficients of its cubic in the local coordinate so a look-up is one Horner
/// evaluation. The interpolation error bound h⁴/384 · max|d⁴p/dT⁴| is about 3e-10 of p (checked below 1e-9 in the
/// tests); outside the table the exact formula is used.
#[derive(Debug)]
pub struct SaturationTable {
    cubic: Vec<[f64; 4]>,
}

impl SaturationTable {
    /// The process-wide table, built on first use.
    pub fn get() -> &'static SaturationTable {
        static TABLE: std::sync::OnceLock<SaturationTable> = std::sync::OnceLock::new();
        TABLE.get_or_init(|| {
            let node = |i: usize| {
                let t_c = T_TRIPLE_C + i as f64 * SAT_TABLE_STEP_K;
                let p = saturation_pressure_pa(t_c);
                // Slope per unit of the local coordinate (one step).
                (
                    p,
                    p * d_ln_saturation_pressure(t_c + 273.15) * SAT_TABLE_STEP_K,
                )
            };
            let cubic = (0..SAT_TABLE_INTERVALS)
                .map(|i| {
                    let ((p0, d0), (p1, d1)) = (node(i), node(i + 1));
                    // Hermite interpolant p0·h00 + d0·h10 + p1·h01 + d1·h11 written as c0 + c1·f + c2·f² + c3·f³.
                    [
                        p0,
                        d0,
                        3.0 * (p1 - p0) - 2.0 * d0 - d1,
                        2.0 * (p0 - p1) + d0 + d1,
                    ]
                })
                .collect();
            SaturationTable { cubic }
        })
    }

    /// Saturation pressure over liquid water at `t_c`, Pa.
    #[inline]
    pub fn pressure_pa(&self, t_c: f64) -> f64 {
        let x = (t_c - T_TRIPLE_C) * SAT_TABLE_INV_STEP;
        // `as i32` saturates (NaN gives 0, hence the sign test, which NaN fails); it is much cheaper than `as usize`.
        let i = x as i32;
        match self.cubic.get(i as usize) {
            Some(&[c0, c1, c2, c3]) if x >= 0.0 => {
                let f = x - f64::from(i);
                ((c3 * f + c2) * f + c1) * f + c0
            }
            _ => saturation_pressure_pa(t_c),
        }
    }

    /// Humidity ratio of saturated air at `t_c` and barometric pressure `p_pa`.
    #[inline]
    pub fn saturation_humidity_ratio(&self, t_c: f64, p_pa: f64) -> f64 {
        humidity_ratio_from_vapour_pressure(self.pressure_pa(t_c), p_pa)
    }
}

/// Humidity ratio of saturated air with the tabulated saturation pressure
/// ([`saturation_pressure_tabulated_pa`]).
#[inline]
pub fn saturation_humidity_ratio_tabulated(t_c: f64, p_pa: f64) -> f64 {
    SaturationTable::get().saturation_humidity_ratio(t_c, p_pa)
}

/// Relative humidity (decimal) with the tabulated saturation pressure ([`saturation_pressure_tabulated_pa`]).
#[inline]
pub fn rh_from_humidity_ratio_tabulated(t_c: f64, w: f64, p_pa: f64) -> f64 {
    vapour_pressure_from_humidity_ratio(w, p_pa) / saturation_pressure_tabulated_pa(t_c)
}

/// Humidity ratio from dry-bulb temperature and relative humidity (decimal, 0–1).
#[inline]
pub fn humidity_ratio_from_rh(t_c: f64, rh: f64, p_pa: f64) -> f64 {
    humidity_ratio_from_vapour_pressure(rh * saturation_pressure_pa(t_c), p_pa)
}

/// Relative humidity (decimal) from dry-bulb temperature and humidity ratio. Can exceed 1 for supersaturated input.
#[inline]
pub fn rh_from_humidity_ratio(t_c: f64, w: f64, p_pa: f64) -> f64 {
    vapour_pressure_from_humidity_ratio(w, p_pa) / saturation_pressure_pa(t_c)
}

/// Specific enthalpy of moist air, J per kg dry air; ASHRAE 2017 eq. 32.
#[inline]
pub fn enthalpy_j_per_kg(t_c: f64, w: f64) -> f64 {
    CP_DRY_AIR * t_c + w * (HFG0 + CP_VAPOUR * t_c)
}

/// Dry-bulb temperature (°C) from enthalpy (J/kg dry air) and humidity ratio; inverse of eq. 32.
#[inline]
pub fn temperature_from_enthalpy_c(h_j_per_kg: f64, w: f64) -> f64 {
    (h_j_per_kg - HFG0 * w) / (CP_DRY_AIR + CP_VAPOUR * w)
}

/// Specific volume of moist air, m³ per kg dry air; ASHRAE 2017 eq. 26.
#[inline]
pub fn specific_volume_m3_per_kg(t_c: f64, w: f64, p_pa: f64) -> f64 {
    287.042 * (t_c + 273.15) * (1.0 + 1.607_858 * w) / p_pa
}

/// Density of moist air, kg moist air per m³; ASHRAE 2017 eq. 11 with eq. 26.
#[inline]
pub fn moist_air_density_kg_per_m3(t_c: f64, w: f64, p_pa: f64) -> f64 {
    (1.0 + w) / specific_volume_m3_per_kg(t_c, w, p_pa)
}

/// Latent heat of vaporisation of free water (J/kg) at `t_c`, ASABE D271 forms (from memory, unverified; checked
/// against IAPWS-95 to 0.06 % at 25–70 °C in `tests/psychrometrics.rs`):
/// `2 502 535.259 − 2 385.764 24·(T − 273.16)` for 273.16–338.72 K and
/// `(7 329 155 978 000 − 15 995 964.08·T²)^0.5` for 338.72–533.16 K (T in K). The remembered branches meet with a
/// 0.09 % step at 338.72 K (65.57 °C), above any drying-air temperature used here. Below 0.01 °C the linear form
/// is extrapolated (vaporisation from supercooled water; sublimation is not modelled).
#[inline]
pub fn latent_heat_water_j_per_kg(t_c: f64) -> f64 {
    let t_k = t_c + 273.15;
    if t_k <= 338.72 {
        2_502_535.259 - 2_385.764_24 * (t_k - 273.16)
    } else {
        (7_329_155_978_000.0 - 15_995_964.08 * t_k * t_k)
            .max(0.0)
            .sqrt()
    }
}

/// Dew-point temperature (°C) of air with partial vapour pressure `p_w_pa`: inverts the Hyland–Wexler curve by
/// Newton's method on ln p (converges to 1e-9 K in a few steps; ASHRAE/psychrolib use the same approach).
pub fn dew_point_from_vapour_pressure_c(p_w_pa: f64) -> f64 {
    let target = p_w_pa.max(1e-6).ln();
    // Magnus-type first guess.
    let g = (p_w_pa.max(1e-6) / 610.94).ln();
    let mut t_k = 273.15 + 243.04 * g / (17.625 - g);
    for _ in 0..50 {
        let f = ln_saturation_pressure(t_k) - target;
        let step = f / d_ln_saturation_pressure(t_k);
        t_k -= step;
        if step.abs() < 1e-10 {
            break;
        }
    }
    t_k - 273.15
}

/// Dew-point temperature (°C) from humidity ratio.
pub fn dew_point_c(w: f64, p_pa: f64) -> f64 {
    dew_point_from_vapour_pressure_c(vapour_pressure_from_humidity_ratio(w, p_pa))
}

/// Humidity ratio from dry-bulb and wet-bulb temperatures (psychrometric relation); ASHRAE 2017 eqs. 33 (above
/// freezing, t* ≥ 0) and 35 (below).
pub fn humidity_ratio_from_wet_bulb(t_c: f64, t_wb_c: f64, p_pa: f64) -> f64 {
    let ws = saturation_humidity_ratio(t_wb_c, p_pa);
    if t_wb_c >= 0.0 {
        ((2501.0 - 2.326 * t_wb_c) * ws - 1.006 * (t_c - t_wb_c))
            / (2501.0 + 1.86 * t_c - 4.186 * t_wb_c)
    } else {
        ((2830.0 - 0.24 * t_wb_c) * ws - 1.006 * (t_c - t_wb_c))
            / (2830.0 + 1.86 * t_c - 2.1 * t_wb_c)
    }
}

/// [`humidity_ratio_from_wet_bulb`] and its derivative with respect to the wet bulb, per K.
fn humidity_ratio_from_wet_bulb_and_slope(t_c: f64, t_wb_c: f64, p_pa: f64) -> (f64, f64) {
    let t_k = t_wb_c + 273.15;
    let p_ws = ln_saturation_pressure(t_k).exp();
    let ws = humidity_ratio_from_vapour_pressure(p_ws, p_pa);
    // dWs/dt* = ε·p·p_ws' / (p − p_ws)², with p_ws' = p_ws · d ln p_ws / dT.
    let dws = EPS_WATER_AIR * p_pa * p_ws * d_ln_saturation_pressure(t_k) / (p_pa - p_ws).powi(2);
    // W = (a·Ws − 1.006·(T − t*)) / D with a and D linear in t* (eq. 33 above freezing, eq. 35 below).
    let (a0, da, d0, dd) = if t_wb_c >= 0.0 {
        (2501.0, -2.326, 2501.0 + 1.86 * t_c, -4.186)
    } else {
        (2830.0, -0.24, 2830.0 + 1.86 * t_c, -2.1)
    };
    let d = d0 + dd * t_wb_c;
    let w = ((a0 + da * t_wb_c) * ws - 1.006 * (t_c - t_wb_c)) / d;
    (w, (da * ws + (a0 + da * t_wb_c) * dws + 1.006 - w * dd) / d)
}

/// Thermodynamic wet-bulb temperature (°C) from dry bulb and humidity ratio: the root of the psychrometric relation
/// ([`humidity_ratio_from_wet_bulb`], increasing in the wet bulb) by Newton's method from the dry bulb, kept inside
/// the bracket it has shrunk to (bisection when a step leaves it, with the dew point as the lower end), to 1e-9 K.
/// Air at or above saturation gives its dry bulb.
pub fn wet_bulb_c(t_c: f64, w: f64, p_pa: f64) -> f64 {
    let (mut lo, mut hi) = (f64::NEG_INFINITY, t_c);
    let (w_hi, mut slope) = humidity_ratio_from_wet_bulb_and_slope(t_c, t_c, p_pa);
    let mut f = w_hi - w;
    if f <= 0.0 {
        return t_c;
    }
    let mut t = t_c;
    for _ in 0..100 {
        let step = f / slope;
        if step.abs() < 1e-9 {
            return t - step;
        }
        let mut next = t - step;
        if !(next > lo && next < hi) {
            if lo == f64::NEG_INFINITY {
                // At the dew point the relation gives at most W (it is W scaled by a factor ≤ 1, less a positive
                // term), so it bounds the root from below.
                lo = dew_point_c(w, p_pa).min(t_c);
            }
            next = 0.5 * (lo + hi);
        }
        if hi - lo < 1e-9 {
            return next;
        }
        t = next;
        let (w_t, s) = humidity_ratio_from_wet_bulb_and_slope(t_c, t, p_pa);
        (f, slope) = (w_t - w, s);
        if f > 0.0 {
            hi = t;
        } else {
            lo = t;
        }
    }
    t
}

/// A moist-air state: dry bulb, humidity ratio and barometric pressure. Everything else is derived.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct AirState {
    /// Dry-bulb temperature, °C.
    pub t_c: f64,
    /// Humidity ratio, kg water per kg dry air.
    pub w: f64,
    /// Barometric pressure, Pa.
    pub p_pa: f64,
}

impl AirState {
    /// From dry bulb and relative humidity (decimal 0–1).
    pub fn from_rh(t_c: f64, rh: f64, p_pa: f64) -> Self {
        AirState {
            t_c,
            w: humidity_ratio_from_rh(t_c, rh, p_pa),
            p_pa,
        }
    }
    /// From dry bulb and dew point.
    pub fn from_dew_point(t_c: f64, t_dp_c: f64, p_pa: f64) -> Self {
        AirState {
            t_c,
            w: saturation_humidity_ratio(t_dp_c, p_pa),
            p_pa,
        }
    }
    /// Relative humidity, decimal.
    pub fn rh(&self) -> f64 {
        rh_from_humidity_ratio(self.t_c, self.w, self.p_pa)
    }
    /// Specific enthalpy, J per kg dry air.
    pub fn enthalpy_j_per_kg(&self) -> f64 {
        enthalpy_j_per_kg(self.t_c, self.w)
    }
    /// Wet-bulb temperature, °C.
    pub fn wet_bulb_c(&self) -> f64 {
        wet_bulb_c(self.t_c, self.w, self.p_pa)
    }
    /// Dew-point temperature, °C.
    pub fn dew_point_c(&self) -> f64 {
        dew_point_c(self.w, self.p_pa)
    }
    /// Specific volume, m³ per kg dry air.
    pub fn specific_volume_m3_per_kg(&self) -> f64 {
        specific_volume_m3_per_kg(self.t_c, self.w, self.p_pa)
    }
    /// Moist-air density, kg/m³.
    pub fn density_kg_per_m3(&self) -> f64 {
        moist_air_density_kg_per_m3(self.t_c, self.w, self.p_pa)
    }
    /// The same air sensibly heated (humidity ratio unchanged) by `dt_k`.
    pub fn heated_by(&self, dt_k: f64) -> Self {
        AirState {
            t_c: self.t_c + dt_k,
            ..*self
        }
    }
    /// Heat (J per kg dry air) needed to raise this air to `t_c` at constant humidity ratio.
    pub fn heat_to_j_per_kg(&self, t_c: f64) -> f64 {
        enthalpy_j_per_kg(t_c, self.w) - self.enthalpy_j_per_kg()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn saturation_pressure_continuous_at_triple_point() {
        let below = saturation_pressure_pa(T_TRIPLE_C - 1e-9);
        let above = saturation_pressure_pa(T_TRIPLE_C + 1e-9);
        assert_relative_eq!(below, above, max_relative = 2e-4);
    }

    #[test]
    fn dew_point_inverts_saturation_pressure() {
        for t in [-20.0, -5.0, 0.5, 10.0, 25.0, 45.0, 60.0] {
            assert!(
                (dew_point_from_vapour_pressure_c(saturation_pressure_pa(t)) - t).abs() < 1e-8,
                "{t}"
            );
        }
    }

    /// Newton's wet bulb against plain bisection of the same relation to 1e-13 K: they agree to 1e-11 K from −20 to
    /// 70 °C, dry to near-saturated air, across the freezing switch of eqs. 33/35 (Newton stops after a step below
    /// 1e-9 K, so its error is about the square of that; measured 3e-13 K).
    #[test]
    fn wet_bulb_is_the_root_of_the_psychrometric_relation() {
        let bisected = |t_c: f64, w: f64, p_pa: f64| {
            let (mut lo, mut hi) = (dew_point_c(w, p_pa).min(t_c), t_c);
            while hi - lo > 1e-13 {
                let mid = 0.5 * (lo + hi);
                if humidity_ratio_from_wet_bulb(t_c, mid, p_pa) > w {
                    hi = mid;
                } else {
                    lo = mid;
                }
            }
            0.5 * (lo + hi)
        };
        let mut worst = 0.0_f64;
        for p_pa in [90_000.0, P_STD_PA] {
            for t_c in [-20.0, -3.0, 0.5, 2.0, 10.0, 25.0, 35.0, 50.0, 70.0] {
                for rh in [0.0, 0.02, 0.1, 0.3, 0.6, 0.9, 0.999] {
                    let w = humidity_ratio_from_rh(t_c, rh, p_pa);
                    let err = (wet_bulb_c(t_c, w, p_pa) - bisected(t_c, w, p_pa)).abs();
                    assert!(err < 1e-11, "{t_c} °C, RH {rh}, {p_pa} Pa: {err:e} K");
                    worst = worst.max(err);
                }
            }
        }
        println!("largest difference from bisection: {worst:e} K");
        // Saturated and supersaturated air: the dry bulb.
        let w = humidity_ratio_from_rh(30.0, 1.0, P_STD_PA);
        assert!(wet_bulb_c(30.0, w * 1.01, P_STD_PA).to_bits() == 30.0_f64.to_bits());
        assert!((wet_bulb_c(30.0, w, P_STD_PA) - 30.0).abs() < 1e-9);
    }

    #[test]
    fn enthalpy_inverse() {
        let h = enthalpy_j_per_kg(31.2, 0.0123);
        assert_relative_eq!(
            temperature_from_enthalpy_c(h, 0.0123),
            31.2,
            max_relative = 1e-12
        );
    }

    #[test]
    fn standard_atmosphere() {
        // ASHRAE 2017 ch. 1 table 1: 500 m → 95.46 kPa.
        assert_relative_eq!(
            pressure_at_elevation_pa(500.0),
            95_461.0,
            max_relative = 2e-4
        );
    }
}
