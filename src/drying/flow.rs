//! The airflow solver as the batch run's flow provider: solved for the plenum air's density and, through the D272
//! high-moisture factor, for the bed's moisture, and re-solved only when the run says these changed enough. Each
//! re-solve starts from the last solution (`airflow::solve_from`), which differs from the new one only by the small
//! change that triggered it.
//! Fan power is air power (flow × fan static pressure) over the fan's total efficiency; the motor sits in the air
//! stream of a vaneaxial fan, so all of its electrical input ends as heat in the drying air (common practice, no
//! source).

use crate::airflow::bed::BedLaw;
use crate::airflow::fan::FlowSpec;
use crate::airflow::geometry::Container;
use crate::airflow::path::AirPath;
use crate::airflow::plenum_shape::Plenum;
use crate::airflow::solve::{solve_keeping, AirflowError, AirflowSolution, SolverSettings};
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
        let warm = self.last.as_ref().map(|s| &s.warm);
        let settings = if self.settled {
            SolverSettings {
                tolerance: self.settings.tolerance.max(self.resolve_tolerance),
                ..self.settings
            }
        } else {
            self.settings
        };
        let sol = solve_keeping(
            self.container,
            &self.flow,
            &law,
            &path,
            &settings,
            &mut self.plenum,
            warm,
        )?;
        let field = field_from_solution(&sol, self.efficiency);
        if !self.settled {
            self.first = Some(sol.clone());
        }
        self.last = Some(sol);
        self.last_key = Some(key);
        Ok(field)
    }

    fn start_settled(&mut self) {
        self.settled = true;
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
