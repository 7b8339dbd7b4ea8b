//! A load's status from readings and the forecast of its finish (`status`): a load re-started from readings taken
//! from its own simulation finishes where the uninterrupted run does; readings pull the forecast the right way; the
//! ensemble is centred on the deterministic run and widens with the forecast's stated error; thread count does not
//! change the answer.
use chrono::Duration;
use dryfront::airflow::geometry::Grid;
use dryfront::drying::bed::BedState;
use dryfront::drying::run::{RunObserver, StepReport, StopRule};
use dryfront::input::scenario::Scenario;
use dryfront::load::{run_load, LoadSpec};
use dryfront::status::forecast::{ensemble, finish, replay, resume_spec};
use dryfront::status::readings::{adjust, sample};
use dryfront::status::{LoadStatus, Part, Percentiles, Place, Reading};
use dryfront::weather::ensemble::Spread;
use proptest::prelude::*;

/// The demo load on a coarse grid (the forecast's own default size), net mass from a scale ticket.
fn demo() -> LoadSpec {
    let (sc, _) = Scenario::read("demo-load", false).unwrap();
    let mut spec = sc.spec;
    spec.grid = Grid {
        nx: 8,
        ny: 3,
        nz: 12,
    };
    spec.fill = dryfront::load::FillSpec::NetMass(6000.0);
    spec
}

/// Keeps the bed at one hour of the run.
struct At {
    hours: f64,
    bed: Option<BedState>,
}
impl RunObserver for At {
    fn on_step(&mut self, r: &StepReport, bed: &BedState) {
        if self.bed.is_none() && r.hours >= self.hours - 1e-9 {
            self.bed = Some(bed.clone());
        }
    }
}

fn readings_from(spec: &LoadSpec, bed: &BedState, hours: f64) -> Vec<Reading> {
    let time = spec.start + Duration::minutes((hours * 60.0) as i64);
    let m = &*spec.material;
    let mk = |part, place| Reading {
        time,
        moisture_wb: sample(m, bed, part, &place),
        accuracy_wb: 0.005,
        part,
        place,
        meter: "test".into(),
    };
    vec![
        mk(Part::Kernel, Place::Composite),
        mk(
            Part::Pod,
            Place::At {
                along: 0.5,
                across: 0.5,
                depth_m: 0.1,
            },
        ),
        mk(
            Part::Kernel,
            Place::At {
                along: 0.2,
                across: 0.8,
                depth_m: 0.9,
            },
        ),
    ]
}

fn status(spec: &LoadSpec, readings: Vec<Reading>, hours: f64) -> LoadStatus {
    let now = spec.start + Duration::minutes((hours * 60.0) as i64);
    LoadStatus {
        spec: spec.clone(),
        readings,
        plenum: vec![],
        now,
        observed_end: now,
    }
}

#[test]
fn a_load_restarted_from_its_own_readings_at_hour_14_finishes_with_the_uninterrupted_run() {
    let spec = demo();
    let mut at = At {
        hours: 14.0,
        bed: None,
    };
    let whole = run_load(&spec, &mut at).unwrap().outcome;
    let bed = at.bed.unwrap();
    let st = status(&spec, readings_from(&spec, &bed, 14.0), 14.0);
    let rep = replay(&st).unwrap();
    // The replay is the same computation as the uninterrupted run up to hour 14, so it agrees with the readings
    // to rounding and the adjustment leaves it alone.
    for c in &rep.checks {
        assert!((c.replay_wb - c.reading_wb).abs() < 1e-12, "{c:?}");
        assert!(c.replay_within);
    }
    assert_eq!(rep.adjusted, rep.replayed);
    let f = finish(&resume_spec(&st.spec, rep.adjusted.clone(), st.now).unwrap()).unwrap();
    let (m0, f0) = (
        whole.hours_to_mean_target.unwrap(),
        whole.hours_to_fraction_target.unwrap(),
    );
    let (m1, f1) = (14.0 + f.mean_h.unwrap(), 14.0 + f.fraction_h.unwrap());
    eprintln!("uninterrupted: mean {m0:.3} h, 95 % {f0:.3} h; restarted at 14 h: mean {m1:.3} h, 95 % {f1:.3} h");
    // The issue asks for 1 %; measured 0.01 % (2026-12-03). Bound 0.1 %: the restart solves the airflow again at
    // hour 14, where the uninterrupted run re-solves only when its thresholds are passed, so the two are not
    // bit-identical, and the crossing times are interpolated inside 0.1 h steps.
    assert!((m1 - m0).abs() / m0 < 1e-3, "{m1} vs {m0}");
    assert!((f1 - f0).abs() / f0 < 1e-3, "{f1} vs {f0}");
}

#[test]
fn ensemble_is_centred_on_the_forecast_and_widens_with_its_error() {
    let spec = demo();
    let st = status(&spec, vec![], 14.0);
    let rep = replay(&st).unwrap();
    let resumed = resume_spec(&st.spec, rep.adjusted, st.now).unwrap();
    let det = finish(&resumed).unwrap();
    let run = |sigma: f64| {
        let spread = Spread {
            t_sigma_24h_k: sigma,
            dew_sigma_24h_k: sigma,
            seed: 11,
        };
        let m = ensemble(&resumed, st.now, 20, &spread).unwrap();
        (Percentiles::of(m.iter().map(|f| f.fraction_h)), m)
    };
    let (narrow, _) = run(1.0);
    let (wide, members) = run(3.0);
    let dt_h = spec.run.dt_s / 3600.0;
    let p50 = narrow.p50.unwrap();
    let d = det.fraction_h.unwrap();
    eprintln!(
        "deterministic {d:.3} h; σ 1 K: P10 {:?} P50 {p50:.3} P90 {:?}; σ 3 K: {:?}",
        narrow.p10, narrow.p90, wide
    );
    // Within one time step: the forecast here is the weather itself, the members come in antithetic pairs.
    assert!((p50 - d).abs() <= dt_h, "P50 {p50} vs deterministic {d}");
    let width = |p: &Percentiles| p.p90.unwrap() - p.p10.unwrap();
    assert!(width(&wide) > width(&narrow), "{wide:?} vs {narrow:?}");
    // Thread count: one thread gives the same members.
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let spread = Spread {
        t_sigma_24h_k: 3.0,
        dew_sigma_24h_k: 3.0,
        seed: 11,
    };
    let single = pool.install(|| ensemble(&resumed, st.now, 20, &spread).unwrap());
    assert_eq!(single, members);
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 8, ..ProptestConfig::default() })]
    /// A composite reading wetter than the replay (beyond the meter's ±0.5 point) moves the finish later, a drier
    /// one earlier.
    #[test]
    fn readings_pull_the_forecast_the_right_way(delta_pts in 0.8f64..3.0, wetter in any::<bool>()) {
        let spec = demo();
        let st = status(&spec, vec![], 14.0);
        let base = replay(&st).unwrap();
        let m = &*spec.material;
        let said = sample(m, &base.replayed, Part::Kernel, &Place::Composite);
        let sign = if wetter { 1.0 } else { -1.0 };
        let r = Reading {
            time: st.now,
            moisture_wb: said + sign * delta_pts / 100.0,
            accuracy_wb: 0.005,
            part: Part::Kernel,
            place: Place::Composite,
            meter: "test".into(),
        };
        let mut bed = base.replayed.clone();
        prop_assert_eq!(adjust(m, &mut bed, std::slice::from_ref(&r)), 0.0);
        let after = sample(m, &bed, Part::Kernel, &Place::Composite);
        // Moved to the near edge of the band.
        prop_assert!((after - (r.moisture_wb - sign * r.accuracy_wb)).abs() < 1e-6);
        let f0 = finish(&resume_spec(&spec, base.replayed.clone(), st.now).unwrap()).unwrap();
        let f1 = finish(&resume_spec(&spec, bed, st.now).unwrap()).unwrap();
        let (h0, h1) = (f0.fraction_h.unwrap(), f1.fraction_h.unwrap());
        if wetter { prop_assert!(h1 > h0, "{} vs {}", h1, h0) } else { prop_assert!(h1 < h0, "{} vs {}", h1, h0) }
    }
}

#[test]
fn stop_rule_of_the_replay_is_the_clock() {
    // The replay stops at the latest reading whatever the scenario's own rule.
    let spec = demo();
    assert_eq!(spec.run.stop, StopRule::Both);
    let st = status(&spec, vec![], 6.5);
    let rep = replay(&st).unwrap();
    assert!(rep.mean_kernel_wb.0 > spec.run.target_kernel_wb);
}
