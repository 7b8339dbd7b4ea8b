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

/// Near-saturated night air (16.90 °C, W 0.011964, dew point 16.76 °C) on wet fresh peanuts at 16.78 °C: the state a
/// season's load met in its first step (found when the plenum-dew-point bound stopped it). The lower layers adsorb
/// and warm, and the drier air they pass on cools the layers above below the plenum air's dew point — the
/// desiccant-cooler effect, which the moist-air balances allow (ASHRAE Fundamentals ch. 1: air can be cooled
/// evaporatively to the dew point of the air that reaches the surface, not of some air upstream). Each layer must
/// still end no colder than the dew point of the air entering it.
#[test]
fn layers_above_an_adsorbing_layer_may_cool_below_the_plenum_dew_point_but_not_below_their_own_air()
{
    use dryfront::drying::layer::{step_column, ColumnForcing, ColumnMut, LayerAir};
    use dryfront::props::psychro::{
        dew_point_from_vapour_pressure_c, vapour_pressure_from_humidity_ratio,
    };
    let (_, material) = common::peanut();
    let p_pa = 101_145.0;
    let air_in = LayerAir {
        t_c: 16.902_603_911_290_43,
        w: 0.011_963_685_786_299_277,
    };
    let dew =
        |w: f64| dew_point_from_vapour_pressure_c(vapour_pressure_from_humidity_ratio(w, p_pa));
    let forcing = ColumnForcing {
        air_in,
        dry_air_kg_per_m2_s: 0.269_156,
        p_pa,
        dt_s: 720.0,
    };
    // The first n layers of a column step exactly as an n-layer column: air crosses them bottom to top.
    let step = |n: usize| {
        let (mut h, mut k, mut c, mut t) = (
            vec![0.454_027; n],
            vec![0.236_094; n],
            vec![0.236_094; n],
            vec![16.78; n],
        );
        let d = vec![23.050_2; n];
        let column = ColumnMut {
            hull_db: &mut h,
            kernel_db: &mut k,
            curve_start_db: &mut c,
            temp_c: &mut t,
            dry_matter_kg_per_m2: &d,
        };
        let (out, totals) = step_column(&material, column, forcing);
        (out, totals, t)
    };
    let (_, totals, t) = step(10);
    assert_eq!(totals.below_floor, None, "{t:?}");
    let plenum_dew = dew(air_in.w);
    let cooled: Vec<usize> = (0..10).filter(|&k| t[k] < plenum_dew).collect();
    assert!(
        !cooled.is_empty(),
        "no layer below the plenum dew point {plenum_dew}: {t:?}"
    );
    for &k in &cooled {
        // The air entering layer k is the exhaust of the first k layers: drier than the plenum air (adsorbed
        // below), and layer k ends no colder than its dew point (round-off 1e-9 K, the layer step's own tolerance
        // on saturation).
        let (into, _, _) = step(k);
        assert!(
            into.w < air_in.w,
            "layer {k}: air entering W {} not below the plenum's {}",
            into.w,
            air_in.w
        );
        assert!(
            t[k] >= dew(into.w) - 1e-9,
            "layer {k}: {} below the dew point {} of its air",
            t[k],
            dew(into.w)
        );
    }
}

#[test]
fn a_run_without_the_adiabatic_bound_is_the_same_run() {
    // A season's loads leave the bound off (no season output reads it): that must change nothing but the
    // bound's two figures, which say they were not added up (NaN), not 0.
    let case = Case {
        max_hours: 30.0,
        ..Case::default()
    };
    let (on, _) = case.run();
    let (off, _) = Case {
        adiabatic_bound: false,
        ..case
    }
    .run();
    assert!(on.balances.adiabatic_capacity_kg > 0.0);
    assert!(off.balances.adiabatic_capacity_kg.is_nan());
    assert!(off.balances.max_removal_vs_adiabatic.is_nan());
    let rest = |o: &dryfront::drying::run::Outcome| {
        let balances = dryfront::drying::run::Balances {
            adiabatic_capacity_kg: 0.0,
            max_removal_vs_adiabatic: 0.0,
            ..o.balances
        };
        // Debug prints every float to the bit (and NaN alike), which `==` on the structs would not compare
        format!(
            "{:?}",
            dryfront::drying::run::Outcome {
                balances,
                ..o.clone()
            }
        )
    };
    assert_eq!(rest(&on), rest(&off));
}
