//! Moisture samples of a load and the sampler that reads the model's bed at the same times, places and depths
//! through the run's observer.

use crate::drying::bed::BedState;
use crate::drying::layer::LayerMaterial;
use crate::drying::run::{RunObserver, StepReport};
use crate::units::wb_from_db;

/// Where a sample was taken.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub enum Place {
    /// A grab sample: along the length from the air-inlet end and across the width from the left wall, m, and
    /// depth below the peanuts' surface, m.
    Point {
        /// Along the length, m.
        x_m: f64,
        /// Across the width, m.
        y_m: f64,
        /// Below the surface, m.
        depth_m: f64,
    },
    /// A composite of the whole load (the dry-matter-weighted mean).
    Composite,
}

/// Which moisture was measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum Measure {
    /// Kernel moisture (the trade's).
    Kernel,
    /// Whole-pod moisture (hull and kernel together).
    Pod,
}

/// How it was measured; sets the sample's standard error and so its weight.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub enum Method {
    /// Oven (ASABE S410): 0.3 %-points, our own allowance for sampling and weighing.
    Oven,
    /// In-trailer sensor: 0.55 %-points, the standard error of prediction reported by Lewis, Trabelsi & Nelson 2016
    /// (DOMAIN.md §12).
    Sensor,
    /// Hand-held meter: 0.8 %-points, the end-of-drying difference to the official meter in the same study.
    Meter,
}

impl Method {
    /// Standard error, %-points wet basis.
    pub fn sigma_pct(self) -> f64 {
        match self {
            Method::Oven => 0.3,
            Method::Sensor => 0.55,
            Method::Meter => 0.8,
        }
    }

    /// The method's name in files.
    pub fn name(self) -> &'static str {
        match self {
            Method::Oven => "oven",
            Method::Sensor => "sensor",
            Method::Meter => "meter",
        }
    }
}

/// One moisture sample.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Sample {
    /// Hours after the air went on.
    pub hours: f64,
    /// Where.
    pub place: Place,
    /// Kernel or pod.
    pub measure: Measure,
    /// Measured moisture, % wet basis.
    pub moisture_wb_pct: f64,
    /// How.
    pub method: Method,
    /// Line of the samples file (for reports).
    pub line: u64,
}

/// The bed's moisture at one place, % wet basis.
pub fn bed_moisture_pct<M: LayerMaterial + ?Sized>(
    bed: &BedState,
    material: &M,
    length_m: f64,
    width_m: f64,
    place: Place,
    measure: Measure,
) -> f64 {
    let (nx, ny, nz) = bed.dim();
    let value = |i: usize, j: usize, k: usize| match measure {
        Measure::Kernel => bed.kernel_db[[i, j, k]],
        Measure::Pod => material.pod_db(bed.cell(i, j, k)),
    };
    match place {
        Place::Point { x_m, y_m, depth_m } => {
            let i = ((x_m / length_m * nx as f64) as usize).min(nx - 1);
            let j = ((y_m / width_m * ny as f64) as usize).min(ny - 1);
            let d = bed.depth_m[[i, j]];
            let k = (((d - depth_m) / d * nz as f64).floor().max(0.0) as usize).min(nz - 1);
            100.0 * wb_from_db(value(i, j, k))
        }
        Place::Composite => {
            let mut water = 0.0;
            let mut dm = 0.0;
            for ((i, j, k), d) in bed.dry_matter_kg_per_m2.indexed_iter() {
                water += d * value(i, j, k);
                dm += d;
            }
            100.0 * wb_from_db(water / dm)
        }
    }
}

/// Reads the bed at each sample's time (linear between the steps on either side; a sample inside the first step
/// takes that step's value) through the run's observer.
pub struct Sampler<'a, M: LayerMaterial + ?Sized> {
    material: &'a M,
    length_m: f64,
    width_m: f64,
    samples: &'a [Sample],
    last_hours: f64,
    last: Vec<f64>,
    /// Modelled moisture of each sample, % w.b. (NaN until the run reaches its time).
    pub modelled: Vec<f64>,
}

impl<'a, M: LayerMaterial + ?Sized> Sampler<'a, M> {
    /// A sampler for `samples` in a container `length_m` × `width_m`.
    pub fn new(material: &'a M, length_m: f64, width_m: f64, samples: &'a [Sample]) -> Self {
        Sampler {
            material,
            length_m,
            width_m,
            samples,
            last_hours: f64::NAN,
            last: vec![f64::NAN; samples.len()],
            modelled: vec![f64::NAN; samples.len()],
        }
    }

    /// The latest sample time, h: the run must last at least this long.
    pub fn horizon_h(samples: &[Sample]) -> f64 {
        samples.iter().map(|s| s.hours).fold(0.0, f64::max)
    }
}

impl<M: LayerMaterial + ?Sized> RunObserver for Sampler<'_, M> {
    fn on_step(&mut self, report: &StepReport, bed: &BedState) {
        let t1 = report.hours;
        for (n, s) in self.samples.iter().enumerate() {
            if !self.modelled[n].is_nan() {
                continue;
            }
            let now = bed_moisture_pct(
                bed,
                self.material,
                self.length_m,
                self.width_m,
                s.place,
                s.measure,
            );
            if s.hours <= t1 {
                let t0 = self.last_hours;
                self.modelled[n] = if t0.is_nan() || s.hours <= t0 {
                    now
                } else {
                    self.last[n] + (now - self.last[n]) * (s.hours - t0) / (t1 - t0)
                };
            }
            self.last[n] = now;
        }
        self.last_hours = t1;
    }
}
