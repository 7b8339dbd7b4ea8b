//! Thermal and bulk properties of a moist crop: specific heat by the mixture rule, bulk and dry-matter density,
//! and the latent heat of bound water from the isotherm by the Othmer (Clausius–Clapeyron) ratio method.
//!
//! Plain functions of plain numbers: the crop constants (dry-matter specific heat, density line, isotherm) are
//! loaded and validated elsewhere (`crop`). Units: J, kg, K, m³; moisture `_db` is kg water per kg dry matter,
//! `_wb` kg water per kg wet mass.
//!
//! References: DOMAIN.md §4 (mixture rule [common practice, no source]; dry-matter c_p estimates [from memory,
//! unverified]; Othmer ratio h_fg/h_fg,water = d ln p_v / d ln p_s at constant M, as used by Thompson-type models;
//! Rodriguez-Arias, Hall & Bakker-Arkema (1963) Cereal Chem. 40:676–683 for corn heats of vaporisation from
//! isotherms); saturation pressure and free-water latent heat from `props::psychro` (ASHRAE 2017, ASABE D271).

use crate::error::InputError;
use crate::props::psychro::{latent_heat_water_j_per_kg, saturation_pressure_pa, CP_WATER};

/// Specific heat of the wet material, J per (kg wet mass · K), by the mixture rule
/// c = c_dm·(1 − m) + c_w·m with c_w = 4186 J/(kg·K) and m the wet-basis moisture (decimal)
/// [common practice, no source; DOMAIN.md §4].
#[inline]
pub fn specific_heat_wet_j_per_kg_k(c_dm_j_per_kg_k: f64, m_wb: f64) -> f64 {
    c_dm_j_per_kg_k * (1.0 - m_wb) + CP_WATER * m_wb
}

/// Heat capacity of moist material per kg of its **dry matter**, J per (kg dm · K): c_dm + c_w·M, M dry basis.
/// This is the form the deep-bed heat balance uses (it tracks dry matter per layer); it equals
/// [`specific_heat_wet_j_per_kg_k`] × (1 + M) at m = M/(1 + M).
#[inline]
pub fn heat_capacity_per_kg_dm_j_per_kg_k(c_dm_j_per_kg_k: f64, m_db: f64) -> f64 {
    c_dm_j_per_kg_k + CP_WATER * m_db
}

/// Fraction of wet mass that is dry matter, 1/(1 + M) (= 1 − m), for dry-basis moisture `m_db`.
#[inline]
pub fn dry_matter_fraction(m_db: f64) -> f64 {
    1.0 / (1.0 + m_db)
}

/// Bulk density (kg wet mass per m³ of bed) at dry-basis moisture `m_db`, linear in moisture about a reference:
/// ρ_bulk = ρ_ref + slope·(M − M_ref). A linear form with a density measured at the buying point is common
/// practice, no source (DOMAIN.md §4 gives only ranges by market type). Check the line with
/// [`check_bulk_density_line`] over the moisture range it will see; this function does not.
#[inline]
pub fn bulk_density_kg_per_m3(
    ref_density_kg_per_m3: f64,
    ref_m_db: f64,
    slope_kg_per_m3: f64,
    m_db: f64,
) -> f64 {
    ref_density_kg_per_m3 + slope_kg_per_m3 * (m_db - ref_m_db)
}

/// Dry matter per m³ of bed (kg dm/m³) from bulk (wet) density and dry-basis moisture: ρ_dm = ρ_bulk/(1 + M)
/// (= ρ_bulk·(1 − m); DOMAIN.md §4: 330 kg/m³ at 18 % w.b. → 270 kg dm/m³).
#[inline]
pub fn dry_matter_density_kg_per_m3(bulk_density_kg_per_m3: f64, m_db: f64) -> f64 {
    bulk_density_kg_per_m3 * dry_matter_fraction(m_db)
}

/// Check a bulk-density line (see [`bulk_density_kg_per_m3`]) for a crop file: reference density within
/// 50–1500 kg/m³, moisture range ordered and non-negative, and density within 50–1500 kg/m³ at both ends of
/// `[m_min_db, m_max_db]` (the line is linear, so the ends bound it). The bounds are generous sanity limits (own
/// choice): every seed and pod bulk density in DOMAIN.md §4 lies inside them.
pub fn check_bulk_density_line(
    ref_density_kg_per_m3: f64,
    ref_m_db: f64,
    slope_kg_per_m3: f64,
    m_min_db: f64,
    m_max_db: f64,
) -> Result<(), InputError> {
    const LO: f64 = 50.0;
    const HI: f64 = 1500.0;
    crate::error::check_range("bulk density", ref_density_kg_per_m3, LO, HI, "kg/m³")?;
    crate::error::check_range(
        "bulk density reference moisture",
        ref_m_db,
        0.0,
        3.0,
        "kg/kg d.b.",
    )?;
    if !slope_kg_per_m3.is_finite() {
        return Err(InputError::argument(
            "bulk density slope",
            format!("{slope_kg_per_m3} kg/m³"),
            "must be finite",
        ));
    }
    if !(m_min_db.is_finite() && m_max_db.is_finite() && 0.0 <= m_min_db && m_min_db <= m_max_db) {
        return Err(InputError::argument(
            "bulk density moisture range",
            format!("{m_min_db}..{m_max_db} kg/kg d.b."),
            "must be finite, non-negative and ordered",
        ));
    }
    for m in [m_min_db, m_max_db] {
        let rho = bulk_density_kg_per_m3(ref_density_kg_per_m3, ref_m_db, slope_kg_per_m3, m);
        if !(LO..=HI).contains(&rho) {
            return Err(InputError::argument(
                "bulk density slope",
                format!("{slope_kg_per_m3} kg/m³"),
                &format!(
                    "gives {rho:.1} kg/m³ at moisture {m} d.b.; the line must stay within {LO}–{HI} kg/m³"
                ),
            ));
        }
    }
    Ok(())
}

/// Half-width of the temperature step of the central difference, K (DOMAIN.md §4: ±1 K).
pub const OTHMER_STEP_K: f64 = 1.0;

/// Ratio of the latent heat of bound water to that of free water at (`t_c`, `m_db`), by the Othmer /
/// Clausius–Clapeyron method: h_fg/h_fg,water = d ln p_v / d ln p_s at constant M, with p_v = ERH(T, M)·p_s(T).
///
/// `erh(t_c, m_db)` is the isotherm's equilibrium relative humidity (decimal, in (0, 1]) with moisture in
/// **decimal dry basis**; a closure adapts constant sets written for percent moisture. The derivative is a central
/// difference over T ± [`OTHMER_STEP_K`]. For a desorption isotherm whose ERH rises with temperature at constant
/// moisture the ratio is ≥ 1, and it tends to 1 as the product approaches free water (ERH → 1). An `erh` that
/// returns 0, a negative number or NaN gives NaN or an infinite ratio, never a plausible-looking number; the layer
/// model's physical checks catch it.
pub fn bound_water_latent_heat_ratio(erh: impl Fn(f64, f64) -> f64, t_c: f64, m_db: f64) -> f64 {
    let (t_lo, t_hi) = (t_c - OTHMER_STEP_K, t_c + OTHMER_STEP_K);
    let ln_ps_lo = saturation_pressure_pa(t_lo).ln();
    let ln_ps_hi = saturation_pressure_pa(t_hi).ln();
    let ln_pv_lo = erh(t_lo, m_db).ln() + ln_ps_lo;
    let ln_pv_hi = erh(t_hi, m_db).ln() + ln_ps_hi;
    (ln_pv_hi - ln_pv_lo) / (ln_ps_hi - ln_ps_lo)
}

/// Latent heat of vaporisation of bound water, J/kg: [`bound_water_latent_heat_ratio`] × the latent heat of free
/// water at `t_c` ([`latent_heat_water_j_per_kg`]).
pub fn bound_water_latent_heat_j_per_kg(erh: impl Fn(f64, f64) -> f64, t_c: f64, m_db: f64) -> f64 {
    bound_water_latent_heat_ratio(erh, t_c, m_db) * latent_heat_water_j_per_kg(t_c)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn free_water_has_ratio_one() {
        // An isotherm that is saturated at every moisture: bound water behaves as free water.
        assert_relative_eq!(
            bound_water_latent_heat_ratio(|_, _| 1.0, 30.0, 0.2),
            1.0,
            max_relative = 1e-12
        );
        // A temperature-independent ERH shifts ln p_v by a constant: ratio exactly 1 too.
        assert_relative_eq!(
            bound_water_latent_heat_ratio(|_, m| m / (1.0 + m), 30.0, 0.2),
            1.0,
            max_relative = 1e-12
        );
    }

    #[test]
    fn bad_isotherm_gives_no_plausible_number() {
        assert!(bound_water_latent_heat_ratio(|_, _| 0.0, 30.0, 0.1).is_nan());
        assert!(bound_water_latent_heat_ratio(|_, _| f64::NAN, 30.0, 0.1).is_nan());
        assert!(
            !bound_water_latent_heat_ratio(|t, _| if t > 30.0 { 0.5 } else { 0.0 }, 30.0, 0.1)
                .is_finite()
        );
    }
}
