//! `--units us` on every command: no SI unit is printed (nor written into `summary.txt`), and every figure printed
//! with a unit converts back to the SI run's figure within printing precision. Heater set-points on the command line
//! are read in °F under `--units us`, so the same run is asked for in each system's own words.
//!
//! Each command runs twice, `--units si` and `--units us`; the numbers of both outputs are paired in order (the two
//! outputs must have the same shape), and a pair whose units are a known SI/US pair is converted with the factors of
//! `dryfront::units` (NIST SP 811) and compared within half a unit in the last printed digit of each side. For the
//! commands of a load on air, the board, calibration and airflow fit the same is checked on `report.html` (its
//! text without pictures), and every SVG they write is checked for SI units.
mod common;

use dryfront::units::{
    J_PER_BTU, KG_PER_LB, KG_PER_SHORT_TON, L_PER_GAL, M3_PER_FT3, MM_PER_IN, M_PER_FT,
    PA_PER_IN_HG, PA_PER_IN_WATER,
};

fn run(args: &[&str], _dir: &std::path::Path) -> String {
    let (code, out, err) = common::dryfront(args, &common::root());
    assert_eq!(code, 0, "{args:?}: {err}");
    out
}

/// Tokens that name an SI unit; none may appear in a US output.
fn si_unit(token: &str) -> bool {
    const SI: &[&str] = &[
        "°C", "K", "m", "m³", "m³/min", "m/s", "kg", "kg/s", "kg/m³", "kJ/kg", "L", "L/t", "Pa",
        "kPa", "mm", "kW", "t", "MJ/kg", "kg/kg", "kJ/kg da",
    ];
    SI.contains(&token)
        || token.starts_with("kg/")
        || token.starts_with("m³")
        || token.contains("°C")
}

fn tokens(text: &str) -> Vec<&str> {
    text.split(|c: char| c.is_whitespace() || "(),;:=*".contains(c))
        .map(|t| t.trim_end_matches(['.', '%']))
        .filter(|t| !t.is_empty())
        .collect()
}

/// (value, decimals printed, the token after it) for every number in the text, in order.
fn numbers(text: &str) -> Vec<(f64, i32, String)> {
    let t = tokens(text);
    let mut out = Vec::new();
    for (i, tok) in t.iter().enumerate() {
        let tok = tok.trim_end_matches('%');
        if let Ok(v) = tok.parse::<f64>() {
            if tok.chars().any(|c| c.is_ascii_digit()) && !tok.contains('e') {
                let d = tok.split_once('.').map_or(0, |(_, f)| f.len() as i32);
                out.push((v, d, t.get(i + 1).unwrap_or(&"").to_string()));
            }
        }
    }
    out
}

/// SI value → US value for a pair of unit tokens (SI token, US token); `None` when the pair is not a conversion.
fn convert(si: &str, us: &str, v: f64) -> Option<(f64, f64)> {
    // (converted value, derivative: how much an SI rounding error moves it)
    let lin = |k: f64| Some((v * k, k));
    match (si, us) {
        ("°C", "°F") => Some((v * 1.8 + 32.0, 1.8)),
        ("K", "°F") => lin(1.8),
        ("Pa", "in") => lin(1.0 / PA_PER_IN_WATER),
        ("kPa", "in") => lin(1000.0 / PA_PER_IN_HG),
        ("m³/min", "cfm") => lin(1.0 / M3_PER_FT3),
        ("m³/min", "cfm/ft³") => lin(1.0),
        ("kg", "lb") => lin(1.0 / KG_PER_LB),
        ("L", "gal") => lin(1.0 / L_PER_GAL),
        ("L/t", "gal/ton") => lin(KG_PER_SHORT_TON / 1000.0 / L_PER_GAL),
        ("t", "ton") => lin(1000.0 / KG_PER_SHORT_TON),
        ("m", "ft") => lin(1.0 / M_PER_FT),
        ("m/s", "ft/min") => lin(60.0 / M_PER_FT),
        ("kg/s", "lb/min") => lin(60.0 / KG_PER_LB),
        ("kg/m³", "lb/ft³") => lin(M3_PER_FT3 / KG_PER_LB),
        ("m³", "ft³") => lin(1.0 / M3_PER_FT3),
        ("kJ/kg", "BTU/lb") => lin(1000.0 * KG_PER_LB / J_PER_BTU),
        ("mm", "in") => lin(1.0 / MM_PER_IN),
        _ => None,
    }
}

/// No SI unit token in any line of a US output.
fn assert_no_si(what: &str, us: &str) {
    for line in us.lines() {
        let bad: Vec<&str> = tokens(line).into_iter().filter(|t| si_unit(t)).collect();
        assert!(
            bad.is_empty(),
            "{what}: SI unit {bad:?} under --units us in: {line}"
        );
    }
}

/// Check one command's SI and US outputs; returns how many figures were converted and checked.
fn check_pair(what: &str, si: &str, us: &str) -> usize {
    assert_no_si(what, us);
    let (a, b) = (numbers(si), numbers(us));
    assert_eq!(
        a.len(),
        b.len(),
        "{what}: outputs differ in shape\n{si}\n---\n{us}"
    );
    let mut checked = 0;
    for ((vs, ds, us_si), (vu, du, unit_us)) in a.iter().zip(&b) {
        if let Some((want, k)) = convert(us_si, unit_us, *vs) {
            // Half a unit in the last printed digit of each side, the SI side's carried through the conversion.
            let tol = 0.5 * 10f64.powi(-du) + k.abs() * 0.5 * 10f64.powi(-ds) + 1e-9;
            assert!(
                (want - vu).abs() <= tol,
                "{what}: {vs} {us_si} is {want} {unit_us}, printed {vu} (tolerance {tol})"
            );
            checked += 1;
        }
    }
    checked
}

fn both(what: &str, si_args: &[&str], us_args: &[&str]) -> usize {
    let dir = tempfile::tempdir().unwrap();
    let si = run(&[si_args, &["--units", "si"]].concat(), dir.path());
    let us = run(&[us_args, &["--units", "us"]].concat(), dir.path());
    let n = check_pair(what, &si, &us);
    eprintln!("{what}: {n} figures converted and checked");
    n
}

const SMALL: &[&str] = &["--scenario", "demo-load", "--stop", "hours=6"];

#[test]
fn dry_in_us_units_and_its_summary_file() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("si"), dir.path().join("us"));
    let si = run(
        &[
            &["dry"],
            SMALL,
            &[
                "--strategy",
                "plenum=33",
                "--units",
                "si",
                "--out",
                a.to_str().unwrap(),
            ],
        ]
        .concat(),
        dir.path(),
    );
    let us = run(
        &[
            &["dry"],
            SMALL,
            &[
                "--strategy",
                "plenum=91.4",
                "--units",
                "us",
                "--out",
                b.to_str().unwrap(),
            ],
        ]
        .concat(),
        dir.path(),
    );
    // The heater set-point in °F asks for the same run (91.4 °F = 33 °C), so the figures convert one to one.
    let n = check_pair(
        "dry",
        &si.replace(a.to_str().unwrap(), "X"),
        &us.replace(b.to_str().unwrap(), "X"),
    );
    assert!(n >= 10, "only {n} figures checked");
    let read = |p: &std::path::Path| std::fs::read_to_string(p.join("summary.txt")).unwrap();
    assert!(check_pair("summary.txt", &read(&a), &read(&b)) >= 10);
}

#[test]
fn compare_and_starts_in_us_units() {
    // The compare table's units sit in its headings; the check here is that none is SI and the shape is the same.
    both(
        "compare",
        &[&["compare"], SMALL, &["--strategies", "none;rise=8"]].concat(),
        &[&["compare"], SMALL, &["--strategies", "none;rise=14.4"]].concat(),
    );
    both(
        "starts",
        &[&["starts"], SMALL, &["--count", "2"]].concat(),
        &[&["starts"], SMALL, &["--count", "2"]].concat(),
    );
}

#[test]
fn design_in_us_units() {
    // Depths on the command line are feet under --units us: 4 ft = 1.2192 m asks for the same run.
    // The table's units sit in its headings (none SI under US, same shape: `both`); its SI file, design.csv, is
    // the same for both runs but for the variant's own words.
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("si"), dir.path().join("us"));
    let (a_s, b_s) = (a.to_str().unwrap(), b.to_str().unwrap());
    let si = run(
        &[
            &["design"],
            SMALL,
            &["--variants", "scenario;depth=1.2192", "--out", a_s],
        ]
        .concat(),
        dir.path(),
    );
    let us = run(
        &[
            &["design"],
            SMALL,
            &[
                "--variants",
                "scenario;depth=4",
                "--units",
                "us",
                "--out",
                b_s,
            ],
        ]
        .concat(),
        dir.path(),
    );
    check_pair("design", &si.replace(a_s, "X"), &us.replace(b_s, "X"));
    assert!(
        us.contains("bed air (cfm)") && us.contains("lb d.m."),
        "{us}"
    );
    let csv = |p: &std::path::Path| {
        std::fs::read_to_string(p.join("design.csv"))
            .unwrap()
            .replace("depth=1.2192", "V")
            .replace("depth_1.2192", "V")
            .replace("depth=4", "V")
            .replace("depth_4", "V")
    };
    assert_eq!(csv(&a), csv(&b));
}

#[test]
fn airflow_and_props_in_us_units() {
    let airflow = [
        "airflow",
        "--container",
        "trailer-6m",
        "--fan",
        "vane-3kw",
        "--nx",
        "8",
        "--ny",
        "4",
        "--nz",
        "6",
        "--rise-k",
        "8",
    ];
    assert!(both("airflow", &airflow, &airflow) >= 12);
    // The 2-D plenum's outputs name their speeds too (coarse grid, fixed flow: a quick solve).
    let two_d = [
        "airflow",
        "--container",
        "trailer-6m",
        "--flow-m3-min",
        "200",
        "--plenum",
        "2d",
        "--nx",
        "8",
        "--ny",
        "4",
        "--nz",
        "4",
    ];
    assert!(both("airflow 2d", &two_d, &two_d) >= 12);
    // Temperatures given to props are °F under --units us: 86 °F = 30 °C, a 14.4 °F rise = 8 K.
    both(
        "props emc",
        &["props", "emc", "--temp", "30", "--rh", "60"],
        &["props", "emc", "--temp", "86", "--rh", "60"],
    );
    both(
        "props air",
        &["props", "air", "--temp", "30", "--rh", "60"],
        &["props", "air", "--temp", "86", "--rh", "60"],
    );
    let heat = |t: &'static str, r: &'static str, flow: &'static [&'static str]| {
        [
            &["props", "heat", "--temp", t, "--rh", "70", "--rise", r][..],
            flow,
        ]
        .concat()
    };
    both(
        "props heat",
        &heat("25", "8", &["--airflow-m3-min", "283.16846592"]),
        &heat("77", "14.4", &["--airflow-cfm", "10000"]),
    );
    both(
        "props pressure",
        &[
            "props",
            "pressure",
            "--depth-m",
            "1.2192",
            "--airflow-m-s",
            "0.1016",
        ],
        &[
            "props",
            "pressure",
            "--depth-ft",
            "4",
            "--airflow-cfm-ft2",
            "20",
        ],
    );
}

#[test]
fn weather_and_season_in_us_units() {
    let file = "weather-samples/723170TYA.CSV";
    let summary = [
        "weather",
        "summary",
        file,
        "--from",
        "2026-09-01",
        "--days",
        "10",
        "--daily",
    ];
    assert!(both("weather summary", &summary, &summary) >= 3);
    let dir = tempfile::tempdir().unwrap();
    let out = |n: &str| dir.path().join(n).to_str().unwrap().to_string();
    let (s1, s2, r1, r2) = (out("s1"), out("s2"), out("r1"), out("r2"));
    let synth = |o: &str, u: &str| {
        let args = [
            "weather",
            "synth",
            "--stats",
            "weather-samples/cypress-neck-stats.json",
            "--start",
            "2026-09-01",
            "--days",
            "5",
            "--out",
            o,
            "--units",
            u,
        ];
        run(&args, dir.path()).replace(o, "X")
    };
    assert!(check_pair("weather synth", &synth(&s1, "si"), &synth(&s2, "us")) >= 2);
    let season = |o: &str, u: &str| {
        let args = [
            "season",
            "run",
            "--scenario",
            "models/buying-points/bramble-fork.json",
            "--generate",
            "--loads",
            "12",
            "--drier",
            "rate-rule",
            "--out",
            o,
            "--units",
            u,
        ];
        run(&args, dir.path()).replace(o, "X")
    };
    assert!(check_pair("season run", &season(&r1, "si"), &season(&r2, "us")) >= 4);
    let sweep = |o: &str, h: &str, u: &str| -> String {
        run(
            &[
                "season",
                "sweep",
                "--scenario",
                "models/buying-points/bramble-fork.json",
                "--dryers",
                "3..4",
                "--seasons",
                "2",
                "--loads",
                "12",
                "--drier",
                "rate-rule",
                "--heaters",
                h,
                "--out",
                o,
                "--units",
                u,
            ],
            dir.path(),
        )
        .replace(o, "X")
    };
    let (w1, w2) = (out("w1"), out("w2"));
    check_pair(
        "season sweep",
        &sweep(&w1, "scenario;rise=8", "si"),
        &sweep(&w2, "scenario;rise=14.4", "us"),
    );
}

/// The text a person reads in HTML or SVG: elements' text with tags, styles and scripts removed, one element per
/// line, the few entities our writers use decoded.
fn visible_text(markup: &str) -> String {
    let mut out = String::new();
    let mut rest = markup;
    while let Some(open) = rest.find('<') {
        out.push_str(&rest[..open]);
        out.push('\n');
        let tag = &rest[open..];
        let skip_to = ["<style", "<script"]
            .iter()
            .find(|t| tag.starts_with(*t))
            .map(|t| format!("</{}>", &t[1..]));
        let end = match skip_to {
            Some(close) => tag.find(&close).map(|i| i + close.len()),
            None => tag.find('>').map(|i| i + 1),
        };
        rest = &tag[end.unwrap_or(tag.len())..];
    }
    out.push_str(rest);
    out.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&amp;", "&")
}

/// `report.html` without its pictures: the page's own words and figures.
fn page_text(dir: &std::path::Path) -> String {
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let mut text = String::new();
    let mut rest = html.as_str();
    while let Some(i) = rest.find("<svg") {
        text.push_str(&rest[..i]);
        rest = rest[i..]
            .find("</svg>")
            .map_or("", |j| &rest[i + j + "</svg>".len()..]);
    }
    text.push_str(rest);
    visible_text(&text)
}

/// A command run with `--out` in each system: its printed output and its page paired and converted, and no SI unit
/// in any of the US set's pictures. The number of figures checked.
fn with_files(what: &str, si_args: &[&str], us_args: &[&str]) -> usize {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("si"), dir.path().join("us"));
    let go = |args: &[&str], u: &str, out: &std::path::Path| {
        let o = out.to_str().unwrap();
        run(&[args, &["--units", u, "--out", o]].concat(), dir.path()).replace(o, "X")
    };
    let (si, us) = (go(si_args, "si", &a), go(us_args, "us", &b));
    let printed = check_pair(what, &si, &us);
    let page = check_pair(
        &format!("{what} report.html"),
        &page_text(&a),
        &page_text(&b),
    );
    let mut pictures = 0;
    for e in std::fs::read_dir(&b).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "svg") {
            assert_no_si(
                &format!("{what} {}", p.display()),
                &visible_text(&std::fs::read_to_string(&p).unwrap()),
            );
            pictures += 1;
        }
    }
    assert!(pictures > 0, "{what}: no picture written");
    eprintln!("{what}: {printed} printed and {page} report figures converted and checked, {pictures} pictures");
    printed + page
}

#[test]
fn status_and_board_in_us_units_with_their_files() {
    let status = [
        "status",
        "examples/at-the-dryer/status-bf06.json",
        "--members",
        "4",
    ];
    assert!(with_files("status", &status, &status) >= 10);
    // A heater choice given in each system's own units: a 14.4 °F rise is the 8 K rise.
    let mut si = status.to_vec();
    si.extend(["--what-if", "rise=8;plenum=35"]);
    let mut us = status.to_vec();
    us.extend(["--what-if", "rise=14.4;plenum=95"]);
    assert!(both("status --what-if", &si, &us) >= 10);
    let board = [
        "board",
        "examples/at-the-dryer/board.json",
        "--members",
        "2",
        "--horizon-h",
        "24",
    ];
    assert!(with_files("board", &board, &board) >= 10);
}

#[test]
fn calibrate_and_airflow_fit_in_us_units_with_their_files() {
    let calibrate = [
        "calibrate",
        "--load",
        "examples/calibration/bf-load-23.json",
        "examples/calibration/bf-load-23-samples.csv",
        "--fit",
        "kernel-rate",
    ];
    assert!(with_files("calibrate", &calibrate, &calibrate) >= 10);
    let fit = [
        "airflow",
        "fit",
        "--survey",
        "survey-samples/trailer-6m-bramble-fork.csv",
        "--container",
        "trailer-6m",
        "--fan",
        "vane-3kw",
        "--nx",
        "16",
        "--ny",
        "6",
        "--nz",
        "6",
    ];
    assert!(with_files("airflow fit", &fit, &fit) >= 40);
}

#[test]
fn the_checker_catches_an_si_unit_and_a_wrong_conversion() {
    // The checks above could fail: an SI unit left in, or a figure converted wrongly, is caught.
    let caught = |si: &'static str, us: &'static str| {
        std::panic::catch_unwind(|| check_pair("t", si, us)).is_err()
    };
    assert!(caught("air 30.0 °C", "air 86.0 °C"));
    assert!(caught("air 30.0 °C", "air 87.0 °F"));
    assert!(caught("flow 10.0 m³/min", "flow 10.0 m³/min"));
    assert!(!caught("air 30.0 °C, 12.0 h", "air 86.0 °F, 12.0 h"));
    assert_eq!(check_pair("t", "rise 8.00 K", "rise 14.40 °F"), 1);
    // The page reader keeps what a person reads and drops markup, styles and scripts.
    let page = "<style>p{margin:1m}</style><p>depth 0.30 m &amp; more</p><script>var m=1;</script>";
    assert_eq!(
        tokens(&visible_text(page)),
        ["depth", "0.30", "m", "&", "more"]
    );
}
