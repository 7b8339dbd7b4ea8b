//! `dryfront calibrate` as a user runs it (the README's example): it fits, prints intervals and residuals, and
//! writes a crop file that loads, with the fitted constants marked "calibrated"; a bad `--fit` name is one line,
//! exit 2.
mod common;

use common::root;
use dryfront::crop::{Crop, Status};

#[test]
fn readme_example_writes_a_calibrated_crop() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("calibrated");
    let (code, stdout, err) = common::dryfront(
        &[
            "calibrate",
            "--load",
            "examples/calibration/bf-load-23.json",
            "examples/calibration/bf-load-23-samples.csv",
            "--fit",
            "hull-rate,kernel-rate",
            "--out",
            out.to_str().unwrap(),
        ],
        &root(),
    );
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("95 % interval"), "{stdout}");
    assert!(stdout.contains("rms residual"), "{stdout}");
    let crop = Crop::load_named(out.join("peanut-inshell-calibrated.json").to_str().unwrap())
        .expect("the written crop file loads");
    for field in [
        "compartments.hull.thin_layer.k_ref_per_h",
        "compartments.kernel.thin_layer.k_ref_per_h",
    ] {
        let c = &crop.constants[field];
        assert_eq!(c.status, Status::Calibrated, "{field}");
        assert!(c.source.contains("bf-load-23-samples.csv"), "{}", c.source);
    }
    // Constants not fitted keep their status.
    let ea = &crop.constants["compartments.hull.thin_layer.activation_energy_j_per_mol"];
    assert_ne!(ea.status, Status::Calibrated);
    let csv = std::fs::read_to_string(out.join("residuals.csv")).unwrap();
    assert_eq!(csv.lines().count(), 1 + 13, "{csv}");
    assert!(std::fs::read_to_string(out.join("measured-vs-model.svg"))
        .unwrap()
        .starts_with("<svg"));
}

#[test]
fn unknown_constant_is_refused_in_one_line() {
    let (code, _, err) = common::dryfront(
        &[
            "calibrate",
            "--load",
            "examples/calibration/bf-load-23.json",
            "examples/calibration/bf-load-23-samples.csv",
            "--fit",
            "oil-content",
        ],
        &root(),
    );
    assert_eq!(code, 2);
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.contains("--fit") && err.contains("oil-content"),
        "{err}"
    );
}
