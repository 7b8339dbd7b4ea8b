//! Bed and floor resistance must reproduce their reference curves and invert exactly, because the airflow solver
//! evaluates the inverse (velocity from pressure gradient) in its inner loop and the fan operating point depends
//! on the forward curve.
//!
//! Sources, each named beside its check: DOMAIN.md §1.1 (Shedd constants for peanuts, corn, soybeans and the table
//! computed from them — constants from memory, unverified), §1.2 (D272.3 factors), §1.4 (orifice stand-in check),
//! §1.5 (Ergun fit values — computed from the remembered Shedd constants), and one fact of the trade.
#![deny(clippy::float_cmp)]

use approx::assert_relative_eq;
use dryfront::error::InputError;
use dryfront::props::resistance::*;
use proptest::prelude::*;

// DOMAIN.md §1.1 constants [from memory, unverified].
const PEANUT: Shedd = Shedd {
    a: 3.80e3,
    b: 111.0,
};
const CORN: Shedd = Shedd { a: 2.07e4, b: 30.4 };
const SOYBEAN: Shedd = Shedd { a: 1.02e4, b: 16.0 };
/// Air at 30 °C (DOMAIN.md §1.5).
const MU_PA_S: f64 = 1.85e-5;
const RHO_KG_PER_M3: f64 = 1.16;

// Source: DOMAIN.md §1.1 check table (computed there from the remembered D272 constants, so it verifies the
// formula and its SI units, not the constants). Printed to 0.1 Pa/m: tolerance 0.06 Pa/m.
#[test]
fn shedd_gradient_matches_domain_table_for_peanuts_corn_soybeans() {
    let table: [(f64, [f64; 3]); 4] = [
        (0.05, [5.1, 56.0, 43.4]),
        (0.10, [15.2, 148.3, 106.7]),
        (0.20, [48.3, 423.0, 284.3]),
        (0.30, [96.7, 804.9, 522.2]),
    ];
    for (q, expected) in table {
        for (law, pa_per_m) in [PEANUT, CORN, SOYBEAN].iter().zip(expected) {
            let g = law.pressure_gradient_pa_per_m(q);
            assert!(
                (g - pa_per_m).abs() <= 0.06,
                "q = {q}: {g} vs {pa_per_m} ({law:?})"
            );
        }
    }
}

// Source: DOMAIN.md §1.1 sanity line, corn at 10 cfm/ft² (0.0508 m/s) ≈ 0.07 in. water per ft [from memory,
// unverified]. 1 in. water = 249.09 Pa, 1 ft = 0.3048 m. Tolerance 15 % (a value read off a chart).
#[test]
fn shedd_corn_matches_familiar_chart_value() {
    let in_water_per_ft = CORN.pressure_gradient_pa_per_m(0.0508) * 0.3048 / 249.09;
    assert_relative_eq!(in_water_per_ft, 0.07, max_relative = 0.15);
}

// Source: DOMAIN.md §1.1 bed check, 1.3 m at 10 m³/min per m³ → Q = 0.217 m/s, ΔP/L = 55 Pa/m, ≈ 72 Pa loose and
// ≈ 108 Pa with a 1.5 packing factor. Tolerance 2 % (values printed to 2–3 figures).
#[test]
fn shedd_wagon_bed_check_with_and_without_packing() {
    let q = 1.3 * 10.0 / 60.0;
    assert_relative_eq!(q, 0.217, max_relative = 2e-3);
    let loose = BedAirflowLaw::new(BedResistance::Shedd(PEANUT), 1.0).unwrap();
    let packed = BedAirflowLaw::with_factors(BedResistance::Shedd(PEANUT), 1.5, 1.0).unwrap();
    assert_relative_eq!(
        loose.pressure_gradient_pa_per_m(q),
        55.0,
        max_relative = 0.02
    );
    assert_relative_eq!(
        1.3 * loose.pressure_gradient_pa_per_m(q),
        72.0,
        max_relative = 0.02
    );
    assert_relative_eq!(
        1.3 * packed.pressure_gradient_pa_per_m(q),
        108.0,
        max_relative = 0.02
    );
}

// Fact of the trade [common practice, no source]: a 1.25 m bed of in-shell peanuts at about 0.25 m/s loses on the
// order of 100 Pa. Assumed: loose fill (packing 1.0) and D272.3's upper packing 1.5, no moisture factor. Computed:
// 88 Pa and 133 Pa. Window 50–200 Pa.
#[test]
fn peanut_bed_loses_on_the_order_of_100_pa() {
    for packing in [1.0, 1.5] {
        let law = BedAirflowLaw::with_factors(BedResistance::Shedd(PEANUT), packing, 1.0).unwrap();
        let dp_pa = 1.25 * law.pressure_gradient_pa_per_m(0.25);
        assert!(
            (50.0..=200.0).contains(&dp_pa),
            "packing {packing}: {dp_pa} Pa"
        );
    }
}

// Source: DOMAIN.md §1.4 check for the orifice stand-in: Q = 0.22 m/s, C_d = 0.6, ρ = 1.16 kg/m³ → ≈ 2.0 Pa at
// φ = 0.20 and ≈ 7.8 Pa at φ = 0.10. The printed values are rounded (1.95 → 2.0): tolerance 3 %.
#[test]
fn floor_drop_matches_domain_orifice_check() {
    assert_relative_eq!(
        floor_pressure_drop_pa(0.22, 0.20, 0.6, 1.16),
        2.0,
        max_relative = 0.03
    );
    assert_relative_eq!(
        floor_pressure_drop_pa(0.22, 0.10, 0.6, 1.16),
        7.8,
        max_relative = 0.03
    );
    let floor = PerforatedFloor::new(0.10, 0.6).unwrap();
    assert_relative_eq!(floor.pressure_drop_pa(0.22, 1.16), 7.8, max_relative = 0.03);
    // Halving the open area quadruples the drop (orifice law).
    assert_relative_eq!(
        floor_pressure_drop_pa(0.22, 0.10, 0.6, 1.16)
            / floor_pressure_drop_pa(0.22, 0.20, 0.6, 1.16),
        4.0,
        max_relative = 1e-12
    );
}

// Source: DOMAIN.md §1.5 fit values (computed there from the remembered peanut Shedd constants at Q = 0.2 m/s,
// μ = 1.85e-5 Pa·s, ρ = 1.16 kg/m³): ε = 0.45 → d_p = 13.1 mm, 0.50 → 9.2 mm, 0.55 → 6.6 mm. Printed to 0.1 mm:
// tolerance 0.06 mm.
#[test]
fn ergun_fit_to_peanut_shedd_matches_domain_diameters() {
    for (eps, d_mm) in [(0.45, 13.1), (0.50, 9.2), (0.55, 6.6)] {
        let e = Ergun::fit_to_shedd(&PEANUT, eps, 0.2, MU_PA_S, RHO_KG_PER_M3).unwrap();
        assert!(
            (e.particle_diameter_m * 1000.0 - d_mm).abs() <= 0.06,
            "ε = {eps}: {e:?}"
        );
        // Exact at the reference velocity.
        assert_relative_eq!(
            e.pressure_gradient_pa_per_m(0.2),
            PEANUT.pressure_gradient_pa_per_m(0.2),
            max_relative = 1e-12
        );
    }
}

// Source: DOMAIN.md §1.5, "within ±4 % over 0.05–0.3 for ε = 0.45". Measured here: −3.0 % at 0.1 m/s and +4.06 %
// at 0.3 m/s, so the printed ±4 % is rounded; the test allows 4.5 %.
#[test]
fn ergun_fit_tracks_shedd_over_the_peanut_range() {
    let e = Ergun::fit_to_shedd(&PEANUT, 0.45, 0.2, MU_PA_S, RHO_KG_PER_M3).unwrap();
    let mut worst: f64 = 0.0;
    for i in 0..=25 {
        let q = 0.05 + 0.01 * f64::from(i);
        let rel = e.pressure_gradient_pa_per_m(q) / PEANUT.pressure_gradient_pa_per_m(q) - 1.0;
        worst = worst.max(rel.abs());
    }
    assert!(worst <= 0.045, "{worst}");
    assert!(
        worst >= 0.03,
        "the fit is not exact away from Q_ref: {worst}"
    );
}

// Ergun's two terms are the textbook ones: A = 150 μ (1−ε)²/(ε³ d²), B = 1.75 ρ (1−ε)/(ε³ d). Check by hand at
// ε = 0.5, d = 10 mm: A = 150·1.85e-5·0.25/(0.125·1e-4) = 55.5 Pa·s/m², B = 1.75·1.16·0.5/(0.125·0.01) = 812 Pa·s²/m³.
#[test]
fn ergun_coefficients_match_hand_calculation() {
    let e = Ergun::new(0.5, 0.010, MU_PA_S, RHO_KG_PER_M3).unwrap();
    assert_relative_eq!(e.viscous_coefficient(), 55.5, max_relative = 1e-12);
    assert_relative_eq!(e.inertial_coefficient(), 812.0, max_relative = 1e-12);
    assert_relative_eq!(
        e.pressure_gradient_pa_per_m(0.2),
        55.5 * 0.2 + 812.0 * 0.04,
        max_relative = 1e-12
    );
    assert_relative_eq!(e.resistivity(0.0), 55.5, max_relative = 1e-12);
}

#[test]
fn bed_resistance_enum_delegates_to_its_law() {
    let e = Ergun::new(0.5, 0.010, MU_PA_S, RHO_KG_PER_M3).unwrap();
    for q in [0.0, 0.03, 0.2, 0.4] {
        let s = BedResistance::Shedd(PEANUT);
        assert_relative_eq!(
            s.pressure_gradient_pa_per_m(q),
            PEANUT.pressure_gradient_pa_per_m(q)
        );
        assert_relative_eq!(s.resistivity(q), PEANUT.resistivity(q));
        let g = 10.0 + 100.0 * q;
        assert_relative_eq!(
            s.velocity_from_gradient(g),
            PEANUT.velocity_from_gradient(g)
        );
        let b = BedResistance::Ergun(e);
        assert_relative_eq!(
            b.pressure_gradient_pa_per_m(q),
            e.pressure_gradient_pa_per_m(q)
        );
        assert_relative_eq!(b.resistivity(q), e.resistivity(q));
        assert_relative_eq!(b.velocity_from_gradient(g), e.velocity_from_gradient(g));
    }
}

// Source: ASAE D272.3 notes as in DOMAIN.md §1.2: 0.80 for clean loose high-moisture fill (ERH > 85 %), packing up
// to 1.5. The multiplier scales ΔP; permeability scales by its inverse.
#[test]
fn d272_factors_scale_pressure_drop_and_permeability_inversely() {
    assert_relative_eq!(d272_moisture_factor(0.90), 0.80);
    assert_relative_eq!(d272_moisture_factor(0.80), 1.0);
    let base = BedAirflowLaw::new(BedResistance::Shedd(PEANUT), 1.0).unwrap();
    let wet = BedAirflowLaw::with_factors(BedResistance::Shedd(PEANUT), 1.5, HIGH_MOISTURE_FACTOR)
        .unwrap();
    assert_relative_eq!(wet.multiplier(), 1.2, max_relative = 1e-12);
    assert_relative_eq!(
        wet.permeability_multiplier(),
        1.0 / 1.2,
        max_relative = 1e-12
    );
    for q in [0.05, 0.2, 0.3] {
        assert_relative_eq!(
            wet.pressure_gradient_pa_per_m(q),
            1.2 * base.pressure_gradient_pa_per_m(q),
            max_relative = 1e-12
        );
        assert_relative_eq!(
            wet.resistivity(q),
            1.2 * base.resistivity(q),
            max_relative = 1e-12
        );
    }
    // A cell twice as resistant as its bed.
    let cell = wet.scaled(2.0).unwrap();
    assert_relative_eq!(cell.multiplier(), 2.4, max_relative = 1e-12);
    let g = cell.pressure_gradient_pa_per_m(0.2);
    assert_relative_eq!(cell.velocity_from_gradient(g), 0.2, max_relative = 1e-12);
}

// An isotropic law must give u = −∇P/K along ∇P; an anisotropic one must satisfy −∇P = K·u component-wise with
// K_h = r·K_v(|u|). Checked by re-evaluating the forward law at the returned velocity.
#[test]
fn anisotropic_velocity_satisfies_the_resistance_tensor() {
    let law = BedAirflowLaw::new(BedResistance::Shedd(PEANUT), 1.3)
        .unwrap()
        .with_horizontal_ratio(0.6)
        .unwrap();
    assert_relative_eq!(law.horizontal_ratio(), 0.6);
    let grad = [-20.0, 5.0, -40.0];
    let u = law.velocity_from_gradient_xyz(grad);
    let speed = (u[0] * u[0] + u[1] * u[1] + u[2] * u[2]).sqrt();
    let k_v = law.resistivity(speed);
    assert_relative_eq!(-grad[0], 0.6 * k_v * u[0], max_relative = 1e-10);
    assert_relative_eq!(-grad[1], 0.6 * k_v * u[1], max_relative = 1e-10);
    assert_relative_eq!(-grad[2], k_v * u[2], max_relative = 1e-10);
    // Lower horizontal resistance lets more air go sideways than an isotropic bed would.
    let iso = BedAirflowLaw::new(BedResistance::Shedd(PEANUT), 1.3).unwrap();
    assert_relative_eq!(iso.horizontal_ratio(), PEANUT_HORIZONTAL_RATIO);
    let u_iso = iso.velocity_from_gradient_xyz(grad);
    assert!(u[0] / u[2] > u_iso[0] / u_iso[2]);
    assert!(law
        .velocity_from_gradient_xyz([0.0; 3])
        .iter()
        .all(|c| c.abs() < f64::MIN_POSITIVE));
}

fn is_argument_error(r: Result<impl std::fmt::Debug, InputError>, name: &str) -> bool {
    match r {
        Err(InputError::Argument { name: n, .. }) => n.contains(name),
        _ => false,
    }
}

#[test]
fn constructors_reject_unphysical_arguments_with_named_errors() {
    assert!(is_argument_error(Shedd::new(0.0, 111.0), "shedd a"));
    assert!(is_argument_error(Shedd::new(3800.0, -1.0), "shedd b"));
    assert!(is_argument_error(Shedd::new(f64::NAN, 111.0), "shedd a"));
    assert!(Shedd::new(3800.0, 111.0).is_ok());
    assert!(is_argument_error(
        Ergun::new(1.0, 0.01, MU_PA_S, RHO_KG_PER_M3),
        "porosity"
    ));
    assert!(is_argument_error(
        Ergun::new(0.0, 0.01, MU_PA_S, RHO_KG_PER_M3),
        "porosity"
    ));
    assert!(is_argument_error(
        Ergun::new(0.5, 0.0, MU_PA_S, RHO_KG_PER_M3),
        "particle_diameter_m"
    ));
    assert!(is_argument_error(
        Ergun::new(0.5, 0.01, -1.0, RHO_KG_PER_M3),
        "viscosity"
    ));
    assert!(is_argument_error(
        Ergun::new(0.5, 0.01, MU_PA_S, f64::INFINITY),
        "density"
    ));
    assert!(is_argument_error(
        Ergun::fit_to_shedd(&PEANUT, 0.5, 0.0, MU_PA_S, RHO_KG_PER_M3),
        "q_ref"
    ));
    assert!(is_argument_error(
        PerforatedFloor::new(0.0, 0.6),
        "open_area_fraction"
    ));
    assert!(is_argument_error(
        PerforatedFloor::new(1.2, 0.6),
        "open_area_fraction"
    ));
    assert!(PerforatedFloor::new(1.0, 0.6).is_ok());
    assert!(is_argument_error(
        PerforatedFloor::new(0.2, 0.0),
        "discharge_coefficient"
    ));
    let law = BedResistance::Shedd(PEANUT);
    assert!(is_argument_error(
        BedAirflowLaw::with_factors(law, 0.9, 1.0),
        "packing factor"
    ));
    assert!(is_argument_error(
        BedAirflowLaw::with_factors(law, 1.2, 1.1),
        "moisture factor"
    ));
    assert!(is_argument_error(
        BedAirflowLaw::new(law, 0.0),
        "resistance multiplier"
    ));
    let ok = BedAirflowLaw::new(law, 1.0).unwrap();
    assert!(is_argument_error(
        ok.with_horizontal_ratio(0.0),
        "horizontal resistance ratio"
    ));
    assert!(is_argument_error(
        ok.with_horizontal_ratio(3.0),
        "horizontal resistance ratio"
    ));
    assert!(is_argument_error(
        ok.scaled(-1.0),
        "cell resistance multiplier"
    ));
    assert!(is_argument_error(ok.scaled(1e6), "resistance multiplier"));
    let bad = BedResistance::Shedd(Shedd { a: 3800.0, b: 0.0 });
    assert!(is_argument_error(BedAirflowLaw::new(bad, 1.0), "shedd b"));
    // The message names the argument, quotes the value and says what was expected.
    let msg = PerforatedFloor::new(1.2, 0.6).unwrap_err().to_string();
    assert_eq!(
        msg,
        "floor open_area_fraction: 1.2 must be greater than 0 and at most 1"
    );
}

proptest! {
    // Shedd inverse over 1e-6–3 m/s for any plausible crop constants.
    #[test]
    fn shedd_inverse_round_trips(log_q in -6.0..0.5f64, a in 1e3..5e4f64, b in 5.0..200.0f64) {
        let s = Shedd::new(a, b).unwrap();
        let q = 10f64.powf(log_q);
        let back = s.velocity_from_gradient(s.pressure_gradient_pa_per_m(q));
        prop_assert!((back / q - 1.0).abs() < 1e-12, "{} vs {}", back, q);
    }

    // Ergun inverse, including the small-gradient range where the naive quadratic formula cancels.
    #[test]
    fn ergun_inverse_round_trips(log_q in -9.0..0.5f64, eps in 0.3..0.7f64, d_mm in 2.0..30.0f64) {
        let e = Ergun::new(eps, d_mm / 1000.0, MU_PA_S, RHO_KG_PER_M3).unwrap();
        let q = 10f64.powf(log_q);
        let back = e.velocity_from_gradient(e.pressure_gradient_pa_per_m(q));
        prop_assert!((back / q - 1.0).abs() < 1e-13, "{} vs {}", back, q);
    }

    // Scaled law inverse and floor inverse.
    #[test]
    fn scaled_law_and_floor_inverses_round_trip(q in 0.001..0.5f64, m in 0.5..3.0f64, phi in 0.05..1.0f64, cd in 0.5..1.0f64) {
        let law = BedAirflowLaw::new(BedResistance::Shedd(PEANUT), m).unwrap();
        let back = law.velocity_from_gradient(law.pressure_gradient_pa_per_m(q));
        prop_assert!((back / q - 1.0).abs() < 1e-12);
        let dp = floor_pressure_drop_pa(q, phi, cd, RHO_KG_PER_M3);
        let qf = floor_velocity_from_pressure_drop(dp, phi, cd, RHO_KG_PER_M3);
        prop_assert!((qf / q - 1.0).abs() < 1e-13);
    }

    // Pressure gradient rises with flow, and resistivity is non-decreasing (both laws): the solver's Picard
    // iteration relies on it.
    #[test]
    fn gradient_is_monotone_in_flow(q in 0.0..1.0f64, dq in 1e-6..0.1f64) {
        let e = Ergun::new(0.5, 0.0092, MU_PA_S, RHO_KG_PER_M3).unwrap();
        for law in [BedResistance::Shedd(PEANUT), BedResistance::Ergun(e)] {
            prop_assert!(law.pressure_gradient_pa_per_m(q + dq) > law.pressure_gradient_pa_per_m(q));
            prop_assert!(law.resistivity(q + dq) >= law.resistivity(q));
        }
    }
}
