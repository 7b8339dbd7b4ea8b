//! The plenum outputs of `dryfront airflow` (issue: the plenum in two dimensions), through the real binary on a
//! coarse grid. What must hold, and why:
//! - with the 2-D plenum the command writes the plenum's own field (`plenum.csv`, `plenum_flow.svg` with arrows and
//!   the inlet marked) and says which plenum model it solved with; with the 1-D duct it writes no plenum field;
//! - the plenum map and the per-column table are one field: the mean of the map's static pressure over the plenum
//!   cells under a column is that column's plenum pressure (the conservative transfer of `airflow::plenum_shape`),
//!   to the 0.001 Pa both files print;
//! - the pressure-along-the-length picture draws the centre line and both side walls for the 2-D plenum and one
//!   line for the duct, which holds one pressure across the width;
//! - with a side inlet the picture runs along the inlet's axis, across the width: the line through the inlet's
//!   centre and the lines along the two end walls, its title, axis and legend saying so, in the units asked for;
//! - the inlet jet is where the inlet is: the fastest plenum air is in the first cells along the length, inside the
//!   inlet's width (the trailer's 0.8 m inlet is centred on the 2.4 m width);
//! - an unknown plenum model on the command line is one line naming `--plenum`, exit code 2.
mod common;

use std::path::Path;

fn args<'a>(extra: &[&'a str]) -> Vec<&'a str> {
    let mut v = vec![
        "airflow",
        "--container",
        "trailer-6m",
        "--fan",
        "vane-trailer",
        "--nx",
        "8",
        "--ny",
        "4",
        "--nz",
        "4",
    ];
    v.extend_from_slice(extra);
    v
}

/// Rows of a CSV as maps from header to value.
fn rows(path: &Path) -> Vec<std::collections::HashMap<String, f64>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let head: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            head.iter()
                .cloned()
                .zip(rec.unwrap().iter().map(|v| v.parse::<f64>().unwrap()))
                .collect()
        })
        .collect()
}

#[test]
fn two_d_plenum_writes_its_field_consistent_with_the_columns() {
    let dir = tempfile::tempdir().unwrap();
    let (code, out, err) = common::dryfront(&args(&["--plenum", "2d", "--out", "o"]), dir.path());
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("plenum model: 2d"), "{out}");
    let o = dir.path().join("o");
    let cells = rows(&o.join("plenum.csv"));
    // 2 plenum cells per column side (the default): 16 × 8 cells.
    assert_eq!(cells.len(), 16 * 8);
    let cols = rows(&o.join("columns.csv"));
    assert_eq!(cols.len(), 8 * 4);
    for c in &cols {
        let (i, j) = (c["i"] as usize, c["j"] as usize);
        let under: Vec<f64> = cells
            .iter()
            .filter(|p| p["i"] as usize / 2 == i && p["j"] as usize / 2 == j)
            .map(|p| p["static_pressure_pa"])
            .collect();
        assert_eq!(under.len(), 4);
        let mean = under.iter().sum::<f64>() / 4.0;
        // Both files print 3 decimals: the mean of four rounded values is within 0.0005 + 0.0005 Pa.
        assert!(
            (mean - c["plenum_pressure_pa"]).abs() <= 1.0e-3,
            "column ({i}, {j}): map mean {mean} Pa, column {} Pa",
            c["plenum_pressure_pa"]
        );
    }
    let fastest = cells
        .iter()
        .max_by(|a, b| a["speed_m_per_s"].total_cmp(&b["speed_m_per_s"]))
        .unwrap();
    assert!(
        fastest["x_m"] < 6.4 / 4.0,
        "jet peak at x = {}",
        fastest["x_m"]
    );
    assert!(
        (fastest["y_m"] - 1.2).abs() < 0.4,
        "jet peak at y = {}",
        fastest["y_m"]
    );
    assert!(fastest["u_m_per_s"] > 0.0);
    let flow = std::fs::read_to_string(o.join("plenum_flow.svg")).unwrap();
    assert!(flow.contains("arrows: the direction of the air"));
    assert!(flow.contains("the plenum inlet"));
    assert!(flow.matches("<path d=\"M").count() >= 2 * 16);
    let profile = std::fs::read_to_string(o.join("plenum_profile.svg")).unwrap();
    for line in [
        "centre line",
        "side wall at y = 0",
        "side wall at y = width",
    ] {
        assert!(profile.contains(line), "{line}");
    }
    let page = std::fs::read_to_string(o.join("report.html")).unwrap();
    assert!(page.contains("Air in the plenum: speed and direction"));
}

#[test]
fn side_inlet_profile_runs_across_the_width() {
    // the bundled side-entry trailer: inlet in the left wall, centred 1.6 m from the front wall
    let systems = [
        ("si", "1.600 m", "(m)", "(Pa)"),
        ("us", "5.25 ft", "(ft)", "(in. water)"),
    ];
    for (units, centre, length, pressure) in systems {
        let dir = tempfile::tempdir().unwrap();
        let argv = [
            "airflow",
            "--container",
            "trailer-6m-side",
            "--fan",
            "vane-trailer",
            "--nx",
            "16",
            "--ny",
            "6",
            "--nz",
            "4",
            "--units",
            units,
            "--out",
            "o",
        ];
        let (code, _, err) = common::dryfront(&argv, dir.path());
        assert_eq!(code, 0, "{err}");
        let o = dir.path().join("o");
        let profile = std::fs::read_to_string(o.join("plenum_profile.svg")).unwrap();
        for text in [
            "trailer-6m-side: pressure across the width",
            &format!("distance from left wall {length}"),
            &format!("plenum, through the inlet centre ({centre} from front wall)"),
            "plenum, along the front wall",
            "plenum, along the rear wall",
            "bed bottom (above floor, mean along the length)",
            pressure,
        ] {
            assert!(
                profile.contains(text),
                "{units}: no {text:?} in the profile"
            );
        }
        assert!(!profile.contains("along the length<"), "{units}");
        assert!(!profile.contains("side wall at y"), "{units}");
        let page = std::fs::read_to_string(o.join("report.html")).unwrap();
        assert!(page.contains("Pressure across the width, along the axis of the side inlet"));
    }
}

#[test]
fn duct_plenum_writes_no_field_and_one_line() {
    let dir = tempfile::tempdir().unwrap();
    let (code, out, err) = common::dryfront(&args(&["--plenum", "duct", "--out", "o"]), dir.path());
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("plenum model: duct"), "{out}");
    assert!(!out.contains("the default for this grid"), "{out}");
    let o = dir.path().join("o");
    assert!(!o.join("plenum.csv").exists());
    assert!(!o.join("plenum_flow.svg").exists());
    let profile = std::fs::read_to_string(o.join("plenum_profile.svg")).unwrap();
    assert!(profile.contains("one pressure across the width"));
    assert!(!profile.contains("centre line"));
}

#[test]
fn unknown_plenum_model_is_one_line_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let (code, out, err) = common::dryfront(&args(&["--plenum", "3d", "--out", "o"]), dir.path());
    assert_eq!(code, 2);
    assert!(out.is_empty(), "{out}");
    assert_eq!(err.trim().lines().count(), 1, "{err}");
    assert!(
        err.contains("--plenum") && err.contains("duct, uniform or 2d"),
        "{err}"
    );
    assert!(!dir.path().join("o").exists());
}
