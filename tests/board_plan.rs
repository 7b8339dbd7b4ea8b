//! The buying point's board (`board`): the plan never puts two loads on one dryer at once, nor a load on a dryer
//! too small for it, nor anything on air before now or on a dryer before its present load is off; started from an
//! empty yard it is the season simulator's own schedule; the demo board file plans end to end.
mod season_support;

use chrono::Duration;
use dryfront::board::{plan, CurrentLoad};
use dryfront::input::board::read_board;
use dryfront::season::arrivals::Load;
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::{DeepBedDrier, FixedTimeDrier};
use dryfront::season::sim::{simulate, SeasonRun};
use dryfront::status::{Finish, Percentiles};
use proptest::prelude::*;
use season_support::{at_h, point};

fn predictor() -> MoistureRatePredictor {
    MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    }
}

/// A load on dryer `d` whose dryer is free again at `free_h`.
fn busy(d: usize, free_h: f64) -> CurrentLoad {
    let f = Finish {
        mean_h: Some(1.0),
        fraction_h: Some(1.0),
        stop_h: Some(1.0),
        hours_run: 1.0,
        fuel: 0.0,
        fan_kwh: 0.0,
        kernel_pct: 10.0,
        reason: dryfront::drying::run::StopReason::RuleMet,
    };
    CurrentLoad {
        dryer_index: d,
        load_id: format!("on-{d}"),
        on_air: at_h(-5.0),
        mass_kg: 4000.0,
        mean_kernel_wb: (0.15, 0.15),
        finish: f,
        range: Percentiles::of(std::iter::empty()),
        released: at_h(free_h),
    }
}

fn check_plan(
    run: &SeasonRun,
    bp: &dryfront::season::scenario::BuyingPoint,
    yard: &[Load],
    now_h: f64,
    current: &[CurrentLoad],
) -> Result<(), TestCaseError> {
    for r in &run.schedule {
        prop_assert!(r.start >= at_h(now_h), "{} on air before now", r.load_id);
        prop_assert!(r.start >= yard[r.load_index].arrival);
        prop_assert!(
            r.mass_kg <= bp.dryers[r.dryer_index].capacity_kg,
            "{} too heavy for {}",
            r.load_id,
            r.dryer_id
        );
        for c in current.iter().filter(|c| c.dryer_index == r.dryer_index) {
            prop_assert!(
                r.start >= c.released,
                "{} on {} before its load is off",
                r.load_id,
                r.dryer_id
            );
        }
    }
    for d in 0..bp.dryers.len() {
        let mut on: Vec<_> = run.schedule.iter().filter(|r| r.dryer_index == d).collect();
        on.sort_by_key(|r| r.start);
        for w in on.windows(2) {
            prop_assert!(
                w[1].start >= w[0].released,
                "two loads on dryer {d} at once: {} and {}",
                w[0].load_id,
                w[1].load_id
            );
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, ..ProptestConfig::default() })]
    #[test]
    fn never_two_loads_on_one_dryer_nor_one_too_heavy(
        arrivals in prop::collection::vec((-20.0f64..60.0, 2000.0f64..7500.0, 12.0f64..30.0), 0..25),
        busy_h in prop::collection::vec(prop::option::of(0.0f64..40.0), 5),
        hours in prop::collection::vec(1.0f64..40.0, 25),
        policy in prop::sample::select(DispatchPolicy::ALL.to_vec()),
    ) {
        let mut bp = point(5, 0.75, 12.0, 30);
        bp.dryers[3].capacity_kg = 7500.0;
        let mut yard: Vec<Load> = arrivals.iter().enumerate().map(|(i, &(h, kg, m))| Load {
            id: format!("Y{i}"),
            arrival: at_h(h),
            // Every load fits the large dryer.
            mass_kg: kg,
            moisture_pct: m,
            notes: String::new(),
        }).collect();
        yard.sort_by_key(|l| l.arrival);
        let current: Vec<CurrentLoad> = busy_h.iter().enumerate().filter_map(|(d, h)| h.map(|h| busy(d, h))).collect();
        let hrs = hours.clone();
        let drier = FixedTimeDrier::new(10.0, move |l: &Load, _| hrs[l.id[1..].parse::<usize>().unwrap()]);
        let run = plan(&bp, &yard, &current, at_h(0.0), 72.0, &drier, policy, &predictor()).unwrap();
        check_plan(&run, &bp, &yard, 0.0, &current)?;
        // Every load is either planned or still waiting at the plan's end.
        prop_assert_eq!(run.schedule.len() + run.never_started.len(), yard.len());
    }

    #[test]
    fn from_an_empty_yard_it_is_the_season_simulators_schedule(
        arrivals in prop::collection::vec((0.0f64..60.0, 12.0f64..30.0), 1..20),
        policy in prop::sample::select(DispatchPolicy::ALL.to_vec()),
    ) {
        let bp = point(3, 0.75, 12.0, 30);
        let mut spec = arrivals.clone();
        spec.sort_by(|a, b| a.0.total_cmp(&b.0));
        let yard = season_support::loads(&spec);
        let drier = FixedTimeDrier::new(10.0, |l: &Load, _| 2.0 * (l.moisture_pct - 10.0));
        let board = plan(&bp, &yard, &[], at_h(0.0), 72.0, &drier, policy, &predictor()).unwrap();
        let season = simulate(&bp, &yard, &drier, policy, &predictor(), at_h(72.0)).unwrap();
        prop_assert_eq!(&board.schedule, &season.schedule);
        prop_assert_eq!(&board.never_started, &season.never_started);
    }
}

#[test]
fn the_demo_board_matches_the_season_with_the_deep_bed_drier_from_an_empty_yard() {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/at-the-dryer/board.json");
    let b = read_board(&path).unwrap();
    let drier = DeepBedDrier::new(b.template.clone());
    // The demo's yard, as arrivals after now, on an empty buying point.
    let yard: Vec<Load> = b
        .yard
        .iter()
        .map(|l| Load {
            arrival: l.arrival.max(b.now),
            ..l.clone()
        })
        .collect();
    let board = plan(
        &b.bp,
        &yard,
        &[],
        b.now,
        48.0,
        &drier,
        b.policy,
        &predictor(),
    )
    .unwrap();
    let season = simulate(
        &b.bp,
        &yard,
        &drier,
        b.policy,
        &predictor(),
        b.now + Duration::hours(48),
    )
    .unwrap();
    assert_eq!(board.schedule, season.schedule);
    assert_eq!(board.schedule.len(), yard.len());
}
