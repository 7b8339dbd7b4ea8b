//! Fitting a crop's drying constants to the moisture samples of one or more loads: the hull and kernel rate
//! constants at the reference temperature and the activation energy (one value for both compartments), each held
//! inside its documented range (DOMAIN.md §3.3), by [`super::fit::levenberg_marquardt`]. Every load is run through
//! the one load path ([`crate::load::run_load`]) with the trial crop put in its spec, for as long as its last sample,
//! and read by a [`Sampler`].

use std::sync::Arc;

use rayon::prelude::*;

use super::fit::{levenberg_marquardt, FitError, FitResult, FitSettings, ParamSpec};
use super::samples::{Sample, Sampler};
use crate::crop::Crop;
use crate::drying::material::CropMaterial;
use crate::drying::run::StopRule;
use crate::load::{run_load, LoadError, LoadSpec};
use crate::props::thin_layer::{ArrheniusRate, PodModel, ThinLayer};

/// A constant that can be fitted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum Constant {
    /// Hull (hull ↔ air) rate constant at the reference temperature, 1/h.
    HullRate,
    /// Kernel (kernel ↔ hull) rate constant at the reference temperature, 1/h.
    KernelRate,
    /// Activation energy of both rates, J/mol.
    ActivationEnergy,
}

impl Constant {
    /// Every constant, in the order of the command's names.
    pub const ALL: [Constant; 3] = [
        Constant::HullRate,
        Constant::KernelRate,
        Constant::ActivationEnergy,
    ];

    /// Name on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            Constant::HullRate => "hull-rate",
            Constant::KernelRate => "kernel-rate",
            Constant::ActivationEnergy => "activation-energy",
        }
    }

    /// Unit.
    pub fn unit(self) -> &'static str {
        match self {
            Constant::HullRate | Constant::KernelRate => "1/h",
            Constant::ActivationEnergy => "J/mol",
        }
    }

    /// The documented range the fit is held in (DOMAIN.md §3.3 placeholder magnitudes: k_h 0.3–1 /h, k_kh
    /// 0.03–0.1 /h, E_a 20–40 kJ/mol).
    pub fn bounds(self) -> (f64, f64) {
        match self {
            Constant::HullRate => (0.3, 1.0),
            Constant::KernelRate => (0.03, 0.1),
            Constant::ActivationEnergy => (20_000.0, 40_000.0),
        }
    }

    /// The crop-file fields this constant is written to.
    pub fn fields(self) -> &'static [&'static str] {
        match self {
            Constant::HullRate => &["compartments.hull.thin_layer.k_ref_per_h"],
            Constant::KernelRate => &["compartments.kernel.thin_layer.k_ref_per_h"],
            Constant::ActivationEnergy => &[
                "compartments.hull.thin_layer.activation_energy_j_per_mol",
                "compartments.kernel.thin_layer.activation_energy_j_per_mol",
            ],
        }
    }

    fn rates(crop: &mut Crop) -> Option<(&mut ArrheniusRate, &mut ArrheniusRate)> {
        let PodModel::TwoCompartment { hull, kernel, .. } = &mut crop.moisture else {
            return None;
        };
        match (&mut hull.thin_layer, &mut kernel.thin_layer) {
            (
                ThinLayer::Exponential { rate: h } | ThinLayer::HendersonPabis { rate: h, .. },
                ThinLayer::Exponential { rate: k } | ThinLayer::HendersonPabis { rate: k, .. },
            ) => Some((h, k)),
            _ => None,
        }
    }

    /// The crop's value (`None` for a crop without hull and kernel rates).
    pub fn get(self, crop: &Crop) -> Option<f64> {
        let mut c = crop.clone();
        let (h, k) = Self::rates(&mut c)?;
        Some(match self {
            Constant::HullRate => h.k_ref_per_h,
            Constant::KernelRate => k.k_ref_per_h,
            Constant::ActivationEnergy => h.activation_energy_j_per_mol,
        })
    }

    /// Set the value in `crop`.
    pub fn set(self, crop: &mut Crop, v: f64) {
        if let Some((h, k)) = Self::rates(crop) {
            match self {
                Constant::HullRate => h.k_ref_per_h = v,
                Constant::KernelRate => k.k_ref_per_h = v,
                Constant::ActivationEnergy => {
                    h.activation_energy_j_per_mol = v;
                    k.activation_energy_j_per_mol = v;
                }
            }
        }
    }
}

/// One load and its samples.
#[derive(Debug, Clone)]
pub struct LoadRecord {
    /// Name for reports (the scenario and samples files).
    pub name: String,
    /// The load as its scenario gives it.
    pub spec: LoadSpec,
    /// Its samples, in file order.
    pub samples: Vec<Sample>,
}

/// Errors of a calibration.
#[derive(Debug, thiserror::Error)]
pub enum CalibrateError {
    /// A load could not be run.
    #[error("{name}: {error}")]
    Load {
        /// The record.
        name: String,
        /// Why.
        error: Box<LoadError>,
    },
    /// A load ended before its last sample.
    #[error("{name}: the run ended at {hours:.2} h, before the sample of line {line}")]
    Short {
        /// The record.
        name: String,
        /// Hours run.
        hours: f64,
        /// The sample's line.
        line: u64,
    },
    /// The crop has no hull and kernel rates to fit.
    #[error(
        "the crop has no hull and kernel rate constants (two first-order compartments) to fit"
    )]
    NotTwoCompartment,
    /// The fit could not be set up.
    #[error("{0}")]
    Setup(String),
}

/// The modelled moisture of every sample of every record (records in order, samples in order) under `crop`.
pub fn model_samples(crop: &Crop, records: &[LoadRecord]) -> Result<Vec<f64>, CalibrateError> {
    let crop = Arc::new(crop.clone());
    let material = Arc::new(CropMaterial::new(&crop));
    let per: Vec<Result<Vec<f64>, CalibrateError>> = records
        .par_iter()
        .map(|r| {
            let mut spec = r.spec.clone();
            spec.crop = crop.clone();
            spec.material = material.clone();
            let horizon = Sampler::<CropMaterial>::horizon_h(&r.samples) + spec.run.dt_s / 3600.0;
            spec.run.stop = StopRule::Hours(horizon);
            spec.run.max_hours = spec.run.max_hours.max(horizon);
            let mut sampler = Sampler::new(
                &*material,
                spec.container.length_m,
                spec.container.width_m,
                &r.samples,
            );
            let out = run_load(&spec, &mut sampler).map_err(|e| CalibrateError::Load {
                name: r.name.clone(),
                error: Box::new(e),
            })?;
            if let Some((s, _)) = r
                .samples
                .iter()
                .zip(&sampler.modelled)
                .find(|(_, m)| m.is_nan())
            {
                return Err(CalibrateError::Short {
                    name: r.name.clone(),
                    hours: out.outcome.hours,
                    line: s.line,
                });
            }
            Ok(sampler.modelled)
        })
        .collect();
    let mut all = Vec::new();
    for p in per {
        all.extend(p?);
    }
    Ok(all)
}

/// A calibration's result.
#[derive(Debug, Clone)]
pub struct Calibration {
    /// The constants fitted, in order.
    pub constants: Vec<Constant>,
    /// Their values before.
    pub before: Vec<f64>,
    /// The fit.
    pub fit: FitResult,
    /// Measured values, % w.b., every record's samples in order.
    pub measured: Vec<f64>,
    /// Modelled with the starting crop, % w.b.
    pub model_before: Vec<f64>,
    /// The crop with the fitted values.
    pub crop: Crop,
}

/// Fit `constants` of `crop` to the samples of `records` (weights 1/σ² of each sample's method).
pub fn calibrate(
    crop: &Crop,
    records: &[LoadRecord],
    constants: &[Constant],
    settings: &FitSettings,
) -> Result<Calibration, CalibrateError> {
    let mut params = Vec::new();
    let mut before = Vec::new();
    for c in constants {
        let v = c.get(crop).ok_or(CalibrateError::NotTwoCompartment)?;
        let (lo, hi) = c.bounds();
        before.push(v);
        params.push(ParamSpec {
            name: c.name().into(),
            start: v,
            lo,
            hi,
        });
    }
    let samples: Vec<&Sample> = records.iter().flat_map(|r| &r.samples).collect();
    let measured: Vec<f64> = samples.iter().map(|s| s.moisture_wb_pct).collect();
    let w: Vec<f64> = samples
        .iter()
        .map(|s| s.method.sigma_pct().powi(-2))
        .collect();
    let with = |p: &[f64]| {
        let mut c = crop.clone();
        for (k, v) in constants.iter().zip(p) {
            k.set(&mut c, *v);
        }
        c
    };
    let model_before = model_samples(crop, records)?;
    let fit = levenberg_marquardt(&params, &measured, &w, settings, |p| {
        model_samples(&with(p), records)
    })
    .map_err(|e| match e {
        FitError::Model(e) => e,
        FitError::Setup(s) => CalibrateError::Setup(s),
    })?;
    let crop = with(&fit.values);
    Ok(Calibration {
        constants: constants.to_vec(),
        before,
        fit,
        measured,
        model_before,
        crop,
    })
}
