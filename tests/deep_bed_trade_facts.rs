//! The published wagon result, checked on start dates the bundled peanut rates were NOT fitted to.
//!
//! "Performance of Semi-Trailer Peanut Drying Units" (2009 abstract, proceedings of the American Peanut Research
//! and Education Society; DOMAIN.md §12): standard 4.3 × 2.4 m wagons, about 1.3 m of peanuts, fans sized for about
//! 10 m³/min per m³, dry to 10 % in less than 24 h using about 26.5 L of propane per ton. Here: the bundled TMY3
//! year placed in 2026, the wagon filled level 1.3 m deep at 10 m³/min per m³, 20 → 10 % kernel moisture, burner
//! holding the crop's 35 °C plenum cap, air on at 3 pm on nine dates 6 days apart from 8 September to 26 October
//! (`examples/calibrate_wagon.rs` fitted the rates on the dates 3 days before each of these). Checked as medians
//! over those dates: hours under 24 and propane 20–33 L per tonne (the window around 26.5 L/ton, which is
//! 26.5–29.2 L/t for a metric or a short ton). The spread is printed for the record.
use std::sync::Arc;

use dryfront::airflow::geometry::PlenumChoice;
use dryfront::calibrate::wagon::{median, september_starts};
use dryfront::crop::Crop;
use dryfront::input::wagon::published_wagon_case;

/// Median hours and litres per tonne over the unfitted dates, each date printed; checks every date reaches 10 %.
fn medians(plenum: PlenumChoice) -> (f64, f64) {
    let mut case = published_wagon_case().expect("bundled wagon and TMY3");
    let mut container = (*case.container).clone();
    container.plenum = plenum;
    case.container = Arc::new(container);
    let crop = Arc::new(Crop::load_named("peanut-inshell").expect("bundled peanut"));
    let starts = september_starts(8, 9, 6);
    let r = case
        .run_all(&crop, &starts, "plenum=35".parse().unwrap())
        .expect("runs");
    let hours: Vec<f64> = r.iter().map(|x| x.hours).collect();
    let lpt: Vec<f64> = r.iter().map(|x| x.litres_per_tonne).collect();
    let span = |v: &[f64]| {
        (
            v.iter().cloned().fold(f64::INFINITY, f64::min),
            v.iter().cloned().fold(f64::NEG_INFINITY, f64::max),
        )
    };
    for (s, x) in starts.iter().zip(&r) {
        eprintln!("{s}: {:.1} h, {:.1} L/t", x.hours, x.litres_per_tonne);
    }
    let (mh, ml) = (median(&hours), median(&lpt));
    eprintln!(
        "{plenum:?}: median {mh:.2} h (spread {:?}), {ml:.2} L/t (spread {:?})",
        span(&hours),
        span(&lpt)
    );
    assert!(
        hours.iter().all(|h| h.is_finite()),
        "every date reaches 10 %"
    );
    (mh, ml)
}

#[test]
fn wagon_on_harvest_weather_meets_the_published_result_on_unfitted_dates() {
    let (mh, ml) = medians(PlenumChoice::default());
    assert!(mh < 24.0, "median {mh} h");
    assert!((20.0..=33.0).contains(&ml), "median {ml} L/t");
}

/// The rates were fitted with the wagon's own plenum model (the 1-D duct); the published result must not hang on
/// that choice. Under the 2-D plenum the medians stay within 0.5 % of the duct's (measured 2026-12-03: 23.400 h
/// against 23.406 h, 32.03 against 32.06 L/t): on this level, fixed-flow wagon run to its mean, the plenum only
/// moves air between columns. The bound is 0.5 %, not round-off, because the two plenums do move air differently.
#[test]
fn the_published_wagon_result_holds_under_the_2d_plenum() {
    let (dh, dl) = medians(PlenumChoice::Duct {});
    let (mh, ml) = medians(PlenumChoice::TwoD {
        cells_per_column: None,
        mixing_length_ratio: None,
    });
    assert!(mh < 24.0, "median {mh} h");
    assert!((20.0..=33.0).contains(&ml), "median {ml} L/t");
    assert!(
        (mh / dh - 1.0).abs() < 5e-3,
        "2-D {mh} h against duct {dh} h"
    );
    assert!(
        (ml / dl - 1.0).abs() < 5e-3,
        "2-D {ml} L/t against duct {dl} L/t"
    );
}
