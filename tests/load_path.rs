//! The stepwise run and the one load path: the demo load meets the 95 % rule and reports it with its clock time;
//! fuel at a crossing moves with the hours as the time step is halved instead of staying fixed while hours move; over-dried mass moves
//! continuously with the heater setting (zones by mass, not by whole cells); a non-finite state stops the run with an
//! error naming the quantity and the cell; an observer sees every step and the bed.
mod deep_bed_support;
use deep_bed_support as common;

use common::{Case, SteppedBy};
use dryfront::drying::bed::BedState;
use dryfront::drying::heater::HeaterStrategy;
use dryfront::drying::layer::{CellMoisture, LayerMaterial};
use dryfront::drying::material::CropMaterial;
use dryfront::drying::run::{
    ConstantAmbient, FlowField, Run, RunError, RunObserver, RunSettings, StepReport, StopReason,
    StopRule,
};
use dryfront::input::scenario::Scenario;
use dryfront::load::run_load;
use dryfront::props::psychro::AirState;
use ndarray::Array2;

#[test]
fn the_demo_load_meets_the_whole_load_rule_and_says_when() {
    let (sc, _) = Scenario::read("demo-load", false).unwrap();
    assert_eq!(sc.spec.run.stop, StopRule::Both);
    let r = run_load(&sc.spec, &mut ()).unwrap();
    let o = &r.outcome;
    assert_eq!(o.stop_reason, StopReason::RuleMet);
    let mean = o.at_mean_target.expect("mean reaches target");
    let whole = o
        .at_fraction_target
        .expect("95 % of the load reaches target");
    assert!(whole.hours > mean.hours, "{whole:?} {mean:?}");
    // The run stops at the end of the step in which the later rule held.
    assert!(o.hours >= whole.hours && o.hours - whole.hours < sc.spec.run.dt_s / 3600.0 + 1e-9);
    let at = r.clock.fraction_target.unwrap();
    let expected =
        sc.spec.start + chrono::Duration::milliseconds((whole.hours * 3.6e6).round() as i64);
    assert_eq!(at, expected);
    // Accounts at the crossing lie inside the run's totals and grow from the mean crossing to the whole-load one.
    assert!(mean.fuel_used < whole.fuel_used && whole.fuel_used <= o.fuel_used + 1e-9);
    assert!(mean.shrink_kg <= whole.shrink_kg + 1e-9);
    eprintln!(
        "demo: mean at {:.2} h ({:.1} L), 95 % at {:.2} h ({:.1} L) = {}",
        mean.hours, mean.fuel_used, whole.hours, whole.fuel_used, at
    );
}

#[test]
fn fuel_at_the_crossing_converges_with_the_time_step() {
    let run = |dt_s: f64| {
        Case {
            dt_s,
            nz: 20,
            ..Case::default()
        }
        .run()
        .0
        .at_mean_target
        .unwrap()
    };
    let (a, b, c) = (run(720.0), run(360.0), run(180.0));
    eprintln!(
        "dt 0.2/0.1/0.05 h: hours {:.4} {:.4} {:.4}, fuel {:.4} {:.4} {:.4} L",
        a.hours, b.hours, c.hours, a.fuel_used, b.fuel_used, c.fuel_used
    );
    // Fuel follows the hours: at a fixed rise and steady weather the burner's rate is constant, so fuel per hour
    // at the crossing is the same whatever the step (to round-off), and fuel moves when the hours move.
    for t in [a, b, c] {
        assert!(
            (t.fuel_used / t.hours - a.fuel_used / a.hours).abs() < 1e-9 * a.fuel_used / a.hours
        );
    }
    assert!((a.fuel_used - b.fuel_used).abs() > 0.0);
    // Each halving moves fuel as it moves the hours, by under 0.4 % and less at each halving (measured 0.32 % then
    // 0.11 % with both compartments' activation energy at 21.2 kJ/mol, a ratio of 2.8, near first order in the
    // step; 0.15–0.20 % without a steady ratio with the hull's old 30 kJ/mol).
    let (first, second) = (
        (a.fuel_used - b.fuel_used).abs(),
        (b.fuel_used - c.fuel_used).abs(),
    );
    assert!(first < 4e-3 * c.fuel_used, "{first}");
    assert!(second < first, "{second} then {first}");
}

#[test]
fn over_dried_mass_moves_continuously_with_the_rise() {
    let masses: Vec<f64> = (0..9)
        .map(|i| {
            let rise_k = 7.0 + 0.25 * i as f64;
            let (o, _) = Case {
                strategy: HeaterStrategy::FixedRise { rise_k },
                nz: 10,
                max_hours: 60.0,
                ..Case::default()
            }
            .run();
            o.zones.over_dried_dry_kg
        })
        .collect();
    eprintln!("over-dried dry matter, rise 7.00..9.00 K: {masses:?}");
    // Whole-cell counting on 10 layers moves in steps of a tenth of the load; by mass, each 0.25 K moves it by a
    // small amount: every value differs from its neighbours, and no step is more than a tenth of a layer. (The run
    // stops on a whole 0.1 h step, so each value also carries up to one step's over-drying: the steps are not
    // smooth enough for a bound relative to their own mean — measured largest/mean 1.84 with the constants before
    // the recalibration to the published wagon result, 2.52 after — but they stay far below a layer: largest
    // 1.5 kg before, 1.3 kg after, against 2.5 kg.)
    let steps: Vec<f64> = masses.windows(2).map(|w| (w[1] - w[0]).abs()).collect();
    let mean = steps.iter().sum::<f64>() / steps.len() as f64;
    let layer_kg = masses.iter().cloned().fold(0.0, f64::max).max(1.0) / 10.0;
    assert!(steps.iter().all(|&s| s > 0.0), "{masses:?}");
    assert!(steps.iter().all(|&s| s < 0.1 * layer_kg), "{steps:?}");
    assert!(
        mean < layer_kg,
        "steps {mean} kg vs a layer's {layer_kg} kg"
    );
}

#[test]
fn a_non_finite_state_stops_the_run_naming_the_cell() {
    let (_, crop_material) = common::peanut();
    let mut initial = ndarray::Array3::from_elem((4, 3, 6), 0.20);
    initial[[2, 1, 3]] = 0.2137;
    // The peanut material, except that a cell starting at the marked kernel moisture turns non-finite on its
    // first step: the test seam for a state going out of bounds in one cell.
    let poisoned_kernel_db = 0.2137 / (1.0 - 0.2137);
    let material = SteppedBy(
        crop_material,
        move |p: &CropMaterial, m: CellMoisture, t_c, rh, dt_s| {
            let next = p.thin_layer_step(m, t_c, rh, dt_s);
            if (m.kernel_db - poisoned_kernel_db).abs() < 1e-12 {
                CellMoisture {
                    hull_db: f64::NAN,
                    ..next
                }
            } else {
                next
            }
        },
    );
    let air = AirState::from_rh(25.0, 0.7, 101_325.0);
    let bed = BedState::new(
        &material,
        Array2::from_elem((4, 3), 1.2),
        1.0,
        6,
        270.0,
        &dryfront::drying::bed::InitialMoisture::Cells(initial),
        25.0,
    )
    .unwrap();
    let field = FlowField::from_velocity(Array2::from_elem((4, 3), 0.2), &air);
    let heater = rise8();
    let mut flow = dryfront::drying::run::FixedFlow(field);
    let ambient = ConstantAmbient(air);
    let err = Run::new(
        &material,
        bed,
        &ambient,
        &mut flow,
        heater,
        RunSettings::default(),
    )
    .unwrap()
    .run_to_end(&mut ())
    .unwrap_err();
    match &err {
        RunError::NonPhysical { cell, hours, .. } => {
            assert_eq!(*cell, (2, 1, 3), "{err}");
            assert!(*hours <= 0.1 + 1e-9, "{err}");
        }
        other => panic!("expected a non-physical state, got {other}"),
    }
    let msg = err.to_string();
    assert!(
        msg.contains("hull moisture") && msg.contains("cell (x 2, y 1, layer 3)"),
        "{msg}"
    );
}

/// A burner holding +8 K with the crop's safe plenum maximum.
fn rise8() -> dryfront::drying::heater::Heater {
    dryfront::drying::heater::Heater {
        strategy: HeaterStrategy::FixedRise { rise_k: 8.0 },
        window_h: None,
        capacity_w: None,
        max_plenum_c: 35.0,
        fuel: dryfront::drying::heater::Fuel::propane(),
    }
}

struct Probe {
    steps: u64,
    bottom_kernel: Vec<f64>,
}

impl RunObserver for Probe {
    fn on_step(&mut self, r: &StepReport, bed: &BedState) {
        self.steps = r.step;
        self.bottom_kernel.push(bed.kernel_db[[0, 0, 0]]);
    }
}

#[test]
fn an_observer_sees_every_step_and_the_bed() {
    let (_, material) = common::peanut();
    let air = AirState::from_rh(25.0, 0.7, 101_325.0);
    let bed = BedState::new(
        &material,
        Array2::from_elem((1, 1), 1.2),
        1.0,
        8,
        270.0,
        &dryfront::drying::bed::InitialMoisture::Uniform(0.2),
        25.0,
    )
    .unwrap();
    let field = FlowField::from_velocity(Array2::from_elem((1, 1), 0.2), &air);
    let heater = rise8();
    let settings = RunSettings {
        stop: StopRule::Hours(3.05),
        ..RunSettings::default()
    };
    let mut flow = dryfront::drying::run::FixedFlow(field);
    let ambient = ConstantAmbient(air);
    let mut probe = Probe {
        steps: 0,
        bottom_kernel: Vec::new(),
    };
    let (out, _) = Run::new(&material, bed, &ambient, &mut flow, heater, settings)
        .unwrap()
        .run_to_end(&mut probe)
        .unwrap();
    // 30 whole steps of 0.1 h and a last one of 0.05 h, so the run ends exactly at the rule's hours.
    assert_eq!(probe.steps, 31);
    assert!((out.hours - 3.05).abs() < 1e-12);
    assert_eq!(out.stop_reason, StopReason::RuleMet);
    assert!(probe.bottom_kernel.windows(2).all(|w| w[1] < w[0]));
}
