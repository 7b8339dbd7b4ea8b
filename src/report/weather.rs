//! Weather reports: a series in the project's CSV schema (cleaned or synthetic) and the list of values a reader
//! filled, recomputed or assumed.
use std::path::Path;

use crate::weather::series::{ReadWarning, WeatherSeries};

/// A series in the project's CSV schema (see `weather-samples/README.md`), readable by `weather::csv::read_csv`.
pub fn series_csv(series: &WeatherSeries, comments: &[String]) -> String {
    use std::fmt::Write;
    let mut s = String::with_capacity(series.len() * 64);
    let _ = writeln!(s, "# utc_offset={}", series.site().utc_offset);
    if !series.site().name.is_empty() {
        let _ = writeln!(
            s,
            "# site={}",
            series.site().name.replace(['\n', '\r'], " ")
        );
    }
    if let Some(e) = series.site().elevation_m {
        let _ = writeln!(s, "# elevation_m={e}");
    }
    for c in comments {
        let _ = writeln!(s, "# {}", c.replace(['\n', '\r'], " "));
    }
    s.push_str("timestamp,temp_c,rh_pct,pressure_kpa");
    if series.rain_mm().is_some() {
        s.push_str(",rain_mm");
    }
    if series.wind_m_s().is_some() {
        s.push_str(",wind_m_s");
    }
    s.push_str(",filled\n");
    for i in 0..series.len() {
        let _ = write!(
            s,
            "{},{:.2},{:.2},{:.3}",
            series.time(i).format("%Y-%m-%dT%H:%M:%S%:z"),
            series.t_c()[i],
            series.rh()[i] * 100.0,
            series.p_pa()[i] / 1000.0
        );
        if let Some(r) = series.rain_mm() {
            let _ = write!(s, ",{:.2}", r[i]);
        }
        if let Some(v) = series.wind_m_s() {
            let _ = write!(s, ",{:.2}", v[i]);
        }
        let _ = writeln!(s, ",{}", u8::from(series.filled()[i]));
    }
    s
}

/// The full list of a reader's warnings, one a line, under a count.
pub fn warnings_list(file: &Path, warnings: &[ReadWarning]) -> String {
    std::iter::once(format!(
        "# {} values filled, recomputed or assumed while reading {}\n",
        warnings.len(),
        file.display()
    ))
    .chain(warnings.iter().map(|w| format!("{w}\n")))
    .collect()
}
