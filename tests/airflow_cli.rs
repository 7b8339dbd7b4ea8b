//! `dryfront airflow` with an air path and a bed moisture, through the real binary. What must hold, and why:
//! - the command says which air states it solved at (ambient air, plenum air after the rise, which one the fan
//!   draws) and which D272 wet factor it applied, on screen and in `summary.json`, so a figure can be matched
//!   to a drying run;
//! - the wet factor follows the bed's equilibrium RH through the crop model: ASAE D272.3 (DOMAIN.md §1.2) gives
//!   0.80 above 85 % ERH, so a wet 20 % w.b. load gets it and a dry 8 % load does not, and the solved packing
//!   factor carries it;
//! - the flows it writes keep the dry air: fan flow at the ambient air and plenum flow at the plenum air are in
//!   the ratio of the two specific volumes (ASHRAE 2017 ch. 1);
//! - a bad value is one line naming the option or file and field, exit code 2, nothing written.
mod common;

use approx::assert_relative_eq;
use serde_json::Value;

/// The options of the example, on a coarse grid to keep the test quick.
fn base<'a>(extra: &[&'a str]) -> Vec<&'a str> {
    let mut v = vec![
        "airflow",
        "--container",
        "trailer-6m",
        "--fan",
        "vane-3kw",
        "--nx",
        "12",
        "--ny",
        "6",
        "--nz",
        "8",
    ];
    v.extend_from_slice(extra);
    v
}

fn crop_packing() -> f64 {
    let p = common::root().join("models/crops/peanut-inshell.json");
    let crop: Value = serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap();
    crop["resistance"]["packing_factor"]["value"]
        .as_f64()
        .unwrap()
}

#[test]
fn prints_and_writes_the_air_states_and_wet_factor_it_used() {
    let dir = tempfile::tempdir().unwrap();
    let (code, out, err) = common::dryfront(
        &base(&[
            "--air-temp-c",
            "20",
            "--air-rh-pct",
            "80",
            "--rise-k",
            "8",
            "--bed-kernel-moisture-pct",
            "20",
            "--out",
            "out",
        ]),
        dir.path(),
    );
    assert_eq!(code, 0, "{err}");
    for line in [
        "ambient air 20.00 °C, 80.0 % RH",
        "plenum air 28.00 °C (heated 8.00 K over ambient)",
        "the fan (ahead-of-burner) draws the ambient air",
        "bed kernel moisture 20.0 % w.b.",
        "D272 wet factor 0.80",
    ] {
        assert!(out.contains(line), "missing {line:?} in\n{out}");
    }
    let s: Value = serde_json::from_str(
        &std::fs::read_to_string(dir.path().join("out/summary.json")).unwrap(),
    )
    .unwrap();
    let (amb, pl) = (&s["air"]["ambient"], &s["air"]["plenum"]);
    assert_eq!(amb["temperature_c"], 20.0);
    assert_relative_eq!(
        amb["relative_humidity_pct"].as_f64().unwrap(),
        80.0,
        max_relative = 1e-12
    );
    assert_eq!(pl["temperature_c"], 28.0);
    // sensible heating: the humidity ratio is unchanged
    assert_eq!(
        pl["humidity_ratio_kg_per_kg"],
        amb["humidity_ratio_kg_per_kg"]
    );
    assert_eq!(s["air"]["fan_draws"], "ambient");
    assert_eq!(s["air"]["fan_position"], "ahead-of-burner");
    assert_eq!(
        s["summary"]["fan_air_density_kg_per_m3"],
        amb["density_kg_per_m3"]
    );
    assert_eq!(
        s["summary"]["plenum_air_density_kg_per_m3"],
        pl["density_kg_per_m3"]
    );
    let bed = &s["bed_moisture"];
    assert_eq!(bed["kernel_moisture_pct_wb"], 20.0);
    assert!(bed["bed_erh_pct"].as_f64().unwrap() > 85.0, "{bed}");
    assert_eq!(bed["d272_wet_factor"], 0.8);
    assert_relative_eq!(
        s["bed_law"]["packing_factor"].as_f64().unwrap(),
        crop_packing() * 0.8,
        max_relative = 1e-15
    );
    // fan flow at the ambient air, plenum flow at the plenum air, one dry-air mass flow
    let op = &s["operating_point"];
    let v = |a: &Value| a["specific_volume_m3_per_kg_dry_air"].as_f64().unwrap();
    let fan_kg_s = op["fan_flow_m3_per_s"].as_f64().unwrap() / v(amb);
    let pl_kg_s = op["plenum_flow_m3_per_s"].as_f64().unwrap() / v(pl);
    assert_relative_eq!(fan_kg_s, pl_kg_s, max_relative = 1e-14);
    assert_relative_eq!(
        op["dry_air_kg_per_s"].as_f64().unwrap(),
        pl_kg_s,
        max_relative = 1e-14
    );
}

#[test]
fn defaults_are_said_and_a_dry_bed_gets_no_wet_factor() {
    let dir = tempfile::tempdir().unwrap();
    let (code, out, err) = common::dryfront(&base(&[]), dir.path());
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("ambient air 25.00 °C, 70.0 % RH"), "{out}");
    assert!(out.contains("plenum air 25.00 °C (unheated)"), "{out}");
    assert!(
        out.contains("bed moisture not given (--bed-kernel-moisture-pct): D272 wet factor 1.00"),
        "{out}"
    );
    let (code, out, err) = common::dryfront(
        &base(&["--bed-kernel-moisture-pct", "8", "--plenum-temp-c", "35"]),
        dir.path(),
    );
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("plenum air 35.00 °C (heated 10.00 K over ambient)"),
        "{out}"
    );
    assert!(out.contains("bed kernel moisture 8.0 % w.b."), "{out}");
    assert!(out.contains("D272 wet factor 1.00"), "{out}");
}

#[test]
fn bad_values_are_one_line_errors_with_exit_2_and_nothing_written() {
    let dir = tempfile::tempdir().unwrap();
    for (args, start) in [
        (
            vec!["--rise-k", "-5"],
            "dryfront: error: --rise-k: -5 K must be between 0 and 60 K",
        ),
        (vec!["--rise-k", "NaN"], "dryfront: error: --rise-k: NaN K"),
        (
            vec!["--air-rh-pct", "120"],
            "dryfront: error: --air-rh-pct: 120 %",
        ),
        (
            vec!["--air-temp-c", "-45"],
            "dryfront: error: --air-temp-c: -45 °C",
        ),
        (
            vec!["--air-temp-c", "20", "--plenum-temp-c", "15"],
            "dryfront: error: --plenum-temp-c: 15 °C must be between 20 and 80 °C",
        ),
        (
            vec!["--bed-kernel-moisture-pct", "60"],
            "dryfront: error: --bed-kernel-moisture-pct: 60 % w.b. must be between 5 and 45 % w.b.",
        ),
    ] {
        let mut a = args.clone();
        a.extend(["--out", "out"]);
        let (code, _, err) = common::dryfront(&base(&a), dir.path());
        assert_eq!(code, 2, "{args:?}: {err}");
        assert!(err.starts_with(start), "{args:?}: {err}");
        assert_eq!(err.trim_end().lines().count(), 1, "{args:?}: {err}");
        assert!(!dir.path().join("out").exists());
    }
}

#[test]
fn a_bad_fan_position_names_the_file_line_and_field() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("fan.json"),
        "{\"name\": \"x\",\n \"position\": \"behind\",\n \"points\": [{\"flow_m3_per_min\": 100, \"static_pressure_pa\": 400},\n {\"flow_m3_per_min\": 400, \"static_pressure_pa\": 0}]}\n",
    )
    .unwrap();
    let args = [
        "airflow",
        "--container",
        "trailer-6m",
        "--fan",
        "fan.json",
        "--out",
        "out",
    ];
    let (code, _, err) = common::dryfront(&args, dir.path());
    assert_eq!(code, 2, "{err}");
    assert!(
        err.starts_with("dryfront: error: fan.json:2: field \"position\": \"behind\" must be \"ahead-of-burner\""),
        "{err}"
    );
    assert_eq!(err.trim_end().lines().count(), 1, "{err}");
    assert!(!dir.path().join("out").exists());
}

#[test]
fn an_airflow_far_below_practice_is_named_not_passed_over() {
    // A flow that brings 0.05 m³/min per m³ of peanuts (the trade's usual is about 10, DOMAIN.md §12, "Performance of
    // Semi-Trailer Peanut Drying Units") is flagged on screen as advice; a fixed flow near the usual is not.
    let run = |extra: &[&str]| {
        let mut args = vec![
            "airflow",
            "--container",
            "trailer-6m",
            "--nx",
            "8",
            "--ny",
            "4",
            "--nz",
            "6",
        ];
        args.extend_from_slice(extra);
        let (code, out, err) = common::dryfront(&args, &common::root());
        assert_eq!(code, 0, "{err}");
        out
    };
    let low = run(&["--flow-m3-min", "1"]);
    assert!(
        low.contains("advice: little air per volume of peanuts: 0.05 m³/min per m³"),
        "{low}"
    );
    // The trailer's own fill holds 19.2 m³ of peanuts: 192 m³/min is the usual 10 per m³.
    let usual = run(&["--flow-m3-min", "192"]);
    assert!(!usual.contains("advice"), "{usual}");
}
