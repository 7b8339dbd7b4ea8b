//! The published wagon case on the bundled TMY3 year (placed in 2026): hours to 10 % and propane per tonne over
//! start dates, for the 35 °C plenum and the +8 K rise.
//!
//! Run: `cargo run --release --example wagon_study -- [crop] [first-day-of-september] [count] [every-days]
//! [k_h k_kh Ea_h Ea_k]`
use std::sync::Arc;

use dryfront::calibrate::wagon::{median, september_starts};
use dryfront::crop::Crop;
use dryfront::drying::bed::BedState;
use dryfront::drying::material::CropMaterial;
use dryfront::drying::run::{RunObserver, StepReport};
use dryfront::input::wagon::published_wagon_case;
use dryfront::props::thin_layer::{PodModel, ThinLayer};

fn set(model: &mut PodModel, k: [f64; 4]) {
    if let PodModel::TwoCompartment { hull, kernel, .. } = model {
        for (c, kr, ea) in [(hull, k[0], k[2]), (kernel, k[1], k[3])] {
            if let ThinLayer::Exponential { rate } = &mut c.thin_layer {
                rate.k_ref_per_h = kr;
                rate.activation_energy_j_per_mol = ea;
            }
        }
    }
}

/// Time-mean exhaust RH, plenum rise and ambient temperature until the mean kernel moisture reaches target.
#[derive(Default)]
struct Diag {
    n: f64,
    exhaust_rh: f64,
    rise: f64,
    ambient: f64,
    done: bool,
}

impl RunObserver for Diag {
    fn on_step(&mut self, r: &StepReport, _bed: &BedState) {
        if self.done {
            return;
        }
        self.n += 1.0;
        self.exhaust_rh += r.exhaust.rh();
        self.rise += r.plenum.t_c - r.ambient.air.t_c;
        self.ambient += r.ambient.air.t_c;
        self.done = r.mean_kernel_wb <= 0.10;
    }
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let crop_name = args.first().map(String::as_str).unwrap_or("peanut-inshell");
    let first: u32 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(5);
    let count: u32 = args.get(2).and_then(|s| s.parse().ok()).unwrap_or(20);
    let every: u32 = args.get(3).and_then(|s| s.parse().ok()).unwrap_or(3);
    let mut crop = Crop::load_named(crop_name).expect("crop");
    if args.len() >= 8 {
        let k: Vec<f64> = args[4..8].iter().map(|s| s.parse().unwrap()).collect();
        set(&mut crop.moisture, [k[0], k[1], k[2], k[3]]);
    }
    let crop = Arc::new(crop);
    let case = published_wagon_case().expect("wagon case");
    let starts = september_starts(first, count, every);
    for h in ["plenum=35", "rise=8"] {
        let t0 = std::time::Instant::now();
        let r = case
            .run_all(&crop, &starts, h.parse().unwrap())
            .expect("runs");
        let hrs: Vec<f64> = r.iter().map(|x| x.hours).collect();
        let lpt: Vec<f64> = r.iter().map(|x| x.litres_per_tonne).collect();
        let mm = |v: &[f64]| {
            (
                v.iter().cloned().fold(f64::INFINITY, f64::min),
                v.iter().cloned().fold(f64::NEG_INFINITY, f64::max),
            )
        };
        println!(
            "{h}: hours median {:.1} {:?}; L/t median {:.1} {:?}  ({:.1} s)",
            median(&hrs),
            mm(&hrs),
            median(&lpt),
            mm(&lpt),
            t0.elapsed().as_secs_f64()
        );
        if std::env::var("DIAG").is_ok() {
            let m = Arc::new(CropMaterial::new(&crop));
            for s in &starts {
                let spec = case.spec(&crop, &m, *s, h.parse().unwrap()).unwrap();
                let mut d = Diag::default();
                let r = dryfront::load::run_load(&spec, &mut d).unwrap();
                let o = &r.outcome;
                println!(
                    "  {s}: {:.1} h, exhaust RH {:.2}, rise {:.1} K, ambient {:.1} C, water {:.0} kg of {:.0} kg, fuel {:.1} L/t",
                    o.hours_to_mean_target.unwrap_or(f64::NAN),
                    d.exhaust_rh / d.n,
                    d.rise / d.n,
                    d.ambient / d.n,
                    o.at_mean_target.map(|t| t.water_removed_kg).unwrap_or(f64::NAN),
                    o.initial_mass_kg,
                    o.at_mean_target.map(|t| t.fuel_used).unwrap_or(f64::NAN) / o.initial_mass_kg * 1000.0
                );
            }
        }
    }
}
