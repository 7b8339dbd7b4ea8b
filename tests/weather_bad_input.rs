//! Malformed weather files must be refused with a message naming the file, the line and the field (or say why the
//! file as a whole is unreadable), through the library and through the binary (exit code 2, no panic); a few
//! harmless variations (UTF-8 byte-order mark, CRLF line ends, a dew point a hair above the dry bulb) are accepted.
//! A semicolon-delimited CSV is refused with a message saying that commas are expected. Random and mutated files
//! never panic any reader (proptest).
mod common;

use std::path::{Path, PathBuf};

use dryfront::weather::{self, ReadOptions};
use proptest::prelude::*;

const HDR: &str = "timestamp,temp_c,rh_pct\n";

/// `n` good CSV rows from 2026-09-01 00:00 -05:00, hour by hour.
fn rows(n: usize) -> String {
    (0..n)
        .map(|h| {
            format!(
                "2026-09-01T{:02}:00-05:00,{:.1},{}\n",
                h,
                20.0 + h as f64 * 0.2,
                60 + h
            )
        })
        .collect()
}

fn epw_header() -> String {
    let mut s = String::from("LOCATION,Test,NC,USA,invented,0,35,-77,-5.0,10\n");
    for l in [
        "DESIGN CONDITIONS,0",
        "TYPICAL/EXTREME PERIODS,0",
        "GROUND TEMPERATURES,0",
        "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0",
        "COMMENTS 1,x",
        "COMMENTS 2,x",
        "DATA PERIODS,1,1,Data,Tuesday,9/1,9/1",
    ] {
        s.push_str(l);
        s.push('\n');
    }
    s
}

fn epw_row(hour: u32, t: &str, rh: &str) -> String {
    let mut f: Vec<String> = vec![
        "2026".into(),
        "9".into(),
        "1".into(),
        hour.to_string(),
        "60".into(),
        "?".into(),
        t.into(),
        "10.0".into(),
        rh.into(),
        "101000".into(),
    ];
    f.extend(std::iter::repeat_n("0".to_string(), 25));
    f.join(",") + "\n"
}

/// A whole day of EPW rows (the header's data period is 9/1 to 9/1), with row `hour` given dry bulb `t`.
fn epw_day_with(hour: u32, t: &str) -> String {
    (1..=24)
        .map(|h| epw_row(h, if h == hour { t } else { "20.0" }, "60"))
        .collect()
}

fn tmy3(time: &str) -> String {
    let hdr =
        "Date (MM/DD/YYYY),Time (HH:MM),Dry-bulb (C),Dew-point (C),RHum (%),Pressure (mbar)\n";
    format!("723170,\"TEST\",NC,-5.0,36.1,-79.9,273\n{hdr}01/01/1988,01:00,10.0,6.1,77,993\n01/01/1988,{time},10.0,6.1,77,993\n")
}

/// (file name, contents, substrings the error must contain: line and field).
fn bad_cases() -> Vec<(&'static str, Vec<u8>, Vec<&'static str>)> {
    let c = |s: String| s.into_bytes();
    vec![
        ("truncated.csv", c(format!("{HDR}{}2026-09-01T02:00-05:00,20.5\n", rows(2))), vec![":4:", "expected 3 fields as in the header, found 2"]),
        ("extra_column.csv", c(format!("{HDR}{}2026-09-01T02:00-05:00,20.5,60,7\n", rows(2))), vec![":4:", "found 4"]),
        ("text_in_number.csv", c(format!("{HDR}{}2026-09-01T02:00-05:00,warm,60\n", rows(2))), vec![":4:", "field \"temp_c\": \"warm\" is not a number"]),
        ("duplicate_hour.csv", c(format!("{HDR}{}2026-09-01T01:00-05:00,20.5,60\n", rows(2))), vec![":4:", "field \"timestamp\"", "duplicate hour (same as line 3)"]),
        ("out_of_order.csv", c(format!("{HDR}{}2026-09-01T00:30-05:00,20.5,60\n", rows(3))), vec![":5:", "field \"timestamp\"", "not on the hourly grid"]),
        ("backwards.csv", c(format!("{HDR}{}2026-09-01T00:00-05:00,20.5,60\n", rows(3))), vec![":5:", "field \"timestamp\"", "out of order"]),
        ("rh_140.csv", c(format!("{HDR}{}2026-09-01T02:00-05:00,20.5,140\n", rows(2))), vec![":4:", "field \"rh_pct\": \"140\" must be between 0 and 100 %"]),
        ("t_75.csv", c(format!("{HDR}{}2026-09-01T02:00-05:00,75,60\n", rows(2))), vec![":4:", "field \"temp_c\": \"75\" must be between -50 and 60 °C"]),
        ("t_f_200.csv", c("timestamp,temp_f,rh_pct\n2026-09-01T00:00-05:00,200,50\n".into()), vec![":2:", "field \"temp_f\": \"200\" must be between -58 and 140 °F"]),
        ("dew_above.csv", c("timestamp,temp_c,dew_point_c\n2026-09-01T00:00-05:00,20.0,19.0\n2026-09-01T01:00-05:00,20.0,21.0\n".into()), vec![":3:", "field \"dew_point_c\": \"21.0\" is above the dry bulb (20.0 °C) by more than 0.5 K"]),
        ("empty.csv", Vec::new(), vec!["empty.csv", "empty file"]),
        ("semicolon.csv", c("timestamp;temp_c;rh_pct\n2026-09-01T00:00-05:00;20;60\n".into()), vec![":1:", "expects comma-separated values"]),
        ("gap_too_long.csv", c(format!("{HDR}{}2026-09-01T07:00-05:00,20.5,60\n", rows(2))), vec![":4:", "field \"timestamp\"", "5 missing hours, more than the 3 h"]),
        ("value_gap_too_long.csv", c(format!("{HDR}{}{}", rows(1), (1..6).map(|h| format!("2026-09-01T{h:02}:00-05:00,20,{}\n", if h < 5 { "" } else { "60" })).collect::<String>())), vec![":3:", "field \"rh_pct\"", "gap of 4 missing hours"]),
        ("missing_column.csv", c("timestamp,temp_c\n2026-09-01T00:00-05:00,20\n".into()), vec![":1:", "missing required column \"rh_pct\""]),
        ("unknown_column.csv", c("timestamp,temp,rh_pct\n2026-09-01T00:00-05:00,20,50\n".into()), vec![":1:", "unknown column \"temp\""]),
        ("no_offset.csv", c(format!("{HDR}2026-09-01T00:00,20,50\n")), vec![":2:", "field \"timestamp\"", "has no UTC offset"]),
        ("bad_timestamp.csv", c(format!("{HDR}{}2026-09-31T02:00-05:00,20,50\n", rows(2))), vec![":4:", "field \"timestamp\"", "not an ISO 8601 time"]),
        ("gap_at_start.csv", c(format!("{HDR}2026-09-01T00:00-05:00,,50\n{}", &rows(3)[rows(1).len()..])), vec![":2:", "field \"temp_c\"", "start of the file"]),
        ("not_utf8.csv", [HDR.as_bytes(), b"2026-09-01T00:00-05:00,2\xff,50\n"].concat(), vec![":2:", "not UTF-8"]),
        ("hour_25.epw", c(format!("{}{}{}", epw_header(), epw_row(1, "20.0", "60"), epw_row(25, "20.0", "60"))), vec![":10:", "field \"hour\": \"25\" must be between 1 and 24"]),
        ("rh_140.epw", c(format!("{}{}{}", epw_header(), epw_row(1, "20.0", "60"), epw_row(2, "20.0", "140"))), vec![":10:", "field \"relative humidity\": \"140\""]),
        ("short_row.epw", c(format!("{}{}2026,9,1,2,60,?,20\n", epw_header(), epw_row(1, "20.0", "60"))), vec![":10:", "expected 35 fields in an EPW data row, found 7"]),
        ("no_location.epw", c(format!("HELLO\n{}", epw_row(1, "20", "50"))), vec![":1:", "LOCATION"]),
        ("missing_first.epw", c(format!("{}{}", epw_header(), epw_day_with(1, "99.9"))), vec![":9:", "field \"dry bulb\"", "start of the file"]),
        ("header_only.epw", c(epw_header()), vec!["header_only.epw", "no data rows"]),
        ("bad_time.csv", c(tmy3("25:00")), vec![":4:", "field \"Time (HH:MM)\": \"25:00\""]),
        ("bad_drybulb.csv", c(tmy3("02:00").replace("01/01/1988,02:00,10.0", "01/01/1988,02:00,x")), vec![":4:", "field \"Dry-bulb (C)\": \"x\" is not a number"]),
    ]
}

fn write_case(dir: &Path, name: &str, bytes: &[u8]) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, bytes).unwrap();
    p
}

fn read(p: &Path) -> Result<weather::WeatherSeries, dryfront::error::InputError> {
    let opts = ReadOptions {
        year: Some(2025),
        ..ReadOptions::default()
    };
    weather::read(p, None, &opts).map(|(s, _)| s)
}

#[test]
fn each_malformed_file_gets_its_precise_error() {
    let dir = tempfile::tempdir().unwrap();
    let cases = bad_cases();
    assert!(cases.len() >= 15);
    for (name, bytes, want) in cases {
        let p = write_case(dir.path(), name, &bytes);
        let msg = match read(&p) {
            Ok(s) => panic!("{name}: accepted ({} h)", s.len()),
            Err(e) => e.to_string(),
        };
        if std::env::var_os("SHOW_WEATHER_ERRORS").is_some() {
            eprintln!("{msg}");
        }
        assert!(
            msg.contains(name),
            "{name}: message does not name the file: {msg}"
        );
        for w in want {
            assert!(msg.contains(w), "{name}: expected {w:?} in: {msg}");
        }
    }
}

#[test]
fn the_binary_exits_2_with_the_message_and_no_panic() {
    let dir = tempfile::tempdir().unwrap();
    for (name, bytes, want) in bad_cases() {
        let p = write_case(dir.path(), name, &bytes);
        let out_csv = dir.path().join(format!("{name}.out.csv"));
        let (code, _, err) = common::dryfront(
            &[
                "weather",
                "summary",
                p.to_str().unwrap(),
                "--out",
                out_csv.to_str().unwrap(),
            ],
            &common::root(),
        );
        assert_eq!(code, 2, "{name}: {err}");
        assert!(!err.contains("panicked"), "{name}: {err}");
        assert!(err.starts_with("dryfront: error: "), "{name}: {err}");
        assert_eq!(err.lines().count(), 1, "{name}: one line expected: {err}");
        assert!(err.contains(want[0]), "{name}: {err}");
        assert!(!out_csv.exists(), "{name}: partial output left behind");
    }
}

#[test]
fn bom_crlf_and_a_dew_point_within_tolerance_are_accepted() {
    let dir = tempfile::tempdir().unwrap();
    let bom = write_case(
        dir.path(),
        "bom.csv",
        format!("\u{feff}{HDR}{}", rows(3)).as_bytes(),
    );
    assert_eq!(read(&bom).unwrap().len(), 3);
    let crlf = write_case(
        dir.path(),
        "crlf.csv",
        format!("# utc_offset=-05:00\r\n{HDR}{}", rows(3))
            .replace('\n', "\r\n")
            .as_bytes(),
    );
    assert_eq!(read(&crlf).unwrap().len(), 3);
    let crlf_epw = write_case(
        dir.path(),
        "crlf.epw",
        format!("{}{}", epw_header(), epw_day_with(0, ""))
            .replace('\n', "\r\n")
            .as_bytes(),
    );
    assert_eq!(read(&crlf_epw).unwrap().len(), 24);
    // Dew point 0.4 K above the dry bulb: within the 0.5 K tolerance, RH clamped to 100 %.
    let dew = write_case(
        dir.path(),
        "dew.csv",
        b"timestamp,temp_c,dew_point_c\n2026-09-01T00:00-05:00,20.0,20.4\n",
    );
    let s = read(&dew).unwrap();
    approx::assert_abs_diff_eq!(s.rh()[0], 1.0, epsilon = 1e-12);
    // Daylight-saving labels (-04:00) in a standard-time (-05:00) site: compared as instants, stored in -05:00.
    let dst = write_case(dir.path(), "dst.csv", b"# utc_offset=-05:00\ntimestamp,temp_c,rh_pct\n2026-09-01T01:00-04:00,20,50\n2026-09-01T01:00,21,50\n");
    let s = read(&dst).unwrap();
    assert_eq!(s.len(), 2);
    assert_eq!(s.start().to_rfc3339(), "2026-09-01T00:00:00-05:00");
    // A short gap (2 missing rows) is filled and counted, never silently.
    let gap = write_case(
        dir.path(),
        "gap.csv",
        format!("{HDR}{}2026-09-01T04:00-05:00,21,60\n", rows(2)).as_bytes(),
    );
    let s = read(&gap).unwrap();
    assert_eq!(s.len(), 5);
    assert_eq!(s.fill_counts().missing_rows, 2);
    assert_eq!(s.filled_hours(), 2);
}

#[test]
fn the_binary_refuses_to_overwrite_its_input() {
    let dir = tempfile::tempdir().unwrap();
    let p = write_case(
        dir.path(),
        "keep.csv",
        format!("{HDR}{}", rows(3)).as_bytes(),
    );
    let before = std::fs::read(&p).unwrap();
    let file = p.to_str().unwrap();
    let (code, _, err) = common::dryfront(
        &["weather", "summary", file, "--out", file],
        &common::root(),
    );
    assert_eq!(code, 2);
    assert!(
        err.contains("refusing to write") && err.contains("it is the input file"),
        "{err}"
    );
    assert_eq!(std::fs::read(&p).unwrap(), before);
}

fn seeds() -> Vec<String> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let tmy: String = std::fs::read_to_string(root.join("weather-samples/723170TYA.CSV"))
        .unwrap()
        .lines()
        .take(40)
        .map(|l| format!("{l}\n"))
        .collect();
    vec![
        format!("# utc_offset=-05:00\ntimestamp,temp_c,rh_pct,dew_point_c,pressure_kpa,rain_mm,wind_m_s,filled\n{}",
            (0..12).map(|h| format!("2026-09-01T{h:02}:00,{},{},10,101.2,0,2,0\n", 15 + h, 50 + h)).collect::<String>()),
        std::fs::read_to_string(root.join("tests/fixtures/hand_made.epw")).unwrap(),
        tmy,
    ]
}

fn mutate(text: &str, ops: &[(u8, usize, char)]) -> String {
    let mut s: Vec<char> = text.chars().collect();
    for &(op, pos, ch) in ops {
        if s.is_empty() {
            s.push(ch);
            continue;
        }
        let i = pos % s.len();
        match op % 4 {
            0 => s[i] = ch,
            1 => s.insert(i, ch),
            2 => {
                s.remove(i);
            }
            _ => {
                // Duplicate a stretch (repeats lines or fields).
                let j = (i + 40).min(s.len());
                let dup: Vec<char> = s[i..j].to_vec();
                s.splice(i..i, dup);
            }
        }
    }
    s.into_iter().collect()
}

fn all_readers(text: &str) {
    let p = Path::new("fuzz.txt");
    let opts = ReadOptions {
        year: Some(2025),
        ..ReadOptions::default()
    };
    let _ = weather::parse_csv(p, text, &opts);
    let _ = weather::parse_epw(p, text, &opts);
    let _ = weather::parse_tmy3(p, text, &opts);
    let _ = weather::parse_epw(p, text, &ReadOptions::default());
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 400, ..ProptestConfig::default() })]
    #[test]
    fn readers_never_panic_on_random_text(text in "[0-9,;:.\\-+ TZ#=\\n\\r\u{feff}a-z\u{e9}]{0,300}") {
        all_readers(&text);
    }

    #[test]
    fn readers_never_panic_on_mutated_files(
        which in 0usize..3,
        ops in proptest::collection::vec((any::<u8>(), any::<usize>(), prop::sample::select(vec![',', ';', '\n', '\r', '-', '9', '.', 'e', '#', ':', 'x', ' ', '\u{feff}', 'é', '"'])), 1..12),
    ) {
        let seeds = seeds();
        all_readers(&mutate(&seeds[which], &ops));
    }
}
