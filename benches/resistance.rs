//! Speed of the property calls in the airflow solver's and layer model's inner loops: the Shedd and Ergun inverses
//! (velocity from pressure gradient) and the Hyland–Wexler saturation pressure. Target: under 100 ns per call.
//!
//! Run briefly with `cargo bench --bench resistance -- --warm-up-time 1 --measurement-time 2`.

use criterion::{criterion_group, criterion_main, Criterion};
use dryfront::props::psychro::saturation_pressure_pa;
use dryfront::props::resistance::{BedAirflowLaw, BedResistance, Ergun, Shedd};
use std::hint::black_box;

/// Pressure gradients spread over a peanut bed's working range (≈ 0.5–300 Pa/m), so branch prediction and early
/// exits do not flatter one value.
fn gradients() -> Vec<f64> {
    (0..64).map(|i| 0.5 * 1.1_f64.powi(i)).collect()
}

fn bench(c: &mut Criterion) {
    let shedd = Shedd::new(3.80e3, 111.0).expect("valid constants");
    let ergun = Ergun::fit_to_shedd(&shedd, 0.45, 0.2, 1.85e-5, 1.16).expect("valid fit");
    let law = BedAirflowLaw::new(BedResistance::Shedd(shedd), 1.2).expect("valid multiplier");
    let gs = gradients();
    let n = gs.len() as u64;
    let mut g = c.benchmark_group(format!("per {n} calls"));
    g.bench_function("Shedd::velocity_from_gradient", |b| {
        b.iter(|| {
            gs.iter()
                .map(|&x| shedd.velocity_from_gradient(black_box(x)))
                .sum::<f64>()
        })
    });
    g.bench_function("Ergun::velocity_from_gradient", |b| {
        b.iter(|| {
            gs.iter()
                .map(|&x| ergun.velocity_from_gradient(black_box(x)))
                .sum::<f64>()
        })
    });
    g.bench_function("BedAirflowLaw::velocity_from_gradient_xyz", |b| {
        b.iter(|| {
            gs.iter()
                .map(|&x| law.velocity_from_gradient_xyz(black_box([0.3 * x, -0.1 * x, x]))[2])
                .sum::<f64>()
        })
    });
    let temps: Vec<f64> = (0..64).map(|i| -5.0 + f64::from(i)).collect();
    g.bench_function("saturation_pressure_pa", |b| {
        b.iter(|| {
            temps
                .iter()
                .map(|&t| saturation_pressure_pa(black_box(t)))
                .sum::<f64>()
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
