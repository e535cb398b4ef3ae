//! Zero-angle-of-attack gravity turn: thrust along the Earth-relative velocity. On the first arc
//! the simulator flies the liftoff manoeuvre (vertical rise, pitch-over to the kick angle, hold
//! until the velocity turns onto the thrust axis) before handing over to this law, because the
//! direction is undefined while the vehicle is (nearly) at rest relative to the air.

use nalgebra::Vector3;

use super::{unit_or, ActiveLaw, ArcStart, SteeringLaw};
use crate::core::physics::environment::Local;

/// The gravity-turn law (no parameters).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct GravityTurn;

impl SteeringLaw for GravityTurn {
    fn file_key(&self) -> &'static str {
        "gravity_turn"
    }

    fn start(&self, _s: &ArcStart) -> Box<dyn ActiveLaw> {
        Box::new(ZeroAlpha)
    }

    fn starts_with_liftoff(&self) -> bool {
        true
    }
}

/// Thrust along the Earth-relative velocity (local vertical when at rest relative to the air).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ZeroAlpha;

impl ActiveLaw for ZeroAlpha {
    fn direction(&self, _t_s: f64, loc: &Local) -> Vector3<f64> {
        unit_or(&loc.v_rel_mps, &loc.up)
    }
}
