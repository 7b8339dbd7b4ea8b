//! Season planner cost: (a) a 70-day season of 600 loads on 30 dryers with the fixed-time drier, which times the
//! event logic alone, swept over loads and dryers to show how it grows, and (b) 150 and 600 loads over 40 days on
//! 30 wagons of the invented Wrenfield point with the deep-bed drier through the one load path (bundled peanut
//! model, the demo season's weather, the airflow solved at each load's start, the season's coarse 4×2×10 grid).
//! Loads per second = loads / median.
//!
//! The deep-bed seasons run inside one pool (as the command does), with the loads dried in order and with
//! look-ahead (several at once), side by side.
//!
//! (c) The 20-season × 600-load ensemble as a whole `season sweep` command, on the screening grid and on the
//! default season grid.
//!
//! Run: `cargo bench --bench season -- --warm-up-time 1 --measurement-time 2`.

#[path = "../tests/season_support/mod.rs"]
mod season_support;

use std::sync::Arc;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use dryfront::input::season::{read_buying_point, season_template, SeasonRunSettings};
use dryfront::season::arrivals::{generate, ArrivalParams};
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::{DeepBedDrier, FixedTimeDrier};
use dryfront::season::sim::{simulate, simulate_with};
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
    let root = env!("CARGO_MANIFEST_DIR");
    let bp = read_buying_point(format!("{root}/models/buying-points/wrenfield.json").as_ref())
        .unwrap()
        .with_dryer_count(30);
    let weather = dryfront::weather::read(
        format!("{root}/weather-samples/cypress-neck-2026/season_000.csv").as_ref(),
        None,
        &Default::default(),
    )
    .unwrap()
    .0;
    let (template, _) = season_template(
        &bp,
        std::path::Path::new("wrenfield.json"),
        "peanut-inshell",
        Arc::new(weather),
        &SeasonRunSettings::default(),
    )
    .unwrap();
    let pool = rayon::ThreadPoolBuilder::new().build().unwrap();
    let mut g = c.benchmark_group("season deep-bed 4x2x10");
    g.sample_size(10);
    for loads in [150, 600] {
        // Keep the draws to what a Wrenfield wagon takes (its file's `capacity_kg`, 4600 kg).
        let mut p = ArrivalParams::new(bp.season.start, 40, loads);
        p.mass_bounds_kg = (1500.0, 4600.0);
        p.mass_mean_kg = 3800.0;
        let ls = generate(&p, 1).unwrap();
        g.throughput(Throughput::Elements(loads as u64));
        // Inside one pool, as the command runs: loads dried one after another, and several at once (look-ahead).
        for (name, ahead) in [
            ("30 dryers, in order", false),
            ("30 dryers, look-ahead", true),
        ] {
            g.bench_with_input(
                BenchmarkId::new(name, format!("{loads} loads")),
                &ls,
                |b, ls| {
                    b.iter(|| {
                        // A fresh drier every time: one kept across iterations would answer every drying after
                        // the first from its memory, and the bench would time the look-ups.
                        let drier = DeepBedDrier::new(template.clone());
                        pool.install(|| {
                            simulate_with(
                                &bp,
                                ls,
                                &drier,
                                DispatchPolicy::WaitLimit,
                                &pred(),
                                bp.season.end(),
                                ahead,
                            )
                            .unwrap()
                        })
                    })
                },
            );
        }
    }
    g.finish();
}

/// The ensemble of issue 16's targets, as the command runs it: `season sweep` of 20 seasons × 600 loads on 30 of
/// the Wrenfield wagons, both policies (`fcfs` and `wait-limit`), each season with its own synthetic weather, on the
/// screening grid (2 × 1 × 5) and on the default season grid (4 × 2 × 10). One sample is one whole process (its
/// files included); the default grid's ten samples take about six minutes, so filter with
/// `cargo bench --bench season -- "ensemble/2x1x5"` for the screening grid alone.
fn ensemble(c: &mut Criterion) {
    let root = env!("CARGO_MANIFEST_DIR");
    let scratch = tempfile::tempdir().unwrap();
    let mut g = c.benchmark_group("season sweep ensemble");
    g.sample_size(10);
    for grid in ["2x1x5", "4x2x10"] {
        let out = scratch.path().join(grid);
        g.bench_function(
            format!("{grid}/20 seasons x 600 loads, 30 dryers, 2 policies"),
            |b| {
                b.iter(|| {
                    let status = std::process::Command::new(env!("CARGO_BIN_EXE_dryfront"))
                        .current_dir(root)
                        .args(["season", "sweep", "--scenario"])
                        .arg(format!("{root}/models/buying-points/wrenfield.json"))
                        .args(["--dryers", "30", "--seasons", "20", "--loads", "600"])
                        .args(["--grid", grid, "--replace", "--out"])
                        .arg(&out)
                        .stdout(std::process::Stdio::null())
                        .stderr(std::process::Stdio::null())
                        .status()
                        .unwrap();
                    assert!(status.success());
                })
            },
        );
    }
    g.finish();
}

criterion_group!(benches, event_logic, deep_bed, ensemble);
criterion_main!(benches);
