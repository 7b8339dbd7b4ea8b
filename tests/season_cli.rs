//! The real binary: `season run` and `season sweep` write their outputs and a short summary; bad input exits
//! non-zero with one line naming the file, line and field, and leaves no output behind.

mod common;

use std::path::Path;

/// `p` as a command-line argument (temporary folders have UTF-8 names).
fn arg(p: &Path) -> &str {
    p.to_str().unwrap()
}

fn scenario() -> String {
    format!(
        "{}/models/buying-points/wrenfield.json",
        env!("CARGO_MANIFEST_DIR")
    )
}

#[test]
fn run_with_generated_arrivals_writes_every_output() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let (code, stdout, stderr) = common::dryfront(
        &[
            "season",
            "run",
            "--scenario",
            &scenario(),
            "--generate",
            "--seed",
            "4",
            "--loads",
            "80",
            "--policy",
            "wettest",
            "--out",
            arg(&out),
        ],
        &common::root(),
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("drier: deep-bed model"), "{stdout}");
    assert!(stdout.contains("80 arrived"), "{stdout}");
    for f in [
        "schedule.csv",
        "daily.csv",
        "kpis.csv",
        "gantt.svg",
        "queue.svg",
        "arrivals.csv",
        "report.html",
    ] {
        assert!(out.join(f).is_file(), "{f} missing");
    }
    let schedule = std::fs::read_to_string(out.join("schedule.csv")).unwrap();
    assert_eq!(schedule.lines().count(), 81, "header + one row per load");
    // The written arrivals read back and give the same schedule.
    let out2 = dir.path().join("again");
    let (code, _, stderr) = common::dryfront(
        &[
            "season",
            "run",
            "--scenario",
            &scenario(),
            "--policy",
            "wettest",
            "--arrivals",
            arg(&out.join("arrivals.csv")),
            "--out",
            arg(&out2),
        ],
        &common::root(),
    );
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(
        std::fs::read_to_string(out2.join("schedule.csv")).unwrap(),
        schedule
    );
}

fn fails_cleanly(args: &[&str], arrivals: Option<(&str, &str)>, want: &str) {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let file = arrivals.map(|(name, text)| {
        let p = dir.path().join(name);
        std::fs::write(&p, text).unwrap();
        p
    });
    let mut all = args.to_vec();
    if let Some(p) = &file {
        all.extend(["--arrivals", arg(p)]);
    }
    all.extend(["--out", arg(&out)]);
    let (code, _, stderr) = common::dryfront(&all, &common::root());
    assert_eq!(code, 2);
    assert!(stderr.contains(want), "{stderr}");
    assert_eq!(stderr.lines().count(), 1, "{stderr}");
    assert!(!Path::new(&out).exists(), "no partial output");
}

#[test]
fn bad_arrivals_exit_non_zero_naming_line_and_field() {
    let s = scenario();
    let base = ["season", "run", "--scenario", s.as_str()];
    fails_cleanly(
        &base,
        Some(("a.csv", "load_id,arrival,net_mass_kg,kernel_moisture_pct\nA1,2026-09-20T15:00:00-04:00,-4000,20\n")),
        "a.csv:2: field \"net_mass_kg\": \"-4000\" must be a positive mass in kg",
    );
    fails_cleanly(
        &base,
        Some((
            "b.csv",
            "load_id,arrival,kernel_moisture_pct\nA1,2026-09-20T15:00:00-04:00,20\n",
        )),
        "b.csv:1: field \"net_mass_kg\"",
    );
    fails_cleanly(
        &base,
        Some(("c.csv", "load_id,arrival,net_mass_kg,kernel_moisture_pct\nA1,2027-01-20T15:00:00-05:00,4000,20\n")),
        "c.csv:2: field \"arrival\": \"2027-01-20T15:00:00-05:00\" is outside the weather record",
    );
}

#[test]
fn bad_scenario_and_bad_options_exit_non_zero() {
    let dir = tempfile::tempdir().unwrap();
    let bp = dir.path().join("empty.json");
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(scenario()).unwrap()).unwrap();
    v["dryers"] = serde_json::json!([]);
    std::fs::write(&bp, v.to_string()).unwrap();
    let bp = bp.to_string_lossy().into_owned();
    fails_cleanly(
        &["season", "run", "--scenario", &bp, "--generate"],
        None,
        "empty.json:1: field \"dryers\": a buying point needs at least one dryer",
    );
    let s = scenario();
    fails_cleanly(
        &["season", "sweep", "--scenario", &s, "--dryers", "0..3"],
        None,
        "--dryers",
    );
    fails_cleanly(
        &[
            "season",
            "run",
            "--scenario",
            &s,
            "--generate",
            "--rain-days",
            "3,99",
        ],
        None,
        "--rain-days: \"99\" must be a season day number from 0 to 44",
    );
    fails_cleanly(
        &["season", "sweep", "--scenario", &s, "--heaters", "rise:hot"],
        None,
        "--heaters",
    );
}

#[test]
fn sweep_writes_its_table_and_names_the_smallest_count() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("sw");
    let (code, stdout, stderr) = common::dryfront(
        &[
            "season",
            "sweep",
            "--scenario",
            &scenario(),
            "--dryers",
            "2..8",
            "--policies",
            "fcfs,wait-limit",
            "--drier",
            "rate-rule",
            "--seasons",
            "6",
            "--loads",
            "100",
            "--seed",
            "3",
            "--out",
            arg(&out),
        ],
        &common::root(),
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("policy fcfs") && stdout.contains("policy wait-limit"),
        "{stdout}"
    );
    let table = std::fs::read_to_string(out.join("sweep.csv")).unwrap();
    // 7 counts × 2 policies × 1 heater × 16 figures + header.
    assert_eq!(table.lines().count(), 7 * 2 * 16 + 1);
}

/// A rate-rule sweep of Wrenfield (3 wagons in the file; the count is swept) over `dryers`, 120 loads a season.
fn sweep_stdout(dir: &Path, dryers: &str) -> String {
    let out = dir.join(dryers.replace('.', "_"));
    let (code, stdout, stderr) = common::dryfront(
        &[
            "season",
            "sweep",
            "--scenario",
            &scenario(),
            "--dryers",
            dryers,
            "--drier",
            "rate-rule",
            "--policies",
            "fcfs",
            "--seasons",
            "3",
            "--loads",
            "120",
            "--seed",
            "3",
            "--out",
            arg(&out),
        ],
        &common::root(),
    );
    assert_eq!(code, 0, "{stderr}");
    stdout
}

#[test]
fn sweep_answers_on_screen_and_says_which_way_to_widen() {
    let dir = tempfile::tempdir().unwrap();
    // One table row per case, with P10/P50/P90 triples.
    let wide = sweep_stdout(dir.path(), "1..12");
    let rows = wide
        .lines()
        .filter(|l| l.split_whitespace().nth(1) == Some("fcfs"))
        .count();
    assert_eq!(rows, 12, "{wide}");
    let n: usize = wide
        .lines()
        .find_map(|l| {
            l.split_once(": ")?
                .1
                .split(" dryers hold")
                .next()?
                .parse()
                .ok()
        })
        .unwrap_or_else(|| panic!("no smallest count in {wide}"));
    assert!(n > 1 && n <= 12, "{wide}");
    // Below that count none holds: the figures at the largest count swept and "upward".
    let low = sweep_stdout(dir.path(), &format!("1..{}", n - 1));
    assert!(
        low.contains("no dryer count swept holds") && low.contains("widen the range upward"),
        "{low}"
    );
    assert!(low.contains(&format!("at {} dryers", n - 1)), "{low}");
    // From that count up it holds at the smallest count swept: "downward", unless the smallest is 1.
    let high = sweep_stdout(dir.path(), &format!("{n}..{}", n + 1));
    assert!(high.contains("widen the range downward"), "{high}");
}

#[test]
fn deep_bed_sweep_draws_weather_per_season_and_is_labelled() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("sw");
    let (code, stdout, stderr) = common::dryfront(
        &[
            "season",
            "sweep",
            "--scenario",
            &scenario(),
            "--dryers",
            "2..3",
            "--policies",
            "fcfs",
            "--seasons",
            "2",
            "--loads",
            "25",
            "--seed",
            "9",
            "--out",
            arg(&out),
        ],
        &common::root(),
    );
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("drier: deep-bed model"), "{stdout}");
    let table = std::fs::read_to_string(out.join("sweep.csv")).unwrap();
    assert!(table.lines().count() > 2, "{table}");
}

#[test]
fn arrival_outside_the_weather_record_names_file_line_and_field() {
    // A three-day weather file (our CSV schema) and a load that arrives after it, inside the season.
    let dir = tempfile::tempdir().unwrap();
    let mut weather = String::from("# utc_offset=-05:00\ntimestamp,temp_c,rh_pct\n");
    for d in 15..18 {
        for h in 0..24 {
            weather.push_str(&format!("2026-09-{d:02}T{h:02}:00,22.0,70\n"));
        }
    }
    let wpath = dir.path().join("short.csv");
    std::fs::write(&wpath, weather).unwrap();
    let apath = dir.path().join("late.csv");
    std::fs::write(
        &apath,
        "load_id,arrival,net_mass_kg,kernel_moisture_pct\nA1,2026-09-16T15:00:00-04:00,4000,20\nA2,2026-09-25T15:00:00-04:00,4000,20\n",
    )
    .unwrap();
    let out = dir.path().join("out");
    let (code, _, stderr) = common::dryfront(
        &[
            "season",
            "run",
            "--scenario",
            &scenario(),
            "--weather",
            arg(&wpath),
            "--arrivals",
            arg(&apath),
            "--out",
            arg(&out),
        ],
        &common::root(),
    );
    assert_eq!(code, 2);
    assert!(stderr.contains("late.csv:3: field \"arrival\""), "{stderr}");
    assert!(!out.exists(), "no partial output");
}
