//! Bad input gets a clear error naming the file, the line and the field, never a panic or a silent default:
//! arrivals outside the weather record, a missing column, negative masses, moisture out of 5–45 %, bad times,
//! and a buying point with no dryers.

mod season_support;

use std::path::Path;

use dryfront::error::InputError;
use dryfront::season::arrivals::parse_arrivals_csv;
use dryfront::season::dispatch::{DispatchPolicy, MoistureRatePredictor};
use dryfront::season::drier::RateRuleDrier;
use dryfront::season::scenario::BuyingPoint;
use dryfront::season::sim::simulate;
use dryfront::season::SeasonError;
use season_support::*;

const HEAD: &str = "load_id,arrival,net_mass_kg,kernel_moisture_pct,notes\n";

fn parse(text: &str) -> Result<Vec<dryfront::season::arrivals::Load>, InputError> {
    let range = Some((t0(), at_h(24.0 * 10.0)));
    parse_arrivals_csv(Path::new("yard/arrivals.csv"), text.as_bytes(), range)
}

fn field_error(text: &str) -> (u64, String, String) {
    match parse(text).unwrap_err() {
        e @ InputError::Field { .. } => {
            let msg = e.to_string();
            let InputError::Field { line, field, .. } = e else {
                unreachable!()
            };
            (line, field, msg)
        }
        other => panic!("expected a field error, got {other}"),
    }
}

#[test]
fn arrival_outside_the_weather_record_names_line_and_field() {
    let text = format!(
        "{HEAD}A1,2026-09-10T14:00:00-04:00,4000,20,\nA2,2026-10-30T14:00:00-04:00,4000,20,late\n"
    );
    let (line, field, msg) = field_error(&text);
    assert_eq!((line, field.as_str()), (3, "arrival"));
    assert!(
        msg.starts_with("yard/arrivals.csv:3: field \"arrival\""),
        "{msg}"
    );
    assert!(msg.contains("outside the weather record"), "{msg}");
}

#[test]
fn missing_column_is_named() {
    let text = "load_id,arrival,kernel_moisture_pct\nA1,2026-09-10T14:00:00-04:00,20\n";
    let (line, field, msg) = field_error(text);
    assert_eq!((line, field.as_str()), (1, "net_mass_kg"));
    assert!(msg.contains("column is missing"), "{msg}");
}

#[test]
fn negative_mass_is_rejected() {
    let text = format!(
        "{HEAD}A1,2026-09-10T14:00:00-04:00,4000,20,\nA2,2026-09-10T15:00:00-04:00,-300,20,\n"
    );
    let (line, field, msg) = field_error(&text);
    assert_eq!((line, field.as_str()), (3, "net_mass_kg"));
    assert!(msg.contains("\"-300\""), "{msg}");
}

#[test]
fn moisture_out_of_range_is_rejected() {
    for bad in ["4.9", "45.5", "wet"] {
        let text = format!("{HEAD}A1,2026-09-10T14:00:00-04:00,4000,{bad},\n");
        let (line, field, _) = field_error(&text);
        assert_eq!((line, field.as_str()), (2, "kernel_moisture_pct"), "{bad}");
    }
}

#[test]
fn bad_time_and_missing_offset_are_rejected() {
    for bad in ["2026-09-10 14:00", "2026-09-10T14:00:00", "yesterday"] {
        let text = format!("{HEAD}A1,{bad},4000,20,\n");
        let (line, field, _) = field_error(&text);
        assert_eq!((line, field.as_str()), (2, "arrival"), "{bad}");
    }
}

#[test]
fn duplicate_ids_are_rejected() {
    let text = format!(
        "{HEAD}A1,2026-09-10T14:00:00-04:00,4000,20,\nA1,2026-09-10T15:00:00-04:00,4000,20,\n"
    );
    let (line, field, msg) = field_error(&text);
    assert_eq!((line, field.as_str()), (3, "load_id"));
    assert!(msg.contains("line 2"), "{msg}");
}

#[test]
fn a_good_file_parses_sorted_with_notes() {
    let text = format!(
        "{HEAD}A2,2026-09-10T18:00:00-04:00,5200,23.5,second\nA1,2026-09-10T14:00:00-04:00,4000,20,first\n"
    );
    let ls = parse(&text).unwrap();
    assert_eq!(ls[0].id, "A1");
    assert_eq!(ls[1].notes, "second");
}

#[test]
fn zero_dryers_is_an_error_not_a_panic() {
    let bp = point(0, 1.0, 12.0, 10);
    let ls = loads(&[(1.0, 20.0)]);
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    };
    let err = simulate(
        &bp,
        &ls,
        &RateRuleDrier::new(10.0),
        DispatchPolicy::Fcfs,
        &pred,
        bp.season.end(),
    )
    .unwrap_err();
    assert!(matches!(err, SeasonError::Input(_)));
    assert!(err.to_string().contains("dryers"), "{err}");
    // And in a scenario file, the validator names the file and the field.
    let mut json = serde_json::to_value(point(1, 1.0, 12.0, 10)).unwrap();
    json["dryers"] = serde_json::json!([]);
    let err = BuyingPoint::from_json(Path::new("yard/bp.json"), &json.to_string()).unwrap_err();
    assert!(
        err.to_string()
            .starts_with("yard/bp.json:1: field \"dryers\""),
        "{err}"
    );
}

#[test]
fn loads_past_the_season_or_too_heavy_are_errors() {
    let bp = point(2, 1.0, 12.0, 2);
    let pred = MoistureRatePredictor {
        target_pct: 10.0,
        rate_pct_per_h: 0.5,
    };
    let late = loads(&[(1.0, 20.0), (50.0, 20.0)]);
    let err = simulate(
        &bp,
        &late,
        &RateRuleDrier::new(10.0),
        DispatchPolicy::Fcfs,
        &pred,
        bp.season.end(),
    )
    .unwrap_err();
    assert!(
        err.to_string().contains("load L2") && err.to_string().contains("season's end"),
        "{err}"
    );
    let mut heavy = loads(&[(1.0, 20.0)]);
    heavy[0].mass_kg = 9000.0;
    let err = simulate(
        &bp,
        &heavy,
        &RateRuleDrier::new(10.0),
        DispatchPolicy::Fcfs,
        &pred,
        bp.season.end(),
    )
    .unwrap_err();
    assert!(
        err.to_string().contains("heavier than every dryer"),
        "{err}"
    );
}

#[test]
fn bundled_demo_arrivals_fit_their_scenario() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("models/buying-points");
    let bp = dryfront::input::season::read_buying_point(&dir.join("wrenfield.json")).unwrap();
    let ls = dryfront::input::season::read_arrivals_csv(
        &dir.join("wrenfield-arrivals.csv"),
        Some((bp.season.start, bp.season.end())),
    )
    .unwrap();
    assert_eq!(ls.len(), 50);
    let largest = bp.dryers.iter().map(|d| d.capacity_kg).fold(0.0, f64::max);
    assert!(ls.iter().all(|l| l.mass_kg <= largest));
}
