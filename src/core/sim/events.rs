//! Events that end an integration segment, their switching functions, and root location on the
//! integrator's dense output.
//!
//! A state event fires when its switching function `g(t, y)` crosses from negative to ≥ 0; time
//! events are reached exactly by ending the segment at their time. Roots are located with Brent's
//! method on the Dormand–Prince continuous extension to 1e-10 s, so terminal states vary smoothly
//! with the program's parameters.

use nalgebra::Vector3;

use super::dynamics::FlightModel;
use super::dynamics::{forces, limit_throttle, stage_propellant_kg, Forces, Mode, State, Throttle};
use super::stepper::DenseOutput;
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
    if let Some(g) = value_of_state(p, mode, ev, t, y) {
        return g;
    }
    let (r, v) = rv(y);
    value_at(p, mode, law, ev, t, y, &p.environment.local(t, &r, &v))
}

/// The switching function of an event that depends on the state alone (propellant, orbital
/// energy and elements), without the local conditions; `None` for the others. Root searches
/// call [`value`] a dozen times per event: these skip the local conditions (the same numbers,
/// fewer operations).
fn value_of_state(p: &FlightModel, mode: &Mode, ev: &StateEvent, t: f64, y: &State) -> Option<f64> {
    let env = &p.environment;
    let (r, v) = match ev {
        StateEvent::Depletion => return Some(-stage_propellant_kg(p, mode, t, y[6])),
        StateEvent::Energy(_)
        | StateEvent::ApogeeRadius(_)
        | StateEvent::PerigeeRadius(_)
        | StateEvent::Apogee => rv(y),
        _ => return None,
    };
    Some(match *ev {
        StateEvent::Energy(e) => {
            let en = env.specific_energy_j_kg(&r, &v);
            (en - e) / e.abs().max(1.0)
        }
        StateEvent::ApogeeRadius(ra) => {
            let el = Elements::from_state(&r, &v, env.gm_m3_s2());
            let a = if el.apogee_radius_m.is_finite() {
                el.apogee_radius_m
            } else {
                1e12
            };
            (a - ra) / env.reference_radius_m()
        }
        StateEvent::PerigeeRadius(rp) => {
            (Elements::from_state(&r, &v, env.gm_m3_s2()).perigee_radius_m - rp)
                / env.reference_radius_m()
        }
        StateEvent::Apogee => -r.dot(&v) / (r.norm() * v.norm()).max(1e-9),
        _ => return None,
    })
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
    value_with(p, mode, law, ev, t, y, loc, None)
}

/// [`value_at`], given also the forces of `mode` at (t, y) when the caller has them (the end of
/// an integration step): the throttle events then reuse them instead of recomputing the same
/// numbers.
#[allow(clippy::too_many_arguments)]
pub(crate) fn value_with(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    ev: &StateEvent,
    t: f64,
    y: &State,
    loc: &Local,
    known: Option<&Forces>,
) -> f64 {
    let vrel = || known.map_or_else(|| loc.v_rel_mps.norm(), |f| f.speed_rel_mps);
    let forces_of = |m: &Mode| match known {
        Some(f) if m == mode => *f,
        _ => forces(p, m, law, t, y[6], loc),
    };
    match *ev {
        StateEvent::RiseSpeed(s) => vrel() - s,
        StateEvent::AlphaZero(pitch) => {
            let vrel = vrel();
            let sin_g = if vrel > 0.0 {
                loc.v_rel_mps.dot(&loc.up) / vrel
            } else {
                1.0
            };
            pitch - sin_g.clamp(-1.0, 1.0).asin()
        }
        StateEvent::AccelLimitOnset => {
            let nominal = match mode.throttle {
                Throttle::Fixed(k) | Throttle::AccelLimit { nominal: k } => k,
            };
            let m = Mode {
                throttle: Throttle::Fixed(nominal),
                ..*mode
            };
            let f = forces_of(&m);
            let a_max = p.limits.max_axial_accel_mps2.unwrap_or(f64::INFINITY);
            ((f.thrust_n + f.aero_n.dot(&f.dir)) / y[6] - a_max) / a_max
        }
        StateEvent::MinThrottle => {
            let f = forces_of(mode);
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
        StateEvent::HeatingArm(_, q) => heating_w_m2(loc.air.density_kg_m3, vrel()) / q - 1.0,
        StateEvent::HeatingFall(_, q) => 1.0 - heating_w_m2(loc.air.density_kg_m3, vrel()) / q,
        StateEvent::Depletion
        | StateEvent::Energy(_)
        | StateEvent::ApogeeRadius(_)
        | StateEvent::PerigeeRadius(_)
        | StateEvent::Apogee => value_of_state(p, mode, ev, t, y).unwrap_or(f64::NAN),
        StateEvent::Ground(h) => h - loc.altitude_m,
    }
}

/// Most iterations of one root search.
const LOCATE_MAX_ITERS: u64 = 100;

/// Locates the root of `ev` in `[t_lo, t_hi]` on the dense output (g(t_lo) < 0 ≤ g(t_hi)).
/// Falls back to `t_hi` if the bracket is lost to round-off.
pub(crate) fn locate(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    ev: &StateEvent,
    dense: &DenseOutput,
    t_lo: f64,
    t_hi: f64,
) -> f64 {
    let g = |t: f64| dense.evaluate(t).map(|y| value(p, mode, law, ev, t, &y));
    brent_root(t_lo, t_hi, EVENT_TIME_TOL_S, LOCATE_MAX_ITERS, g)
        .filter(|t| t.is_finite() && *t >= t_lo && *t <= t_hi)
        .unwrap_or(t_hi)
}

/// Root of `g` in [`a`, `b`] by Brent's method (zeroin: bisection, secant and inverse quadratic
/// interpolation; R. P. Brent, *Algorithms for Minimization without Derivatives*, 1973, ch. 4,
/// from memory), to the tolerance `2ε|b| + tol/2`, in at most `max_iters` iterations. The
/// iteration is argmin 0.11's `BrentRoot` run by its `Executor` step for step (which this replaces
/// on the hot path: the executor's bookkeeping cost more than the evaluations), so the root is
/// the same to the bit: the point of smallest |g| seen (the first of equals). `None` when `g`
/// fails (`None`) at an evaluation, or g(a) and g(b) have the same sign.
pub(crate) fn brent_root(
    mut a: f64,
    mut b: f64,
    tol: f64,
    max_iters: u64,
    g: impl Fn(f64) -> Option<f64>,
) -> Option<f64> {
    let mut c = b;
    let (mut d, mut e) = (f64::NAN, f64::NAN);
    let mut fa = g(a)?;
    let mut fb = g(b)?;
    if fa * fb > 0.0 {
        return None;
    }
    let mut fc = fb;
    // argmin's best point: replaced only by a strictly smaller |g| (NaN never).
    let (mut best, mut best_cost) = (None, f64::INFINITY);
    let mut consider = |x: f64, cost: f64| {
        if cost < best_cost || (cost.is_infinite() && best_cost.is_infinite()) {
            best = Some(x);
            best_cost = cost;
        }
    };
    consider(b, fb.abs());
    for _ in 0..max_iters {
        if (fb > 0.0 && fc > 0.0) || fb < 0.0 && fc < 0.0 {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        // Twice the machine precision plus half the tolerance.
        let eff_tol = 2.0 * f64::EPSILON * b.abs() + 0.5 * tol;
        let mid = 0.5 * (c - b);
        if mid.abs() <= eff_tol || fb == 0.0 {
            consider(b, fb.abs());
            break;
        }
        if e.abs() >= eff_tol && fa.abs() > fb.abs() {
            let s = fb / fa;
            // a and c the same point (not merely close): the secant step, as Brent writes it.
            #[allow(clippy::float_cmp)]
            let (mut p, mut q) = if a == c {
                (2.0 * mid * s, 1.0 - s)
            } else {
                let q = fa / fc;
                let r = fb / fc;
                (
                    s * (2.0 * mid * q * (q - r) - (b - a) * (r - 1.0)),
                    (q - 1.0) * (r - 1.0) * (s - 1.0),
                )
            };
            if p > 0.0 {
                q = -q;
            }
            p = p.abs();
            let min1 = 3.0 * mid * q - (eff_tol * q).abs();
            let min2 = (e * q).abs();
            if 2.0 * p < if min1 < min2 { min1 } else { min2 } {
                e = d;
                d = p / q;
            } else {
                d = mid;
                e = d;
            }
        } else {
            d = mid;
            e = d;
        }
        a = b;
        fa = fb;
        if d.abs() > eff_tol {
            b += d;
        } else {
            b += if mid >= 0.0 {
                eff_tol.abs()
            } else {
                -eff_tol.abs()
            };
        }
        fb = g(b)?;
        consider(b, fb.abs());
    }
    best
}
