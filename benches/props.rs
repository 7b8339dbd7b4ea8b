//! Cost per call of the property functions the deep-bed model calls for every cell and step: EMC, ERH,
//! saturation pressure, the pod thin-layer step (one pod at a time and four at a time) and the inverse of Shedd's
//! relation. Target: < 100 ns for EMC/ERH.
//!
//! Run: `cargo bench --bench props -- --warm-up-time 1 --measurement-time 2`
use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use dryfront::crop::Crop;
use dryfront::props::psychro::saturation_pressure_pa;
use dryfront::props::sorption::{Isotherm, MoistureUnit};
use dryfront::props::thin_layer::{step_pod, PodState, PodStepper};
use dryfront::units::db_from_wb;

fn props(c: &mut Criterion) {
    let peanut = Crop::load_named("peanut-inshell").expect("peanut crop loads");
    let kernel = peanut.moisture.kernel().sorption.desorption;
    let forms = [
        ("cromarty", kernel),
        (
            "chung-pfost",
            Isotherm::ModifiedChungPfost {
                a: 312.40,
                b: 16.958,
                c: 30.205,
                unit: MoistureUnit::DecimalDb,
            },
        ),
        (
            "henderson",
            Isotherm::ModifiedHenderson {
                a: 8.6541e-5,
                b: 1.8634,
                c: 49.810,
                unit: MoistureUnit::PercentDb,
            },
        ),
        (
            "gab",
            Isotherm::ModifiedGab {
                a: 0.06,
                b: 0.8,
                c: 300.0,
                unit: MoistureUnit::DecimalDb,
            },
        ),
    ];
    let mut g = c.benchmark_group("props");
    for (name, iso) in forms {
        g.bench_function(format!("emc_db {name}"), |b| {
            b.iter(|| black_box(iso).emc_db(black_box(30.0), black_box(0.55)))
        });
        g.bench_function(format!("erh {name}"), |b| {
            b.iter(|| black_box(iso).erh(black_box(30.0), black_box(0.12)))
        });
    }
    g.bench_function("saturation_pressure_pa", |b| {
        b.iter(|| saturation_pressure_pa(black_box(31.7)))
    });
    let s0 = peanut.moisture.state_from_kernel(25.0, db_from_wb(0.2));
    g.bench_function("step_pod two-compartment 900 s", |b| {
        b.iter(|| {
            step_pod(
                black_box(&peanut.moisture),
                black_box(s0),
                black_box(33.0),
                black_box(0.45),
                900.0,
            )
        })
    });
    // The layer step's pod law one pod at a time and four at a time (`PodStepper::step4`, four columns' cells of
    // one layer), on 256 pods of drying and rewetting states in air from 15 to 45 °C and 15 to 95 % RH.
    let stepper = PodStepper::new(&peanut.moisture);
    let pods: Vec<(PodState, f64, f64)> = (0..256)
        .map(|i| {
            let x = f64::from(i) / 256.0;
            let s = PodState {
                m_hull_db: 0.08 + 0.5 * ((x * 7.3).fract()),
                m_kernel_db: 0.08 + 0.3 * ((x * 3.1).fract()),
                m_curve_start_db: 0.3,
            };
            (
                s,
                15.0 + 30.0 * ((x * 5.7).fract()),
                0.15 + 0.8 * ((x * 11.3).fract()),
            )
        })
        .collect();
    g.bench_function("PodStepper::step, 256 pods, 360 s", |b| {
        b.iter(|| {
            for (s, t, rh) in black_box(&pods) {
                black_box(stepper.step(*s, *t, *rh, 360.0));
            }
        })
    });
    g.bench_function("PodStepper::step4, 256 pods, 360 s", |b| {
        b.iter(|| {
            for q in black_box(&pods).chunks(4) {
                let out = stepper.step4(
                    [q[0].0, q[1].0, q[2].0, q[3].0],
                    [q[0].1, q[1].1, q[2].1, q[3].1],
                    [q[0].2, q[1].2, q[2].2, q[3].2],
                    360.0,
                );
                black_box(out);
            }
        })
    });
    let shedd = peanut.resistance.shedd;
    g.bench_function("Shedd::velocity_from_gradient", |b| {
        b.iter(|| black_box(shedd).velocity_from_gradient(black_box(55.0)))
    });
    g.finish();
}

criterion_group!(benches, props);
criterion_main!(benches);
