//! The buying point's board: the dryers as they are now (what is on each since when, with its readings), the loads
//! waiting in the yard, and a plan for the next hours: which load goes on which dryer when, when each will be done
//! (with a range), waits against the limit, fuel. Pure computation; the board file is read by `input::board`.
//!
//! Method: each load on a dryer goes through `status` (replay from its on-air time, adjusted to its readings,
//! run on under the forecast) and its dryer is busy until it meets the stop rule plus the turnaround. The yard is
//! then dispatched by the season planner's own event loop ([`simulate_from`]) with the buying point's dispatch
//! policy, each load dried through the season's deep-bed drier, i.e. the one load path, under the observed
//! weather followed by the forecast. Ranges: each load's finish under weather members around the forecast
//! ([`crate::weather::ensemble`]), at the start the plan gives it (the plan itself follows the forecast as given;
//! the ranges do not move later starts).

use chrono::{DateTime, FixedOffset};
use rayon::prelude::*;

use crate::season::arrivals::Load;
use crate::season::dispatch::{DispatchPolicy, Predictor};
use crate::season::drier::{LoadDrier, LoadTemplate};
use crate::season::scenario::BuyingPoint;
use crate::season::sim::{duration_h, simulate_from, PlanStart, SeasonRun};
use crate::season::SeasonError;
use crate::status::forecast::{ensemble, finish, replay, resume_spec};
use crate::status::{Finish, LoadStatus, Percentiles, StatusError};
use crate::weather::ensemble::Spread;

/// A load on a dryer now.
#[derive(Debug, Clone)]
pub struct OnDryer {
    /// The dryer's position in the buying point's list.
    pub dryer_index: usize,
    /// The load's id.
    pub load_id: String,
    /// Its status (spec from its on-air time, readings, now).
    pub status: LoadStatus,
}

/// A load on a dryer, forecast.
#[derive(Debug, Clone)]
pub struct CurrentLoad {
    /// The dryer's position.
    pub dryer_index: usize,
    /// The load's id.
    pub load_id: String,
    /// Air on.
    pub on_air: DateTime<FixedOffset>,
    /// Net mass, kg.
    pub mass_kg: f64,
    /// Mean kernel moisture now: replay, adjusted to the readings, wet basis decimal.
    pub mean_kernel_wb: (f64, f64),
    /// Its finish from now under the forecast.
    pub finish: Finish,
    /// Hours from now to the stop rule over the ensemble.
    pub range: Percentiles,
    /// When its dryer is free again: off air (the stop rule, or the end of the weather) plus the turnaround.
    pub released: DateTime<FixedOffset>,
}

/// Errors of the board.
#[derive(Debug, thiserror::Error)]
pub enum BoardError {
    /// A load's status or forecast.
    #[error("load {load:?} on dryer {dryer:?}: {source}")]
    Load {
        /// Load id.
        load: String,
        /// Dryer id.
        dryer: String,
        /// What failed.
        source: Box<StatusError>,
    },
    /// The plan.
    #[error(transparent)]
    Season(#[from] SeasonError),
}

/// Forecast every load on a dryer (in parallel, each on its own; results in the given order).
pub fn current_loads(
    bp: &BuyingPoint,
    on: &[OnDryer],
    spread: &Spread,
    members: usize,
) -> Result<Vec<CurrentLoad>, BoardError> {
    on.par_iter()
        .map(|o| {
            let fail = |source| BoardError::Load {
                load: o.load_id.clone(),
                dryer: bp.dryers[o.dryer_index].id.clone(),
                source: Box::new(source),
            };
            let st = &o.status;
            let r = replay(st).map_err(fail)?;
            let spec = resume_spec(&st.spec, r.adjusted.clone(), st.now).map_err(fail)?;
            let f = finish(&spec).map_err(fail)?;
            let m = ensemble(&spec, st.now, members, spread).map_err(fail)?;
            let off_h = f.stop_h.unwrap_or(f.hours_run);
            let mass_kg = match st.spec.fill {
                crate::load::FillSpec::NetMass(kg) => kg,
                crate::load::FillSpec::Container => f64::NAN,
            };
            Ok(CurrentLoad {
                dryer_index: o.dryer_index,
                load_id: o.load_id.clone(),
                on_air: st.spec.start,
                mass_kg,
                mean_kernel_wb: r.mean_kernel_wb,
                finish: f,
                range: Percentiles::of(m.iter().map(|x| x.stop_h)),
                released: st.now + duration_h(off_h + bp.turnaround_h),
            })
        })
        .collect()
}

/// The plan for the yard from `now` to `now + horizon_h`: the season's event loop from a [`PlanStart`] with the
/// current loads' dryers busy until their release. `yard` sorted by arrival (a load may have arrived before now;
/// it waits until now at the earliest).
#[allow(clippy::too_many_arguments)]
pub fn plan(
    bp: &BuyingPoint,
    yard: &[Load],
    current: &[CurrentLoad],
    now: DateTime<FixedOffset>,
    horizon_h: f64,
    drier: &dyn LoadDrier,
    policy: DispatchPolicy,
    predictor: &dyn Predictor,
) -> Result<SeasonRun, SeasonError> {
    let mut busy_until = vec![None; bp.dryers.len()];
    for c in current {
        busy_until[c.dryer_index] = Some(c.released);
    }
    let start = PlanStart {
        at: now,
        busy_until,
    };
    let end = now + duration_h(horizon_h);
    simulate_from(bp, yard, drier, policy, predictor, end, Some(&start))
}

/// Each planned load's hours to its stop rule over the weather members, at the start the plan gives it, in the
/// schedule's order.
pub fn ranges(
    bp: &BuyingPoint,
    template: &LoadTemplate,
    yard: &[Load],
    run: &SeasonRun,
    now: DateTime<FixedOffset>,
    spread: &Spread,
    members: usize,
) -> Result<Vec<Percentiles>, BoardError> {
    run.schedule
        .par_iter()
        .map(|row| {
            let load = &yard[row.load_index];
            let spec = template.spec_for(load, &bp.dryers[row.dryer_index], row.start)?;
            let m = ensemble(&spec, now, members, spread).map_err(|source| BoardError::Load {
                load: row.load_id.clone(),
                dryer: row.dryer_id.clone(),
                source: Box::new(source),
            })?;
            Ok(Percentiles::of(m.iter().map(|x| x.stop_h)))
        })
        .collect()
}
