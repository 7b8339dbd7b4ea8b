//! Calibration cost: two rate constants (hull and kernel) fitted to the samples of three loads — the example load
//! record `examples/calibration/bf-load-23.json` (4.3 m wagon, 2 × 1 × 10 grid, 0.2 h steps) started 0, 24 and 48 h
//! apart, each with 13 samples generated from known constants (k_h 0.62, k_kh 0.055 /h) — from the bundled
//! constants, by Levenberg–Marquardt. Issue target: under 30 s. Iterations and model runs are printed once.
//!
//! Run: `cargo bench --bench calibrate -- --warm-up-time 1 --measurement-time 4`.

use criterion::{criterion_group, criterion_main, Criterion};
use dryfront::calibrate::fit::FitSettings;
use dryfront::calibrate::rates::{calibrate, model_samples, Constant, LoadRecord};
use dryfront::calibrate::samples::Sample;
use dryfront::crop::Crop;
use dryfront::input::samples::{read_samples, SampledLoad};
use dryfront::input::scenario::Scenario;
use dryfront::load::clock_at;

fn records() -> Vec<LoadRecord> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/calibration");
    let (sc, _) = Scenario::read(dir.join("bf-load-23.json").to_str().unwrap(), false).unwrap();
    let c = &sc.spec.container;
    let load = SampledLoad {
        start: sc.spec.start,
        length_m: c.length_m,
        width_m: c.width_m,
        max_depth_m: c.wall_height_m,
    };
    let plan = read_samples(&dir.join("bf-load-23-samples.csv"), &load).unwrap();
    let mut truth = Crop::load_named("peanut-inshell").unwrap();
    Constant::HullRate.set(&mut truth, 0.62);
    Constant::KernelRate.set(&mut truth, 0.055);
    (0..3)
        .map(|i| {
            let mut spec = sc.spec.clone();
            spec.start = clock_at(spec.start, 24.0 * i as f64);
            let rec = LoadRecord {
                name: format!("load {i}"),
                spec,
                samples: plan.clone(),
            };
            let m = model_samples(&truth, std::slice::from_ref(&rec)).unwrap();
            let samples = plan
                .iter()
                .zip(m)
                .map(|(s, v)| Sample {
                    moisture_wb_pct: v,
                    ..*s
                })
                .collect();
            LoadRecord { samples, ..rec }
        })
        .collect()
}

fn two_rates_three_loads(c: &mut Criterion) {
    let recs = records();
    let crop = Crop::load_named("peanut-inshell").unwrap();
    let consts = [Constant::HullRate, Constant::KernelRate];
    let once = calibrate(&crop, &recs, &consts, &FitSettings::default()).unwrap();
    eprintln!(
        "fit: {:?} ± {:?} after {} iterations, {} runs of the three loads, converged {}",
        once.fit.values,
        once.fit.half_width,
        once.fit.iterations,
        once.fit.evaluations,
        once.fit.converged
    );
    let mut g = c.benchmark_group("calibrate");
    g.sample_size(10);
    g.bench_function("two rates, three loads", |b| {
        b.iter(|| calibrate(&crop, &recs, &consts, &FitSettings::default()).unwrap())
    });
    g.finish();
}

criterion_group!(benches, two_rates_three_loads);
criterion_main!(benches);
