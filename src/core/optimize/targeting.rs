//! Terminal conditions: the scaled residuals of a flown trajectory against the target orbit.
//!
//! The last burn cuts off when the orbital energy reaches the target's, so the semi-major axis is
//! met by construction and the residuals are the remaining conditions (common practice;
//! docs/method.md): insertion at perigee `[(r − r_p)/100 km, γ/1°]`, free insertion
//! `[(r_p − r_p*)/100 km]`, insertion state `[(r − r*)/100 km, (γ − γ*)/1°]`, then `(i − i*)/1°`
//! when an inclination is targeted (for an equatorial target the two equatorial components of
//! the unit angular momentum, per 1°, which are smooth where `i` has a kink), and last an energy-shortfall term that is zero whenever the
//! cutoff was reached. A residual of 1e-3 is the insertion tolerance (0.1 km, 0.001°; 100 m for
//! an insertion state).

use nalgebra::Vector3;

use crate::core::physics::orbit::Elements;
use crate::core::problem::{Insertion, Problem, Target};
use crate::core::sim::{fly, EndReason, Flight, FlyOptions};

/// Radius residual scale, m.
pub const R_SCALE_M: f64 = 100e3;
/// Angle residual scale, rad.
pub const ANGLE_SCALE_RAD: f64 = 0.017_453_292_519_943_295;
/// Dynamic-pressure residual scale, Pa (a residual of 1e-3 is 1 Pa).
pub const Q_SCALE_PA: f64 = 1000.0;
/// The insertion tolerance as a scaled residual: every residual within it means the orbit is
/// inside ±0.1 km on the apsides (or the insertion radius) and ±0.001° on angles. The one
/// definition the optimizer's "conditions met" and the reports' "target met" share.
pub const INSERTION_TOL: f64 = 1e-3;
/// [`INSERTION_TOL`] on apsis altitudes, km.
pub const APSIS_TOL_KM: f64 = INSERTION_TOL * R_SCALE_M / 1e3;
/// [`INSERTION_TOL`] on inclination and flight-path angle, deg.
pub const ANGLE_TOL_DEG: f64 = INSERTION_TOL * (ANGLE_SCALE_RAD * 180.0 / std::f64::consts::PI);
/// Weight of the energy shortfall (fraction of the target energy) in the residuals.
pub const SHORTFALL_WEIGHT: f64 = 10.0;

/// One evaluated program.
#[derive(Debug, Clone)]
pub struct Eval {
    /// Scaled residuals (see the module doc).
    pub residuals: Vec<f64>,
    /// Propellant burned, kg.
    pub propellant_used_kg: f64,
    /// The final cutoff on the target energy was reached and the flight completed.
    pub reached: bool,
    /// Highest apogee altitude seen at the end, m (for infeasible reports).
    pub apogee_alt_m: f64,
    /// Energy shortfall at the end, fraction of |target energy| (0 when reached).
    pub shortfall: f64,
    /// Maximum dynamic pressure, Pa.
    pub max_q_pa: f64,
    /// Maximum q·α, Pa·deg.
    pub max_q_alpha_pa_deg: f64,
    /// With a throttle bucket: the maximum dynamic pressure before, inside and after it, Pa
    /// (`None` without a bucket).
    pub max_q_by_bucket_pa: Option<[f64; 3]>,
    /// Payload, kg.
    pub payload_kg: f64,
    /// Evaluated in the payload mode (objective: largest payload).
    pub payload_mode: bool,
    /// Switching functions, s: for each jettison and each ignition that follows a coast (see
    /// [`switch_count`]), jettison time minus ignition time (NaN when either did not happen).
    /// The propellant has a kink where one changes sign: the jettisoned mass is carried through
    /// the start of the burn on one side and not on the other.
    pub switches: Vec<f64>,
}

impl Eval {
    /// Largest absolute residual.
    pub fn max_abs(&self) -> f64 {
        self.residuals.iter().fold(0.0, |m, r| m.max(r.abs()))
    }
}

/// The arcs whose start is an ignition after a coast.
fn ignitions(p: &Problem) -> impl Iterator<Item = usize> + '_ {
    use crate::core::steering::Arc;
    let arcs = &p.program.arcs;
    (1..arcs.len()).filter(move |&k| {
        matches!(arcs[k], Arc::Burn { .. }) && matches!(arcs[k - 1], Arc::Coast { .. })
    })
}

/// Number of switching functions of a problem ([`Eval::switches`]).
pub fn switch_count(p: &Problem) -> usize {
    p.vehicle.jettisons.len() * ignitions(p).count()
}

/// The switching functions of a flight ([`Eval::switches`]), s.
fn switches(p: &Problem, f: &Flight) -> Vec<f64> {
    let ign: Vec<usize> = ignitions(p).collect();
    let mut out = Vec::with_capacity(switch_count(p));
    for j in 0..p.vehicle.jettisons.len() {
        let tj = f.jettison_times_s.get(j).copied().unwrap_or(f64::NAN);
        for &k in &ign {
            let tk = f.arcs.get(k).map_or(f64::NAN, |a| a.t0_s);
            out.push(tj - tk);
        }
    }
    out
}

/// Number of residuals for a target (with a held dynamic-pressure limit or not).
pub fn residual_count(t: &Target, q_limit: Option<f64>) -> usize {
    let n = match t.insertion {
        Insertion::Free => 1,
        Insertion::Perigee | Insertion::State { .. } => 2,
    };
    let plane = match t.inclination_rad {
        None => 0,
        Some(i) if equatorial(i) => 2,
        Some(_) => 1,
    };
    n + plane + usize::from(q_limit.is_some()) + 1
}

/// An equatorial target (inclination 0° or 180°): the plane condition is two residuals.
pub fn equatorial(inclination_rad: f64) -> bool {
    inclination_rad.sin().abs() < 1e-9
}

/// Residuals of a flight of `p` against `t`, and the energy shortfall.
pub fn residuals(p: &Problem, t: &Target, f: &Flight) -> (Vec<f64>, f64) {
    let env = &p.environment;
    let y = &f.y1;
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    let el = Elements::from_state(&r, &v, env.gm_m3_s2());
    let gamma = env.flight_path_angle_rad(&r, &v);
    let alt = env.radial_altitude_m(&r);
    let mut res = match t.insertion {
        Insertion::Perigee => vec![(alt - t.perigee_alt_m) / R_SCALE_M, gamma / ANGLE_SCALE_RAD],
        Insertion::Free => {
            vec![(el.perigee_radius_m - env.reference_radius_m() - t.perigee_alt_m) / R_SCALE_M]
        }
        Insertion::State {
            alt_m,
            flight_path_rad,
            ..
        } => vec![
            (alt - alt_m) / R_SCALE_M,
            (gamma - flight_path_rad) / ANGLE_SCALE_RAD,
        ],
    };
    if let Some(i) = t.inclination_rad {
        if equatorial(i) {
            // The inclination of an equatorial target is a |·| of the plane's tilt: a kink at
            // the solution, where no derivative exists. The tilt's two components (the unit
            // angular momentum's equatorial components, ≈ i·(sin Ω, −cos Ω)) are smooth, and both
            // vanish exactly on the equator.
            let h = r.cross(&v);
            let n = h.norm().max(f64::MIN_POSITIVE);
            res.push(h.x / n / ANGLE_SCALE_RAD);
            res.push(h.y / n / ANGLE_SCALE_RAD);
        } else {
            res.push((el.inclination_rad - i) / ANGLE_SCALE_RAD);
        }
    }
    let e = env.specific_energy_j_kg(&r, &v);
    let e_t = t.energy_j_kg(env);
    let deficit = ((e_t - e) / e_t.abs().max(1.0)).max(0.0);
    let completed = matches!(f.end, EndReason::Completed);
    let shortfall = if completed { deficit } else { deficit + 1.0 };
    // Below 1e-9 the shortfall is the cutoff's own root-finding round-off.
    let shortfall = if shortfall < 1e-9 { 0.0 } else { shortfall };
    res.push(SHORTFALL_WEIGHT * shortfall);
    (res, shortfall)
}

/// Flies `p` and evaluates it against its target; with `q_limit` (Pa) the maximum dynamic
/// pressure is held at the limit as one more condition.
pub fn evaluate(p: &Problem, t: &Target, q_limit: Option<f64>, energy_equality: bool) -> Eval {
    evaluate_flight(
        p,
        t,
        q_limit,
        energy_equality,
        &fly(p, &FlyOptions::default()),
    )
}

/// [`evaluate`] on flight `f` of `p` (flown without a history).
pub fn evaluate_flight(
    p: &Problem,
    t: &Target,
    q_limit: Option<f64>,
    energy_equality: bool,
    f: &Flight,
) -> Eval {
    let (mut residuals, mut shortfall) = residuals(p, t, f);
    if energy_equality && matches!(f.end, EndReason::Completed) {
        // Payload mode: the last burn runs to depletion and the payload is solved so that the
        // energy at depletion equals the target's (two-sided condition).
        let y = &f.y1;
        let r = Vector3::new(y[0], y[1], y[2]);
        let v = Vector3::new(y[3], y[4], y[5]);
        let e_t = t.energy_j_kg(&p.environment);
        let de = (p.environment.specific_energy_j_kg(&r, &v) - e_t) / e_t.abs().max(1.0);
        if let Some(last) = residuals.last_mut() {
            *last = SHORTFALL_WEIGHT * de;
        }
        shortfall = (-de).max(0.0);
    }
    let max_q_pa = f.max_q.map_or(0.0, |m| m.value);
    if let Some(q) = q_limit {
        let at = residuals.len() - 1;
        residuals.insert(at, (max_q_pa - q) / Q_SCALE_PA);
    }
    let y = &f.y1;
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    let el = Elements::from_state(&r, &v, p.environment.gm_m3_s2());
    let finite = residuals.iter().all(|x| x.is_finite());
    Eval {
        residuals: if finite {
            residuals
        } else {
            vec![1e6; residual_count(t, q_limit)]
        },
        propellant_used_kg: p.vehicle.propellant_loaded_kg() - f.propellant_remaining_kg,
        reached: (shortfall == 0.0 || energy_equality) && matches!(f.end, EndReason::Completed),
        apogee_alt_m: if el.apogee_radius_m.is_finite() {
            el.apogee_radius_m - p.environment.reference_radius_m()
        } else {
            f64::INFINITY
        },
        shortfall,
        max_q_pa,
        max_q_by_bucket_pa: p.program.bucket.map(|_| f.max_q_by_bucket_pa),
        max_q_alpha_pa_deg: f.max_q_alpha.map_or(0.0, |m| m.value),
        payload_kg: p.vehicle.payload_kg,
        payload_mode: energy_equality,
        switches: switches(p, f),
    }
}
