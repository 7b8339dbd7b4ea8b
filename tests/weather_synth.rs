//! Synthetic seasons must reproduce the monthly statistics they were generated from (means and daily standard
//! deviations of dry bulb and RH, diurnal ranges, wet-day frequency, rain per wet day, day-to-day persistence),
//! have a realistic diurnal cycle, and be identical for a fixed seed whatever the thread count.
//!
//! The statistics are those of the invented demo site (`weather-samples/cypress-neck-stats.json`) and, for the
//! from-a-sample path, those estimated from the real NSRDB TMY3 Greensboro file. Tolerances are stated per check;
//! they are several sampling standard errors wide for 60 seasons of 91 days (measured values in the messages).
use std::path::Path;

use chrono::{Datelike, NaiveDate, Timelike};
use dryfront::weather::synth::season_rng;
use dryfront::weather::{
    generate_season, generate_seasons, parse_csv, read_tmy3, ClimateStats, ReadOptions, SeasonPlan,
    WeatherSeries,
};
use rand::RngExt;

fn demo_stats() -> ClimateStats {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("weather-samples/cypress-neck-stats.json");
    ClimateStats::from_json(&p, &std::fs::read_to_string(&p).unwrap()).unwrap()
}

fn plan(seed: u64) -> SeasonPlan {
    SeasonPlan {
        start: NaiveDate::from_ymd_opt(2026, 9, 1).unwrap(),
        days: 91,
        seed,
    }
}

/// Per (month): hourly T, hourly RH, daily mean T, daily mean RH, daily T range, daily RH range, daily rain.
#[derive(Default)]
struct Pool {
    t: Vec<f64>,
    rh: Vec<f64>,
    /// Standard deviations of daily means within each season-month.
    sd_t: Vec<f64>,
    sd_rh: Vec<f64>,
    range_t: Vec<f64>,
    range_rh: Vec<f64>,
    rain: Vec<f64>,
    /// Lag-1 pairs of daily mean T anomalies.
    lag: Vec<(f64, f64)>,
}

fn sd(v: &[f64]) -> f64 {
    let m = v.iter().sum::<f64>() / v.len() as f64;
    (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (v.len() - 1) as f64).sqrt()
}
fn mean(v: &[f64]) -> f64 {
    v.iter().sum::<f64>() / v.len() as f64
}

fn pool(seasons: &[WeatherSeries], month: u32) -> Pool {
    let mut p = Pool::default();
    for s in seasons {
        let idx: Vec<usize> = (0..s.len())
            .filter(|&i| s.time(i).month() == month)
            .collect();
        let days: Vec<&[usize]> = idx.chunks(24).filter(|c| c.len() == 24).collect();
        let mut dt = Vec::new();
        let mut drh = Vec::new();
        for d in &days {
            let t: Vec<f64> = d.iter().map(|&i| s.t_c()[i]).collect();
            let rh: Vec<f64> = d.iter().map(|&i| 100.0 * s.rh()[i]).collect();
            let mx = |v: &[f64]| v.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let mn = |v: &[f64]| v.iter().copied().fold(f64::INFINITY, f64::min);
            p.range_t.push(mx(&t) - mn(&t));
            p.range_rh.push(mx(&rh) - mn(&rh));
            p.rain
                .push(s.rain_mm().map_or(0.0, |r| d.iter().map(|&i| r[i]).sum()));
            dt.push(mean(&t));
            drh.push(mean(&rh));
            p.t.extend(t);
            p.rh.extend(rh);
        }
        p.sd_t.push(sd(&dt));
        p.sd_rh.push(sd(&drh));
        let m = mean(&dt);
        p.lag.extend(dt.windows(2).map(|w| (w[0] - m, w[1] - m)));
    }
    p
}

#[test]
fn demo_seasons_reproduce_their_monthly_statistics() {
    let stats = demo_stats();
    let seasons = generate_seasons(&stats, &plan(11), 60).unwrap();
    for m in &stats.months {
        let p = pool(&seasons, m.month);
        let k = m.month;
        let t_mean = mean(&p.t);
        let rh_mean = mean(&p.rh);
        // RMS of the within-month daily standard deviations (a within-month sd is biased low by a few % for 30 days).
        let sd_t = (p.sd_t.iter().map(|x| x * x).sum::<f64>() / p.sd_t.len() as f64).sqrt();
        let sd_rh = (p.sd_rh.iter().map(|x| x * x).sum::<f64>() / p.sd_rh.len() as f64).sqrt();
        let range_t = mean(&p.range_t);
        let range_rh = mean(&p.range_rh);
        eprintln!(
            "month {k}: T {t_mean:.2} (target {}), RH {rh_mean:.2} ({}), sd T {sd_t:.2} ({}), sd RH {sd_rh:.2} ({}), \
             range T {range_t:.2} ({}), range RH {range_rh:.2} ({})",
            m.t_mean_c, m.rh_mean_pct, m.t_daily_sd_k, m.rh_daily_sd_pct, m.t_diurnal_range_k, m.rh_diurnal_range_pct
        );
        // Means: ±0.5 K and ±2.5 %-points (RH is clipped at 100 %, which pulls humid months down a little).
        assert!(
            (t_mean - m.t_mean_c).abs() < 0.5,
            "month {k} T mean {t_mean}"
        );
        assert!(
            (rh_mean - m.rh_mean_pct).abs() < 2.5,
            "month {k} RH mean {rh_mean}"
        );
        // Daily standard deviations: within 20 % (persistence makes a 30-day sample sd low by ~10 % at φ = 0.7).
        assert!(
            (sd_t / m.t_daily_sd_k - 1.0).abs() < 0.2,
            "month {k} sd T {sd_t}"
        );
        assert!(
            (sd_rh / m.rh_daily_sd_pct - 1.0).abs() < 0.2,
            "month {k} sd RH {sd_rh}"
        );
        // Diurnal ranges: within 12 % (hourly noise widens max − min slightly; clipping narrows RH).
        assert!(
            (range_t / m.t_diurnal_range_k - 1.0).abs() < 0.12,
            "month {k} T range {range_t}"
        );
        assert!(
            (range_rh / m.rh_diurnal_range_pct - 1.0).abs() < 0.15,
            "month {k} RH range {range_rh}"
        );
        // Wet days: stationary probability of the Markov chain, ±0.05; rain per wet day within 20 %.
        let pi = m.p_wet_after_dry / (1.0 - m.p_wet_after_wet + m.p_wet_after_dry);
        let wet: Vec<f64> = p.rain.iter().copied().filter(|&r| r > 0.0).collect();
        let frac = wet.len() as f64 / p.rain.len() as f64;
        eprintln!(
            "month {k}: wet fraction {frac:.3} (target {pi:.3}), rain/wet day {:.2} ({})",
            mean(&wet),
            m.rain_mm_per_wet_day
        );
        assert!((frac - pi).abs() < 0.05, "month {k} wet fraction {frac}");
        assert!(
            (mean(&wet) / m.rain_mm_per_wet_day - 1.0).abs() < 0.2,
            "month {k} rain {}",
            mean(&wet)
        );
        // Persistence: lag-1 autocorrelation of daily anomalies near the AR(1) φ (±0.15: the wet/dry chain adds some).
        let num: f64 = p.lag.iter().map(|(a, b)| a * b).sum();
        let den: f64 = p.lag.iter().map(|(a, _)| a * a).sum();
        let r1 = num / den;
        eprintln!("month {k}: lag-1 {r1:.3} (AR φ {})", stats.t_persistence);
        assert!(
            (r1 - stats.t_persistence).abs() < 0.15,
            "month {k} lag-1 {r1}"
        );
    }
}

#[test]
fn diurnal_cycle_is_realistic() {
    // Common practice, no source: ambient dry bulb peaks mid-afternoon and bottoms out near sunrise; RH the reverse;
    // autumn daily ranges in a humid coastal plain are roughly 8–15 K.
    let stats = demo_stats();
    let seasons = generate_seasons(&stats, &plan(5), 20).unwrap();
    let mut by_hour_t = [0.0; 24];
    let mut by_hour_rh = [0.0; 24];
    for s in &seasons {
        for i in 0..s.len() {
            let h = s.time(i).hour() as usize;
            by_hour_t[h] += s.t_c()[i];
            by_hour_rh[h] += s.rh()[i];
        }
    }
    let argmax = |v: &[f64; 24]| (0..24).max_by(|&a, &b| v[a].total_cmp(&v[b])).unwrap();
    let argmin = |v: &[f64; 24]| (0..24).min_by(|&a, &b| v[a].total_cmp(&v[b])).unwrap();
    assert!(
        (14..=16).contains(&argmax(&by_hour_t)),
        "T peak at {}",
        argmax(&by_hour_t)
    );
    assert!(
        (5..=7).contains(&argmin(&by_hour_t)),
        "T low at {}",
        argmin(&by_hour_t)
    );
    assert!(
        (14..=16).contains(&argmin(&by_hour_rh)),
        "RH low at {}",
        argmin(&by_hour_rh)
    );
    let n = (seasons.len() * seasons[0].len() / 24) as f64;
    let amp = (by_hour_t[argmax(&by_hour_t)] - by_hour_t[argmin(&by_hour_t)]) / n;
    assert!((8.0..=15.0).contains(&amp), "mean-day amplitude {amp} K");
}

#[test]
fn same_seed_gives_identical_seasons_on_one_and_two_threads() {
    let stats = demo_stats();
    let one = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let two = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let a = one.install(|| generate_seasons(&stats, &plan(42), 8).unwrap());
    let b = two.install(|| generate_seasons(&stats, &plan(42), 8).unwrap());
    assert!(a == b, "seasons differ between 1 and 2 threads");
    // A season does not depend on how many others were generated.
    assert!(generate_season(&stats, &plan(42), 5).unwrap() == a[5]);
    // And the seed matters.
    let c = generate_seasons(&stats, &plan(43), 1).unwrap();
    assert!(c[0] != a[0]);
    let _: u64 = season_rng(42, 0).random();
}

#[test]
fn seasons_from_a_real_sample_follow_its_months() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let opts = ReadOptions {
        year: Some(2026),
        ..ReadOptions::default()
    };
    let tmy = read_tmy3(&root.join("weather-samples/723170TYA.CSV"), &opts).unwrap();
    let stats = ClimateStats::from_series(&tmy, "test").unwrap();
    stats.validate(Path::new("estimated")).unwrap();
    assert_eq!(stats.months.len(), 12);
    let seasons = generate_seasons(&stats, &plan(3), 40).unwrap();
    for month in [9, 10, 11] {
        let sample: Vec<f64> = (0..tmy.len())
            .filter(|&i| tmy.time(i).month() == month)
            .map(|i| tmy.t_c()[i])
            .collect();
        let sample_rh: Vec<f64> = (0..tmy.len())
            .filter(|&i| tmy.time(i).month() == month)
            .map(|i| 100.0 * tmy.rh()[i])
            .collect();
        let p = pool(&seasons, month);
        eprintln!(
            "month {month}: T {:.2} vs sample {:.2}; RH {:.2} vs {:.2}",
            mean(&p.t),
            mean(&sample),
            mean(&p.rh),
            mean(&sample_rh)
        );
        // ±0.6 K and ±3 %-points of the sample month (the sample's own month mean is the target).
        assert!((mean(&p.t) - mean(&sample)).abs() < 0.6);
        assert!((mean(&p.rh) - mean(&sample_rh)).abs() < 3.0);
    }
}

#[test]
fn a_generated_season_round_trips_through_our_csv() {
    let s = generate_season(&demo_stats(), &plan(1), 0).unwrap();
    let text = dryfront::report::weather::series_csv(&s, &["test".into()]);
    let back = parse_csv(Path::new("round.csv"), &text, &ReadOptions::default()).unwrap();
    assert_eq!(back.len(), s.len());
    assert_eq!(back.start(), s.start());
    for i in 0..s.len() {
        // Written with 2 decimals (T, RH %) and 3 (kPa): tolerances half a unit in the last place.
        approx::assert_abs_diff_eq!(back.t_c()[i], s.t_c()[i], epsilon = 0.005 + 1e-9);
        approx::assert_abs_diff_eq!(back.rh()[i], s.rh()[i], epsilon = 0.00005 + 1e-9);
        approx::assert_abs_diff_eq!(back.p_pa()[i], s.p_pa()[i], epsilon = 0.5 + 1e-9);
    }
}

#[test]
fn bad_statistics_name_the_field() {
    let mut text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("weather-samples/cypress-neck-stats.json"),
    )
    .unwrap();
    text = text.replace("\"rh_mean_pct\": 75.0", "\"rh_mean_pct\": 175.0");
    let err = ClimateStats::from_json(Path::new("stats.json"), &text)
        .unwrap_err()
        .to_string();
    // Line 12 of the bundled statistics holds October's row (months[1]).
    assert!(
        err.contains(
            "stats.json:12: field \"months[1].rh_mean_pct\": 175 % must be between 5 and 100 %"
        ),
        "{err}"
    );
    let err = ClimateStats::from_json(Path::new("stats.json"), "{\"site\": 1}")
        .unwrap_err()
        .to_string();
    assert!(err.starts_with("stats.json:1:"), "{err}");
    // A plan reaching a month the statistics lack is refused.
    let long = SeasonPlan {
        days: 200,
        ..plan(1)
    };
    let err = generate_season(&demo_stats(), &long, 0)
        .unwrap_err()
        .to_string();
    assert!(err.contains("no month 12"), "{err}");
}
