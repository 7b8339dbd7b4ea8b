//! Reader for hourly weather in the project's own CSV schema (documented in `weather-samples/README.md`):
//! optional `# key=value` lines (`utc_offset`, `site`, `elevation_m`), a header row, a `timestamp` column in
//! ISO 8601 (with or without a UTC offset), `temp_c` or `temp_f`, `rh_pct` and/or `dew_point_c`/`dew_point_f`, and
//! optional `pressure_kpa`, `rain_mm`, `wind_m_s`, `filled`. Empty cells are missing values (filled if the gap is
//! short). Commas only: a semicolon-separated file is refused with a message saying so. A temperature column
//! whose values do not fit its unit is refused (`series::check_temperature_unit`: °C under `temp_f`, °F under
//! `temp_c`).
//!
//! Reference: ISO 8601 date and time formats; RFC 4180 CSV (parsed with the `csv` crate).
use std::path::Path;

use chrono::{DateTime, FixedOffset, NaiveDate, NaiveDateTime, TimeZone};

use super::series::{
    self, humidity_from, number, Assembler, FieldNames, Humidity, RawHour, ReadOptions,
    ReadWarning, Site, WeatherSeries,
};
use crate::error::InputError;
use crate::props::psychro;
use crate::units::f_to_c;

const KNOWN: [&str; 11] = [
    "timestamp",
    "temp_c",
    "temp_f",
    "rh_pct",
    "dew_point_c",
    "dew_point_f",
    "pressure_kpa",
    "rain_mm",
    "wind_m_s",
    "filled",
    "",
];

/// Read a weather CSV of the project's schema.
pub fn read_csv(path: &Path, opts: &ReadOptions) -> Result<WeatherSeries, InputError> {
    let text = crate::input::read_text(path)?;
    parse_csv(path, &text, opts)
}

/// Parse CSV text (already read); `path` is used in messages only.
pub fn parse_csv(path: &Path, text: &str, opts: &ReadOptions) -> Result<WeatherSeries, InputError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let perr = |line: Option<u64>, message: String| InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    };
    // Leading comment lines: `# key=value` settings, other comments ignored.
    let mut offset_from_file: Option<FixedOffset> = None;
    let mut site_name = String::new();
    let mut elevation_m: Option<f64> = None;
    let mut skipped_lines = 0u64;
    let mut body_start = 0usize;
    for raw in text.split_inclusive('\n') {
        let l = raw.trim_end_matches(['\n', '\r']);
        let t = l.trim();
        if !(t.starts_with('#') || t.is_empty()) {
            break;
        }
        skipped_lines += 1;
        body_start += raw.len();
        let line = skipped_lines;
        if let Some((k, v)) = t.trim_start_matches('#').split_once('=') {
            let (k, v) = (k.trim(), v.trim());
            match k {
                "utc_offset" => {
                    offset_from_file = Some(parse_offset(v).ok_or_else(|| InputError::Field {
                        path: path.to_path_buf(),
                        line,
                        field: "utc_offset".into(),
                        value: v.into(),
                        expected: "must be an offset like -05:00 or +01:00".into(),
                    })?)
                }
                "site" => site_name = v.to_string(),
                "elevation_m" => {
                    elevation_m = Some(number(path, line, "elevation_m", v, (-500.0, 5000.0), "m")?)
                }
                _ => {}
            }
        }
    }
    let body = &text[body_start..];
    if body.trim().is_empty() {
        return Err(perr(None, "no header row and no data (empty file)".into()));
    }
    let mut rdr = ::csv::ReaderBuilder::new()
        .has_headers(true)
        .flexible(true)
        .from_reader(body.as_bytes());
    let header_line = skipped_lines + 1;
    let headers = rdr
        .headers()
        .map_err(|e| perr(Some(header_line), format!("unreadable header row: {e}")))?
        .iter()
        .map(str::trim)
        .collect::<::csv::StringRecord>();
    if headers.iter().any(|h| h.contains('\t')) {
        return Err(perr(
            Some(header_line),
            format!("header is separated by tabs: {}", series::TAB_HINT),
        ));
    }
    if headers.iter().any(|h| h.contains(';')) {
        return Err(perr(
            Some(header_line),
            format!("header is separated by ';': {}", series::SEMICOLON_HINT),
        ));
    }
    let col = |name: &str| -> Result<Option<usize>, InputError> {
        let mut found = headers.iter().enumerate().filter(|(_, h)| *h == name);
        let first = found.next().map(|(i, _)| i);
        if found.next().is_some() {
            return Err(perr(
                Some(header_line),
                format!("column {name:?} appears twice"),
            ));
        }
        Ok(first)
    };
    for h in headers.iter() {
        if !KNOWN.contains(&h) {
            return Err(perr(
                Some(header_line),
                format!(
                    "unknown column {h:?} (known: timestamp, temp_c|temp_f, rh_pct, dew_point_c|dew_point_f, \
                     pressure_kpa, rain_mm, wind_m_s, filled)"
                ),
            ));
        }
        if h.is_empty() {
            return Err(perr(Some(header_line), "a header cell is empty".into()));
        }
    }
    let ts = col("timestamp")?.ok_or_else(|| {
        perr(
            Some(header_line),
            "missing required column \"timestamp\"".into(),
        )
    })?;
    let (tc, tf) = (col("temp_c")?, col("temp_f")?);
    let (temp_col, temp_name, temp_f) = match (tc, tf) {
        (Some(i), None) => (i, "temp_c", false),
        (None, Some(i)) => (i, "temp_f", true),
        (Some(_), Some(_)) => {
            return Err(perr(
                Some(header_line),
                "both \"temp_c\" and \"temp_f\" given: keep one".into(),
            ))
        }
        (None, None) => {
            return Err(perr(
                Some(header_line),
                "missing required column \"temp_c\" (or \"temp_f\")".into(),
            ))
        }
    };
    let rh_col = col("rh_pct")?;
    let (dc, df) = (col("dew_point_c")?, col("dew_point_f")?);
    let dew = match (dc, df) {
        (Some(i), None) => Some((i, "dew_point_c", false)),
        (None, Some(i)) => Some((i, "dew_point_f", true)),
        (Some(_), Some(_)) => {
            return Err(perr(
                Some(header_line),
                "both \"dew_point_c\" and \"dew_point_f\" given: keep one".into(),
            ))
        }
        (None, None) => None,
    };
    if rh_col.is_none() && dew.is_none() {
        return Err(perr(
            Some(header_line),
            "missing required column \"rh_pct\" (or \"dew_point_c\"/\"dew_point_f\")".into(),
        ));
    }
    let p_col = col("pressure_kpa")?;
    let rain_col = col("rain_mm")?;
    let wind_col = col("wind_m_s")?;
    let filled_col = col("filled")?;
    let offset = opts.utc_offset.or(offset_from_file);

    let mut rows = Vec::with_capacity(body.len() / 40);
    let mut site_offset: Option<FixedOffset> = offset;
    let mut record = ::csv::StringRecord::new();
    let mut warnings = Vec::new();
    loop {
        let more = rdr.read_record(&mut record).map_err(|e| {
            let line = e.position().map(|p| p.line() + skipped_lines);
            perr(line, format!("malformed CSV: {e}"))
        })?;
        if !more {
            break;
        }
        let line = record.position().map_or(0, |p| p.line()) + skipped_lines;
        if !series::row_shape(path, line, &record)? {
            continue; // blank line
        }
        if record.len() != headers.len() {
            return Err(perr(
                Some(line),
                format!(
                    "expected {} fields as in the header, found {}",
                    headers.len(),
                    record.len()
                ),
            ));
        }
        let time = parse_timestamp(record[ts].trim(), offset).ok_or_else(|| InputError::Field {
            path: path.to_path_buf(),
            line,
            field: "timestamp".into(),
            value: record[ts].trim().to_string(),
            expected: if offset.is_none() && parse_naive(record[ts].trim()).is_some() {
                "has no UTC offset: add one (2026-09-01T06:00-05:00), a '# utc_offset=-05:00' line, or \
                 --utc-offset"
                    .into()
            } else {
                "is not an ISO 8601 time (2026-09-01T06:00 or 2026-09-01T06:00-05:00)".into()
            },
        })?;
        site_offset.get_or_insert(*time.offset());
        let opt_num =
            |i: usize, name: &str, range: (f64, f64), unit: &str| -> Result<f64, InputError> {
                let s = &record[i];
                if s.is_empty() {
                    Ok(f64::NAN)
                } else {
                    number(path, line, name, s, range, unit)
                }
            };
        let t_range = if temp_f {
            (-58.0, 140.0)
        } else {
            series::T_RANGE_C
        };
        let t_unit = if temp_f { "°F" } else { "°C" };
        let mut t_c = opt_num(temp_col, temp_name, t_range, t_unit)?;
        if temp_f {
            t_c = f_to_c(t_c);
        }
        let rh_pct = match rh_col {
            Some(i) => opt_num(i, "rh_pct", (0.0, 100.0), "%")?,
            None => f64::NAN,
        };
        let (dew_c, dew_name, dew_text) = match dew {
            Some((i, name, is_f)) => {
                let d = opt_num(i, name, t_range, t_unit)?;
                (
                    if is_f { f_to_c(d) } else { d },
                    name,
                    record[i].to_string(),
                )
            }
            None => (f64::NAN, "", String::new()),
        };
        let rh = humidity_from(
            path,
            line,
            Humidity {
                t_c,
                rh_pct,
                dew_c,
                rh_field: rh_col.map(|_| "rh_pct"),
                dew_field: dew_name,
                dew_text: &dew_text,
            },
            &mut warnings,
        )?;
        let p_pa = match p_col {
            Some(i) => opt_num(i, "pressure_kpa", (50.0, 110.0), "kPa")? * 1000.0,
            None => f64::NAN,
        };
        let rain_mm = match rain_col {
            Some(i) => opt_num(i, "rain_mm", series::RAIN_RANGE_MM, "mm")?,
            None => f64::NAN,
        };
        let wind_m_s = match wind_col {
            Some(i) => opt_num(i, "wind_m_s", series::WIND_RANGE_M_S, "m/s")?,
            None => f64::NAN,
        };
        let filled = match filled_col {
            Some(i) => match record[i].trim() {
                "0" | "" => false,
                "1" => true,
                other => {
                    return Err(InputError::Field {
                        path: path.to_path_buf(),
                        line,
                        field: "filled".into(),
                        value: other.into(),
                        expected: "must be 0 or 1".into(),
                    })
                }
            },
            None => false,
        };
        rows.push(RawHour {
            line,
            time,
            t_c,
            rh,
            p_pa,
            rain_mm,
            wind_m_s,
            filled,
        });
    }
    let t_values: Vec<f64> = rows.iter().map(|r| r.t_c).collect();
    series::check_temperature_unit(path, header_line, temp_name, &t_values, temp_f)?;
    let default_p_pa = p_col
        .is_none()
        .then(|| psychro::pressure_at_elevation_pa(elevation_m.unwrap_or(0.0)));
    if let Some(p0) = default_p_pa {
        warnings.push(ReadWarning {
            path: path.to_path_buf(),
            line: header_line,
            field: "pressure_kpa".into(),
            message: format!(
                "column absent: the standard atmosphere at {} m ({:.2} kPa) is used for every hour",
                elevation_m.unwrap_or(0.0),
                p0 / 1000.0
            ),
        });
    }
    let site = Site {
        name: site_name,
        utc_offset: site_offset.unwrap_or_else(|| FixedOffset::east_opt(0).expect("zero offset")),
        elevation_m,
    };
    let asm = Assembler {
        path,
        names: FieldNames {
            time: "timestamp",
            t: temp_name,
            rh: if rh_col.is_some() {
                "rh_pct"
            } else {
                dew.map_or("rh_pct", |d| d.1)
            },
            p: "pressure_kpa",
            rain: "rain_mm",
            wind: "wind_m_s",
        },
        rows,
        has_rain: rain_col.is_some(),
        has_wind: wind_col.is_some(),
        default_p_pa,
        warnings,
    };
    asm.finish(site, opts.max_gap_h)
}

/// `-05:00`, `+0530`, `Z`, `UTC`, `+00:00`.
pub fn parse_offset(s: &str) -> Option<FixedOffset> {
    let s = s.trim();
    if s.eq_ignore_ascii_case("z") || s.eq_ignore_ascii_case("utc") {
        return FixedOffset::east_opt(0);
    }
    let (sign, rest) = match s.as_bytes().first()? {
        b'+' => (1, &s[1..]),
        b'-' => (-1, &s[1..]),
        _ => return None,
    };
    let (h, m) = match rest.split_once(':') {
        Some((h, m)) => (h, m),
        None if rest.len() == 4 => rest.split_at(2),
        None if rest.len() <= 2 => (rest, "0"),
        None => return None,
    };
    let (h, m): (i32, i32) = (h.parse().ok()?, m.parse().ok()?);
    if !(0..=14).contains(&h) || !(0..60).contains(&m) {
        return None;
    }
    FixedOffset::east_opt(sign * (h * 3600 + m * 60))
}

/// `YYYY-MM-DDTHH:MM[:SS]` (or a space for `T`), parsed by hand: chrono's format parser dominated read time.
fn parse_naive(s: &str) -> Option<NaiveDateTime> {
    let b = s.as_bytes();
    if !(b.len() == 16 || b.len() == 19)
        || b[4] != b'-'
        || b[7] != b'-'
        || !matches!(b[10], b'T' | b' ')
        || b[13] != b':'
    {
        return None;
    }
    let num = |r: std::ops::Range<usize>| -> Option<u32> {
        let d = &b[r];
        if d.iter().all(u8::is_ascii_digit) {
            Some(d.iter().fold(0, |a, c| a * 10 + u32::from(c - b'0')))
        } else {
            None
        }
    };
    let sec = if b.len() == 19 {
        if b[16] != b':' {
            return None;
        }
        num(17..19)?
    } else {
        0
    };
    let date = NaiveDate::from_ymd_opt(num(0..4)? as i32, num(5..7)?, num(8..10)?)?;
    date.and_hms_opt(num(11..13)?, num(14..16)?, sec)
}

/// An ISO 8601 local time with optional offset; `default` applies when the text has none.
pub fn parse_timestamp(s: &str, default: Option<FixedOffset>) -> Option<DateTime<FixedOffset>> {
    let s = s.trim();
    // Split a trailing offset: Z, or +hh:mm / -hh:mm / +hhmm after the time part.
    let (main, off) = if let Some(m) = s.strip_suffix('Z').or_else(|| s.strip_suffix('z')) {
        (m, Some(FixedOffset::east_opt(0)?))
    } else if s.len() > 16 {
        let tail_start = s.get(10..)?.rfind(['+', '-']).map(|i| i + 10);
        match tail_start {
            Some(i) => (&s[..i], Some(parse_offset(&s[i..])?)),
            None => (s, None),
        }
    } else {
        (s, None)
    };
    let naive = parse_naive(main)?;
    off.or(default)?.from_local_datetime(&naive).single()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn timestamps_with_and_without_offsets() {
        let m5 = FixedOffset::west_opt(5 * 3600).unwrap();
        let a = parse_timestamp("2026-09-01T06:00-05:00", None).unwrap();
        let b = parse_timestamp("2026-09-01 11:00:00Z", None).unwrap();
        let c = parse_timestamp("2026-09-01T06:00", Some(m5)).unwrap();
        assert_eq!(a, b);
        assert_eq!(a, c);
        assert!(parse_timestamp("2026-09-01T06:00", None).is_none());
        assert!(parse_timestamp("2026-13-01T06:00Z", None).is_none());
        assert_eq!(parse_offset("+0530").unwrap().local_minus_utc(), 19800);
    }
}
