//! Sweeps: one buying point run over a grid of dryer counts, dispatch policies and heater strategies, each over N
//! seasons (weather and arrival draws), giving P10/P50/P90 of every key figure across seasons. Every (case,
//! season) pair is independent, so they run in parallel with rayon; `par_iter().map().collect()` keeps input
//! order and no float is summed across threads, so results do not depend on the thread count.
//!
//! Every case sees the same seasons (common random numbers), so differences between cases are not noise between
//! draws. Seeds per season come from SplitMix64 (Steele, Lea & Flood 2014) of the sweep seed and the season index.

use std::sync::atomic::{AtomicUsize, Ordering};

use chrono::{DateTime, FixedOffset};
use rayon::prelude::*;

use super::arrivals::Load;
use super::dispatch::{DispatchPolicy, Predictor};
use super::drier::LoadDrier;
use super::kpi::{kpis, percentile, Kpis, KPI_FIELDS};
use super::scenario::BuyingPoint;
use super::sim::simulate_with;
use super::SeasonError;
use crate::drying::heater::StrategySpec;
use crate::error::InputError;

/// What one season of a sweep needs: its loads, a drier bound to its weather, and its end.
pub struct SeasonInputs<'a> {
    /// The season's loads, sorted by arrival.
    pub loads: Vec<Load>,
    /// The drier for this season's weather.
    pub drier: Box<dyn LoadDrier + 'a>,
    /// No load goes on air at or after this.
    pub season_end: DateTime<FixedOffset>,
}

/// One point of the grid.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct SweepCase {
    /// Dryer count.
    pub dryers: usize,
    /// Dispatch policy.
    pub policy: DispatchPolicy,
    /// Heater strategy on every dryer; `None` keeps the scenario's own.
    pub heater: Option<StrategySpec>,
}

/// The grid: every combination is run.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepGrid {
    /// Dryer counts.
    pub dryer_counts: Vec<usize>,
    /// Policies.
    pub policies: Vec<DispatchPolicy>,
    /// Heater strategies (`None` = the scenario's own).
    pub heaters: Vec<Option<StrategySpec>>,
}

impl SweepGrid {
    /// Every case, dryer count slowest, then heater, then policy.
    pub fn cases(&self) -> Vec<SweepCase> {
        let mut v = Vec::new();
        for &dryers in &self.dryer_counts {
            for &heater in &self.heaters {
                for &policy in &self.policies {
                    v.push(SweepCase {
                        dryers,
                        policy,
                        heater,
                    });
                }
            }
        }
        v
    }
}

/// A case over all seasons.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CaseResult {
    /// The case.
    pub case: SweepCase,
    /// Key figures per season, in season order.
    pub seasons: Vec<Kpis>,
    /// 10th percentile of each figure across seasons ([`KPI_FIELDS`] order).
    pub p10: Vec<f64>,
    /// Median.
    pub p50: Vec<f64>,
    /// 90th percentile.
    pub p90: Vec<f64>,
}

/// SplitMix64 of `seed` and `index`: well-spread seeds for season `index` (Steele, Lea & Flood 2014).
pub fn season_seed(seed: u64, index: usize) -> u64 {
    let mut z = seed.wrapping_add(0x9E37_79B9_7F4A_7C15_u64.wrapping_mul(index as u64 + 1));
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// Which of a sweep's (case, season) runs one machine does: shard `index` (0-based) of `count` takes the runs
/// whose position in case-major order is `index` modulo `count` (so every shard gets a share of the large and the
/// small dryer counts).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    /// 0-based.
    pub index: usize,
    /// How many shards the sweep is split into.
    pub count: usize,
}

impl Shard {
    /// The whole sweep on one machine.
    pub const WHOLE: Shard = Shard { index: 0, count: 1 };

    /// Parse `K/N` (1 ≤ K ≤ N, as written on the command line: shards count from 1).
    pub fn parse(text: &str) -> Result<Self, InputError> {
        let bad = || {
            InputError::argument(
                "--shard",
                format!("{text:?}"),
                "must be K/N with whole numbers 1 ≤ K ≤ N ≤ 100000 (shard K of N)",
            )
        };
        let (k, n) = text.split_once('/').ok_or_else(bad)?;
        let k: usize = k.trim().parse().map_err(|_| bad())?;
        let n: usize = n.trim().parse().map_err(|_| bad())?;
        if k == 0 || k > n || n > 100_000 {
            return Err(bad());
        }
        Ok(Shard {
            index: k - 1,
            count: n,
        })
    }

    /// Whether run `job` (case-major position) belongs to this shard.
    pub fn holds(&self, job: usize) -> bool {
        job % self.count == self.index
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index + 1, self.count)
    }
}

/// One (case, season) run's figures.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JobResult {
    /// Case position in [`SweepGrid::cases`].
    pub case: usize,
    /// Season index.
    pub season: usize,
    /// Its key figures.
    pub kpis: Kpis,
}

/// Run every case of `grid` over `seasons` seasons. `inputs(s)` builds season `s` (the integrator plugs the
/// weather generator in here: season index → weather → ambient factory → drier). `progress(done, total)` is
/// called after each (case, season) run, from worker threads.
pub fn sweep<'a>(
    bp: &BuyingPoint,
    grid: &SweepGrid,
    seasons: usize,
    inputs: &(dyn Fn(usize) -> Result<SeasonInputs<'a>, SeasonError> + Sync),
    predictor: &dyn Predictor,
    progress: &(dyn Fn(usize, usize) + Sync),
) -> Result<Vec<CaseResult>, SeasonError> {
    let jobs = sweep_shard(bp, grid, seasons, inputs, predictor, progress, Shard::WHOLE)?;
    Ok(assemble(grid, seasons, &jobs).expect("the whole sweep holds every run once"))
}

/// The runs of one shard of the sweep (see [`sweep`]), in case-major order.
pub fn sweep_shard<'a>(
    bp: &BuyingPoint,
    grid: &SweepGrid,
    seasons: usize,
    inputs: &(dyn Fn(usize) -> Result<SeasonInputs<'a>, SeasonError> + Sync),
    predictor: &dyn Predictor,
    progress: &(dyn Fn(usize, usize) + Sync),
    shard: Shard,
) -> Result<Vec<JobResult>, SeasonError> {
    // Built in order on this thread (cheap next to the runs, and the drier need not be `Send`).
    let built: Vec<SeasonInputs<'a>> = (0..seasons).map(inputs).collect::<Result<_, _>>()?;
    let cases = grid.cases();
    let points: Vec<BuyingPoint> = cases
        .iter()
        .map(|c| {
            let b = bp.with_dryer_count(c.dryers);
            match c.heater {
                Some(h) => b.with_heater(h),
                None => b,
            }
        })
        .collect();
    let mut jobs: Vec<(usize, usize)> = (0..cases.len())
        .flat_map(|c| (0..seasons).map(move |s| (c, s)))
        .enumerate()
        .filter(|&(j, _)| shard.holds(j))
        .map(|(_, job)| job)
        .collect();
    // Run season by season: the pool splits the list into runs of neighbouring jobs, so one thread takes a
    // season's cases one after another and each case after the first finds the dryings it shares with the others
    // in the season's drier, done (run side by side, both would dry them).
    jobs.sort_by_key(|&(c, s)| (s, c));
    let total = jobs.len();
    // Enough seasons to fill the pool: each dries its loads in order (looking ahead would only waste guesses).
    let ahead = total < rayon::current_num_threads();
    let done = AtomicUsize::new(0);
    jobs.par_iter()
        .map(|&(c, s)| {
            let si = &built[s];
            let run = simulate_with(
                &points[c],
                &si.loads,
                si.drier.as_ref(),
                cases[c].policy,
                predictor,
                si.season_end,
                ahead,
            )?;
            let kpis = kpis(&run, &points[c]);
            progress(done.fetch_add(1, Ordering::Relaxed) + 1, total);
            Ok(JobResult {
                case: c,
                season: s,
                kpis,
            })
        })
        .collect::<Result<Vec<_>, SeasonError>>()
        .map(|mut runs| {
            runs.sort_by_key(|r| (r.case, r.season));
            runs
        })
}

/// Every case's result from its runs (in any order); `None` unless every (case, season) of the grid is there once.
pub fn assemble(grid: &SweepGrid, seasons: usize, jobs: &[JobResult]) -> Option<Vec<CaseResult>> {
    let cases = grid.cases();
    let mut slots: Vec<Option<Kpis>> = vec![None; cases.len() * seasons];
    for j in jobs {
        if j.case >= cases.len() || j.season >= seasons {
            return None;
        }
        let slot = &mut slots[j.case * seasons + j.season];
        if slot.replace(j.kpis).is_some() {
            return None;
        }
    }
    let results: Vec<Kpis> = slots.into_iter().collect::<Option<_>>()?;
    Some(
        cases
            .iter()
            .enumerate()
            .map(|(c, case)| {
                let ks: Vec<Kpis> = results[c * seasons..(c + 1) * seasons].to_vec();
                let column = |f: usize| ks.iter().map(|k| k.values()[f]).collect::<Vec<f64>>();
                let pct = |p: f64| {
                    (0..KPI_FIELDS.len())
                        .map(|f| percentile(&column(f), p))
                        .collect()
                };
                CaseResult {
                    case: *case,
                    p10: pct(10.0),
                    p50: pct(50.0),
                    p90: pct(90.0),
                    seasons: ks,
                }
            })
            .collect(),
    )
}

/// The smallest dryer count, for `policy` and `heater`, at which no load waits past the limit in at least 90 % of
/// seasons (P90 of loads over the limit is zero); `None` if no count in the sweep holds it.
pub fn smallest_holding(
    results: &[CaseResult],
    policy: DispatchPolicy,
    heater: Option<StrategySpec>,
) -> Option<usize> {
    let over = KPI_FIELDS
        .iter()
        .position(|(n, _)| *n == "loads_over_wait_limit")
        .expect("field exists");
    results
        .iter()
        .filter(|r| r.case.policy == policy && r.case.heater == heater)
        .filter(|r| r.p90[over] < 0.5)
        .map(|r| r.case.dryers)
        .min()
}
