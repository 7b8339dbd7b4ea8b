//! Shared builders for the season tests: a plain buying point, loads at given hours, and a stand-in pod material
//! (copied from the drying core's unit tests) for the deep-bed drier.
#![allow(dead_code)]

use chrono::{DateTime, Duration, FixedOffset};
use dryfront::drying::heater::HeaterStrategy;
use dryfront::drying::layer::{CellMoisture, LayerMaterial};
use dryfront::season::arrivals::Load;
use dryfront::season::scenario::{BuyingPoint, DryerUnit, OperatingRules, Prices, SeasonWindow};

pub fn t0() -> DateTime<FixedOffset> {
    DateTime::parse_from_rfc3339("2026-09-10T00:00:00-04:00").unwrap()
}

pub fn at_h(h: f64) -> DateTime<FixedOffset> {
    t0() + Duration::milliseconds((h * 3.6e6).round() as i64)
}

pub fn dryer(id: &str) -> DryerUnit {
    DryerUnit {
        id: id.into(),
        container: "wagon-4.3m".into(),
        fan: "vane-3.7kw".into(),
        capacity_kg: 6000.0,
        fan_kw: 4.0,
        burner_kw: None,
        heater: HeaterStrategy::FixedRise { rise_k: 8.0 }.into(),
    }
}

pub fn point(n: usize, turnaround_h: f64, max_wait_h: f64, days: u32) -> BuyingPoint {
    BuyingPoint {
        fuel: "propane".into(),
        name: "Test Yard (invented)".into(),
        notes: String::new(),
        season: SeasonWindow { start: t0(), days },
        turnaround_h,
        rules: OperatingRules {
            stop_rule: dryfront::drying::stop::StopRule::Both,
            max_wait_h,
            target_kernel_pct: 10.0,
            hours_of_operation: None,
        },
        prices: Prices {
            currency: "$".into(),
            propane_per_l: 0.6,
            electricity_per_kwh: 0.12,
            peanuts_per_tonne: 500.0,
        },
        dryers: (1..=n).map(|i| dryer(&format!("D{i}"))).collect(),
    }
}

/// Loads `(arrival hour after t0, kernel moisture %)`, 4000 kg each, ids L1….
pub fn loads(spec: &[(f64, f64)]) -> Vec<Load> {
    spec.iter()
        .enumerate()
        .map(|(i, &(h, m))| Load {
            id: format!("L{}", i + 1),
            arrival: at_h(h),
            mass_kg: 4000.0,
            moisture_pct: m,
            notes: String::new(),
        })
        .collect()
}

/// Stand-in two-compartment pod, copied from `drying::run::tests::TestPod`: Cromarty seed isotherm (DOMAIN.md
/// §2.3; kernel oil 0.48, hull proxy 0), first-order rates 0.6 h⁻¹ (hull) and 0.06 h⁻¹ (kernel), latent ratio 1.1.
pub struct TestPod;

fn cromarty_emc_db(t_c: f64, rh: f64, oil: f64) -> f64 {
    let rh = rh.clamp(1e-6, 0.999_999);
    (440.0 * -(1.0 - rh).ln()).sqrt() * (1.0 - oil) / (1.1 + t_c / 90.0) / 100.0
}
fn cromarty_erh(t_c: f64, m_db: f64, oil: f64) -> f64 {
    let x = m_db * 100.0 * (1.1 + t_c / 90.0) / (1.0 - oil);
    1.0 - (-(x * x) / 440.0).exp()
}
const FK: f64 = 0.75;

impl LayerMaterial for TestPod {
    fn thin_layer_step(&self, m: CellMoisture, t_c: f64, rh: f64, dt_s: f64) -> CellMoisture {
        let h = dt_s / 3600.0;
        let k_star = cromarty_emc_db(t_c, cromarty_erh(t_c, m.hull_db, 0.0), 0.48);
        let kernel = k_star + (m.kernel_db - k_star) * (-0.06 * h).exp();
        let hull_in = m.hull_db + FK / (1.0 - FK) * (m.kernel_db - kernel);
        let he = cromarty_emc_db(t_c, rh, 0.0);
        CellMoisture {
            hull_db: he + (hull_in - he) * (-0.6 * h).exp(),
            kernel_db: kernel,
            curve_start_db: kernel,
        }
    }
    fn pod_db(&self, m: CellMoisture) -> f64 {
        FK * m.kernel_db + (1.0 - FK) * m.hull_db
    }
    fn surface_erh(&self, m: CellMoisture, t_c: f64) -> f64 {
        cromarty_erh(t_c, m.hull_db, 0.0)
    }
    fn latent_heat_ratio(&self, _: f64, _: CellMoisture) -> f64 {
        1.1
    }
    fn cp_dry_j_per_kg_k(&self) -> f64 {
        1900.0
    }
    fn add_water(&self, m: CellMoisture, d_pod_db: f64) -> CellMoisture {
        CellMoisture {
            hull_db: m.hull_db + d_pod_db / (1.0 - FK),
            ..m
        }
    }
    fn kernel_fraction(&self) -> f64 {
        FK
    }
    fn initial_state(&self, kernel_db: f64, t_c: f64) -> CellMoisture {
        let erh = cromarty_erh(t_c, kernel_db, 0.48).min(0.999);
        CellMoisture {
            hull_db: cromarty_emc_db(t_c, erh, 0.0),
            kernel_db,
            curve_start_db: kernel_db,
        }
    }
}
