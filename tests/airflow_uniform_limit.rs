//! Uniform limit: a level, uniform bed over a uniform-pressure plenum is a set of identical 1-D columns, so the bed
//! pressure drop must equal Shedd's gradient × depth (× packing), and the floor drop the orifice law — whatever the
//! grid. This ties the 3-D solver to the published relation it is built on.
mod common;

use approx::assert_relative_eq;
use dryfront::airflow::{solve, AirPath, FlowSpec, Grid, PlenumModel, SolverSettings};
use dryfront::props::resistance::floor_pressure_drop_pa;
use dryfront::props::resistance::Shedd;

#[test]
fn uniform_bed_reduces_to_shedd_pressure_drop_times_depth() {
    let mut c = common::container("trailer-6m");
    c.permeability = Default::default();
    c.leakage_m3_per_s_per_sqrt_pa = 0.0;
    let law = common::peanut(1.5);
    let settings = SolverSettings {
        grid: Grid {
            nx: 12,
            ny: 5,
            nz: 10,
        },
        plenum: PlenumModel::Uniform,
        ..SolverSettings::default()
    };
    let q_total = 230.0 / 60.0;
    let s = solve(
        &c,
        &FlowSpec::Fixed {
            total_m3_per_s: q_total,
        },
        &law,
        &AirPath::same(common::air()),
        &settings,
    )
    .unwrap();
    let q = q_total / c.floor_area_m2();
    // Shedd (1953), ASAE D272: ΔP/L = a·Q²/ln(1+bQ); constants from memory (DOMAIN.md §1.1), packing 1.5 (§1.2).
    let shedd = Shedd {
        a: 3.80e3,
        b: 111.0,
    };
    let expected_bed_pa = 1.5 * shedd.pressure_gradient_pa_per_m(q) * 1.25;
    for &v in s.top_velocity_m_per_s.iter() {
        assert_relative_eq!(v, q, max_relative = 1e-6);
    }
    for &p in s.bottom_pressure_pa.iter() {
        assert_relative_eq!(p, expected_bed_pa, max_relative = 0.005);
    }
    // Floor: Δp = ρ/2·(q/(C_d·φ))² (DOMAIN.md §1.4, orifice physics), within 0.5 %.
    let rho = s.summary.plenum_air_density_kg_per_m3;
    let floor_pa = floor_pressure_drop_pa(q, 0.20, 0.6, rho);
    let drop = s.plenum_pressure_pa[[3, 2]] - s.bottom_pressure_pa[[3, 2]];
    assert_relative_eq!(drop, floor_pa, max_relative = 0.005);
}

#[test]
fn floor_orifice_law_matches_domain_check_values() {
    // DOMAIN.md §1.4: Q = 0.22 m/s, φ = 0.20, C_d = 0.6, ρ = 1.16 → ≈ 2.0 Pa; φ = 0.10 → ≈ 7.8 Pa (2 significant
    // figures as printed, so ±3 %).
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
}

#[test]
fn shedd_bed_check_value_from_domain() {
    // DOMAIN.md §1.1 bed check: 1.3 m bed at 10 m³/min per m³ → Q = 0.217 m/s, ≈ 72 Pa (≈ 108 Pa packed 1.5);
    // printed to 2–3 figures, so ±2 %. Solved on a small grid with a uniform plenum and no floor loss to speak of.
    let mut c = common::container("wagon-4m");
    c.fill = dryfront::airflow::Fill::Level { depth_m: 1.3 };
    c.floor.open_area_fraction = 1.0;
    c.floor.discharge_coefficient = 1.0;
    c.leakage_m3_per_s_per_sqrt_pa = 0.0;
    let q = 10.0 / 60.0 * 1.3;
    let settings = SolverSettings {
        grid: Grid {
            nx: 6,
            ny: 4,
            nz: 8,
        },
        plenum: PlenumModel::Uniform,
        ..SolverSettings::default()
    };
    let flow = FlowSpec::Fixed {
        total_m3_per_s: q * c.floor_area_m2(),
    };
    let s = solve(
        &c,
        &flow,
        &common::peanut(1.0),
        &AirPath::same(common::air()),
        &settings,
    )
    .unwrap();
    assert_relative_eq!(s.bottom_pressure_pa[[2, 2]], 72.0, max_relative = 0.02);
    let s = solve(
        &c,
        &flow,
        &common::peanut(1.5),
        &AirPath::same(common::air()),
        &settings,
    )
    .unwrap();
    assert_relative_eq!(s.bottom_pressure_pa[[2, 2]], 108.0, max_relative = 0.02);
}
