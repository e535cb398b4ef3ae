//! The ΔV budget in two bookkeepings, from the integrated loss states (defined with sources in
//! docs/method.md).
//!
//! Projecting `v̇` on a reference direction ê and writing `T = ΣκT_vac − p_a A_e` gives the exact
//! identities
//! - inertial (ê = v̂): `|v(tf)| = |v(t0)| + ideal − gravity − drag − steering − back-pressure`;
//! - Earth-relative (ê = v̂_rel, derivative taken in the rotating frame, where the Coriolis term is
//!   perpendicular to v_rel and drops out):
//!   `|v_rel(tf)| = |v_rel(t0)| + ideal − gravity − drag − steering − back-pressure + rotating-frame`.
//!
//! Both are reported in one form, `final = initial + ideal − losses + rotating_frame +
//! earth_rotation`, with `earth_rotation` = inertial minus Earth-relative speed at cutoff
//! (Earth-relative form) or at the start (inertial form: ω(N+h)cos φ from the pad).

use nalgebra::Vector3;
use serde::Serialize;

use crate::core::physics::environment::Environment;
use crate::core::sim::dynamics::{ix, State};

/// Which velocity the losses are projected on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Bookkeeping {
    /// Along the Earth-relative velocity (default).
    EarthRelative,
    /// Along the inertial velocity.
    Inertial,
}

/// A ΔV budget, m/s.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Budget {
    /// Which projection.
    pub bookkeeping: Bookkeeping,
    /// Ideal ΔV ∫ΣκT_vac/m dt.
    pub ideal_mps: f64,
    /// Gravity loss −∫g·ê dt.
    pub gravity_loss_mps: f64,
    /// Drag loss −∫F_aero·ê/m dt.
    pub drag_loss_mps: f64,
    /// Steering loss ∫(T/m)(1 − û·ê) dt.
    pub steering_loss_mps: f64,
    /// Back-pressure loss ∫p_a A_e/m dt.
    pub back_pressure_loss_mps: f64,
    /// Inertial minus Earth-relative speed: at cutoff (Earth-relative form) or at the start
    /// (inertial form).
    pub earth_rotation_mps: f64,
    /// Rotating-frame (centrifugal) gain ∫(−ω×(ω×r))·v̂_rel dt; 0 in the inertial form.
    pub rotating_frame_mps: f64,
    /// Earth-relative speed at the start (0 from the pad).
    pub initial_speed_mps: f64,
    /// Inertial speed at the end.
    pub final_speed_mps: f64,
    /// (initial + ideal − losses + rotating_frame + earth_rotation) − final.
    pub closure_error_mps: f64,
}

impl Budget {
    /// Sum of the four losses, m/s.
    pub fn total_loss_mps(&self) -> f64 {
        self.gravity_loss_mps
            + self.drag_loss_mps
            + self.steering_loss_mps
            + self.back_pressure_loss_mps
    }
}

fn speeds(env: &Environment, y: &State) -> (f64, f64) {
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    (v.norm(), (v - env.omega_rad_s().cross(&r)).norm())
}

/// Budget between two states of one flight in the given bookkeeping.
pub fn budget(env: &Environment, y0: &State, y1: &State, kind: Bookkeeping) -> Budget {
    let d = |i: usize| y1[i] - y0[i];
    let (v0, vr0) = speeds(env, y0);
    let (v1, vr1) = speeds(env, y1);
    let (grav, drag, steer, rot, earth) = match kind {
        Bookkeeping::EarthRelative => (
            d(ix::GRAV_R),
            d(ix::DRAG_R),
            d(ix::STEER_R),
            d(ix::CENTRIF),
            v1 - vr1,
        ),
        Bookkeeping::Inertial => (d(ix::GRAV_I), d(ix::DRAG_I), d(ix::STEER_I), 0.0, v0 - vr0),
    };
    let ideal = d(ix::IDEAL);
    let press = d(ix::PRESS);
    let lhs = vr0 + ideal - grav - drag - steer - press + rot + earth;
    Budget {
        bookkeeping: kind,
        ideal_mps: ideal,
        gravity_loss_mps: grav,
        drag_loss_mps: drag,
        steering_loss_mps: steer,
        back_pressure_loss_mps: press,
        earth_rotation_mps: earth,
        rotating_frame_mps: rot,
        initial_speed_mps: vr0,
        final_speed_mps: v1,
        closure_error_mps: lhs - v1,
    }
}

/// Budget of one arc, Earth-relative bookkeeping: the terms accumulated over the arc and
/// the change of Earth-relative speed they explain.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ArcBudget {
    /// Label of the arc.
    pub label: String,
    /// Burn or coast.
    pub kind: crate::core::sim::ArcKind,
    /// Start, s.
    pub t0_s: f64,
    /// End, s.
    pub t1_s: f64,
    /// Ideal ΔV, m/s.
    pub ideal_mps: f64,
    /// Gravity loss, m/s (on a coast: speed traded for altitude).
    pub gravity_loss_mps: f64,
    /// Drag loss, m/s.
    pub drag_loss_mps: f64,
    /// Steering loss, m/s.
    pub steering_loss_mps: f64,
    /// Back-pressure loss, m/s.
    pub back_pressure_loss_mps: f64,
    /// Rotating-frame gain, m/s.
    pub rotating_frame_mps: f64,
    /// Change of Earth-relative speed over the arc, m/s.
    pub speed_change_mps: f64,
    /// (ideal − losses + rotating_frame) − speed change, m/s.
    pub closure_error_mps: f64,
}

/// Per-arc budgets of a flight (Earth-relative bookkeeping).
pub fn arc_budgets(env: &Environment, arcs: &[crate::core::sim::ArcRecord]) -> Vec<ArcBudget> {
    arcs.iter()
        .map(|ph| {
            let b = budget(env, &ph.y0, &ph.y1, Bookkeeping::EarthRelative);
            let dv = speeds(env, &ph.y1).1 - speeds(env, &ph.y0).1;
            let explained = b.ideal_mps - b.total_loss_mps() + b.rotating_frame_mps;
            ArcBudget {
                label: ph.label.clone(),
                kind: ph.kind,
                t0_s: ph.t0_s,
                t1_s: ph.t1_s,
                ideal_mps: b.ideal_mps,
                gravity_loss_mps: b.gravity_loss_mps,
                drag_loss_mps: b.drag_loss_mps,
                steering_loss_mps: b.steering_loss_mps,
                back_pressure_loss_mps: b.back_pressure_loss_mps,
                rotating_frame_mps: b.rotating_frame_mps,
                speed_change_mps: dv,
                closure_error_mps: explained - dv,
            }
        })
        .collect()
}
