//! The Newton–Krylov outer iteration (`airflow::newton`) against Picard on the same loads: it must reach the same
//! solution (to 1e-9 relative, with both iterations driven to 1e-12), converge with order near 2 once close
//! (r_{k+1}/r_k² bounded on the dimensionless residual it records), and a re-solve from the last solution after a
//! small change of air density must take fewer outer steps than a cold solve (at most 4; the target is 2) and land on the cold solve's answer.
mod common;

use dryfront::airflow::{
    solve, solve_from, AirPath, AirflowSolution, Fill, FlowSpec, Grid, OuterMethod, PlenumModel,
    SolverSettings,
};
use dryfront::props::psychro::AirState;

fn settings(method: OuterMethod, plenum: PlenumModel, tolerance: f64) -> SolverSettings {
    SolverSettings {
        grid: Grid {
            nx: 24,
            ny: 10,
            nz: 12,
        },
        plenum,
        method,
        tolerance,
        linear_tolerance: 1e-13,
        ..SolverSettings::default()
    }
}

fn run(method: OuterMethod, plenum: PlenumModel, tolerance: f64, air: AirState) -> AirflowSolution {
    let mut c = common::container("trailer-6m");
    c.fill = Fill::Crowned {
        edge_depth_m: 1.1,
        peak_depth_m: 1.4,
    };
    solve(
        &c,
        &FlowSpec::Fan(common::fan("vane-3kw")),
        &common::peanut(1.5),
        &AirPath::same(air),
        &settings(method, plenum, tolerance),
    )
    .unwrap()
}

fn max_rel_diff(a: &AirflowSolution, b: &AirflowSolution) -> f64 {
    let pmax = b.pressure_pa.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let dp = a
        .pressure_pa
        .iter()
        .zip(&b.pressure_pa)
        .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
    let vmax = b
        .top_velocity_m_per_s
        .iter()
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let dv = a
        .top_velocity_m_per_s
        .iter()
        .zip(&b.top_velocity_m_per_s)
        .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
    (dp / pmax).max(dv / vmax)
}

#[test]
fn newton_reaches_picards_solution() {
    for plenum in [PlenumModel::Uniform, PlenumModel::default()] {
        let p = run(OuterMethod::Picard, plenum, 1e-12, common::air());
        let n = run(OuterMethod::Newton, plenum, 1e-12, common::air());
        let d = max_rel_diff(&n, &p);
        eprintln!(
            "{plenum:?}: Picard {} outer, Newton {} outer, changes {:?}, largest relative difference {d:.1e}",
            p.converged.iters, n.converged.iters, n.changes
        );
        assert!(d < 1e-9, "{plenum:?}: {d:e}");
        let q = (n.operating_point.fan_flow_m3_per_s - p.operating_point.fan_flow_m3_per_s).abs()
            / p.operating_point.fan_flow_m3_per_s;
        assert!(q < 1e-9, "{plenum:?}: fan flow differs by {q:e}");
    }
}

#[test]
fn newton_converges_with_order_two() {
    // Uniform plenum: no lagged plenum shape, so the outer iteration is Newton's alone.
    let n = run(
        OuterMethod::Newton,
        PlenumModel::Uniform,
        1e-13,
        common::air(),
    );
    let r = &n.newton_residuals;
    eprintln!("Newton residuals {r:?}; changes {:?}", n.changes);
    assert!(r.len() >= 3, "too few Newton steps to see the order: {r:?}");
    // Order estimate ln(r_{k+1}/r_k) / ln(r_k/r_{k-1}) over steps still above round-off (1e-11).
    let mut orders = Vec::new();
    for k in 1..r.len() - 1 {
        if r[k + 1] > 1e-11 {
            orders.push((r[k + 1] / r[k]).ln() / (r[k] / r[k - 1]).ln());
            let c = r[k + 1] / (r[k] * r[k]);
            assert!(c < 100.0, "r_(k+1)/r_k² = {c} at step {k}: {r:?}");
        }
    }
    assert!(
        !orders.is_empty(),
        "no step to estimate the order from: {r:?}"
    );
    let best = orders.iter().cloned().fold(0.0f64, f64::max);
    assert!(
        best > 1.6,
        "order estimates {orders:?} from residuals {r:?}"
    );
}

#[test]
fn warm_resolve_after_small_change_takes_few_outer_steps() {
    for plenum in [PlenumModel::Uniform, PlenumModel::default()] {
        let s = settings(OuterMethod::Newton, plenum, 1e-8);
        let mut c = common::container("trailer-6m");
        c.fill = Fill::Crowned {
            edge_depth_m: 1.1,
            peak_depth_m: 1.4,
        };
        let fan = FlowSpec::Fan(common::fan("vane-3kw"));
        let law = common::peanut(1.5);
        let first = solve(&c, &fan, &law, &AirPath::same(common::air()), &s).unwrap();
        // 30 → 33 °C, 50 → 45 % RH: density about 1 % lower.
        let a1 = AirState::from_rh(33.0, 0.45, 101_325.0);
        let warm = solve_from(&c, &fan, &law, &AirPath::same(a1), &s, Some(&first.warm)).unwrap();
        let cold = solve(&c, &fan, &law, &AirPath::same(a1), &s).unwrap();
        let d = max_rel_diff(&warm, &cold);
        eprintln!(
            "{plenum:?}: warm {} outer {:?}, cold {} outer, difference {d:.1e}",
            warm.converged.iters, warm.changes, cold.converged.iters
        );
        // Target 2 (issue 16), not met: measured 2026-12-03 on this grid, 4 outer steps with the uniform plenum
        // and 3 with the duct (the duct takes 4 on the bench's 64×24×32 grid, DEVELOPERS.md); the first step from
        // the old solution moves the pressures too little. The bound is the larger count.
        assert!(warm.converged.iters <= 4, "{plenum:?}: {:?}", warm.changes);
        assert!(warm.converged.iters < cold.converged.iters, "{plenum:?}");
        // both to the 1e-8 outer tolerance: they agree to a few times that
        assert!(d < 5e-8, "{plenum:?}: {d:e}");
    }
}
