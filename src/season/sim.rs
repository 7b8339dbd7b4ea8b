//! The event simulation of one season at one buying point. Events are load arrivals, dryer releases (drying done
//! plus turnaround) and the yard opening; they sit in a binary heap keyed by (time, sequence number) so ties are
//! resolved the same way every run. All events at one instant are applied before any dispatch, then every free
//! dryer, lowest index first, takes the load its policy picks among those that fit it.
//!
//! Each started load is dried through the [`LoadDrier`] seam from its start time. Loads still waiting when the
//! season ends are reported as never started; loads whose drying did not reach target are flagged in the schedule.
//! Method: next-event time advance (a textbook discrete-event simulation; no external reference).

use std::cmp::Reverse;
use std::collections::{BinaryHeap, HashMap, HashSet};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::OnceLock;

use chrono::{DateTime, Duration, FixedOffset};

use super::arrivals::Load;
use super::dispatch::{choose, DispatchPolicy, Predictor, Waiting};
use super::drier::{DryingResult, LoadDrier};
use super::scenario::BuyingPoint;
use super::SeasonError;
use crate::error::InputError;

/// One load's stay on a dryer.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ScheduleRow {
    /// Position in the season's load list.
    pub load_index: usize,
    /// Load id.
    pub load_id: String,
    /// Dryer position in the buying point's list.
    pub dryer_index: usize,
    /// Dryer id.
    pub dryer_id: String,
    /// Arrival.
    pub arrival: DateTime<FixedOffset>,
    /// Air on.
    pub start: DateTime<FixedOffset>,
    /// Air off.
    pub finish: DateTime<FixedOffset>,
    /// Dryer free again (after turnaround).
    pub released: DateTime<FixedOffset>,
    /// Wait from arrival to air on, h.
    pub wait_h: f64,
    /// Net mass in, kg.
    pub mass_kg: f64,
    /// Kernel moisture in, % w.b.
    pub moisture_in_pct: f64,
    /// What the drying gave.
    pub result: DryingResult,
}

/// Queue and dryer occupancy from `time` until the next sample.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct QueueSample {
    /// When this state began.
    pub time: DateTime<FixedOffset>,
    /// Loads waiting.
    pub queue: usize,
    /// Dryers occupied (drying or in turnaround).
    pub busy: usize,
}

/// A simulated season.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SeasonRun {
    /// Every started load, in start order.
    pub schedule: Vec<ScheduleRow>,
    /// Loads never started (still waiting at season end), in arrival order.
    pub never_started: Vec<Unstarted>,
    /// Queue length and occupancy over time, one sample per instant at which either changed.
    pub log: Vec<QueueSample>,
    /// Season start (the scenario's, or the first arrival if earlier).
    pub start: DateTime<FixedOffset>,
    /// Season end: no load is put on air at or after it.
    pub end: DateTime<FixedOffset>,
    /// Dryer ids, in order.
    pub dryer_ids: Vec<String>,
    /// The wait limit in force, h.
    pub max_wait_h: f64,
    /// Number of arrivals.
    pub arrivals: usize,
}

/// A load still waiting when the season ended.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Unstarted {
    /// Position in the season's load list.
    pub load_index: usize,
    /// Load id.
    pub load_id: String,
    /// Arrival.
    pub arrival: DateTime<FixedOffset>,
    /// Net mass, kg.
    pub mass_kg: f64,
    /// Kernel moisture, % w.b.
    pub moisture_pct: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Event {
    Arrival(usize),
    Release(usize),
    Open,
}

/// Hours between two instants (millisecond resolution).
pub fn hours_between(a: DateTime<FixedOffset>, b: DateTime<FixedOffset>) -> f64 {
    (b - a).num_milliseconds() as f64 / 3.6e6
}

/// A duration of `h` hours, rounded to the millisecond.
pub fn duration_h(h: f64) -> Duration {
    Duration::milliseconds((h * 3.6e6).round() as i64)
}

/// A plan that starts part-way: nothing is put on air before `at`, loads that arrived earlier wait until then, and
/// dryers still busy are free again at their time (the board of a buying point, `board`).
#[derive(Debug, Clone, PartialEq)]
pub struct PlanStart {
    /// Now: the first instant a load may go on air.
    pub at: DateTime<FixedOffset>,
    /// Per dryer (in the buying point's order): when it is free again (its load off air and the turnaround done),
    /// or `None` if it is free now.
    pub busy_until: Vec<Option<DateTime<FixedOffset>>>,
}

/// Simulate one season. `loads` must be sorted by arrival (readers and the generator return them so); every
/// arrival must fall before `season_end` and every load must fit at least one dryer.
pub fn simulate(
    bp: &BuyingPoint,
    loads: &[Load],
    drier: &dyn LoadDrier,
    policy: DispatchPolicy,
    predictor: &dyn Predictor,
    season_end: DateTime<FixedOffset>,
) -> Result<SeasonRun, SeasonError> {
    simulate_from(bp, loads, drier, policy, predictor, season_end, None)
}

/// [`simulate`], optionally from a [`PlanStart`] (dryers busy, loads already waiting).
pub fn simulate_from(
    bp: &BuyingPoint,
    loads: &[Load],
    drier: &dyn LoadDrier,
    policy: DispatchPolicy,
    predictor: &dyn Predictor,
    season_end: DateTime<FixedOffset>,
    from: Option<&PlanStart>,
) -> Result<SeasonRun, SeasonError> {
    Season::new(bp, loads, policy, predictor, season_end, from)
        .run(drier, rayon::current_num_threads() > 1)
}

/// The season's inputs as [`simulate`] requires them.
fn check_season(
    bp: &BuyingPoint,
    loads: &[Load],
    season_end: DateTime<FixedOffset>,
    from: Option<&PlanStart>,
) -> Result<(), SeasonError> {
    if bp.dryers.is_empty() {
        return Err(InputError::argument("dryers", 0, "a season needs at least one dryer").into());
    }
    if let Some(f) = from {
        if f.busy_until.len() != bp.dryers.len() {
            return Err(InputError::argument(
                "busy dryers",
                f.busy_until.len(),
                &format!("must list each of the {} dryers", bp.dryers.len()),
            )
            .into());
        }
    }
    let largest = bp.dryers.iter().map(|d| d.capacity_kg).fold(0.0, f64::max);
    for (i, l) in loads.iter().enumerate() {
        if i > 0 && l.arrival < loads[i - 1].arrival {
            return Err(InputError::argument(
                &format!("load {}", l.id),
                l.arrival.to_rfc3339(),
                "arrives before the load listed ahead of it: loads must be sorted by arrival",
            )
            .into());
        }
        if l.arrival >= season_end {
            return Err(InputError::argument(
                &format!("load {}", l.id),
                l.arrival.to_rfc3339(),
                &format!(
                    "arrives at or after the season's end ({})",
                    season_end.to_rfc3339()
                ),
            )
            .into());
        }
        if l.mass_kg > largest {
            return Err(InputError::argument(
                &format!("load {}", l.id),
                format!("{} kg", l.mass_kg),
                &format!("is heavier than every dryer's capacity (largest {largest} kg)"),
            )
            .into());
        }
    }
    Ok(())
}

/// [`simulate`] with the loads dried one after another on this thread (`ahead == false`; for callers that already
/// run many seasons in parallel) or several at once on the pool (`ahead == true`). The results are the same.
pub fn simulate_with(
    bp: &BuyingPoint,
    loads: &[Load],
    drier: &dyn LoadDrier,
    policy: DispatchPolicy,
    predictor: &dyn Predictor,
    season_end: DateTime<FixedOffset>,
    ahead: bool,
) -> Result<SeasonRun, SeasonError> {
    Season::new(bp, loads, policy, predictor, season_end, None).run(drier, ahead)
}

/// What a pass of the event loop is told about one load's drying.
enum Answer {
    /// The drier's own result.
    Known(DryingResult),
    /// A guess of the hours, to look further ahead; a pass that used one is run again.
    Guess(f64),
    /// Stop the pass here.
    Stop,
}

/// Loads a look-ahead batch dries per pool thread after a guess missed (a batch dried on a wrong guess is thrown
/// away, so a contended yard keeps batches short).
const SHALLOW_PER_THREAD: usize = 2;
/// The most loads per pool thread a batch grows to while the guesses hold (fewer, longer batches: less waiting at
/// each batch's end). Measured 2026-12-03 (fixed depths, load average 4–5): the 600-load season on 30 wagons dried
/// 600 loads at 2 per thread and 609 at 4, the pool's threads busy 1.7 and 1.86 of 2 of the batches' wall time;
/// Wrenfield's three wagons (150 loads) dried 106 at 2 and 204 at 4. Growing one per thread per good batch: 603
/// and 110.
const DEEP_PER_THREAD: usize = 4;

/// A load put on a dryer at an instant: the drier's whole input, since its result depends on nothing else.
type Request = (usize, usize, DateTime<FixedOffset>);

/// One season's fixed inputs, for the event passes.
struct Season<'a> {
    bp: &'a BuyingPoint,
    loads: &'a [Load],
    policy: DispatchPolicy,
    predictor: &'a dyn Predictor,
    season_end: DateTime<FixedOffset>,
    from: Option<&'a PlanStart>,
}

impl<'a> Season<'a> {
    /// The one way a season is set up, for [`simulate_from`] and [`simulate_with`].
    fn new(
        bp: &'a BuyingPoint,
        loads: &'a [Load],
        policy: DispatchPolicy,
        predictor: &'a dyn Predictor,
        season_end: DateTime<FixedOffset>,
        from: Option<&'a PlanStart>,
    ) -> Self {
        Season {
            bp,
            loads,
            policy,
            predictor,
            season_end,
            from,
        }
    }

    /// The season, its loads dried in order on this thread or (`ahead`) several at once on the pool.
    fn run(&self, drier: &dyn LoadDrier, ahead: bool) -> Result<SeasonRun, SeasonError> {
        check_season(self.bp, self.loads, self.season_end, self.from)?;
        if !ahead {
            let mut ask = |i: usize, d: usize, t| {
                drier
                    .dry(&self.loads[i], &self.bp.dryers[d], t)
                    .map(Answer::Known)
            };
            return Ok(self
                .pass(&mut ask)?
                .expect("a pass that never stops completes"));
        }
        self.speculate(drier)
    }

    /// The season with the loads dried in parallel. A load's drying needs only its load, dryer and start, and the
    /// dispatch needs a result only when that dryer's release is due, so each pass runs the event loop ahead on
    /// guessed hours for loads not yet dried, collects a batch of them (2 to 4 per pool thread, see
    /// [`DEEP_PER_THREAD`]), dries them all at once, and starts again from the beginning (the event logic is cheap
    /// next to one drying). A pass that used no guess is the sequential season exactly: every result it used is the
    /// drier's own for the same load, dryer and start. The batch sizes depend on the results only, never on timing.
    fn speculate(&self, drier: &dyn LoadDrier) -> Result<SeasonRun, SeasonError> {
        // A failed drying is kept as `None` and asked again (so its error comes back) only once it is on the path.
        let mut known: HashMap<Request, Option<DryingResult>> = HashMap::new();
        let mut scale = Scale::default();
        let threads = rayon::current_num_threads();
        let mut depth = SHALLOW_PER_THREAD * threads;
        // The last batch dried; a pass that asks for all of it again found every guess before it good enough.
        let mut batch: HashSet<Request> = HashSet::new();
        loop {
            let mut wanted: Vec<Request> = Vec::new();
            let mut hits = 0;
            let mut ask = |i: usize, d: usize, t: DateTime<FixedOffset>| {
                let sure = wanted.is_empty();
                match known.get(&(i, d, t)) {
                    Some(Some(r)) => {
                        hits += usize::from(batch.contains(&(i, d, t)));
                        return Ok(Answer::Known(*r));
                    }
                    Some(None) if sure => {
                        return drier
                            .dry(&self.loads[i], &self.bp.dryers[d], t)
                            .map(Answer::Known)
                    }
                    _ => {}
                }
                if wanted.len() == depth {
                    return Ok(Answer::Stop);
                }
                wanted.push((i, d, t));
                let guess = self.predictor.predict_h(&self.loads[i], &self.bp.dryers[d]);
                Ok(Answer::Guess(scale.apply(guess)))
            };
            let run = self.pass(&mut ask)?;
            if wanted.is_empty() {
                return Ok(run.expect("a pass without guesses never stops"));
            }
            // Look one load per thread further ahead after each batch whose guesses all held (longer batches: the
            // pool waits less at their ends), and come back at the first miss (a batch dried on a wrong guess is
            // thrown away).
            depth = if hits == batch.len() {
                (depth + threads).min(DEEP_PER_THREAD * threads)
            } else {
                SHALLOW_PER_THREAD * threads
            };
            let results = self.dry_all(drier, &wanted);
            for (&(i, d, t), r) in wanted.iter().zip(results) {
                if let Some(r) = r {
                    scale.add(
                        r.hours,
                        self.predictor.predict_h(&self.loads[i], &self.bp.dryers[d]),
                    );
                }
                known.insert((i, d, t), r);
            }
            batch = wanted.into_iter().collect();
        }
    }

    /// Dry every request on the pool, the longest predicted first, each thread taking the next as soon as it is
    /// done with its last: a batch then waits at its end for about one load at most, not for whichever half of an
    /// even split dried slower. Results in the order of `wanted` (a result depends only on its request, so the order
    /// they are dried in changes nothing).
    fn dry_all(&self, drier: &dyn LoadDrier, wanted: &[Request]) -> Vec<Option<DryingResult>> {
        let predicted =
            |&(i, d, _): &Request| self.predictor.predict_h(&self.loads[i], &self.bp.dryers[d]);
        let mut order: Vec<usize> = (0..wanted.len()).collect();
        order.sort_by(|&a, &b| predicted(&wanted[b]).total_cmp(&predicted(&wanted[a])));
        let slots: Vec<OnceLock<Option<DryingResult>>> =
            wanted.iter().map(|_| OnceLock::new()).collect();
        let next = AtomicUsize::new(0);
        let work = || {
            while let Some(&j) = order.get(next.fetch_add(1, Ordering::Relaxed)) {
                let (i, d, t) = wanted[j];
                let dried = drier.dry(&self.loads[i], &self.bp.dryers[d], t).ok();
                slots[j].set(dried).expect("each request is taken once");
            }
        };
        rayon::scope(|s| {
            for _ in 1..rayon::current_num_threads().min(wanted.len()) {
                s.spawn(|_| work());
            }
            work();
        });
        slots
            .into_iter()
            .map(|slot| slot.into_inner().expect("every request dried"))
            .collect()
    }

    /// One pass of the event loop; `ask(load, dryer, start)` answers each drying. `None` if `ask` stopped it.
    fn pass(
        &self,
        ask: &mut dyn FnMut(usize, usize, DateTime<FixedOffset>) -> Result<Answer, SeasonError>,
    ) -> Result<Option<SeasonRun>, SeasonError> {
        let (bp, loads, season_end) = (self.bp, self.loads, self.season_end);
        let turnaround = duration_h(bp.turnaround_h);
        let mut heap: BinaryHeap<Reverse<(DateTime<FixedOffset>, u64, Event)>> = BinaryHeap::new();
        let mut seq = 0u64;
        let from = self.from;
        let not_before = |t: DateTime<FixedOffset>| from.map_or(t, |f| t.max(f.at));
        for (i, l) in loads.iter().enumerate() {
            heap.push(Reverse((not_before(l.arrival), seq, Event::Arrival(i))));
            seq += 1;
        }
        let n = bp.dryers.len();
        let mut free = vec![true; n];
        for (d, until) in from.iter().flat_map(|f| f.busy_until.iter().enumerate()) {
            if let Some(t) = until {
                free[d] = false;
                heap.push(Reverse((not_before(*t), seq, Event::Release(d))));
                seq += 1;
            }
        }
        let mut queue: Vec<Waiting> = Vec::new();
        let mut schedule = Vec::with_capacity(loads.len());
        let mut log: Vec<QueueSample> = Vec::new();
        let mut open_pending: Option<DateTime<FixedOffset>> = None;
        let start = match from {
            Some(f) => f.at,
            None => loads
                .first()
                .map(|l| l.arrival.min(bp.season.start))
                .unwrap_or(bp.season.start),
        };

        while let Some(Reverse((t, _, ev))) = heap.pop() {
            let mut batch = vec![ev];
            while let Some(Reverse((t2, _, ev2))) = heap.peek().copied() {
                if t2 != t {
                    break;
                }
                heap.pop();
                batch.push(ev2);
            }
            for ev in batch {
                match ev {
                    Event::Arrival(i) => queue.push(Waiting {
                        index: i,
                        load: &loads[i],
                    }),
                    Event::Release(d) => free[d] = true,
                    Event::Open => {}
                }
            }
            if open_pending == Some(t) {
                open_pending = None;
            }
            if t < season_end && !queue.is_empty() && free.iter().any(|&f| f) {
                if bp.is_open(t) {
                    for (d, dryer) in bp.dryers.iter().enumerate() {
                        if !free[d] {
                            continue;
                        }
                        let Some(qi) = choose(
                            self.policy,
                            &queue,
                            dryer,
                            t,
                            bp.rules.max_wait_h,
                            self.predictor,
                        ) else {
                            continue;
                        };
                        let w = queue.remove(qi);
                        let result = match ask(w.index, d, t)? {
                            Answer::Known(r) => r,
                            Answer::Guess(hours) => DryingResult { hours, ..GUESSED },
                            Answer::Stop => return Ok(None),
                        };
                        let finish = t + duration_h(result.hours);
                        let released = finish + turnaround;
                        free[d] = false;
                        heap.push(Reverse((released, seq, Event::Release(d))));
                        seq += 1;
                        schedule.push(ScheduleRow {
                            load_index: w.index,
                            load_id: w.load.id.clone(),
                            dryer_index: d,
                            dryer_id: dryer.id.clone(),
                            arrival: w.load.arrival,
                            start: t,
                            finish,
                            released,
                            wait_h: hours_between(w.load.arrival, t),
                            mass_kg: w.load.mass_kg,
                            moisture_in_pct: w.load.moisture_pct,
                            result,
                        });
                        if queue.is_empty() {
                            break;
                        }
                    }
                } else if open_pending.is_none() {
                    let o = bp.next_open(t);
                    open_pending = Some(o);
                    heap.push(Reverse((o, seq, Event::Open)));
                    seq += 1;
                }
            }
            let sample = QueueSample {
                time: t,
                queue: queue.len(),
                busy: free.iter().filter(|&&f| !f).count(),
            };
            match log.last() {
                Some(s) if s.queue == sample.queue && s.busy == sample.busy => {}
                _ => log.push(sample),
            }
        }
        let mut never_started: Vec<Unstarted> = queue
            .iter()
            .map(|w| Unstarted {
                load_index: w.index,
                load_id: w.load.id.clone(),
                arrival: w.load.arrival,
                mass_kg: w.load.mass_kg,
                moisture_pct: w.load.moisture_pct,
            })
            .collect();
        never_started.sort_by_key(|u| u.load_index);
        Ok(Some(SeasonRun {
            schedule,
            never_started,
            log,
            start,
            end: season_end,
            dryer_ids: bp.dryers.iter().map(|d| d.id.clone()).collect(),
            max_wait_h: bp.rules.max_wait_h,
            arrivals: loads.len(),
        }))
    }
}

/// The figures of a guessed drying other than its hours (never reported: a pass that used a guess is run again).
const GUESSED: DryingResult = DryingResult {
    hours: 0.0,
    fuel_l: 0.0,
    kwh: 0.0,
    moisture_out_pct: 0.0,
    over_dried_kg: 0.0,
    shrink_kg: 0.0,
    finished: true,
    air_per_m3: None,
};

/// The ratio of dried hours to predicted hours so far, to make the guesses closer (it changes only how far ahead
/// a pass sees, never a result).
#[derive(Default)]
struct Scale {
    dried_h: f64,
    predicted_h: f64,
}

impl Scale {
    fn add(&mut self, dried_h: f64, predicted_h: f64) {
        if dried_h.is_finite() && predicted_h.is_finite() && predicted_h > 0.0 {
            self.dried_h += dried_h;
            self.predicted_h += predicted_h;
        }
    }

    fn apply(&self, predicted_h: f64) -> f64 {
        let ratio = if self.predicted_h > 0.0 {
            self.dried_h / self.predicted_h
        } else {
            1.0
        };
        let h = predicted_h * ratio;
        if h.is_finite() && h >= 0.0 {
            h
        } else {
            0.0
        }
    }
}

impl SeasonRun {
    /// Time-average number of loads waiting over `[from, to)`, from the event log.
    pub fn mean_queue(&self, from: DateTime<FixedOffset>, to: DateTime<FixedOffset>) -> f64 {
        let span = hours_between(from, to);
        if span <= 0.0 {
            return 0.0;
        }
        let mut area = 0.0;
        for (k, s) in self.log.iter().enumerate() {
            let a = s.time.max(from);
            let b = self
                .log
                .get(k + 1)
                .map(|n| n.time)
                .unwrap_or(to.max(s.time))
                .min(to);
            if b > a {
                area += s.queue as f64 * hours_between(a, b);
            }
        }
        area / span
    }

    /// Loads not taken to target by the season's end: never started, plus those the drier gave up on.
    pub fn unfinished(&self) -> usize {
        self.never_started.len() + self.schedule.iter().filter(|r| !r.result.finished).count()
    }
}
