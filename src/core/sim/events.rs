//! Events that end an integration segment, their switching functions, and root location on the
//! integrator's dense output.
//!
//! A state event fires when its switching function `g(t, y)` crosses from negative to ≥ 0; time
//! events are reached exactly by ending the segment at their time. Roots are located with Brent's
//! method (argmin `BrentRoot`) on the Dormand–Prince continuous extension to 1e-10 s, so terminal
//! states vary smoothly with the program's parameters.

use argmin::core::{CostFunction, Executor};
use argmin::solver::brent::BrentRoot;
use nalgebra::Vector3;
use ode_solvers::continuous_output_model::ContinuousOutputModel;

use super::dynamics::FlightModel;
use super::dynamics::{forces, limit_throttle, stage_propellant_kg, Mode, State, Throttle};
use crate::core::physics::environment::Local;
use crate::core::physics::orbit::Elements;
use crate::core::steering::ActiveLaw;

/// Time tolerance of event location, s.
pub const EVENT_TIME_TOL_S: f64 = 1e-10;

/// A state event and its parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum StateEvent {
    /// Earth-relative speed reaches the vertical-rise end speed, m/s.
    RiseSpeed(f64),
    /// Earth-relative flight-path angle falls to the held pitch, rad (α = 0 hand-over).
    AlphaZero(f64),
    /// Current stage out of propellant.
    Depletion,
    /// Axial acceleration at the nominal throttle reaches the limit.
    AccelLimitOnset,
    /// The limit-holding throttle falls to the stage minimum.
    MinThrottle,
    /// Altitude exceeds this, m (jettison `usize`).
    JettisonAltitude(usize, f64),
    /// ½ρV³ rises above this, W/m² (arms jettison `usize`).
    HeatingArm(usize, f64),
    /// ½ρV³ falls below this, W/m² (jettison `usize`).
    HeatingFall(usize, f64),
    /// Orbital energy reaches this, J/kg.
    Energy(f64),
    /// Osculating apogee radius reaches this, m.
    ApogeeRadius(f64),
    /// Osculating perigee radius reaches this, m.
    PerigeeRadius(f64),
    /// Radial velocity changes sign from + to −.
    Apogee,
    /// Altitude falls below this, m.
    Ground(f64),
}

impl StateEvent {
    /// True for events that fire only on a crossing seen during integration; the others are
    /// conditions that fire at once when already true at a segment's start.
    pub fn crossing_only(&self) -> bool {
        matches!(
            self,
            StateEvent::HeatingArm(..) | StateEvent::HeatingFall(..)
        )
    }
}

/// Free-molecular heating flux ½ρV³ with the Earth-relative speed, W/m².
pub fn heating_w_m2(density_kg_m3: f64, v_rel_mps: f64) -> f64 {
    0.5 * density_kg_m3 * v_rel_mps.powi(3)
}

fn rv(y: &State) -> (Vector3<f64>, Vector3<f64>) {
    (
        Vector3::new(y[0], y[1], y[2]),
        Vector3::new(y[3], y[4], y[5]),
    )
}

/// Switching function of `ev` at (t, y) under `mode`.
pub fn value(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    ev: &StateEvent,
    t: f64,
    y: &State,
) -> f64 {
    let (r, v) = rv(y);
    value_at(p, mode, law, ev, t, y, &p.environment.local(t, &r, &v))
}

/// [`value`] with the local conditions at (t, y) already computed.
pub fn value_at(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    ev: &StateEvent,
    t: f64,
    y: &State,
    loc: &Local,
) -> f64 {
    let (r, v) = rv(y);
    let vrel = loc.v_rel_mps.norm();
    match *ev {
        StateEvent::RiseSpeed(s) => vrel - s,
        StateEvent::AlphaZero(pitch) => {
            let sin_g = if vrel > 0.0 {
                loc.v_rel_mps.dot(&loc.up) / vrel
            } else {
                1.0
            };
            pitch - sin_g.clamp(-1.0, 1.0).asin()
        }
        StateEvent::Depletion => -stage_propellant_kg(p, mode, t, y[6]),
        StateEvent::AccelLimitOnset => {
            let nominal = match mode.throttle {
                Throttle::Fixed(k) | Throttle::AccelLimit { nominal: k } => k,
            };
            let m = Mode {
                throttle: Throttle::Fixed(nominal),
                ..*mode
            };
            let f = forces(p, &m, law, t, y[6], loc);
            let a_max = p.limits.max_axial_accel_mps2.unwrap_or(f64::INFINITY);
            ((f.thrust_n + f.aero_n.dot(&f.dir)) / y[6] - a_max) / a_max
        }
        StateEvent::MinThrottle => {
            let f = forces(p, mode, law, t, y[6], loc);
            let s = &p.vehicle.stages[mode.stage];
            let p_a = loc.air.pressure_pa;
            let core_net = f.throttle * s.engine.thrust_vac_n - p_a * s.engine.exit_area_m2;
            let k = limit_throttle(
                p.limits.max_axial_accel_mps2.unwrap_or(f64::INFINITY),
                y[6],
                s.engine.thrust_vac_n,
                f.thrust_n - core_net,
                p_a * s.engine.exit_area_m2,
                f.aero_n.dot(&f.dir),
            );
            s.min_throttle - k
        }
        StateEvent::JettisonAltitude(_, h) => loc.altitude_m - h,
        StateEvent::HeatingArm(_, q) => heating_w_m2(loc.air.density_kg_m3, vrel) / q - 1.0,
        StateEvent::HeatingFall(_, q) => 1.0 - heating_w_m2(loc.air.density_kg_m3, vrel) / q,
        StateEvent::Energy(e) => {
            let en = p.environment.specific_energy_j_kg(&r, &v);
            (en - e) / e.abs().max(1.0)
        }
        StateEvent::ApogeeRadius(ra) => {
            let env = &p.environment;
            let el = Elements::from_state(&r, &v, env.gm_m3_s2());
            let a = if el.apogee_radius_m.is_finite() {
                el.apogee_radius_m
            } else {
                1e12
            };
            (a - ra) / env.reference_radius_m()
        }
        StateEvent::PerigeeRadius(rp) => {
            let env = &p.environment;
            (Elements::from_state(&r, &v, env.gm_m3_s2()).perigee_radius_m - rp)
                / env.reference_radius_m()
        }
        StateEvent::Apogee => -r.dot(&v) / (r.norm() * v.norm()).max(1e-9),
        StateEvent::Ground(h) => h - loc.altitude_m,
    }
}

struct Switching<'a> {
    p: &'a FlightModel<'a>,
    mode: &'a Mode,
    law: &'a dyn ActiveLaw,
    ev: &'a StateEvent,
    com: &'a ContinuousOutputModel<f64, State>,
}

impl CostFunction for Switching<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, t: &f64) -> Result<f64, argmin::core::Error> {
        let y = self
            .com
            .evaluate(*t)
            .ok_or_else(|| argmin::core::Error::msg("time outside the dense output"))?;
        Ok(value(self.p, self.mode, self.law, self.ev, *t, &y))
    }
}

/// Locates the root of `ev` in `[t_lo, t_hi]` on the dense output (g(t_lo) < 0 ≤ g(t_hi)).
/// Falls back to `t_hi` if the bracket is lost to round-off.
pub fn locate(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    ev: &StateEvent,
    com: &ContinuousOutputModel<f64, State>,
    t_lo: f64,
    t_hi: f64,
) -> f64 {
    let problem = Switching {
        p,
        mode,
        law,
        ev,
        com,
    };
    let solver = BrentRoot::new(t_lo, t_hi, EVENT_TIME_TOL_S);
    Executor::new(problem, solver)
        .configure(|s| s.param(t_hi).max_iters(100))
        .run()
        .ok()
        .and_then(|r| r.state.best_param)
        .filter(|t| t.is_finite() && *t >= t_lo && *t <= t_hi)
        .unwrap_or(t_hi)
}
