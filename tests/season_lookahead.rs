//! A season dried with look-ahead (several loads at once on the pool, guessed hours for loads not yet dried, passes
//! repeated until none is guessed) gives exactly the season dried one load after another, on one thread or two;
//! and when a drying fails, it is the failure the load-by-load season meets first.

#[path = "season_support/mod.rs"]
mod season_support;

use std::sync::atomic::{AtomicUsize, Ordering};

use chrono::{DateTime, FixedOffset};
use dryfront::season::arrivals::{generate, ArrivalParams, Load};
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::{DryingResult, FixedTimeDrier, LoadDrier};
use dryfront::season::scenario::DryerUnit;
use dryfront::season::sim::{simulate_with, SeasonRun};
use dryfront::season::{DryingFailure, SeasonError};
use season_support::*;

fn pred() -> MoistureRatePredictor {
    MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    }
}

/// Hours that the predictor gets wrong by a load- and dryer-dependent amount (so guesses are often wrong), and
/// that depend on the start time (so a load started at another instant dries differently).
fn hours(l: &Load, d: &DryerUnit, start: DateTime<FixedOffset>) -> f64 {
    let n: usize = l.id.bytes().map(usize::from).sum::<usize>() + d.id.len() * 7;
    let hour_of_day = (start - t0()).num_minutes().rem_euclid(24 * 60) as f64 / 60.0;
    (l.moisture_pct - 10.0) / 0.5 * (0.4 + (n % 13) as f64 * 0.1) + hour_of_day * 0.05
}

/// A drier whose time depends on the start, counting its calls, failing on one load.
struct Timed<'a> {
    calls: &'a AtomicUsize,
    fail: Option<&'a str>,
}

impl LoadDrier for Timed<'_> {
    fn dry(
        &self,
        load: &Load,
        dryer: &DryerUnit,
        start: DateTime<FixedOffset>,
    ) -> Result<DryingResult, SeasonError> {
        self.calls.fetch_add(1, Ordering::Relaxed);
        if Some(load.id.as_str()) == self.fail {
            return Err(SeasonError::Drying {
                load: load.id.clone(),
                dryer: dryer.id.clone(),
                failure: DryingFailure::BadTime(f64::NAN),
            });
        }
        let h = hours(load, dryer, start);
        FixedTimeDrier::new(10.0, move |_, _| h).dry(load, dryer, start)
    }
}

fn season(
    threads: usize,
    ahead: bool,
    policy: DispatchPolicy,
    fail: Option<&str>,
) -> (Result<SeasonRun, SeasonError>, usize) {
    let bp = point(30, 0.75, 12.0, 40);
    let ls = generate(&ArrivalParams::new(t0(), 40, 600), 7).unwrap();
    let calls = AtomicUsize::new(0);
    let drier = Timed {
        calls: &calls,
        fail,
    };
    let run = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap()
        .install(|| simulate_with(&bp, &ls, &drier, policy, &pred(), bp.season.end(), ahead));
    (run, calls.load(Ordering::Relaxed))
}

#[test]
fn look_ahead_gives_the_load_by_load_season_on_one_and_two_threads() {
    for policy in [DispatchPolicy::Fcfs, DispatchPolicy::WaitLimit] {
        let (serial, calls) = season(1, false, policy, None);
        let serial = serial.unwrap();
        assert_eq!(calls, serial.schedule.len(), "one drying per started load");
        assert!(serial.schedule.len() > 500, "{}", serial.schedule.len());
        for threads in [1, 2] {
            let (ahead, calls_ahead) = season(threads, true, policy, None);
            assert_eq!(ahead.unwrap(), serial, "{policy:?} on {threads} threads");
            // Guesses cost dryings that are thrown away, but not many more than the season's own.
            assert!(
                calls_ahead >= calls && calls_ahead < 4 * calls,
                "{calls_ahead} vs {calls}"
            );
        }
    }
}

#[test]
fn a_failure_is_the_one_the_load_by_load_season_meets() {
    let (serial, _) = season(1, false, DispatchPolicy::Fcfs, Some("G0300"));
    let (ahead, _) = season(2, true, DispatchPolicy::Fcfs, Some("G0300"));
    let (a, b) = (
        serial.unwrap_err().to_string(),
        ahead.unwrap_err().to_string(),
    );
    assert!(a.contains("G0300"), "{a}");
    assert_eq!(a, b);
}
