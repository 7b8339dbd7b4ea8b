//! A crop model as the layer step sees it: the crop's two-compartment (or single) moisture model, dry-matter
//! specific heat, and the latent heat of bound water tabulated from the hull isotherm by the Othmer /
//! Clausius–Clapeyron method (`props::thermal`), so the inner loop does a table look-up instead of four isotherm
//! evaluations per cell.

use crate::crop::Crop;
use crate::drying::layer::{CellMoisture, LayerMaterial};
use crate::props::lanes::{four, Lanes};
use crate::props::thermal::bound_water_latent_heat_ratio;
use crate::props::thin_layer::{PodModel, PodState, PodStepper};

const T_MIN_C: f64 = -10.0;
const T_STEP_K: f64 = 1.0;
const NT: usize = 91;
const M_MIN_DB: f64 = 0.01;
const M_STEP_DB: f64 = 0.005;
const NM: usize = 240;

/// The layer step's view of a crop.
#[derive(Debug, Clone)]
pub struct CropMaterial {
    model: PodModel,
    /// The model's thin-layer step with its constant parts worked out once (not per cell).
    stepper: PodStepper,
    ceiling_db: f64,
    cp_dry_j_per_kg_k: f64,
    latent_ratio: Vec<f64>,
}

impl CropMaterial {
    /// Build from a loaded crop.
    pub fn new(crop: &Crop) -> Self {
        let model = crop.moisture;
        let cp = crop.cp_dry_pod_j_per_kg_k();
        let iso = model.hull().sorption.desorption;
        let mut latent_ratio = Vec::with_capacity(NT * NM);
        for it in 0..NT {
            let t_c = T_MIN_C + it as f64 * T_STEP_K;
            for im in 0..NM {
                let m = M_MIN_DB + im as f64 * M_STEP_DB;
                let r = bound_water_latent_heat_ratio(|t, m| iso.erh(t, m), t_c, m);
                latent_ratio.push(if r.is_finite() {
                    r.clamp(1.0, 3.0)
                } else {
                    1.0
                });
            }
        }
        CropMaterial {
            ceiling_db: moisture_ceiling_db(&model),
            stepper: PodStepper::new(&model),
            model,
            cp_dry_j_per_kg_k: cp,
            latent_ratio,
        }
    }

    /// The crop's moisture model.
    pub fn model(&self) -> &PodModel {
        &self.model
    }
}

/// The wettest either compartment can be in equilibrium with air at RH 0.9999 and −10 °C (the coldest end of the
/// latent-heat table; EMC falls as temperature rises for every isotherm form used here), adsorption or desorption.
/// The run allows a quarter more than this or than its wettest starting cell (see `drying::bounds`).
fn moisture_ceiling_db(model: &PodModel) -> f64 {
    let (rh, t_c) = (0.9999, T_MIN_C);
    [model.hull(), model.kernel()]
        .iter()
        .flat_map(|c| {
            [
                c.sorption.emc_desorption_db(t_c, rh),
                c.sorption.emc_adsorption_db(t_c, rh),
            ]
        })
        .filter(|m| m.is_finite())
        .fold(0.0, f64::max)
}

fn to_pod(m: CellMoisture) -> PodState {
    PodState {
        m_hull_db: m.hull_db,
        m_kernel_db: m.kernel_db,
        m_curve_start_db: m.curve_start_db,
    }
}

fn from_pod(s: PodState) -> CellMoisture {
    CellMoisture {
        hull_db: s.m_hull_db,
        kernel_db: s.m_kernel_db,
        curve_start_db: s.m_curve_start_db,
    }
}

impl LayerMaterial for CropMaterial {
    #[inline]
    fn thin_layer_step(&self, m: CellMoisture, t_c: f64, rh: f64, dt_s: f64) -> CellMoisture {
        from_pod(self.stepper.step(to_pod(m), t_c, rh, dt_s))
    }
    #[inline]
    fn thin_layer_step4(
        &self,
        m: [CellMoisture; 4],
        t_c: Lanes,
        rh: Lanes,
        dt_s: f64,
    ) -> [CellMoisture; 4] {
        let out = self.stepper.step4(four(|i| to_pod(m[i])), t_c, rh, dt_s);
        four(|i| from_pod(out[i]))
    }
    #[inline]
    fn pod_db(&self, m: CellMoisture) -> f64 {
        self.model.pod_moisture_db(&to_pod(m))
    }
    #[inline]
    fn surface_erh(&self, m: CellMoisture, t_c: f64) -> f64 {
        self.model.hull().sorption.desorption.erh(t_c, m.hull_db)
    }
    #[inline(always)]
    fn surface_erh_log_complement(&self, m: CellMoisture, t_c: f64) -> f64 {
        self.model
            .hull()
            .sorption
            .desorption
            .erh_log_complement(t_c, m.hull_db)
            .0
    }
    #[inline(always)]
    fn latent_heat_ratio(&self, t_c: f64, m: CellMoisture) -> f64 {
        // Water leaves the pod through the hull: its isotherm sets the heat of desorption. Bilinear look-up,
        // clamped at the table's edges.
        let x = ((t_c - T_MIN_C) / T_STEP_K).clamp(0.0, (NT - 1) as f64 - 1e-9);
        let y = ((m.hull_db - M_MIN_DB) * (1.0 / M_STEP_DB)).clamp(0.0, (NM - 1) as f64 - 1e-9);
        // Both are clamped to be non-negative and small: `as u32` truncates them as `as usize` would, cheaper.
        let (i, j) = (x as u32 as usize, y as u32 as usize);
        let (fx, fy) = (x - i as f64, y - j as f64);
        // the two table rows' neighbouring pairs, each fetched with one bounds check
        let pair = |i: usize| {
            let p = &self.latent_ratio[i * NM + j..][..2];
            (p[0], p[1])
        };
        let ((a0, a1), (b0, b1)) = (pair(i), pair(i + 1));
        let a = a0 + fy * (a1 - a0);
        let b = b0 + fy * (b1 - b0);
        a + fx * (b - a)
    }
    #[inline]
    fn cp_dry_j_per_kg_k(&self) -> f64 {
        self.cp_dry_j_per_kg_k
    }
    fn add_water(&self, m: CellMoisture, d_pod_db: f64) -> CellMoisture {
        match self.model {
            PodModel::Single(_) => CellMoisture {
                hull_db: m.hull_db + d_pod_db,
                kernel_db: m.kernel_db + d_pod_db,
                curve_start_db: m.kernel_db + d_pod_db,
            },
            PodModel::TwoCompartment { hull_fraction, .. } => CellMoisture {
                hull_db: m.hull_db + d_pod_db / hull_fraction,
                ..m
            },
        }
    }
    fn kernel_fraction(&self) -> f64 {
        1.0 - self.model.hull_fraction()
    }
    fn initial_state(&self, kernel_db: f64, t_c: f64) -> CellMoisture {
        from_pod(self.model.state_from_kernel(t_c, kernel_db))
    }
    fn moisture_ceiling_db(&self) -> f64 {
        self.ceiling_db
    }
}
