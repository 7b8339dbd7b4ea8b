//! The air along a dryer's air path: the ambient air drawn in, and the plenum air after the burner. Each part of
//! the airflow is solved at its own air:
//!
//! - the fan at the air it draws — ambient air for a fan ahead of the burner, the plenum air for a fan after it
//!   ([`FanPosition`]); its curve is density-corrected there (P ∝ ρ at the same volumetric flow, DOMAIN.md §8.1);
//! - the dry-air mass flow is the same at the fan and in the plenum: the volumetric flows are in the ratio of the
//!   two airs' specific volumes per kg of dry air (ASHRAE 2017 ch. 1). Combustion water counts in the plenum
//!   volume when the plenum state carries it (its humidity ratio), and nowhere else;
//! - the inlet transition, the plenum, the floor, the leakage and the bed see the plenum air: its density in the
//!   orifice and velocity-head terms, its specific volume to turn superficial velocities into dry-air mass flux.
//!   Shedd's law depends on the superficial velocity alone, so the plenum air enters it only through that velocity;
//!   viscosity does not enter either bed law the solver offers (Shedd, Darcy with a fixed resistivity).
//!
//! A fixed flow ([`FlowSpec::Fixed`]) is a volumetric flow into the plenum, at the plenum air; the fan flow it
//! reports is at the ambient air, as for a fan ahead of the burner.
use serde::Serialize;

use super::fan::{FanPosition, FlowSpec};
use crate::props::psychro::AirState;

/// Ambient air and plenum air, the two air states of a dryer's air path.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct AirPath {
    /// Air drawn in from outside, before any burner.
    pub ambient: AirState,
    /// Air in the plenum, after any burner: what the floor and the bed see.
    pub plenum: AirState,
}

impl AirPath {
    /// Unheated air: the plenum holds the ambient air.
    pub fn same(air: AirState) -> Self {
        AirPath {
            ambient: air,
            plenum: air,
        }
    }

    /// The air a fan at `position` draws.
    pub fn fan_air(&self, position: FanPosition) -> &AirState {
        match position {
            FanPosition::AheadOfBurner => &self.ambient,
            FanPosition::AfterBurner => &self.plenum,
        }
    }

    /// The air the source of `flow` works on: a fan's by its position, a fixed flow's as a fan ahead of the burner.
    pub fn source_air(&self, flow: &FlowSpec) -> &AirState {
        match flow {
            FlowSpec::Fan(f) => self.fan_air(f.position),
            FlowSpec::Fixed { .. } => &self.ambient,
        }
    }
}
