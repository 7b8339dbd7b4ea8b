//! Season planner cost: a 70-day season of 600 loads on 30 dryers, (a) with the fixed-time drier, which times the
//! event logic alone, swept over loads and dryers to show how it grows, and (b) with the deep-bed drier on the
//! bundled peanut model at the season's coarse 4×2×10 grid (fixed weather and a fixed flow field, so it times the
//! event loop plus the deep-bed runs). Loads per second = loads / median.
//!
//! Run: `cargo bench --bench season -- --warm-up-time 1 --measurement-time 2`.

#[path = "../tests/season_support/mod.rs"]
mod season_support;

use std::collections::BTreeMap;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use dryfront::drying::heater::Fuel;
use dryfront::drying::run::{
    Ambient, ConstantAmbient, FixedFlow, FlowField, FlowProvider, RunSettings,
};
use dryfront::props::psychro::AirState;
use dryfront::season::arrivals::{generate, ArrivalParams};
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::{ContainerSpec, DeepBedDrier, FixedTimeDrier};
use dryfront::season::sim::simulate;
use ndarray::Array2;
use season_support::*;

fn pred() -> MoistureRatePredictor {
    MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    }
}

fn event_logic(c: &mut Criterion) {
    let drier = FixedTimeDrier::new(10.0, |l, _| (l.moisture_pct - 10.0) / 0.5);
    let mut g = c.benchmark_group("season fixed-time");
    for (loads, dryers) in [
        (150, 30),
        (300, 30),
        (600, 30),
        (1200, 30),
        (600, 10),
        (600, 60),
    ] {
        let bp = point(dryers, 0.75, 12.0, 70);
        let ls = generate(&ArrivalParams::new(t0(), 70, loads), 1).unwrap();
        g.throughput(Throughput::Elements(loads as u64));
        g.bench_with_input(
            BenchmarkId::new(format!("{dryers} dryers"), format!("{loads} loads")),
            &ls,
            |b, ls| {
                b.iter(|| {
                    simulate(
                        &bp,
                        ls,
                        &drier,
                        DispatchPolicy::WaitLimit,
                        &pred(),
                        bp.season.end(),
                    )
                    .unwrap()
                })
            },
        );
    }
    g.finish();
}

fn deep_bed(c: &mut Criterion) {
    let air = AirState::from_rh(25.0, 0.70, 101_325.0);
    let mut containers = BTreeMap::new();
    containers.insert(
        "wagon-4.3m".to_string(),
        ContainerSpec {
            length_m: 4.3,
            width_m: 2.4,
            max_depth_m: 1.4,
            bulk_density_kg_per_m3: 330.0,
            nx: 4,
            ny: 2,
            nz: 10,
        },
    );
    let crop = dryfront::crop::Crop::load_named("peanut-inshell").unwrap();
    let material = dryfront::drying::material::CropMaterial::new(&crop);
    let drier = DeepBedDrier {
        material: &material,
        containers,
        ambient: Box::new(move |_| Some(Box::new(ConstantAmbient(air)) as Box<dyn Ambient>)),
        flow: Box::new(|_, bed| {
            let v = bed.depth_m.mapv(|d| 10.0 / 60.0 * d);
            let (nx, ny) = v.dim();
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
    };
    let bp = point(30, 0.75, 12.0, 70);
    let mut g = c.benchmark_group("season deep-bed 4x2x10");
    g.sample_size(10);
    for loads in [150, 600] {
        // A 4.3 m wagon 1.4 m deep holds ≈ 4.7 t at 330 kg/m³: keep the draws to what fits.
        let mut p = ArrivalParams::new(t0(), 70, loads);
        p.mass_bounds_kg = (1500.0, 4700.0);
        p.mass_mean_kg = 3800.0;
        let ls = generate(&p, 1).unwrap();
        g.throughput(Throughput::Elements(loads as u64));
        g.bench_with_input(
            BenchmarkId::new("30 dryers", format!("{loads} loads")),
            &ls,
            |b, ls| {
                b.iter(|| {
                    simulate(
                        &bp,
                        ls,
                        &drier,
                        DispatchPolicy::WaitLimit,
                        &pred(),
                        bp.season.end(),
                    )
                    .unwrap()
                })
            },
        );
    }
    g.finish();
}

criterion_group!(benches, event_logic, deep_bed);
criterion_main!(benches);
