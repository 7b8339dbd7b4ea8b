//! The season's deep-bed drier dries every load through the one load path (`load::run_load` on a `LoadSpec` built
//! from the buying point's template), so: the same load run by `dryfront dry`'s path and by the season's drier at
//! the same grid gives identical hours, fuel and shrink; loads reach their stop rule; wetter loads take longer; an
//! unheated dryer burns no fuel; weather that does not cover a start is an error naming the load; and a season gives
//! the same schedule on 1 and 2 threads.

use std::path::Path;
use std::sync::Arc;

use chrono::{DateTime, Duration, FixedOffset};
use dryfront::drying::heater::HeaterStrategy;
use dryfront::input::scenario::Scenario;
use dryfront::input::season::{read_buying_point, season_template, SeasonRunSettings};
use dryfront::load::run_load;
use dryfront::season::arrivals::Load;
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::{drying_result, DeepBedDrier, LoadDrier};
use dryfront::season::scenario::BuyingPoint;
use dryfront::season::sim::simulate;

fn root(p: &str) -> String {
    format!("{}/{p}", env!("CARGO_MANIFEST_DIR"))
}

/// The invented Wrenfield buying point (three 4.3 m wagons) on the bundled demo season's weather.
fn drier(settings: SeasonRunSettings) -> (BuyingPoint, DeepBedDrier) {
    let bp = read_buying_point(Path::new(&root("models/buying-points/wrenfield.json"))).unwrap();
    let path = root("weather-samples/cypress-neck-2026/season_000.csv");
    let weather = dryfront::weather::read(path.as_ref(), None, &Default::default())
        .unwrap()
        .0;
    let (template, _) = season_template(
        &bp,
        std::path::Path::new("bp.json"),
        "peanut-inshell",
        Arc::new(weather),
        &settings,
    )
    .unwrap();
    (bp, DeepBedDrier::new(template))
}

fn start() -> DateTime<FixedOffset> {
    DateTime::parse_from_rfc3339("2026-09-16T14:00:00-05:00").unwrap()
}

fn load(id: &str, hours: i64, mass_kg: f64, moisture_pct: f64) -> Load {
    Load {
        id: id.into(),
        arrival: start() + Duration::hours(hours),
        mass_kg,
        moisture_pct,
        notes: String::new(),
    }
}

#[test]
fn the_season_drier_and_the_single_load_path_give_identical_results() {
    let (bp, d) = drier(SeasonRunSettings::default());
    let l = load("L1", 0, 4000.0, 20.0);
    let spec = d.template.spec_for(&l, &bp.dryers[0], l.arrival).unwrap();
    let single = run_load(&spec, &mut ()).unwrap();
    let season = d.dry(&l, &bp.dryers[0], l.arrival).unwrap();
    let expected = drying_result(&single);
    // Bit for bit: the same spec through the same run.
    assert_eq!(format!("{season:?}"), format!("{expected:?}"));
    assert!(season.finished && season.hours > 5.0, "{season:?}");
    // The season frees the dryer when its stop rule (both, by default) holds: the later crossing.
    let o = &single.outcome;
    let later = o
        .hours_to_mean_target
        .unwrap()
        .max(o.hours_to_fraction_target.unwrap());
    assert_eq!(season.hours.to_bits(), later.to_bits());
}

#[test]
fn a_scenario_file_of_the_same_load_gives_what_the_season_gives() {
    // `dryfront dry`'s own input path: a scenario file naming the same crop, container, fan, heater, burner, weather,
    // start, mass, moisture, grid, step, stop rule and airflow mode as the season's first wagon and load.
    let (bp, d) = drier(SeasonRunSettings::default());
    let l = load("L1", 0, 4000.0, 20.0);
    let w = &bp.dryers[0];
    let dir = tempfile::tempdir().unwrap();
    let scenario = serde_json::json!({
        "name": "same-load",
        "crop": "peanut-inshell",
        "container": w.container,
        "net_mass_kg": l.mass_kg,
        "fan": w.fan,
        "weather": root("weather-samples/cypress-neck-2026/season_000.csv"),
        "start": l.arrival.to_rfc3339(),
        "initial_kernel_moisture_pct": l.moisture_pct,
        "heater": { "strategy": w.heater.to_string(), "burner_kw": w.burner_kw.unwrap(), "fuel": "propane" },
        "grid": { "nx": 4, "ny": 2, "nz": 10 },
        "time_step_h": 0.2,
        "max_hours": 120,
        "target_kernel_moisture_pct": bp.rules.target_kernel_pct,
        "stop_rule": "both",
        "airflow_updates": "at-start",
        "prices": { "currency": "USD", "fuel_per_unit": bp.prices.propane_per_l,
                    "electricity_per_kwh": bp.prices.electricity_per_kwh,
                    "peanuts_per_tonne": bp.prices.peanuts_per_tonne }
    });
    let path = dir.path().join("same-load.json");
    std::fs::write(&path, scenario.to_string()).unwrap();
    let (sc, _) = Scenario::read(path.to_str().unwrap(), false).unwrap();
    let single = drying_result(&run_load(&sc.spec, &mut ()).unwrap());
    let season = d.dry(&l, w, l.arrival).unwrap();
    assert_eq!(format!("{single:?}"), format!("{season:?}"));
}

#[test]
fn the_season_result_follows_the_weather_not_a_fixed_air_state() {
    // The same load on a cool humid night and on a warm afternoon: a drier built on one fixed air state would give
    // the same airflow and near-equal figures; through the load path the fan point and drying differ.
    let (bp, d) = drier(SeasonRunSettings::default());
    let a = load("A", 0, 4000.0, 20.0);
    let b = load("B", 12 * 24 + 10, 4000.0, 20.0);
    let ra = d.dry(&a, &bp.dryers[0], a.arrival).unwrap();
    let rb = d.dry(&b, &bp.dryers[0], b.arrival).unwrap();
    assert!((ra.hours - rb.hours).abs() > 0.1, "{ra:?} {rb:?}");
}

#[test]
fn wetter_loads_dry_longer_and_unheated_dryers_burn_no_fuel() {
    let (bp, d) = drier(SeasonRunSettings::default());
    let (dry_l, wet_l) = (load("D", 0, 4000.0, 16.0), load("W", 0, 4000.0, 22.0));
    let heated = &bp.dryers[0];
    assert!(!matches!(heated.heater.strategy, HeaterStrategy::None));
    let a = d.dry(&dry_l, heated, dry_l.arrival).unwrap();
    let b = d.dry(&wet_l, heated, wet_l.arrival).unwrap();
    assert!(a.finished && b.finished && b.hours > a.hours, "{a:?} {b:?}");
    assert!(a.fuel_l > 0.0 && a.kwh > 0.0);
    let cold = bp
        .dryers
        .iter()
        .find(|u| matches!(u.heater.strategy, HeaterStrategy::None))
        .expect("Wrenfield has an unheated wagon");
    let c = d.dry(&dry_l, cold, dry_l.arrival).unwrap();
    assert!(c.fuel_l.abs() < 1e-12, "{c:?}");
}

#[test]
fn weather_not_covering_a_start_is_an_error_naming_the_load() {
    let (bp, d) = drier(SeasonRunSettings::default());
    let late = load("L9", 24 * 400, 4000.0, 18.0);
    let err = d
        .dry(&late, &bp.dryers[0], late.arrival)
        .unwrap_err()
        .to_string();
    assert!(err.contains("\"L9\"") && err.contains("weather"), "{err}");
}

#[test]
fn deep_bed_season_is_identical_on_one_and_two_threads() {
    let (bp, d) = drier(SeasonRunSettings::default());
    let ls: Vec<Load> = [(0, 18.0), (2, 21.0), (3, 16.0), (5, 19.0)]
        .iter()
        .enumerate()
        .map(|(i, &(h, m))| load(&format!("L{i}"), h, 3500.0, m))
        .collect();
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    };
    let run_on = |n: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .unwrap()
            .install(|| {
                simulate(
                    &bp,
                    &ls,
                    &d,
                    DispatchPolicy::Wettest,
                    &pred,
                    bp.season.end(),
                )
                .unwrap()
            })
    };
    let (a, b) = (run_on(1), run_on(2));
    assert_eq!(a, b);
    assert_eq!(a.schedule.len(), 4);
    assert!(a.schedule.iter().all(|r| r.result.finished));
}

#[test]
fn a_drying_asked_again_is_answered_from_the_first_and_only_then() {
    // A sweep's cases share each season's drier: a load put on the same kind of dryer at the same instant again
    // (under another id, on a dryer of another id) is not dried again, and its answer is the one a fresh drier gives,
    // to the bit. Any field the load's spec is built from makes it a new drying.
    let (bp, d) = drier(SeasonRunSettings::default());
    let (w1, w3) = (&bp.dryers[0], &bp.dryers[2]);
    let l = load("L1", 0, 3000.0, 19.0);
    let first = d.dry(&l, w1, l.arrival).unwrap();
    assert_eq!(d.dryings(), 1);
    let mut renamed = (load("other id", 0, 3000.0, 19.0), w1.clone());
    renamed.1.id = "W9".into();
    let again = d.dry(&renamed.0, &renamed.1, l.arrival).unwrap();
    assert_eq!(
        d.dryings(),
        1,
        "the same drying under other ids is asked again"
    );
    let (_, fresh) = drier(SeasonRunSettings::default());
    let expected = fresh.dry(&l, w1, l.arrival).unwrap();
    assert_eq!(format!("{first:?}"), format!("{expected:?}"));
    assert_eq!(format!("{again:?}"), format!("{expected:?}"));
    // Each of these is another drying: a later start, another mass, another moisture, an unheated dryer (W3 differs
    // from W1 in its heater and burner only).
    let later = l.arrival + Duration::hours(1);
    let differs = [
        d.dry(&l, w1, later).unwrap(),
        d.dry(&load("L1", 0, 3100.0, 19.0), w1, l.arrival).unwrap(),
        d.dry(&load("L1", 0, 3000.0, 19.5), w1, l.arrival).unwrap(),
        d.dry(&l, w3, l.arrival).unwrap(),
    ];
    assert_eq!(d.dryings(), 5);
    for r in differs {
        assert_ne!(format!("{r:?}"), format!("{first:?}"));
    }
}
