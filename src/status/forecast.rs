//! The replay of a load to now, its adjustment to the readings, and the forecast of its finish: deterministic,
//! as an ensemble of weather around the forecast, and under other heater choices for the remaining time.

use std::sync::Arc;

use chrono::{DateTime, FixedOffset};
use rayon::prelude::*;

use super::readings::{adjust, outside_band, sample, PlenumReading, Reading, ReadingCheck};
use super::{hours_between, LoadStatus, StatusError};
use crate::drying::bed::{BedState, InitialMoisture};
use crate::drying::layer::LayerMaterial;
use crate::drying::run::{RunError, RunObserver, StepReport, StopReason, StopRule};
use crate::load::{run_load, FillSpec, HeaterSetup, LoadError, LoadSpec};
use crate::weather::ensemble::{member, Spread};

/// How the forecast is made.
#[derive(Debug, Clone)]
pub struct ForecastSettings {
    /// Ensemble members (0 for none); an even number keeps the antithetic pairs whole.
    pub members: usize,
    /// The forecast's stated error and the seed.
    pub spread: Spread,
    /// Heater choices for the remaining time.
    pub what_if: Vec<WhatIf>,
}

/// A heater choice for the remaining time.
#[derive(Debug, Clone)]
pub struct WhatIf {
    /// The strategy as written in the heater language.
    pub label: String,
    /// The heater (already through the one safety rule).
    pub heater: HeaterSetup,
}

/// When a load will be done, counted from the moment its run starts.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Finish {
    /// Hours until the mean kernel moisture is at target (0: it already is; `None`: not within the weather or the
    /// time limit).
    pub mean_h: Option<f64>,
    /// Hours until the fraction rule holds (95 % of the dry matter at or below target, by default).
    pub fraction_h: Option<f64>,
    /// Hours until the run's stop rule held (`None`: not within the weather or the time limit).
    pub stop_h: Option<f64>,
    /// Hours the run went (to the stop rule, the time limit or the weather's end).
    pub hours_run: f64,
    /// Fuel burnt until both hold (or to the run's end if they do not), in the fuel's unit.
    pub fuel: f64,
    /// Fan electricity to the same moment, kWh.
    pub fan_kwh: f64,
    /// Mean kernel moisture at that moment, % w.b.
    pub kernel_pct: f64,
    /// Why the run ended.
    pub reason: StopReason,
}

/// P10, P50, P90 of one figure over the ensemble (linear between order statistics, type 7); `None` where the
/// percentile falls on members that did not get there within the weather.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Percentiles {
    /// 10th percentile.
    pub p10: Option<f64>,
    /// Median.
    pub p50: Option<f64>,
    /// 90th percentile.
    pub p90: Option<f64>,
    /// Members that got there.
    pub reached: usize,
}

impl Percentiles {
    /// Percentiles of `values` (`None` = never).
    pub fn of(values: impl Iterator<Item = Option<f64>>) -> Self {
        let mut v: Vec<f64> = values.map(|x| x.unwrap_or(f64::INFINITY)).collect();
        v.sort_by(f64::total_cmp);
        let q = |p: f64| -> Option<f64> {
            if v.is_empty() {
                return None;
            }
            let h = (v.len() - 1) as f64 * p;
            let (lo, hi) = (v[h.floor() as usize], v[h.ceil() as usize]);
            let x = lo + (h - h.floor()) * (hi - lo);
            x.is_finite().then_some(x)
        };
        Percentiles {
            p10: q(0.1),
            p50: q(0.5),
            p90: q(0.9),
            reached: v.iter().filter(|x| x.is_finite()).count(),
        }
    }
}

/// The replay to now and the bed adjusted to the readings.
#[derive(Debug, Clone)]
pub struct Replay {
    /// The replay's bed now, before adjusting.
    pub replayed: BedState,
    /// The bed now, adjusted to the readings.
    pub adjusted: BedState,
    /// Each reading against the replay and the adjusted bed, in the readings' order.
    pub checks: Vec<ReadingCheck>,
    /// Largest distance of any reading outside its accuracy after adjusting, wet basis decimal (0: all agree).
    pub left_outside_wb: f64,
    /// Each plenum reading with the replay's plenum air then: (reading, °C, RH decimal).
    pub plenum: Vec<(PlenumReading, f64, f64)>,
    /// Mean kernel moisture now: replay, adjusted, wet basis decimal.
    pub mean_kernel_wb: (f64, f64),
    /// Fuel burnt from the on-air time to now in the replay, in the fuel's unit.
    pub fuel_so_far: f64,
}

/// Notes what the replayed bed says at each reading's time.
struct Probe<'a, M: LayerMaterial + ?Sized> {
    material: &'a M,
    start: DateTime<FixedOffset>,
    readings: &'a [Reading],
    plenum: &'a [PlenumReading],
    replay_wb: Vec<Option<f64>>,
    plenum_air: Vec<Option<(f64, f64)>>,
}

impl<M: LayerMaterial + ?Sized> RunObserver for Probe<'_, M> {
    fn on_step(&mut self, report: &StepReport, bed: &BedState) {
        // A reading is compared with the bed at the end of the step in which it was taken.
        let due = |t| hours_between(self.start, t) <= report.hours + 1e-9;
        for (r, slot) in self.readings.iter().zip(self.replay_wb.iter_mut()) {
            if slot.is_none() && due(r.time) {
                *slot = Some(sample(self.material, bed, r.part, &r.place));
            }
        }
        for (p, slot) in self.plenum.iter().zip(self.plenum_air.iter_mut()) {
            if slot.is_none() && due(p.time) {
                *slot = Some((report.plenum.t_c, report.plenum.rh()));
            }
        }
    }
}

/// Replay the load from its on-air time to now with the observed weather, then adjust the bed to the readings.
pub fn replay(status: &LoadStatus) -> Result<Replay, StatusError> {
    let now_h = hours_between(status.spec.start, status.now);
    let mut spec = status.spec.clone();
    spec.run.stop = StopRule::Hours(now_h);
    spec.run.max_hours = spec.run.max_hours.max(now_h);
    let material = &*status.spec.material;
    let mut probe = Probe {
        material,
        start: spec.start,
        readings: &status.readings,
        plenum: &status.plenum,
        replay_wb: vec![None; status.readings.len()],
        plenum_air: vec![None; status.plenum.len()],
    };
    let result = run_load(&spec, &mut probe)?;
    let replayed = result.bed;
    // A reading taken before now says how far the replay was off then; it is carried to now along the replay's own
    // drying since (reading + replay now − replay then), and the bed now is adjusted to that.
    let mut carried = status.readings.clone();
    for (r, at) in carried.iter_mut().zip(&probe.replay_wb) {
        let then = at.ok_or(StatusError::ReadingOutside(r.time))?;
        r.moisture_wb += sample(material, &replayed, r.part, &r.place) - then;
    }
    let mut adjusted = replayed.clone();
    let left_outside_wb = adjust(material, &mut adjusted, &carried);
    let mut checks = Vec::with_capacity(status.readings.len());
    for ((r, at), c) in status.readings.iter().zip(&probe.replay_wb).zip(&carried) {
        let replay_wb = at.ok_or(StatusError::ReadingOutside(r.time))?;
        let moved_since = c.moisture_wb - r.moisture_wb;
        checks.push(ReadingCheck {
            reading_wb: r.moisture_wb,
            replay_wb,
            adjusted_wb: sample(material, &adjusted, r.part, &r.place) - moved_since,
            replay_within: outside_band(replay_wb, r) == 0.0,
        });
    }
    let plenum = (status.plenum.iter().zip(&probe.plenum_air))
        .map(|(p, a)| {
            let (t, rh) = a.ok_or(StatusError::ReadingOutside(p.time))?;
            Ok((*p, t, rh))
        })
        .collect::<Result<Vec<_>, StatusError>>()?;
    Ok(Replay {
        mean_kernel_wb: (
            replayed.mean_kernel_wb(material),
            adjusted.mean_kernel_wb(material),
        ),
        replayed,
        adjusted,
        checks,
        left_outside_wb,
        plenum,
        fuel_so_far: result.outcome.fuel_used,
    })
}

/// The load from `now` on: the container as loaded (the bed keeps the depth its net mass took), the whole state
/// of `bed`, run until both the mean and the fraction rule hold.
pub fn resume_spec(
    spec: &LoadSpec,
    bed: BedState,
    now: DateTime<FixedOffset>,
) -> Result<LoadSpec, StatusError> {
    let first = spec.weather.at(spec.start).map_err(|e| {
        LoadError::Input(crate::error::InputError::argument(
            "start",
            spec.start,
            &e.to_string(),
        ))
    })?;
    let (container, _) = spec.loaded_container(first.t_c).map_err(LoadError::Input)?;
    let mut s = spec.clone();
    s.container = Arc::new(container);
    s.fill = FillSpec::Container;
    s.start = now;
    s.initial = InitialMoisture::Resumed(Arc::new(bed));
    s.run.stop = StopRule::Both;
    Ok(s)
}

/// Run a resumed load to its finish.
pub fn finish(spec: &LoadSpec) -> Result<Finish, StatusError> {
    match run_load(spec, &mut ()) {
        Ok(r) => {
            let o = &r.outcome;
            let ready = o.ready();
            Ok(Finish {
                mean_h: o.hours_to_mean_target,
                fraction_h: o.hours_to_fraction_target,
                stop_h: o.at_stop_rule.map(|t| t.hours),
                hours_run: o.hours,
                fuel: ready.fuel_used,
                fan_kwh: ready.fan_kwh,
                kernel_pct: o.final_kernel_pct,
                reason: o.stop_reason,
            })
        }
        Err(LoadError::Run(RunError::TargetNotBelowInitial { initial, .. })) => {
            // Already at target on the mean; for a resumed bed the fraction rule is checked on the bed as it is
            // (a fresh load's moisture is uniform, so it holds with the mean).
            let done = match &spec.initial {
                InitialMoisture::Resumed(bed) => {
                    bed.kernel_wb_quantile(spec.run.fraction) <= spec.run.target_kernel_wb
                }
                _ => true,
            };
            Ok(Finish {
                mean_h: Some(0.0),
                fraction_h: done.then_some(0.0),
                stop_h: Some(0.0),
                hours_run: 0.0,
                fuel: 0.0,
                fan_kwh: 0.0,
                kernel_pct: initial,
                reason: StopReason::RuleMet,
            })
        }
        Err(e) => Err(e.into()),
    }
}

/// The finish under each member of the ensemble, in member order (members run in parallel; each is seeded by its
/// index only, so the list does not depend on the thread count).
pub fn ensemble(
    spec: &LoadSpec,
    now: DateTime<FixedOffset>,
    members: usize,
    spread: &Spread,
) -> Result<Vec<Finish>, StatusError> {
    (0..members as u64)
        .into_par_iter()
        .map(|m| {
            let weather = member(&spec.weather, now, spread, m).map_err(LoadError::Input)?;
            let mut s = spec.clone();
            s.weather = Arc::new(weather);
            finish(&s)
        })
        .collect()
}

/// Everything the status command reports.
#[derive(Debug, Clone)]
pub struct StatusForecast {
    /// Replay and adjustment.
    pub replay: Replay,
    /// Now.
    pub now: DateTime<FixedOffset>,
    /// The finish under the forecast as given, with the load's own heater.
    pub deterministic: Finish,
    /// The finish under each ensemble member.
    pub members: Vec<Finish>,
    /// Ensemble percentiles: hours to the mean target, to the fraction rule, fuel still to burn.
    pub spread: [Percentiles; 3],
    /// Each heater choice and its finish under the forecast as given.
    pub what_if: Vec<(WhatIf, Finish)>,
    /// The fuel's unit.
    pub fuel_unit: String,
}

/// Replay, adjust and forecast.
pub fn forecast(
    status: &LoadStatus,
    settings: &ForecastSettings,
) -> Result<StatusForecast, StatusError> {
    let replay = replay(status)?;
    let spec = resume_spec(&status.spec, replay.adjusted.clone(), status.now)?;
    let deterministic = finish(&spec)?;
    let members = ensemble(&spec, status.now, settings.members, &settings.spread)?;
    let spread = [
        Percentiles::of(members.iter().map(|f| f.mean_h)),
        Percentiles::of(members.iter().map(|f| f.fraction_h)),
        Percentiles::of(members.iter().map(|f| Some(f.fuel))),
    ];
    let what_if = settings
        .what_if
        .iter()
        .map(|w| {
            let mut s = spec.clone();
            s.heater = w.heater;
            Ok((w.clone(), finish(&s)?))
        })
        .collect::<Result<Vec<_>, StatusError>>()?;
    Ok(StatusForecast {
        replay,
        now: status.now,
        deterministic,
        members,
        spread,
        what_if,
        fuel_unit: spec.heater.fuel.unit.to_string(),
    })
}
