//! Loads arriving at the buying point: read from a CSV (`load_id, arrival, net_mass_kg, kernel_moisture_pct[,
//! notes]`) with errors naming file, line and field, or drawn from a seeded generator.
//!
//! Generator (our own parameterisation; shapes are common practice, no source): the day of each load follows a
//! beta-shaped harvest-progress curve over the season (daily share ∝ x^(α−1)(1−x)^(β−1) at the day's midpoint
//! x ∈ (0, 1)), scaled down on rain days and the day after; the hour of arrival is normal around mid-afternoon
//! (harvest starts once the dew is off and the combines unload into the evening); net mass and initial kernel
//! moisture are truncated normals (resampled until inside their bounds). Random numbers: ChaCha8 from a seed,
//! distributions from `statrs`.

use std::path::Path;

use chrono::{DateTime, Duration, FixedOffset};
use rand::distr::Distribution;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use statrs::distribution::Normal;

use crate::error::InputError;
use crate::input::line_err;
use crate::input::read::header_columns;
use crate::input::{SEMICOLON_HINT, UNCLOSED_QUOTE};

/// One load of farmer-stock peanuts.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Load {
    /// The load's id.
    pub id: String,
    /// When it reached the yard.
    pub arrival: DateTime<FixedOffset>,
    /// Net mass as weighed, kg.
    pub mass_kg: f64,
    /// Initial kernel moisture, % w.b.
    pub moisture_pct: f64,
    /// Free text.
    pub notes: String,
}

/// Lowest and highest initial moisture accepted, % w.b.
pub const MOISTURE_RANGE_PCT: (f64, f64) = (5.0, 45.0);

/// Parse an arrivals CSV. `range` is the weather record's `[start, end)`: each arrival must fall inside it. A row
/// with more fields than the header, a semicolon-separated file and a file without loads are errors.
/// Loads come back sorted by arrival (stable, so file order breaks ties).
pub fn parse_arrivals_csv<R: std::io::Read>(
    path: &Path,
    reader: R,
    range: Option<(DateTime<FixedOffset>, DateTime<FixedOffset>)>,
) -> Result<Vec<Load>, InputError> {
    let mut rdr = csv::ReaderBuilder::new()
        .trim(csv::Trim::All)
        .flexible(true)
        .comment(Some(b'#'))
        .from_reader(reader);
    let parse_err = |e: csv::Error| InputError::Parse {
        path: path.to_path_buf(),
        line: e.position().map(|p| p.line()),
        message: e.to_string(),
    };
    let headers = rdr.headers().map_err(parse_err)?.clone();
    let idx = header_columns(
        path,
        &headers,
        "load_id, arrival, net_mass_kg, kernel_moisture_pct[, notes]",
        &["load_id", "arrival", "net_mass_kg", "kernel_moisture_pct"],
    )?;
    let col = |name: &str| headers.iter().position(|h| h == name);
    let perr = |line: Option<u64>, message: String| InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    };
    let notes_col = col("notes");
    let mut loads = Vec::new();
    let mut ids = std::collections::BTreeMap::new();
    for rec in rdr.records() {
        let rec = rec.map_err(parse_err)?;
        let line = rec.position().map(|p| p.line()).unwrap_or(0);
        if rec.iter().any(|f| f.contains(['\n', '\r'])) {
            return Err(perr(Some(line), UNCLOSED_QUOTE.into()));
        }
        if rec.len() == 1 && rec[0].contains(';') {
            return Err(perr(
                Some(line),
                format!("row is separated by ';': {SEMICOLON_HINT}"),
            ));
        }
        if rec.len() > headers.len() {
            // Never cut silently: an extra field usually means a comma inside a value or a shifted row.
            let k = headers.len();
            return Err(perr(
                Some(line),
                format!(
                    "field {} ({:?}) has no column: the header names {k} ({})",
                    k + 1,
                    &rec[k],
                    headers.iter().collect::<Vec<_>>().join(", ")
                ),
            ));
        }
        let get = |k: usize, name: &str| {
            rec.get(idx[k])
                .ok_or_else(|| line_err(path, line, name, "", "is missing on this line"))
        };
        let id = get(0, "load_id")?.to_string();
        if id.is_empty() {
            return Err(line_err(path, line, "load_id", "", "must not be empty"));
        }
        if let Some(first) = ids.insert(id.clone(), line) {
            return Err(line_err(
                path,
                line,
                "load_id",
                &id,
                format!("is already used on line {first}"),
            ));
        }
        let t = get(1, "arrival")?;
        let arrival = DateTime::parse_from_rfc3339(t).map_err(|_| {
            line_err(
                path,
                line,
                "arrival",
                t,
                "must be an ISO 8601 time with offset, e.g. 2026-09-14T16:30:00-04:00",
            )
        })?;
        if let Some((a, b)) = range {
            if arrival < a || arrival >= b {
                return Err(line_err(
                    path,
                    line,
                    "arrival",
                    t,
                    format!(
                        "is outside the weather record ({} to {})",
                        a.to_rfc3339(),
                        b.to_rfc3339()
                    ),
                ));
            }
        }
        let m = get(2, "net_mass_kg")?;
        let mass_kg: f64 = m
            .parse()
            .map_err(|_| line_err(path, line, "net_mass_kg", m, "must be a number (kg)"))?;
        if !(mass_kg.is_finite() && mass_kg > 0.0) {
            return Err(line_err(
                path,
                line,
                "net_mass_kg",
                m,
                "must be a positive mass in kg",
            ));
        }
        let w = get(3, "kernel_moisture_pct")?;
        let moisture_pct: f64 = w.parse().map_err(|_| {
            line_err(
                path,
                line,
                "kernel_moisture_pct",
                w,
                "must be a number (% w.b.)",
            )
        })?;
        let (lo, hi) = MOISTURE_RANGE_PCT;
        if !(moisture_pct.is_finite() && (lo..=hi).contains(&moisture_pct)) {
            return Err(line_err(
                path,
                line,
                "kernel_moisture_pct",
                w,
                format!("must be between {lo} and {hi} % w.b."),
            ));
        }
        let notes = notes_col
            .and_then(|c| rec.get(c))
            .unwrap_or_default()
            .to_string();
        loads.push(Load {
            id,
            arrival,
            mass_kg,
            moisture_pct,
            notes,
        });
    }
    if loads.is_empty() {
        return Err(perr(
            None,
            "no loads: the file has a header but no rows".into(),
        ));
    }
    loads.sort_by_key(|l| l.arrival);
    Ok(loads)
}

/// Parameters of the arrivals generator. Defaults are our own, in the range the trade describes (common practice,
/// no source): a harvest peaking about 40 % into the season, arrivals centred on 16:00 (σ 3 h, kept to 07:00–23:00),
/// wagons of 4.5 t ± 1 t, kernels at 20 % ± 4 % w.b. (kept to 12–35 %), 30 % of a day's share on rain days and the
/// day after.
#[derive(Debug, Clone, PartialEq)]
pub struct ArrivalParams {
    /// Season start.
    pub start: DateTime<FixedOffset>,
    /// Season length, days.
    pub days: u32,
    /// Number of loads to draw.
    pub loads: usize,
    /// Harvest-curve shape α (> 0).
    pub progress_alpha: f64,
    /// Harvest-curve shape β (> 0).
    pub progress_beta: f64,
    /// Rain flag per season day (missing days count as dry).
    pub rain_days: Vec<bool>,
    /// Share of a normal day's deliveries on a rain day and the day after (0–1).
    pub rain_factor: f64,
    /// Mean arrival hour, local.
    pub hour_mean: f64,
    /// Spread of the arrival hour, h.
    pub hour_sd: f64,
    /// Earliest and latest arrival hour, local.
    pub hour_bounds: (f64, f64),
    /// Mean net mass, kg.
    pub mass_mean_kg: f64,
    /// Spread of the net mass, kg.
    pub mass_sd_kg: f64,
    /// Bounds of the net mass, kg.
    pub mass_bounds_kg: (f64, f64),
    /// Mean initial kernel moisture, % w.b.
    pub moisture_mean_pct: f64,
    /// Spread, % w.b.
    pub moisture_sd_pct: f64,
    /// Bounds, % w.b.
    pub moisture_bounds_pct: (f64, f64),
}

impl ArrivalParams {
    /// Defaults (see the type's doc) for a season of `days` from `start` with `loads` loads.
    pub fn new(start: DateTime<FixedOffset>, days: u32, loads: usize) -> Self {
        ArrivalParams {
            start,
            days,
            loads,
            progress_alpha: 2.2,
            progress_beta: 2.8,
            rain_days: Vec::new(),
            rain_factor: 0.3,
            hour_mean: 16.0,
            hour_sd: 3.0,
            hour_bounds: (7.0, 23.0),
            mass_mean_kg: 4200.0,
            mass_sd_kg: 800.0,
            // At most what a 4.3 m wagon holds at its usual depth (4.6 t, 1.41 m in 1.6 m walls; about 4 t is the
            // usual load, DOMAIN.md §12), so a generated load fits the bundled buying points' wagons.
            mass_bounds_kg: (1500.0, 4600.0),
            moisture_mean_pct: 20.0,
            moisture_sd_pct: 4.0,
            moisture_bounds_pct: (12.0, 35.0),
        }
    }

    /// Relative delivery weight of each season day (sums to 1).
    pub fn daily_share(&self) -> Vec<f64> {
        let n = self.days as usize;
        let rain = |d: usize| self.rain_days.get(d).copied().unwrap_or(false);
        let mut w: Vec<f64> = (0..n)
            .map(|d| {
                let x = (d as f64 + 0.5) / n as f64;
                let mut v =
                    x.powf(self.progress_alpha - 1.0) * (1.0 - x).powf(self.progress_beta - 1.0);
                if rain(d) || (d > 0 && rain(d - 1)) {
                    v *= self.rain_factor;
                }
                v
            })
            .collect();
        let s: f64 = w.iter().sum();
        if s > 0.0 {
            w.iter_mut().for_each(|v| *v /= s);
        }
        w
    }

    fn validate(&self) -> Result<(), InputError> {
        let bad = |name: &str, v: String, e: &str| Err(InputError::argument(name, v, e));
        if self.days == 0 {
            return bad("days", "0".into(), "must be at least 1");
        }
        if !(self.progress_alpha > 0.0 && self.progress_beta > 0.0) {
            return bad(
                "progress shape",
                format!("{}/{}", self.progress_alpha, self.progress_beta),
                "must be positive",
            );
        }
        if !(0.0..=1.0).contains(&self.rain_factor) {
            return bad(
                "rain_factor",
                self.rain_factor.to_string(),
                "must be between 0 and 1",
            );
        }
        for (name, (lo, hi), sd) in [
            ("hour", self.hour_bounds, self.hour_sd),
            ("mass", self.mass_bounds_kg, self.mass_sd_kg),
            ("moisture", self.moisture_bounds_pct, self.moisture_sd_pct),
        ] {
            if !(lo < hi && sd > 0.0 && lo.is_finite() && hi.is_finite()) {
                return bad(
                    name,
                    format!("{lo}..{hi} (sd {sd})"),
                    "needs lower < upper bound and a positive spread",
                );
            }
        }
        let (lo, hi) = self.moisture_bounds_pct;
        if lo < MOISTURE_RANGE_PCT.0 || hi > MOISTURE_RANGE_PCT.1 {
            return bad(
                "moisture bounds",
                format!("{lo}..{hi} %"),
                "must lie within 5–45 % w.b.",
            );
        }
        if self.mass_bounds_kg.0 <= 0.0 {
            return bad(
                "mass bounds",
                format!("{} kg", self.mass_bounds_kg.0),
                "must be positive",
            );
        }
        Ok(())
    }
}

fn truncated(rng: &mut ChaCha8Rng, mean: f64, sd: f64, (lo, hi): (f64, f64)) -> f64 {
    let n = Normal::new(mean, sd).expect("spread checked positive");
    for _ in 0..1000 {
        let v = n.sample(rng);
        if (lo..=hi).contains(&v) {
            return v;
        }
    }
    // Bounds far in a tail: fall back to a uniform draw inside them rather than loop for ever.
    lo + (hi - lo) * rng.random::<f64>()
}

/// Draw `params.loads` loads with `seed`; same seed → same loads. Sorted by arrival; ids `G0001`….
pub fn generate(params: &ArrivalParams, seed: u64) -> Result<Vec<Load>, InputError> {
    params.validate()?;
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let share = params.daily_share();
    let mut cum = Vec::with_capacity(share.len());
    let mut acc = 0.0;
    for s in &share {
        acc += s;
        cum.push(acc);
    }
    let mut loads = Vec::with_capacity(params.loads);
    for _ in 0..params.loads {
        let u: f64 = rng.random::<f64>() * acc;
        let day = cum.partition_point(|&c| c < u).min(share.len() - 1);
        let hour = truncated(
            &mut rng,
            params.hour_mean,
            params.hour_sd,
            params.hour_bounds,
        );
        let mass = truncated(
            &mut rng,
            params.mass_mean_kg,
            params.mass_sd_kg,
            params.mass_bounds_kg,
        );
        let moist = truncated(
            &mut rng,
            params.moisture_mean_pct,
            params.moisture_sd_pct,
            params.moisture_bounds_pct,
        );
        // Whole minutes keep the CSV round trip exact.
        let minutes = (hour * 60.0).round() as i64;
        let arrival =
            params.start + Duration::days(day as i64) + Duration::minutes(minutes.min(24 * 60 - 1));
        loads.push(Load {
            id: String::new(),
            arrival,
            mass_kg: (mass / 10.0).round() * 10.0,
            moisture_pct: (moist * 10.0).round() / 10.0,
            notes: String::new(),
        });
    }
    loads.sort_by_key(|l| l.arrival);
    for (i, l) in loads.iter_mut().enumerate() {
        l.id = format!("G{:04}", i + 1);
    }
    Ok(loads)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::season::arrivals_csv;

    fn start() -> DateTime<FixedOffset> {
        DateTime::parse_from_rfc3339("2026-09-08T00:00:00-04:00").unwrap()
    }

    #[test]
    fn generator_is_reproducible_and_respects_bounds() {
        let p = ArrivalParams::new(start(), 70, 500);
        let a = generate(&p, 7).unwrap();
        let b = generate(&p, 7).unwrap();
        assert_eq!(a, b);
        assert_ne!(a, generate(&p, 8).unwrap());
        let end = start() + Duration::days(70);
        for l in &a {
            assert!(l.arrival >= start() && l.arrival < end);
            assert!((1500.0..=6000.0).contains(&l.mass_kg));
            assert!((12.0..=35.0).contains(&l.moisture_pct));
        }
    }

    #[test]
    fn rain_days_thin_out_deliveries() {
        let mut p = ArrivalParams::new(start(), 30, 3000);
        let dry = generate(&p, 1).unwrap();
        p.rain_days = vec![false; 30];
        p.rain_days[12] = true;
        let wet = generate(&p, 1).unwrap();
        let on_day = |ls: &[Load], d: i64| {
            ls.iter()
                .filter(|l| (l.arrival - start()).num_days() == d)
                .count()
        };
        // Day 12 and 13 get 30 % of their dry-weather share; with 3000 loads the drop is far beyond noise.
        assert!(on_day(&wet, 12) * 2 < on_day(&dry, 12));
        assert!(on_day(&wet, 13) * 2 < on_day(&dry, 13));
    }

    #[test]
    fn afternoon_and_evening_dominate() {
        let p = ArrivalParams::new(start(), 40, 2000);
        let loads = generate(&p, 3).unwrap();
        use chrono::Timelike;
        let late = loads.iter().filter(|l| l.arrival.hour() >= 12).count();
        assert!(late as f64 > 0.8 * loads.len() as f64, "{late}");
    }

    #[test]
    fn csv_round_trip() {
        let p = ArrivalParams::new(start(), 10, 50);
        let loads = generate(&p, 11).unwrap();
        let text = arrivals_csv(&loads);
        let back = parse_arrivals_csv(Path::new("a.csv"), text.as_bytes(), None).unwrap();
        assert_eq!(back, loads);
    }
}
