//! Reader for NSRDB typical-meteorological-year files in the TMY3 CSV format: a first line of site metadata
//! (USAF id, name, state, time zone h, latitude, longitude, elevation m), a header line naming 71 columns, then one
//! row per hour with `Date (MM/DD/YYYY)` and `Time (HH:MM)`, 01:00–24:00 local standard time, hour ending.
//!
//! Columns used: `Dry-bulb (C)`, `Dew-point (C)`, `RHum (%)`, `Pressure (mbar)`, `Wspd (m/s)`. `Lprecip depth (mm)`
//! is deliberately not read: in the bundled Greensboro file it sums to 8345 "mm" a year, several times the site's
//! real rainfall (about 1100 mm a year, from memory), so its unit or meaning is not what the header says.
//! A typical year's months come from different years, so the reader places every row in one chosen year (the last
//! 24:00 of 31 December falls on 1 January of the next), as pvlib's `read_tmy3(coerce_year=…)` does; the test
//! `tests/weather_tmy3_reference.rs` compares every hour with pvlib 0.16.1. Reference: Wilcox & Marion (2008),
//! *Users Manual for TMY3 Data Sets*, NREL/TP-581-43156. The missing-value code −9900 is from memory of that manual
//! (unverified; the bundled file has none).
use std::path::Path;

use chrono::NaiveDate;

use super::series::{
    self, humidity_from, local_time, number, offset_from_hours, Assembler, FieldNames, Humidity,
    RawHour, ReadOptions, Site, WeatherSeries,
};
use crate::error::InputError;

/// Missing-value code in TMY3 data columns (from memory of the TMY3 manual; unverified).
pub const TMY3_MISSING: f64 = -9900.0;

const DATE: &str = "Date (MM/DD/YYYY)";
const TIME: &str = "Time (HH:MM)";
const DRY_BULB: &str = "Dry-bulb (C)";
const DEW_POINT: &str = "Dew-point (C)";
const RH: &str = "RHum (%)";
const PRESSURE: &str = "Pressure (mbar)";
const WIND: &str = "Wspd (m/s)";

/// Read a TMY3 CSV, placing the typical year in `opts.year` (required: a typical year has no calendar year).
pub fn read_tmy3(path: &Path, opts: &ReadOptions) -> Result<WeatherSeries, InputError> {
    let text = crate::input::read_text(path)?;
    parse_tmy3(path, &text, opts)
}

/// Parse TMY3 text (already read); `path` is used in messages only.
pub fn parse_tmy3(
    path: &Path,
    text: &str,
    opts: &ReadOptions,
) -> Result<WeatherSeries, InputError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let perr = |line: Option<u64>, message: String| InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    };
    let year = opts.year.ok_or_else(|| {
        perr(
            None,
            "a TMY3 file is a typical year: choose the calendar year to place it in (--year)"
                .into(),
        )
    })?;
    series::check_typical_year(path, year)?;
    let mut rdr = ::csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut rec = ::csv::StringRecord::new();
    let read = |rdr: &mut ::csv::Reader<&[u8]>,
                rec: &mut ::csv::StringRecord|
     -> Result<bool, InputError> {
        rdr.read_record(rec).map_err(|e| {
            perr(
                e.position().map(|p| p.line()),
                format!("malformed CSV: {e}"),
            )
        })
    };
    if !read(&mut rdr, &mut rec)? {
        return Err(perr(None, "empty file: expected a TMY3 site line".into()));
    }
    if rec.len() == 1 && rec[0].contains(';') {
        return Err(perr(
            Some(1),
            format!("site line is separated by ';': {}", series::SEMICOLON_HINT),
        ));
    }
    if rec.len() != 7 {
        return Err(perr(
            Some(1),
            format!(
                "the TMY3 site line needs 7 fields (USAF, name, state, time zone, latitude, longitude, \
                 elevation), found {}",
                rec.len()
            ),
        ));
    }
    let offset = offset_from_hours(path, 1, "time zone", &rec[3])?;
    let elevation_m = number(path, 1, "elevation", &rec[6], (-500.0, 9000.0), "m")?;
    let name = format!("{} ({}), {}", rec[1].trim(), rec[0].trim(), rec[2].trim());
    if !read(&mut rdr, &mut rec)? {
        return Err(perr(
            Some(2),
            "file ends before the TMY3 header line".into(),
        ));
    }
    let header: ::csv::StringRecord = rec.iter().map(str::trim).collect();
    if header.len() == 1 && header[0].contains(';') {
        return Err(perr(
            Some(2),
            format!("header is separated by ';': {}", series::SEMICOLON_HINT),
        ));
    }
    let col = |name: &str| -> Result<usize, InputError> {
        header
            .iter()
            .position(|h| h == name)
            .ok_or_else(|| perr(Some(2), format!("missing required column {name:?}")))
    };
    let (c_date, c_time, c_t, c_dp, c_rh, c_p) = (
        col(DATE)?,
        col(TIME)?,
        col(DRY_BULB)?,
        col(DEW_POINT)?,
        col(RH)?,
        col(PRESSURE)?,
    );
    let c_wind = header.iter().position(|h| h == WIND);
    let mut rows = Vec::with_capacity(8760);
    let mut warnings = Vec::new();
    while read(&mut rdr, &mut rec)? {
        let line = rec.position().map_or(0, |p| p.line());
        if !series::row_shape(path, line, &rec)? {
            continue;
        }
        if rec.len() != header.len() {
            return Err(perr(
                Some(line),
                format!(
                    "expected {} fields as in the header, found {}",
                    header.len(),
                    rec.len()
                ),
            ));
        }
        let ferr = |field: &str, value: &str, expected: &str| InputError::Field {
            path: path.to_path_buf(),
            line,
            field: field.into(),
            value: value.into(),
            expected: expected.into(),
        };
        let d = rec[c_date].trim();
        // MM/DD/YYYY by hand (chrono's format parser dominated read time); the file's year is replaced.
        let md = d
            .split_once('/')
            .and_then(|(m, rest)| Some((m.parse::<u32>().ok()?, rest.split_once('/')?)))
            .and_then(|(m, (day, y))| Some((m, day.parse::<u32>().ok()?, y.parse::<u32>().ok()?)))
            .filter(|&(m, day, y)| NaiveDate::from_ymd_opt(y as i32, m, day).is_some())
            .ok_or_else(|| ferr(DATE, d, "is not a date MM/DD/YYYY"))?;
        let (m, day) = (md.0, md.1);
        let date = NaiveDate::from_ymd_opt(year, m, day)
            .ok_or_else(|| ferr(DATE, d, "is 29 February, which the chosen year lacks"))?;
        let t = rec[c_time].trim();
        let (hh, mm) = t
            .split_once(':')
            .and_then(|(h, m)| Some((h.parse::<u32>().ok()?, m.parse::<u32>().ok()?)))
            .filter(|(h, m)| (1..=24).contains(h) && *m < 60 && !(*h == 24 && *m > 0))
            .ok_or_else(|| ferr(TIME, t, "is not an hour-ending time 01:00–24:00"))?;
        let time = local_time(offset, date, hh, mm).expect("fixed offsets have no gaps");
        let val =
            |i: usize, name: &str, range: (f64, f64), unit: &str| -> Result<f64, InputError> {
                let raw = series::parse_finite(path, line, name, &rec[i])?;
                if raw <= TMY3_MISSING {
                    Ok(f64::NAN)
                } else {
                    series::check_in(path, line, name, &rec[i], raw, range, unit)
                }
            };
        let t_c = val(c_t, DRY_BULB, series::T_RANGE_C, "°C")?;
        let dew_c = val(c_dp, DEW_POINT, series::T_RANGE_C, "°C")?;
        let rh_pct = val(c_rh, RH, (0.0, 100.0), "%")?;
        let p_pa = val(c_p, PRESSURE, (500.0, 1100.0), "mbar")? * 100.0;
        let wind_m_s = match c_wind {
            Some(i) => val(i, WIND, series::WIND_RANGE_M_S, "m/s")?,
            None => f64::NAN,
        };
        let rain_mm = f64::NAN;
        let rh = humidity_from(
            path,
            line,
            Humidity {
                t_c,
                rh_pct,
                dew_c,
                rh_field: Some(RH),
                dew_field: DEW_POINT,
                dew_text: rec[c_dp].trim(),
            },
            &mut warnings,
        )?;
        rows.push(RawHour {
            line,
            time,
            t_c,
            rh,
            p_pa,
            rain_mm,
            wind_m_s,
            filled: false,
        });
    }
    if rows.is_empty() {
        return Err(perr(None, "no data rows after the TMY3 header".into()));
    }
    let t_values: Vec<f64> = rows.iter().map(|r| r.t_c).collect();
    series::check_temperature_unit(path, 2, DRY_BULB, &t_values, false)?;
    Assembler {
        path,
        names: FieldNames {
            time: TIME,
            t: DRY_BULB,
            rh: RH,
            p: PRESSURE,
            rain: "rain",
            wind: WIND,
        },
        rows,
        has_rain: false,
        has_wind: c_wind.is_some(),
        default_p_pa: None,
        warnings,
    }
    .finish(
        Site {
            name,
            utc_offset: offset,
            elevation_m: Some(elevation_m),
        },
        opts.max_gap_h,
    )
}
