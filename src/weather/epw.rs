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
//!
//! The header is checked record by record, each error naming its line: the eight records present and in the
//! dictionary's order ([`HEADER_RECORDS`]; a missing one is named, never a data row taken as header), LOCATION's
//! ranges ([`location`]), and DATA PERIODS honoured: exactly one period, one record an hour, and the data must start
//! at hour 1 of the declared start date, on the declared day of the week, and end at hour 24 of the declared end
//! date (a file that stops short, or runs on, is an error at the line where it does). Rows placed in a chosen year
//! (`--year`, a typical year) keep the day-of-week check as a warning only: their days follow no one calendar.
//! Semicolon-separated files are refused with a message that says so.
use std::path::Path;

use chrono::{Datelike, FixedOffset, NaiveDate, Weekday};

use super::series::{
    self, humidity_from, local_time, number, offset_from_hours, Assembler, FieldNames, Humidity,
    RawHour, ReadOptions, ReadWarning, Site, WeatherSeries,
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

/// The header records, in the order the data dictionary gives them, one per line.
pub const HEADER_RECORDS: [&str; EPW_HEADER_LINES] = [
    "LOCATION",
    "DESIGN CONDITIONS",
    "TYPICAL/EXTREME PERIODS",
    "GROUND TEMPERATURES",
    "HOLIDAYS/DAYLIGHT SAVINGS",
    "COMMENTS 1",
    "COMMENTS 2",
    "DATA PERIODS",
];

/// LOCATION ranges (data dictionary: latitude −90…+90°, longitude −180…+180°, elevation −1000…+9999.9 m; time
/// zone −12…+14 h, wider than the dictionary's +12 because UTC+13 and +14 are in use).
pub mod location {
    /// Latitude, degrees north.
    pub const LATITUDE: (f64, f64) = (-90.0, 90.0);
    /// Longitude, degrees east.
    pub const LONGITUDE: (f64, f64) = (-180.0, 180.0);
    /// Time zone, h from GMT.
    pub const TIME_ZONE_H: (f64, f64) = (-12.0, 14.0);
    /// Elevation, m.
    pub const ELEVATION_M: (f64, f64) = (-1000.0, 9999.9);
}

/// A month/day with an optional year, as DATA PERIODS writes it (` 9/ 1` or `9/1/2026`).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct PeriodDate {
    month: u32,
    day: u32,
    year: Option<i32>,
}

impl PeriodDate {
    fn parse(text: &str) -> Option<PeriodDate> {
        let t: String = text.chars().filter(|c| !c.is_whitespace()).collect();
        let mut parts = t.split('/');
        let month: u32 = parts.next()?.parse().ok()?;
        let day: u32 = parts.next()?.parse().ok()?;
        let year: Option<i32> = match parts.next() {
            Some(y) => Some(y.parse().ok()?),
            None => None,
        };
        if parts.next().is_some() {
            return None;
        }
        // 2000 is a leap year, so 2/29 is a valid month/day.
        NaiveDate::from_ymd_opt(year.unwrap_or(2000), month, day)?;
        Some(PeriodDate { month, day, year })
    }

    /// Does a row's date fall on this date? `year` is compared only when both sides have one.
    fn matches(&self, year: Option<i32>, month: u32, day: u32) -> bool {
        self.month == month
            && self.day == day
            && (self.year.is_none() || year.is_none() || self.year == year)
    }
}

impl std::fmt::Display for PeriodDate {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.month, self.day)?;
        if let Some(y) = self.year {
            write!(f, "/{y}")?;
        }
        Ok(())
    }
}

/// What the header says, after its checks.
struct Header {
    name: String,
    offset: FixedOffset,
    elevation_m: f64,
    start: PeriodDate,
    end: PeriodDate,
    weekday: Weekday,
    weekday_text: String,
}

/// The first data row, as the start of the declared period is checked against it.
struct FirstRow {
    line: u64,
    /// The file's year, unless the rows are placed in a chosen year.
    year: Option<i32>,
    month: u32,
    day: u32,
    hour: u32,
    date: NaiveDate,
}

fn weekday_name(w: Weekday) -> &'static str {
    [
        "Monday",
        "Tuesday",
        "Wednesday",
        "Thursday",
        "Friday",
        "Saturday",
        "Sunday",
    ][w.num_days_from_monday() as usize]
}

/// The first row must be hour 1 of the declared start date, on the declared day of the week. For rows placed in
/// a chosen year (a typical year, whose days follow no one calendar) a different day of the week is a warning.
fn check_period_start(
    path: &Path,
    header: &Header,
    row: &FirstRow,
    warnings: &mut Vec<ReadWarning>,
) -> Result<(), InputError> {
    const LINE: u64 = EPW_HEADER_LINES as u64;
    if !header.start.matches(row.year, row.month, row.day) || row.hour != 1 {
        let year = row.year.map_or(String::new(), |y| format!("/{y}"));
        return Err(field_err(
            path,
            row.line,
            "date and hour",
            &format!("{}/{}{year} hour {}", row.month, row.day, row.hour),
            &format!(
                "is not the start of the data period declared on line {LINE} ({} hour 1)",
                header.start
            ),
        ));
    }
    let found = row.date.weekday();
    if found == header.weekday {
        return Ok(());
    }
    let field = "DATA PERIODS start day of week";
    if row.year.is_some() {
        return Err(field_err(
            path,
            LINE,
            field,
            &header.weekday_text,
            &format!(
                "does not match the first data row: {} (line {}) is a {}; a typical year whose days follow no \
                 one calendar can be placed in a year with --year",
                row.date,
                row.line,
                weekday_name(found)
            ),
        ));
    }
    warnings.push(ReadWarning {
        path: path.to_path_buf(),
        line: LINE,
        field: field.to_string(),
        message: format!(
            "{:?}, but {} in the chosen year (--year) is a {}: the rows keep their dates and the declared day \
             of week is not used",
            header.weekday_text,
            row.date,
            weekday_name(found)
        ),
    });
    Ok(())
}

/// Read an EPW file.
pub fn read_epw(path: &Path, opts: &ReadOptions) -> Result<WeatherSeries, InputError> {
    let text = crate::input::read_text(path)?;
    parse_epw(path, &text, opts)
}

fn parse_err(path: &Path, line: Option<u64>, message: String) -> InputError {
    InputError::Parse {
        path: path.to_path_buf(),
        line,
        message,
    }
}

fn field_err(path: &Path, line: u64, field: &str, value: &str, expected: &str) -> InputError {
    InputError::Field {
        path: path.to_path_buf(),
        line,
        field: field.to_string(),
        value: value.to_string(),
        expected: expected.to_string(),
    }
}

const SEMICOLONS: &str =
    "is separated by ';': EPW fields are separated by commas (semicolon-separated files are \
                          not read; replace ';' with ',')";

/// Check the eight header records one by one (present, in order, LOCATION ranges, DATA PERIODS) and return what
/// the rows are checked against.
fn parse_header<'a>(
    path: &Path,
    lines: &mut impl Iterator<Item = (u64, &'a str)>,
) -> Result<Header, InputError> {
    let mut records: Vec<Vec<&str>> = Vec::with_capacity(EPW_HEADER_LINES);
    for (k, want) in HEADER_RECORDS.iter().enumerate() {
        let line = k as u64 + 1;
        let Some((_, text)) = lines.next() else {
            return Err(parse_err(
                path,
                Some(line.saturating_sub(1)).filter(|l| *l > 0),
                format!(
                    "{}: expected the {want} record on line {line} (an EPW file has {EPW_HEADER_LINES} header \
                     records: {})",
                    if line == 1 { "empty file" } else { "file ends in the header" },
                    HEADER_RECORDS.join(", ")
                ),
            ));
        };
        let fields: Vec<&str> = text.split(',').map(str::trim).collect();
        let found = fields[0];
        if !found.eq_ignore_ascii_case(want) {
            let why = if fields.len() == 1 && found.contains(';') {
                format!("line {SEMICOLONS}")
            } else if let Some(later) = HEADER_RECORDS[k + 1..]
                .iter()
                .find(|r| found.eq_ignore_ascii_case(r))
            {
                format!(
                    "found {later} where the {want} record belongs: a header record is missing (the \
                     {EPW_HEADER_LINES} records are, in order: {})",
                    HEADER_RECORDS.join(", ")
                )
            } else if found.parse::<f64>().is_ok() {
                format!(
                    "found a data row where the {want} record belongs: the header is cut short (an EPW file has \
                     {EPW_HEADER_LINES} header records before the data)"
                )
            } else {
                format!(
                    "expected the {want} record (header record {line} of {EPW_HEADER_LINES}), found {:?}",
                    truncate(found)
                )
            };
            return Err(parse_err(path, Some(line), why));
        }
        records.push(fields);
    }
    let loc = &records[0];
    if loc.len() != 10 {
        return Err(parse_err(
            path,
            Some(1),
            format!(
                "LOCATION needs 10 fields (LOCATION, city, state, country, source, WMO, latitude, longitude, time \
                 zone, elevation), found {}",
                loc.len()
            ),
        ));
    }
    number(
        path,
        1,
        "LOCATION latitude",
        loc[6],
        location::LATITUDE,
        "°",
    )?;
    number(
        path,
        1,
        "LOCATION longitude",
        loc[7],
        location::LONGITUDE,
        "°",
    )?;
    let offset = offset_from_hours(path, 1, "LOCATION time zone", loc[8])?;
    let elevation_m = number(
        path,
        1,
        "LOCATION elevation",
        loc[9],
        location::ELEVATION_M,
        "m",
    )?;
    let name = [loc[1], loc[2], loc[3]]
        .iter()
        .filter(|s| !s.is_empty() && **s != "-")
        .copied()
        .collect::<Vec<_>>()
        .join(", ");
    let (start, end, weekday, weekday_text) = parse_data_periods(path, &records[7])?;
    Ok(Header {
        name,
        offset,
        elevation_m,
        start,
        end,
        weekday,
        weekday_text,
    })
}

/// At most 40 characters of a found value, for messages.
fn truncate(s: &str) -> String {
    match s.char_indices().nth(40) {
        Some((i, _)) => format!("{}…", &s[..i]),
        None => s.to_string(),
    }
}

/// DATA PERIODS (line 8): number of periods (1), records per hour (1), then name, start day of week, start date,
/// end date.
fn parse_data_periods(
    path: &Path,
    dp: &[&str],
) -> Result<(PeriodDate, PeriodDate, Weekday, String), InputError> {
    const LINE: u64 = EPW_HEADER_LINES as u64;
    let whole = |i: usize, name: &str| -> Result<u32, InputError> {
        let text = dp.get(i).copied().unwrap_or("");
        let x = number(path, LINE, name, text, (0.0, 1e6), "")?;
        if x.fract() != 0.0 {
            return Err(field_err(path, LINE, name, text, "must be a whole number"));
        }
        Ok(x as u32)
    };
    let periods = whole(1, "DATA PERIODS number of periods")?;
    if periods != 1 {
        return Err(field_err(
            path,
            LINE,
            "DATA PERIODS number of periods",
            dp[1],
            "must be 1: this reader reads one continuous data period",
        ));
    }
    let per_hour = whole(2, "DATA PERIODS records per hour")?;
    if per_hour != 1 {
        return Err(field_err(
            path,
            LINE,
            "DATA PERIODS records per hour",
            dp[2],
            "must be 1: this reader reads hourly records only (sub-hourly files are not averaged)",
        ));
    }
    // Trailing empty fields (a trailing comma) are harmless.
    let used = dp.iter().rposition(|f| !f.is_empty()).map_or(0, |i| i + 1);
    if used != 7 {
        return Err(parse_err(
            path,
            Some(LINE),
            format!(
                "DATA PERIODS needs 7 fields for one period (DATA PERIODS, 1, records per hour, name, start day \
                 of week, start date, end date), found {used}"
            ),
        ));
    }
    let weekday_text = dp[4];
    let weekday: Weekday = weekday_text.parse().map_err(|_| {
        field_err(
            path,
            LINE,
            "DATA PERIODS start day of week",
            weekday_text,
            "must be a day of the week (Sunday … Saturday)",
        )
    })?;
    let date = |i: usize, name: &str| {
        PeriodDate::parse(dp[i]).ok_or_else(|| {
            field_err(
                path,
                LINE,
                name,
                dp[i],
                "must be a date month/day or month/day/year (9/1, 9/1/2026)",
            )
        })
    };
    Ok((
        date(5, "DATA PERIODS start date")?,
        date(6, "DATA PERIODS end date")?,
        weekday,
        weekday_text.to_string(),
    ))
}

/// Parse EPW text (already read); `path` is used in messages only.
pub fn parse_epw(path: &Path, text: &str, opts: &ReadOptions) -> Result<WeatherSeries, InputError> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let perr = |line: Option<u64>, message: String| parse_err(path, line, message);
    if let Some(y) = opts.year {
        series::check_typical_year(path, y)?;
    }
    let mut lines = text.lines().enumerate().map(|(i, l)| (i as u64 + 1, l));
    let header = parse_header(path, &mut lines)?;
    let offset = header.offset;
    let mut warnings = Vec::new();
    // The data period, checked row by row: the first row opens it, the row at the end date's hour 24 closes it.
    let mut period_end_line: Option<u64> = None;
    let mut last_row: Option<(u64, u32, u32, u32)> = None;
    let mut rows = Vec::with_capacity(8784);
    let mut prev_year: Option<(u64, i32, u32, u32)> = None;
    let mut has_rain = false;
    let mut has_wind = false;
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
        if f.len() == 1 && l.contains(';') {
            return Err(perr(Some(line), format!("data row {SEMICOLONS}")));
        }
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
        let row_year = opts.year.is_none().then_some(year_in_file);
        if let Some(end_line) = period_end_line {
            return Err(field_err(
                path,
                line,
                "date and hour",
                &format!("{month}/{day} hour {hour}"),
                &format!(
                    "comes after the end of the data period declared on line {EPW_HEADER_LINES} ({} hour 24, \
                     line {end_line})",
                    header.end
                ),
            ));
        }
        if last_row.is_none() {
            let first = FirstRow {
                line,
                year: row_year,
                month,
                day,
                hour,
                date,
            };
            check_period_start(path, &header, &first, &mut warnings)?;
        }
        if hour == 24 && header.end.matches(row_year, month, day) {
            period_end_line = Some(line);
        }
        last_row = Some((line, month, day, hour));
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
    let Some((last_line, m, d, h)) = last_row else {
        return Err(perr(None, "no data rows after the 8 header lines".into()));
    };
    if period_end_line.is_none() {
        return Err(perr(
            Some(last_line),
            format!(
                "file ends here ({m}/{d} hour {h}), before the end of the data period declared on line \
                 {EPW_HEADER_LINES} ({} hour 24)",
                header.end
            ),
        ));
    }
    let t_values: Vec<f64> = rows.iter().map(|r| r.t_c).collect();
    series::check_temperature_unit(path, rows[0].line, "dry bulb", &t_values, false)?;
    let site = Site {
        name: header.name,
        utc_offset: offset,
        elevation_m: Some(header.elevation_m),
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
