//! What the season's coarse grid costs: a full-resolution load is far too costly to repeat hundreds of times, so the
//! season runs each load on a coarse grid (4 × 2 columns × 10 layers, 0.2 h steps, airflow solved once per
//! load at its start). Here a sample of demo loads is run on that grid and on the single-load default grid
//! (16 × 6 × 20, 0.1 h steps) on the same weather; both solve the airflow once at the start, so what is measured is
//! the cost of the coarse grid and step. Hours to target must agree within 3 % (the bound);
//! fuel and over-dried mass differences are printed for the record.
use chrono::{Duration, FixedOffset, TimeZone};

use std::sync::Arc;

use dryfront::airflow::geometry::Grid;
use dryfront::input::season::{read_buying_point, season_template, SeasonRunSettings};
use dryfront::load::AirflowUpdates;
use dryfront::season::arrivals::Load;
use dryfront::season::drier::{DeepBedDrier, LoadDrier};

#[test]
fn coarse_season_grid_keeps_hours_to_target_within_three_percent() {
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
    let coarse_drier = drier(SeasonRunSettings::default());
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
    // (dryer index, mass kg, kernel moisture %, start offset h): wagons and trailers, wet and moderate loads.
    let sample = [
        (0, 4200.0, 22.0, 0),
        (3, 3600.0, 18.0, 50),
        (5, 6800.0, 24.0, 120),
        (6, 5200.0, 19.5, 200),
    ];
    let mut worst: f64 = 0.0;
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
        let c = coarse_drier.dry(&load, dryer, start).unwrap();
        let f = fine_drier.dry(&load, dryer, start).unwrap();
        assert!(c.finished && f.finished, "{c:?} {f:?}");
        let rel = c.hours / f.hours - 1.0;
        worst = worst.max(rel.abs());
        eprintln!(
            "{} on {}: hours {:.2} (coarse) vs {:.2} (fine) {:+.2} %; propane {:.1} vs {:.1} L; over-dried {:.0} vs {:.0} kg",
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
    assert!(
        worst < 0.03,
        "worst hours difference {:.2} %",
        100.0 * worst
    );
}
