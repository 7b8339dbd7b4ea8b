//! Seeded synthetic weather seasons from monthly statistics (given in JSON or estimated from a sample series).
//!
//! The model is a simple daily-then-hourly weather generator in the spirit of Richardson (1981, *Water Resources
//! Research* 17:182–190: a two-state Markov chain for wet and dry days, and daily weather variables as AR(1)
//! anomalies conditioned on the wet/dry state):
//! - wet/dry days: first-order Markov chain with per-month P(wet | dry yesterday) and P(wet | wet yesterday);
//! - daily mean dry bulb and RH: month mean + a wet/dry shift + an AR(1) anomaly (lag-1 persistence φ, innovations
//!   from a statrs `Normal`); the shifts (wet days [`WET_T_SHIFT_K`] cooler, [`WET_RH_SHIFT_PCT`] more humid, both
//!   from memory as typical magnitudes, unverified) are centred so the monthly mean and the daily standard deviation
//!   stay those given;
//! - hourly values: a diurnal shape with its minimum at 06:00 and maximum at 15:00 local time (half-cosine rise and
//!   fall; common practice, no source), RH moving opposite to temperature, wet days with half the diurnal range,
//!   plus small AR(1) hourly noise;
//! - rain: on wet days an exponential (statrs `Exp`) daily total spread over a block of 2–8 consecutive hours.
//!
//! Pressure is the standard atmosphere at the site's elevation (ASHRAE 2017 ch. 1 eq. 3); wind is not generated.
//!
//! Each season draws from its own `ChaCha8Rng` seeded from `(seed, season index)` only, so a season does not depend
//! on how many others are generated nor on the thread count.
use std::path::Path;

use chrono::{Datelike, Duration, FixedOffset, NaiveDate, TimeZone};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use statrs::distribution::{Exp, Normal};

use super::series::{Site, WeatherSeries};
use crate::error::InputError;
use crate::props::psychro;

/// Wet days are cooler than dry days by this much in the daily mean, K (typical magnitude from memory, unverified).
pub const WET_T_SHIFT_K: f64 = 1.5;
/// Wet days are more humid than dry days by this much in daily mean RH, %-points (from memory, unverified).
pub const WET_RH_SHIFT_PCT: f64 = 12.0;
/// Diurnal range on wet days relative to dry days (from memory, unverified).
pub const WET_RANGE_FACTOR: f64 = 0.5;
/// A day is wet if its rain reaches this total, mm (a common threshold in weather-generator work).
pub const WET_DAY_RAIN_MM: f64 = 1.0;
/// Without rain data, a day is called wet if its mean RH reaches this, % (a proxy of our own).
pub const WET_DAY_RH_PCT: f64 = 85.0;

/// Statistics of one calendar month.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MonthStats {
    /// Month number, 1–12.
    pub month: u32,
    /// Mean of hourly dry bulb, °C.
    pub t_mean_c: f64,
    /// Standard deviation of daily mean dry bulb, K.
    pub t_daily_sd_k: f64,
    /// Mean daily range (max − min) of dry bulb, K.
    pub t_diurnal_range_k: f64,
    /// Mean of hourly RH, %.
    pub rh_mean_pct: f64,
    /// Standard deviation of daily mean RH, %-points.
    pub rh_daily_sd_pct: f64,
    /// Mean daily range of RH, %-points.
    pub rh_diurnal_range_pct: f64,
    /// Probability that a day is wet after a dry day.
    pub p_wet_after_dry: f64,
    /// Probability that a day is wet after a wet day.
    pub p_wet_after_wet: f64,
    /// Mean rain on a wet day, mm.
    pub rain_mm_per_wet_day: f64,
}

/// Monthly climate statistics of a site: the generator's input (JSON file or [`ClimateStats::from_series`]).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ClimateStats {
    /// Site name.
    pub site: String,
    /// Where these numbers come from (free text; say if invented).
    pub source: String,
    /// Site standard-time UTC offset, `-05:00`.
    pub utc_offset: String,
    /// Elevation, m (sets the barometric pressure).
    pub elevation_m: f64,
    /// Lag-1 autocorrelation of daily mean dry-bulb anomalies, 0–0.99.
    pub t_persistence: f64,
    /// Lag-1 autocorrelation of daily mean RH anomalies, 0–0.99.
    pub rh_persistence: f64,
    /// Months (any subset of 1–12, each at most once).
    pub months: Vec<MonthStats>,
}

impl ClimateStats {
    /// Parse and validate JSON text; `path` names the file in errors.
    pub fn from_json(path: &Path, text: &str) -> Result<Self, InputError> {
        let s: ClimateStats = serde_json::from_str(text).map_err(|e| InputError::Parse {
            path: path.to_path_buf(),
            line: Some(e.line() as u64),
            message: e.to_string(),
        })?;
        s.validate(path)
            .map_err(|e| crate::input::with_json_line(e, path, text))?;
        Ok(s)
    }

    /// The site's UTC offset.
    pub fn offset(&self) -> Option<FixedOffset> {
        super::csv::parse_offset(&self.utc_offset)
    }

    /// Check every field's range, naming it (`months[2].rh_mean_pct`).
    pub fn validate(&self, path: &Path) -> Result<(), InputError> {
        let err = |field: String, message: String| InputError::Model {
            line: None,
            path: path.to_path_buf(),
            field,
            message,
        };
        let range = |field: String, x: f64, lo: f64, hi: f64, unit: &str| {
            if x.is_finite() && x >= lo && x <= hi {
                Ok(())
            } else {
                Err(err(
                    field,
                    format!("{x} {unit} must be between {lo} and {hi} {unit}"),
                ))
            }
        };
        if self.offset().is_none() {
            return Err(err(
                "utc_offset".into(),
                format!("{:?} is not an offset like -05:00", self.utc_offset),
            ));
        }
        range("elevation_m".into(), self.elevation_m, -500.0, 5000.0, "m")?;
        range("t_persistence".into(), self.t_persistence, 0.0, 0.99, "")?;
        range("rh_persistence".into(), self.rh_persistence, 0.0, 0.99, "")?;
        if self.months.is_empty() {
            return Err(err("months".into(), "needs at least one month".into()));
        }
        for (k, m) in self.months.iter().enumerate() {
            let f = |name: &str| format!("months[{k}].{name}");
            if !(1..=12).contains(&m.month) {
                return Err(err(f("month"), format!("{} must be 1–12", m.month)));
            }
            if self.months[..k].iter().any(|o| o.month == m.month) {
                return Err(err(f("month"), format!("month {} appears twice", m.month)));
            }
            range(f("t_mean_c"), m.t_mean_c, -30.0, 45.0, "°C")?;
            range(f("t_daily_sd_k"), m.t_daily_sd_k, 0.0, 15.0, "K")?;
            range(f("t_diurnal_range_k"), m.t_diurnal_range_k, 0.0, 30.0, "K")?;
            range(f("rh_mean_pct"), m.rh_mean_pct, 5.0, 100.0, "%")?;
            range(f("rh_daily_sd_pct"), m.rh_daily_sd_pct, 0.0, 40.0, "%")?;
            range(
                f("rh_diurnal_range_pct"),
                m.rh_diurnal_range_pct,
                0.0,
                90.0,
                "%",
            )?;
            range(f("p_wet_after_dry"), m.p_wet_after_dry, 0.0, 1.0, "")?;
            range(f("p_wet_after_wet"), m.p_wet_after_wet, 0.0, 1.0, "")?;
            range(
                f("rain_mm_per_wet_day"),
                m.rain_mm_per_wet_day,
                0.0,
                300.0,
                "mm",
            )?;
        }
        Ok(())
    }

    fn month(&self, m: u32) -> Option<&MonthStats> {
        self.months.iter().find(|s| s.month == m)
    }

    /// Estimate the statistics of every month with at least 5 complete local days in `series`. Wet days are days
    /// with ≥ [`WET_DAY_RAIN_MM`] of rain, or, if the series has no rain, days with mean RH ≥ [`WET_DAY_RH_PCT`]
    /// (then `rain_mm_per_wet_day` is 0). Markov probabilities carry a half-count prior so that a month without
    /// a transition still gives a usable value.
    pub fn from_series(series: &WeatherSeries, source: &str) -> Result<Self, InputError> {
        struct Day {
            month: u32,
            date: NaiveDate,
            t_mean: f64,
            t_range: f64,
            rh_mean: f64,
            rh_range: f64,
            rain: f64,
            wet: bool,
        }
        let (t, rh) = (series.t_c(), series.rh());
        let mut days: Vec<Day> = Vec::new();
        let mut i = 0;
        while i < series.len() {
            let date = series.time(i).date_naive();
            let mut j = i;
            while j < series.len() && series.time(j).date_naive() == date {
                j += 1;
            }
            if j - i == 24 {
                let (td, rd) = (&t[i..j], &rh[i..j]);
                let max = |v: &[f64]| v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                let min = |v: &[f64]| v.iter().copied().fold(f64::INFINITY, f64::min);
                let rain = series.rain_mm().map_or(0.0, |r| r[i..j].iter().sum());
                let rh_mean = 100.0 * rd.iter().sum::<f64>() / 24.0;
                days.push(Day {
                    month: date.month(),
                    date,
                    t_mean: td.iter().sum::<f64>() / 24.0,
                    t_range: max(td) - min(td),
                    rh_mean,
                    rh_range: 100.0 * (max(rd) - min(rd)),
                    rain,
                    wet: if series.rain_mm().is_some() {
                        rain >= WET_DAY_RAIN_MM
                    } else {
                        rh_mean >= WET_DAY_RH_PCT
                    },
                });
            }
            i = j;
        }
        let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
        let sd = |v: &[f64]| {
            let m = mean(v);
            (v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() as f64 - 1.0).max(1.0))
                .sqrt()
        };
        let mut months = Vec::new();
        let mut anomalies: Vec<(NaiveDate, f64, f64)> = Vec::new();
        for m in 1..=12 {
            let md: Vec<&Day> = days.iter().filter(|d| d.month == m).collect();
            if md.len() < 5 {
                continue;
            }
            let col = |f: fn(&Day) -> f64| md.iter().map(|d| f(d)).collect::<Vec<f64>>();
            let (tm, rm) = (col(|d| d.t_mean), col(|d| d.rh_mean));
            // Hourly means over the month's complete days equal the mean of the daily means.
            let (t_mean, rh_mean) = (mean(&tm), mean(&rm));
            for d in &md {
                anomalies.push((d.date, d.t_mean - t_mean, d.rh_mean - rh_mean));
            }
            let (mut n_d, mut n_dw, mut n_w, mut n_ww) = (0.0, 0.0, 0.0, 0.0);
            for pair in md.windows(2) {
                if pair[1].date - pair[0].date != Duration::days(1) {
                    continue;
                }
                if pair[0].wet {
                    n_w += 1.0;
                    n_ww += f64::from(u8::from(pair[1].wet));
                } else {
                    n_d += 1.0;
                    n_dw += f64::from(u8::from(pair[1].wet));
                }
            }
            let wet_rain: Vec<f64> = md.iter().filter(|d| d.wet).map(|d| d.rain).collect();
            months.push(MonthStats {
                month: m,
                t_mean_c: t_mean,
                t_daily_sd_k: sd(&tm),
                t_diurnal_range_k: mean(&col(|d| d.t_range)),
                rh_mean_pct: rh_mean,
                rh_daily_sd_pct: sd(&rm),
                rh_diurnal_range_pct: mean(&col(|d| d.rh_range)),
                p_wet_after_dry: (n_dw + 0.5) / (n_d + 1.0),
                p_wet_after_wet: (n_ww + 0.5) / (n_w + 1.0),
                rain_mm_per_wet_day: if series.rain_mm().is_some() && !wet_rain.is_empty() {
                    mean(&wet_rain)
                } else {
                    0.0
                },
            });
        }
        if months.is_empty() {
            return Err(InputError::argument(
                "sample series",
                format!("{} hours", series.len()),
                "needs at least 5 complete days in some month to estimate statistics",
            ));
        }
        anomalies.sort_by_key(|a| a.0);
        let lag1 = |f: fn(&(NaiveDate, f64, f64)) -> f64| {
            let (mut num, mut den) = (0.0, 0.0);
            for a in &anomalies {
                den += f(a) * f(a);
            }
            for w in anomalies.windows(2) {
                if w[1].0 - w[0].0 == Duration::days(1) {
                    num += f(&w[0]) * f(&w[1]);
                }
            }
            if den > 0.0 {
                (num / den).clamp(0.0, 0.95)
            } else {
                0.0
            }
        };
        let off = series.site().utc_offset;
        Ok(ClimateStats {
            site: series.site().name.clone(),
            source: source.to_string(),
            utc_offset: off.to_string(),
            elevation_m: series.site().elevation_m.unwrap_or(0.0),
            t_persistence: lag1(|a| a.1),
            rh_persistence: lag1(|a| a.2),
            months,
        })
    }
}

/// What to generate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct SeasonPlan {
    /// First local day (the series starts at its 00:00).
    pub start: NaiveDate,
    /// Number of days.
    pub days: u32,
    /// Master seed.
    pub seed: u64,
}

/// The diurnal shape at each local hour: minimum at 06:00, maximum at 15:00, half-cosine between; discretely
/// centred to a mean of zero over the 24 hours and scaled to a max − min of exactly 1.
fn diurnal_shape() -> [f64; 24] {
    let mut s = [0.0; 24];
    for (h, v) in s.iter_mut().enumerate() {
        let h = h as f64;
        *v = if (6.0..=15.0).contains(&h) {
            -(std::f64::consts::PI * (h - 6.0) / 9.0).cos()
        } else {
            let hh = if h > 15.0 { h } else { h + 24.0 };
            (std::f64::consts::PI * (hh - 15.0) / 15.0).cos()
        };
    }
    let mean = s.iter().sum::<f64>() / 24.0;
    let (lo, hi) = s
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
            (a.min(x), b.max(x))
        });
    s.map(|x| (x - mean) / (hi - lo))
}

/// The RNG of season `index`: ChaCha8 keyed by the seed (bytes 0–7) and the index (bytes 8–15).
pub fn season_rng(seed: u64, index: u64) -> ChaCha8Rng {
    let mut key = [0u8; 32];
    key[..8].copy_from_slice(&seed.to_le_bytes());
    key[8..16].copy_from_slice(&index.to_le_bytes());
    ChaCha8Rng::from_seed(key)
}

/// Generate season `index` of `plan`. Every month the plan touches must be in `stats`.
pub fn generate_season(
    stats: &ClimateStats,
    plan: &SeasonPlan,
    index: u64,
) -> Result<WeatherSeries, InputError> {
    let offset = stats.offset().ok_or_else(|| {
        InputError::argument(
            "utc_offset",
            &stats.utc_offset,
            "must be an offset like -05:00",
        )
    })?;
    if plan.days == 0 {
        return Err(InputError::argument("--days", 0, "must be at least 1"));
    }
    let mut rng = season_rng(plan.seed, index);
    let normal = Normal::new(0.0, 1.0).expect("unit normal");
    let shape = diurnal_shape();
    let n = plan.days as usize * 24;
    let (mut t, mut rh, mut rain) = (Vec::with_capacity(n), Vec::with_capacity(n), vec![0.0; n]);
    let (mut z_t, mut z_rh) = (0.0_f64, 0.0_f64);
    let (mut e_t, mut e_rh) = (0.0_f64, 0.0_f64);
    let mut wet = false;
    let (phi_t, phi_rh) = (stats.t_persistence, stats.rh_persistence);
    for d in 0..plan.days as usize {
        let date = plan.start + Duration::days(d as i64);
        let m = stats.month(date.month()).ok_or_else(|| {
            InputError::argument(
                "--days",
                format!("{} (reaches {date})", plan.days),
                &format!("the statistics have no month {}", date.month()),
            )
        })?;
        // Stationary wet-day probability of the month's chain.
        let denom = 1.0 - m.p_wet_after_wet + m.p_wet_after_dry;
        let pi = if denom > 0.0 {
            m.p_wet_after_dry / denom
        } else {
            0.5
        };
        let p_wet = if d == 0 {
            pi
        } else if wet {
            m.p_wet_after_wet
        } else {
            m.p_wet_after_dry
        };
        wet = rng.random::<f64>() < p_wet;
        if d == 0 {
            z_t = rng.sample(normal);
            z_rh = rng.sample(normal);
        } else {
            z_t = phi_t * z_t + (1.0 - phi_t * phi_t).sqrt() * rng.sample(normal);
            z_rh = phi_rh * z_rh + (1.0 - phi_rh * phi_rh).sqrt() * rng.sample(normal);
        }
        // Wet/dry shifts centred on the month mean; what remains of the daily variance goes to the AR(1) anomaly.
        let mix = pi * (1.0 - pi);
        let split = |sd: f64, shift: f64| {
            let k = shift.min(sd / mix.sqrt().max(1e-9) * 0.7);
            (k, (sd * sd - k * k * mix).max(0.0).sqrt())
        };
        let (k_t, sd_t) = split(m.t_daily_sd_k, WET_T_SHIFT_K);
        let (k_rh, sd_rh) = split(m.rh_daily_sd_pct, WET_RH_SHIFT_PCT);
        let (shift_t, shift_rh) = if wet {
            (-k_t * (1.0 - pi), k_rh * (1.0 - pi))
        } else {
            (k_t * pi, -k_rh * pi)
        };
        let range_norm = WET_RANGE_FACTOR * pi + (1.0 - pi);
        let range_factor = if wet { WET_RANGE_FACTOR } else { 1.0 } / range_norm;
        let day_var = (1.0 + 0.15 * rng.sample(normal)).clamp(0.6, 1.4);
        let t_day = m.t_mean_c + shift_t + sd_t * z_t;
        let rh_day = m.rh_mean_pct + shift_rh + sd_rh * z_rh;
        let t_range = m.t_diurnal_range_k * range_factor * day_var;
        let rh_range = m.rh_diurnal_range_pct * range_factor * day_var;
        for s in shape {
            e_t = 0.7 * e_t + 0.15 * rng.sample(normal);
            e_rh = 0.7 * e_rh + 0.6 * rng.sample(normal);
            t.push((t_day + t_range * s + e_t).clamp(-45.0, 55.0));
            rh.push(((rh_day - rh_range * s + e_rh) / 100.0).clamp(0.03, 1.0));
        }
        if wet && m.rain_mm_per_wet_day > 0.0 {
            let total = rng.sample(Exp::new(1.0 / m.rain_mm_per_wet_day).expect("positive rate"));
            let len = rng.random_range(2..=8usize);
            let first = d * 24 + rng.random_range(0..24usize);
            let hours: Vec<usize> = (first..(first + len).min(n)).collect();
            let each = total / hours.len() as f64;
            for h in hours {
                rain[h] += each;
            }
        }
    }
    let p0 = psychro::pressure_at_elevation_pa(stats.elevation_m);
    let start = offset
        .from_local_datetime(&plan.start.and_hms_opt(0, 0, 0).expect("midnight"))
        .single()
        .expect("fixed offsets have no gaps");
    WeatherSeries::new(
        Site {
            name: stats.site.clone(),
            utc_offset: offset,
            elevation_m: Some(stats.elevation_m),
        },
        start,
        t,
        rh,
        vec![p0; n],
        // No rain amounts in the statistics (e.g. estimated from a file without rain): no rain column, rather than
        // a column of zeros that would read as "dry".
        stats
            .months
            .iter()
            .any(|m| m.rain_mm_per_wet_day > 0.0)
            .then_some(rain),
        None,
    )
}

/// Generate seasons `0..count` in parallel; the result is in index order and independent of the thread count.
pub fn generate_seasons(
    stats: &ClimateStats,
    plan: &SeasonPlan,
    count: u64,
) -> Result<Vec<WeatherSeries>, InputError> {
    (0..count)
        .into_par_iter()
        .map(|i| generate_season(stats, plan, i))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn diurnal_shape_is_centred_with_unit_range_and_peaks_mid_afternoon() {
        let s = diurnal_shape();
        assert_relative_eq!(s.iter().sum::<f64>(), 0.0, epsilon = 1e-12);
        let hi = s.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let lo = s.iter().copied().fold(f64::INFINITY, f64::min);
        assert_relative_eq!(hi - lo, 1.0, epsilon = 1e-12);
        assert_relative_eq!(s[15], hi);
        assert_relative_eq!(s[6], lo);
    }

    #[test]
    fn season_rngs_differ_by_index_and_seed() {
        let a: u64 = season_rng(1, 0).random();
        let b: u64 = season_rng(1, 1).random();
        let c: u64 = season_rng(2, 0).random();
        assert!(a != b && a != c && b != c);
    }
}
