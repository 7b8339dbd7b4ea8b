//! The real binary's load commands (`dry`, `compare`, `starts`): a good run writes every output whole; bad input —
//! an unknown strategy, a set-point above the crop's safe limit (refused unless forced), a start outside the weather
//! record, a target not below the initial moisture, a malformed scenario — exits 2 with one clear line and writes
//! nothing.
mod common;

use std::path::{Path, PathBuf};

use common::root;

/// `p` as a command-line argument (temporary folders have UTF-8 names).
fn arg(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// The demo scenario rewritten with `edit` into `dir`, weather path made absolute.
fn scenario_with(dir: &Path, edit: impl Fn(&mut serde_json::Value)) -> PathBuf {
    let text = std::fs::read_to_string(root().join("models/scenarios/demo-load.json")).unwrap();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v["weather"] = root()
        .join("weather-samples/cypress-neck-2026/season_000.csv")
        .to_string_lossy()
        .into_owned()
        .into();
    v["grid"] = serde_json::json!({"nx": 4, "ny": 2, "nz": 8});
    edit(&mut v);
    let p = dir.join("scenario.json");
    std::fs::write(&p, v.to_string()).unwrap();
    p
}

fn fails(args: &[&str], scenario: &Path, want: &str) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let args = [args, &["--scenario", arg(scenario), "--out", arg(&out)]].concat();
    let (code, _, stderr) = common::dryfront(&args, &root());
    assert_eq!(code, 2, "{stderr}");
    assert!(stderr.contains(want), "wanted {want:?} in {stderr}");
    // Every error is one line, option errors from the parser included.
    assert!(stderr.starts_with("dryfront: error:"), "{stderr}");
    assert_eq!(stderr.trim_end().lines().count(), 1, "one line: {stderr}");
    assert!(!out.exists(), "no partial output");
}

#[test]
fn dry_writes_every_output_whole() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario_with(dir.path(), |_| {});
    let out = dir.path().join("out");
    let (code, stdout, stderr) = common::dryfront(
        &["dry", "--scenario", arg(&scenario), "--out", arg(&out)],
        &root(),
    );
    assert_eq!(code, 0, "{stderr}");
    for want in [
        "mean kernel moisture at 10.0 % w.b.: ",
        "95 % of the load at or below 10.0 % w.b.",
        "L propane",
        "kWh",
        "Cautions",
    ] {
        assert!(stdout.contains(want), "{want}: {stdout}");
    }
    let mut names: Vec<String> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            ".dryfront-outputs",
            "air_temperatures.svg",
            "airflow_top.svg",
            "drying_curves.svg",
            "final_moisture_side.svg",
            "final_moisture_top.svg",
            "outcome.json",
            "report.html",
            "series.csv",
            "summary.txt"
        ]
    );
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("outcome.json")).unwrap()).unwrap();
    assert!(json["outcome"]["hours_to_mean_target"].as_f64().unwrap() > 5.0);
    let svg = std::fs::read_to_string(out.join("final_moisture_top.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("% w.b."));
}

/// On a grid that resolves it (8 × 4 columns: 8 plenum cells across the width), the trailer's default plenum is
/// the 2-D one: the summary says so, and the load's files add the plenum's own flow map, which the report shows.
/// On the 4 × 2 grid above the default is the duct and the map is not written.
#[test]
fn dry_on_the_2d_plenum_writes_its_plenum_map() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario_with(dir.path(), |v| {
        v["grid"] = serde_json::json!({"nx": 8, "ny": 4, "nz": 6});
    });
    let out = dir.path().join("out");
    let (code, stdout, stderr) = common::dryfront(
        &["dry", "--scenario", arg(&scenario), "--out", arg(&out)],
        &root(),
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("2d plenum model (the default for this grid)"),
        "{stdout}"
    );
    let svg = std::fs::read_to_string(out.join("plenum_flow.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("m/s"), "{svg}");
    let page = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(page.contains("Air in the plenum at the start"));
}

#[test]
fn compare_marks_the_best_of_each_column() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario_with(dir.path(), |_| {});
    let (code, stdout, stderr) = common::dryfront(
        &[
            "compare",
            "--strategies",
            "none;rise=6",
            "--scenario",
            arg(&scenario),
        ],
        &root(),
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("none") && stdout.contains("rise=6") && stdout.contains('*'),
        "{stdout}"
    );
}

#[test]
fn bad_load_input_exits_2_with_one_line_and_no_output() {
    let dir = tempfile::tempdir().unwrap();
    let good = scenario_with(dir.path(), |_| {});
    fails(
        &["dry", "--strategy", "warm"],
        &good,
        "heater strategy \"warm\": unknown strategy",
    );
    fails(
        &["dry", "--strategy", "plenum=45"],
        &good,
        "is above the safe maximum of 35.0 °C",
    );
    fails(
        &["dry", "--initial-pct", "8"],
        &good,
        "--initial-pct: 8 % w.b. is not above the target",
    );
    fails(&["dry", "--initial-pct", "140"], &good, "--initial-pct");
    let d2 = tempfile::tempdir().unwrap();
    let late = scenario_with(d2.path(), |v| {
        v["start"] = "2027-03-01T12:00:00-05:00".into()
    });
    fails(&["dry"], &late, "field \"start\"");
    let d3 = tempfile::tempdir().unwrap();
    let target = scenario_with(d3.path(), |v| v["target_kernel_moisture_pct"] = 25.0.into());
    fails(&["dry"], &target, "field \"target_kernel_moisture_pct\"");
    let d4 = tempfile::tempdir().unwrap();
    let typo = scenario_with(d4.path(), |v| v["heatr"] = serde_json::json!({}));
    fails(&["dry"], &typo, "unknown field `heatr`");
    let d5 = tempfile::tempdir().unwrap();
    let crop = scenario_with(d5.path(), |v| v["crop"] = "groundnut-shelled".into());
    fails(&["dry"], &crop, "field \"crop\"");
    let d6 = tempfile::tempdir().unwrap();
    let wet = scenario_with(d6.path(), |v| {
        v["initial_kernel_moisture_pct"] = 140.0.into()
    });
    fails(&["dry"], &wet, "field \"initial_kernel_moisture_pct\"");
}

#[test]
fn forced_set_point_runs_with_a_warning() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = scenario_with(dir.path(), |v| v["max_hours"] = 6.0.into());
    let (code, _, stderr) = common::dryfront(
        &[
            "dry",
            "--strategy",
            "plenum=40",
            "--force",
            "--scenario",
            arg(&scenario),
        ],
        &root(),
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stderr.contains("warning") && stderr.contains("--force"),
        "{stderr}"
    );
}
