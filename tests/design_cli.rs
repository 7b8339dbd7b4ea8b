//! `dryfront design` through the real binary, on the demo load. What must hold, and why:
//! - a variant runs the one load path: the `scenario` variant's figures are those of `dryfront dry` on the same
//!   scenario, to the printed digit (a second set-up path would drift);
//! - design sense (the plenum issue's check, here through the whole drying model): the same trailer with a taller
//!   plenum (0.40 → 0.70 m, a local copy of the bundled container) spreads the air more evenly — lower column-flow
//!   CV — and the uniform plenum, the limit of a plenum that holds one pressure, is the most even of all;
//! - `design.csv` has one row per variant and the `*` of each printed column sits on that column's best row;
//! - one folder per variant, and the page shows the maps side by side;
//! - a bad variant is one line naming `--variants` and the variant, exit code 2, nothing written.
mod common;

use std::path::Path;

fn csv_rows(path: &Path) -> Vec<std::collections::HashMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let head: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            head.iter()
                .cloned()
                .zip(rec.unwrap().iter().map(String::from))
                .collect()
        })
        .collect()
}

/// The trailer with a taller plenum, written beside the test's outputs.
fn tall_trailer(dir: &Path) -> String {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(root.join("models/containers/trailer-6m.json")).unwrap();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v["plenum_height_m"] = serde_json::json!(0.70);
    v["name"] = serde_json::json!("trailer-6m-tall-plenum");
    let p = dir.join("tall.json");
    std::fs::write(&p, serde_json::to_string_pretty(&v).unwrap()).unwrap();
    p.display().to_string()
}

#[test]
fn design_runs_the_one_load_path_and_ranks_variants() {
    let dir = tempfile::tempdir().unwrap();
    let tall = tall_trailer(dir.path());
    let variants = format!("scenario; container={tall}; plenum=uniform");
    let (code, out, err) = common::dryfront(
        &[
            "design",
            "--scenario",
            "demo-load",
            "--variants",
            &variants,
            "--out",
            "d",
        ],
        dir.path(),
    );
    assert_eq!(code, 0, "{err}");
    let d = dir.path().join("d");
    let rows = csv_rows(&d.join("design.csv"));
    assert_eq!(rows.len(), 3);
    let f = |k: usize, col: &str| rows[k][col].parse::<f64>().unwrap();
    // Design sense: the taller plenum is more even than the bundled 0.40 m, the uniform plenum most even.
    let cv = [
        f(0, "column_flow_cv_pct"),
        f(1, "column_flow_cv_pct"),
        f(2, "column_flow_cv_pct"),
    ];
    assert!(
        cv[1] < cv[0],
        "CV: bundled {} vs tall plenum {}",
        cv[0],
        cv[1]
    );
    assert!(
        cv[2] < cv[1],
        "CV: tall plenum {} vs uniform {}",
        cv[1],
        cv[2]
    );
    // The scenario variant is `dry` on the same scenario.
    let (code, _, err) = common::dryfront(
        &["dry", "--scenario", "demo-load", "--out", "one"],
        dir.path(),
    );
    assert_eq!(code, 0, "{err}");
    let one: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.path().join("one/outcome.json")).unwrap(),
    )
    .unwrap();
    let h_dry = one["outcome"]["hours_to_mean_target"].as_f64().unwrap();
    assert!(
        (f(0, "hours_to_mean_target") - h_dry).abs() < 1e-6,
        "{} vs {h_dry}",
        f(0, "hours_to_mean_target")
    );
    // The printed `*` of "column CV" is on the uniform row, the lowest CV.
    let uniform_line = out
        .lines()
        .find(|l| l.starts_with("plenum=uniform"))
        .unwrap();
    let cv_cell = uniform_line.split_whitespace().nth(2).unwrap();
    assert!(cv_cell.ends_with('*'), "{uniform_line}");
    for name in ["01-scenario", "02-container_", "03-plenum_uniform"] {
        assert!(
            std::fs::read_dir(&d).unwrap().any(|e| e
                .unwrap()
                .file_name()
                .to_string_lossy()
                .starts_with(name)),
            "{name}"
        );
    }
    let page = std::fs::read_to_string(d.join("report.html")).unwrap();
    assert!(page.contains("class=\"gallery\""));
    assert!(page.contains("one colour scale for all variants"));
}

#[test]
fn bad_variants_are_one_line_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    for (variants, says) in [
        ("scenario;depth=9", "above the 1.50 m walls"),
        ("scenario;container=no-such-trailer", "container"),
        ("scenario;plenum=3d", "not a plenum model"),
        ("scenario;speed=3", "not a key"),
    ] {
        let (code, out, err) = common::dryfront(
            &[
                "design",
                "--scenario",
                "demo-load",
                "--variants",
                variants,
                "--out",
                "d",
            ],
            dir.path(),
        );
        assert_eq!(code, 2, "{variants}: {err}");
        assert!(out.is_empty(), "{out}");
        assert_eq!(err.trim().lines().count(), 1, "{variants}: {err}");
        assert!(
            err.contains("--variants") && err.contains(says),
            "{variants}: {err}"
        );
        assert!(!dir.path().join("d").exists());
    }
}
