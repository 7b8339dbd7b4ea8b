//! One heater-strategy language everywhere. For every string in the table, the real binary is run through each
//! place that takes a heater — `dry --strategy S`, `compare --strategies S`, a buying-point file with
//! `"heater": S` under `season run`, and `season sweep --heaters S` — and must either accept it in all four, each
//! printing the same strategy (the library's `Display` of the parsed spec, which parses back to the same value), or
//! refuse it in all four with exit code 2 and the same message: the library's `HeaterSpecError` text, after each
//! command's own context (the option, or the file and `dryers[0].heater`). Strings that parse but pass the crop
//! file's safety limits are refused everywhere without `--force` and accepted everywhere with it.
mod common;

use std::path::{Path, PathBuf};

use common::root;

use dryfront::crop::Crop;
use dryfront::drying::heater::{HeaterSpecError, SafetyLimits, StrategySpec};

/// Accepted, refused by the parser (old syntax, bad numbers, bad windows, junk) and valid-but-unsafe strings.
const TABLE: &[&str] = &[
    // accepted
    "none",
    "rise=8",
    "plenum=35",
    "rh=55,max=35",
    "rise=8@20-6",
    "plenum=35@6-18",
    "rh=55,max=35@20-6",
    "rise=7.5@0-24",
    "plenum=30@22-0",
    " rise=8 ",
    "rise = 8",
    "rh=55, max=35",
    "rise=8 @ 20-6",
    "rise=0.5",
    // refused by the parser
    "rise:-5",
    "rise:8",
    "plenum:35",
    "rh:55:35",
    "rise=-5",
    "rise=0",
    "rise=31",
    "plenum=500",
    "plenum=4",
    "rise=8@20-20",
    "rise=8@25-3",
    "rise=8@20-25",
    "rise=8@20",
    "rise=8@-2-6",
    "rise=8@20-6@1-2",
    "rh=55",
    "rh=140,max=30",
    "rh=55,max=80",
    "rise=hot",
    "rise=8K",
    "rise=8,max=3",
    "rise=NaN",
    "none=0",
    "warm",
    "",
    "   ",
    // valid but above the crop's safe limits
    "plenum=45",
    "rise=10",
    "rh=55,max=40",
    "plenum=40@20-6",
];

/// The demo load on a coarse grid for 2 h (the heater check happens before the run; the run only has to finish).
fn load_scenario(dir: &Path) -> PathBuf {
    let text = std::fs::read_to_string(root().join("models/scenarios/demo-load.json")).unwrap();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v["weather"] = root()
        .join("weather-samples/cypress-neck-2026/season_000.csv")
        .to_string_lossy()
        .into_owned()
        .into();
    v["grid"] = serde_json::json!({"nx": 2, "ny": 1, "nz": 6});
    v["max_hours"] = 2.0.into();
    let p = dir.join("load.json");
    std::fs::write(&p, v.to_string()).unwrap();
    p
}

/// The small bundled buying point with every dryer's heater set to `heater`.
fn buying_point(dir: &Path, heater: &str) -> PathBuf {
    let text = std::fs::read_to_string(root().join("models/buying-points/wrenfield.json")).unwrap();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap();
    for d in v["dryers"].as_array_mut().unwrap() {
        d["heater"] = heater.into();
    }
    let p = dir.join("bp.json");
    std::fs::write(&p, v.to_string()).unwrap();
    p
}

/// What each command did: its name, the context its error shows before the message, its exit code, stdout and
/// stderr.
struct Run {
    place: &'static str,
    context: &'static str,
    code: i32,
    stdout: String,
    stderr: String,
}

fn run_everywhere(s: &str, force: bool, dir: &Path) -> Vec<Run> {
    let load = load_scenario(dir);
    let bp = buying_point(dir, s);
    let (run_out, sweep_out) = (dir.join("run"), dir.join("sweep"));
    let wrenfield = root().join("models/buying-points/wrenfield.json");
    let arg = |p: &Path| p.to_str().unwrap().to_string();
    let dry = vec!["dry", "--strategy", s, "--scenario"];
    let compare = vec!["compare", "--strategies", s, "--scenario"];
    let season = vec![
        "season",
        "run",
        "--drier",
        "rate-rule",
        "--generate",
        "--loads",
        "4",
        "--scenario",
    ];
    let sweep = vec![
        "season",
        "sweep",
        "--drier",
        "rate-rule",
        "--heaters",
        s,
        "--dryers",
        "3",
        "--policies",
        "fcfs",
        "--seasons",
        "1",
        "--loads",
        "4",
        "--scenario",
    ];
    let mut runs = Vec::new();
    for (place, context, head, tail) in [
        ("dry", "--strategy", dry, vec![arg(&load)]),
        ("compare", "--strategies", compare, vec![arg(&load)]),
        (
            "season run",
            "\"dryers[0].heater\"",
            season,
            vec![arg(&bp), "--out".into(), arg(&run_out)],
        ),
        (
            "season sweep",
            "--heaters",
            sweep,
            vec![arg(&wrenfield), "--out".into(), arg(&sweep_out)],
        ),
    ] {
        let mut args = head;
        args.extend(tail.iter().map(String::as_str));
        if force {
            args.push("--force");
        }
        let (code, stdout, stderr) = common::dryfront(&args, &root());
        runs.push(Run {
            place,
            context,
            code,
            stdout,
            stderr,
        });
    }
    runs
}

/// What the library says of `s`: the parsed spec, or the one message every command must show.
fn library_verdict(
    s: &str,
    limits: &SafetyLimits,
    force: bool,
) -> Result<StrategySpec, HeaterSpecError> {
    let spec: StrategySpec = s.parse()?;
    spec.check_safety(limits, force)?;
    Ok(spec)
}

fn check(s: &str, force: bool, limits: &SafetyLimits) -> Result<StrategySpec, HeaterSpecError> {
    let dir = tempfile::tempdir().unwrap();
    let verdict = library_verdict(s, limits, force);
    for r in run_everywhere(s, force, dir.path()) {
        let (stdout, stderr) = (&r.stdout, &r.stderr);
        let at = format!("{:?} (force {force}) in {}", s, r.place);
        match &verdict {
            Ok(spec) => {
                assert_eq!(r.code, 0, "{at}: refused: {stderr}");
                let shown = match r.place {
                    "dry" => format!("— {spec}\n"),
                    "compare" => format!("\n{spec} "),
                    "season run" => format!("heaters: W1 {spec}; W2 {spec}; W3 {spec}\n"),
                    _ => format!("heater {spec}, policy fcfs"),
                };
                assert!(
                    stdout.contains(&shown),
                    "{at}: wanted {shown:?} in {stdout}"
                );
            }
            Err(e) => {
                assert_eq!(r.code, 2, "{at}: {stdout}{stderr}");
                let first = stderr.lines().next().unwrap_or("");
                let message = e.to_string();
                let (prefix, rest) = first
                    .split_once(&message)
                    .unwrap_or_else(|| panic!("{at}: wanted {message:?} in {stderr}"));
                assert_eq!(rest, "", "{at}: the message ends the line: {first}");
                assert!(
                    prefix.contains(r.context),
                    "{at}: context {:?}: {first}",
                    r.context
                );
            }
        }
    }
    verdict
}

#[test]
fn every_place_accepts_and_refuses_the_same_strings_with_the_same_message() {
    assert!(TABLE.len() >= 20);
    let crop = Crop::load_named("peanut-inshell").unwrap();
    let limits = SafetyLimits::from(&crop.safety);
    let (mut accepted, mut refused, mut unsafe_valid) = (0, 0, 0);
    for s in TABLE {
        let verdict = check(s, false, &limits);
        match verdict {
            Ok(spec) => {
                accepted += 1;
                assert_eq!(spec.to_string().parse::<StrategySpec>(), Ok(spec), "{s:?}");
            }
            Err(_) => refused += 1,
        }
        if verdict.is_err() && s.parse::<StrategySpec>().is_ok() {
            // Valid but unsafe: accepted everywhere once forced.
            unsafe_valid += 1;
            assert!(check(s, true, &limits).is_ok(), "{s:?} with --force");
        }
    }
    // The table covers all three kinds (a guard against a table that drifts into one of them).
    assert!(
        accepted >= 10 && refused >= 20 && unsafe_valid >= 4,
        "{accepted} {refused} {unsafe_valid}"
    );
}
