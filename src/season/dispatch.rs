//! Dispatch policies: which waiting load a freed dryer takes next. Ties always fall back to arrival order (then
//! file order), so a schedule never depends on how the queue happens to be stored.
//!
//! Policies are standard queue disciplines (first come first served, largest key first, shortest predicted
//! processing time first, earliest due date with triage); the wait-limit variant is our own framing: loads that can
//! still be started within the limit go first, nearest their limit first; loads already past it wait behind them
//! in arrival order, because starting them now no longer saves their limit but may cost another load its own.

use chrono::{DateTime, FixedOffset};

use super::arrivals::Load;
use super::scenario::DryerUnit;

/// How the next load is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum DispatchPolicy {
    /// First come, first served.
    Fcfs,
    /// Highest initial moisture first.
    Wettest,
    /// Shortest predicted drying time first.
    Shortest,
    /// Loads that can still make the wait limit, nearest to it first; then the rest first come first served.
    WaitLimit,
}

impl DispatchPolicy {
    /// All policies, in a fixed order.
    pub const ALL: [DispatchPolicy; 4] = [
        DispatchPolicy::Fcfs,
        DispatchPolicy::Wettest,
        DispatchPolicy::Shortest,
        DispatchPolicy::WaitLimit,
    ];

    /// The name used on the command line and in tables.
    pub fn name(self) -> &'static str {
        match self {
            DispatchPolicy::Fcfs => "fcfs",
            DispatchPolicy::Wettest => "wettest",
            DispatchPolicy::Shortest => "shortest",
            DispatchPolicy::WaitLimit => "wait-limit",
        }
    }

    /// Parse a name as [`name`](Self::name) prints it.
    pub fn from_name(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|p| p.name() == s)
    }
}

/// A cheap estimate of a load's drying time, for the shortest-first policy.
pub trait Predictor: Sync {
    /// Predicted drying hours of `load` on `dryer`.
    fn predict_h(&self, load: &Load, dryer: &DryerUnit) -> f64;
}

/// Hours = (initial − target moisture) / rate. The default rate of 0.5 percentage points per hour is the trade's
/// safe batch-average drying rate (DOMAIN.md §7.2, common practice, no source).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MoistureRatePredictor {
    /// Target kernel moisture, % w.b.
    pub target_pct: f64,
    /// Drying rate, percentage points per hour.
    pub rate_pct_per_h: f64,
}

impl Predictor for MoistureRatePredictor {
    fn predict_h(&self, load: &Load, _dryer: &DryerUnit) -> f64 {
        ((load.moisture_pct - self.target_pct) / self.rate_pct_per_h).max(0.0)
    }
}

/// A load in the queue, as a policy sees it.
#[derive(Debug, Clone, Copy)]
pub struct Waiting<'a> {
    /// Position in the season's load list (arrival order).
    pub index: usize,
    /// The load.
    pub load: &'a Load,
}

/// Pick the waiting load that `dryer` takes at `now`, among those that fit it; `None` if none fits. Returns the
/// position in `queue`.
pub fn choose(
    policy: DispatchPolicy,
    queue: &[Waiting<'_>],
    dryer: &DryerUnit,
    now: DateTime<FixedOffset>,
    max_wait_h: f64,
    predictor: &dyn Predictor,
) -> Option<usize> {
    let fits = |w: &Waiting| w.load.mass_kg <= dryer.capacity_kg;
    // Each policy gives a key; the smallest key wins, ties by arrival order (index).
    let key = |w: &Waiting| -> (u8, f64) {
        match policy {
            DispatchPolicy::Fcfs => (0, 0.0),
            DispatchPolicy::Wettest => (0, -w.load.moisture_pct),
            DispatchPolicy::Shortest => (0, predictor.predict_h(w.load, dryer)),
            DispatchPolicy::WaitLimit => {
                let waited_h = (now - w.load.arrival).num_milliseconds() as f64 / 3.6e6;
                let slack_h = max_wait_h - waited_h;
                if slack_h >= 0.0 {
                    (0, slack_h)
                } else {
                    (1, 0.0)
                }
            }
        }
    };
    queue
        .iter()
        .enumerate()
        .filter(|(_, w)| fits(w))
        .min_by(|(_, a), (_, b)| {
            let (ka, kb) = (key(a), key(b));
            ka.0.cmp(&kb.0)
                .then(ka.1.total_cmp(&kb.1))
                .then(a.index.cmp(&b.index))
        })
        .map(|(i, _)| i)
}
