//! Summary of a weather series for drying: hours, filled hours, daily mean/min/max of dry bulb and RH, hours with RH
//! below thresholds, and a drying-potential figure (mean equilibrium moisture content of the ambient air for a crop
//! isotherm supplied by the caller). No I/O: the CLI formats the result.
//!
//! Days are local calendar days of the sample timestamps (site standard time). Means are plain hourly averages.
use chrono::NaiveDate;

use super::series::WeatherSeries;

/// Statistics of one local day.
#[derive(Debug, Clone, PartialEq)]
pub struct DailyStats {
    /// Local date.
    pub date: NaiveDate,
    /// Hours of data in the day.
    pub hours: usize,
    /// Mean dry bulb, °C.
    pub t_mean_c: f64,
    /// Minimum dry bulb, °C.
    pub t_min_c: f64,
    /// Maximum dry bulb, °C.
    pub t_max_c: f64,
    /// Mean RH, %.
    pub rh_mean_pct: f64,
    /// Minimum RH, %.
    pub rh_min_pct: f64,
    /// Maximum RH, %.
    pub rh_max_pct: f64,
    /// Rain total, mm, if the series has rain.
    pub rain_mm: Option<f64>,
}

/// Whole-series summary.
#[derive(Debug, Clone, PartialEq)]
pub struct Summary {
    /// Hours in the series.
    pub hours: usize,
    /// Hours with any value filled by interpolation.
    pub filled_hours: usize,
    /// Mean dry bulb, °C.
    pub t_mean_c: f64,
    /// Mean RH, %.
    pub rh_mean_pct: f64,
    /// Mean of the daily temperature range (max − min), K, over days with 24 hours.
    pub diurnal_range_k: f64,
    /// `(threshold %, hours with RH below it)`.
    pub hours_rh_below: Vec<(f64, usize)>,
    /// Mean equilibrium moisture content (decimal, dry basis) of the ambient air, if an isotherm was given.
    pub mean_emc_db: Option<f64>,
    /// Median of the hourly EMC (decimal, dry basis): less swayed than the mean by saturated (fog) hours, where
    /// isotherms climb steeply.
    pub median_emc_db: Option<f64>,
    /// Per-day statistics.
    pub daily: Vec<DailyStats>,
}

/// An isotherm: EMC (decimal, dry basis) from dry bulb °C and RH (decimal).
pub type EmcFn<'a> = &'a dyn Fn(f64, f64) -> f64;

/// Summarise `series`. `rh_thresholds_pct` are counted with "strictly below".
pub fn summarize(
    series: &WeatherSeries,
    rh_thresholds_pct: &[f64],
    emc: Option<EmcFn<'_>>,
) -> Summary {
    let n = series.len();
    let (t, rh) = (series.t_c(), series.rh());
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let mut daily: Vec<DailyStats> = Vec::new();
    let mut i = 0;
    while i < n {
        let date = series.time(i).date_naive();
        let mut j = i;
        while j < n && series.time(j).date_naive() == date {
            j += 1;
        }
        let (td, rd) = (&t[i..j], &rh[i..j]);
        let fold = |v: &[f64], f: fn(f64, f64) -> f64, init: f64| v.iter().copied().fold(init, f);
        daily.push(DailyStats {
            date,
            hours: j - i,
            t_mean_c: mean(td),
            t_min_c: fold(td, f64::min, f64::INFINITY),
            t_max_c: fold(td, f64::max, f64::NEG_INFINITY),
            rh_mean_pct: 100.0 * mean(rd),
            rh_min_pct: 100.0 * fold(rd, f64::min, f64::INFINITY),
            rh_max_pct: 100.0 * fold(rd, f64::max, f64::NEG_INFINITY),
            rain_mm: series.rain_mm().map(|r| r[i..j].iter().sum()),
        });
        i = j;
    }
    let full: Vec<&DailyStats> = daily.iter().filter(|d| d.hours == 24).collect();
    let diurnal_range_k = if full.is_empty() {
        f64::NAN
    } else {
        full.iter().map(|d| d.t_max_c - d.t_min_c).sum::<f64>() / full.len() as f64
    };
    let emc_values: Option<Vec<f64>> = emc.map(|f| (0..n).map(|k| f(t[k], rh[k])).collect());
    Summary {
        hours: n,
        filled_hours: series.filled_hours(),
        t_mean_c: mean(t),
        rh_mean_pct: 100.0 * mean(rh),
        diurnal_range_k,
        hours_rh_below: rh_thresholds_pct
            .iter()
            .map(|&th| (th, rh.iter().filter(|&&r| 100.0 * r < th).count()))
            .collect(),
        mean_emc_db: emc_values
            .as_ref()
            .map(|v| v.iter().sum::<f64>() / n as f64),
        median_emc_db: emc_values.map(|mut v| {
            v.sort_by(f64::total_cmp);
            if n % 2 == 1 {
                v[n / 2]
            } else {
                0.5 * (v[n / 2 - 1] + v[n / 2])
            }
        }),
        daily,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::weather::Site;
    use approx::assert_relative_eq;
    use chrono::{FixedOffset, TimeZone};

    #[test]
    fn daily_extremes_and_threshold_counts_follow_the_data() {
        let off = FixedOffset::west_opt(5 * 3600).unwrap();
        let t: Vec<f64> = (0..48).map(|h| 20.0 + (h % 24) as f64 / 2.0).collect();
        let rh: Vec<f64> = (0..48).map(|h| 0.40 + (h % 24) as f64 / 50.0).collect();
        let s = WeatherSeries::new(
            Site {
                name: String::new(),
                utc_offset: off,
                elevation_m: None,
            },
            off.with_ymd_and_hms(2026, 9, 1, 0, 0, 0).unwrap(),
            t,
            rh,
            vec![101_325.0; 48],
            None,
            None,
        )
        .unwrap();
        let sum = summarize(&s, &[50.0, 60.0], Some(&|_t, r| r / 10.0));
        assert_eq!(sum.daily.len(), 2);
        assert_relative_eq!(sum.daily[0].t_max_c, 31.5);
        assert_relative_eq!(sum.diurnal_range_k, 11.5);
        // RH below 50 %: 0.40 + h/50 < 0.50 → h < 5 → 5 hours a day.
        assert_eq!(sum.hours_rh_below[0], (50.0, 10));
        assert_relative_eq!(
            sum.mean_emc_db.unwrap(),
            (0.40 + 11.5 / 50.0) / 10.0,
            max_relative = 1e-12
        );
    }
}
