//! Parsing speed of a full year of hourly weather (8760 rows) in each format; target < 20 ms each.
//! The EPW and CSV inputs are generated in memory (invented values); TMY3 is the bundled Greensboro file.
use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use dryfront::weather::{parse_csv, parse_epw, parse_tmy3, ReadOptions};

fn year_epw() -> String {
    let mut s = String::from("LOCATION,Bench,NC,USA,invented,0,35,-77,-5.0,10\n");
    for l in [
        "DESIGN CONDITIONS,0",
        "TYPICAL/EXTREME PERIODS,0",
        "GROUND TEMPERATURES,0",
        "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0",
        "COMMENTS 1,x",
        "COMMENTS 2,x",
        "DATA PERIODS,1,1,Data,Thursday,1/1,12/31",
    ] {
        s.push_str(l);
        s.push('\n');
    }
    let mut date = chrono::NaiveDate::from_ymd_opt(2026, 1, 1).unwrap();
    for d in 0..365 {
        for h in 1..=24 {
            let t = 15.0 + 8.0 * ((d as f64) / 58.0).sin() + 4.0 * ((h as f64) / 3.8).sin();
            s.push_str(&format!(
                "2026,{},{},{h},60,?9?9?9?9E0?9?9?9?9?9?9?9?9?9?9?9?9?9*9*9?9?9?9,{t:.1},{:.1},{},{},\
                 9999,9999,9999,9999,9999,9999,999999,999999,999999,9999,180,3.1,5,5,9999,99999,9,999999999,999,0.999,999,99,999,0,1\n",
                chrono::Datelike::month(&date), chrono::Datelike::day(&date), t - 6.0, 60 + (h % 20), 101000 + h * 10
            ));
        }
        date = date.succ_opt().unwrap();
    }
    s
}

fn year_csv() -> String {
    let mut s = String::from(
        "# utc_offset=-05:00\ntimestamp,temp_c,rh_pct,pressure_kpa,rain_mm,wind_m_s\n",
    );
    let start = chrono::NaiveDate::from_ymd_opt(2026, 1, 1)
        .unwrap()
        .and_hms_opt(0, 0, 0)
        .unwrap();
    for i in 0..8760 {
        let t = start + chrono::Duration::hours(i);
        s.push_str(&format!(
            "{},{:.2},{:.2},101.200,0.00,2.50\n",
            t.format("%Y-%m-%dT%H:%M:%S-05:00"),
            15.0 + 6.0 * (i as f64 / 40.0).sin(),
            65.0 + 20.0 * (i as f64 / 7.0).cos()
        ));
    }
    s
}

fn bench(c: &mut Criterion) {
    let opts = ReadOptions::default();
    let epw = year_epw();
    let csv = year_csv();
    let tmy = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("weather-samples/723170TYA.CSV"),
    )
    .unwrap();
    let tmy_opts = ReadOptions {
        year: Some(2026),
        ..ReadOptions::default()
    };
    // Sanity: each parses to a full year.
    assert_eq!(
        parse_epw(Path::new("b.epw"), &epw, &opts).unwrap().len(),
        8760
    );
    assert_eq!(
        parse_csv(Path::new("b.csv"), &csv, &opts).unwrap().len(),
        8760
    );
    assert_eq!(
        parse_tmy3(Path::new("t.csv"), &tmy, &tmy_opts)
            .unwrap()
            .len(),
        8760
    );
    let mut g = c.benchmark_group("parse one year (8760 h)");
    g.bench_function("epw", |b| {
        b.iter(|| parse_epw(Path::new("b.epw"), black_box(&epw), &opts).unwrap())
    });
    g.bench_function("csv", |b| {
        b.iter(|| parse_csv(Path::new("b.csv"), black_box(&csv), &opts).unwrap())
    });
    g.bench_function("tmy3", |b| {
        b.iter(|| parse_tmy3(Path::new("t.csv"), black_box(&tmy), &tmy_opts).unwrap())
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
