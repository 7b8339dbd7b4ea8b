//! Each part of the airflow at its own air: the fan works on the air it draws (ambient air ahead of the burner,
//! the heated air after it), the dry-air mass flow is the same at the fan and out of the bed plus the leaks, and
//! the inlet transition, plenum, floor and bed see the heated plenum air. What must hold, and why:
//! - dry air is conserved from the fan to the top of the bed and the leaks (continuity; the burner adds heat, and
//!   combustion water only through the plenum state's humidity ratio);
//! - at a fixed dry-air mass flow, heated plenum air crosses the bed at a higher superficial velocity (by the
//!   ratio of specific volumes, ASHRAE 2017 ch. 1), so the bed pressure drop rises as Shedd's law says for that
//!   velocity (Shedd 1953 / ASAE D272) and the floor drop as the orifice law at the lighter air (DOMAIN.md §1.4);
//! - the fan point is where the density-corrected fan curve (P ∝ ρ at the same volumetric flow, DOMAIN.md §8.1),
//!   taken at the fan's own air and volumetric flow, meets the system curve at the plenum air — checked against
//!   an intersection found here independently, for cold dense and warm light fan air;
//! - a fan after the burner works on the heated air, and the cold ambient air then plays no part.
mod common;

use approx::assert_relative_eq;
use dryfront::airflow::{
    solve, AirPath, AirflowSolution, Container, FanCurve, FanPosition, Fill, FlowSpec, Grid,
    PlenumModel, SolverSettings,
};
use dryfront::props::psychro::AirState;
use dryfront::props::resistance::{floor_pressure_drop_pa, Shedd};

const P_PA: f64 = 101_325.0;

/// Peanut Shedd constants a = 3.80e3, b = 111 (DOMAIN.md §1.1, from memory), as `common::peanut`.
const SHEDD: Shedd = Shedd {
    a: 3.80e3,
    b: 111.0,
};

fn heated(t_c: f64, rh: f64, rise_k: f64) -> AirPath {
    let ambient = AirState::from_rh(t_c, rh, P_PA);
    AirPath {
        ambient,
        plenum: ambient.heated_by(rise_k),
    }
}

/// A level, uniform 1.25 m bed over a one-pressure plenum without leaks: identical 1-D columns.
fn uniform_trailer() -> (Container, SolverSettings) {
    let mut c = common::container("trailer-6m");
    c.permeability = Default::default();
    c.leakage_m3_per_s_per_sqrt_pa = 0.0;
    let settings = SolverSettings {
        grid: Grid {
            nx: 8,
            ny: 4,
            nz: 8,
        },
        plenum: PlenumModel::Uniform,
        ..SolverSettings::default()
    };
    (c, settings)
}

fn solve_fan(c: &Container, fan: &FanCurve, air: &AirPath, s: &SolverSettings) -> AirflowSolution {
    solve(c, &FlowSpec::Fan(fan.clone()), &common::peanut(1.5), air, s).unwrap()
}

#[test]
fn dry_air_is_conserved_from_fan_to_bed_and_leaks() {
    // The crowned, leaky, heterogeneous bundled trailer on the manifold plenum, fan ahead of the burner,
    // 20 °C / 80 % air heated by 15 K.
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
    let air = heated(20.0, 0.8, 15.0);
    let s = solve_fan(&c, &common::fan("vane-3kw"), &air, &settings);
    let v_fan = air.ambient.specific_volume_m3_per_kg();
    let v_pl = air.plenum.specific_volume_m3_per_kg();
    let fan_kg_s = s.operating_point.fan_flow_m3_per_s / v_fan;
    // out of the top: Σ (column mass flux × column area); out of the leaks: leakage volume at the plenum air
    let area = s.dx_m * s.dy_m;
    let top_kg_s: f64 = s.mass_flux_kg_per_m2_s.iter().map(|g| g * area).sum();
    let leak_kg_s = s.summary.leakage_m3_per_s / v_pl;
    let rel = ((top_kg_s + leak_kg_s) / fan_kg_s - 1.0).abs();
    eprintln!(
        "fan {fan_kg_s} kg/s, top + leaks {} kg/s, relative difference {rel:.1e}",
        top_kg_s + leak_kg_s
    );
    assert!(s.summary.leakage_m3_per_s > 0.0);
    // Measured 1.6e-12: the bed's top and bottom flows agree to within the linear solves' 1e-10 residual, and
    // the closure on the plenum pressure holds to round-off at the converged pressures.
    assert!(rel < 1e-10, "{rel:e}");
    assert_relative_eq!(
        s.operating_point.dry_air_kg_per_s,
        fan_kg_s,
        max_relative = 1e-14
    );
    // and the volumes differ, by the ratio of specific volumes
    assert!(s.operating_point.plenum_flow_m3_per_s > 1.04 * s.operating_point.fan_flow_m3_per_s);
}

#[test]
fn heated_air_at_a_fixed_mass_flow_crosses_the_bed_faster_and_loses_more_pressure() {
    let (c, settings) = uniform_trailer();
    let area = c.floor_area_m2();
    let dry_air_kg_s = 4.0;
    let mut bed_drop = Vec::new();
    for air in [heated(25.0, 0.7, 0.0), heated(25.0, 0.7, 25.0)] {
        let v_pl = air.plenum.specific_volume_m3_per_kg();
        // A fixed flow is the volumetric flow into the plenum, at the plenum air.
        let flow = FlowSpec::Fixed {
            total_m3_per_s: dry_air_kg_s * v_pl,
        };
        let s = solve(&c, &flow, &common::peanut(1.5), &air, &settings).unwrap();
        let q = dry_air_kg_s * v_pl / area;
        for (&v, &g) in s.top_velocity_m_per_s.iter().zip(&s.mass_flux_kg_per_m2_s) {
            // uniform columns carrying the same dry air per m²: to the outer tolerance 1e-8 (measured 8e-10)
            assert_relative_eq!(v, q, max_relative = 1e-8);
            assert_relative_eq!(g, dry_air_kg_s / area, max_relative = 1e-8);
        }
        // Shedd's ΔP/L = a·Q²/ln(1 + bQ) at the plenum air's superficial velocity, × 1.5 packing × 1.25 m. The
        // pressure is linear in depth in a uniform column, so the bed-bottom extrapolation is exact and the outer
        // tolerance 1e-8 bounds the difference (measured 4e-9).
        let shedd_pa = 1.5 * SHEDD.pressure_gradient_pa_per_m(q) * 1.25;
        let bottom = s.bottom_pressure_pa[[3, 2]];
        assert_relative_eq!(bottom, shedd_pa, max_relative = 1e-8);
        // Floor: Δp = ρ/2·(q/(C_d·φ))² at the plenum air's density (DOMAIN.md §1.4): a 3 Pa difference of two
        // pressures each good to 1e-8 of about 140 Pa, so 1e-6 (measured 1.3e-7).
        let floor_pa = floor_pressure_drop_pa(q, 0.20, 0.6, air.plenum.density_kg_per_m3());
        assert_relative_eq!(
            s.plenum_pressure_pa[[3, 2]] - bottom,
            floor_pa,
            max_relative = 1e-6
        );
        bed_drop.push((q, bottom));
    }
    let ((q0, p0), (q1, p1)) = (bed_drop[0], bed_drop[1]);
    // velocity up by the ratio of specific volumes (25 K: about 8 %), and the drop by Shedd's ratio at those
    // velocities, to the outer tolerance 1e-8 (measured 2e-9)
    let shedd_ratio = SHEDD.pressure_gradient_pa_per_m(q1) / SHEDD.pressure_gradient_pa_per_m(q0);
    eprintln!(
        "velocity ×{:.5}, bed drop ×{:.5}, Shedd ×{shedd_ratio:.5}, relative difference {:.1e}",
        q1 / q0,
        p1 / p0,
        (p1 / p0 / shedd_ratio - 1.0).abs()
    );
    assert!(q1 / q0 > 1.08);
    assert_relative_eq!(p1 / p0, shedd_ratio, max_relative = 1e-8);
}

/// The fan point found independently: bisection on the fan's volumetric flow Q_f for
/// P_rated(Q_f)·ρ_fan/ρ_rated = system(Q_p), with Q_p = Q_f·v_pl/v_fan (same dry air) and the system curve
/// at the plenum air: Shedd bed (× 1.5 packing × 1.25 m) + floor orifice + transition loss K·ρ·u²/2.
fn independent_point(
    c: &Container,
    fan: &FanCurve,
    fan_air: &AirState,
    plenum: &AirState,
) -> (f64, f64) {
    let (rho_f, rho_p) = (fan_air.density_kg_per_m3(), plenum.density_kg_per_m3());
    let ratio = plenum.specific_volume_m3_per_kg() / fan_air.specific_volume_m3_per_kg();
    let (area, a_in) = (c.floor_area_m2(), c.inlet_area_m2());
    let k_t = c.inlet.transition_loss_coefficient;
    let system = |q_f: f64| {
        let q_p = q_f * ratio;
        let v = q_p / area;
        1.5 * SHEDD.pressure_gradient_pa_per_m(v) * 1.25
            + floor_pressure_drop_pa(v, 0.20, 0.6, rho_p)
            + k_t * 0.5 * rho_p * (q_p / a_in).powi(2)
    };
    let fan_pa = |q_f: f64| fan.rated_pressure_pa(q_f) * rho_f / fan.rated_density_kg_per_m3;
    let (mut lo, mut hi) = fan.flow_range_m3_per_s();
    for _ in 0..100 {
        let mid = 0.5 * (lo + hi);
        if fan_pa(mid) > system(mid) {
            lo = mid
        } else {
            hi = mid
        }
    }
    let q = 0.5 * (lo + hi);
    (q, fan_pa(q))
}

#[test]
fn the_fan_works_on_the_air_it_draws_as_the_fan_laws_say() {
    let (c, settings) = uniform_trailer();
    let fan = common::fan("vane-3kw");
    assert_eq!(fan.position, FanPosition::AheadOfBurner);
    // The same plenum air (35 °C, humidity ratio of 20 °C / 60 % air) fed by a fan drawing cold dense air
    // (5 °C, heated 30 K) or warm light air (30 °C, heated 5 K).
    let w = AirState::from_rh(20.0, 0.6, P_PA).w;
    let plenum = AirState {
        t_c: 35.0,
        w,
        p_pa: P_PA,
    };
    let mut points = Vec::new();
    for t_amb in [5.0, 30.0] {
        let ambient = AirState {
            t_c: t_amb,
            ..plenum
        };
        let s = solve_fan(&c, &fan, &AirPath { ambient, plenum }, &settings);
        let (q_f, p_f) = independent_point(&c, &fan, &ambient, &plenum);
        let op = s.operating_point;
        eprintln!(
            "fan air {t_amb} °C: solver {:.4} m³/min at {:.3} Pa, independent {:.4} m³/min at {:.3} Pa \
             (relative differences {:.1e}, {:.1e})",
            op.fan_flow_m3_per_s * 60.0,
            op.fan_static_pressure_pa,
            q_f * 60.0,
            p_f,
            (op.fan_flow_m3_per_s / q_f - 1.0).abs(),
            (op.fan_static_pressure_pa / p_f - 1.0).abs()
        );
        // The bisections stop at 1e-14 and 2⁻¹⁰⁰ and the uniform columns are exact on any grid, so the outer
        // tolerance 1e-8 on pressure bounds both (measured 1.4e-9 on the flow, 3e-9 on the pressure).
        assert_relative_eq!(op.fan_flow_m3_per_s, q_f, max_relative = 1e-8);
        assert_relative_eq!(op.fan_static_pressure_pa, p_f, max_relative = 1e-8);
        assert_relative_eq!(
            s.summary.fan_air_density_kg_per_m3,
            ambient.density_kg_per_m3(),
            max_relative = 1e-15
        );
        points.push((ambient, op));
    }
    let ((cold, a), (warm, b)) = (points[0], points[1]);
    // Cold dense air: the fan gives more pressure at each volumetric flow (P ∝ ρ, DOMAIN.md §8.1) and moves
    // more dry air through the same bed; each point lies on the rated curve scaled by its own density.
    assert!(a.fan_static_pressure_pa > b.fan_static_pressure_pa);
    assert!(a.dry_air_kg_per_s > b.dry_air_kg_per_s);
    for (air, op) in [(cold, a), (warm, b)] {
        assert_relative_eq!(
            op.fan_static_pressure_pa / air.density_kg_per_m3(),
            fan.rated_pressure_pa(op.fan_flow_m3_per_s) / fan.rated_density_kg_per_m3,
            max_relative = 1e-12
        );
    }
}

#[test]
fn heated_plenum_air_moves_the_fan_point_as_the_system_curve_says() {
    // Fan ahead of the burner on 25 °C / 70 % air, +8 K: the fan keeps its air, the bed sees the lighter air at a
    // higher velocity, so the fan point moves to slightly less volumetric flow at the fan while the plenum flow
    // rises — by less than the ratio of specific volumes, the difference being the bed's extra resistance.
    let (c, settings) = uniform_trailer();
    let fan = common::fan("vane-3kw");
    let cold = solve_fan(&c, &fan, &heated(25.0, 0.7, 0.0), &settings);
    let air = heated(25.0, 0.7, 8.0);
    let hot = solve_fan(&c, &fan, &air, &settings);
    let (q_f, _) = independent_point(&c, &fan, &air.ambient, &air.plenum);
    assert_relative_eq!(
        hot.operating_point.fan_flow_m3_per_s,
        q_f,
        max_relative = 1e-8
    );
    let ratio = air.plenum.specific_volume_m3_per_kg() / air.ambient.specific_volume_m3_per_kg();
    let rise = hot.operating_point.plenum_flow_m3_per_s / cold.operating_point.plenum_flow_m3_per_s;
    eprintln!("specific volumes ×{ratio:.5}, plenum flow ×{rise:.5}");
    assert!(rise > 1.0 && rise < ratio, "{rise} vs {ratio}");
    assert!(hot.operating_point.fan_flow_m3_per_s < cold.operating_point.fan_flow_m3_per_s);
    assert!(hot.summary.mean_plenum_pressure_pa > cold.summary.mean_plenum_pressure_pa);
}

#[test]
fn a_fan_after_the_burner_draws_the_heated_air() {
    let (c, settings) = uniform_trailer();
    let mut fan = common::fan("vane-3kw");
    let air = heated(10.0, 0.8, 20.0);
    let ahead = solve_fan(&c, &fan, &air, &settings);
    fan.position = FanPosition::AfterBurner;
    let after = solve_fan(&c, &fan, &air, &settings);
    assert_eq!(
        after.summary.fan_air_density_kg_per_m3,
        air.plenum.density_kg_per_m3()
    );
    // The cold ambient air plays no part: bit for bit the solve of heated air throughout.
    let all_heated = solve_fan(&c, &fan, &AirPath::same(air.plenum), &settings);
    assert_eq!(after.operating_point, all_heated.operating_point);
    assert_eq!(after.summary, all_heated.summary);
    assert_eq!(
        after.operating_point.fan_flow_m3_per_s,
        after.operating_point.plenum_flow_m3_per_s
    );
    // Ahead of the burner the same fan, on denser air, moves more dry air.
    assert!(ahead.operating_point.dry_air_kg_per_s > after.operating_point.dry_air_kg_per_s);
}

#[test]
fn fan_files_declare_their_position() {
    for name in ["vane-3kw", "vane-7kw"] {
        assert_eq!(
            common::fan(name).position,
            FanPosition::AheadOfBurner,
            "{name}"
        );
    }
    let text = r#"{"name": "x",
        "position": "after-burner",
        "points": [{"flow_m3_per_min": 100, "static_pressure_pa": 400},
                   {"flow_m3_per_min": 200, "static_pressure_pa": 300}]}"#;
    let f = FanCurve::from_json_str(text, std::path::Path::new("fan.json")).unwrap();
    assert_eq!(f.position, FanPosition::AfterBurner);
}
