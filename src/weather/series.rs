//! The hourly weather series: a regular hourly grid of columns (`Vec<f64>`) starting at a stated local time with the
//! site's fixed UTC offset, so a lookup is O(1). Readers hand their checked rows to `Assembler`, which enforces the
//! time grid (no duplicate, out-of-order or off-grid hours) and fills short gaps linearly, counting every filled hour.
//!
//! Interpolation between hours (for sub-hourly steps) is linear in dry bulb, humidity ratio and pressure: mixing
//! two air samples conserves water, so humidity ratio is the quantity to interpolate, and RH is derived from it
//! (linear-within-the-hour forcing is common practice, no source; see DOMAIN.md §6 "Weather forcing").
//! Psychrometrics: `props::psychro` (ASHRAE Handbook—Fundamentals 2017, ch. 1).
use std::path::{Path, PathBuf};

use chrono::{DateTime, Duration, FixedOffset, NaiveDate, TimeZone};

use crate::error::InputError;
use crate::props::psychro::{self, AirState};

/// Dew point may exceed dry bulb by at most this much (K, instrument rounding) before a row is rejected; within it
/// the RH derived from the dew point is clamped to 100 %.
pub const DEW_POINT_TOLERANCE_K: f64 = 0.5;
/// Accepted dry-bulb range, °C.
pub const T_RANGE_C: (f64, f64) = (-50.0, 60.0);
/// Accepted barometric pressure range, Pa (50–110 kPa: sea level to about 5.5 km).
pub const P_RANGE_PA: (f64, f64) = (50_000.0, 110_000.0);
/// Accepted hourly rain, mm.
pub const RAIN_RANGE_MM: (f64, f64) = (0.0, 500.0);
/// Accepted wind speed, m/s.
pub const WIND_RANGE_M_S: (f64, f64) = (0.0, 75.0);

/// The longest gap a reader may be asked to fill, h (one week).
pub const MAX_GAP_LIMIT_H: usize = 168;

/// Where the weather was measured (or imagined).
#[derive(Debug, Clone, PartialEq)]
pub struct Site {
    /// Free-text name.
    pub name: String,
    /// The site's standard-time UTC offset; every timestamp of the series is expressed in it.
    pub utc_offset: FixedOffset,
    /// Elevation above sea level, m, when the file says.
    pub elevation_m: Option<f64>,
}

/// One instant of weather, interpolated if it falls between hours.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AirSample {
    /// Dry-bulb temperature, °C.
    pub t_c: f64,
    /// Relative humidity, decimal (0–1).
    pub rh: f64,
    /// Barometric pressure, Pa.
    pub p_pa: f64,
    /// The same air as a psychrometric state.
    pub air: AirState,
}

/// Where an instant falls in a series (see `WeatherSeries::interpolated`).
enum Instant {
    /// On hour `i` (or past the last).
    Hour(usize),
    /// Between two hours, with the air interpolated there.
    Between(AirState),
}

/// A time outside the series was asked for.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("time {time} is outside the weather series ({start} to {end})")]
pub struct OutsideSeries {
    /// The time asked for.
    pub time: DateTime<FixedOffset>,
    /// First hour of the series.
    pub start: DateTime<FixedOffset>,
    /// Last hour of the series.
    pub end: DateTime<FixedOffset>,
}

/// Hours filled by linear interpolation, per quantity (never silent: summaries print these).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct FillCounts {
    /// Whole hours absent from the file (no row at all).
    pub missing_rows: usize,
    /// Dry-bulb values filled.
    pub t: usize,
    /// Humidity values filled.
    pub rh: usize,
    /// Pressure values filled.
    pub p: usize,
    /// Rain values filled.
    pub rain: usize,
    /// Wind values filled.
    pub wind: usize,
}

/// A value the reader supplied or recomputed instead of reading it as written: an hour filled by interpolation, a
/// humidity recomputed from the dew point, a pressure assumed from the elevation. Readers return these with the
/// series ([`WeatherSeries::warnings`]) so that every changed hour can be located in the file.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct ReadWarning {
    /// The file.
    pub path: PathBuf,
    /// 1-based line the value belongs to (for a whole absent hour: the line after the gap).
    pub line: u64,
    /// The column or field, as the file names it.
    pub field: String,
    /// What was done.
    pub message: String,
}

impl std::fmt::Display for ReadWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{}:{}: field {:?}: {}",
            self.path.display(),
            self.line,
            self.field,
            self.message
        )
    }
}

/// An hourly weather series on a regular grid.
#[derive(Debug, Clone, PartialEq)]
pub struct WeatherSeries {
    site: Site,
    start: DateTime<FixedOffset>,
    t_c: Vec<f64>,
    rh: Vec<f64>,
    w: Vec<f64>,
    p_pa: Vec<f64>,
    rain_mm: Option<Vec<f64>>,
    wind_m_s: Option<Vec<f64>>,
    filled: Vec<bool>,
    fill_counts: FillCounts,
    pressure_assumed: bool,
    warnings: Vec<ReadWarning>,
}

impl WeatherSeries {
    /// Build from complete columns (no missing values). `rh` is decimal. Checks lengths and ranges; the time of
    /// hour `i` is `start + i h`, expressed in the site's offset.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        site: Site,
        start: DateTime<FixedOffset>,
        t_c: Vec<f64>,
        rh: Vec<f64>,
        p_pa: Vec<f64>,
        rain_mm: Option<Vec<f64>>,
        wind_m_s: Option<Vec<f64>>,
    ) -> Result<Self, InputError> {
        let n = t_c.len();
        let bad = |name: &str, value: String, expected: &str| InputError::Argument {
            name: name.to_string(),
            value,
            expected: expected.to_string(),
        };
        if n == 0 {
            return Err(bad(
                "weather series",
                "0 hours".into(),
                "needs at least one hour",
            ));
        }
        for (name, len) in [
            ("rh", rh.len()),
            ("p_pa", p_pa.len()),
            ("rain_mm", rain_mm.as_ref().map_or(n, Vec::len)),
            ("wind_m_s", wind_m_s.as_ref().map_or(n, Vec::len)),
        ] {
            if len != n {
                return Err(bad(
                    name,
                    format!("{len} values"),
                    &format!("must have {n}, as t_c"),
                ));
            }
        }
        let in_range = |x: f64, (lo, hi): (f64, f64)| x.is_finite() && x >= lo && x <= hi;
        for i in 0..n {
            if !in_range(t_c[i], T_RANGE_C) {
                return Err(bad(
                    "t_c",
                    format!("{} °C at hour {i}", t_c[i]),
                    "must be between -50 and 60 °C",
                ));
            }
            if !in_range(rh[i], (0.0, 1.0)) {
                return Err(bad(
                    "rh",
                    format!("{} at hour {i}", rh[i]),
                    "must be between 0 and 1",
                ));
            }
            if !in_range(p_pa[i], P_RANGE_PA) {
                return Err(bad(
                    "p_pa",
                    format!("{} Pa at hour {i}", p_pa[i]),
                    "must be between 50000 and 110000 Pa",
                ));
            }
        }
        let start = start.with_timezone(&site.utc_offset);
        let w = (0..n)
            .map(|i| psychro::humidity_ratio_from_rh(t_c[i], rh[i], p_pa[i]))
            .collect();
        Ok(WeatherSeries {
            site,
            start,
            t_c,
            rh,
            w,
            p_pa,
            rain_mm,
            wind_m_s,
            filled: vec![false; n],
            fill_counts: FillCounts::default(),
            pressure_assumed: false,
            warnings: Vec::new(),
        })
    }

    /// The site.
    pub fn site(&self) -> &Site {
        &self.site
    }
    /// Number of hours.
    pub fn len(&self) -> usize {
        self.t_c.len()
    }
    /// True if the series has no hours (never, for a constructed series).
    pub fn is_empty(&self) -> bool {
        self.t_c.is_empty()
    }
    /// Time of the first hour, in the site's offset.
    pub fn start(&self) -> DateTime<FixedOffset> {
        self.start
    }
    /// Time of the last hour.
    pub fn end(&self) -> DateTime<FixedOffset> {
        self.time(self.len() - 1)
    }
    /// Time of hour `i`.
    pub fn time(&self, i: usize) -> DateTime<FixedOffset> {
        self.start + Duration::hours(i as i64)
    }
    /// Hourly dry bulb, °C.
    pub fn t_c(&self) -> &[f64] {
        &self.t_c
    }
    /// Hourly relative humidity, decimal.
    pub fn rh(&self) -> &[f64] {
        &self.rh
    }
    /// Hourly humidity ratio, kg/kg dry air.
    pub fn w(&self) -> &[f64] {
        &self.w
    }
    /// Hourly barometric pressure, Pa.
    pub fn p_pa(&self) -> &[f64] {
        &self.p_pa
    }
    /// Hourly rain, mm, if the file had it.
    pub fn rain_mm(&self) -> Option<&[f64]> {
        self.rain_mm.as_deref()
    }
    /// Hourly wind speed, m/s, if the file had it.
    pub fn wind_m_s(&self) -> Option<&[f64]> {
        self.wind_m_s.as_deref()
    }
    /// Per hour: was any value of this hour filled by interpolation?
    pub fn filled(&self) -> &[bool] {
        &self.filled
    }
    /// Counts of filled values.
    pub fn fill_counts(&self) -> &FillCounts {
        &self.fill_counts
    }
    /// Hours with at least one filled value.
    pub fn filled_hours(&self) -> usize {
        self.filled.iter().filter(|f| **f).count()
    }
    /// True if the file had no pressure and the standard atmosphere at the site's elevation was used.
    pub fn pressure_assumed(&self) -> bool {
        self.pressure_assumed
    }
    /// Every value the reader filled or recomputed, with its line and field, in file order (empty for a series
    /// built in memory). A slice keeps the whole file's list.
    pub fn warnings(&self) -> &[ReadWarning] {
        &self.warnings
    }

    /// The weather at hour `i` (no interpolation).
    pub fn hour(&self, i: usize) -> AirSample {
        let air = AirState {
            t_c: self.t_c[i],
            w: self.w[i],
            p_pa: self.p_pa[i],
        };
        AirSample {
            t_c: self.t_c[i],
            rh: self.rh[i],
            p_pa: self.p_pa[i],
            air,
        }
    }

    /// Fractional hour index of `time`, if it lies within the series.
    fn index_of(&self, time: DateTime<FixedOffset>) -> Result<f64, OutsideSeries> {
        let h = (time - self.start).num_milliseconds() as f64 / 3.6e6;
        if h < 0.0 || h > (self.len() - 1) as f64 {
            return Err(OutsideSeries {
                time,
                start: self.start,
                end: self.end(),
            });
        }
        Ok(h)
    }

    /// The weather at any instant within the series: linear in dry bulb, humidity ratio and pressure between the
    /// neighbouring hours; RH derived from them (capped at 1). O(1).
    pub fn at(&self, time: DateTime<FixedOffset>) -> Result<AirSample, OutsideSeries> {
        match self.interpolated(time)? {
            Instant::Hour(i) => Ok(self.hour(i)),
            Instant::Between(air) => Ok(AirSample {
                t_c: air.t_c,
                rh: psychro::rh_from_humidity_ratio(air.t_c, air.w, air.p_pa).clamp(0.0, 1.0),
                p_pa: air.p_pa,
                air,
            }),
        }
    }

    /// The air of [`WeatherSeries::at`] alone, without the RH it derives (a drying run reads the air every step).
    pub fn air_at(&self, time: DateTime<FixedOffset>) -> Result<AirState, OutsideSeries> {
        Ok(match self.interpolated(time)? {
            Instant::Hour(i) => self.hour(i).air,
            Instant::Between(air) => air,
        })
    }

    /// Where `time` falls: on (within 1e-12 h of) an hour or at the end, or between two hours with the air there.
    fn interpolated(&self, time: DateTime<FixedOffset>) -> Result<Instant, OutsideSeries> {
        let h = self.index_of(time)?;
        let i = (h.floor() as usize).min(self.len() - 1);
        let f = h - i as f64;
        if f <= 1e-12 || i + 1 >= self.len() {
            return Ok(Instant::Hour(i));
        }
        let lerp = |v: &[f64]| v[i] + f * (v[i + 1] - v[i]);
        let (t_c, p_pa) = (lerp(&self.t_c), lerp(&self.p_pa));
        // Saturation humidity is convex in temperature, so a straight line between two saturated (or nearly
        // saturated) hours passes above it: cap the humidity ratio at saturation, or foggy hours would give air
        // at 100.01 % RH.
        let w = lerp(&self.w).min(psychro::saturation_humidity_ratio(t_c, p_pa));
        Ok(Instant::Between(AirState { t_c, w, p_pa }))
    }

    /// The hours `start <= t < start + duration`, as a new series. `start` need not fall on the hour.
    pub fn slice(
        &self,
        start: DateTime<FixedOffset>,
        duration: Duration,
    ) -> Result<WeatherSeries, OutsideSeries> {
        let outside = |time| OutsideSeries {
            time,
            start: self.start,
            end: self.end(),
        };
        let h0 = (start - self.start).num_milliseconds() as f64 / 3.6e6;
        let h1 = (start + duration - self.start).num_milliseconds() as f64 / 3.6e6;
        let i0 = h0.ceil().max(0.0) as usize;
        // Exclusive end: the last grid point strictly before start + duration.
        let i1 = (h1.ceil() as usize).min(self.len());
        if h0 < 0.0 || h0 > (self.len() - 1) as f64 {
            return Err(outside(start));
        }
        if i1 <= i0 {
            return Err(outside(start + duration));
        }
        let cut = |v: &Vec<f64>| v[i0..i1].to_vec();
        let filled = self.filled[i0..i1].to_vec();
        Ok(WeatherSeries {
            site: self.site.clone(),
            start: self.time(i0),
            t_c: cut(&self.t_c),
            rh: cut(&self.rh),
            w: cut(&self.w),
            p_pa: cut(&self.p_pa),
            rain_mm: self.rain_mm.as_ref().map(cut),
            wind_m_s: self.wind_m_s.as_ref().map(cut),
            fill_counts: FillCounts {
                missing_rows: 0,
                ..self.fill_counts.clone()
            },
            filled,
            pressure_assumed: self.pressure_assumed,
            warnings: self.warnings.clone(),
        })
    }
}

/// Settings shared by all readers.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadOptions {
    /// Longest run of missing hours (per quantity) filled by linear interpolation; longer runs are an error.
    pub max_gap_h: usize,
    /// UTC offset for CSV timestamps that carry none (overrides a `# utc_offset=` line). Ignored by EPW/TMY3.
    pub utc_offset: Option<FixedOffset>,
    /// For typical-year files (EPW, TMY3) whose months come from different years: put every row in this year
    /// (the final 24:00 of 31 December falls on 1 January of the next). `None` keeps the file's years (EPW only).
    pub year: Option<i32>,
}

impl Default for ReadOptions {
    /// 3-hour gaps filled, no offset override, file years kept.
    fn default() -> Self {
        ReadOptions {
            max_gap_h: 3,
            utc_offset: None,
            year: None,
        }
    }
}

/// One row as parsed and range-checked by a reader; missing values are NaN.
#[derive(Debug, Clone, Copy)]
pub(crate) struct RawHour {
    pub line: u64,
    pub time: DateTime<FixedOffset>,
    pub t_c: f64,
    /// Decimal.
    pub rh: f64,
    pub p_pa: f64,
    pub rain_mm: f64,
    pub wind_m_s: f64,
    pub filled: bool,
}

/// Field names used in gap messages, per reader.
#[derive(Clone, Copy)]
pub(crate) struct FieldNames {
    pub time: &'static str,
    pub t: &'static str,
    pub rh: &'static str,
    pub p: &'static str,
    pub rain: &'static str,
    pub wind: &'static str,
}

/// Collects checked rows, enforces the hourly grid and fills short gaps.
pub(crate) struct Assembler<'a> {
    pub path: &'a Path,
    pub names: FieldNames,
    pub rows: Vec<RawHour>,
    pub has_rain: bool,
    pub has_wind: bool,
    /// Pressure to use when the file has none at all, and whether that was assumed.
    pub default_p_pa: Option<f64>,
    /// Values the reader recomputed while parsing rows; `finish` adds the filled ones.
    pub warnings: Vec<ReadWarning>,
}

impl Assembler<'_> {
    fn warn(&mut self, line: u64, field: &str, message: String) {
        self.warnings.push(ReadWarning {
            path: self.path.to_path_buf(),
            line,
            field: field.to_string(),
            message,
        });
    }

    fn err(&self, line: u64, field: &str, value: String, expected: String) -> InputError {
        InputError::Field {
            path: self.path.to_path_buf(),
            line,
            field: field.to_string(),
            value,
            expected,
        }
    }

    /// Check the grid, insert rows for absent hours, fill gaps of at most `max_gap_h`; every filled value (and
    /// every whole absent hour) becomes a [`ReadWarning`] naming its line and field.
    pub fn finish(mut self, site: Site, max_gap_h: usize) -> Result<WeatherSeries, InputError> {
        let Some(first) = self.rows.first() else {
            return Err(InputError::Parse {
                path: self.path.to_path_buf(),
                line: None,
                message: "no data rows".into(),
            });
        };
        let start = first.time.with_timezone(&site.utc_offset);
        if max_gap_h > MAX_GAP_LIMIT_H {
            return Err(InputError::argument(
                "--max-gap-h",
                format!("{max_gap_h} h"),
                &format!("must be at most {MAX_GAP_LIMIT_H} h"),
            ));
        }
        let fmt = |t: DateTime<FixedOffset>| t.format("%Y-%m-%dT%H:%M%:z").to_string();
        // Place rows on the grid.
        let mut grid: Vec<RawHour> = Vec::with_capacity(self.rows.len());
        let mut lines: Vec<u64> = Vec::with_capacity(self.rows.len());
        let mut absent: Vec<bool> = Vec::with_capacity(self.rows.len());
        let mut notes: Vec<(u64, &str, String)> = Vec::new();
        for (k, r) in self.rows.iter().enumerate() {
            let ms = (r.time - start).num_milliseconds();
            if ms % 3_600_000 != 0 {
                return Err(self.err(
                    r.line,
                    self.names.time,
                    fmt(r.time),
                    format!("is not on the hourly grid that starts at {}", fmt(start)),
                ));
            }
            let idx = ms / 3_600_000;
            if k > 0 {
                let prev = &self.rows[k - 1];
                let expected_idx = grid.len() as i64;
                if idx == expected_idx - 1 {
                    return Err(self.err(
                        r.line,
                        self.names.time,
                        fmt(r.time),
                        format!("is a duplicate hour (same as line {})", prev.line),
                    ));
                }
                if idx < expected_idx {
                    return Err(self.err(
                        r.line,
                        self.names.time,
                        fmt(r.time),
                        format!(
                            "is out of order (comes after {} on line {})",
                            fmt(prev.time),
                            prev.line
                        ),
                    ));
                }
                let gap = (idx - expected_idx) as usize;
                if gap > max_gap_h {
                    return Err(self.err(
                        r.line,
                        self.names.time,
                        fmt(r.time),
                        format!(
                            "follows {} (line {}): {gap} missing hours, more than the {max_gap_h} h that may be \
                             filled (max gap setting)",
                            fmt(prev.time),
                            prev.line
                        ),
                    ));
                }
                for g in 0..gap {
                    let time = start + Duration::hours(expected_idx + g as i64);
                    notes.push((
                        r.line,
                        self.names.time,
                        format!(
                            "hour {} is absent: filled linearly between line {} and line {}",
                            fmt(time),
                            prev.line,
                            r.line
                        ),
                    ));
                    grid.push(RawHour {
                        line: r.line,
                        time,
                        t_c: f64::NAN,
                        rh: f64::NAN,
                        p_pa: f64::NAN,
                        rain_mm: f64::NAN,
                        wind_m_s: f64::NAN,
                        filled: true,
                    });
                    lines.push(r.line);
                    absent.push(true);
                }
            }
            if r.filled {
                notes.push((
                    r.line,
                    "filled",
                    "flagged as filled in the file (filled = 1)".into(),
                ));
            }
            grid.push(*r);
            lines.push(r.line);
            absent.push(false);
        }
        for (line, field, message) in notes {
            self.warn(line, field, message);
        }
        let missing_rows = absent.iter().filter(|a| **a).count();
        let n = grid.len();
        let mut filled: Vec<bool> = grid.iter().map(|r| r.filled).collect();
        let take = |f: fn(&RawHour) -> f64| grid.iter().map(f).collect::<Vec<f64>>();
        let mut t_c = take(|r| r.t_c);
        let mut rh = take(|r| r.rh);
        let mut p_pa = take(|r| r.p_pa);
        let mut pressure_assumed = false;
        if let Some(p0) = self.default_p_pa {
            if p_pa.iter().all(|p| p.is_nan()) {
                p_pa.iter_mut().for_each(|p| *p = p0);
                pressure_assumed = true;
            }
        }
        let mut counts = FillCounts {
            missing_rows,
            ..FillCounts::default()
        };
        let grid_lines = GridLines {
            lines: &lines,
            absent: &absent,
        };
        let names = self.names;
        counts.t = self.fill(&mut t_c, &grid_lines, names.t, max_gap_h, &mut filled)?;
        counts.rh = self.fill(&mut rh, &grid_lines, names.rh, max_gap_h, &mut filled)?;
        counts.p = self.fill(&mut p_pa, &grid_lines, names.p, max_gap_h, &mut filled)?;
        let rain_mm = if self.has_rain {
            let mut v = take(|r| r.rain_mm);
            counts.rain = self.fill(&mut v, &grid_lines, names.rain, max_gap_h, &mut filled)?;
            Some(v)
        } else {
            None
        };
        let wind_m_s = if self.has_wind {
            let mut v = take(|r| r.wind_m_s);
            counts.wind = self.fill(&mut v, &grid_lines, names.wind, max_gap_h, &mut filled)?;
            Some(v)
        } else {
            None
        };
        let w = (0..n)
            .map(|i| psychro::humidity_ratio_from_rh(t_c[i], rh[i], p_pa[i]))
            .collect();
        // File order; stable, so the notes of one line keep the order they were made in.
        self.warnings.sort_by_key(|w| w.line);
        Ok(WeatherSeries {
            site,
            start,
            t_c,
            rh,
            w,
            p_pa,
            rain_mm,
            wind_m_s,
            filled,
            fill_counts: counts,
            pressure_assumed,
            warnings: self.warnings,
        })
    }

    /// Fill NaN runs of at most `max_gap_h` linearly between their neighbours; return how many were filled. Each
    /// filled value of a row present in the file is a warning (a wholly absent hour already has one).
    fn fill(
        &mut self,
        v: &mut [f64],
        at: &GridLines,
        field: &str,
        max_gap_h: usize,
        filled: &mut [bool],
    ) -> Result<usize, InputError> {
        let n = v.len();
        let mut count = 0;
        let mut i = 0;
        while i < n {
            if !v[i].is_nan() {
                i += 1;
                continue;
            }
            let j = (i..n).find(|&k| !v[k].is_nan()).unwrap_or(n);
            let run = j - i;
            if i == 0 || j == n {
                let where_ = if i == 0 { "first" } else { "last" };
                return Err(self.err(
                    at.lines[i],
                    field,
                    "missing".into(),
                    format!(
                        "must be present in the {where_} hour: a gap at the {} of the file cannot be interpolated",
                        if i == 0 { "start" } else { "end" }
                    ),
                ));
            }
            if run > max_gap_h {
                return Err(self.err(
                    at.lines[i],
                    field,
                    "missing".into(),
                    format!(
                        "starts a gap of {run} missing hours, more than the {max_gap_h} h that may be filled \
                         (max gap setting)"
                    ),
                ));
            }
            let (a, b) = (v[i - 1], v[j]);
            for k in i..j {
                let f = (k - i + 1) as f64 / (run + 1) as f64;
                v[k] = a + f * (b - a);
                filled[k] = true;
                if !at.absent[k] {
                    let message = format!(
                        "missing: filled linearly between line {} and line {}",
                        at.lines[i - 1],
                        at.lines[j]
                    );
                    self.warn(at.lines[k], field, message);
                }
            }
            count += run;
            i = j;
        }
        Ok(count)
    }
}

/// Per grid hour: the file line it came from (for an absent hour, the line after the gap) and whether the whole
/// hour was absent.
struct GridLines<'a> {
    lines: &'a [u64],
    absent: &'a [bool],
}

/// One row's humidity fields as read (NaN = missing).
pub(crate) struct Humidity<'a> {
    /// Dry bulb, °C.
    pub t_c: f64,
    /// Relative humidity, %.
    pub rh_pct: f64,
    /// Dew point, °C.
    pub dew_c: f64,
    /// The RH field's name when the format has one: a dew point standing in for a missing RH is then a warning.
    pub rh_field: Option<&'a str>,
    /// The dew point's field name and text as found.
    pub dew_field: &'a str,
    pub dew_text: &'a str,
}

/// Relative humidity (decimal) from an RH and/or a dew point, both optional (NaN = missing), after checking the
/// dew point against the dry bulb. RH is preferred when both are given; a dew point above the dry bulb by up to
/// [`DEW_POINT_TOLERANCE_K`] gives RH = 100 %; more is an error. An RH recomputed from the dew point (where the
/// format has an RH field) and an RH set to 100 % are pushed to `warnings`.
pub(crate) fn humidity_from(
    path: &Path,
    line: u64,
    h: Humidity<'_>,
    warnings: &mut Vec<ReadWarning>,
) -> Result<f64, InputError> {
    let Humidity {
        t_c,
        rh_pct,
        dew_c,
        rh_field,
        dew_field,
        dew_text,
    } = h;
    if !dew_c.is_nan() && !t_c.is_nan() && dew_c > t_c + DEW_POINT_TOLERANCE_K {
        return Err(InputError::Field {
            path: path.to_path_buf(),
            line,
            field: dew_field.to_string(),
            value: dew_text.to_string(),
            expected: format!(
                "is above the dry bulb ({t_c:.1} °C) by more than {DEW_POINT_TOLERANCE_K} K"
            ),
        });
    }
    if !rh_pct.is_nan() {
        return Ok(rh_pct / 100.0);
    }
    if dew_c.is_nan() || t_c.is_nan() {
        return Ok(f64::NAN);
    }
    let rh =
        (psychro::saturation_pressure_pa(dew_c) / psychro::saturation_pressure_pa(t_c)).min(1.0);
    let mut warn = |field: &str, message: String| {
        warnings.push(ReadWarning {
            path: path.to_path_buf(),
            line,
            field: field.to_string(),
            message,
        })
    };
    if let Some(rh_field) = rh_field {
        warn(
            rh_field,
            format!(
                "missing: recomputed as {:.1} % from the dew point ({}) and the dry bulb",
                100.0 * rh,
                dew_text.trim()
            ),
        );
    }
    if dew_c > t_c {
        warn(
            dew_field,
            format!(
                "{:?} is above the dry bulb ({t_c:.1} °C) by at most {DEW_POINT_TOLERANCE_K} K (rounding): RH set \
                 to 100 %",
                dew_text.trim()
            ),
        );
    }
    Ok(rh)
}

pub(crate) use crate::input::{SEMICOLON_HINT, TAB_HINT, UNCLOSED_QUOTE};

/// The checks every comma-separated weather reader makes on a data row before reading its fields: `Ok(false)` for
/// a blank row (skipped); an error for a field holding a line end (an unclosed quote) or a row separated by ';'.
pub(crate) fn row_shape(
    path: &Path,
    line: u64,
    record: &csv::StringRecord,
) -> Result<bool, InputError> {
    let perr = |message: String| InputError::Parse {
        path: path.to_path_buf(),
        line: Some(line),
        message,
    };
    if record.len() == 1 && record[0].trim().is_empty() {
        return Ok(false);
    }
    if record.iter().any(|f| f.contains(['\n', '\r'])) {
        return Err(perr(UNCLOSED_QUOTE.into()));
    }
    if record.len() == 1 && record[0].contains(';') {
        return Err(perr(format!("row is separated by ';': {SEMICOLON_HINT}")));
    }
    Ok(true)
}

/// A dry-bulb median above this, °C, is taken for °F under a °C label: no weather station's monthly mean reaches
/// 40 °C (from memory), so a whole record's median of 45 °C is not weather in °C, while 45–60 °F is ordinary.
pub const MEDIAN_C_MAX: f64 = 45.0;
/// A `temp_f` column whose median is below this, °F (freezing), while every value lies within [`T_RANGE_C`], is
/// taken for °C under a °F label: ordinary weather in °C (say 5–30) read as °F is −15 to −1 °C, a record no drying
/// season is run on; a genuine record below freezing is to be given in °C (`temp_c`).
pub const MEDIAN_F_MIN: f64 = 32.0;

/// Refuse a temperature column whose values do not fit its declared unit (see [`MEDIAN_C_MAX`], [`MEDIAN_F_MIN`]).
/// `values_c` are the column's present values in °C; `declared_f` says the column was in °F; `line` is where the
/// unit is declared (a header line) or, for formats fixed in °C, the first data row.
pub(crate) fn check_temperature_unit(
    path: &Path,
    line: u64,
    field: &str,
    values_c: &[f64],
    declared_f: bool,
) -> Result<(), InputError> {
    let mut v: Vec<f64> = values_c.iter().copied().filter(|x| !x.is_nan()).collect();
    if v.is_empty() {
        return Ok(());
    }
    v.sort_by(f64::total_cmp);
    let median_c = if v.len() % 2 == 1 {
        v[v.len() / 2]
    } else {
        0.5 * (v[v.len() / 2 - 1] + v[v.len() / 2])
    };
    let err = |value: String, expected: String| InputError::Field {
        path: path.to_path_buf(),
        line,
        field: field.to_string(),
        value,
        expected,
    };
    if declared_f {
        let to_f = crate::units::c_to_f;
        let (lo, hi) = T_RANGE_C;
        let fits_c = to_f(v[0]) >= lo && to_f(v[v.len() - 1]) <= hi;
        if to_f(median_c) < MEDIAN_F_MIN && fits_c {
            return Err(err(
                format!("median {:.1} °F", to_f(median_c)),
                format!(
                    "is below freezing ({median_c:.1} °C) with every value within {lo}…{hi}: these look like °C \
                     under a °F label; rename the column temp_c (a record truly below freezing: convert it to °C)"
                ),
            ));
        }
    } else if median_c > MEDIAN_C_MAX {
        let fix = if field == "temp_c" {
            "name the column temp_f"
        } else {
            "this format holds °C"
        };
        return Err(err(
            format!("median {median_c:.1} °C"),
            format!(
                "is above {MEDIAN_C_MAX} °C, hotter than any station's monthly mean: these look like °F, not °C \
                 ({fix})"
            ),
        ));
    }
    Ok(())
}

/// Parse a number, checking its range.
pub(crate) fn number(
    path: &Path,
    line: u64,
    field: &str,
    text: &str,
    range: (f64, f64),
    unit: &str,
) -> Result<f64, InputError> {
    let x = parse_finite(path, line, field, text)?;
    check_in(path, line, field, text, x, range, unit)
}

/// Parse a finite number (no range check).
pub(crate) fn parse_finite(
    path: &Path,
    line: u64,
    field: &str,
    text: &str,
) -> Result<f64, InputError> {
    let err = |expected: &str| InputError::Field {
        path: path.to_path_buf(),
        line,
        field: field.to_string(),
        value: text.to_string(),
        expected: expected.to_string(),
    };
    let x: f64 = text.trim().parse().map_err(|_| err("is not a number"))?;
    if !x.is_finite() {
        return Err(err("is not a finite number"));
    }
    Ok(x)
}

/// Check a parsed number against its range.
pub(crate) fn check_in(
    path: &Path,
    line: u64,
    field: &str,
    text: &str,
    x: f64,
    range: (f64, f64),
    unit: &str,
) -> Result<f64, InputError> {
    if x < range.0 || x > range.1 {
        let unit = if unit.is_empty() {
            String::new()
        } else {
            format!(" {unit}")
        };
        return Err(InputError::Field {
            path: path.to_path_buf(),
            line,
            field: field.to_string(),
            value: text.to_string(),
            expected: format!("must be between {} and {}{unit}", range.0, range.1),
        });
    }
    Ok(x)
}

/// A UTC offset from hours (EPW and TMY3 give e.g. `-5.0` or `5.5`).
pub(crate) fn offset_from_hours(
    path: &Path,
    line: u64,
    field: &str,
    text: &str,
) -> Result<FixedOffset, InputError> {
    let h = number(path, line, field, text, (-12.0, 14.0), "h")?;
    FixedOffset::east_opt((h * 3600.0).round() as i32).ok_or_else(|| InputError::Field {
        path: path.to_path_buf(),
        line,
        field: field.to_string(),
        value: text.to_string(),
        expected: "is not a valid UTC offset".into(),
    })
}

/// Local time from a date and an hour-ending hour 0–24 (24 = midnight at the end of the day).
pub(crate) fn local_time(
    offset: FixedOffset,
    date: NaiveDate,
    hour: u32,
    minute: u32,
) -> Option<DateTime<FixedOffset>> {
    let t = date.and_hms_opt(0, 0, 0)?
        + Duration::hours(hour as i64)
        + Duration::minutes(minute as i64);
    offset.from_local_datetime(&t).single()
}

/// Refuse a leap year as the year for a typical-year file (they have no 29 February, so a day would be missing).
pub(crate) fn check_typical_year(path: &Path, year: i32) -> Result<(), InputError> {
    if !(1000..=9998).contains(&year) {
        return Err(InputError::argument(
            "--year",
            year,
            "must be between 1000 and 9998",
        ));
    }
    if NaiveDate::from_ymd_opt(year, 2, 29).is_some() {
        return Err(InputError::Parse {
            path: path.to_path_buf(),
            line: None,
            message: format!(
                "cannot place a typical year in {year}: it is a leap year and typical-year files have no \
                 29 February; choose a non-leap year"
            ),
        });
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn site() -> Site {
        Site {
            name: "test".into(),
            utc_offset: FixedOffset::west_opt(5 * 3600).unwrap(),
            elevation_m: None,
        }
    }

    fn series() -> WeatherSeries {
        let start = site()
            .utc_offset
            .with_ymd_and_hms(2026, 9, 1, 0, 0, 0)
            .unwrap();
        WeatherSeries::new(
            site(),
            start,
            vec![20.0, 22.0, 26.0],
            vec![0.9, 0.7, 0.5],
            vec![101_000.0; 3],
            None,
            None,
        )
        .unwrap()
    }

    #[test]
    fn at_on_the_hour_returns_the_stored_values() {
        let s = series();
        let a = s.at(s.time(1)).unwrap();
        assert_relative_eq!(a.t_c, 22.0);
        assert_relative_eq!(a.rh, 0.7, max_relative = 1e-12);
    }

    #[test]
    fn at_half_hour_interpolates_temperature_and_humidity_ratio() {
        let s = series();
        let a = s.at(s.time(0) + Duration::minutes(30)).unwrap();
        assert_relative_eq!(a.t_c, 21.0, max_relative = 1e-12);
        assert_relative_eq!(a.air.w, 0.5 * (s.w()[0] + s.w()[1]), max_relative = 1e-12);
        assert!(a.rh < 0.9 && a.rh > 0.7);
    }

    #[test]
    fn interpolating_between_saturated_hours_never_supersaturates() {
        // Two foggy hours, 10 °C and 20 °C at 100 % RH: a straight line in humidity ratio lies above the convex
        // saturation curve between them (ASHRAE 2017 ch. 1 saturation), so the midpoint must be capped at 1.
        let start = site()
            .utc_offset
            .with_ymd_and_hms(2026, 9, 1, 0, 0, 0)
            .unwrap();
        let s = WeatherSeries::new(
            site(),
            start,
            vec![10.0, 20.0],
            vec![1.0, 1.0],
            vec![101_325.0; 2],
            None,
            None,
        )
        .unwrap();
        for minutes in [1, 15, 30, 45, 59] {
            let a = s.at(start + Duration::minutes(minutes)).unwrap();
            assert!(
                a.air.rh() <= 1.0 + 1e-12,
                "{minutes} min: RH {}",
                a.air.rh()
            );
        }
    }

    #[test]
    fn at_accepts_a_time_in_another_offset() {
        let s = series();
        let utc = s.time(2).with_timezone(&FixedOffset::east_opt(0).unwrap());
        assert_relative_eq!(s.at(utc).unwrap().t_c, 26.0);
    }

    #[test]
    fn at_outside_is_an_error() {
        let s = series();
        assert!(s.at(s.time(0) - Duration::minutes(1)).is_err());
        assert!(s.at(s.time(2) + Duration::minutes(1)).is_err());
    }

    proptest::proptest! {
        #[test]
        fn at_between_hours_stays_between_the_neighbours(frac in 0.0..1.0f64, i in 0usize..2) {
            let s = series();
            let a = s.at(s.time(i) + Duration::milliseconds((frac * 3.6e6) as i64)).unwrap();
            let (lo, hi) = (s.t_c()[i].min(s.t_c()[i + 1]), s.t_c()[i].max(s.t_c()[i + 1]));
            proptest::prop_assert!(a.t_c >= lo - 1e-12 && a.t_c <= hi + 1e-12);
            let (lo, hi) = (s.w()[i].min(s.w()[i + 1]), s.w()[i].max(s.w()[i + 1]));
            proptest::prop_assert!(a.air.w >= lo - 1e-15 && a.air.w <= hi + 1e-15);
            proptest::prop_assert!(a.rh > 0.0 && a.rh <= 1.0);
        }
    }

    #[test]
    fn slice_takes_the_hours_in_a_half_open_window() {
        let s = series();
        let sl = s.slice(s.time(1), Duration::hours(2)).unwrap();
        assert_eq!(sl.len(), 2);
        assert_eq!(sl.start(), s.time(1));
        let sl = s
            .slice(s.time(0) + Duration::minutes(10), Duration::hours(1))
            .unwrap();
        assert_eq!(sl.len(), 1);
        assert_relative_eq!(sl.t_c()[0], 22.0);
    }
}
