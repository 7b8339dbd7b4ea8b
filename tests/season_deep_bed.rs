//! The deep-bed drier behind the seam: each load's bed is built from its mass and moisture in its dryer's
//! container and run through the drying core. Checks: the bed holds exactly the load's mass; loads reach target;
//! wetter loads take longer; an unheated dryer burns no propane; weather that does not cover a start is an error
//! naming the load; and a season gives the same schedule on 1 and 2 threads.

mod season_support;

use std::collections::BTreeMap;

use dryfront::drying::heater::{Fuel, HeaterStrategy};
use dryfront::drying::run::{
    Ambient, ConstantAmbient, FixedFlow, FlowField, FlowProvider, RunSettings,
};
use dryfront::props::psychro::AirState;
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::{ContainerSpec, DeepBedDrier, LoadDrier};
use dryfront::season::sim::simulate;
use ndarray::Array2;
use season_support::*;

/// A 4.3 m × 2.4 m wagon (DOMAIN.md §7.4, Blankenship & Chew 1979) on a coarse 4×2×10 grid; bulk density
/// 330 kg/m³ (runner type, DOMAIN.md common practice).
fn wagon() -> ContainerSpec {
    ContainerSpec {
        length_m: 4.3,
        width_m: 2.4,
        max_depth_m: 1.4,
        bulk_density_kg_per_m3: 330.0,
        nx: 4,
        ny: 2,
        nz: 10,
    }
}

fn drier(cover_until_h: f64) -> DeepBedDrier<'static, TestPod> {
    let air = AirState::from_rh(25.0, 0.70, 101_325.0);
    let mut containers = BTreeMap::new();
    containers.insert("wagon-4.3m".to_string(), wagon());
    DeepBedDrier {
        material: &TestPod,
        containers,
        ambient: Box::new(move |start| {
            (dryfront::season::sim::hours_between(t0(), start) < cover_until_h)
                .then(|| Box::new(ConstantAmbient(air)) as Box<dyn Ambient>)
        }),
        // 10 m³/min per m³ of peanuts (DOMAIN.md §7.4, common practice) at the bed's own depth.
        flow: Box::new(|_, bed| {
            let (nx, ny) = bed.depth_m.dim();
            let v = bed.depth_m.mapv(|d| 10.0 / 60.0 * d);
            Ok(Box::new(FixedFlow(FlowField {
                velocity_m_per_s: Array2::from_shape_fn((nx, ny), |(i, j)| v[[i, j]]),
                fan_power_w: 2500.0,
                electric_power_w: 3000.0,
                leakage_m3_per_s: 0.0,
                plenum_pa: 150.0,
            })) as Box<dyn FlowProvider>)
        }),
        settings: RunSettings::default(),
        max_plenum_c: 35.0,
        fuel: Fuel::propane(),
    }
}

#[test]
fn bed_holds_the_load_and_wetter_loads_dry_longer() {
    let d = drier(1e9);
    let ls = loads(&[(0.0, 16.0), (0.0, 22.0)]);
    let bed = d.bed_for(&ls[0], &wagon(), 25.0).unwrap();
    let wet_mass = bed.dry_matter_kg() + bed.water_kg(&TestPod);
    assert!((wet_mass - 4000.0).abs() < 1e-9 * 4000.0, "{wet_mass}");
    assert!((bed.mean_kernel_wb(&TestPod) - 0.16).abs() < 1e-12);
    let u = dryer("D1");
    let a = d.dry(&ls[0], &u, ls[0].arrival).unwrap();
    let b = d.dry(&ls[1], &u, ls[1].arrival).unwrap();
    assert!(a.finished && b.finished, "{a:?} {b:?}");
    assert!(a.moisture_out_pct <= 10.0 + 1e-9 && b.moisture_out_pct <= 10.0 + 1e-9);
    assert!(
        b.hours > a.hours,
        "22 % load {} h vs 16 % load {} h",
        b.hours,
        a.hours
    );
    assert!(a.fuel_l > 0.0 && a.kwh > 0.0);
    // Fan energy is the electric power times the hours on air: 3.0 kW × h, to within the last step (hours to
    // target are interpolated inside it; the fan runs to its end).
    let dt_h = d.settings.dt_s / 3600.0;
    assert!(
        (a.kwh - 3.0 * a.hours).abs() <= 3.0 * dt_h + 1e-9,
        "{} kWh over {} h",
        a.kwh,
        a.hours
    );
    let mut cold = dryer("D2");
    cold.heater = HeaterStrategy::None.into();
    let c = d.dry(&ls[0], &cold, ls[0].arrival).unwrap();
    assert!(c.fuel_l.abs() < 1e-12);
    assert!(
        c.hours >= a.hours,
        "unheated {} h vs heated {} h",
        c.hours,
        a.hours
    );
}

#[test]
fn weather_not_covering_a_start_is_an_error_naming_the_load() {
    let d = drier(5.0);
    let bp = point(1, 1.0, 48.0, 10);
    let ls = loads(&[(0.0, 18.0), (1.0, 18.0)]);
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    };
    let err = simulate(&bp, &ls, &d, DispatchPolicy::Fcfs, &pred, bp.season.end()).unwrap_err();
    let msg = err.to_string();
    assert!(
        msg.contains("load \"L2\"") && msg.contains("weather record does not cover"),
        "{msg}"
    );
}

#[test]
fn deep_bed_season_is_identical_on_one_and_two_threads() {
    let bp = point(2, 1.0, 48.0, 10);
    let ls = loads(&[(0.0, 18.0), (2.0, 21.0), (3.0, 16.0), (5.0, 19.0)]);
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    };
    let run_on = |n: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .unwrap()
            .install(|| {
                let d = drier(1e9);
                simulate(
                    &bp,
                    &ls,
                    &d,
                    DispatchPolicy::Wettest,
                    &pred,
                    bp.season.end(),
                )
                .unwrap()
            })
    };
    let (a, b) = (run_on(1), run_on(2));
    assert_eq!(a, b);
    assert_eq!(a.schedule.len(), 4);
    assert!(a.schedule.iter().all(|r| r.result.finished));
}
