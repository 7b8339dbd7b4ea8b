//! Bad input gets a clear error naming the file and field (and, through the binary, exit code 2 with nothing
//! written): negative dimensions, zero open area, a fan curve that is not monotone, a fill deeper than the walls,
//! a permeability map of the wrong shape, a zero grid.
mod common;

use std::path::Path;

use dryfront::airflow::{Container, FanCurve, Grid};

fn base_json() -> serde_json::Value {
    let p = common::root().join("models/containers/trailer-6m.json");
    serde_json::from_str(&std::fs::read_to_string(p).unwrap()).unwrap()
}

fn container_error(edit: impl FnOnce(&mut serde_json::Value)) -> String {
    let mut v = base_json();
    edit(&mut v);
    Container::from_json_str(&v.to_string(), Path::new("bad.json"))
        .unwrap_err()
        .to_string()
}

#[test]
fn negative_length_names_the_field() {
    let e = container_error(|v| v["length_m"] = (-6.4).into());
    assert_eq!(
        e,
        "bad.json:1: field \"length_m\": -6.4 m must be a positive number"
    );
}

#[test]
fn zero_open_area_is_rejected() {
    let e = container_error(|v| v["floor"]["open_area_fraction"] = 0.0.into());
    assert!(
        e.starts_with("bad.json:1: field \"floor.open_area_fraction\": 0 must be above 0"),
        "{e}"
    );
}

#[test]
fn fill_over_wall_height_is_rejected() {
    let e = container_error(|v| v["fill"] = serde_json::json!({"shape": "level", "depth_m": 1.8}));
    assert_eq!(
        e,
        "bad.json:1: field \"fill.depth_m\": fill depth 1.8 m is over the wall height 1.5 m"
    );
    let e = container_error(|v| {
        v["fill"] = serde_json::json!({"shape": "grid", "depths_m": [[1.2, 1.2], [1.2, 1.6]]})
    });
    assert!(
        e.contains("fill.depths_m[1][1]") && e.contains("over the wall height"),
        "{e}"
    );
}

#[test]
fn ragged_permeability_map_is_rejected() {
    let e = container_error(|v| {
        v["permeability"] = serde_json::json!({"cells": [[1.0, 1.0, 1.0], [1.0, 0.5]]})
    });
    assert_eq!(
        e,
        "bad.json:1: field \"permeability.cells[1]\": row has 2 values but row 0 has 3: the map must be rectangular"
    );
}

#[test]
fn permeability_block_outside_footprint_is_rejected() {
    let e = container_error(
        |v| v["permeability"] = serde_json::json!({"blocks": [{"x0_m": 5.0, "x1_m": 7.0, "y0_m": 0.0, "y1_m": 1.0, "multiplier": 0.5}]}),
    );
    assert!(e.contains("permeability.blocks[0].x1_m"), "{e}");
}

#[test]
fn unknown_field_is_an_error_not_a_default() {
    let e = container_error(|v| v["plenum_hieght_m"] = 0.4.into());
    assert!(
        e.contains("unknown field") && e.contains("plenum_hieght_m"),
        "{e}"
    );
}

#[test]
fn non_monotone_fan_curve_names_the_point() {
    let text = r#"{"name": "x", "points": [
        {"flow_m3_per_min": 100, "static_pressure_pa": 400},
        {"flow_m3_per_min": 200, "static_pressure_pa": 300},
        {"flow_m3_per_min": 300, "static_pressure_pa": 320}]}"#;
    let e = FanCurve::from_json_str(text, Path::new("fan.json"))
        .unwrap_err()
        .to_string();
    assert_eq!(
        e,
        "fan.json:1: field \"points\": fan curve: pressure must fall as airflow rises (point 3: 320 Pa after 300 Pa)"
    );
}

#[test]
fn zero_grid_is_rejected() {
    let c = common::container("wagon-4m");
    let e = c
        .discretize(Grid {
            nx: 0,
            ny: 4,
            nz: 4,
        })
        .unwrap_err()
        .to_string();
    assert_eq!(e, "--nx: 0 must be between 1 and 4096");
}

#[test]
fn binary_exits_2_names_the_file_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let mut v = base_json();
    v["floor"]["open_area_fraction"] = 0.0.into();
    std::fs::write(dir.path().join("bad.json"), v.to_string()).unwrap();
    let crop = common::root().join("models/crops/peanut-inshell.json");
    let (code, _, err) = common::dryfront(
        &[
            "airflow",
            "--container",
            "bad.json",
            "--flow-m3-min",
            "230",
            "--crop",
            crop.to_str().unwrap(),
            "--out",
            "out",
        ],
        dir.path(),
    );
    assert_eq!(code, 2);
    assert!(
        err.starts_with("dryfront: error: bad.json:1: field \"floor.open_area_fraction\""),
        "{err}"
    );
    assert!(!dir.path().join("out").exists());

    // a non-monotone fan file
    std::fs::write(
        dir.path().join("fan.json"),
        r#"{"name": "x", "points": [{"flow_m3_per_min": 100, "static_pressure_pa": 400}, {"flow_m3_per_min": 200, "static_pressure_pa": 450}]}"#,
    )
    .unwrap();
    let c = common::root().join("models/containers/trailer-6m.json");
    let (code, _, err) = common::dryfront(
        &[
            "airflow",
            "--container",
            c.to_str().unwrap(),
            "--fan",
            "fan.json",
            "--crop",
            crop.to_str().unwrap(),
            "--out",
            "out",
        ],
        dir.path(),
    );
    assert_eq!(code, 2);
    assert!(
        err.contains("fan.json") && err.contains("point 2: 450 Pa after 400 Pa"),
        "{err}"
    );
    assert!(!dir.path().join("out").exists());
}

#[test]
fn binary_writes_all_outputs_for_a_good_run() {
    let dir = tempfile::tempdir().unwrap();
    let crop = common::root().join("models/crops/peanut-inshell.json");
    let (code, _, err) = common::dryfront(
        &[
            "airflow",
            "--container",
            "wagon-4m",
            "--fan",
            "vane-3kw",
            "--crop",
            crop.to_str().unwrap(),
            "--models",
            common::root().join("models").to_str().unwrap(),
            "--nx",
            "12",
            "--ny",
            "6",
            "--nz",
            "8",
            "--out",
            "out",
        ],
        dir.path(),
    );
    assert_eq!(code, 0, "{err}");
    for f in [
        "columns.csv",
        "summary.json",
        "top_airflow.svg",
        "plenum_pressure.svg",
        "plenum_profile.svg",
        "report.html",
    ] {
        assert!(dir.path().join("out").join(f).is_file(), "{f} missing");
    }
    let csv = std::fs::read_to_string(dir.path().join("out/columns.csv")).unwrap();
    assert_eq!(csv.lines().count(), 1 + 12 * 6);
}
