//! Airflow through a drying trailer: plenum, floor, bed and fan solved together, giving the airflow through every
//! column of a load. `geometry` describes the container, `bed` the 3-D porous-flow discretisation and its linear
//! solver, `plenum` the dividing-flow manifold under the floor, `plenum_layout` the plenum's shape on a grid,
//! `plenum2d` the depth-averaged 2-D plenum flow and `plenum_map` its field as outputs show it, `plenum_shape` the
//! plenum models behind one trait, `fan` the fan curve and leakage, `path` the ambient
//! and plenum air each part is solved at, `solve` the coupled iteration and its `AirflowSolution`, and `fit` the
//! permeability map fitted to a top-surface airflow survey.
//!
//! References: Shedd (1953) / ASAE D272 for the bed law; DOMAIN.md §1.4 (floor), §1.6 (solver), §8.1 (fans).

mod anderson;
pub mod bed;
pub mod fan;
pub mod fit;
pub mod geometry;
mod mg;
mod newton;
pub mod path;
pub mod plenum;
pub mod plenum2d;
pub mod plenum_layout;
pub mod plenum_map;
pub mod plenum_shape;
pub mod solve;

pub use bed::{BedLaw, ResistanceLaw};
pub use fan::{FanCurve, FanPoint, FanPosition, FlowSpec};
pub use geometry::{Container, Fill, Grid, PlenumChoice};
pub use path::AirPath;
pub use plenum::{ManifoldParams, PlenumModel};
pub use solve::{
    solve, solve_from, solve_prescribed, AirflowError, AirflowSolution, AirflowSummary, Converged,
    OperatingPoint, OuterMethod, SolverSettings, WarmStart,
};
