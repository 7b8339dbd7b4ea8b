//! Mass conservation and thread-count independence on an uneven, heterogeneous load with leakage and a fan:
//! the air leaving the top plus the leakage must equal the fan's flow (to 1e-6 relative), the per-column fluxes
//! must add up to the bed flow, and the answer must be bit-for-bit the same on 1 and 2 threads.
mod common;

use approx::assert_relative_eq;
use dryfront::airflow::{solve, AirPath, AirflowSolution, Fill, FlowSpec, Grid, SolverSettings};

fn run() -> AirflowSolution {
    let mut c = common::container("trailer-6m");
    c.fill = Fill::Crowned {
        edge_depth_m: 1.1,
        peak_depth_m: 1.4,
    };
    let settings = SolverSettings {
        grid: Grid {
            nx: 24,
            ny: 10,
            nz: 12,
        },
        ..SolverSettings::default()
    };
    let fan = common::fan("vane-3kw");
    solve(
        &c,
        &FlowSpec::Fan(fan),
        &common::peanut(1.5),
        &AirPath::same(common::air()),
        &settings,
    )
    .unwrap()
}

#[test]
fn top_outflow_plus_leakage_equals_fan_flow() {
    let s = run();
    let sum = &s.summary;
    assert!(sum.leakage_m3_per_s > 0.0);
    assert_relative_eq!(
        sum.bed_flow_m3_per_s + sum.leakage_m3_per_s,
        s.operating_point.plenum_flow_m3_per_s,
        max_relative = 1e-6
    );
    let area = s.dx_m * s.dy_m;
    let columns: f64 = s.top_velocity_m_per_s.iter().map(|v| v * area).sum();
    assert_relative_eq!(columns, sum.bed_flow_m3_per_s, max_relative = 1e-12);
    // the dry-air mass flux is the volumetric flux over the dry-air specific volume (ASHRAE 2017 eq. 26)
    let v = common::air().specific_volume_m3_per_kg();
    assert_relative_eq!(
        s.mass_flux_kg_per_m2_s[[5, 5]],
        s.top_velocity_m_per_s[[5, 5]] / v,
        max_relative = 1e-12
    );
}

#[test]
fn results_do_not_depend_on_thread_count() {
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap()
        .install(run);
    let two = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap()
        .install(run);
    assert_eq!(one.converged, two.converged);
    for (a, b) in one.pressure_pa.iter().zip(two.pressure_pa.iter()) {
        assert_eq!(a.to_bits(), b.to_bits());
    }
    assert_eq!(
        one.operating_point.fan_flow_m3_per_s.to_bits(),
        two.operating_point.fan_flow_m3_per_s.to_bits()
    );
}
