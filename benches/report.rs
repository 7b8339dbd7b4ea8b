//! What the HTML report costs, side by side with the work it reports on: (a) the demo load (its own scenario and
//! grid, run to its stop rule) against building its whole file set with `report.html` (pictures, page, SHA-256 of
//! every input); (b) a 600-load season on 30 dryers (fixed-time drier, so only the report is timed) — the Gantt
//! and queue charts, the key figures and the page, and hashing the buying-point file. Targets: (a) the report
//! adds under 10 % to the load; (b) under 1 s.
//!
//! Run: `cargo bench --bench report -- --warm-up-time 1 --measurement-time 4`.

#[path = "../tests/season_support/mod.rs"]
mod season_support;

use criterion::{criterion_group, criterion_main, Criterion};
use dryfront::input::scenario::Scenario;
use dryfront::load::run_load;
use dryfront::report::gantt::{gantt_svg, queue_svg};
use dryfront::report::html::InputRecord;
use dryfront::report::load::{load_outputs, load_page, MapScales};
use dryfront::report::output::OutputSet;
use dryfront::report::season::season_page;
use dryfront::season::arrivals::{generate, ArrivalParams};
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::FixedTimeDrier;
use dryfront::season::kpi::kpis;
use dryfront::season::sim::simulate;
use dryfront::units::UnitSystem;
use season_support::*;

fn hash_inputs(paths: &[std::path::PathBuf]) -> Vec<InputRecord> {
    paths
        .iter()
        .map(|p| InputRecord::of(p, &std::fs::read(p).unwrap()))
        .collect()
}

fn one_load(c: &mut Criterion) {
    let mut g = c.benchmark_group("report one load");
    g.sample_size(10);
    let (sc, _) = Scenario::read("demo-load", false).unwrap();
    let r = run_load(&sc.spec, &mut ()).unwrap();
    let label = sc.spec.heater.spec.to_string();
    g.bench_function("run the demo load", |b| {
        b.iter(|| run_load(&sc.spec, &mut ()).unwrap())
    });
    g.bench_function("its files and report.html", |b| {
        b.iter(|| {
            let mut set = load_outputs(&sc.spec, &label, &r, UnitSystem::Si, &MapScales::default());
            let page = load_page(
                &sc.spec,
                &label,
                &r,
                UnitSystem::Si,
                &set,
                hash_inputs(&sc.inputs),
            );
            set.add("report.html", page.render());
            set
        })
    });
    g.finish();
}

fn season(c: &mut Criterion) {
    let mut g = c.benchmark_group("report season");
    g.sample_size(10);
    let drier = FixedTimeDrier::new(10.0, |l, _| (l.moisture_pct - 10.0) / 0.5);
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    };
    let bp = point(30, 0.75, 12.0, 70);
    let loads = generate(&ArrivalParams::new(t0(), 70, 600), 1).unwrap();
    let run = simulate(
        &bp,
        &loads,
        &drier,
        DispatchPolicy::WaitLimit,
        &pred,
        bp.season.end(),
    )
    .unwrap();
    let bp_file = std::path::PathBuf::from(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/models/buying-points/wrenfield.json"
    ));
    g.bench_function("600 loads: charts, figures and report.html", |b| {
        b.iter(|| {
            let k = kpis(&run, &bp);
            let mut set = OutputSet::new();
            set.add("gantt.svg", gantt_svg(&run, "Dryers"));
            set.add("queue.svg", queue_svg(&run, "Queue"));
            let page = season_page(
                ("Test Yard", "USD"),
                &run,
                &k,
                UnitSystem::Si,
                &set,
                k.summary("USD", UnitSystem::Si),
                hash_inputs(std::slice::from_ref(&bp_file)),
            );
            set.add("report.html", page.render());
            set
        })
    });
    g.finish();
}

criterion_group!(benches, one_load, season);
criterion_main!(benches);
