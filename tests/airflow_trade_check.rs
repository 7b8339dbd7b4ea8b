//! Fact of the trade (common practice, no source): a 6.4 m drying trailer about 2.4 m wide holding 1.2–1.3 m of
//! in-shell peanuts at about 230 m³/min of air runs a plenum static pressure of about 124 Pa, the air leaving the
//! top averages about 0.25 m/s and the inlet jet runs at roughly 8–15 m/s. The solve must land near all three.
mod common;

use dryfront::airflow::{solve, AirPath, FlowSpec, Grid, SolverSettings};

#[test]
fn trailer_at_230_m3_per_min_matches_trade_pressure_and_velocities() {
    let c = common::container("trailer-6m");
    // Packing factor 1.5 (ASAE D272.3 upper bound, DOMAIN.md §1.2) on Shedd a = 3.80e3, b = 111 (from memory).
    let law = common::peanut(1.5);
    let settings = SolverSettings {
        grid: Grid {
            nx: 32,
            ny: 12,
            nz: 16,
        },
        ..SolverSettings::default()
    };
    let t = std::time::Instant::now();
    let s = solve(
        &c,
        &FlowSpec::Fixed {
            total_m3_per_s: 230.0 / 60.0,
        },
        &law,
        &AirPath::same(common::air()),
        &settings,
    )
    .unwrap();
    eprintln!(
        "{:#?}\n{:?}\n{:?}\n{:?}",
        s.summary,
        s.operating_point,
        s.converged,
        t.elapsed()
    );
    let sum = &s.summary;
    // ±25 % of 124 Pa (common practice, no source).
    assert!(
        (sum.mean_plenum_pressure_pa - 124.0).abs() <= 0.25 * 124.0,
        "{}",
        sum.mean_plenum_pressure_pa
    );
    // about 0.25 m/s (common practice, no source); leakage takes a little, so allow ±15 %.
    assert!((sum.mean_column_velocity_m_per_s - 0.25).abs() <= 0.15 * 0.25);
    let u_in = s.operating_point.inlet_velocity_m_per_s;
    assert!((8.0..=15.0).contains(&u_in), "inlet jet {u_in} m/s");
}
