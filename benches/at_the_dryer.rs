//! At the dryer, today: (a) the forecast of one load with a 50-member weather ensemble (replay from its on-air
//! time, adjustment to the readings, the deterministic finish and 50 members; the demo status file, 8×3×12
//! grid); (b) a 72 h board of the demo buying point's 7 dryers, 6 of them loaded (each replayed and forecast
//! with 10 members), and 10 loads waiting in the yard (dispatched with the deep-bed drier, each with a
//! 10-member range). Targets (issue 17): (a) under 2 s, (b) under 5 s on the project's 2-core machine.
//!
//! Run: `cargo bench --bench at_the_dryer -- --warm-up-time 1 --measurement-time 4`.

use std::path::Path;

use chrono::Duration;
use criterion::{criterion_group, criterion_main, Criterion};
use dryfront::board::{current_loads, plan, ranges};
use dryfront::input::board::read_board;
use dryfront::input::status::read_status;
use dryfront::season::arrivals::Load;
use dryfront::season::dispatch::MoistureRatePredictor;
use dryfront::season::drier::DeepBedDrier;
use dryfront::status::forecast::forecast;
use dryfront::status::ForecastSettings;
use dryfront::weather::ensemble::Spread;

fn example(name: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples/at-the-dryer")
        .join(name)
}

fn spread() -> Spread {
    Spread {
        t_sigma_24h_k: 1.5,
        dew_sigma_24h_k: 1.5,
        seed: 1,
    }
}

fn ensemble_forecast(c: &mut Criterion) {
    let input = read_status(&example("status-bf06.json")).unwrap();
    let settings = ForecastSettings {
        members: 50,
        spread: spread(),
        what_if: vec![],
    };
    let mut g = c.benchmark_group("at the dryer");
    g.sample_size(10);
    g.bench_function("forecast, 50 members", |b| {
        b.iter(|| forecast(&input.status, &settings).unwrap())
    });
    g.finish();
}

fn board_72h(c: &mut Criterion) {
    let b = read_board(&example("board.json")).unwrap();
    // Ten waiting: the demo's four and six more, spread over the night before now.
    let mut yard = b.yard.clone();
    for i in 0..6 {
        yard.push(Load {
            id: format!("extra-{i}"),
            arrival: b.now - Duration::minutes(50 * (i + 1)),
            mass_kg: 4200.0 + 150.0 * i as f64,
            moisture_pct: 18.0 + i as f64,
            notes: String::new(),
        });
    }
    yard.sort_by_key(|l| l.arrival);
    assert_eq!((b.bp.dryers.len(), yard.len()), (7, 10));
    let drier = DeepBedDrier::new(b.template.clone());
    let pred = MoistureRatePredictor {
        target_pct: b.bp.rules.target_kernel_pct,
        rate_pct_per_h: 0.5,
    };
    let mut g = c.benchmark_group("at the dryer");
    g.sample_size(10);
    g.bench_function("board 72 h, 7 dryers, 10 waiting", |bch| {
        bch.iter(|| {
            let current = current_loads(&b.bp, &b.on_dryers, &spread(), 10).unwrap();
            let run = plan(&b.bp, &yard, &current, b.now, 72.0, &drier, b.policy, &pred).unwrap();
            ranges(&b.bp, &b.template, &yard, &run, b.now, &spread(), 10).unwrap()
        })
    });
    g.finish();
}

criterion_group!(benches, ensemble_forecast, board_72h);
criterion_main!(benches);
