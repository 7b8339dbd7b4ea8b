//! What the season's coarse grids cost: a full-resolution load is far too costly to repeat hundreds of times, so the
//! season runs each load on a coarse grid (by default 4 × 2 columns × 10 layers, 0.2 h steps, airflow solved once
//! per load at its start). Here a sample of demo loads is run on that grid, on the screening grid that README
//! suggests for large sweeps (`--grid 2x1x5`, an eighth of the cells), and on the single-load default
//! grid (16 × 6 × 20, 0.1 h steps) on the same weather; all solve the airflow once at the start, so what is measured
//! is the cost of the coarse grid and step. Hours to target must agree with the fine grid's within 3 % on either
//! coarse grid (the season issue's bound); fuel and over-dried mass differences are printed for the record.
use chrono::{Duration, FixedOffset, TimeZone};

use std::sync::Arc;

use dryfront::airflow::geometry::Grid;
use dryfront::input::season::{read_buying_point, season_template, SeasonRunSettings};
use dryfront::load::AirflowUpdates;
use dryfront::season::arrivals::Load;
use dryfront::season::drier::{DeepBedDrier, LoadDrier};

#[test]
fn coarse_season_grids_keep_hours_to_target_within_three_percent() {
    let root = env!("CARGO_MANIFEST_DIR");
    let bp = read_buying_point(format!("{root}/models/buying-points/bramble-fork.json").as_ref())
        .unwrap();
    let weather_path = format!("{root}/weather-samples/cypress-neck-2026/season_000.csv");
    let weather = || {
        dryfront::weather::read(weather_path.as_ref(), None, &Default::default())
            .unwrap()
            .0
    };
    let drier = |settings: SeasonRunSettings| {
        DeepBedDrier::new(
            season_template(
                &bp,
                std::path::Path::new("bp.json"),
                "peanut-inshell",
                Arc::new(weather()),
                &settings,
            )
            .unwrap()
            .0,
        )
    };
    let coarse = [
        ("4x2x10", drier(SeasonRunSettings::default())),
        (
            "2x1x5",
            drier(SeasonRunSettings {
                grid: Grid {
                    nx: 2,
                    ny: 1,
                    nz: 5,
                },
                ..SeasonRunSettings::default()
            }),
        ),
    ];
    let fine_drier = drier(SeasonRunSettings {
        grid: Grid {
            nx: 16,
            ny: 6,
            nz: 20,
        },
        dt_s: 0.1 * 3600.0,
        airflow: AirflowUpdates::AtStart,
        force: false,
    });

    let tz = FixedOffset::west_opt(5 * 3600).unwrap();
    let t0 = tz.with_ymd_and_hms(2026, 9, 12, 14, 0, 0).unwrap();
    // (dryer index, mass kg, kernel moisture %, start offset h): wagons and trailers, 15–30 % loads, two weeks of
    // the season's weather (day and night starts).
    let sample = [
        (1, 4400.0, 28.0, 30),
        (2, 4000.0, 15.0, 80),
        (4, 6000.0, 26.0, 160),
        (6, 5000.0, 21.0, 260),
        (0, 4600.0, 30.0, 320),
        (3, 3000.0, 17.0, 400),
        (0, 4200.0, 22.0, 0),
        (3, 3600.0, 18.0, 50),
        (5, 6800.0, 24.0, 120),
        (6, 5200.0, 19.5, 200),
    ];
    let mut worst = [0.0f64; 2];
    for (n, &(d, mass, moisture, offset)) in sample.iter().enumerate() {
        let load = Load {
            id: format!("S{n}"),
            arrival: t0 + Duration::hours(offset),
            mass_kg: mass,
            moisture_pct: moisture,
            notes: String::new(),
        };
        let start = load.arrival;
        let dryer = &bp.dryers[d];
        let f = fine_drier.dry(&load, dryer, start).unwrap();
        assert!(f.finished, "{f:?}");
        for ((grid, coarse_drier), worst) in coarse.iter().zip(&mut worst) {
            let c = coarse_drier.dry(&load, dryer, start).unwrap();
            assert!(c.finished, "{grid}: {c:?}");
            let rel = c.hours / f.hours - 1.0;
            *worst = worst.max(rel.abs());
            eprintln!(
                "{} on {}, {grid}: hours {:.2} (coarse) vs {:.2} (fine) {:+.2} %; propane {:.1} vs {:.1} L; over-dried {:.0} vs {:.0} kg",
                load.id,
                dryer.id,
                c.hours,
                f.hours,
                100.0 * rel,
                c.fuel_l,
                f.fuel_l,
                c.over_dried_kg,
                f.over_dried_kg
            );
        }
    }
    for ((grid, _), worst) in coarse.iter().zip(worst) {
        assert!(
            worst < 0.03,
            "{grid}: worst hours difference {:.2} %",
            100.0 * worst
        );
    }
}
