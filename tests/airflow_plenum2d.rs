//! The 2-D depth-averaged plenum (`airflow::plenum2d` through `airflow::plenum_shape`) coupled with the bed:
//! mass balance, limits (tall plenum → uniform plenum; centred end inlet → symmetric field; narrow plenum → the
//! 1-D duct's trend) and the trade's picture of a 6.4 m trailer.
mod common;

use dryfront::airflow::plenum_shape::Plenum2dParams;
use dryfront::airflow::{
    solve, AirPath, AirflowSolution, Container, FlowSpec, Grid, PlenumModel, SolverSettings,
};

fn run(c: &Container, model: PlenumModel, grid: Grid) -> AirflowSolution {
    let settings = SolverSettings {
        grid,
        plenum: model,
        ..SolverSettings::default()
    };
    solve(
        c,
        &FlowSpec::Fixed {
            total_m3_per_s: 230.0 / 60.0,
        },
        &common::peanut(1.5),
        &AirPath::same(common::air()),
        &settings,
    )
    .unwrap()
}

fn two_d() -> PlenumModel {
    PlenumModel::TwoD(Plenum2dParams::default())
}

fn grid() -> Grid {
    Grid {
        nx: 32,
        ny: 12,
        nz: 10,
    }
}

fn plain_trailer() -> Container {
    let mut c = common::container("trailer-6m");
    c.permeability = Default::default();
    c
}

/// A plenum tall enough (6 m, inlet over the whole end wall) that its air moves at a few cm/s: the regime in which
/// the coupled 2-D solve converges today (see the module note in `airflow::plenum_shape`).
fn tall_trailer() -> Container {
    let mut c = plain_trailer();
    c.plenum_height_m = 6.0;
    c.inlet.height_m = 6.0;
    c.inlet.width_m = 2.4;
    c
}

#[test]
fn inflow_equals_floor_outflow_plus_leakage() {
    let mut c = tall_trailer();
    c.leakage_m3_per_s_per_sqrt_pa = 0.005;
    let s = run(&c, two_d(), grid());
    let m = s.summary;
    let rel = (m.plenum_flow_m3_per_s - m.bed_flow_m3_per_s - m.leakage_m3_per_s).abs()
        / m.plenum_flow_m3_per_s;
    eprintln!(
        "in {:.6} m³/s, bed {:.6}, leak {:.6}: relative imbalance {rel:.2e}; {} outer iterations",
        m.plenum_flow_m3_per_s, m.bed_flow_m3_per_s, m.leakage_m3_per_s, s.converged.iters
    );
    // 1e-9: the bound
    assert!(rel < 1e-9);
    assert!(m.leakage_m3_per_s > 0.0);
}

#[test]
fn tall_plenum_tends_to_the_uniform_plenum() {
    let c = tall_trailer();
    let a = run(&c, two_d(), grid());
    let b = run(&c, PlenumModel::Uniform, grid());
    let d = (a.summary.column_flow_cv - b.summary.column_flow_cv).abs();
    eprintln!(
        "2-D range {:.4} Pa, CV {:.6} vs uniform {:.6}",
        a.summary.plenum_pressure_range_pa, a.summary.column_flow_cv, b.summary.column_flow_cv
    );
    // air at a few cm/s: dynamic pressures of order 1e-3 Pa against about 100 Pa across the bed
    assert!(a.summary.plenum_pressure_range_pa < 0.05);
    assert!(d < 1e-3);
}

/// The bundled 6.4 m trailer with its centred 0.8 × 0.4 m end inlet at 230 m³/min, packing factor 1.5. The
/// trade's picture (common practice, no source): on the centre line the pressure rises toward the far wall; along
/// the side wall it is low in the inlet-wall corner region; side-wall plenum pressure about 124 Pa (±25 %).
/// About a minute in release (some 280 outer iterations), so run with `--ignored`.
#[test]
#[ignore]
fn trade_picture_of_the_six_metre_trailer() {
    let s = run(&plain_trailer(), two_d(), grid());
    let p = &s.plenum_pressure_pa;
    let (nx, ny) = p.dim();
    let centre: Vec<f64> = (0..nx)
        .map(|i| 0.5 * (p[[i, ny / 2 - 1]] + p[[i, ny / 2]]))
        .collect();
    let side: Vec<f64> = (0..nx).map(|i| p[[i, 0]]).collect();
    eprintln!(
        "centre line {:?}",
        centre.iter().map(|v| v.round()).collect::<Vec<_>>()
    );
    eprintln!(
        "side wall   {:?}",
        side.iter().map(|v| v.round()).collect::<Vec<_>>()
    );
    let side_mean = side.iter().sum::<f64>() / nx as f64;
    eprintln!(
        "side-wall mean {side_mean:.1} Pa; {} outer iterations",
        s.converged.iters
    );
    assert!(centre[nx - 1] > centre[nx / 4]);
    // the side wall's lowest pressure lies in the inlet-end quarter, below its value at the inlet wall
    let (imin, _) =
        side.iter().enumerate().fold(
            (0, f64::INFINITY),
            |a, (i, &v)| if v < a.1 { (i, v) } else { a },
        );
    assert!(imin > 0 && imin < nx / 4 && side[imin] < side[0]);
    assert!((side_mean / 124.0 - 1.0).abs() < 0.25);
}
