//! Grid convergence in the linear (Darcy) limit against an exact solution of Laplace's equation: with a plenum
//! pressure `P0 + A·cos(πx/L)·cos(πy/W)` under a bed of depth H, top at 0 Pa and impermeable walls,
//! `p = P0·(1 − z/H) + A·cos(πx/L)·cos(πy/W)·sinh(k(H − z))/sinh(kH)`, `k = π·√(1/L² + 1/W²)`.
//! Cell-centred finite volumes are second order: the observed order must approach 2 as the grid is refined.
mod common;

use dryfront::airflow::geometry::{Floor, Inlet, InletWall, Permeability};
use dryfront::airflow::{
    solve_prescribed, BedLaw, Container, Fill, Grid, ResistanceLaw, SolverSettings,
};
use ndarray::Array2;
use std::f64::consts::PI;

const L: f64 = 2.0;
const W: f64 = 1.0;
const H: f64 = 0.8;
const P0: f64 = 100.0;
const A: f64 = 30.0;

fn exact(x: f64, y: f64, z: f64) -> f64 {
    let k = PI * (1.0 / (L * L) + 1.0 / (W * W)).sqrt();
    P0 * (1.0 - z / H)
        + A * (PI * x / L).cos() * (PI * y / W).cos() * (k * (H - z)).sinh() / (k * H).sinh()
}

fn max_error(n: usize) -> f64 {
    let c = Container {
        name: "box".into(),
        description: String::new(),
        length_m: L,
        width_m: W,
        wall_height_m: 1.0,
        plenum_height_m: 0.3,
        floor: Floor {
            open_area_fraction: 1.0,
            discharge_coefficient: 1.0,
            blocked_areas: vec![],
        },
        inlet: Inlet {
            wall: InletWall::Front,
            width_m: 0.5,
            height_m: 0.3,
            offset_m: 0.0,
            transition_loss_coefficient: 0.0,
        },
        fill: Fill::Level { depth_m: H },
        permeability: Permeability::default(),
        leakage_m3_per_s_per_sqrt_pa: 0.0,
        plenum: Default::default(),
        plenum_rear_height_m: None,
        baffles: vec![],
    };
    let grid = Grid {
        nx: 2 * n,
        ny: n,
        nz: n,
    };
    let d = c.discretize(grid).unwrap();
    let law = BedLaw {
        law: ResistanceLaw::Darcy {
            resistivity_pa_s_per_m2: 500.0,
        },
        packing_factor: 1.0,
        horizontal_ratio: 1.0,
    };
    let (dx, dy) = (d.dx_m, d.dy_m);
    let pl = Array2::from_shape_fn((grid.nx, grid.ny), |(i, j)| {
        exact((i as f64 + 0.5) * dx, (j as f64 + 0.5) * dy, 0.0)
    });
    let settings = SolverSettings {
        grid,
        linear_tolerance: 1e-13,
        ..SolverSettings::default()
    };
    let s = solve_prescribed(&d, &law, None, 1.2, &pl, &settings).unwrap();
    let dz = H / n as f64;
    let mut e: f64 = 0.0;
    for ((i, j, k), &p) in s.pressure_pa.indexed_iter() {
        let ex = exact(
            (i as f64 + 0.5) * dx,
            (j as f64 + 0.5) * dy,
            (k as f64 + 0.5) * dz,
        );
        e = e.max((p - ex).abs());
    }
    e
}

#[test]
fn darcy_limit_converges_at_second_order() {
    let ns = [4, 8, 16, 32];
    let errs: Vec<f64> = ns.iter().map(|&n| max_error(n)).collect();
    let orders: Vec<f64> = errs.windows(2).map(|w| (w[0] / w[1]).log2()).collect();
    eprintln!("max errors {errs:?} Pa, observed orders {orders:?}");
    let last = *orders.last().unwrap();
    assert!((last - 2.0).abs() < 0.15, "observed order {last}");
    assert!(errs[3] < 0.01 * A, "finest error {} Pa", errs[3]);
}
