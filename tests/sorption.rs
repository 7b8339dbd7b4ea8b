//! Equilibrium moisture: the isotherm forms reproduce published (or documented) check points, every form's ERH
//! inverts its EMC, and EMC rises with RH and falls with temperature. These are the properties the deep-bed model
//! leans on: a wrong basis (percent vs decimal) or a bad inverse shows up here first.
#![deny(clippy::float_cmp)]

use approx::assert_abs_diff_eq;
use dryfront::crop::Crop;
use dryfront::props::sorption::{Isotherm, MoistureUnit, Sorption, RH_MAX, RH_MIN, U_MAX, U_MIN};
use dryfront::units::{db_from_wb, wb_from_db};
use proptest::prelude::*;

fn crop(name: &str) -> Crop {
    Crop::load_named(name).expect("built-in crop loads")
}

/// Modified Chung-Pfost corn constants as printed in DOMAIN.md §2.2 (ASAE D245, from memory, unverified).
const CORN_CHUNG_PFOST: Isotherm = Isotherm::ModifiedChungPfost {
    a: 312.40,
    b: 16.958,
    c: 30.205,
    unit: MoistureUnit::DecimalDb,
};

/// Shape-only constants for forms with no project crop (round-trip and monotonicity tests only; not crop data).
const SHAPE_OSWIN: Isotherm = Isotherm::ModifiedOswin {
    a: 15.0,
    b: -0.07,
    c: 3.0,
    unit: MoistureUnit::PercentDb,
};
const SHAPE_GAB: Isotherm = Isotherm::ModifiedGab {
    a: 0.06,
    b: 0.8,
    c: 300.0,
    unit: MoistureUnit::DecimalDb,
};

fn all_forms() -> Vec<(&'static str, Isotherm)> {
    vec![
        (
            "corn henderson",
            crop("shelled-corn").moisture.kernel().sorption.desorption,
        ),
        ("corn chung-pfost", CORN_CHUNG_PFOST),
        (
            "soybean halsey",
            crop("soybeans").moisture.kernel().sorption.desorption,
        ),
        ("shape oswin", SHAPE_OSWIN),
        ("shape gab", SHAPE_GAB),
        (
            "peanut kernel cromarty",
            crop("peanut-inshell").moisture.kernel().sorption.desorption,
        ),
        (
            "peanut hull proxy",
            crop("peanut-inshell").moisture.hull().sorption.desorption,
        ),
    ]
}

// Check points (T °C, RH, EMC % d.b.): DOMAIN.md §2.2, computed from the D245 constants (from memory, unverified;
// three independent remembered sets agree within ~0.5 point). Printed to 2 decimals, so tolerance 0.006 point.
const CORN_POINTS: [(f64, f64, f64, f64); 5] = [
    // (T, RH, Henderson, Chung-Pfost)
    (10.0, 0.80, 21.76, 20.94),
    (25.0, 0.60, 14.26, 14.18),
    (25.0, 0.75, 17.81, 17.57),
    (35.0, 0.50, 11.48, 11.40),
    (35.0, 0.30, 8.04, 8.14),
];

#[test]
fn corn_henderson_from_crop_file_matches_d245_check_points() {
    let iso = crop("shelled-corn").moisture.kernel().sorption.desorption;
    assert_eq!(iso.unit(), MoistureUnit::PercentDb);
    for (t, rh, henderson, _) in CORN_POINTS {
        assert_abs_diff_eq!(100.0 * iso.emc_db(t, rh), henderson, epsilon = 0.006);
    }
}

#[test]
fn corn_chung_pfost_matches_d245_check_points() {
    for (t, rh, _, chung_pfost) in CORN_POINTS {
        assert_abs_diff_eq!(
            100.0 * CORN_CHUNG_PFOST.emc_db(t, rh),
            chung_pfost,
            epsilon = 0.006
        );
    }
}

#[test]
fn peanut_kernel_matches_cromarty_table() {
    // Source: Cromarty, Ellis & Roberts (1982) seed equation (published form), D_o = 0.48; table in DOMAIN.md
    // §2.3 computed from that form. Printed to 2 decimals: tolerance 0.006 point.
    let iso = crop("peanut-inshell").moisture.kernel().sorption.desorption;
    let table = [
        (15.0, 0.80, 10.92, 9.85),
        (25.0, 0.50, 6.59, 6.18),
        (25.0, 0.60, 7.58, 7.04),
        (25.0, 0.70, 8.69, 7.99),
        (25.0, 0.80, 10.04, 9.13),
        (25.0, 0.85, 10.90, 9.83),
        (35.0, 0.40, 5.24, 4.98),
        (35.0, 0.60, 7.01, 6.55),
    ];
    for (t, rh, db_pct, wb_pct) in table {
        let m = iso.emc_db(t, rh);
        assert_abs_diff_eq!(100.0 * m, db_pct, epsilon = 0.006);
        assert_abs_diff_eq!(100.0 * wb_from_db(m), wb_pct, epsilon = 0.006);
    }
}

#[test]
fn peanut_kernel_erh_matches_inverse_check_values() {
    // Source: DOMAIN.md §2.3 inverse check (same Cromarty form), printed to whole percent: tolerance 0.6 point.
    let iso = crop("peanut-inshell").moisture.kernel().sorption.desorption;
    for (m_wb, t, rh_pct) in [
        (0.105, 20.0, 87.0),
        (0.105, 30.0, 91.0),
        (0.07, 20.0, 56.0),
        (0.07, 30.0, 62.0),
    ] {
        assert_abs_diff_eq!(100.0 * iso.erh(t, db_from_wb(m_wb)), rh_pct, epsilon = 0.6);
    }
}

#[test]
fn hull_proxy_is_wetter_than_kernel_as_documented() {
    // DOMAIN.md §2.3: oil-free proxy gives 12.7 % w.b. at 25 °C / 60 % (unvalidated proxy, from memory).
    let peanut = crop("peanut-inshell");
    let hull = peanut.moisture.hull().sorption.desorption;
    assert_abs_diff_eq!(
        100.0 * wb_from_db(hull.emc_db(25.0, 0.60)),
        12.7,
        epsilon = 0.05
    );
    assert!(
        hull.emc_db(25.0, 0.6)
            > peanut
                .moisture
                .kernel()
                .sorption
                .desorption
                .emc_db(25.0, 0.6)
    );
}

#[test]
fn soybean_halsey_agrees_with_extension_conditioning_rule() {
    // Source: NDSU Extension (Hellevang, 2022 news release): air at 70–75 % RH and 30–60 °F conditions soybeans
    // to 13 % w.b. Middle of that window, 72 % RH at 7 °C (45 °F): within 0.5 point of 13 %.
    let iso = crop("soybeans").moisture.kernel().sorption.desorption;
    assert_abs_diff_eq!(
        100.0 * wb_from_db(iso.emc_db(7.0, 0.72)),
        13.0,
        epsilon = 0.5
    );
}

#[test]
fn extremes_are_clamped_not_nan() {
    for (name, iso) in all_forms() {
        for rh in [-0.5, 0.0, 1e-12, 1.0, 1.5] {
            let m = iso.emc_db(25.0, rh);
            assert!(m.is_finite() && m >= 0.0, "{name} rh={rh}: {m}");
        }
        for m in [-1.0, 0.0, 1e-9, 3.0, f64::NAN] {
            let rh = iso.erh(25.0, m);
            assert!((0.0..=1.0).contains(&rh), "{name} m={m}: {rh}");
        }
        assert!(iso.emc_db(-80.0, 0.5).is_finite(), "{name}");
    }
}

#[test]
fn hysteresis_band_holds_product_still() {
    let s = Sorption {
        desorption: CORN_CHUNG_PFOST,
        adsorption_offset_db: 0.01,
    };
    let des = s.emc_desorption_db(25.0, 0.6);
    assert_abs_diff_eq!(s.emc_adsorption_db(25.0, 0.6), des - 0.01, epsilon = 1e-15);
    assert_abs_diff_eq!(s.target_db(25.0, 0.6, des + 0.05), des, epsilon = 1e-15);
    assert_abs_diff_eq!(
        s.target_db(25.0, 0.6, des - 0.005),
        des - 0.005,
        epsilon = 1e-15
    );
    assert_abs_diff_eq!(
        s.target_db(25.0, 0.6, des - 0.05),
        des - 0.01,
        epsilon = 1e-15
    );
}

proptest! {
    #[test]
    fn erh_inverts_emc_for_every_form(rh in 0.05..0.95f64, t_c in 5.0..60.0f64) {
        for (name, iso) in all_forms() {
            let m = iso.emc_db(t_c, rh);
            prop_assert!(m > 0.0, "{} gave {} at {} °C {}", name, m, t_c, rh);
            let back = iso.erh(t_c, m);
            prop_assert!((back - rh).abs() < 1e-9, "{}: rh {} -> m {} -> rh {}", name, rh, m, back);
        }
    }

    #[test]
    fn emc_rises_with_rh_and_falls_with_temperature(rh in 0.05..0.9f64, t_c in 5.0..55.0f64) {
        for (name, iso) in all_forms() {
            let m = iso.emc_db(t_c, rh);
            prop_assert!(iso.emc_db(t_c, rh + 0.05) > m, "{} not rising with RH", name);
            prop_assert!(iso.emc_db(t_c + 5.0, rh) < m, "{} not falling with T", name);
        }
    }

    /// The log-complement forms the pod step chains hull → kernel through agree with `erh` / `emc_db`, and their
    /// analytic slopes agree with central differences of those functions (relative 1e-5: the difference's own
    /// truncation and rounding error at a step of 1e-5 of the argument).
    #[test]
    fn log_complement_forms_match_erh_emc_and_their_slopes(rh in 0.05..0.95f64, t_c in 5.0..60.0f64) {
        for (name, iso) in all_forms() {
            let m = iso.emc_db(t_c, rh);
            let (u, du_dm) = iso.erh_log_complement(t_c, m);
            let erh = iso.erh(t_c, m);
            prop_assert!((-(-u).exp_m1() - erh).abs() < 1e-12, "{}: u {} vs erh {}", name, u, erh);
            let h = 1e-5 * m;
            let u_of = |m: f64| -(-iso.erh(t_c, m)).ln_1p();
            let fd = (u_of(m + h) - u_of(m - h)) / (2.0 * h);
            prop_assert!((du_dm - fd).abs() <= 1e-5 * fd.abs(), "{}: du/dm {} vs {}", name, du_dm, fd);

            let (m2, dm_du) = iso.emc_from_log_complement(t_c, u);
            prop_assert!((m2 - m).abs() <= 1e-10 * m, "{}: emc {} vs {}", name, m2, m);
            let hu = 1e-5 * u;
            let m_of = |u: f64| iso.emc_db(t_c, -(-u).exp_m1());
            let fd = (m_of(u + hu) - m_of(u - hu)) / (2.0 * hu);
            prop_assert!((dm_du - fd).abs() <= 1e-5 * fd.abs(), "{}: dm/du {} vs {}", name, dm_du, fd);
        }
    }
}

#[test]
fn log_complement_clamps_like_erh_and_emc() {
    for (name, iso) in all_forms() {
        assert_eq!(iso.erh_log_complement(25.0, 0.0), (0.0, 0.0), "{name}");
        assert_eq!(iso.erh_log_complement(25.0, -0.1), (0.0, 0.0), "{name}");
        // Far above saturation: capped and flat where the ERH form has saturated, else still consistent with it.
        let (u, s) = iso.erh_log_complement(25.0, 50.0);
        let erh = iso.erh(25.0, 50.0);
        if erh >= 1.0 {
            assert!(u >= U_MAX && s == 0.0, "{name}: {u} {s}");
        } else {
            assert!((-(-u).exp_m1() - erh).abs() < 1e-12, "{name}: {u} vs {erh}");
        }
        // Beyond the RH clamp the EMC is flat and equals emc_db at the clamp.
        let (m, s) = iso.emc_from_log_complement(25.0, 40.0);
        assert!(
            (m - iso.emc_db(25.0, 1.0)).abs() <= 1e-12 * m && s == 0.0,
            "{name}: {m} {s}"
        );
        let (m, s) = iso.emc_from_log_complement(25.0, 0.0);
        assert!(
            (m - iso.emc_db(25.0, 0.0)).abs() <= 1e-9 * m.max(1e-12) && s == 0.0,
            "{name}: {m} {s}"
        );
    }
}

#[test]
fn log_complement_bounds_are_those_of_the_rh_clamp() {
    // U_MIN and U_MAX are written out (no `ln` in a const); they must stay −ln(1 − RH) of the RH clamp.
    assert!((U_MIN / -(-RH_MIN).ln_1p() - 1.0).abs() < 1e-15);
    assert!((U_MAX / -(-RH_MAX).ln_1p() - 1.0).abs() < 1e-15);
}
