//! Properties every season must have, on generated seasons: every arrival is dried or reported unfinished; no
//! dryer holds two loads at once (turnaround included); Little's law L = λW holds on the queue measured from the
//! event log (Little 1961); wettest-first lowers the waits of the wettest loads; more dryers never raise the mean
//! wait under first come first served (a monotonicity of the multi-server FCFS recursion, checked by proptest).

mod season_support;

use dryfront::season::arrivals::{generate, ArrivalParams, Load};
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::{FixedTimeDrier, RateRuleDrier};
use dryfront::season::kpi::kpis;
use dryfront::season::sim::{hours_between, simulate, SeasonRun};
use proptest::prelude::*;
use season_support::*;

fn pred() -> MoistureRatePredictor {
    MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    }
}

fn season(
    n_dryers: usize,
    days: u32,
    n_loads: usize,
    seed: u64,
    policy: DispatchPolicy,
) -> (Vec<Load>, SeasonRun) {
    let bp = point(n_dryers, 0.75, 12.0, days);
    let loads = generate(&ArrivalParams::new(t0(), days, n_loads), seed).unwrap();
    let drier = RateRuleDrier::new(10.0);
    let run = simulate(&bp, &loads, &drier, policy, &pred(), bp.season.end()).unwrap();
    (loads, run)
}

#[test]
fn every_arrival_is_dried_or_reported_and_dryers_never_overlap() {
    for policy in DispatchPolicy::ALL {
        // 600 loads in 40 days on 8 dryers overloads the yard near the peak: some loads are left at the end.
        let (loads, run) = season(8, 40, 600, 21, policy);
        let mut seen = vec![0u32; loads.len()];
        for r in &run.schedule {
            seen[r.load_index] += 1;
            assert_eq!(r.load_id, loads[r.load_index].id);
            assert!(r.start >= r.arrival && r.finish >= r.start && r.released >= r.finish);
        }
        for u in &run.never_started {
            seen[u.load_index] += 1;
        }
        assert!(
            seen.iter().all(|&c| c == 1),
            "{policy:?}: a load is missing or counted twice"
        );
        assert!(
            !run.never_started.is_empty(),
            "the case should leave loads at season end"
        );
        for d in 0..run.dryer_ids.len() {
            let mut iv: Vec<_> = run
                .schedule
                .iter()
                .filter(|r| r.dryer_index == d)
                .map(|r| (r.start, r.released))
                .collect();
            iv.sort();
            for w in iv.windows(2) {
                assert!(w[1].0 >= w[0].1, "{policy:?}: dryer {d} overlaps: {w:?}");
            }
        }
        let k = kpis(&run, &point(8, 0.75, 12.0, 40));
        assert_eq!(k.loads_arrived, loads.len());
        assert_eq!(k.loads_dried + k.loads_unfinished, loads.len());
    }
}

#[test]
fn littles_law_holds_on_the_simulated_queue() {
    // 1000 loads over 120 days on 13 dryers: queues build around the harvest peak. Window: the first arrival to
    // day 60, when loads are still queued, so the identity is not trivially exact.
    let (loads, run) = season(13, 120, 1000, 5, DispatchPolicy::Fcfs);
    assert!(run.never_started.is_empty());
    let from = loads.first().unwrap().arrival;
    let to = at_h(60.0 * 24.0);
    let t_h = hours_between(from, to);
    let l_avg = run.mean_queue(from, to);
    let inside: Vec<f64> = run
        .schedule
        .iter()
        .filter(|r| r.arrival < to)
        .map(|r| r.wait_h)
        .collect();
    let lambda = inside.len() as f64 / t_h;
    let w = inside.iter().sum::<f64>() / inside.len() as f64;
    let queued_at_end = run
        .schedule
        .iter()
        .filter(|r| r.arrival < to && r.start > to)
        .count();
    assert!(l_avg > 0.5, "queue too short to test: L = {l_avg}");
    assert!(
        queued_at_end > 0,
        "the window should end with loads waiting"
    );
    let rel = (l_avg - lambda * w).abs() / l_avg;
    // Loads still queued when the window ends count their whole wait in W but only part of it in L: a few
    // percent is the honest tolerance.
    assert!(
        rel < 0.05,
        "L = {l_avg:.3}, λW = {:.3}, off by {:.2} %",
        lambda * w,
        rel * 100.0
    );
    // Over the span that holds every wait, the log integral equals the sum of waits exactly.
    let last_start = run.schedule.iter().map(|r| r.start).max().unwrap();
    let area = run.mean_queue(from, last_start) * hours_between(from, last_start);
    let total_wait: f64 = run.schedule.iter().map(|r| r.wait_h).sum();
    assert!(
        (area - total_wait).abs() < 1e-6 * total_wait,
        "{area} vs {total_wait}"
    );
}

#[test]
fn wettest_first_lowers_the_wait_of_the_wettest_loads() {
    let (loads, fcfs) = season(9, 60, 800, 9, DispatchPolicy::Fcfs);
    let (_, wet) = season(9, 60, 800, 9, DispatchPolicy::Wettest);
    let mut m: Vec<f64> = loads.iter().map(|l| l.moisture_pct).collect();
    m.sort_by(f64::total_cmp);
    let cut = m[m.len() * 9 / 10];
    let mean_wait = |r: &SeasonRun| {
        let w: Vec<f64> = r
            .schedule
            .iter()
            .filter(|x| x.moisture_in_pct >= cut)
            .map(|x| x.wait_h)
            .collect();
        w.iter().sum::<f64>() / w.len() as f64
    };
    let (a, b) = (mean_wait(&fcfs), mean_wait(&wet));
    assert!(
        a > 1.0,
        "the case should have queues: FCFS wait of the wettest {a}"
    );
    assert!(
        b < 0.5 * a,
        "wettest tenth: FCFS {a:.2} h vs wettest-first {b:.2} h"
    );
}

#[test]
fn more_dryers_never_raise_the_mean_wait_on_a_fixed_arrival_set() {
    let bp = point(1, 0.75, 12.0, 60);
    let loads = generate(&ArrivalParams::new(t0(), 60, 700), 17).unwrap();
    let drier = RateRuleDrier::new(10.0);
    let mut last = f64::INFINITY;
    for n in 4..=14 {
        let b = bp.with_dryer_count(n);
        let run = simulate(
            &b,
            &loads,
            &drier,
            DispatchPolicy::Fcfs,
            &pred(),
            b.season.end(),
        )
        .unwrap();
        let k = kpis(&run, &b);
        assert!(
            k.mean_wait_h <= last + 1e-9,
            "{n} dryers: {} h after {last} h",
            k.mean_wait_h
        );
        last = k.mean_wait_h;
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    #[test]
    fn fcfs_waits_do_not_rise_with_another_dryer(
        arr in proptest::collection::vec((0.0..100.0f64, 11.0..30.0f64), 1..30),
        n in 1usize..5,
    ) {
        let mut spec = arr.clone();
        spec.sort_by(|a, b| a.0.total_cmp(&b.0));
        let ls = loads(&spec);
        let drier = FixedTimeDrier::new(10.0, |l, _| l.moisture_pct - 10.0);
        let b = point(n, 0.5, 12.0, 30);
        let b1 = point(n + 1, 0.5, 12.0, 30);
        let r = simulate(&b, &ls, &drier, DispatchPolicy::Fcfs, &pred(), b.season.end()).unwrap();
        let r1 = simulate(&b1, &ls, &drier, DispatchPolicy::Fcfs, &pred(), b1.season.end()).unwrap();
        let mut w = vec![0.0; ls.len()];
        let mut w1 = vec![0.0; ls.len()];
        for x in &r.schedule { w[x.load_index] = x.wait_h; }
        for x in &r1.schedule { w1[x.load_index] = x.wait_h; }
        // Each load's own wait does not rise, hence neither does the mean.
        for i in 0..ls.len() {
            prop_assert!(w1[i] <= w[i] + 1e-9, "load {i}: {} h with {} dryers, {} h with {}", w1[i], n + 1, w[i], n);
        }
    }
}

#[test]
fn daily_table_adds_up_to_the_season() {
    let (loads, run) = season(10, 60, 500, 13, DispatchPolicy::WaitLimit);
    let arr: Vec<_> = loads.iter().map(|l| (l.arrival, l.mass_kg)).collect();
    let days = dryfront::season::kpi::daily(&run, &arr);
    assert_eq!(days.len(), 60);
    assert_eq!(days.iter().map(|d| d.arrivals).sum::<usize>(), loads.len());
    let tonnes: f64 = loads.iter().map(|l| l.mass_kg).sum::<f64>() / 1000.0;
    assert!((days.iter().map(|d| d.tonnes_in).sum::<f64>() - tonnes).abs() < 1e-9 * tonnes);
    let in_window = run.schedule.iter().filter(|r| r.finish < run.end).count();
    assert_eq!(
        days.iter().map(|d| d.loads_finished).sum::<usize>(),
        in_window
    );
    // Occupancy never exceeds the fleet, and its day mean never exceeds the day's peak.
    for d in &days {
        assert!(d.peak_dryers_busy <= 10);
        assert!(
            d.mean_dryers_busy <= d.peak_dryers_busy as f64 + 1e-9,
            "{d:?}"
        );
    }
    let k = kpis(&run, &point(10, 0.75, 12.0, 60));
    let mean_busy = days.iter().map(|d| d.mean_dryers_busy).sum::<f64>() / days.len() as f64;
    assert!(
        (mean_busy / 10.0 * 100.0 - k.utilisation_pct).abs() < 1e-6,
        "{mean_busy} vs {}",
        k.utilisation_pct
    );
}
