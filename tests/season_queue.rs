//! Queue logic against small cases worked by hand: 3 dryers, 8 loads, drying time injected through the seam
//! (hours = kernel moisture − 10, so a 20 % load dries in 10 h), turnaround 1 h, wait limit 6 h. Starts, waits and
//! finishes must come out exactly as computed in the comments, for each dispatch policy.

mod season_support;

use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::FixedTimeDrier;
use dryfront::season::sim::{simulate, SeasonRun};
use season_support::*;

// Arrivals (hour, moisture %): drying hours = moisture − 10.
const SPEC: [(f64, f64); 8] = [
    (0.0, 20.0),  // L1: 10 h
    (1.0, 18.0),  // L2: 8 h
    (2.0, 22.0),  // L3: 12 h
    (3.0, 16.0),  // L4: 6 h
    (4.0, 24.0),  // L5: 14 h
    (5.0, 19.0),  // L6: 9 h
    (12.0, 15.0), // L7: 5 h
    (12.0, 21.0), // L8: 11 h
];

fn run(policy: DispatchPolicy) -> SeasonRun {
    let bp = point(3, 1.0, 6.0, 5);
    let ls = loads(&SPEC);
    let drier = FixedTimeDrier::new(10.0, |l, _| l.moisture_pct - 10.0);
    // The predictor gives the same hours as the drier: (m − 10) / 1.
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 1.0,
    };
    simulate(&bp, &ls, &drier, policy, &pred, bp.season.end()).unwrap()
}

/// (load, dryer, start h, wait h, finish h) for every row, in start order.
fn rows(r: &SeasonRun) -> Vec<(String, String, f64, f64, f64)> {
    let h = |t| dryfront::season::sim::hours_between(t0(), t);
    r.schedule
        .iter()
        .map(|x| {
            (
                x.load_id.clone(),
                x.dryer_id.clone(),
                h(x.start),
                x.wait_h,
                h(x.finish),
            )
        })
        .collect()
}

fn expect(r: &SeasonRun, want: &[(&str, &str, f64, f64, f64)]) {
    let got = rows(r);
    assert_eq!(got.len(), want.len(), "{got:?}");
    for (g, w) in got.iter().zip(want) {
        assert_eq!((g.0.as_str(), g.1.as_str()), (w.0, w.1), "{got:?}");
        // Times are whole hours; the simulation rounds to the millisecond.
        for (a, b) in [(g.2, w.2), (g.3, w.3), (g.4, w.4)] {
            assert!((a - b).abs() < 1e-6, "{g:?} vs {w:?}");
        }
    }
    assert!(r.never_started.is_empty());
}

#[test]
fn fcfs_matches_hand_computation() {
    // 0: L1→D1 (fin 10, free 11). 1: L2→D2 (fin 9, free 10). 2: L3→D3 (fin 14, free 15). L4–L6 queue.
    // 10: D2 frees → L4 (oldest), wait 7, fin 16, free 17. 11: D1 → L5, wait 7, fin 25, free 26.
    // 12: L7, L8 join. 15: D3 → L6, wait 10, fin 24, free 25. 17: D2 → L7, wait 5, fin 22, free 23.
    // 23: D2 → L8, wait 11, fin 34.
    expect(
        &run(DispatchPolicy::Fcfs),
        &[
            ("L1", "D1", 0.0, 0.0, 10.0),
            ("L2", "D2", 1.0, 0.0, 9.0),
            ("L3", "D3", 2.0, 0.0, 14.0),
            ("L4", "D2", 10.0, 7.0, 16.0),
            ("L5", "D1", 11.0, 7.0, 25.0),
            ("L6", "D3", 15.0, 10.0, 24.0),
            ("L7", "D2", 17.0, 5.0, 22.0),
            ("L8", "D2", 23.0, 11.0, 34.0),
        ],
    );
}

#[test]
fn wettest_first_matches_hand_computation() {
    // 10: D2 → L5 (24 %), wait 6, fin 24, free 25. 11: D1 → L6 (19 %), wait 6, fin 20, free 21.
    // 15: D3 → L8 (21 %), wait 3, fin 26, free 27. 21: D1 → L4 (16 % beats 15 %), wait 18, fin 27, free 28.
    // 25: D2 → L7, wait 13, fin 30.
    expect(
        &run(DispatchPolicy::Wettest),
        &[
            ("L1", "D1", 0.0, 0.0, 10.0),
            ("L2", "D2", 1.0, 0.0, 9.0),
            ("L3", "D3", 2.0, 0.0, 14.0),
            ("L5", "D2", 10.0, 6.0, 24.0),
            ("L6", "D1", 11.0, 6.0, 20.0),
            ("L8", "D3", 15.0, 3.0, 26.0),
            ("L4", "D1", 21.0, 18.0, 27.0),
            ("L7", "D2", 25.0, 13.0, 30.0),
        ],
    );
}

#[test]
fn shortest_first_matches_hand_computation() {
    // 10: D2 → L4 (6 h), wait 7, fin 16, free 17. 11: D1 → L6 (9 h), wait 6, fin 20, free 21.
    // 15: D3 → L7 (5 h), wait 3, fin 20, free 21. 17: D2 → L8 (11 h beats 14 h), wait 5, fin 28.
    // 21: D1 and D3 free together; D1 (lower index) takes L5, wait 17, fin 35; D3 stays idle.
    expect(
        &run(DispatchPolicy::Shortest),
        &[
            ("L1", "D1", 0.0, 0.0, 10.0),
            ("L2", "D2", 1.0, 0.0, 9.0),
            ("L3", "D3", 2.0, 0.0, 14.0),
            ("L4", "D2", 10.0, 7.0, 16.0),
            ("L6", "D1", 11.0, 6.0, 20.0),
            ("L7", "D3", 15.0, 3.0, 20.0),
            ("L8", "D2", 17.0, 5.0, 28.0),
            ("L5", "D1", 21.0, 17.0, 35.0),
        ],
    );
}

#[test]
fn wait_limit_policy_matches_hand_computation_and_saves_limits() {
    // Limit 6 h. 10: L4 is already late (7 h); L5 has 0 h slack, L6 1 h → D2 takes L5, wait 6, fin 24, free 25.
    // 11: L6 has 0 h slack → D1, wait 6, fin 20, free 21. 15: L4 late; L7, L8 both 3 h slack → L7 (earlier in the
    // list), wait 3, fin 20, free 21. 21: D1 and D3 free; L4 and L8 are both late → arrival order: D1 → L4
    // (wait 18, fin 27), D3 → L8 (wait 9, fin 32).
    let r = run(DispatchPolicy::WaitLimit);
    expect(
        &r,
        &[
            ("L1", "D1", 0.0, 0.0, 10.0),
            ("L2", "D2", 1.0, 0.0, 9.0),
            ("L3", "D3", 2.0, 0.0, 14.0),
            ("L5", "D2", 10.0, 6.0, 24.0),
            ("L6", "D1", 11.0, 6.0, 20.0),
            ("L7", "D3", 15.0, 3.0, 20.0),
            ("L4", "D1", 21.0, 18.0, 27.0),
            ("L8", "D3", 21.0, 9.0, 32.0),
        ],
    );
    // FCFS lets four loads pass the 6 h limit (L4 7, L5 7, L6 10, L8 11); this policy only two (L4, L8).
    let over = |r: &SeasonRun| r.schedule.iter().filter(|x| x.wait_h > 6.0 + 1e-9).count();
    assert_eq!(over(&run(DispatchPolicy::Fcfs)), 4);
    assert_eq!(over(&r), 2);
}

#[test]
fn hours_of_operation_hold_loads_until_opening() {
    // One dryer, no turnaround, hook-ups 06–22 local. L1 arrives 20:00 and dries 3 h (off at 23:00). L2 arrives
    // 21:00; at 23:00 the yard is closed, so it goes on air at 06:00 next morning: wait 9 h, off at 09:00.
    let mut bp = point(1, 0.0, 12.0, 3);
    bp.rules.hours_of_operation = Some([6, 22]);
    let ls = loads(&[(20.0, 13.0), (21.0, 14.0)]);
    let drier = FixedTimeDrier::new(10.0, |l, _| l.moisture_pct - 10.0);
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 1.0,
    };
    let r = simulate(
        &bp,
        &ls,
        &drier,
        DispatchPolicy::Fcfs,
        &pred,
        bp.season.end(),
    )
    .unwrap();
    expect(
        &r,
        &[("L1", "D1", 20.0, 0.0, 23.0), ("L2", "D1", 30.0, 9.0, 34.0)],
    );
}

#[test]
fn loads_waiting_at_season_end_are_reported_not_dropped() {
    // One dryer, 10 h loads, a 1-day season: L1 on 0–10, L2 10–20, L3 20–30. L4 arrives at 23 h; the dryer is
    // next free at 30 h, after the season's end at 24 h, so L4 is reported as never started.
    let bp = point(1, 0.0, 12.0, 1);
    let ls = loads(&[(0.0, 20.0), (1.0, 20.0), (2.0, 20.0), (23.0, 20.0)]);
    let drier = FixedTimeDrier::new(10.0, |l, _| l.moisture_pct - 10.0);
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 1.0,
    };
    let r = simulate(
        &bp,
        &ls,
        &drier,
        DispatchPolicy::Fcfs,
        &pred,
        bp.season.end(),
    )
    .unwrap();
    assert_eq!(r.schedule.len(), 3);
    assert_eq!(r.never_started.len(), 1);
    assert_eq!(r.never_started[0].load_id, "L4");
    assert_eq!(r.unfinished(), 1);
}
