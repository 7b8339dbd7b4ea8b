//! Inputs are sacred: every command with an output refuses, with one line and exit 2, an output that is, holds or
//! lies inside a file it reads — named directly, through a symbolic link or through `..` — and every input is
//! byte-identical afterwards, after a refusal and after a whole run.
mod common;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use common::root;

/// Copies of the files the commands read, in `dir/in`.
fn inputs(dir: &Path) -> PathBuf {
    let d = dir.join("in");
    std::fs::create_dir_all(d.join("sub")).unwrap();
    let copy = |from: &str, to: &str| std::fs::copy(root().join(from), d.join(to)).unwrap();
    copy(
        "weather-samples/cypress-neck-2026/season_000.csv",
        "weather.csv",
    );
    copy("models/buying-points/bramble-fork.json", "bp.json");
    copy("models/containers/trailer-6m.json", "container.json");
    copy("models/fans/vane-3kw.json", "fan.json");
    copy("weather-samples/cypress-neck-stats.json", "stats.json");
    copy("survey-samples/trailer-6m-bramble-fork.csv", "survey.csv");
    let scenario = std::fs::read_to_string(root().join("models/scenarios/demo-load.json"))
        .unwrap()
        .replace(
            "../../weather-samples/cypress-neck-2026/season_000.csv",
            "weather.csv",
        );
    std::fs::write(d.join("scenario.json"), scenario).unwrap();
    std::fs::write(
        d.join("samples.csv"),
        "time,location,x_m,y_m,depth_m,measure,moisture_wb_pct,method\n\
         2026-09-18T21:00:00-05:00,composite,,,,kernel,19.5,meter\n\
         2026-09-19T03:00:00-05:00,composite,,,,kernel,18.0,meter\n",
    )
    .unwrap();
    // A load on air and the board, their weather beside them as in `examples/at-the-dryer/`.
    copy("examples/at-the-dryer/observed.csv", "observed.csv");
    copy("examples/at-the-dryer/forecast.csv", "forecast.csv");
    let status = std::fs::read_to_string(root().join("examples/at-the-dryer/status-bf06.json"))
        .unwrap()
        // The scenario named by path (a status file's scenario is a bundled name or a path as given).
        .replace(
            "\"demo-load\"",
            &format!("{:?}", d.join("scenario.json").display().to_string()),
        );
    std::fs::write(d.join("status.json"), status).unwrap();
    let board = std::fs::read_to_string(root().join("examples/at-the-dryer/board.json"))
        .unwrap()
        .replace("../../models/buying-points/bramble-fork.json", "bp.json");
    std::fs::write(d.join("board.json"), board).unwrap();
    std::os::unix::fs::symlink(&d, dir.join("link")).unwrap();
    d
}

fn bytes(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_file())
        .map(|p| (p.clone(), std::fs::read(&p).unwrap()))
        .collect()
}

/// Each command, given the input folder.
fn commands(d: &Path) -> Vec<(&'static str, Vec<String>)> {
    let p = |n: &str| d.join(n).to_string_lossy().into_owned();
    let s = |v: &[&str]| v.iter().map(|x| x.to_string()).collect::<Vec<_>>();
    let with = |mut a: Vec<String>, b: &[String]| {
        a.extend_from_slice(b);
        a
    };
    vec![
        (
            "dry",
            with(s(&["dry", "--scenario"]), &[p("scenario.json")]),
        ),
        (
            "compare",
            with(
                s(&["compare", "--strategies", "none;rise=5", "--scenario"]),
                &[p("scenario.json")],
            ),
        ),
        (
            "starts",
            with(
                s(&["starts", "--count", "2", "--scenario"]),
                &[p("scenario.json")],
            ),
        ),
        (
            "design",
            vec![
                "design".into(),
                "--scenario".into(),
                p("scenario.json"),
                "--variants".into(),
                format!(
                    "scenario; container={},fan={}",
                    p("container.json"),
                    p("fan.json")
                ),
            ],
        ),
        (
            "airflow",
            vec![
                "airflow".into(),
                "--container".into(),
                p("container.json"),
                "--fan".into(),
                p("fan.json"),
                "--nx".into(),
                "8".into(),
                "--ny".into(),
                "4".into(),
                "--nz".into(),
                "6".into(),
            ],
        ),
        (
            "airflow fit",
            vec![
                "airflow".into(),
                "fit".into(),
                "--survey".into(),
                p("survey.csv"),
                "--container".into(),
                p("container.json"),
                "--fan".into(),
                p("fan.json"),
                "--nx".into(),
                "16".into(),
                "--ny".into(),
                "6".into(),
                "--nz".into(),
                "6".into(),
            ],
        ),
        (
            "status",
            with(s(&["status", "--members", "2"]), &[p("status.json")]),
        ),
        (
            "board",
            with(
                s(&["board", "--members", "2", "--horizon-h", "12"]),
                &[p("board.json")],
            ),
        ),
        (
            "season run",
            with(
                s(&["season", "run", "--generate", "--loads", "5", "--weather"]),
                &[p("weather.csv"), "--scenario".into(), p("bp.json")],
            ),
        ),
        (
            "season sweep",
            with(
                s(&[
                    "season",
                    "sweep",
                    "--seasons",
                    "1",
                    "--loads",
                    "5",
                    "--dryers",
                    "3",
                    "--weather-stats",
                ]),
                &[p("stats.json"), "--scenario".into(), p("bp.json")],
            ),
        ),
        (
            "calibrate",
            vec![
                "calibrate".into(),
                "--fit".into(),
                "kernel-rate".into(),
                "--load".into(),
                p("scenario.json"),
                p("samples.csv"),
            ],
        ),
        (
            "weather synth",
            with(
                s(&[
                    "weather",
                    "synth",
                    "--start",
                    "2026-09-01",
                    "--days",
                    "3",
                    "--stats",
                ]),
                &[p("stats.json")],
            ),
        ),
    ]
}

/// The binary on `args --out out`: (exit code, stdout, stderr).
fn run_with_out(args: &[String], out: &Path) -> (i32, String, String) {
    let mut all: Vec<&str> = args.iter().map(String::as_str).collect();
    all.extend(["--out", out.to_str().unwrap()]);
    common::dryfront(&all, &root())
}

fn refused(args: &[String], out: &Path, what: &str) {
    let (code, _, err) = run_with_out(args, out);
    assert_eq!(code, 2, "{what}: {err}");
    assert_eq!(err.lines().count(), 1, "{what}: one line: {err}");
    assert!(
        err.starts_with("dryfront: error: refusing"),
        "{what}: {err}"
    );
}

#[test]
fn no_command_writes_over_what_it_reads() {
    let dir = tempfile::tempdir().unwrap();
    let d = inputs(dir.path());
    let before = bytes(&d);
    for (name, args) in commands(&d) {
        for out in [
            d.clone(),
            dir.path().join("link"),
            d.join("sub/.."),
            dir.path().join("link/sub/.."),
        ] {
            refused(&args, &out, &format!("{name} --out {}", out.display()));
        }
        // The input file itself as the output folder, and a folder inside it.
        let read = args.iter().find(|a| a.ends_with(".json")).unwrap();
        refused(&args, Path::new(read), &format!("{name} --out {read}"));
        let inside = Path::new(read).join("out");
        refused(
            &args,
            &inside,
            &format!("{name} --out {}", inside.display()),
        );
        assert_eq!(bytes(&d), before, "{name}: inputs unchanged");
    }
    // `airflow fit` reads a CSV besides its JSON files: the survey itself as the output folder.
    let (_, fit) = commands(&d)
        .into_iter()
        .find(|(n, _)| *n == "airflow fit")
        .unwrap();
    refused(&fit, &d.join("survey.csv"), "airflow fit --out survey.csv");
    assert_eq!(bytes(&d), before, "airflow fit: inputs unchanged");
    // `design` reads the files its variants name: the variant's container as the output folder.
    let (_, design) = commands(&d)
        .into_iter()
        .find(|(n, _)| *n == "design")
        .unwrap();
    refused(
        &design,
        &d.join("container.json"),
        "design --out container.json",
    );
    refused(
        &design,
        &d.join("fan.json/out"),
        "design --out fan.json/out",
    );
    assert_eq!(bytes(&d), before, "design: inputs unchanged");
    // `weather summary --out FILE` writes files, not a folder: the weather file, directly and by link and `..`.
    let summary = |out: PathBuf| {
        let args = vec![
            "weather".to_string(),
            "summary".into(),
            d.join("weather.csv").to_string_lossy().into_owned(),
        ];
        refused(
            &args,
            &out,
            &format!("weather summary --out {}", out.display()),
        );
    };
    summary(d.join("weather.csv"));
    summary(dir.path().join("link/weather.csv"));
    summary(d.join("sub/../weather.csv"));
    // Its warnings list sits beside it: `weather.warnings.txt` from `--out weather.txt` must not hit an input.
    std::fs::copy(d.join("weather.csv"), d.join("weather.warnings.txt")).unwrap();
    let args = [
        "weather".to_string(),
        "summary".into(),
        d.join("weather.warnings.txt")
            .to_string_lossy()
            .into_owned(),
    ];
    let (code, _, err) = run_with_out(&args, &d.join("weather.txt"));
    assert_eq!(code, 2, "{err}");
    std::fs::remove_file(d.join("weather.warnings.txt")).unwrap();
    assert_eq!(bytes(&d), before, "inputs unchanged");
}

#[test]
fn the_newest_commands_leave_their_inputs_as_they_were() {
    // A whole run of each, its set written beside the inputs: every input byte-identical afterwards.
    let dir = tempfile::tempdir().unwrap();
    let d = inputs(dir.path());
    let before = bytes(&d);
    for (name, args) in commands(&d)
        .into_iter()
        .filter(|(n, _)| ["status", "board", "calibrate", "airflow fit"].contains(n))
    {
        let out = dir.path().join(format!("out-{}", name.replace(' ', "-")));
        let (code, _, err) = run_with_out(&args, &out);
        assert_eq!(code, 0, "{name}: {err}");
        assert!(out.join("report.html").is_file(), "{name}: no report.html");
        assert_eq!(bytes(&d), before, "{name}: inputs unchanged after a run");
    }
}
