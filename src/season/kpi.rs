//! Season results as the yard manager reads them: key figures (waits, utilisation, throughput, propane, cost,
//! shrink), a daily table, and the schedule, computed here; `report::season` builds their CSV text. No I/O here.
//!
//! Percentiles use linear interpolation between order statistics (Hyndman & Fan 1996 definition 7, the default of
//! R's `quantile` and NumPy's `percentile`).

use crate::units::{money, UnitSystem};
use chrono::{DateTime, Duration, FixedOffset};

use super::scenario::BuyingPoint;
use super::sim::{hours_between, SeasonRun};

/// Percentile `p` (0–100) of `values` by linear interpolation (Hyndman & Fan type 7); `NaN` if empty.
pub fn percentile(values: &[f64], p: f64) -> f64 {
    if values.is_empty() {
        return f64::NAN;
    }
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let h = (v.len() - 1) as f64 * (p / 100.0).clamp(0.0, 1.0);
    let lo = h.floor() as usize;
    let hi = h.ceil() as usize;
    v[lo] + (h - lo as f64) * (v[hi] - v[lo])
}

/// Key figures of a season.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Kpis {
    /// Loads that arrived.
    pub loads_arrived: usize,
    /// Loads taken to target.
    pub loads_dried: usize,
    /// Loads not taken to target (never started, or the drier gave up).
    pub loads_unfinished: usize,
    /// Mean wait of started loads, h.
    pub mean_wait_h: f64,
    /// 95th-percentile wait of started loads, h.
    pub p95_wait_h: f64,
    /// Longest wait, h (never-started loads count to the season's end).
    pub max_wait_h: f64,
    /// Loads that waited longer than the limit (never-started loads included when past it).
    pub loads_over_wait_limit: usize,
    /// Share of dryer time occupied (drying or turnaround) over the season window, %.
    pub utilisation_pct: f64,
    /// Tonnes put on air per dryer per season day, t/(dryer·day).
    pub tonnes_per_dryer_day: f64,
    /// Tonnes put on air, t.
    pub tonnes_dried: f64,
    /// Propane burnt, L.
    pub propane_l: f64,
    /// Propane per tonne put on air, L/t.
    pub propane_l_per_tonne: f64,
    /// Fan electricity, kWh.
    pub fan_kwh: f64,
    /// Weight lost below target, kg.
    pub shrink_kg: f64,
    /// Value of that weight at the peanut price, in the scenario's currency.
    pub shrink_value: f64,
    /// Propane + electricity + shrink value, in the scenario's currency.
    pub total_cost: f64,
}

/// Names, units and accessors of the figures, in table order (the sweep's P10/P50/P90 use the same list).
pub const KPI_FIELDS: [(&str, &str); 16] = [
    ("loads_arrived", "loads"),
    ("loads_dried", "loads"),
    ("loads_unfinished", "loads"),
    ("mean_wait", "h"),
    ("p95_wait", "h"),
    ("max_wait", "h"),
    ("loads_over_wait_limit", "loads"),
    ("dryer_utilisation", "%"),
    ("tonnes_per_dryer_day", "t/(dryer day)"),
    ("tonnes_dried", "t"),
    ("propane", "L"),
    ("propane_per_tonne", "L/t"),
    ("fan_energy", "kWh"),
    ("shrink", "kg"),
    ("shrink_value", "currency"),
    ("total_cost", "currency"),
];

impl Kpis {
    /// The figures back from [`values`](Self::values) (as a sweep shard keeps them); `None` if a count is not a
    /// whole non-negative number.
    pub fn from_values(v: &[f64; 16]) -> Option<Self> {
        let count = |x: f64| (x >= 0.0 && x.fract() == 0.0 && x < 1e15).then_some(x as usize);
        Some(Kpis {
            loads_arrived: count(v[0])?,
            loads_dried: count(v[1])?,
            loads_unfinished: count(v[2])?,
            mean_wait_h: v[3],
            p95_wait_h: v[4],
            max_wait_h: v[5],
            loads_over_wait_limit: count(v[6])?,
            utilisation_pct: v[7],
            tonnes_per_dryer_day: v[8],
            tonnes_dried: v[9],
            propane_l: v[10],
            propane_l_per_tonne: v[11],
            fan_kwh: v[12],
            shrink_kg: v[13],
            shrink_value: v[14],
            total_cost: v[15],
        })
    }

    /// The figures in [`KPI_FIELDS`] order.
    pub fn values(&self) -> [f64; 16] {
        [
            self.loads_arrived as f64,
            self.loads_dried as f64,
            self.loads_unfinished as f64,
            self.mean_wait_h,
            self.p95_wait_h,
            self.max_wait_h,
            self.loads_over_wait_limit as f64,
            self.utilisation_pct,
            self.tonnes_per_dryer_day,
            self.tonnes_dried,
            self.propane_l,
            self.propane_l_per_tonne,
            self.fan_kwh,
            self.shrink_kg,
            self.shrink_value,
            self.total_cost,
        ]
    }

    /// A few lines for a person, units on every number, money written one way ([`crate::units::money`]).
    pub fn summary(&self, currency: &str, u: UnitSystem) -> String {
        format!(
            "loads: {} arrived, {} dried, {} unfinished\n\
             wait: mean {:.1} h, 95th percentile {:.1} h, longest {:.1} h; {} loads over the limit\n\
             dryers: {:.0} % occupied, {} per dryer per day ({} put on air)\n\
             propane {} ({}), fans {}, shrink {} ({})\n\
             total cost {}\n",
            self.loads_arrived,
            self.loads_dried,
            self.loads_unfinished,
            self.mean_wait_h,
            self.p95_wait_h,
            self.max_wait_h,
            self.loads_over_wait_limit,
            self.utilisation_pct,
            u.tonnes(self.tonnes_per_dryer_day * 1000.0),
            u.tonnes(self.tonnes_dried * 1000.0),
            u.volume_l(self.propane_l),
            u.fuel_per_mass(self.propane_l_per_tonne, "L"),
            u.energy_kwh(self.fan_kwh),
            u.mass(self.shrink_kg),
            money(currency, self.shrink_value),
            money(currency, self.total_cost),
        )
    }
}

/// Key figures of `run` under `bp`'s prices and rules.
pub fn kpis(run: &SeasonRun, bp: &BuyingPoint) -> Kpis {
    let waits: Vec<f64> = run.schedule.iter().map(|r| r.wait_h).collect();
    let limit = run.max_wait_h;
    let mut over = waits.iter().filter(|&&w| w > limit + 1e-9).count();
    let mut max_wait = waits.iter().cloned().fold(0.0, f64::max);
    // Never-started loads have waited (at least) until the season's end.
    for u in &run.never_started {
        let w = hours_between(u.arrival, run.end);
        max_wait = max_wait.max(w);
        if w > limit + 1e-9 {
            over += 1;
        }
    }
    let n_dryers = run.dryer_ids.len() as f64;
    let window_h = hours_between(run.start, run.end);
    let mut busy_h = 0.0;
    for r in &run.schedule {
        let a = r.start.max(run.start);
        let b = r.released.min(run.end);
        if b > a {
            busy_h += hours_between(a, b);
        }
    }
    let tonnes: f64 = run.schedule.iter().map(|r| r.mass_kg).sum::<f64>() / 1000.0;
    let propane: f64 = run.schedule.iter().map(|r| r.result.fuel_l).sum();
    let kwh: f64 = run.schedule.iter().map(|r| r.result.kwh).sum();
    let shrink: f64 = run.schedule.iter().map(|r| r.result.shrink_kg).sum();
    let p = &bp.prices;
    let shrink_value = shrink / 1000.0 * p.peanuts_per_tonne;
    let days = window_h / 24.0;
    Kpis {
        loads_arrived: run.arrivals,
        loads_dried: run.schedule.iter().filter(|r| r.result.finished).count(),
        loads_unfinished: run.unfinished(),
        mean_wait_h: if waits.is_empty() {
            0.0
        } else {
            waits.iter().sum::<f64>() / waits.len() as f64
        },
        p95_wait_h: if waits.is_empty() {
            0.0
        } else {
            percentile(&waits, 95.0)
        },
        max_wait_h: max_wait,
        loads_over_wait_limit: over,
        utilisation_pct: if window_h > 0.0 {
            100.0 * busy_h / (n_dryers * window_h)
        } else {
            0.0
        },
        tonnes_per_dryer_day: if days > 0.0 {
            tonnes / n_dryers / days
        } else {
            0.0
        },
        tonnes_dried: tonnes,
        propane_l: propane,
        propane_l_per_tonne: if tonnes > 0.0 { propane / tonnes } else { 0.0 },
        fan_kwh: kwh,
        shrink_kg: shrink,
        shrink_value,
        total_cost: propane * p.propane_per_l + kwh * p.electricity_per_kwh + shrink_value,
    }
}

/// One day of the season.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct DayRow {
    /// Local midnight starting the day (offset of the season start).
    pub day: DateTime<FixedOffset>,
    /// Loads that arrived.
    pub arrivals: usize,
    /// Tonnes that arrived, t.
    pub tonnes_in: f64,
    /// Loads whose air went off that day.
    pub loads_finished: usize,
    /// Mean dryers occupied over the day.
    pub mean_dryers_busy: f64,
    /// Most dryers occupied at once.
    pub peak_dryers_busy: usize,
    /// Longest queue, loads.
    pub longest_queue: usize,
}

/// The daily table over the season window; `arrivals` gives (arrival, net mass kg) of every load.
pub fn daily(run: &SeasonRun, arrivals: &[(DateTime<FixedOffset>, f64)]) -> Vec<DayRow> {
    let days = (hours_between(run.start, run.end) / 24.0).ceil().max(0.0) as i64;
    let mut rows = Vec::with_capacity(days as usize);
    for d in 0..days {
        let a = run.start + Duration::days(d);
        let b = a + Duration::days(1);
        let inside = |t: DateTime<FixedOffset>| t >= a && t < b;
        let arr: Vec<_> = arrivals.iter().filter(|(t, _)| inside(*t)).collect();
        let mut busy_h = 0.0;
        for r in &run.schedule {
            let s = r.start.max(a);
            let e = r.released.min(b);
            if e > s {
                busy_h += hours_between(s, e);
            }
        }
        // State carried into the day, then every change during it.
        let carried = run.log.iter().rev().find(|s| s.time <= a);
        let during = run.log.iter().filter(|s| inside(s.time));
        let mut longest = carried.map(|s| s.queue).unwrap_or(0);
        let mut peak = carried.map(|s| s.busy).unwrap_or(0);
        for s in during {
            longest = longest.max(s.queue);
            peak = peak.max(s.busy);
        }
        rows.push(DayRow {
            day: a,
            arrivals: arr.len(),
            tonnes_in: arr.iter().map(|(_, m)| m).sum::<f64>() / 1000.0,
            loads_finished: run.schedule.iter().filter(|r| inside(r.finish)).count(),
            mean_dryers_busy: busy_h / 24.0,
            peak_dryers_busy: peak,
            longest_queue: longest,
        });
    }
    rows
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn percentile_matches_numpy_linear() {
        // Reference: NumPy 2.4.6, np.percentile([3, 1, 4, 1, 5, 9, 2, 6], q) with the default "linear" method:
        // q=95 → 7.95, q=50 → 3.5, q=10 → 1.0, q=0 → 1, q=100 → 9. Tolerance 1e-12.
        let v = [3.0, 1.0, 4.0, 1.0, 5.0, 9.0, 2.0, 6.0];
        assert_relative_eq!(percentile(&v, 95.0), 7.95, epsilon = 1e-12);
        assert_relative_eq!(percentile(&v, 50.0), 3.5, epsilon = 1e-12);
        assert_relative_eq!(percentile(&v, 10.0), 1.0, epsilon = 1e-12);
        assert_relative_eq!(percentile(&v, 0.0), 1.0, epsilon = 1e-12);
        assert_relative_eq!(percentile(&v, 100.0), 9.0, epsilon = 1e-12);
    }
}
