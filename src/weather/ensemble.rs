//! Weather members around a forecast: seeded, deterministic perturbations of the hours after a given instant, for
//! the spread of a load's finish (`status::forecast`).
//!
//! Method (our own, stated so it can be judged): a forecast's error in dry bulb and in dew point is taken as two
//! independent AR(1) processes in the lead time (hourly correlation [`HOURLY_CORRELATION`]), each with a standard
//! deviation growing as the square root of the lead time, `σ(τ) = σ₂₄ · √(τ / 24 h)` (a random walk's growth;
//! σ₂₄ is the caller's stated error at one day ahead). Members come in antithetic pairs (member 2k gets +e, member
//! 2k + 1 gets −e), so the ensemble stays centred on the forecast. Hours at or before the instant are kept as they
//! are (they are observed weather). The dew point is capped at the dry bulb, so RH never passes 1. Each pair draws
//! from its own ChaCha8 stream keyed by `(seed, pair)` only, so a member does not depend on how many others there
//! are, nor on the thread that builds it.

use chrono::{DateTime, FixedOffset};
use rand::RngExt;
use statrs::distribution::Normal;

use super::series::WeatherSeries;
use super::synth::season_rng;
use crate::error::InputError;
use crate::props::psychro;

/// Hour-to-hour correlation of a forecast's error (our own choice: an error that persists for about half a day,
/// `1 / (1 − 0.9)` ≈ 10 h, as a wrong front timing or a cloud deck would).
pub const HOURLY_CORRELATION: f64 = 0.9;

/// How the members are drawn.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// Standard deviation of the dry bulb's error one day ahead, K.
    pub t_sigma_24h_k: f64,
    /// Standard deviation of the dew point's error one day ahead, K.
    pub dew_sigma_24h_k: f64,
    /// Seed.
    pub seed: u64,
}

/// The unit-variance AR(1) error path of pair `pair`, one value per hour of `n`.
fn error_path(seed: u64, pair: u64, stream: u64, n: usize) -> Vec<f64> {
    let mut rng = season_rng(seed, pair.wrapping_mul(2).wrapping_add(stream));
    let normal = Normal::new(0.0, 1.0).expect("unit normal");
    let phi = HOURLY_CORRELATION;
    let mut z = rng.sample(normal);
    let mut out = Vec::with_capacity(n);
    for _ in 0..n {
        out.push(z);
        z = phi * z + (1.0 - phi * phi).sqrt() * rng.sample(normal);
    }
    out
}

/// Member `member` of the ensemble: `series` with every hour after `after` perturbed.
pub fn member(
    series: &WeatherSeries,
    after: DateTime<FixedOffset>,
    spread: &Spread,
    member: u64,
) -> Result<WeatherSeries, InputError> {
    let n = series.len();
    let first = (0..n).find(|&i| series.time(i) > after).unwrap_or(n);
    let sign = if member.is_multiple_of(2) { 1.0 } else { -1.0 };
    let pair = member / 2;
    let et = error_path(spread.seed, pair, 0, n - first);
    let ed = error_path(spread.seed, pair, 1, n - first);
    let (mut t, mut rh) = (series.t_c().to_vec(), series.rh().to_vec());
    let p = series.p_pa();
    for i in first..n {
        let lead_h = (series.time(i) - after).num_milliseconds() as f64 / 3.6e6;
        let growth = (lead_h / 24.0).sqrt();
        let dew = psychro::dew_point_c(series.w()[i], p[i]);
        let ti = (t[i] + sign * spread.t_sigma_24h_k * growth * et[i - first]).clamp(-50.0, 60.0);
        let di = (dew + sign * spread.dew_sigma_24h_k * growth * ed[i - first]).min(ti);
        t[i] = ti;
        rh[i] = (psychro::saturation_pressure_pa(di) / psychro::saturation_pressure_pa(ti))
            .clamp(0.0, 1.0);
    }
    WeatherSeries::new(
        series.site().clone(),
        series.start(),
        t,
        rh,
        p.to_vec(),
        series.rain_mm().map(<[f64]>::to_vec),
        series.wind_m_s().map(<[f64]>::to_vec),
    )
}

/// Why an observed record and a forecast cannot be joined.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum JoinError {
    /// The forecast's first hour comes more than an hour after the observations' last: hours in between are
    /// unknown.
    #[error("starts {forecast_start}, more than an hour after the observed weather ends ({observed_end}): the hours between are missing")]
    Gap {
        /// Last observed hour.
        observed_end: DateTime<FixedOffset>,
        /// First forecast hour.
        forecast_start: DateTime<FixedOffset>,
    },
    /// The forecast adds no hour after the observations.
    #[error("ends {forecast_end}, not after the observed weather ({observed_end})")]
    NothingAhead {
        /// Last observed hour.
        observed_end: DateTime<FixedOffset>,
        /// Last forecast hour.
        forecast_end: DateTime<FixedOffset>,
    },
}

/// The observed hours followed by the forecast's hours after them (where both cover an hour, the observation
/// stands). The forecast must start no later than one hour after the last observation.
pub fn join(
    observed: &WeatherSeries,
    forecast: &WeatherSeries,
) -> Result<WeatherSeries, JoinError> {
    let (end, f_start) = (observed.end(), forecast.start());
    if f_start > end + chrono::Duration::hours(1) {
        return Err(JoinError::Gap {
            observed_end: end,
            forecast_start: f_start,
        });
    }
    if forecast.end() <= end {
        return Err(JoinError::NothingAhead {
            observed_end: end,
            forecast_end: forecast.end(),
        });
    }
    // Forecast hours on the observations' hourly grid: whole hours after the last observation.
    let ahead: Vec<usize> = (0..forecast.len())
        .filter(|&i| forecast.time(i) > end)
        .collect();
    let step = |i: usize| (forecast.time(i) - end).num_minutes();
    let on_grid = ahead.first().map(|&i| step(i) == 60).unwrap_or(false);
    let (mut t, mut rh, mut p) = (
        observed.t_c().to_vec(),
        observed.rh().to_vec(),
        observed.p_pa().to_vec(),
    );
    if on_grid {
        for &i in &ahead {
            t.push(forecast.t_c()[i]);
            rh.push(forecast.rh()[i]);
            p.push(forecast.p_pa()[i]);
        }
    } else {
        // A forecast on another minute of the hour: sampled at the observations' next hours.
        let mut k = 1;
        while let Ok(s) = forecast.at(end + chrono::Duration::hours(k)) {
            t.push(s.t_c);
            rh.push(s.rh);
            p.push(s.p_pa);
            k += 1;
        }
    }
    Ok(WeatherSeries::new(
        observed.site().clone(),
        observed.start(),
        t,
        rh,
        p,
        None,
        None,
    )
    .expect("both series were checked when read"))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::weather::series::Site;
    use chrono::Duration;

    fn flat(n: usize) -> WeatherSeries {
        let site = Site {
            name: "test".into(),
            utc_offset: FixedOffset::west_opt(5 * 3600).unwrap(),
            elevation_m: None,
        };
        let start = DateTime::parse_from_rfc3339("2026-09-18T00:00:00-05:00").unwrap();
        WeatherSeries::new(
            site,
            start,
            vec![22.0; n],
            vec![0.7; n],
            vec![101_000.0; n],
            None,
            None,
        )
        .unwrap()
    }

    #[test]
    fn hours_before_the_instant_are_kept_and_pairs_are_antithetic() {
        let s = flat(72);
        let after = s.start() + Duration::hours(10);
        let spread = Spread {
            t_sigma_24h_k: 2.0,
            dew_sigma_24h_k: 1.5,
            seed: 7,
        };
        let (a, b) = (
            member(&s, after, &spread, 4).unwrap(),
            member(&s, after, &spread, 5).unwrap(),
        );
        assert_eq!(&a.t_c()[..11], &s.t_c()[..11]);
        for i in 11..72 {
            // Antithetic: the two members' dry-bulb errors are equal and opposite (to rounding).
            assert!(
                (a.t_c()[i] - 22.0 + b.t_c()[i] - 22.0).abs() < 1e-12,
                "hour {i}"
            );
            assert!(a.rh()[i] <= 1.0 && b.rh()[i] <= 1.0);
        }
        assert!(a.t_c()[11..].iter().any(|&t| (t - 22.0).abs() > 0.1));
        // Deterministic: the same member twice is the same series.
        assert_eq!(member(&s, after, &spread, 4).unwrap(), a);
    }

    #[test]
    fn join_takes_the_forecast_after_the_observations_and_refuses_a_gap() {
        let obs = flat(10);
        let fc = flat(30)
            .slice(obs.start() + Duration::hours(8), Duration::hours(20))
            .unwrap();
        let j = join(&obs, &fc).unwrap();
        assert_eq!(j.len(), 28);
        assert_eq!(j.start(), obs.start());
        let late = flat(30)
            .slice(obs.start() + Duration::hours(11), Duration::hours(5))
            .unwrap();
        assert!(matches!(join(&obs, &late), Err(JoinError::Gap { .. })));
        let early = flat(30).slice(obs.start(), Duration::hours(8)).unwrap();
        assert!(matches!(
            join(&obs, &early),
            Err(JoinError::NothingAhead { .. })
        ));
    }
}
