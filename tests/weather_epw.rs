//! The EPW reader must take each quantity from the field the format defines, honour the missing-value codes, and
//! place hour-ending rows at the right local time.
//!
//! Source for positions and codes: EnergyPlus *Auxiliary Programs*, "Weather Converter Program", section
//! "EnergyPlus Weather File (EPW) Data Dictionary" (N1 year … N5 minute, A1 flags, N6 dry bulb, N7 dew point, N8 RH,
//! N9 station pressure, N20 wind direction, N21 wind speed, N33 liquid precipitation depth, N34 quantity; a value
//! at or above `\missing` is missing: 99.9 °C, 999 %, 999999 Pa, 999 m/s, 999 mm). The same column order is in
//! pvlib 0.16.1 `pvlib/iotools/epw.py` (`colnames`), checked by hand.
//! Header checks (records present and in order, LOCATION ranges, DATA PERIODS honoured) each give their error with
//! the line, and every value the reader fills or recomputes is located by line and field.
//! Fixture: `tests/fixtures/hand_made.epw` (one day, 1 September 2026, a Tuesday; invented values: hour k (0-based) has dry bulb 20 + 0.1k °C, dew point
//! 12 °C, RH 60 + k %, pressure 100000 + 10k Pa, wind 2 + 0.1k m/s, 1.5 mm of rain at k = 5; the other fields hold
//! missing codes that would fail the range checks if read in place of these; k = 10 has RH 999, k = 12 dry bulb 99.9).
use std::path::Path;

use approx::assert_abs_diff_eq;
use chrono::{FixedOffset, TimeZone};
use dryfront::props::psychro::saturation_pressure_pa;
use dryfront::weather::epw::{field, missing, EPW_FIELDS};
use dryfront::weather::{parse_epw, read_epw, ReadOptions};

#[test]
fn field_positions_match_the_data_dictionary() {
    // 0-based index = position in the dictionary's list (N1..N5, A1, N6..): N_k is at k for k >= 6.
    assert_eq!(EPW_FIELDS, 35);
    assert_eq!(
        (
            field::YEAR,
            field::MONTH,
            field::DAY,
            field::HOUR,
            field::MINUTE
        ),
        (0, 1, 2, 3, 4)
    );
    assert_eq!(
        (
            field::DRY_BULB,
            field::DEW_POINT,
            field::RH,
            field::PRESSURE
        ),
        (6, 7, 8, 9)
    );
    assert_eq!((field::WIND_SPEED, field::PRECIP_DEPTH), (21, 33));
    assert_abs_diff_eq!(missing::TEMPERATURE, 99.9);
    assert_abs_diff_eq!(missing::RH, 999.0);
    assert_abs_diff_eq!(missing::PRESSURE, 999_999.0);
}

#[test]
fn hand_made_file_reads_back_its_known_values() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/hand_made.epw");
    let s = read_epw(&path, &ReadOptions::default()).unwrap();
    assert_eq!(s.len(), 24);
    let off = FixedOffset::west_opt(5 * 3600).unwrap();
    assert_eq!(s.site().utc_offset, off);
    assert_eq!(s.site().elevation_m, Some(12.0));
    // Hour 1 of 1 September is the hour ending 01:00; hour 24 is 00:00 of 2 September.
    assert_eq!(
        s.start(),
        off.with_ymd_and_hms(2026, 9, 1, 1, 0, 0).unwrap()
    );
    assert_eq!(
        s.time(23),
        off.with_ymd_and_hms(2026, 9, 2, 0, 0, 0).unwrap()
    );
    for k in 0..24 {
        let h = s.hour(k);
        let t = 20.0 + 0.1 * k as f64;
        assert_abs_diff_eq!(h.t_c, t, epsilon = 1e-9);
        assert_abs_diff_eq!(h.p_pa, 100_000.0 + 10.0 * k as f64, epsilon = 1e-9);
        assert_abs_diff_eq!(
            s.wind_m_s().unwrap()[k],
            2.0 + 0.1 * k as f64,
            epsilon = 1e-9
        );
        assert_abs_diff_eq!(
            s.rain_mm().unwrap()[k],
            if k == 5 { 1.5 } else { 0.0 },
            epsilon = 1e-12
        );
        if k == 10 {
            // RH missing: taken from the dew point, p_s(12 °C)/p_s(21 °C).
            let expected = saturation_pressure_pa(12.0) / saturation_pressure_pa(21.0);
            assert_abs_diff_eq!(h.rh, expected, epsilon = 1e-12);
        } else {
            assert_abs_diff_eq!(h.rh, (60.0 + k as f64) / 100.0, epsilon = 1e-12);
        }
    }
    // The one missing dry bulb was filled (linearly, which reproduces 21.2 °C here) and counted.
    assert_eq!(s.fill_counts().t, 1);
    assert_eq!(s.filled_hours(), 1);
    assert!(s.filled()[12]);
}

fn hand_made() -> String {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/hand_made.epw");
    std::fs::read_to_string(path).unwrap()
}

/// The fixture with header line `k` (1-based) replaced (`None` deletes it).
fn with_line(k: usize, new: Option<&str>) -> String {
    let mut lines: Vec<String> = hand_made().lines().map(str::to_string).collect();
    match new {
        Some(t) => lines[k - 1] = t.to_string(),
        None => {
            lines.remove(k - 1);
        }
    }
    lines.join("\n") + "\n"
}

fn error_of(text: &str, opts: &ReadOptions) -> String {
    match parse_epw(Path::new("case.epw"), text, opts) {
        Ok(s) => panic!("accepted ({} h)", s.len()),
        Err(e) => e.to_string(),
    }
}

fn error(text: &str) -> String {
    error_of(text, &ReadOptions::default())
}

#[test]
fn two_data_periods_are_refused_on_line_8() {
    let t = with_line(
        8,
        Some("DATA PERIODS,2,1,Data,Tuesday, 9/ 1, 9/ 1,More,Wednesday,9/2,9/2"),
    );
    assert_eq!(
        error(&t),
        "case.epw:8: field \"DATA PERIODS number of periods\": \"2\" must be 1: this reader reads one continuous \
         data period"
    );
}

#[test]
fn four_records_an_hour_are_refused_on_line_8() {
    let t = with_line(8, Some("DATA PERIODS,1,4,Data,Tuesday, 9/ 1, 9/ 1"));
    assert_eq!(
        error(&t),
        "case.epw:8: field \"DATA PERIODS records per hour\": \"4\" must be 1: this reader reads hourly records \
         only (sub-hourly files are not averaged)"
    );
}

#[test]
fn a_wrong_start_day_of_week_is_refused_and_a_typical_year_only_warns() {
    let t = with_line(8, Some("DATA PERIODS,1,1,Data,Monday, 9/ 1, 9/ 1"));
    assert_eq!(
        error(&t),
        "case.epw:8: field \"DATA PERIODS start day of week\": \"Monday\" does not match the first data row: \
         2026-09-01 (line 9) is a Tuesday; a typical year whose days follow no one calendar can be placed in a \
         year with --year"
    );
    // Placed in 2025 (1 September 2025 is a Monday): no mismatch, no warning. In 2027 (a Wednesday): a warning.
    let in_year = |y| ReadOptions {
        year: Some(y),
        ..ReadOptions::default()
    };
    let s = parse_epw(Path::new("case.epw"), &t, &in_year(2025)).unwrap();
    assert!(s.warnings().iter().all(|w| w.line != 8));
    let s = parse_epw(Path::new("case.epw"), &t, &in_year(2027)).unwrap();
    let w = &s.warnings()[0];
    assert_eq!(
        (w.line, w.field.as_str()),
        (8, "DATA PERIODS start day of week")
    );
    assert!(w
        .message
        .contains("2027-09-01 in the chosen year (--year) is a Wednesday"));
}

#[test]
fn a_wrong_start_date_is_refused_on_the_first_data_row() {
    let t = with_line(8, Some("DATA PERIODS,1,1,Data,Monday, 8/31, 9/ 1"));
    assert_eq!(
        error(&t),
        "case.epw:9: field \"date and hour\": \"9/1/2026 hour 1\" is not the start of the data period declared \
         on line 8 (8/31 hour 1)"
    );
    // A first row that is not hour 1 of the start day.
    let text = hand_made();
    let mut lines: Vec<&str> = text.lines().collect();
    lines.remove(8);
    let t = lines.join("\n") + "\n";
    assert!(error(&t).starts_with(
        "case.epw:9: field \"date and hour\": \"9/1/2026 hour 2\" is not the start of the data period"
    ));
}

#[test]
fn a_missing_comments_2_record_is_an_error_not_a_data_hour_eaten() {
    let t = with_line(7, None);
    assert_eq!(
        error(&t),
        "case.epw:7: found DATA PERIODS where the COMMENTS 2 record belongs: a header record is missing (the 8 \
         records are, in order: LOCATION, DESIGN CONDITIONS, TYPICAL/EXTREME PERIODS, GROUND TEMPERATURES, \
         HOLIDAYS/DAYLIGHT SAVINGS, COMMENTS 1, COMMENTS 2, DATA PERIODS)"
    );
}

#[test]
fn a_latitude_of_95_degrees_is_refused_on_line_1() {
    let t = with_line(
        1,
        Some("LOCATION,Tar Landing Demo,NC,USA,dryfront hand-made,999999,95.00,-77.00,-5.0,12.0"),
    );
    assert_eq!(
        error(&t),
        "case.epw:1: field \"LOCATION latitude\": \"95.00\" must be between -90 and 90 °"
    );
    let t = with_line(
        1,
        Some("LOCATION,Tar Landing Demo,NC,USA,dryfront hand-made,999999,35.00,-181,-5.0,12.0"),
    );
    assert!(error(&t).starts_with("case.epw:1: field \"LOCATION longitude\": \"-181\""));
}

#[test]
fn a_file_ending_before_its_declared_last_day_names_its_last_line() {
    let t = with_line(8, Some("DATA PERIODS,1,1,Data,Tuesday, 9/ 1, 9/ 2"));
    assert_eq!(
        error(&t),
        "case.epw:32: file ends here (9/1 hour 24), before the end of the data period declared on line 8 (9/2 \
         hour 24)"
    );
    // And a row after the declared end is refused where it stands.
    let extra = hand_made()
        .lines()
        .last()
        .unwrap()
        .replacen("2026,9,1,24,", "2026,9,2,1,", 1);
    let t = format!("{}{extra}\n", hand_made());
    assert_eq!(
        error(&t),
        "case.epw:33: field \"date and hour\": \"9/2 hour 1\" comes after the end of the data period declared on \
         line 8 (9/1 hour 24, line 32)"
    );
}

#[test]
fn filled_and_recomputed_hours_are_located_by_line_and_field() {
    let s = parse_epw(Path::new("case.epw"), &hand_made(), &ReadOptions::default()).unwrap();
    let got: Vec<(u64, &str, &str)> = s
        .warnings()
        .iter()
        .map(|w| (w.line, w.field.as_str(), w.message.as_str()))
        .collect();
    // k = 10 (line 19): RH 999, recomputed from the 12 °C dew point at 21.0 °C; k = 12 (line 21): dry bulb 99.9,
    // filled between lines 20 and 22.
    let rh = 100.0 * saturation_pressure_pa(12.0) / saturation_pressure_pa(21.0);
    let rh_msg =
        format!("missing: recomputed as {rh:.1} % from the dew point (12.0) and the dry bulb");
    assert_eq!(
        got,
        vec![
            (19, "relative humidity", rh_msg.as_str()),
            (
                21,
                "dry bulb",
                "missing: filled linearly between line 20 and line 22"
            ),
        ]
    );
    assert_eq!(
        s.warnings()[1].to_string(),
        "case.epw:21: field \"dry bulb\": missing: filled linearly between line 20 and line 22"
    );
}

#[test]
fn a_semicolon_file_is_named_as_such() {
    let t = hand_made().replace(',', ";");
    assert_eq!(
        error(&t),
        "case.epw:1: line is separated by ';': EPW fields are separated by commas (semicolon-separated files are \
         not read; replace ';' with ',')"
    );
}
