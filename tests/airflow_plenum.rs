//! Plenum behaviour (dividing-flow manifold, see `airflow::plenum`): static pressure rises from the inlet region
//! toward the far wall (jet momentum recovered, static regain), so columns over the inlet end get less air; a
//! taller plenum slows the air under the floor and gives a more uniform pressure and column flow; a rear inlet
//! mirrors the picture.
mod common;

use dryfront::airflow::geometry::InletWall;
use dryfront::airflow::{
    solve, AirPath, AirflowSolution, Container, FlowSpec, Grid, SolverSettings,
};

fn run(c: &Container) -> AirflowSolution {
    let settings = SolverSettings {
        grid: Grid {
            nx: 32,
            ny: 6,
            nz: 10,
        },
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

fn row_mean(a: &ndarray::Array2<f64>, i: usize) -> f64 {
    a.row(i).mean().unwrap()
}

fn plain_trailer() -> Container {
    let mut c = common::container("trailer-6m");
    c.permeability = Default::default();
    c
}

#[test]
fn static_pressure_rises_from_inlet_toward_far_wall() {
    let s = run(&plain_trailer());
    let nx = s.grid.nx;
    let p_in = row_mean(&s.plenum_pressure_pa, 0);
    let p_far = row_mean(&s.plenum_pressure_pa, nx - 1);
    eprintln!("plenum {p_in:.1} Pa at the inlet row, {p_far:.1} Pa at the far wall");
    assert!(p_far > p_in + 5.0);
    // the rise is monotone over the far half, where the jet has mixed out and static regain dominates
    for i in nx / 2..nx - 1 {
        assert!(
            row_mean(&s.plenum_pressure_pa, i + 1) >= row_mean(&s.plenum_pressure_pa, i) - 1e-9
        );
    }
    assert!(row_mean(&s.top_velocity_m_per_s, 0) < row_mean(&s.top_velocity_m_per_s, nx - 1));
}

#[test]
fn taller_plenum_is_more_uniform() {
    let low = plain_trailer();
    let mut tall = plain_trailer();
    tall.plenum_height_m = 0.8;
    let a = run(&low);
    let b = run(&tall);
    eprintln!(
        "range {:.1} → {:.1} Pa, cv {:.4} → {:.4}",
        a.summary.plenum_pressure_range_pa,
        b.summary.plenum_pressure_range_pa,
        a.summary.column_flow_cv,
        b.summary.column_flow_cv
    );
    assert!(b.summary.plenum_pressure_range_pa < a.summary.plenum_pressure_range_pa);
    assert!(b.summary.column_flow_cv < a.summary.column_flow_cv);
    assert!(b.summary.min_over_mean > a.summary.min_over_mean);
}

#[test]
fn rear_inlet_mirrors_the_pressure_map() {
    let front = run(&plain_trailer());
    let mut c = plain_trailer();
    c.inlet.wall = InletWall::Rear;
    let rear = run(&c);
    let nx = front.grid.nx;
    for i in 0..nx {
        let a = row_mean(&front.plenum_pressure_pa, i);
        let b = row_mean(&rear.plenum_pressure_pa, nx - 1 - i);
        assert!(
            (a - b).abs() < 1e-6 * a.abs().max(1.0),
            "row {i}: {a} vs {b}"
        );
    }
}
