//! The EPW reader must take each quantity from the field the format defines, honour the missing-value codes, and
//! place hour-ending rows at the right local time.
//!
//! Source for positions and codes: EnergyPlus *Auxiliary Programs*, "Weather Converter Program", section
//! "EnergyPlus Weather File (EPW) Data Dictionary" (N1 year … N5 minute, A1 flags, N6 dry bulb, N7 dew point, N8 RH,
//! N9 station pressure, N20 wind direction, N21 wind speed, N33 liquid precipitation depth, N34 quantity; a value
//! at or above `\missing` is missing: 99.9 °C, 999 %, 999999 Pa, 999 m/s, 999 mm). The same column order is in
//! pvlib 0.16.1 `pvlib/iotools/epw.py` (`colnames`), checked by hand.
//! Fixture: `tests/fixtures/hand_made.epw` (invented values: hour k (0-based) has dry bulb 20 + 0.1k °C, dew point
//! 12 °C, RH 60 + k %, pressure 100000 + 10k Pa, wind 2 + 0.1k m/s, 1.5 mm of rain at k = 5; the other fields hold
//! missing codes that would fail the range checks if read in place of these; k = 10 has RH 999, k = 12 dry bulb 99.9).
use std::path::Path;

use approx::assert_abs_diff_eq;
use chrono::{FixedOffset, TimeZone};
use dryfront::props::psychro::saturation_pressure_pa;
use dryfront::weather::epw::{field, missing, EPW_FIELDS};
use dryfront::weather::{read_epw, ReadOptions};

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
    assert_eq!(s.len(), 30);
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
    for k in 0..30 {
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
