//! Fan operating point: for a uniform bed over a uniform plenum, the solver's flow must be where the fan curve
//! (density-corrected, DOMAIN.md §8.1) meets the system curve — transition loss + floor orifice + Shedd bed — as
//! found here independently by bisection. Also: a fixed flow beyond what the fan can push is reported, not
//! silently clipped.
mod common;

use approx::assert_relative_eq;
use dryfront::airflow::{
    solve, AirPath, AirflowError, Fill, FlowSpec, Grid, PlenumModel, SolverSettings,
};
use dryfront::props::resistance::floor_pressure_drop_pa;
use dryfront::props::resistance::Shedd;

#[test]
fn solved_point_matches_independent_intersection() {
    let mut c = common::container("trailer-6m");
    c.permeability = Default::default();
    c.leakage_m3_per_s_per_sqrt_pa = 0.0;
    let fan = common::fan("vane-3kw");
    let air = common::air();
    let rho = air.density_kg_per_m3();
    let settings = SolverSettings {
        grid: Grid {
            nx: 8,
            ny: 4,
            nz: 8,
        },
        plenum: PlenumModel::Uniform,
        ..SolverSettings::default()
    };
    let s = solve(
        &c,
        &FlowSpec::Fan(fan.clone()),
        &common::peanut(1.5),
        &AirPath::same(air),
        &settings,
    )
    .unwrap();

    // Independent system curve: Shedd a = 3.80e3, b = 111 (DOMAIN.md §1.1, from memory) × 1.5 packing × 1.25 m,
    // floor orifice (DOMAIN.md §1.4), transition loss K·ρu²/2 on the inlet velocity.
    let shedd = Shedd {
        a: 3.80e3,
        b: 111.0,
    };
    let area = c.floor_area_m2();
    let a_in = c.inlet_area_m2();
    let k_t = c.inlet.transition_loss_coefficient;
    let system = |q: f64| {
        let v = q / area;
        1.5 * shedd.pressure_gradient_pa_per_m(v) * 1.25
            + floor_pressure_drop_pa(v, 0.20, 0.6, rho)
            + k_t * 0.5 * rho * (q / a_in).powi(2)
    };
    let (mut lo, mut hi) = (150.0 / 60.0, 395.0 / 60.0);
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if fan.pressure_pa(mid, rho) > system(mid) {
            lo = mid
        } else {
            hi = mid
        }
    }
    let q_star = 0.5 * (lo + hi);
    eprintln!(
        "solver {} m³/min, independent {} m³/min",
        s.operating_point.fan_flow_m3_per_s * 60.0,
        q_star * 60.0
    );
    assert_relative_eq!(
        s.operating_point.fan_flow_m3_per_s,
        q_star,
        max_relative = 1e-5
    );
    assert_relative_eq!(
        s.operating_point.fan_static_pressure_pa,
        system(q_star),
        max_relative = 1e-4
    );
}

#[test]
fn lighter_air_moves_the_point_to_less_flow() {
    // P ∝ ρ at the same flow (DOMAIN.md §8.1) while the bed's resistance does not depend on ρ: hot air → less flow.
    let c = common::container("wagon-4m");
    let fan = common::fan("vane-3kw");
    let settings = SolverSettings {
        grid: Grid {
            nx: 8,
            ny: 4,
            nz: 6,
        },
        ..SolverSettings::default()
    };
    let cool = dryfront::props::psychro::AirState::from_rh(15.0, 0.6, 101_325.0);
    let hot = dryfront::props::psychro::AirState::from_rh(45.0, 0.2, 101_325.0);
    let a = solve(
        &c,
        &FlowSpec::Fan(fan.clone()),
        &common::peanut(1.5),
        &AirPath::same(cool),
        &settings,
    )
    .unwrap();
    let b = solve(
        &c,
        &FlowSpec::Fan(fan),
        &common::peanut(1.5),
        &AirPath::same(hot),
        &settings,
    )
    .unwrap();
    assert!(b.operating_point.fan_flow_m3_per_s < a.operating_point.fan_flow_m3_per_s);
}

#[test]
fn a_load_too_deep_for_the_fan_is_an_error() {
    // A bed far tighter than peanuts (a Darcy resistivity of 1e5 Pa·s/m², like fine seed): the fan's first
    // rating point (150 m³/min, 470 Pa) cannot push even that flow through it.
    let mut c = common::container("semi-14m");
    c.fill = Fill::Level { depth_m: 2.4 };
    let settings = SolverSettings {
        grid: Grid {
            nx: 12,
            ny: 3,
            nz: 6,
        },
        ..SolverSettings::default()
    };
    let fan = common::fan("vane-3kw");
    let law = dryfront::airflow::BedLaw {
        law: dryfront::airflow::ResistanceLaw::Darcy {
            resistivity_pa_s_per_m2: 1e5,
        },
        packing_factor: 1.0,
        horizontal_ratio: 1.0,
    };
    let e = solve(
        &c,
        &FlowSpec::Fan(fan),
        &law,
        &AirPath::same(common::air()),
        &settings,
    )
    .unwrap_err();
    assert!(matches!(e, AirflowError::OffCurve { .. }), "{e}");
    assert!(e.to_string().contains("cannot push air"), "{e}");
}
