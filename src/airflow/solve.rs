//! The coupled steady solve: bed ↔ floor ↔ plenum ↔ fan (or fixed flow) ↔ leakage, by Picard iteration around the
//! linear bed solver, and the `AirflowSolution` it returns.
//!
//! Each outer step freezes the bed resistivities, the floor's linearised resistance and the plenum's pressure
//! shape δ(x) = p(x) − p_inlet. With K frozen the bed is linear, so for any inlet static pressure p_in the
//! pressures are `p = p_in·φ₁ + φ_δ` (φ₁: response to a uniform 1 Pa plenum; φ_δ: to the shape alone) and the
//! bed's flow is `Q_bed = G₁·p_in + G_δ`. To spend one linear solve per step rather than two, the step solves for
//! the whole field p_s at the previous p_in (warm-started from the last pressures) and sets
//! `φ_δ = p_s − p_in,prev·φ₁`; φ₁ itself is re-solved only on the first two steps and every fourth step. A stale
//! φ₁ affects only the part `(p_in − p_in,prev)·φ₁`, which vanishes as the iteration converges, and the linear
//! solves' tolerance follows the outer change (inexact Picard) down to `linear_tolerance`. The scalar closure then finds p_in: for a fixed
//! flow, `Q_bed + C·√p̄ = Q_total`; for a fan, bisection on the plenum flow Q for
//! `P_fan(Q·v_fan/v_pl)·ρ_fan/ρ_rated − K_t·ρ_pl·(Q/A_in)²/2 = p_in(Q)`, which is the intersection of the fan and
//! system curves (DOMAIN.md §8.1) with the fan at its own air and the same dry-air mass flow through both
//! (`v`: specific volume per kg dry air; see `airflow::path` for which air each part sees). The plenum profile is
//! then re-marched from the new floor outflows and the resistivities re-evaluated from the new velocities. The loop
//! stops when the largest pressure change falls below the tolerance relative to the largest pressure.
//!
//! By default (`OuterMethod::Anderson`) each Picard step's result is mixed with the last few by Anderson
//! acceleration (`airflow::anderson`) before the resistivities are re-evaluated: the same fixed point in about half
//! the outer steps. Given a previous solution of the same container and grid (`solve_from`), the iteration starts
//! from its speeds, pressures, inlet pressure and plenum shape instead of from a uniform guess.
//!
//! References: DOMAIN.md §1.6 (Picard on the nonlinear Darcy form), §8.1 (fan and system curves, density).
use ndarray::{Array2, Array3};
use serde::Serialize;

use super::anderson::Anderson;
use super::bed::{BedLaw, BedSystem, LinearStats};
use super::fan::{leakage_m3_per_s, FanError, FlowSpec};
use super::geometry::{Container, DiscreteContainer, Floor, Grid};
use super::newton::{self, Closure, Iterate};
use super::path::AirPath;
use super::plenum::PlenumModel;
use super::plenum2d::FlowError;
use super::plenum_map::{MapFrame, PlenumMap};
use super::plenum_shape::{build, FloorResponse, Plenum};
use crate::error::InputError;
use crate::props::psychro::AirState;

/// Errors from an airflow solve.
#[derive(Debug, thiserror::Error)]
pub enum AirflowError {
    /// Bad geometry, grid or model input.
    #[error(transparent)]
    Input(#[from] InputError),
    /// A bad fan curve.
    #[error(transparent)]
    Fan(#[from] FanError),
    /// The fan cannot meet the system within its rated range.
    #[error("fan {fan:?}: {message}")]
    OffCurve {
        /// Fan name.
        fan: String,
        /// What happened, with numbers and units.
        message: String,
    },
    /// The outer (Picard) iteration did not converge.
    #[error("airflow solve did not converge: {iters} outer iterations, relative pressure change {residual:.3e}")]
    NotConverged {
        /// Outer iterations done.
        iters: u32,
        /// Last relative change.
        residual: f64,
    },
    /// The inner linear solver did not converge.
    #[error("linear bed solve did not converge: {iters} CG iterations, relative residual {residual:.3e}")]
    LinearNotConverged {
        /// CG iterations.
        iters: u32,
        /// Final relative residual.
        residual: f64,
    },
    /// The plenum flow solve failed.
    #[error(transparent)]
    Plenum(#[from] FlowError),
    /// A result is not finite or not physical.
    #[error("airflow solve gave a non-physical {quantity} = {value}")]
    NonPhysical {
        /// Which quantity.
        quantity: &'static str,
        /// Its value.
        value: f64,
    },
}

/// Numerical settings (all have defaults).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SolverSettings {
    /// Grid resolution.
    pub grid: Grid,
    /// Plenum model.
    pub plenum: PlenumModel,
    /// Outer iterations allowed.
    pub max_outer_iters: u32,
    /// Stop when max |Δp| / max |p| between outer steps falls below this.
    pub tolerance: f64,
    /// Relative residual for each linear solve.
    pub linear_tolerance: f64,
    /// CG iterations allowed per linear solve.
    pub max_linear_iters: u32,
    /// The outer iteration.
    pub method: OuterMethod,
}

/// How the outer (nonlinear) iteration is done.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum OuterMethod {
    /// Picard: freeze the resistivities, solve the linear bed, update (linear convergence).
    Picard,
    /// Picard with Anderson acceleration (`airflow::anderson`) over the last few steps: the same fixed point in
    /// fewer outer steps, each as cheap as Picard's. The default. The 2-D plenum keeps plain Picard (its shape is
    /// an iterative solve of its own, carrying its own state between outer steps).
    #[default]
    Anderson,
    /// Newton–Krylov (`airflow::newton`) from a few Picard steps, or from a previous solution when given one:
    /// a quarter of Picard's outer steps, but each GMRES step re-evaluates the whole residual, so it is slower.
    Newton,
}

/// Relative pressure change at which a cold Newton solve leaves its first Picard steps.
const NEWTON_HANDOVER: f64 = 0.05;

/// Picard steps whose differences Anderson acceleration keeps.
const ANDERSON_DEPTH: usize = 5;

/// What a later solve of the same container and grid can start from (solver orientation).
#[derive(Debug, Clone, Default)]
pub struct WarmStart {
    pressure_pa: Vec<f64>,
    speeds_m_per_s: Vec<f64>,
    floor_speeds_m_per_s: Vec<f64>,
    inlet_pa: f64,
    shape_pa: Vec<f64>,
    /// The plenum's own state ([`Plenum::kept_state`]); empty for a plenum that keeps none.
    plenum_state: Vec<f64>,
}

impl WarmStart {
    /// A secant predictor for a solve whose inputs lie near the span of the changes from earlier solutions to
    /// this one, e.g. a drying run's next re-solve after a few along the same drift of the air: this solution plus
    /// `Σ cᵢ·(self − olderᵢ)` over `(olderᵢ, cᵢ)` in `older`. Pressures, plenum shape and the plenum's own state
    /// (where all of them keep one of the same size) are combined linearly; a speed that would change sign or move
    /// by more than a factor 2 from its value in `self` keeps that value (far from the span the linear guess is no
    /// use, and a speed must stay positive). `None` when any of them was solved on another grid.
    pub fn predicted(&self, older: &[(&WarmStart, f64)]) -> Option<WarmStart> {
        let (n, nc) = (self.pressure_pa.len(), self.shape_pa.len());
        if !self.fits(n, nc) || older.iter().any(|(w, c)| !w.fits(n, nc) || !c.is_finite()) {
            return None;
        }
        let combine = |of: fn(&WarmStart) -> &[f64]| -> Vec<f64> {
            let mut x = of(self).to_vec();
            for (w, c) in older {
                for ((v, a), b) in x.iter_mut().zip(of(self)).zip(of(w)) {
                    *v += c * (a - b);
                }
            }
            x
        };
        let keep_speeds = |mut x: Vec<f64>, of: fn(&WarmStart) -> &[f64]| -> Vec<f64> {
            for (s, &a) in x.iter_mut().zip(of(self)) {
                if !(*s * a > 0.0 && (0.5..=2.0).contains(&(*s / a))) {
                    *s = a;
                }
            }
            x
        };
        let speeds = combine(|w| &w.speeds_m_per_s);
        let floor_speeds = combine(|w| &w.floor_speeds_m_per_s);
        let inlet = older.iter().fold(self.inlet_pa, |v, (w, c)| {
            v + c * (self.inlet_pa - w.inlet_pa)
        });
        Some(WarmStart {
            pressure_pa: combine(|w| &w.pressure_pa),
            speeds_m_per_s: keep_speeds(speeds, |w| &w.speeds_m_per_s),
            floor_speeds_m_per_s: keep_speeds(floor_speeds, |w| &w.floor_speeds_m_per_s),
            inlet_pa: inlet,
            shape_pa: combine(|w| &w.shape_pa),
            plenum_state: if older
                .iter()
                .all(|(w, _)| w.plenum_state.len() == self.plenum_state.len())
            {
                combine(|w| &w.plenum_state)
            } else {
                Vec::new()
            },
        })
    }

    /// True when this was solved on a grid of `cells` cells in `columns` columns.
    fn fits(&self, cells: usize, columns: usize) -> bool {
        self.pressure_pa.len() == cells
            && self.speeds_m_per_s.len() == cells
            && self.floor_speeds_m_per_s.len() == columns
            && self.shape_pa.len() == columns
            && self.inlet_pa.is_finite()
    }
}

impl SolverSettings {
    /// The default settings on `grid`, with the plenum model `container` gets there ([`Container::plenum_model_on`]:
    /// the one its file names, else the grid's default): how a command or a load solves a container's air.
    pub fn for_container(container: &Container, grid: Grid) -> Self {
        SolverSettings {
            grid,
            plenum: container.plenum_model_on(grid),
            ..SolverSettings::default()
        }
    }
}

impl Default for SolverSettings {
    /// Default grid, manifold plenum, tolerance 1e-8 on pressure, 1e-10 on the linear residual.
    fn default() -> Self {
        SolverSettings {
            grid: Grid::default(),
            plenum: PlenumModel::default(),
            max_outer_iters: 300,
            tolerance: 1e-8,
            linear_tolerance: 1e-10,
            max_linear_iters: 5000,
            method: OuterMethod::default(),
        }
    }
}

/// How the outer loop stopped.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Converged {
    /// Outer (Picard) iterations.
    pub iters: u32,
    /// CG iterations summed over all linear solves.
    pub linear_iters: u32,
    /// Final relative pressure change between outer steps.
    pub residual: f64,
}

/// Where fan and system meet (or the fixed flow).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OperatingPoint {
    /// Volumetric flow through the fan at the air it draws, m³/s (for a fixed flow: at the ambient air).
    pub fan_flow_m3_per_s: f64,
    /// Total volumetric flow delivered into the plenum at the plenum air, m³/s (bed plus leakage).
    pub plenum_flow_m3_per_s: f64,
    /// Dry-air mass flow through the fan, the burner and into the plenum, kg/s.
    pub dry_air_kg_per_s: f64,
    /// Fan static pressure at that flow (density-corrected at the fan's air), Pa; for a fixed flow, the pressure a
    /// fan would need.
    pub fan_static_pressure_pa: f64,
    /// Static pressure in the jet at the inlet plane, Pa.
    pub inlet_static_pressure_pa: f64,
    /// Mean velocity through the inlet opening at the plenum air, m/s.
    pub inlet_velocity_m_per_s: f64,
}

/// Whole-load figures.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AirflowSummary {
    /// Total flow into the plenum at the plenum air, m³/s.
    pub plenum_flow_m3_per_s: f64,
    /// Flow through the fan at the air it draws, m³/s.
    pub fan_flow_m3_per_s: f64,
    /// Flow through the bed (out of the top) at the plenum air, m³/s.
    pub bed_flow_m3_per_s: f64,
    /// Flow lost through leakage out of the plenum, at the plenum air, m³/s.
    pub leakage_m3_per_s: f64,
    /// Mean superficial velocity out of the top, m/s (= m³/(s·m²)).
    pub mean_column_velocity_m_per_s: f64,
    /// Lowest column velocity, m/s.
    pub min_column_velocity_m_per_s: f64,
    /// Highest column velocity, m/s.
    pub max_column_velocity_m_per_s: f64,
    /// Coefficient of variation of column flow (population standard deviation / mean).
    pub column_flow_cv: f64,
    /// Lowest column flow / mean column flow.
    pub min_over_mean: f64,
    /// Mean dry-air mass flux, kg/(s·m²).
    pub mean_mass_flux_kg_per_m2_s: f64,
    /// Volume of peanuts, m³.
    pub bed_volume_m3: f64,
    /// Bed flow per bed volume, m³/min per m³.
    pub specific_airflow_m3_per_min_per_m3: f64,
    /// Mean plenum static pressure, Pa.
    pub mean_plenum_pressure_pa: f64,
    /// Plenum static pressure range (max − min), Pa.
    pub plenum_pressure_range_pa: f64,
    /// Moist-air density of the air the fan draws, kg/m³ (its curve is corrected to it).
    pub fan_air_density_kg_per_m3: f64,
    /// Moist-air density of the plenum air (inlet transition, plenum, floor and bed), kg/m³.
    pub plenum_air_density_kg_per_m3: f64,
}

/// Everything one airflow solve gives. 2-D arrays are [nx, ny] with i = 0 at the **front** wall (x = 0) and
/// j = 0 at y = 0, whichever end the inlet is in; 3-D arrays add k = 0 at the floor.
#[derive(Debug, Clone, Serialize)]
pub struct AirflowSolution {
    /// Grid used.
    pub grid: Grid,
    /// Column size along the length, m.
    pub dx_m: f64,
    /// Column size across the width, m.
    pub dy_m: f64,
    /// Bed depth per column, m.
    pub depth_m: Array2<f64>,
    /// Dry-air mass flux out of the top of each column, kg/(s·m²): what the deep-bed model uses.
    pub mass_flux_kg_per_m2_s: Array2<f64>,
    /// Superficial velocity out of the top of each column, m/s.
    pub top_velocity_m_per_s: Array2<f64>,
    /// Pressure at the bottom of the bed (just above the floor), Pa gauge.
    pub bottom_pressure_pa: Array2<f64>,
    /// Plenum static pressure under each column, Pa gauge.
    pub plenum_pressure_pa: Array2<f64>,
    /// Cell-centre pressures, Pa gauge, [nx, ny, nz].
    pub pressure_pa: Array3<f64>,
    /// Fan operating point.
    pub operating_point: OperatingPoint,
    /// Whole-load summary.
    pub summary: AirflowSummary,
    /// Convergence record.
    pub converged: Converged,
    /// Relative pressure change of every outer step, first to last.
    #[serde(skip)]
    pub changes: Vec<f64>,
    /// ‖F‖ (dimensionless, `airflow::newton`) at the start of every Newton step.
    #[serde(skip)]
    pub newton_residuals: Vec<f64>,
    /// The state a later solve can start from.
    #[serde(skip)]
    pub warm: WarmStart,
    /// The plenum's own flow field, for a plenum model that has one (the 2-D plenum).
    #[serde(skip)]
    pub plenum_map: Option<PlenumMap>,
}

/// As [`solve`], starting from `warm` (a solution of the same container and grid for nearby air or bed) when
/// given and solved on the same grid; otherwise cold. A warm Newton solve that fails starts again cold.
pub fn solve_from(
    container: &Container,
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
    warm: Option<&WarmStart>,
) -> Result<AirflowSolution, AirflowError> {
    solve_keeping(container, flow, law, air, settings, &mut None, warm)
}

/// As [`solve_from`], with the plenum kept in `kept` between calls (built on the first): a plenum with a state of
/// its own (the 2-D plenum's flow field) then starts each re-solve of a drying run from where the last one ended.
pub fn solve_keeping(
    container: &Container,
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
    kept: &mut Option<Box<dyn Plenum + Send>>,
    warm: Option<&WarmStart>,
) -> Result<AirflowSolution, AirflowError> {
    check_law(law)?;
    let disc = container.discretize(settings.grid)?;
    let plenum = match kept {
        Some(p) => p,
        None => kept.insert(build(&settings.plenum, container, disc.grid)?),
    };
    solve_with_plenum_from(
        container,
        &disc,
        flow,
        law,
        air,
        settings,
        plenum.as_mut(),
        warm,
    )
}

/// Solve the airflow through a loaded container, each part at its own air along `air` (see `airflow::path`).
pub fn solve(
    container: &Container,
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
) -> Result<AirflowSolution, AirflowError> {
    check_law(law)?;
    let disc = container.discretize(settings.grid)?;
    solve_discrete(container, &disc, flow, law, air, settings)
}

/// Density and specific volume (per kg dry air) of one air state, checked to be physical.
fn air_props(air: &AirState, which: &'static str) -> Result<(f64, f64), AirflowError> {
    let rho = air.density_kg_per_m3();
    let v = air.specific_volume_m3_per_kg();
    if rho.is_finite() && rho > 0.3 && rho < 3.0 && v.is_finite() && v > 0.0 {
        Ok((rho, v))
    } else {
        Err(AirflowError::NonPhysical {
            quantity: which,
            value: rho,
        })
    }
}

fn check_law(law: &BedLaw) -> Result<(), InputError> {
    crate::error::check_range("packing_factor", law.packing_factor, 0.1, 10.0, "")?;
    crate::error::check_range("horizontal_ratio", law.horizontal_ratio, 0.01, 100.0, "")?;
    let ok = match law.law {
        super::bed::ResistanceLaw::Shedd(s) => {
            s.a.is_finite() && s.a > 0.0 && s.b.is_finite() && s.b > 0.0
        }
        super::bed::ResistanceLaw::Darcy {
            resistivity_pa_s_per_m2,
        } => resistivity_pa_s_per_m2.is_finite() && resistivity_pa_s_per_m2 > 0.0,
    };
    if ok {
        Ok(())
    } else {
        Err(InputError::argument(
            "resistance",
            format!("{:?}", law.law),
            "constants must be positive and finite",
        ))
    }
}

/// The inlet static pressure p_in (Pa) at which the bed and the leaks take plenum flow `q` (m³/s): the root of
/// `g1·p_in + gd + C·√max(p_in + dbar, 0) = q`, with `g1` > 0 the bed's conductance to a uniform plenum, `gd` its flow
/// from the plenum's shape alone, C the leakage coefficient and dbar the shape's mean. The left side increases
/// with p_in, so there is one root, found in closed form: where the plenum's mean pressure is not above 0 the
/// leaks take nothing and the equation is linear; above it, with x = √(p_in + dbar), it is the quadratic
/// `g1·x² + C·x + c0 = 0`, c0 = gd − g1·dbar − q < 0, whose positive root is taken in the form that loses no digits.
fn inlet_pressure_pa(q: f64, g1: f64, gd: f64, leak_c: f64, dbar: f64) -> f64 {
    let linear = (q - gd) / g1;
    if leak_c <= 0.0 || linear + dbar <= 0.0 {
        return linear;
    }
    let c0 = gd - g1 * dbar - q;
    let x = -2.0 * c0 / (leak_c + (leak_c * leak_c - 4.0 * g1 * c0).sqrt());
    x * x - dbar
}

fn linear(
    sys: &mut BedSystem,
    b: &[f64],
    x: &mut [f64],
    s: &SolverSettings,
    total: &mut u32,
) -> Result<LinearStats, AirflowError> {
    match sys.solve_linear(b, x, s.linear_tolerance, s.max_linear_iters) {
        Ok(st) => {
            *total += st.iters;
            Ok(st)
        }
        Err(st) => Err(AirflowError::LinearNotConverged {
            iters: st.iters,
            residual: st.relative_residual,
        }),
    }
}

/// Bed pressures and flows for a prescribed plenum pressure under each column (no fan, no plenum model):
/// the building block for limit and convergence checks. `floor = None` means no floor resistance.
pub struct PrescribedFlow {
    /// Cell pressures [nx, ny, nz], Pa.
    pub pressure_pa: Array3<f64>,
    /// Top superficial velocity per column, m/s.
    pub top_velocity_m_per_s: Array2<f64>,
    /// Bed-bottom face pressure per column, Pa.
    pub bottom_pressure_pa: Array2<f64>,
    /// Total flow in through the floor, m³/s.
    pub inflow_m3_per_s: f64,
    /// Convergence record.
    pub converged: Converged,
}

/// Solve the bed alone under prescribed plenum pressures `plenum_pa` [nx, ny] (in the discretisation's own
/// orientation, i = 0 at the inlet wall).
pub fn solve_prescribed(
    disc: &DiscreteContainer,
    law: &BedLaw,
    floor: Option<&Floor>,
    rho_kg_per_m3: f64,
    plenum_pa: &Array2<f64>,
    settings: &SolverSettings,
) -> Result<PrescribedFlow, AirflowError> {
    check_law(law)?;
    let Grid { nx, ny, nz } = disc.grid;
    let depth: Vec<f64> = disc.depth_m.iter().copied().collect();
    let perm: Vec<f64> = disc.permeability.iter().copied().collect();
    let pl: Vec<f64> = plenum_pa.iter().copied().collect();
    let mean_p = pl.iter().sum::<f64>() / pl.len() as f64;
    let mean_d = depth.iter().sum::<f64>() / depth.len() as f64;
    let guess = mean_p.abs() / mean_d / law.resistivity(0.1);
    let (phi, cd) = floor
        .map(|f| (f.open_area_fraction, f.discharge_coefficient))
        .unwrap_or((f64::INFINITY, 1.0));
    let mut sys = BedSystem::new(
        nx,
        ny,
        nz,
        disc.dx_m,
        disc.dy_m,
        depth,
        perm,
        *law,
        phi,
        cd,
        rho_kg_per_m3,
        guess,
    );
    sys.set_floor_open_share(&disc.floor_open_share.iter().copied().collect::<Vec<_>>());
    let n = sys.cells();
    let mut b = vec![0.0; n];
    let mut p = vec![0.0; n];
    let mut total = 0;
    let mut prev = vec![0.0; n];
    let mut last = f64::INFINITY;
    for it in 1..=settings.max_outer_iters {
        sys.rhs(&pl, &mut b);
        linear(&mut sys, &b, &mut p, settings, &mut total)?;
        let change = rel_change(&p, &prev);
        if change < settings.tolerance {
            let top = sys.top_flow_m3_per_s(&p);
            let bot = sys.bottom_flow_m3_per_s(&p, &pl);
            let bfp = sys.bottom_face_pressure_pa(&p, &pl);
            let area = disc.dx_m * disc.dy_m;
            return Ok(PrescribedFlow {
                pressure_pa: Array3::from_shape_vec((nx, ny, nz), p)
                    .expect("n = nx·ny·nz by construction"),
                top_velocity_m_per_s: Array2::from_shape_fn((nx, ny), |(i, j)| {
                    top[i * ny + j] / area
                }),
                bottom_pressure_pa: Array2::from_shape_fn((nx, ny), |(i, j)| bfp[i * ny + j]),
                inflow_m3_per_s: bot.iter().sum(),
                converged: Converged {
                    iters: it,
                    linear_iters: total,
                    residual: change,
                },
            });
        }
        last = change;
        prev.copy_from_slice(&p);
        sys.update_speeds(&p, &pl);
        sys.assemble();
    }
    Err(AirflowError::NotConverged {
        iters: settings.max_outer_iters,
        residual: last,
    })
}

fn rel_change(p: &[f64], prev: &[f64]) -> f64 {
    let mut dmax: f64 = 0.0;
    let mut pmax: f64 = 0.0;
    for (a, b) in p.iter().zip(prev) {
        dmax = dmax.max((a - b).abs());
        pmax = pmax.max(a.abs());
    }
    if pmax == 0.0 {
        0.0
    } else {
        dmax / pmax
    }
}

/// As [`solve`], for a container already on its grid, with a fresh plenum of the kind `settings.plenum` names.
pub fn solve_discrete(
    container: &Container,
    disc: &DiscreteContainer,
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
) -> Result<AirflowSolution, AirflowError> {
    let mut plenum = build(&settings.plenum, container, disc.grid)?;
    solve_with_plenum(container, disc, flow, law, air, settings, plenum.as_mut())
}

/// As [`solve_discrete`] with a caller-held plenum, which keeps its state between solves (a warm start during a
/// drying run); `settings.plenum` is not consulted.
pub fn solve_with_plenum(
    container: &Container,
    disc: &DiscreteContainer,
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
    plenum: &mut dyn Plenum,
) -> Result<AirflowSolution, AirflowError> {
    solve_with_plenum_from(container, disc, flow, law, air, settings, plenum, None)
}

/// As [`solve_with_plenum`], starting from `warm` when given (see [`solve_from`]).
#[allow(clippy::too_many_arguments)]
pub fn solve_with_plenum_from(
    container: &Container,
    disc: &DiscreteContainer,
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
    plenum: &mut dyn Plenum,
    warm: Option<&WarmStart>,
) -> Result<AirflowSolution, AirflowError> {
    let mut sol = solve_coupled(container, disc, flow, law, air, settings, plenum, warm)?;
    sol.plenum_map = plenum.flow_map(MapFrame {
        rho_kg_per_m3: sol.summary.plenum_air_density_kg_per_m3,
        inlet_pa: sol.operating_point.inlet_static_pressure_pa,
        flip: container.solver_mirrored(),
    });
    Ok(sol)
}

/// The coupled plenum–floor–bed–fan iteration of [`solve_with_plenum_from`].
#[allow(clippy::too_many_arguments)]
fn solve_coupled(
    container: &Container,
    disc: &DiscreteContainer,
    flow: &FlowSpec,
    law: &BedLaw,
    air: &AirPath,
    settings: &SolverSettings,
    plenum: &mut dyn Plenum,
    warm: Option<&WarmStart>,
) -> Result<AirflowSolution, AirflowError> {
    let Grid { nx, ny, nz } = disc.grid;
    plenum.set_outer_tolerance(settings.tolerance);
    // Plenum air: inlet transition, plenum, floor, leakage and bed. Fan air: the fan curve.
    let (rho, v_dry) = air_props(&air.plenum, "plenum air density (kg/m³)")?;
    let (rho_fan, v_fan) = air_props(air.source_air(flow), "fan air density (kg/m³)")?;
    // Fan volumetric flow per plenum volumetric flow at the same dry-air mass flow (exactly 1 for one air).
    let to_fan = v_fan / v_dry;
    if let FlowSpec::Fixed { total_m3_per_s } = flow {
        crate::error::check_range("--flow-m3-min", total_m3_per_s * 60.0, 1e-3, 1e5, "m³/min")?;
    }
    let a_in = container.inlet_area_m2();
    let inl = container.inlet;
    let floor_area = container.floor_area_m2();
    let q_guess = match flow {
        FlowSpec::Fixed { total_m3_per_s } => *total_m3_per_s,
        FlowSpec::Fan(f) => {
            let (a, b) = f.flow_range_m3_per_s();
            0.5 * (a + b)
        }
    };
    let depth: Vec<f64> = disc.depth_m.iter().copied().collect();
    let perm: Vec<f64> = disc.permeability.iter().copied().collect();
    let mut sys = BedSystem::new(
        nx,
        ny,
        nz,
        disc.dx_m,
        disc.dy_m,
        depth.clone(),
        perm,
        *law,
        container.floor.open_area_fraction,
        container.floor.discharge_coefficient,
        rho,
        q_guess / floor_area,
    );
    sys.set_floor_open_share(&disc.floor_open_share.iter().copied().collect::<Vec<_>>());
    let n = sys.cells();
    let nc = nx * ny;
    let manifold = !plenum.is_uniform();
    let leak_c = container.leakage_m3_per_s_per_sqrt_pa;
    let ones = vec![1.0; nc];
    let mut b = vec![0.0; n];
    let mut phi1 = vec![0.0; n];
    let mut phid = vec![0.0; n];
    let mut ps = vec![0.0; n];
    let mut p_in_prev = 0.0;
    let mut p = vec![0.0; n];
    let mut prev = vec![0.0; n];
    // uniform, unless a warm start gives the shape (and the 2-D plenum's own field, `start_warm`)
    let mut delta_col = vec![0.0; nc];
    let mut linear_total = 0;
    let mut last_change: f64 = 1.0;
    let closure = Closure {
        flow,
        leak_c,
        a_in_m2: a_in,
        k_transition: inl.transition_loss_coefficient,
        rho,
        rho_fan,
        to_fan,
    };
    let ctx = Ctx {
        container,
        disc,
        depth: &depth,
        v_dry,
    };
    // The 2-D plenum's shape comes from an iterative solve of its own, not smooth enough for Newton's
    // difference quotients (see `airflow::newton`): it keeps Picard.
    let two_d = matches!(settings.plenum, super::plenum::PlenumModel::TwoD(_));
    let newton = settings.method == OuterMethod::Newton && !two_d;
    if let Some(w) = warm.filter(|w| newton && w.fits(n, nc)) {
        let start = Iterate {
            p: w.pressure_pa.clone(),
            speeds: w.speeds_m_per_s.clone(),
            floor_speeds: w.floor_speeds_m_per_s.clone(),
            p_in: w.inlet_pa,
            delta: w.shape_pa.clone(),
        };
        let outer = NewtonOuter {
            manifold,
            iters_done: 0,
            linear_total: 0,
            changes: Vec::new(),
        };
        match newton_outer(&mut sys, plenum, &closure, start, outer, settings, &ctx) {
            Ok(sol) => return Ok(sol),
            Err(_) => {
                // Too far from the old solution: start cold, as without one.
                sys.speed_for_k.fill(q_guess / floor_area);
                sys.floor_speed.fill(q_guess / floor_area);
                sys.assemble();
            }
        }
    }
    if let Some(w) = warm.filter(|w| !newton && w.fits(n, nc)) {
        start_warm(&mut sys, plenum, w, &mut p, &mut delta_col);
        prev.copy_from_slice(&p);
        p_in_prev = w.inlet_pa;
    }
    // Not with the 2-D plenum. Mixing only the bed's speeds (the plenum keeps its own field) was measured on the
    // 6.4 m trailer (2026-12-03): on 32 × 12 plenum cells 19 → 14 outer steps and about 14 % less CPU in a
    // `design` run, but on 64 × 24 and 72 × 27 plenum cells the same outer steps at 15–24 % and 46 % more CPU
    // (the mixed steps need linear solves ten times tighter to keep the bed's inflow on the fan's within 1e-9).
    let mut accel =
        (settings.method == OuterMethod::Anderson && !two_d).then(|| Anderson::new(ANDERSON_DEPTH));
    let mut changes = Vec::new();
    for it in 1..=settings.max_outer_iters {
        // Inexact Picard: solve each frozen linear problem only as well as the outer iteration can use it
        // (a hundredth of the last outer change), down to the requested linear tolerance at convergence.
        // Mixed (Anderson) steps do not shrink monotonically: at a hundredth, the last step's bed flows left the
        // fan's by 4e-10; they take a thousandth (a CG iteration or two more per step).
        let share = if accel.is_some() { 1e-3 } else { 1e-2 };
        let lin = SolverSettings {
            linear_tolerance: (share * last_change).clamp(settings.linear_tolerance, 1e-3),
            ..*settings
        };
        let settings_lin = &lin;
        // φ₁ (response to a uniform 1 Pa plenum) is refreshed on the first steps and every fourth after; in
        // between the stale φ₁ only carries the small change of p_in within one step (see module docs).
        let refresh = !manifold || it <= 2 || it % 4 == 0;
        if refresh {
            sys.rhs(&ones, &mut b);
            linear(&mut sys, &b, &mut phi1, settings_lin, &mut linear_total)?;
        }
        // each column's inflow per pascal of a uniform plenum: the total for the closure, and per column how the
        // floor outflow answers the plenum pressure, which an iterative plenum solves with (`FloorResponse`)
        let g_col = sys.bottom_flow_m3_per_s(&phi1, &ones);
        let g1: f64 = g_col.iter().sum();
        let gd: f64 = if manifold {
            // Solve once for the whole plenum field at the previous inlet pressure, warm-started from the last
            // pressures, and split off the inlet-pressure part: φ_δ = p_s − p_in,prev·φ₁.
            let p_pl_prev: Vec<f64> = delta_col.iter().map(|d| p_in_prev + d).collect();
            sys.rhs(&p_pl_prev, &mut b);
            ps.copy_from_slice(&p);
            linear(&mut sys, &b, &mut ps, settings_lin, &mut linear_total)?;
            for ((d, s_), f) in phid.iter_mut().zip(&ps).zip(&phi1) {
                *d = s_ - p_in_prev * f;
            }
            sys.bottom_flow_m3_per_s(&phid, &delta_col).iter().sum()
        } else {
            0.0
        };
        let dbar = delta_col.iter().sum::<f64>() / nc as f64;
        let p_in_for = |q: f64| inlet_pressure_pa(q, g1, gd, leak_c, dbar);
        let (q_total, p_in, p_fan) = match flow {
            FlowSpec::Fixed { total_m3_per_s } => {
                let pin = p_in_for(*total_m3_per_s);
                let u = total_m3_per_s / a_in;
                (
                    *total_m3_per_s,
                    pin,
                    pin + inl.transition_loss_coefficient * 0.5 * rho * u * u,
                )
            }
            FlowSpec::Fan(fan) => {
                // q is the plenum flow; the fan sees q·v_fan/v_pl at its own density.
                let g = |q: f64| {
                    let u = q / a_in;
                    fan.pressure_pa(q * to_fan, rho_fan)
                        - inl.transition_loss_coefficient * 0.5 * rho * u * u
                        - p_in_for(q)
                };
                let (fan_lo, fan_hi) = fan.flow_range_m3_per_s();
                let (mut lo, mut hi) = (fan_lo / to_fan, fan_hi / to_fan);
                if g(hi) > 0.0 {
                    return Err(AirflowError::OffCurve {
                        fan: fan.name.clone(),
                        message: format!(
                            "the system needs less pressure than the fan gives at its last rating point ({:.1} m³/min): extend the curve to free delivery",
                            fan_hi * 60.0
                        ),
                    });
                }
                if g(lo) < 0.0 {
                    return Err(AirflowError::OffCurve {
                        fan: fan.name.clone(),
                        message: format!(
                            "the system needs more pressure than the fan gives at its first rating point ({:.1} m³/min, {:.0} Pa): the fan cannot push air through this load",
                            fan_lo * 60.0,
                            fan.pressure_pa(fan_lo, rho_fan)
                        ),
                    });
                }
                for _ in 0..200 {
                    let mid = 0.5 * (lo + hi);
                    if g(mid) > 0.0 {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                    if hi - lo <= 1e-14 * hi {
                        break;
                    }
                }
                let q = 0.5 * (lo + hi);
                (q, p_in_for(q), fan.pressure_pa(q * to_fan, rho_fan))
            }
        };
        p_in_prev = p_in;
        let p_pl: Vec<f64> = delta_col.iter().map(|d| p_in + d).collect();
        // p = p_in·φ₁ + φ_δ
        for ((v, a), d) in p.iter_mut().zip(&phi1).zip(&phid) {
            *v = p_in * a + d;
        }
        let change = rel_change(&p, &prev);
        last_change = change;
        let bottom = sys.bottom_flow_m3_per_s(&p, &p_pl);
        let leak = leakage_m3_per_s(leak_c, p_in + dbar);
        changes.push(change);
        if newton && it > 1 && change < NEWTON_HANDOVER && change >= settings.tolerance {
            let (speeds, floor_speeds) = sys.cell_speeds(sys.faces(), &p, &p_pl);
            let start = Iterate {
                p,
                speeds,
                floor_speeds,
                p_in,
                delta: delta_col,
            };
            let outer = NewtonOuter {
                manifold,
                iters_done: it,
                linear_total,
                changes,
            };
            return newton_outer(&mut sys, plenum, &closure, start, outer, settings, &ctx);
        }
        // An inexact plenum (the 2-D flow, a few iterations per call) must also have met its own tolerance.
        if it > 1 && change < settings.tolerance && plenum.converged() {
            let top = sys.top_flow_m3_per_s(&p);
            let bfp = sys.bottom_face_pressure_pa(&p, &p_pl);
            let warm = WarmStart {
                pressure_pa: p.clone(),
                speeds_m_per_s: sys.speed_for_k.clone(),
                floor_speeds_m_per_s: sys.floor_speed.clone(),
                inlet_pa: p_in,
                shape_pa: delta_col.clone(),
                plenum_state: plenum.kept_state(),
            };
            return finish(
                container,
                disc,
                &depth,
                FinishInputs {
                    top: &top,
                    bfp: &bfp,
                    p_pl: &p_pl,
                    pocket: &plenum.pocket_columns(),
                    p: &p,
                    q_total,
                    leak,
                    p_in,
                    p_fan,
                    rho,
                    v_dry,
                    rho_fan,
                    to_fan,
                    a_in,
                },
                Converged {
                    iters: it,
                    linear_iters: linear_total,
                    residual: change,
                },
                (changes, Vec::new(), warm),
            );
        }
        prev.copy_from_slice(&p);
        let state = accel.as_ref().map(|_| outer_state(&sys, &delta_col));
        if manifold {
            let response = FloorResponse {
                conductance_m3_per_s_per_pa: &g_col,
                shape_pa: &delta_col,
            };
            delta_col = plenum.shape_pa(&bottom, leak, rho, Some(response))?;
        }
        sys.update_speeds(&p, &p_pl);
        if let (Some(acc), Some(y)) = (accel.as_mut(), state) {
            accelerate(acc, &y, &mut sys, &mut delta_col, &p);
        }
        sys.assemble();
    }
    // The last step's change, not rel_change(&p, &prev): `prev` was set to `p` at the end of that step.
    Err(AirflowError::NotConverged {
        iters: settings.max_outer_iters,
        residual: last_outer_change(&changes),
    })
}

/// The last outer step's relative pressure change, for `NotConverged` (infinite if no step was taken).
fn last_outer_change(changes: &[f64]) -> f64 {
    changes.last().copied().unwrap_or(f64::INFINITY)
}

/// Start the Picard iteration from a previous (or predicted) solution: its speeds (assembled), pressures, plenum
/// shape and the plenum's own state, if it keeps one.
fn start_warm(
    sys: &mut BedSystem,
    plenum: &mut dyn Plenum,
    w: &WarmStart,
    p: &mut [f64],
    delta: &mut [f64],
) {
    if !w.plenum_state.is_empty() {
        plenum.set_kept_state(&w.plenum_state);
    }
    sys.speed_for_k.copy_from_slice(&w.speeds_m_per_s);
    sys.floor_speed.copy_from_slice(&w.floor_speeds_m_per_s);
    sys.assemble();
    p.copy_from_slice(&w.pressure_pa);
    delta.copy_from_slice(&w.shape_pa);
}

/// What one Picard step hands the next: the cell speeds and floor speeds (m/s), the plenum shape (Pa).
fn outer_state(sys: &BedSystem, delta: &[f64]) -> Vec<f64> {
    let mut y = Vec::with_capacity(sys.speed_for_k.len() + 2 * delta.len());
    y.extend(sys.speed_for_k.iter().map(|s| s.abs()));
    y.extend(sys.floor_speed.iter().map(|s| s.abs()));
    y.extend_from_slice(delta);
    y
}

/// Replace the Picard step's new speeds and plenum shape by their Anderson mix with the last steps (`y`: the
/// state the step started from; weights as in `airflow::anderson`, pressures scaled by the largest of `p`).
fn accelerate(acc: &mut Anderson, y: &[f64], sys: &mut BedSystem, delta: &mut [f64], p: &[f64]) {
    let (n, nc) = (sys.speed_for_k.len(), sys.floor_speed.len());
    let g = outer_state(sys, delta);
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len().max(1) as f64;
    let (ms, mf) = (mean(&g[..n]), mean(&g[n..n + nc]));
    let pmax = p.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let inv = |m: f64| if m > 0.0 { 1.0 / m } else { 1.0 };
    let mut w = Vec::with_capacity(g.len());
    w.extend(std::iter::repeat_n(inv(ms), n));
    w.extend(std::iter::repeat_n(inv(mf), nc));
    w.extend(std::iter::repeat_n(inv(pmax), nc));
    let next = acc.next(y, &g, &w);
    if next.iter().all(|v| v.is_finite()) {
        // A mixed speed stays within a factor 10 of the plain step's: far from the fixed point the linear mix
        // could otherwise leave a speed at or below zero.
        let keep = |s: &mut f64, v: f64| *s = v.clamp(0.1 * s.abs(), 10.0 * s.abs());
        for (s, v) in sys.speed_for_k.iter_mut().zip(&next[..n]) {
            keep(s, *v);
        }
        for (s, v) in sys.floor_speed.iter_mut().zip(&next[n..n + nc]) {
            keep(s, *v);
        }
        delta.copy_from_slice(&next[n + nc..]);
    }
}

struct FinishInputs<'a> {
    top: &'a [f64],
    bfp: &'a [f64],
    p_pl: &'a [f64],
    /// Columns wholly over a closed pocket of the plenum, whose air the inlet's does not reach (empty: none).
    pocket: &'a [bool],
    p: &'a [f64],
    q_total: f64,
    leak: f64,
    p_in: f64,
    p_fan: f64,
    rho: f64,
    v_dry: f64,
    rho_fan: f64,
    to_fan: f64,
    a_in: f64,
}

fn finish(
    container: &Container,
    disc: &DiscreteContainer,
    depth: &[f64],
    f: FinishInputs<'_>,
    converged: Converged,
    record: (Vec<f64>, Vec<f64>, WarmStart),
) -> Result<AirflowSolution, AirflowError> {
    let Grid { nx, ny, nz } = disc.grid;
    let area = disc.dx_m * disc.dy_m;
    let flip = container.solver_mirrored();
    // solver index i counts from the inlet wall; outputs count from the front wall
    let src = |i: usize| if flip { nx - 1 - i } else { i };
    let col = |v: &[f64]| Array2::from_shape_fn((nx, ny), |(i, j)| v[src(i) * ny + j]);
    let vel: Vec<f64> = f.top.iter().map(|q| q / area).collect();
    for (&v, &pp) in vel.iter().zip(f.p_pl) {
        if !v.is_finite() {
            return Err(AirflowError::NonPhysical {
                quantity: "column velocity (m/s)",
                value: v,
            });
        }
        if !pp.is_finite() {
            return Err(AirflowError::NonPhysical {
                quantity: "plenum pressure (Pa)",
                value: pp,
            });
        }
    }
    let top_velocity = col(&vel);
    let mass_flux = top_velocity.mapv(|v| v / f.v_dry);
    let n = vel.len() as f64;
    let mean = vel.iter().sum::<f64>() / n;
    let var = vel.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n;
    let min = vel.iter().copied().fold(f64::INFINITY, f64::min);
    let max = vel.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let bed_flow: f64 = f.top.iter().sum();
    let volume: f64 = depth.iter().sum::<f64>() * area;
    // the plenum pressure under a column wholly over a closed pocket is not defined (its air is held at rest, cut
    // off from the inlet's): left out of the map (NaN) and of its mean and range
    let open = |c: usize| !f.pocket.get(c).copied().unwrap_or(false);
    let p_pl: Vec<f64> = (f.p_pl.iter().enumerate())
        .map(|(c, &p)| if open(c) { p } else { f64::NAN })
        .collect();
    let fed = p_pl.iter().copied().filter(|p| !p.is_nan());
    let pmean = fed.clone().sum::<f64>() / fed.clone().count() as f64;
    let pmin = fed.clone().fold(f64::INFINITY, f64::min);
    let pmax = fed.fold(f64::NEG_INFINITY, f64::max);
    let pressure = Array3::from_shape_fn((nx, ny, nz), |(i, j, k)| f.p[(src(i) * ny + j) * nz + k]);
    Ok(AirflowSolution {
        grid: disc.grid,
        dx_m: disc.dx_m,
        dy_m: disc.dy_m,
        depth_m: col(depth),
        mass_flux_kg_per_m2_s: mass_flux,
        top_velocity_m_per_s: top_velocity,
        bottom_pressure_pa: col(f.bfp),
        plenum_pressure_pa: col(&p_pl),
        pressure_pa: pressure,
        operating_point: OperatingPoint {
            fan_flow_m3_per_s: f.q_total * f.to_fan,
            plenum_flow_m3_per_s: f.q_total,
            dry_air_kg_per_s: f.q_total / f.v_dry,
            fan_static_pressure_pa: f.p_fan,
            inlet_static_pressure_pa: f.p_in,
            inlet_velocity_m_per_s: f.q_total / f.a_in,
        },
        summary: AirflowSummary {
            plenum_flow_m3_per_s: f.q_total,
            fan_flow_m3_per_s: f.q_total * f.to_fan,
            bed_flow_m3_per_s: bed_flow,
            leakage_m3_per_s: f.leak,
            mean_column_velocity_m_per_s: mean,
            min_column_velocity_m_per_s: min,
            max_column_velocity_m_per_s: max,
            column_flow_cv: var.sqrt() / mean,
            min_over_mean: min / mean,
            mean_mass_flux_kg_per_m2_s: mean / f.v_dry,
            bed_volume_m3: volume,
            specific_airflow_m3_per_min_per_m3: bed_flow * 60.0 / volume,
            mean_plenum_pressure_pa: pmean,
            plenum_pressure_range_pa: pmax - pmin,
            fan_air_density_kg_per_m3: f.rho_fan,
            plenum_air_density_kg_per_m3: f.rho,
        },
        converged,
        changes: record.0,
        newton_residuals: record.1,
        warm: record.2,
        plenum_map: None,
    })
}

/// The container-side inputs of `finish` that the Newton phase carries.
struct Ctx<'a> {
    container: &'a Container,
    disc: &'a DiscreteContainer,
    depth: &'a [f64],
    v_dry: f64,
}

/// Where the Newton phase starts in the outer count.
struct NewtonOuter {
    manifold: bool,
    iters_done: u32,
    linear_total: u32,
    changes: Vec<f64>,
}

/// Newton outer steps from `start` until the pressure change, or an estimate of the remaining error from the
/// ratio θ of the last two changes, falls below the tolerance.
#[allow(clippy::too_many_arguments)]
fn newton_outer(
    sys: &mut BedSystem,
    plenum: &mut dyn Plenum,
    closure: &Closure<'_>,
    start: Iterate,
    mut outer: NewtonOuter,
    settings: &SolverSettings,
    ctx: &Ctx<'_>,
) -> Result<AirflowSolution, AirflowError> {
    let mut it = start;
    let mut prev_change = f64::INFINITY;
    let mut residuals = Vec::new();
    for k in outer.iters_done + 1..=settings.max_outer_iters {
        let step = newton::step(
            &mut newton::System::new(sys, closure, &mut *plenum, outer.manifold),
            &it,
        );
        outer.linear_total += step.krylov_iters;
        residuals.push(step.residual);
        outer.changes.push(step.change);
        it = step.iterate;
        if !it.p_in.is_finite() || !step.change.is_finite() {
            return Err(AirflowError::NonPhysical {
                quantity: "inlet static pressure (Pa)",
                value: it.p_in,
            });
        }
        // Remaining error estimated from the ratio θ of the last two changes as for a linear contraction,
        // change·θ/(1 − θ) (conservative for Newton; an estimate assuming order 2 stopped too early: the pressure
        // change is not monotone while the speeds still move).
        let theta = step.change / prev_change;
        let done = step.change < settings.tolerance
            || (prev_change.is_finite()
                && theta < 0.5
                && step.change * theta / (1.0 - theta) < settings.tolerance);
        prev_change = step.change;
        if done {
            let converged = Converged {
                iters: k,
                linear_iters: outer.linear_total,
                residual: step.change,
            };
            return newton_finish(sys, closure, it, converged, (outer.changes, residuals), ctx);
        }
    }
    // The Picard steps' changes included: a hand-over on the last allowed step takes no Newton step.
    Err(AirflowError::NotConverged {
        iters: settings.max_outer_iters,
        residual: last_outer_change(&outer.changes),
    })
}

/// The solution from a converged Newton iterate.
fn newton_finish(
    sys: &mut BedSystem,
    closure: &Closure<'_>,
    it: Iterate,
    converged: Converged,
    record: (Vec<f64>, Vec<f64>),
    ctx: &Ctx<'_>,
) -> Result<AirflowSolution, AirflowError> {
    sys.speed_for_k.copy_from_slice(&it.speeds);
    sys.floor_speed.copy_from_slice(&it.floor_speeds);
    sys.assemble();
    let q_total = closure.plenum_flow_m3_per_s(it.p_in);
    let p_fan = match closure.flow {
        FlowSpec::Fixed { .. } => {
            let u = q_total / closure.a_in_m2;
            it.p_in + closure.k_transition * 0.5 * closure.rho * u * u
        }
        FlowSpec::Fan(fan) => {
            let (lo, hi) = fan.flow_range_m3_per_s();
            let q_fan = q_total * closure.to_fan;
            if q_fan <= lo * (1.0 + 1e-12) || q_fan >= hi * (1.0 - 1e-12) {
                return Err(AirflowError::OffCurve {
                    fan: fan.name.clone(),
                    message: format!(
                        "the operating point ({:.1} m³/min) is at the end of the rated range",
                        q_fan * 60.0
                    ),
                });
            }
            fan.pressure_pa(q_fan, closure.rho_fan)
        }
    };
    let delta = &it.delta;
    let p_pl: Vec<f64> = delta.iter().map(|d| it.p_in + d).collect();
    let dbar = delta.iter().sum::<f64>() / delta.len() as f64;
    let leak = leakage_m3_per_s(closure.leak_c, it.p_in + dbar);
    let top = sys.top_flow_m3_per_s(&it.p);
    let bfp = sys.bottom_face_pressure_pa(&it.p, &p_pl);
    let warm = WarmStart {
        pressure_pa: it.p.clone(),
        speeds_m_per_s: it.speeds.clone(),
        floor_speeds_m_per_s: it.floor_speeds.clone(),
        inlet_pa: it.p_in,
        shape_pa: delta.clone(),
        // Newton's loop is not for the 2-D plenum, the one model with a state of its own
        plenum_state: Vec::new(),
    };
    finish(
        ctx.container,
        ctx.disc,
        ctx.depth,
        FinishInputs {
            top: &top,
            bfp: &bfp,
            p_pl: &p_pl,
            // the Newton outer loop is not for the 2-D plenum, the one model with closed pockets
            pocket: &[],
            p: &it.p,
            q_total,
            leak,
            p_in: it.p_in,
            p_fan,
            rho: closure.rho,
            v_dry: ctx.v_dry,
            rho_fan: closure.rho_fan,
            to_fan: closure.to_fan,
            a_in: closure.a_in_m2,
        },
        converged,
        (record.0, record.1, warm),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::airflow::fan::FanCurve;
    use std::path::Path;

    /// A warm start on a grid of 3 cells in 1 column whose every number is `x` times a fixed value, with plenum
    /// state `plenum`.
    fn warm(x: f64, plenum: Vec<f64>) -> WarmStart {
        WarmStart {
            pressure_pa: vec![100.0 * x; 3],
            speeds_m_per_s: vec![0.1 * x, 0.1 * x, -0.1 * x],
            floor_speeds_m_per_s: vec![0.1 * x],
            inlet_pa: 120.0 * x,
            shape_pa: vec![2.0 * x],
            plenum_state: plenum,
        }
    }

    #[test]
    fn a_predicted_start_combines_the_solutions_and_keeps_speeds_near_the_last() {
        let (last, a, b) = (
            warm(1.0, vec![1.0, 2.0]),
            warm(0.9, vec![0.8, 2.0]),
            warm(0.8, vec![]),
        );
        // last + 0.5·(last − a): every number 1.05 times its value in the last solution
        let p = last.predicted(&[(&a, 0.5)]).unwrap();
        let target = warm(1.05, vec![1.1, 2.0]);
        // a few roundings apart
        let close = |a: &[f64], b: &[f64]| {
            a.len() == b.len() && (a.iter().zip(b)).all(|(x, y)| (x - y).abs() <= 1e-14 * y.abs())
        };
        assert!(close(&p.pressure_pa, &target.pressure_pa));
        assert!(close(&p.speeds_m_per_s, &target.speeds_m_per_s));
        assert!(close(&p.floor_speeds_m_per_s, &target.floor_speeds_m_per_s));
        assert!(close(&[p.inlet_pa], &[target.inlet_pa]));
        assert!(close(&p.shape_pa, &target.shape_pa));
        assert!(close(&p.plenum_state, &target.plenum_state));
        // A speed that would change sign or more than double keeps the last value; pressures do not.
        let p = last.predicted(&[(&a, -11.0)]).unwrap();
        assert_eq!(p.speeds_m_per_s, last.speeds_m_per_s);
        assert!((p.pressure_pa[0] - (100.0 - 11.0 * 10.0)).abs() < 1e-9);
        let p = last.predicted(&[(&a, 11.0)]).unwrap();
        assert_eq!(p.speeds_m_per_s, last.speeds_m_per_s);
        // A plenum state of another size (here none) is not combined: the start then has none.
        assert!(last
            .predicted(&[(&b, 0.5)])
            .unwrap()
            .plenum_state
            .is_empty());
        // Another grid: no prediction.
        let other = WarmStart {
            pressure_pa: vec![1.0; 4],
            ..warm(1.0, vec![])
        };
        assert!(last.predicted(&[(&other, 0.5)]).is_none());
        assert!(last.predicted(&[(&a, f64::NAN)]).is_none());
    }

    /// The bundled 6.4 m trailer and its fan on a small grid, as the outer-iteration tests load them.
    fn trailer() -> (Container, FlowSpec) {
        let c = include_str!("../../models/containers/trailer-6m.json");
        let f = include_str!("../../models/fans/vane-3kw.json");
        (
            Container::from_json_str(c, Path::new("trailer-6m.json")).unwrap(),
            FlowSpec::Fan(FanCurve::from_json_str(f, Path::new("vane-3kw.json")).unwrap()),
        )
    }

    #[test]
    fn not_converged_reports_the_last_outer_change() {
        let (container, flow) = trailer();
        // the bundled in-shell peanut's bed law (Shedd constants and packing 1.5 in its crop file)
        let law = crate::load::bed_law(&crate::crop::Crop::load_named("peanut-inshell").unwrap());
        let air = AirPath::same(AirState::from_rh(30.0, 0.5, 101_325.0));
        // 1 to 6 outer steps cover every way out: Picard's and Anderson's loop, and Newton's before its hand-over
        // from Picard, on the step of the hand-over (no Newton step; the third on this grid) and after Newton
        // steps. None is enough for the 1e-8 tolerance (8 to 19 steps here).
        for method in [
            OuterMethod::Picard,
            OuterMethod::Anderson,
            OuterMethod::Newton,
        ] {
            let settings = SolverSettings {
                grid: Grid {
                    nx: 12,
                    ny: 5,
                    nz: 6,
                },
                method,
                ..SolverSettings::default()
            };
            let whole = solve(&container, &flow, &law, &air, &settings).unwrap();
            for max_outer_iters in 1..=6 {
                let cut = SolverSettings {
                    max_outer_iters,
                    ..settings
                };
                match solve(&container, &flow, &law, &air, &cut) {
                    Err(AirflowError::NotConverged { iters, residual }) => {
                        assert_eq!(iters, max_outer_iters);
                        assert!(
                            residual.is_finite() && residual > settings.tolerance,
                            "{method:?}, {max_outer_iters} steps: residual {residual:e}"
                        );
                        // The same steps as the whole solve's first ones, so its change at the last step taken.
                        let last = whole.changes[max_outer_iters as usize - 1];
                        assert_eq!(
                            residual.to_bits(),
                            last.to_bits(),
                            "{method:?}, {max_outer_iters} steps: {residual:e} against {last:e}"
                        );
                    }
                    other => panic!("{method:?}, {max_outer_iters} steps: {other:?}"),
                }
            }
        }
    }

    /// The closed form meets its equation to round-off on both branches (leaks taking air or not), over bed
    /// conductances, shapes and leakage coefficients that span the bundled containers' and beyond.
    #[test]
    fn inlet_pressure_solves_the_plenum_volume_balance() {
        let mut worst: f64 = 0.0;
        let mut branches = (0, 0);
        for &g1 in &[1e-4, 3e-3, 0.05] {
            for &gd in &[-0.3, 0.0, 0.2] {
                for &leak_c in &[0.0, 1e-3, 0.005, 0.05] {
                    for &dbar in &[-40.0, 0.0, 15.0] {
                        for &q in &[0.5, 3.0, 8.0] {
                            let p = inlet_pressure_pa(q, g1, gd, leak_c, dbar);
                            let lhs = g1 * p + gd + leakage_m3_per_s(leak_c, p + dbar);
                            // scale: the largest term of the balance
                            let scale = q.max((g1 * p).abs()).max(gd.abs());
                            worst = worst.max((lhs - q).abs() / scale);
                            if leak_c > 0.0 && p + dbar > 0.0 {
                                branches.1 += 1;
                            } else {
                                branches.0 += 1;
                            }
                        }
                    }
                }
            }
        }
        assert!(branches.0 > 0 && branches.1 > 0, "{branches:?}");
        // a few units in the last place of the largest term
        assert!(worst < 1e-14, "worst relative residual {worst:e}");
    }
}
