//! Make the demo airflow survey `survey-samples/trailer-6m-bramble-fork.csv`: the invented Bramble Fork Peanut
//! Exchange's 6.4 m trailer, surveyed in 40 blocks, with readings computed from a known (invented) permeability map
//! and 8 % measurement noise, so that `dryfront airflow fit` has a survey whose truth is known.
//!
//! `cargo run --release --example demo_survey > survey-samples/trailer-6m-bramble-fork.csv`
//!
//! The map: a trash-packed patch at the front left (× 0.5), a loose strip along the wall at y = 2.4 m (× 1.4), a
//! wet, packed spot at the rear middle (× 0.7), 1 elsewhere. Fan `vane-3kw`, unheated air at 25 °C and 70 % RH (the
//! `dryfront airflow` defaults), the default 32 × 12 × 16 grid and the trailer's default plenum model on it (the
//! 2-D plenum; the survey was made on the 1-D duct before that became the default, 2026-12-04), the bundled
//! peanut law.
use std::path::PathBuf;

use dryfront::airflow::fit::{block_columns, block_velocities, fitted_container, SurveyBlock};
use dryfront::airflow::{solve, AirPath, Container, FanCurve, FlowSpec, SolverSettings};
use dryfront::crop::Crop;
use dryfront::props::psychro::AirState;
use rand::distr::Distribution;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use statrs::distribution::Normal;

fn read(p: &PathBuf) -> String {
    std::fs::read_to_string(p).expect("bundled model file")
}

fn truth(b: &SurveyBlock) -> f64 {
    let (x, y) = (0.5 * (b.x0_m + b.x1_m), 0.5 * (b.y0_m + b.y1_m));
    if x < 2.3 && y < 0.9 {
        0.5
    } else if y > 2.1 {
        1.4
    } else if x > 4.1 && x < 5.5 && (0.9..1.5).contains(&y) {
        0.7
    } else {
        1.0
    }
}

fn main() {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("models");
    let cp = root.join("containers/trailer-6m.json");
    let c = Container::from_json_str(&read(&cp), &cp).expect("bundled container");
    let fp = root.join("fans/vane-3kw.json");
    let fan = FanCurve::from_json_str(&read(&fp), &fp).expect("bundled fan");
    let crp = root.join("crops/peanut-inshell.json");
    let crop = Crop::from_json_str(&read(&crp), &crp).expect("bundled crop");
    let xs = [0.0, 0.4, 1.3333, 2.2667, 3.2, 4.1333, 5.0667, 6.0, 6.4];
    let ys = [0.0, 0.3, 0.9, 1.5, 2.1, 2.4];
    let mut blocks = Vec::new();
    for a in 0..8 {
        for b in 0..5 {
            blocks.push(SurveyBlock {
                name: format!("{}{}", (b'A' + a as u8) as char, b + 1),
                x0_m: xs[a],
                x1_m: xs[a + 1],
                y0_m: ys[b],
                y1_m: ys[b + 1],
                measured_m_per_s: 0.0,
                sd_m_per_s: 0.0,
            });
        }
    }
    let m: Vec<f64> = blocks.iter().map(truth).collect();
    // the plenum model `dryfront airflow` uses on this grid by default (the 2-D plenum), so the default fit
    // models the survey with the model that made it
    let settings = SolverSettings::for_container(&c, SolverSettings::default().grid);
    let air = AirPath::same(AirState::from_rh(25.0, 0.70, 101_325.0));
    let law = dryfront::load::bed_law(&crop);
    let sol = solve(
        &fitted_container(&c, &blocks, &m),
        &FlowSpec::Fan(fan),
        &law,
        &air,
        &settings,
    )
    .expect("demo solve");
    let u = block_velocities(&sol, &block_columns(&c, settings.grid, &blocks));
    let mut rng = ChaCha8Rng::seed_from_u64(114);
    let noise = Normal::new(0.0, 0.08).expect("sd > 0");
    println!("# Bramble Fork Peanut Exchange, trailer 7 (a trailer-6m), load B-114, surveyed with the fan on and the burner off.");
    println!(
        "# Invented demo data made by examples/demo_survey.rs (known map, 8 % reading noise)."
    );
    println!("block,x0_m,x1_m,y0_m,y1_m,funnel_mouth_m2,reading_m3_per_min");
    for (b, u) in blocks.iter().zip(u) {
        let mouth = if b.y1_m - b.y0_m < 0.5 || b.x1_m - b.x0_m < 0.5 {
            0.09
        } else {
            0.25
        };
        let reading = u * (1.0 + noise.sample(&mut rng)) * 60.0 * mouth;
        println!(
            "{},{},{},{},{},{mouth},{reading:.3}",
            b.name, b.x0_m, b.x1_m, b.y0_m, b.y1_m
        );
    }
}
