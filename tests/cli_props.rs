//! The real `dryfront` binary: property look-ups print the right numbers with units and exit 0; bad input (RH out
//! of range, unknown crop, broken crop files) exits 2 with one clear line naming the argument or the file and
//! field; the demo writes its table whole.
#![deny(clippy::float_cmp)]

mod common;

use std::path::Path;

/// The number after `label` on its output line.
fn value(out: &str, label: &str) -> f64 {
    let line = out
        .lines()
        .find(|l| l.starts_with(label))
        .unwrap_or_else(|| panic!("no line {label:?} in\n{out}"));
    line[label.len()..]
        .split_whitespace()
        .next()
        .and_then(|t| t.parse().ok())
        .unwrap_or_else(|| panic!("no number in {line:?}"))
}

fn ok(args: &[&str]) -> String {
    let (code, out, err) = common::dryfront(args, &common::root());
    assert_eq!(code, 0, "{args:?} failed: {err}");
    out
}

fn fails(args: &[&str]) -> String {
    let (code, out, err) = common::dryfront(args, &common::root());
    assert_eq!(code, 2, "{args:?} should exit 2; stdout {out}");
    err
}

#[test]
fn air_state_matches_ashrae_reference_row() {
    // Source: DOMAIN.md §5.3 (ASHRAE 2017 via psychrolib 2.5.0) row 25 °C / 60 %: W 0.011895, h 55.45 kJ/kg,
    // T_wb 19.47 °C, T_dp 16.70 °C, ρ 1.1756 kg/m³, v 0.8608 m³/kg. Printed precision is the tolerance.
    let out = ok(&["props", "air", "--temp", "25", "--rh", "60"]);
    assert!((value(&out, "humidity ratio") - 0.011895).abs() < 2e-6);
    assert!((value(&out, "enthalpy") - 55.45).abs() < 0.02);
    assert!((value(&out, "wet bulb") - 19.47).abs() < 0.02);
    assert!((value(&out, "dew point") - 16.70).abs() < 0.02);
    assert!((value(&out, "moist-air density") - 1.1756).abs() < 2e-4);
    assert!(out.contains("kg/m³") && out.contains("°C"));
    // US: the same state entered in °F prints in °F.
    let us = ok(&[
        "props", "air", "--temp", "77", "--rh", "60", "--units", "us",
    ]);
    assert!((value(&us, "wet bulb") - (19.47 * 1.8 + 32.0)).abs() < 0.05);
    assert!(us.contains("°F") && us.contains("BTU/lb"));
}

#[test]
fn emc_and_erh_match_cromarty_check_values() {
    // Source: DOMAIN.md §2.3 (Cromarty form, D_o = 0.48): kernel 7.04 % w.b. at 25 °C / 60 %; hull proxy
    // 12.7 % w.b.; 10.5 % w.b. ↔ ERH ≈ 87 % at 20 °C.
    let out = ok(&[
        "props",
        "emc",
        "--crop",
        "peanut-inshell",
        "--temp",
        "25",
        "--rh",
        "60",
    ]);
    assert!((value(&out, "kernel EMC") - 7.04).abs() < 0.006);
    assert!((value(&out, "hull EMC") - 12.7).abs() < 0.05);
    assert!(out.contains("pod EMC") && out.contains("d.b."));
    let out = ok(&[
        "props",
        "erh",
        "--crop",
        "peanut-inshell",
        "--temp",
        "20",
        "--moisture-wb",
        "10.5",
    ]);
    assert!((value(&out, "equilibrium RH") - 87.0).abs() < 0.6);
}

#[test]
fn heater_lookup_matches_domain_heater_row() {
    // Source: DOMAIN.md §8.2 (CoolProp 8.0.0): 475.8 m³/min of 20 °C / 80 % air heated 8.3 K → 9.38 kg/s dry air,
    // 80.0 kW, 48.6 % RH, 12.3 L/h propane. Tolerance 0.5 % (ASHRAE vs CoolProp, DOMAIN.md §5.3 note).
    let out = ok(&[
        "props",
        "heat",
        "--temp",
        "20",
        "--rh",
        "80",
        "--rise",
        "8.3",
        "--airflow-m3-min",
        "475.8",
    ]);
    assert!((value(&out, "heater power") - 80.0).abs() < 0.4);
    assert!((value(&out, "dry-air mass flow") - 9.38).abs() < 0.05);
    assert!(out.contains("48.6"), "{out}");
    assert!(out.contains("12.3 L/h"), "{out}");
}

#[test]
fn bed_pressure_matches_domain_bed_check() {
    // Source: DOMAIN.md §1.1 bed check (Shedd constants from memory): 1.3 m at 0.217 m/s → ≈72 Pa, ≈108 Pa packed.
    let out = ok(&[
        "props",
        "pressure",
        "--crop",
        "peanut-inshell",
        "--depth-m",
        "1.3",
        "--airflow-m-s",
        "0.217",
    ]);
    assert!((value(&out, "pressure drop, loose fill") - 72.0).abs() < 0.5);
    assert!((value(&out, "pressure drop, packed (x1.5)") - 108.0).abs() < 0.6);
    let us = ok(&[
        "props",
        "pressure",
        "--depth-ft",
        "4.265",
        "--airflow-cfm-ft2",
        "42.72",
        "--units",
        "us",
    ]);
    assert!(us.contains("in. water"), "{us}");
}

#[test]
fn rh_out_of_range_exits_2_with_clear_message() {
    let err = fails(&["props", "air", "--temp", "25", "--rh", "140"]);
    assert_eq!(
        err.trim(),
        "dryfront: error: --rh: 140 % must be between 0 and 100 %"
    );
    let err = fails(&["props", "erh", "--temp", "25", "--moisture-wb", "75"]);
    assert!(
        err.contains("--moisture-wb") && err.contains("between 0 and 60"),
        "{err}"
    );
}

#[test]
fn unknown_crop_exits_2_and_lists_builtins() {
    let err = fails(&[
        "props",
        "emc",
        "--crop",
        "sunflower",
        "--temp",
        "25",
        "--rh",
        "50",
    ]);
    assert!(
        err.contains("sunflower") && err.contains("peanut-inshell"),
        "{err}"
    );
}

fn broken_crop(dir: &Path, edit: impl FnOnce(&mut serde_json::Value)) -> String {
    let src = dryfront::models::resolve("crops", "peanut-inshell", "--crop").unwrap();
    let mut v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(src).unwrap()).unwrap();
    edit(&mut v);
    let path = dir.join("broken.json");
    std::fs::write(&path, serde_json::to_string_pretty(&v).unwrap()).unwrap();
    path.to_string_lossy().into_owned()
}

/// An edit that breaks a crop file.
type Edit = Box<dyn FnOnce(&mut serde_json::Value)>;

#[test]
fn broken_crop_files_exit_2_naming_file_and_field() {
    let dir = tempfile::tempdir().unwrap();
    let cases: [(&str, Edit); 3] = [
        (
            "compartments.kernel.isotherm.a\": missing field",
            Box::new(|v| {
                v["compartments"]["kernel"]["isotherm"]
                    .as_object_mut()
                    .unwrap()
                    .remove("a");
            }),
        ),
        (
            "thermal.colour\": unknown field",
            Box::new(|v| v["thermal"]["colour"] = serde_json::Value::from("red")),
        ),
        (
            "compartments.hull.thin_layer.k_ref_per_h\": value -0.2 must be between",
            Box::new(|v| {
                v["compartments"]["hull"]["thin_layer"]["k_ref_per_h"]["value"] = (-0.2).into()
            }),
        ),
    ];
    for (expected, edit) in cases {
        let path = broken_crop(dir.path(), edit);
        let err = fails(&[
            "props", "emc", "--crop", &path, "--temp", "25", "--rh", "50",
        ]);
        assert!(
            err.contains(&path) && err.contains(expected),
            "expected {expected:?} in {err}"
        );
        assert_eq!(err.lines().count(), 1, "one clear line: {err}");
    }
}

#[test]
fn demo_writes_property_table_whole() {
    let dir = tempfile::tempdir().unwrap();
    let out_dir = dir.path().join("out");
    let out = ok(&["demo", "--out", out_dir.to_str().unwrap()]);
    assert!(out.contains("Bramble Fork"));
    let csv = std::fs::read_to_string(out_dir.join("properties.csv")).unwrap();
    let lines: Vec<&str> = csv.lines().collect();
    assert!(lines[0].starts_with("air_state,ambient_t_c"));
    assert_eq!(lines.len(), 7);
    let mut names: Vec<String> = std::fs::read_dir(&out_dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    // The whole demo: one load, a comparison, a season, the property table and the manifest of what was written;
    // no temporary files left.
    assert_eq!(
        names,
        [
            ".dryfront-outputs",
            "compare",
            "load",
            "properties.csv",
            "season"
        ],
        "{names:?}"
    );
    for sub in ["load", "compare", "season"] {
        for e in std::fs::read_dir(out_dir.join(sub)).unwrap() {
            let name = e.unwrap().file_name().to_string_lossy().into_owned();
            assert!(!name.starts_with('.'), "temporary file left: {sub}/{name}");
        }
    }
    assert!(out_dir.join("load/final_moisture_top.svg").is_file());
    assert!(out_dir.join("season/gantt.svg").is_file());
    for sub in ["load", "compare", "season"] {
        assert!(
            out_dir.join(sub).join("report.html").is_file(),
            "{sub}/report.html"
        );
    }
    let beside: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(beside.len(), 1, "no temporary folder beside the output");
}
