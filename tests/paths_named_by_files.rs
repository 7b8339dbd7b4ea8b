//! A path written inside a file is taken from beside that file, whatever the working folder: a scenario's crop,
//! container and fan as well as its weather, and a status file's scenario as well as its weather. (Before, the
//! weather was taken from beside the file but the models and the status file's scenario from the working folder,
//! so a folder of files that names its own files worked from one working folder and not from another.)
mod common;

use std::path::{Path, PathBuf};

use common::root;

/// A folder `in/` holding a scenario that names its own crop, container, fan and weather by relative path, and a
/// status file naming that scenario by relative path.
fn folder(dir: &Path) -> PathBuf {
    let d = dir.join("in");
    std::fs::create_dir_all(&d).unwrap();
    let copy = |from: &str, to: &str| std::fs::copy(root().join(from), d.join(to)).unwrap();
    copy("models/crops/peanut-inshell.json", "crop.json");
    copy("models/containers/trailer-6m.json", "box.json");
    copy("models/fans/vane-trailer.json", "blower.json");
    copy(
        "weather-samples/cypress-neck-2026/season_000.csv",
        "weather.csv",
    );
    copy("examples/at-the-dryer/observed.csv", "observed.csv");
    copy("examples/at-the-dryer/forecast.csv", "forecast.csv");
    let mut sc: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("models/scenarios/demo-load.json")).unwrap(),
    )
    .unwrap();
    sc["crop"] = "crop.json".into();
    sc["container"] = "box.json".into();
    sc["fan"] = "blower.json".into();
    sc["weather"] = "weather.csv".into();
    std::fs::write(d.join("load.json"), sc.to_string()).unwrap();
    let status = std::fs::read_to_string(root().join("examples/at-the-dryer/status-bf06.json"))
        .unwrap()
        .replace("\"demo-load\"", "\"load.json\"");
    std::fs::write(d.join("status.json"), status).unwrap();
    d
}

#[test]
fn files_named_in_a_file_are_found_beside_it_from_any_working_folder() {
    let dir = tempfile::tempdir().unwrap();
    let d = folder(dir.path());
    for cwd in [dir.path().to_path_buf(), d.clone()] {
        let sc = d.join("load.json");
        let (code, _, err) = common::dryfront(
            &[
                "dry",
                "--scenario",
                sc.to_str().unwrap(),
                "--stop",
                "hours=1",
            ],
            &cwd,
        );
        assert_eq!(code, 0, "dry from {}: {err}", cwd.display());
        let st = d.join("status.json");
        let (code, _, err) =
            common::dryfront(&["status", st.to_str().unwrap(), "--members", "2"], &cwd);
        assert_eq!(code, 0, "status from {}: {err}", cwd.display());
    }
}

#[test]
fn a_missing_named_file_is_named_in_the_error() {
    let dir = tempfile::tempdir().unwrap();
    let d = folder(dir.path());
    std::fs::remove_file(d.join("box.json")).unwrap();
    let sc = d.join("load.json");
    let (code, _, err) = common::dryfront(&["dry", "--scenario", sc.to_str().unwrap()], dir.path());
    assert_eq!(code, 2);
    assert_eq!(err.trim().lines().count(), 1, "{err}");
    assert!(
        err.contains("container") && err.contains("box.json"),
        "{err}"
    );
}
