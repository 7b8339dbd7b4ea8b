//! The airflow solver as the batch run's flow provider: solved for the plenum air's density and, through the D272
//! high-moisture factor, for the bed's moisture, and re-solved only when the run says these changed enough. Each
//! re-solve starts from the last solution (`airflow::solve_from`), which differs from the new one only by the small
//! change that triggered it, or, when that change continues the drift of the last few (`predicted_start`), from
//! the secant prediction through them, which is off by about the square of the change: measured on the demo load
//! (2026-12-04), 20 of its 28 solves started so, most taking the outer loop's least two steps, and the whole run
//! took 107 → 86 outer steps on the 1-D duct (9.6 % fewer instructions, callgrind) and 886 → 796 SIMPLEC
//! iterations on its 2-D plenum (4.5 % fewer), with every output within 2e-5 relative of the run without it.
//! Fan power is air power (flow × fan static pressure) over the fan's total efficiency; the motor sits in the air
//! stream of a vaneaxial fan, so all of its electrical input ends as heat in the drying air (common practice, no
//! source).

use crate::airflow::bed::BedLaw;
use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::Container;
use crate::airflow::path::AirPath;
use crate::airflow::plenum_shape::Plenum;
use crate::airflow::solve::{
    solve_keeping, AirflowError, AirflowSolution, SolverSettings, WarmStart,
};
use crate::drying::run::{FlowField, FlowProvider};
use crate::props::psychro::AirState;
use crate::props::resistance::d272_moisture_factor;

/// Outer tolerance (relative pressure change) of the re-solves a drying run asks for once it has settled its start
/// (a 2-D plenum then meets ten times it on its own iteration and ends its calls once it does,
/// `Plenum::set_outer_tolerance`). The run keeps each airflow until the air's density has moved 1 % or the bed's
/// moisture 0.01 d.b. (`RunSettings::reflow_density_rel`, `reflow_moisture_db`), so between re-solves it already
/// accepts flows about that far from the solution; a re-solve stopped at 1e-4 is off by about a hundredth of that.
/// The airflow a load reports, its start's, is still solved to the settings' 1e-8.
/// Measured on the demo load (2026-12-04, against re-solves to 1e-8 with the plenum at 1e-7 and 20 iterations a
/// call): with the 2-D plenum, hours to the mean and to the 95 % rule within 2e-6 relative, zone masses within
/// 1e-5, the shrink at the mean target (a sum over the cells below the over-dry line, which moves by whole cells)
/// 81.75 → 81.72 kg, 188 of the 864 cells of `series.csv` moved in their last printed digits; 145 outer steps in
/// 28 solves against 255 at the former 1e-6 (before the plenum's calls ended early), and the whole command
/// 0.37 → 0.21 s. With the 1-D duct `summary.txt`
/// unchanged and `outcome.json` within 4.4e-5. A season's output is byte-identical: it solves once per load.
/// History: 1e-8 until 2026-12-03, then 1e-6.
pub const RESOLVE_TOLERANCE: f64 = 1e-4;

/// Efficiencies of the fan and its motor.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FanEfficiency {
    /// Air power over shaft power (vaneaxial ≈ 0.5–0.75, DOMAIN.md §8.1, common practice).
    pub fan: f64,
    /// Shaft power over electrical input (≈ 0.85–0.9 for small motors, from memory, unverified).
    pub motor: f64,
}

/// Airflow from the porous-media solver.
pub struct SolvedFlow<'a> {
    /// The loaded container.
    pub container: &'a Container,
    /// Fan curve or fixed flow.
    pub flow: FlowSpec,
    /// The bed's loose-fill law with packing.
    pub law: BedLaw,
    /// Grid and solver settings (the airflow the load starts with, the one it reports, is solved to their
    /// tolerance).
    pub settings: SolverSettings,
    /// Outer tolerance of the re-solves once the run has settled its start ([`RESOLVE_TOLERANCE`] in a load's
    /// run), or the settings' own if tighter.
    pub resolve_tolerance: f64,
    /// Fan and motor efficiency.
    pub efficiency: FanEfficiency,
    /// Equilibrium RH of the bed at a mean pod moisture (dry basis), for the D272 high-moisture factor.
    pub bed_erh: Box<dyn Fn(f64) -> f64 + Send + Sync + 'a>,
    /// The last solution, for reports and as the next re-solve's starting point.
    pub last: Option<AirflowSolution>,
    /// The airflow the load starts with: the last solution asked for before the run settled its start (the one a
    /// load reports; a load takes the one solved before its run for the bed's geometry).
    pub first: Option<AirflowSolution>,
    /// Whether the run has settled its start ([`FlowProvider::start_settled`]); from then on `first` is kept and
    /// re-solves stop at `resolve_tolerance`.
    pub settled: bool,
    /// Ambient and plenum air density and D272 factor the last solution was solved for; a request with the same
    /// three reuses it.
    pub last_key: Option<(f64, f64, f64)>,
    /// The solutions before the last one, newest first, by their keys as `last_key` (at most four): with the
    /// last, the drift of the air that the next re-solve starts from (see the module docs).
    pub earlier: Vec<(Key, WarmStart)>,
    /// The plenum, kept between re-solves (a 2-D plenum keeps its flow field: each re-solve starts from it).
    pub plenum: Option<Box<dyn Plenum + Send>>,
}

impl FlowProvider for SolvedFlow<'_> {
    fn flow(
        &mut self,
        ambient: &AirState,
        plenum: &AirState,
        mean_pod_db: f64,
    ) -> Result<FlowField, AirflowError> {
        let path = AirPath {
            ambient: *ambient,
            plenum: *plenum,
        };
        let mut law = self.law;
        // ASAE D272.3 note (DOMAIN.md §1.2): clean loose fill in equilibrium with RH > 85 % resists 0.80 ×.
        let factor = d272_moisture_factor((self.bed_erh)(mean_pod_db));
        let key = (
            ambient.density_kg_per_m3(),
            plenum.density_kg_per_m3(),
            factor,
        );
        if let (Some(sol), Some(last)) = (&self.last, self.last_key) {
            // Same inputs to the bit: the solve would give the same answer.
            let same = |a: f64, b: f64| a.to_bits() == b.to_bits();
            if same(last.0, key.0) && same(last.1, key.1) && same(last.2, key.2) {
                // e.g. the run's first request after a load's start solve, which the load took away as its
                // geometry: the start's airflow again
                if !self.settled {
                    self.first = Some(sol.clone());
                }
                return Ok(field_from_solution(sol, self.efficiency));
            }
        }
        law.packing_factor *= factor;
        let predicted = (self.last.as_ref().zip(self.last_key))
            .and_then(|(last, k)| predicted_start((k, &last.warm), &self.earlier, key));
        let settings = if self.settled {
            SolverSettings {
                tolerance: self.settings.tolerance.max(self.resolve_tolerance),
                ..self.settings
            }
        } else {
            self.settings
        };
        let mut solve_at = |warm: Option<&WarmStart>| {
            let plenum = &mut self.plenum;
            solve_keeping(
                self.container,
                &self.flow,
                &law,
                &path,
                &settings,
                plenum,
                warm,
            )
        };
        let last_warm = self.last.as_ref().map(|s| &s.warm);
        // A predicted start that fails (none has been seen to) falls back to the last solution, which also puts
        // back the plenum's own state.
        let sol = match predicted.as_ref().map(|p| solve_at(Some(p))) {
            Some(Ok(sol)) => sol,
            _ => solve_at(last_warm)?,
        };
        let field = field_from_solution(&sol, self.efficiency);
        if !self.settled {
            self.first = Some(sol.clone());
        }
        if let (Some(old), Some(old_key)) = (self.last.take(), self.last_key) {
            self.earlier.insert(0, (old_key, old.warm));
            self.earlier.truncate(KEPT_EARLIER);
        }
        self.last = Some(sol);
        self.last_key = Some(key);
        Ok(field)
    }

    fn start_settled(&mut self) {
        self.settled = true;
    }
}

/// Earlier solutions a re-solve's start may be predicted from besides the last (our own choice: the run's
/// drift turns with the heater and the weather, and a few more than the two that span the plane of ambient and
/// plenum density find two that are not parallel more often).
const KEPT_EARLIER: usize = 4;

/// Largest share of a re-solve's change of inputs (ambient and plenum density, D272 factor, each relative to the
/// last solve's) that may lie outside the span of the earlier changes it is predicted from; our own numerical
/// choice.
const OFF_SPAN_SHARE: f64 = 0.1;

/// Largest sum of the predictor's coefficients' magnitudes: each solution is off its fixed point by up to the
/// re-solve tolerance, and the prediction carries that error times this sum (our own numerical choice).
const MAX_WEIGHT: f64 = 4.0;

type Key = (f64, f64, f64);
type Vec3 = [f64; 3];

fn dot(a: &Vec3, b: &Vec3) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

/// Where a re-solve for `key` starts, as `Some` when not from the last solution as it is: from the secant
/// predictor through the last and one or two of the `earlier` solutions ([`WarmStart::predicted`]), when `key`'s
/// change from the last lies within the span of their changes to it. A drying run's air drifts with the weather
/// and the heater, so its re-solves follow one another through a plane of ambient and plenum density, and the
/// predicted start is then off by about the square of the step, not the step. Of the ways to reach `key`, the one
/// with the smallest weight is taken ([`MAX_WEIGHT`]). The D272 factor jumps; across a jump the start is the last
/// solution.
fn predicted_start(
    (last_key, last): (Key, &WarmStart),
    earlier: &[(Key, WarmStart)],
    key: Key,
) -> Option<WarmStart> {
    let keys: Vec<Key> = earlier.iter().map(|(k, _)| *k).collect();
    let older: Vec<(&WarmStart, f64)> = secant_weights(last_key, &keys, key)?
        .into_iter()
        .map(|(i, c)| (&earlier[i].1, c))
        .collect();
    last.predicted(&older)
}

/// The secant predictor's weights `(i, cᵢ)` over `earlier` keys (see [`predicted_start`]): `key − last ≈ Σ cᵢ·(last
/// − earlierᵢ)`, each component relative to `last`'s, over one earlier key, or two if no one will do, with the
/// smallest `Σ |cᵢ|` of those that leave at most [`OFF_SPAN_SHARE`] of the change outside their span; `None` if
/// none does within [`MAX_WEIGHT`].
fn secant_weights(last: Key, earlier: &[Key], key: Key) -> Option<Vec<(usize, f64)>> {
    let rel = |a: Key, b: Key| -> Vec3 {
        [
            (a.0 - b.0) / last.0,
            (a.1 - b.1) / last.1,
            (a.2 - b.2) / last.2,
        ]
    };
    let change = rel(key, last);
    let steps: Vec<Vec3> = earlier.iter().map(|k| rel(last, *k)).collect();
    let n = steps.len();
    let fit = |used: Vec<usize>| {
        let v: Vec<Vec3> = used.iter().map(|&i| steps[i]).collect();
        let c = least_squares(&v, &change)?;
        let fitted: Vec3 = std::array::from_fn(|i| (v.iter().zip(&c)).map(|(s, c)| c * s[i]).sum());
        let off: Vec3 = std::array::from_fn(|i| change[i] - fitted[i]);
        let within = dot(&off, &off) <= OFF_SPAN_SHARE * OFF_SPAN_SHARE * dot(&change, &change);
        let weight: f64 = c.iter().map(|c| c.abs()).sum();
        (within && weight <= MAX_WEIGHT).then(|| (used.into_iter().zip(c).collect(), weight))
    };
    let best = |fits: Vec<(Vec<(usize, f64)>, f64)>| {
        (fits.into_iter())
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(weights, _)| weights)
    };
    // One step where one will do (each secant carries its solutions' error), else two.
    best((0..n).filter_map(|i| fit(vec![i])).collect()).or_else(|| {
        best(
            (0..n)
                .flat_map(|i| (i + 1..n).map(move |j| vec![i, j]))
                .filter_map(fit)
                .collect(),
        )
    })
}

/// Coefficients `c` minimising `|target − Σ cᵢ·vᵢ|` over one or two vectors; `None` when they are zero or (two)
/// closer to parallel than about 6°.
fn least_squares(v: &[Vec3], target: &Vec3) -> Option<Vec<f64>> {
    match v {
        [a] => {
            let g = dot(a, a);
            (g > 0.0).then(|| vec![dot(a, target) / g])
        }
        [a, b] => {
            let (g00, g01, g11) = (dot(a, a), dot(a, b), dot(b, b));
            let det = g00 * g11 - g01 * g01;
            if det.is_nan() || det <= 1e-2 * g00 * g11 {
                return None;
            }
            let (r0, r1) = (dot(a, target), dot(b, target));
            Some(vec![
                (r0 * g11 - r1 * g01) / det,
                (r1 * g00 - r0 * g01) / det,
            ])
        }
        _ => None,
    }
}

/// The run's view of an airflow solution: per-column dry-air mass flux, and fan power from the fan's own
/// volumetric flow (at the air it draws) and static pressure.
pub fn field_from_solution(sol: &AirflowSolution, eff: FanEfficiency) -> FlowField {
    let op = sol.operating_point;
    let air_power_w = op.fan_flow_m3_per_s * op.fan_static_pressure_pa.max(0.0);
    let electric = air_power_w / (eff.fan * eff.motor);
    FlowField {
        dry_air_flux_kg_per_m2_s: sol.mass_flux_kg_per_m2_s.clone(),
        fan_power_w: electric,
        electric_power_w: electric,
        leakage_m3_per_s: sol.summary.leakage_m3_per_s,
        plenum_pa: sol.summary.mean_plenum_pressure_pa,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const LAST: Key = (1.15, 1.10, 1.0);

    /// `last` moved by `d` (relative to `last`, as [`secant_weights`] measures).
    fn moved(d: [f64; 3]) -> Key {
        (
            LAST.0 * (1.0 + d[0]),
            LAST.1 * (1.0 + d[1]),
            LAST.2 * (1.0 + d[2]),
        )
    }

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() < 1e-12
    }

    #[test]
    fn a_change_along_the_last_step_is_predicted_from_that_step() {
        let before = moved([-0.01, -0.01, 0.0]);
        // half a step on, and a whole step back (to the earlier key itself)
        for (d, c) in [([0.005, 0.005, 0.0], 0.5), ([-0.01, -0.01, 0.0], -1.0)] {
            let w = secant_weights(LAST, &[before], moved(d)).expect("on the line");
            assert!(w.len() == 1 && w[0].0 == 0 && close(w[0].1, c), "{w:?}");
        }
        // Off the line by more than a tenth of the change, or further on than MAX_WEIGHT steps: none.
        assert_eq!(
            secant_weights(LAST, &[before], moved([0.01, 0.0, 0.0])),
            None
        );
        assert_eq!(
            secant_weights(LAST, &[before], moved([0.05, 0.05, 0.0])),
            None
        );
        // A D272 factor that jumps while the densities drift along the line: none.
        assert_eq!(
            secant_weights(LAST, &[before], moved([0.01, 0.01, 0.2])),
            None
        );
        // No earlier key, or one equal to the last: none.
        assert_eq!(secant_weights(LAST, &[], moved([0.01, 0.01, 0.0])), None);
        assert_eq!(
            secant_weights(LAST, &[LAST], moved([0.01, 0.01, 0.0])),
            None
        );
    }

    #[test]
    fn two_steps_that_are_not_parallel_span_the_plane_of_the_densities() {
        // a drift of both densities, then one of the plenum air's alone (a heater cutting in)
        let earlier = [moved([0.0, -0.01, 0.0]), moved([-0.01, -0.02, 0.0])];
        // the ambient air's alone: key − last = (0.005, 0) = c₀·(last − e₀) + c₁·(last − e₁) = c₀·(0, 0.01) +
        // c₁·(0.01, 0.02), so c₁ = 0.5, c₀ = −1; neither step alone comes near
        let w = secant_weights(LAST, &earlier, moved([0.005, 0.0, 0.0])).expect("in the span");
        assert_eq!(w.iter().map(|(i, _)| *i).collect::<Vec<_>>(), [0, 1]);
        assert!(close(w[0].1, -1.0) && close(w[1].1, 0.5), "{w:?}");
        // Where one step alone reaches the key, it is taken.
        let w = secant_weights(LAST, &earlier, moved([0.0, 0.01, 0.0])).expect("on one step");
        assert!(w.len() == 1 && w[0].0 == 0 && close(w[0].1, 1.0), "{w:?}");
        // Two parallel steps do not span a plane.
        let parallel = [moved([-0.01, -0.01, 0.0]), moved([-0.02, -0.02, 0.0])];
        assert_eq!(
            secant_weights(LAST, &parallel, moved([0.005, 0.0, 0.0])),
            None
        );
    }
}
