//! Physical behaviour of the deep-bed model with the bundled peanut crop: the drying front moves up and the bottom
//! dries first; hotter air shortens the run, burns more fuel per tonne and over-dries more; at a fixed airflow per
//! m³ of peanuts hours to target do not depend on bed depth (the thin-layer rate has no velocity term); humid nights
//! without heat rewet the top layer's hulls (pod moisture rises) while kernel moisture barely moves; results do not
//! depend on thread count; refining the time step and layers changes hours to target by less than 2 %.
mod deep_bed_support;
use deep_bed_support as common;

use common::Case;
use dryfront::drying::bed::{BedState, InitialMoisture};
use dryfront::drying::heater::{Fuel, Heater, HeaterStrategy};
use dryfront::drying::layer::LayerMaterial;
use dryfront::drying::run::{Ambient, AmbientSample, FlowField, RunSettings};
use dryfront::props::psychro::AirState;
use ndarray::Array2;

fn hours(case: &Case) -> f64 {
    case.run().0.hours_to_mean_target.expect("reaches target")
}

#[test]
fn drying_front_moves_up_and_bottom_dries_first() {
    let (out, _) = Case::default().run();
    let mid = &out.series[out.series.len() / 2];
    assert!(mid.bottom_kernel_pct < mid.top_kernel_pct - 1.0, "{mid:?}");
    // The top layer keeps its moisture longer than the bottom: at 4 h the bottom has lost more.
    let early = out.series.iter().find(|r| r.hours >= 4.0).unwrap();
    assert!(
        20.0 - early.bottom_kernel_pct > 5.0 * (20.0 - early.top_kernel_pct).max(1e-3),
        "{early:?}"
    );
}

#[test]
fn hotter_air_is_faster_costs_more_fuel_and_over_dries_more() {
    let gentle = Case {
        strategy: HeaterStrategy::FixedRise { rise_k: 5.0 },
        ..Case::default()
    }
    .run()
    .0;
    let hot = Case {
        strategy: HeaterStrategy::FixedRise { rise_k: 15.0 },
        ..Case::default()
    }
    .run()
    .0;
    assert!(hot.hours_to_mean_target.unwrap() < gentle.hours_to_mean_target.unwrap());
    assert!(hot.fuel_per_tonne > gentle.fuel_per_tonne);
    assert!(hot.over_dried_fraction > gentle.over_dried_fraction);
    // Bottom over-drying shows in the hot case: the driest cell ends well below target.
    let driest = |o: &dryfront::drying::run::Outcome| o.series.last().unwrap().driest_kernel_pct;
    assert!(
        driest(&hot) < 9.0 && driest(&hot) < driest(&gentle) - 0.5,
        "{} vs {}",
        driest(&hot),
        driest(&gentle)
    );
}

#[test]
fn hours_do_not_depend_on_depth_at_fixed_specific_airflow() {
    let shallow = hours(&Case {
        depth_m: 0.8,
        nz: 16,
        ..Case::default()
    });
    let deep = hours(&Case {
        depth_m: 1.6,
        nz: 32,
        ..Case::default()
    });
    assert!(
        (shallow / deep - 1.0).abs() < 0.02,
        "{shallow} h vs {deep} h"
    );
}

#[test]
fn refining_time_step_and_layers_changes_hours_by_under_two_percent() {
    let base = hours(&Case::default());
    let fine = hours(&Case {
        dt_s: 180.0,
        nz: 50,
        ..Case::default()
    });
    let change = (base / fine - 1.0).abs();
    eprintln!("hours to target: {base:.3} h (dt 0.1 h, 25 layers) vs {fine:.3} h (0.05 h, 50 layers): {change:.4}");
    assert!(change < 0.02);
}

#[test]
fn uniform_columns_equal_the_single_column_model() {
    let one = Case::default().run().0;
    let many = Case {
        columns: (3, 2),
        ..Case::default()
    }
    .run()
    .0;
    assert!((one.hours - many.hours).abs() < 1e-9);
    assert!((one.final_kernel_pct - many.final_kernel_pct).abs() < 1e-9);
    assert!((one.fuel_per_tonne - many.fuel_per_tonne).abs() < 1e-9);
}

/// A day–night cycle: warm dry afternoons, humid nights (RH ~95 % at 03:00).
struct DayNight;
impl Ambient for DayNight {
    fn at(&self, elapsed_s: f64) -> Option<AmbientSample> {
        let h = elapsed_s / 3600.0;
        let phase = ((h - 15.0) / 24.0 * std::f64::consts::TAU).cos(); // +1 at 15:00
        let t = 22.0 + 6.0 * phase;
        let rh = (0.72 - 0.23 * phase).clamp(0.05, 0.97);
        Some(AmbientSample {
            air: AirState::from_rh(t, rh, 101_325.0),
            local_hour: (h as u64 % 24) as u32,
        })
    }
}

#[test]
fn humid_nights_without_heat_rewet_top_hulls_not_kernels() {
    let (crop, material) = common::peanut();
    // A nearly dry load (kernels 9.5 %, hulls in equilibrium) on unheated air through two nights.
    let bed = BedState::new(
        &material,
        Array2::from_elem((1, 1), 1.25),
        1.0,
        25,
        280.0,
        &InitialMoisture::Uniform(0.095),
        22.0,
    )
    .unwrap();
    let field = FlowField::from_velocity(
        Array2::from_elem((1, 1), 0.2),
        &AirState::from_rh(20.0, 0.6, 101_325.0),
    );
    let heater = Heater {
        strategy: HeaterStrategy::None,
        window_h: None,
        capacity_w: None,
        max_plenum_c: crop.safety.max_plenum_temp_c,
        fuel: Fuel::propane(),
    };
    let settings = RunSettings {
        max_hours: 48.0,
        target_kernel_wb: 0.05,
        record_every_s: 1800.0,
        ..Default::default()
    };
    let (out, _) = common::run_fixed(&material, bed, &DayNight, field, heater, settings);
    // Top hull moisture rises through the second night (20:00 → 08:00, the humid hours) and kernels move far less.
    let at = |h: f64| {
        out.series
            .iter()
            .min_by(|a, b| (a.hours - h).abs().total_cmp(&(b.hours - h).abs()))
            .unwrap()
    };
    let (afternoon, dawn) = (at(20.0), at(32.0));
    let hull_gain = dawn.top_hull_pct - afternoon.top_hull_pct;
    let kernel_change = (dawn.top_kernel_pct - afternoon.top_kernel_pct).abs();
    eprintln!(
        "top hull {:.2} → {:.2} %, top kernel {:.2} → {:.2} %",
        afternoon.top_hull_pct, dawn.top_hull_pct, afternoon.top_kernel_pct, dawn.top_kernel_pct
    );
    assert!(hull_gain > 1.0, "hulls should rewet overnight: {hull_gain}");
    assert!(
        kernel_change < 0.25 * hull_gain,
        "kernels should barely move: {kernel_change}"
    );
    assert!(
        dawn.mean_pod_pct > afternoon.mean_pod_pct,
        "pod moisture rises overnight"
    );
    let _ = material.kernel_fraction();
}

#[test]
fn results_do_not_depend_on_thread_count() {
    let case = Case {
        columns: (8, 4),
        max_hours: 12.0,
        ..Case::default()
    };
    let run_with = |n: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(n)
            .build()
            .unwrap()
            .install(|| case.run())
    };
    let (a, bed_a) = run_with(1);
    let (b, bed_b) = run_with(2);
    assert_eq!(bed_a, bed_b);
    assert_eq!(format!("{a:?}"), format!("{b:?}"));
}
