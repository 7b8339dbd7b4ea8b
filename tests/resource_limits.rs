//! Sizes the tool cannot hold are refused before anything is allocated: each over-large request gets one line with
//! its memory estimate and the limit, exit code 2, within a second (they used to end in an allocation abort with a
//! backtrace). The largest peak resident memory of the refused processes is read back from the kernel
//! (`getrusage(RUSAGE_CHILDREN)`, Linux reports kilobytes) and must stay under 64 MiB.
mod common;

use std::time::{Duration, Instant};

fn refused(args: &[&str]) -> String {
    let t = Instant::now();
    let (code, _, stderr) = common::dryfront(args, &common::root());
    let took = t.elapsed();
    assert_eq!(code, 2, "{args:?}: {stderr}");
    assert_eq!(stderr.trim_end().lines().count(), 1, "{args:?}: {stderr}");
    assert!(
        stderr.contains("needs about") && stderr.contains("limit is"),
        "{stderr}"
    );
    assert!(took < Duration::from_secs(1), "{args:?} took {took:?}");
    stderr
}

#[test]
fn a_huge_airflow_grid_is_refused_with_its_estimate() {
    let e = refused(&[
        "airflow",
        "--container",
        "trailer-6m",
        "--fan",
        "vane-3kw",
        "--nx",
        "4096",
        "--ny",
        "4096",
        "--nz",
        "64",
    ]);
    assert!(e.contains("--nx/--ny/--nz"), "{e}");
}

#[test]
fn a_huge_scenario_grid_is_refused_naming_the_file_and_field() {
    let dir = tempfile::tempdir().unwrap();
    let root = env!("CARGO_MANIFEST_DIR");
    let mut v: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(format!("{root}/models/scenarios/demo-load.json")).unwrap(),
    )
    .unwrap();
    v["weather"] = format!("{root}/weather-samples/cypress-neck-2026/season_000.csv").into();
    v["grid"] = serde_json::json!({ "nx": 512, "ny": 512, "nz": 200 });
    let p = dir.path().join("huge.json");
    std::fs::write(&p, serde_json::to_string_pretty(&v).unwrap()).unwrap();
    let e = refused(&["dry", "--scenario", p.to_str().unwrap()]);
    assert!(
        e.contains("huge.json") && e.contains("field \"grid\""),
        "{e}"
    );
}

/// Largest peak resident memory of any child this test process has waited for, bytes.
fn children_peak_bytes() -> u64 {
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    // SAFETY: getrusage writes into the struct it is given and nothing else.
    let rc = unsafe { libc::getrusage(libc::RUSAGE_CHILDREN, &mut usage) };
    assert_eq!(rc, 0);
    usage.ru_maxrss as u64 * 1024
}

#[test]
fn a_billion_loads_and_a_huge_sweep_are_refused() {
    let bp = "models/buying-points/bramble-fork.json";
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    let out = out.to_str().unwrap();
    refused(&[
        "season",
        "run",
        "--scenario",
        bp,
        "--generate",
        "--loads",
        "1000000000",
        "--out",
        out,
    ]);
    refused(&[
        "season",
        "sweep",
        "--scenario",
        bp,
        "--dryers",
        "1..1000",
        "--seasons",
        "1000",
        "--loads",
        "1000",
        "--drier",
        "rate-rule",
        "--out",
        out,
    ]);
    // Every child of this test binary is one of these refusals (the other tests here refuse too).
    let peak = children_peak_bytes();
    eprintln!(
        "largest peak memory of a refused request: {:.1} MiB",
        peak as f64 / 1048576.0
    );
    assert!(peak < 64 * 1024 * 1024, "{peak} B");
}
