//! Reader for EnergyPlus weather files (EPW): eight header lines (LOCATION gives the time zone and elevation), then
//! one comma-separated row of 35 fields per hour. Hour 1–24 is the hour *ending* at that clock hour, local standard
//! time; the series stores each row at that hour-ending time (24 → 00:00 of the next day).
//!
//! Field positions, units and missing-value codes follow the EPW data dictionary in the EnergyPlus *Auxiliary
//! Programs* documentation, "Weather Converter Program" chapter, section "EnergyPlus Weather File (EPW) Data
//! Dictionary" (a value at or above the `\missing` number is missing): N1 year, N2 month, N3 day, N4 hour, N5 minute,
//! A1 data source flags, N6 dry bulb °C (missing 99.9), N7 dew point °C (99.9), N8 relative humidity % (999),
//! N9 atmospheric station pressure Pa (999999), … N21 wind speed m/s (999), … N33 liquid precipitation depth mm (999),
//! N34 liquid precipitation quantity h (99). Field k of the row (0-based) is N_k for k ≥ 6, because A1 sits at 5. LOCATION: city, state, country, source, WMO, latitude, longitude,
//! time zone (h from GMT), elevation (m).
use std::path::Path;

use chrono::{FixedOffset, NaiveDate};

use super::series::{
    self, humidity_from, local_time, number, offset_from_hours, Assembler, FieldNames, Humidity,
    RawHour, ReadOptions, Site, WeatherSeries,
};
use crate::error::InputError;

/// Number of fields in an EPW data row (data dictionary: N1–N5, A1, N6–N34: 35 in all).
pub const EPW_FIELDS: usize = 35;
/// Header lines before the first data row.
pub const EPW_HEADER_LINES: usize = 8;

/// 0-based positions of the fields this reader uses, with their data-dictionary names.
pub mod field {
    /// N1 Year.
    pub const YEAR: usize = 0;
    /// N2 Month.
    pub const MONTH: usize = 1;
    /// N3 Day.
    pub const DAY: usize = 2;
    /// N4 Hour (1–24, hour ending).
    pub const HOUR: usize = 3;
    /// N5 Minute.
    pub const MINUTE: usize = 4;
    /// N6 Dry Bulb Temperature, °C; missing 99.9.
    pub const DRY_BULB: usize = 6;
    /// N7 Dew Point Temperature, °C; missing 99.9.
    pub const DEW_POINT: usize = 7;
    /// N8 Relative Humidity, %; missing 999.
    pub const RH: usize = 8;
    /// N9 Atmospheric Station Pressure, Pa; missing 999999.
    pub const PRESSURE: usize = 9;
    /// N21 Wind Speed, m/s; missing 999.
    pub const WIND_SPEED: usize = 21;
    /// N33 Liquid Precipitation Depth, mm; missing 999.
    pub const PRECIP_DEPTH: usize = 33;
}

/// Missing-value thresholds (a value ≥ this is missing), from the data dictionary.
pub mod missing {
    /// Dry bulb and dew point, °C.
    pub const TEMPERATURE: f64 = 99.9;
    /// Relative humidity, %.
    pub const RH: f64 = 999.0;
    /// Station pressure, Pa.
    pub const PRESSURE: f64 = 999_999.0;
    /// Wind speed, m/s.
    pub const WIND_SPEED: f64 = 999.0;
    /// Liquid precipitation depth, mm.
    pub const PRECIP_DEPTH: f64 = 999.0;
}

const NAMES: FieldNames = FieldNames {
    time: "hour",
    t: "dry bulb",
    rh: "relative humidity",
    p: "station pressure",
    rain: "liquid precipitation depth",
    wind: "wind speed",
};

/// Read an EPW file.
pub fn read_epw(path: &Path, opts: &ReadOptions) -> Result<WeatherSeries, InputError> {
    let text = series::read_text(path)?;
    parse_epw(path, &text, opts)
}

/// Parse EPW text (already read); `path` is used in messages only.
pub fn parse_epw(path: &Path, text: &str, opts: &ReadOptions) -> Result<WeatherSeries, InputError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let perr = |line: Option<u64>, message: String| InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    };
    if let Some(y) = opts.year {
        series::check_typical_year(path, y)?;
    }
    let mut lines = text.lines().enumerate().map(|(i, l)| (i as u64 + 1, l));
    let (_, loc) = lines.next().ok_or_else(|| {
        perr(
            None,
            "empty file: expected 8 header lines starting with LOCATION".into(),
        )
    })?;
    let loc: Vec<&str> = loc.split(',').map(str::trim).collect();
    if loc[0] != "LOCATION" {
        return Err(perr(
            Some(1),
            format!("first line must start with LOCATION, found {:?}", loc[0]),
        ));
    }
    if loc.len() < 10 {
        return Err(perr(
            Some(1),
            format!(
                "LOCATION needs 10 fields (…, time zone, elevation), found {}",
                loc.len()
            ),
        ));
    }
    let offset: FixedOffset = offset_from_hours(path, 1, "LOCATION time zone", loc[8])?;
    let elevation_m = number(
        path,
        1,
        "LOCATION elevation",
        loc[9],
        (-1000.0, 9999.9),
        "m",
    )?;
    let name = [loc[1], loc[2], loc[3]]
        .iter()
        .filter(|s| !s.is_empty() && **s != "-")
        .copied()
        .collect::<Vec<_>>()
        .join(", ");
    for k in 2..=EPW_HEADER_LINES as u64 {
        if lines.next().is_none() {
            return Err(perr(
                Some(k - 1),
                format!("file ends in the header: an EPW file has {EPW_HEADER_LINES} header lines"),
            ));
        }
    }
    let mut rows = Vec::with_capacity(8784);
    let mut prev_year: Option<(u64, i32, u32, u32)> = None;
    let mut has_rain = false;
    let mut has_wind = false;
    let mut warnings = Vec::new();
    let mut f: Vec<&str> = Vec::with_capacity(EPW_FIELDS + 1);
    for (line, l) in lines {
        if l.trim().is_empty() {
            continue;
        }
        f.clear();
        // Byte-level split: much cheaper than `str::split` per short field; cutting UTF-8 at an ASCII comma keeps
        // every piece valid UTF-8.
        f.extend(
            l.as_bytes()
                .split(|&b| b == b',')
                .map(|p| std::str::from_utf8(p).expect("split at an ASCII byte")),
        );
        if f.len() != EPW_FIELDS {
            return Err(perr(
                Some(line),
                format!(
                    "expected {EPW_FIELDS} fields in an EPW data row, found {}",
                    f.len()
                ),
            ));
        }
        let int = |i: usize, name: &str, lo: f64, hi: f64| -> Result<u32, InputError> {
            let x = number(path, line, name, f[i], (lo, hi), "")?;
            if x.fract() != 0.0 {
                return Err(InputError::Field {
                    path: path.to_path_buf(),
                    line,
                    field: name.into(),
                    value: f[i].into(),
                    expected: "must be a whole number".into(),
                });
            }
            Ok(x as u32)
        };
        let year_in_file = number(path, line, "year", f[field::YEAR], (1000.0, 9999.0), "")? as i32;
        let month = int(field::MONTH, "month", 1.0, 12.0)?;
        let day = int(field::DAY, "day", 1.0, 31.0)?;
        let hour = int(field::HOUR, "hour", 1.0, 24.0)?;
        let minute = int(field::MINUTE, "minute", 0.0, 60.0)?;
        let year = opts.year.unwrap_or(year_in_file);
        if opts.year.is_none() {
            if let Some((pl, py, pm, pd)) = prev_year {
                let new_year = pm == 12 && pd == 31 && month == 1 && day == 1;
                if py != year && !(new_year && year == py + 1) {
                    return Err(InputError::Field {
                        path: path.to_path_buf(),
                        line,
                        field: "year".into(),
                        value: f[field::YEAR].into(),
                        expected: format!(
                            "differs from the year on line {pl} ({py}): rows mix calendar years, as in a \
                             typical-year file; choose one year to place it in (--year)"
                        ),
                    });
                }
            }
            prev_year = Some((line, year, month, day));
        }
        let date = NaiveDate::from_ymd_opt(year, month, day).ok_or_else(|| InputError::Field {
            path: path.to_path_buf(),
            line,
            field: "day".into(),
            value: format!("{year}-{month:02}-{day:02}"),
            expected: "is not a calendar date".into(),
        })?;
        // Minute 60 or 0 both mean the whole hour in hourly files; sub-hourly files are not supported.
        let _ = minute;
        // With a chosen year, the final 24:00 of 31 December falls on 1 January of the next (as pvlib's
        // coerce_year does).
        let time = local_time(offset, date, hour, 0).expect("fixed offsets have no gaps");
        let val = |i: usize,
                   name: &str,
                   miss: f64,
                   range: (f64, f64),
                   unit: &str|
         -> Result<f64, InputError> {
            let raw = series::parse_finite(path, line, name, f[i])?;
            if raw >= miss {
                Ok(f64::NAN)
            } else {
                series::check_in(path, line, name, f[i], raw, range, unit)
            }
        };
        let t_c = val(
            field::DRY_BULB,
            "dry bulb",
            missing::TEMPERATURE,
            series::T_RANGE_C,
            "°C",
        )?;
        let dew_c = val(
            field::DEW_POINT,
            "dew point",
            missing::TEMPERATURE,
            series::T_RANGE_C,
            "°C",
        )?;
        let rh_pct = val(
            field::RH,
            "relative humidity",
            missing::RH,
            (0.0, 100.0),
            "%",
        )?;
        let p_pa = val(
            field::PRESSURE,
            "station pressure",
            missing::PRESSURE,
            series::P_RANGE_PA,
            "Pa",
        )?;
        let wind_m_s = val(
            field::WIND_SPEED,
            "wind speed",
            missing::WIND_SPEED,
            series::WIND_RANGE_M_S,
            "m/s",
        )?;
        // Precipitation is often left blank in EPW files: blank = not recorded.
        let rain_mm = if f[field::PRECIP_DEPTH].trim().is_empty() {
            f64::NAN
        } else {
            val(
                field::PRECIP_DEPTH,
                "liquid precipitation depth",
                missing::PRECIP_DEPTH,
                series::RAIN_RANGE_MM,
                "mm",
            )?
        };
        has_rain |= !rain_mm.is_nan();
        has_wind |= !wind_m_s.is_nan();
        let rh = humidity_from(
            path,
            line,
            Humidity {
                t_c,
                rh_pct,
                dew_c,
                rh_field: Some("relative humidity"),
                dew_field: "dew point",
                dew_text: f[field::DEW_POINT],
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
        return Err(perr(None, "no data rows after the 8 header lines".into()));
    }
    let site = Site {
        name,
        utc_offset: offset,
        elevation_m: Some(elevation_m),
    };
    Assembler {
        path,
        names: NAMES,
        rows,
        has_rain,
        has_wind,
        default_p_pa: None,
        warnings,
    }
    .finish(site, opts.max_gap_h)
}
