//! Heterogeneity: air takes the easy path. A block with half the permeability gets less air than the same place
//! in a uniform bed; a deeper region gets less air per unit area than a shallower one; and the column flows still
//! add up to the total.
mod common;

use approx::assert_relative_eq;
use dryfront::airflow::geometry::{Permeability, PermeabilityBlock};
use dryfront::airflow::{
    solve, AirPath, AirflowSolution, Container, Fill, FlowSpec, Grid, PlenumModel, SolverSettings,
};

fn run(c: &Container, plenum: PlenumModel) -> AirflowSolution {
    let settings = SolverSettings {
        grid: Grid {
            nx: 32,
            ny: 12,
            nz: 12,
        },
        plenum,
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

#[test]
fn half_permeability_block_gets_less_air() {
    let mut base = common::container("trailer-6m");
    base.permeability = Permeability::default();
    base.leakage_m3_per_s_per_sqrt_pa = 0.0;
    let mut blocked = base.clone();
    blocked.permeability.blocks = vec![PermeabilityBlock {
        x0_m: 3.2,
        x1_m: 4.8,
        y0_m: 0.6,
        y1_m: 1.8,
        z0_m: None,
        z1_m: None,
        multiplier: 0.5,
    }];
    let a = run(&base, PlenumModel::default());
    let b = run(&blocked, PlenumModel::default());
    // columns whose centres lie inside the block: i = 16..24 (dx = 0.2 m), j = 3..9 (dy = 0.2 m)
    let mean = |s: &AirflowSolution| {
        let mut t = 0.0;
        for i in 16..24 {
            for j in 3..9 {
                t += s.top_velocity_m_per_s[[i, j]];
            }
        }
        t / 48.0
    };
    let (ua, ub) = (mean(&a), mean(&b));
    eprintln!("block columns: {ua:.4} m/s uniform, {ub:.4} m/s at half permeability");
    assert!(ub < 0.85 * ua);
    // the air that does not go through the block goes elsewhere
    assert!(b.summary.max_column_velocity_m_per_s > a.summary.max_column_velocity_m_per_s);
    assert_relative_eq!(
        b.summary.bed_flow_m3_per_s,
        230.0 / 60.0,
        max_relative = 1e-6
    );
}

#[test]
fn deeper_fill_gets_less_air_per_unit_area() {
    let mut c = common::container("trailer-6m");
    c.permeability = Permeability::default();
    // rear half 1.4 m deep, front half 1.1 m
    c.fill = Fill::Grid {
        depths_m: vec![vec![1.1; 4], vec![1.1; 4], vec![1.4; 4], vec![1.4; 4]],
    };
    let s = run(&c, PlenumModel::Uniform);
    let front = s
        .top_velocity_m_per_s
        .slice(ndarray::s![0..16, ..])
        .mean()
        .unwrap();
    let rear = s
        .top_velocity_m_per_s
        .slice(ndarray::s![16..32, ..])
        .mean()
        .unwrap();
    eprintln!("shallow {front:.4} m/s, deep {rear:.4} m/s");
    assert!(rear < front);
    let area = s.dx_m * s.dy_m;
    let total: f64 = s.top_velocity_m_per_s.iter().map(|v| v * area).sum();
    assert_relative_eq!(
        total + s.summary.leakage_m3_per_s,
        230.0 / 60.0,
        max_relative = 1e-6
    );
    // specific airflow is computed from the real bed volume (16 columns × 1.1 m + 16 × 1.4 m, per row of 12)
    assert_relative_eq!(
        s.summary.bed_volume_m3,
        6.4 * 2.4 * 1.25,
        max_relative = 1e-12
    );
}
