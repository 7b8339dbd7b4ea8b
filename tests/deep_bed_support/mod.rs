//! Shared set-up for the deep-bed tests: the real peanut crop model on a uniform bed under fixed weather.
#![allow(dead_code)]

use dryfront::crop::Crop;
use dryfront::drying::bed::{BedState, InitialMoisture};
use dryfront::drying::heater::{Fuel, Heater, HeaterStrategy};
use dryfront::drying::layer::{CellMoisture, LayerMaterial};
use dryfront::drying::material::CropMaterial;
use dryfront::drying::run::{
    Ambient, ConstantAmbient, FixedFlow, FlowField, Outcome, Run, RunSettings,
};
use dryfront::props::psychro::AirState;
use ndarray::Array2;

/// The bundled peanut model.
pub fn peanut() -> (Crop, CropMaterial) {
    let crop = Crop::load_named("peanut-inshell").expect("bundled peanut model loads");
    let material = CropMaterial::new(&crop);
    (crop, material)
}

/// The bundled peanut as a layer material whose thin-layer step is `step(peanut, m, t_c, rh, dt_s)`, everything
/// else the peanut's own; its four-at-a-time step is the trait's default, one pod after another. The seam for the
/// tests that change one cell's step or step the pods one by one.
pub struct SteppedBy<F>(pub CropMaterial, pub F);

impl<F> LayerMaterial for SteppedBy<F>
where
    F: Fn(&CropMaterial, CellMoisture, f64, f64, f64) -> CellMoisture + Sync,
{
    fn thin_layer_step(&self, m: CellMoisture, t_c: f64, rh: f64, dt_s: f64) -> CellMoisture {
        (self.1)(&self.0, m, t_c, rh, dt_s)
    }
    fn pod_db(&self, m: CellMoisture) -> f64 {
        self.0.pod_db(m)
    }
    fn surface_erh(&self, m: CellMoisture, t_c: f64) -> f64 {
        self.0.surface_erh(m, t_c)
    }
    fn surface_erh_log_complement(&self, m: CellMoisture, t_c: f64) -> f64 {
        self.0.surface_erh_log_complement(m, t_c)
    }
    fn latent_heat_ratio(&self, t_c: f64, m: CellMoisture) -> f64 {
        self.0.latent_heat_ratio(t_c, m)
    }
    fn cp_dry_j_per_kg_k(&self) -> f64 {
        self.0.cp_dry_j_per_kg_k()
    }
    fn add_water(&self, m: CellMoisture, d_pod_db: f64) -> CellMoisture {
        self.0.add_water(m, d_pod_db)
    }
    fn kernel_fraction(&self) -> f64 {
        self.0.kernel_fraction()
    }
    fn initial_state(&self, kernel_db: f64, t_c: f64) -> CellMoisture {
        self.0.initial_state(kernel_db, t_c)
    }
    fn moisture_ceiling_db(&self) -> f64 {
        self.0.moisture_ceiling_db()
    }
}

/// A uniform-bed case.
#[derive(Debug, Clone, Copy)]
pub struct Case {
    pub depth_m: f64,
    pub nz: usize,
    pub columns: (usize, usize),
    /// Airflow, m³/min per m³ of peanuts.
    pub specific_airflow: f64,
    pub strategy: HeaterStrategy,
    pub ambient_c: f64,
    pub ambient_rh: f64,
    pub initial_kernel_wb: f64,
    pub dt_s: f64,
    pub max_hours: f64,
    /// Initial peanut temperature, °C (ambient when `None`).
    pub peanut_c: Option<f64>,
    /// Add up the adiabatic bound (`RunSettings::adiabatic_bound`).
    pub adiabatic_bound: bool,
}

impl Default for Case {
    fn default() -> Self {
        Case {
            depth_m: 1.25,
            nz: 25,
            columns: (1, 1),
            specific_airflow: 10.0,
            strategy: HeaterStrategy::FixedRise { rise_k: 8.0 },
            ambient_c: 25.0,
            ambient_rh: 0.70,
            initial_kernel_wb: 0.20,
            dt_s: 360.0,
            max_hours: 120.0,
            peanut_c: None,
            adiabatic_bound: true,
        }
    }
}

impl Case {
    pub fn run(&self) -> (Outcome, BedState) {
        let (crop, material) = peanut();
        let depth = Array2::from_elem(self.columns, self.depth_m);
        let pod_db = material.pod_db(material.initial_state(
            self.initial_kernel_wb / (1.0 - self.initial_kernel_wb),
            self.ambient_c,
        ));
        let dry_density = crop.dry_matter_density_kg_per_m3(100.0 * pod_db / (1.0 + pod_db));
        let bed = BedState::new(
            &material,
            depth,
            1.0,
            self.nz,
            dry_density,
            &InitialMoisture::Uniform(self.initial_kernel_wb),
            self.peanut_c.unwrap_or(self.ambient_c),
        )
        .unwrap();
        let q = self.specific_airflow / 60.0 * self.depth_m;
        let air = AirState::from_rh(self.ambient_c, self.ambient_rh, 101_325.0);
        let field = FlowField::from_velocity(Array2::from_elem(self.columns, q), &air);
        let heater = Heater {
            strategy: self.strategy,
            window_h: None,
            capacity_w: None,
            max_plenum_c: crop.safety.max_plenum_temp_c + 20.0,
            fuel: Fuel::propane(),
        };
        let settings = RunSettings {
            dt_s: self.dt_s,
            max_hours: self.max_hours,
            adiabatic_bound: self.adiabatic_bound,
            ..RunSettings::default()
        };
        run_fixed(
            &material,
            bed,
            &ConstantAmbient(air),
            field,
            heater,
            settings,
        )
    }
}

/// Run `bed` to its end under `ambient` with a fixed airflow field.
pub fn run_fixed<M: LayerMaterial + ?Sized>(
    material: &M,
    bed: BedState,
    ambient: &dyn Ambient,
    field: FlowField,
    heater: Heater,
    settings: RunSettings,
) -> (Outcome, BedState) {
    let mut flow = FixedFlow(field);
    Run::new(material, bed, ambient, &mut flow, heater, settings)
        .expect("run starts")
        .run_to_end(&mut ())
        .expect("run")
}
