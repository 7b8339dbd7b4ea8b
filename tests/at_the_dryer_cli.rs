//! `status` and `board` end to end, the real binary on the demo files of `examples/at-the-dryer/`: exit 0, the
//! whole set written (with the set's list of its own files), and the figures in it sane and consistent with each other — clock times after now and equal
//! to now plus the printed hours, P10 ≤ P50 ≤ P90 and inside the members' own spread, no load on a dryer before its
//! present load is off, waits equal to start minus arrival and flagged against the limit, no load over its dryer's
//! capacity.
mod common;

use std::collections::BTreeMap;
use std::path::Path;

use chrono::{DateTime, FixedOffset};
use common::root;

fn run_ok(args: &[&str], out: &Path) -> String {
    let args = [args, &["--out", out.to_str().unwrap()]].concat();
    let (code, stdout, err) = common::dryfront(&args, &root());
    assert_eq!(code, 0, "{args:?}: {err}");
    stdout
}

fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

fn time(s: &str) -> DateTime<FixedOffset> {
    DateTime::parse_from_rfc3339(s).unwrap_or_else(|e| panic!("{s:?}: {e}"))
}

fn hours(a: DateTime<FixedOffset>, b: DateTime<FixedOffset>) -> f64 {
    (b - a).num_milliseconds() as f64 / 3.6e6
}

/// P10 ≤ P50 ≤ P90 where present, all within [lo, hi] of the members' own values.
fn ordered(what: &str, p: &serde_json::Value, lo: f64, hi: f64) {
    let v: Vec<f64> = ["p10", "p50", "p90"]
        .iter()
        .map(|k| {
            p[k].as_f64()
                .unwrap_or_else(|| panic!("{what}: {k} missing: {p}"))
        })
        .collect();
    assert!(v[0] <= v[1] && v[1] <= v[2], "{what}: {v:?}");
    assert!(
        v[0] >= lo - 1e-9 && v[2] <= hi + 1e-9,
        "{what}: {v:?} outside the members' {lo}–{hi}"
    );
}

#[test]
fn status_writes_its_set_and_a_sane_forecast() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("st");
    let printed = run_ok(
        &[
            "status",
            "examples/at-the-dryer/status-bf06.json",
            "--members",
            "6",
        ],
        &out,
    );
    assert_eq!(
        names(&out),
        [
            ".dryfront-outputs",
            "finish.svg",
            "members.csv",
            "report.html",
            "status.json"
        ]
    );
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("status.json")).unwrap()).unwrap();
    let now = time(doc["now"].as_str().unwrap());
    assert!(time(doc["on_air"].as_str().unwrap()) < now);
    let f = &doc["forecast"];
    let (mean_h, frac_h) = (
        f["mean_h"].as_f64().unwrap(),
        f["fraction_h"].as_f64().unwrap(),
    );
    assert!(mean_h > 0.0 && frac_h > 0.0, "{f}");
    assert!(f["fuel"].as_f64().unwrap() > 0.0, "{f}");
    // The members' own figures, and the percentiles inside their spread.
    let mut rd = csv::Reader::from_path(out.join("members.csv")).unwrap();
    let rows: Vec<csv::StringRecord> = rd.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), 6);
    for (col, key) in [
        (1, "ensemble_mean_h"),
        (2, "ensemble_fraction_h"),
        (3, "ensemble_fuel"),
    ] {
        let v: Vec<f64> = rows.iter().map(|r| r[col].parse().unwrap()).collect();
        let (lo, hi) = v
            .iter()
            .fold((f64::MAX, f64::MIN), |(a, b), x| (a.min(*x), b.max(*x)));
        assert!(lo >= 0.0, "{key}: {v:?}");
        ordered(key, &doc[key], lo, hi);
    }
    // Every printed clock time lies after now and is now plus the hours printed beside it (to the minute).
    let mut clocks = 0;
    for line in printed.lines() {
        for part in line.split("h → ").skip(1) {
            let h: f64 = line[..line.find(part).unwrap() - "h → ".len()]
                .split_whitespace()
                .last()
                .unwrap()
                .parse()
                .unwrap();
            let stamp: String = part
                .split_whitespace()
                .skip(1)
                .take(3)
                .collect::<Vec<_>>()
                .join(" ");
            let t = DateTime::parse_from_str(&stamp, "%Y-%m-%d %H:%M %:z")
                .unwrap_or_else(|e| panic!("{stamp:?} in {line}: {e}"));
            assert!(t > now, "{line}");
            // The hours are printed to 0.1 h, the clock to the minute.
            assert!((hours(now, t) - h).abs() <= 0.05 + 1.0 / 60.0, "{line}");
            clocks += 1;
        }
    }
    assert!(clocks >= 4, "only {clocks} clock times in\n{printed}");
    // The heater choices: the burner off burns nothing and takes longer than the load's own heater.
    let what_if = doc["what_if"].as_array().unwrap();
    let none = what_if
        .iter()
        .find(|w| w[0] == "none")
        .expect("a no-burner choice");
    assert!(none[1]["fuel"].as_f64().unwrap().abs() < 1e-9, "{none}");
    assert!(none[1]["mean_h"].as_f64().unwrap() > mean_h, "{none}");
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(
        html.contains("fuel still to burn") && html.contains("P10"),
        "report leads with the answer"
    );
}

#[test]
fn board_writes_its_set_and_a_sane_plan() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("bd");
    let printed = run_ok(
        &[
            "board",
            "examples/at-the-dryer/board.json",
            "--members",
            "4",
            "--horizon-h",
            "48",
        ],
        &out,
    );
    assert_eq!(
        names(&out),
        [".dryfront-outputs", "plan.csv", "plan.svg", "report.html"]
    );
    let board: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("examples/at-the-dryer/board.json")).unwrap(),
    )
    .unwrap();
    let now = time(board["now"].as_str().unwrap());
    let bp: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("models/buying-points/bramble-fork.json")).unwrap(),
    )
    .unwrap();
    let capacity: BTreeMap<String, f64> = bp["dryers"]
        .as_array()
        .unwrap()
        .iter()
        .map(|d| {
            (
                d["id"].as_str().unwrap().to_string(),
                d["capacity_kg"].as_f64().unwrap(),
            )
        })
        .collect();
    let limit = bp["rules"]["max_wait_h"].as_f64().unwrap();
    let mut rd = csv::Reader::from_path(out.join("plan.csv")).unwrap();
    let rows: Vec<csv::StringRecord> = rd.records().map(Result::unwrap).collect();
    let on_dryers = board["on_dryers"].as_array().unwrap().len();
    assert_eq!(
        rows.iter().filter(|r| &r[2] == "on-dryer").count(),
        on_dryers
    );
    assert!(rows.iter().any(|r| &r[2] == "planned"), "nothing planned");
    // Per dryer, in time order: each load starts after the one before is released.
    let mut last_free: BTreeMap<String, DateTime<FixedOffset>> = BTreeMap::new();
    let mut by_start: Vec<&csv::StringRecord> = rows.iter().collect();
    by_start.sort_by_key(|r| time(&r[4]));
    for r in by_start {
        let (dryer, state) = (&r[0], &r[2]);
        let (arrival, on, finish, released) = (time(&r[3]), time(&r[4]), time(&r[5]), time(&r[8]));
        assert!(finish >= now && finish > on && released >= finish, "{r:?}");
        if !r[6].is_empty() {
            assert!(time(&r[6]) <= time(&r[7]), "P10 after P90: {r:?}");
        }
        let mass: f64 = r[11].parse().unwrap();
        assert!(mass <= capacity[dryer] + 1e-9, "over capacity: {r:?}");
        if state == "planned" {
            assert!(on >= now && on >= arrival, "{r:?}");
            let wait: f64 = r[9].parse().unwrap();
            assert!((wait - hours(arrival, on)).abs() < 2e-3, "{r:?}");
            assert_eq!(&r[10] == "true", wait > limit, "{r:?}");
            if let Some(free) = last_free.get(dryer) {
                assert!(on >= *free, "on {dryer} before its load is off: {r:?}");
            }
        }
        last_free.insert(dryer.to_string(), released);
    }
    assert!(printed.contains("Plan for the yard"), "{printed}");
    let html = std::fs::read_to_string(out.join("report.html")).unwrap();
    assert!(
        html.contains("next hook-up") && html.contains("<svg"),
        "report leads with the plan"
    );
}
