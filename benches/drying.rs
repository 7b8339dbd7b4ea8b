//! Deep-bed drying speed: cell-steps per second of the layer step on a realistic load (64 × 24 columns × 32 layers,
//! ≈ 50 000 cells) on 1 and 2 threads, in two phases of a load (the first hour from fresh, when about half the cells
//! hit the equilibrium cap and cost most, and a whole 30-hour run, which brings the load from 21 % to about 10 %),
//! and one full 48-hour load of the demo scenario at its default resolution (airflow solver included; with its
//! default 2-D plenum and again with the 1-D duct). Targets:
//! ≥ 10 million cell-steps per second; a 48-hour load under 1 s. The layer-step groups drive a whole `Run` on a fixed
//! airflow, so they time the layer step with the run's per-step bookkeeping around it (bounds checks, column totals,
//! accounts, stop rule, records); `perf` puts that bookkeeping at about 5 % of the whole 30-hour run.
//! Run: `cargo bench --bench drying -- --warm-up-time 1 --measurement-time 5`.
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use ndarray::Array2;

use dryfront::airflow::PlenumChoice;
use dryfront::crop::Crop;
use dryfront::drying::bed::{BedState, InitialMoisture};
use dryfront::drying::heater::{Fuel, Heater, HeaterStrategy};
use dryfront::drying::material::CropMaterial;
use dryfront::drying::run::{ConstantAmbient, FixedFlow, FlowField, Run, RunSettings, StopRule};
use dryfront::input::scenario::Scenario;
use dryfront::load::run_load;
use dryfront::props::psychro::AirState;

/// Steps of the first-hour phase (0.1 h each).
const STEPS: usize = 10;
/// Hours of the whole-run phase.
const RUN_HOURS: usize = 30;

fn layer_step(c: &mut Criterion) {
    let crop = Crop::load_named("peanut-inshell").unwrap();
    let material = CropMaterial::new(&crop);
    let (nx, ny, nz) = (64, 24, 32);
    let fresh = BedState::new(
        &material,
        Array2::from_elem((nx, ny), 1.25),
        0.1 * 0.1,
        nz,
        270.0,
        &InitialMoisture::Uniform(0.21),
        25.0,
    )
    .unwrap();
    let air = AirState::from_rh(25.0, 0.7, 101_325.0);
    let field = FlowField {
        fan_power_w: 3000.0,
        electric_power_w: 3000.0,
        plenum_pa: 120.0,
        ..FlowField::from_velocity(Array2::from_elem((nx, ny), 0.21), &air)
    };
    let heater = Heater {
        strategy: HeaterStrategy::FixedRise { rise_k: 8.0 },
        window_h: None,
        capacity_w: None,
        max_plenum_c: 35.0,
        fuel: Fuel::propane(),
    };
    let ambient = ConstantAmbient(air);
    for (group, hours) in [
        ("layer_step", STEPS as f64 * 0.1),
        ("layer_step_whole_run", RUN_HOURS as f64),
    ] {
        let settings = RunSettings {
            max_hours: hours,
            stop: StopRule::Hours(hours),
            ..RunSettings::default()
        };
        let steps = (hours * 3600.0 / settings.dt_s).round() as usize;
        let mut g = c.benchmark_group(group);
        g.sample_size(10);
        g.throughput(Throughput::Elements((nx * ny * nz * steps) as u64));
        for threads in [1, 2] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            g.bench_function(
                format!("{nx}x{ny}x{nz} cells, {steps} steps, {threads} thread(s)"),
                |b| {
                    b.iter(|| {
                        pool.install(|| {
                            let mut flow = FixedFlow(field.clone());
                            Run::new(
                                &material,
                                fresh.clone(),
                                &ambient,
                                &mut flow,
                                heater,
                                settings,
                            )
                            .unwrap()
                            .run_to_end(&mut ())
                            .unwrap()
                        })
                    })
                },
            );
        }
        g.finish();
    }
}

fn full_load(c: &mut Criterion) {
    let mut g = c.benchmark_group("full_load");
    g.sample_size(10);
    let (mut sc, _) = Scenario::read("demo-load", false).unwrap();
    sc.spec.run.stop = StopRule::Hours(48.0); // always the full 48 h
    g.bench_function(
        "demo load, 48 h, 16x6x20 grid, airflow re-solves included",
        |b| b.iter(|| run_load(&sc.spec, &mut ()).unwrap()),
    );
    // the same load on the 1-D duct plenum, the demo's default before the 2-D plenum became it
    let mut duct = sc.spec.clone();
    let mut container = (*duct.container).clone();
    container.plenum = PlenumChoice::Duct {};
    duct.container = container.into();
    g.bench_function("demo load, 48 h, 16x6x20 grid, duct plenum", |b| {
        b.iter(|| run_load(&duct, &mut ()).unwrap())
    });
    g.finish();
}

criterion_group!(benches, layer_step, full_load);
criterion_main!(benches);
