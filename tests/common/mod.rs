//! Shared helpers for the airflow integration tests: load the bundled containers and fans, the peanut law.
#![allow(dead_code)]
use std::path::{Path, PathBuf};

use dryfront::airflow::{BedLaw, Container, FanCurve};
use dryfront::crop::Crop;
use dryfront::props::psychro::AirState;

pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

pub fn container(name: &str) -> Container {
    let p = root().join(format!("models/containers/{name}.json"));
    Container::from_json_str(&std::fs::read_to_string(&p).unwrap(), &p).unwrap()
}

pub fn fan(name: &str) -> FanCurve {
    let p = root().join(format!("models/fans/{name}.json"));
    FanCurve::from_json_str(&std::fs::read_to_string(&p).unwrap(), &p).unwrap()
}

/// The bundled in-shell peanut's bed law (its Shedd constants, with their source, are in
/// `models/crops/peanut-inshell.json`) at packing factor `packing`.
pub fn peanut(packing: f64) -> BedLaw {
    let p = root().join("models/crops/peanut-inshell.json");
    let crop = Crop::load_named(p.to_str().unwrap()).unwrap();
    BedLaw {
        packing_factor: packing,
        ..dryfront::load::bed_law(&crop)
    }
}

/// Ambient-ish drying air: 30 °C, 50 % RH, sea level.
pub fn air() -> AirState {
    AirState::from_rh(30.0, 0.5, 101_325.0)
}

pub fn path(p: &str) -> PathBuf {
    Path::new(p).to_path_buf()
}

/// Run the `dryfront` binary with `args` in the folder `dir`: (exit code, stdout, stderr).
pub fn dryfront(args: &[&str], dir: &Path) -> (i32, String, String) {
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_dryfront"))
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap();
    // Everything dryfront prints is UTF-8 (units, °C, m³): a test fails on anything else rather than reading it
    // with replacement characters.
    let text = |b: Vec<u8>, which: &str| {
        String::from_utf8(b)
            .unwrap_or_else(|e| panic!("dryfront {args:?}: {which} is not UTF-8: {e}"))
    };
    (
        out.status.code().unwrap_or(-1),
        text(out.stdout, "standard output"),
        text(out.stderr, "standard error"),
    )
}
