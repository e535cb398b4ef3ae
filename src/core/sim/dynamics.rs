//! Equations of motion and loss integrands: the ODE right-hand side for one flight mode.
//!
//! State (SI): position r (3), inertial velocity v (3), mass m, then the ΔV integrals:
//! ideal `∫Σκ·T_vac/m dt`, back-pressure `∫p_a·A_e/m dt`, and for each bookkeeping
//! (inertial: along v̂; Earth-relative: along v̂_rel) steering `∫(T/m)(1 − û·ê)dt`,
//! drag `−∫F_aero·ê/m dt`, gravity `−∫g·ê dt`; plus the rotating-frame term
//! `∫(−ω×(ω×r))·v̂_rel dt` of the Earth-relative form (docs/method.md, "ΔV budget").
//!
//! `ṙ = v`, `v̇ = (T/m)û + F_aero/m + g`, `ṁ = −Σκ·T_vac/(g0·Isp_vac)`, with
//! `T = Σ(κ·T_vac − p_a·A_e)` and `F_aero = −½ρ|v_rel|v_rel C_D(M) S`.
//! The right-hand side does not allocate.

use nalgebra::{SVector, Vector3};

use crate::core::physics::aero::DragTable;
use crate::core::physics::environment::{Environment, Local};
use crate::core::problem::{Limits, Problem, Site};
use crate::core::steering::{pitch_heading_dir, unit_or, ActiveLaw};
use crate::core::vehicle::Vehicle;

/// What the equations of motion need of a problem: the vehicle, the environment, the path
/// limits and the site (for downrange). The program is not here: the thrust direction comes from
/// the arc's active steering law.
#[derive(Debug, Clone, Copy)]
pub struct FlightModel<'a> {
    /// The vehicle.
    pub vehicle: &'a Vehicle,
    /// Earth, gravity and atmosphere.
    pub environment: &'a Environment,
    /// Path limits (the axial-acceleration limit sets the throttle).
    pub limits: &'a Limits,
    /// Launch site.
    pub site: &'a Site,
}

impl Problem {
    /// The flight model of this problem.
    pub fn flight_model(&self) -> FlightModel<'_> {
        FlightModel {
            vehicle: &self.vehicle,
            environment: &self.environment,
            limits: &self.limits,
            site: &self.site,
        }
    }
}

/// Number of states.
pub const N: usize = 16;
/// The integrated state vector.
pub type State = SVector<f64, N>;

/// Indices into [`State`].
pub mod ix {
    /// Position x (then y, z), m.
    pub const R: usize = 0;
    /// Velocity x (then y, z), m/s.
    pub const V: usize = 3;
    /// Mass, kg.
    pub const M: usize = 6;
    /// Ideal ΔV, m/s.
    pub const IDEAL: usize = 7;
    /// Back-pressure loss, m/s.
    pub const PRESS: usize = 8;
    /// Steering loss along the inertial velocity, m/s.
    pub const STEER_I: usize = 9;
    /// Drag loss along the inertial velocity, m/s.
    pub const DRAG_I: usize = 10;
    /// Gravity loss along the inertial velocity, m/s.
    pub const GRAV_I: usize = 11;
    /// Steering loss along the Earth-relative velocity, m/s.
    pub const STEER_R: usize = 12;
    /// Drag loss along the Earth-relative velocity, m/s.
    pub const DRAG_R: usize = 13;
    /// Gravity loss along the Earth-relative velocity, m/s.
    pub const GRAV_R: usize = 14;
    /// Rotating-frame (centrifugal) gain along the Earth-relative velocity, m/s.
    pub const CENTRIF: usize = 15;
}

/// Attitude of the current mode: the liftoff manoeuvre's phases, flown by the simulator, or the
/// arc's steering law.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Attitude {
    /// Along the local vertical.
    Vertical,
    /// Pitching over at `rate_rad_s` since `start_s`, in the plane of `heading_rad`.
    PitchOver {
        /// Time the pitch-over began, s.
        start_s: f64,
        /// Pitch-over rate, rad/s.
        rate_rad_s: f64,
        /// Heading (the launch azimuth), rad.
        heading_rad: f64,
    },
    /// Fixed pitch in the plane of `heading_rad`.
    Hold {
        /// Pitch above the local horizontal, rad.
        pitch_rad: f64,
        /// Heading (the launch azimuth), rad.
        heading_rad: f64,
    },
    /// Along the Earth-relative velocity (zero angle of attack): coasts.
    ZeroAlpha,
    /// The arc's active steering law.
    Law,
}

/// Throttle law of the current mode.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Throttle {
    /// Fixed fraction of full thrust.
    Fixed(f64),
    /// Hold the axial-acceleration limit, never above `nominal`, never below the stage minimum.
    AccelLimit {
        /// Throttle the program would set without the limit.
        nominal: f64,
    },
}

/// Everything constant between two events.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mode {
    /// Index of the bottom (current) stage.
    pub stage: usize,
    /// Index of the current arc.
    pub arc: usize,
    /// Engines of the current stage firing.
    pub thrusting: bool,
    /// Strap-on boosters attached (and firing while they have propellant).
    pub boosters_attached: bool,
    /// Attitude law.
    pub attitude: Attitude,
    /// Throttle law of the current stage.
    pub throttle: Throttle,
    /// Mass of everything except the current stage's propellant and the boosters, kg.
    pub other_mass_kg: f64,
}

/// Thrust, aerodynamics and derived quantities at one state.
#[derive(Debug, Clone, Copy)]
pub struct Forces {
    /// Thrust direction, unit.
    pub dir: Vector3<f64>,
    /// Net thrust Σ(κT_vac − p_a A_e), N.
    pub thrust_n: f64,
    /// Σ κ T_vac, N.
    pub thrust_vac_n: f64,
    /// Exit area of the firing engines, m².
    pub exit_area_m2: f64,
    /// Propellant flow, kg/s.
    pub mdot_kg_s: f64,
    /// Aerodynamic force, N.
    pub aero_n: Vector3<f64>,
    /// Core throttle κ.
    pub throttle: f64,
    /// Dynamic pressure ½ρ|v_rel|², Pa.
    pub q_pa: f64,
    /// Mach number.
    pub mach: f64,
    /// Earth-relative speed |v_rel|, m/s (kept so that its square root is taken once).
    pub speed_rel_mps: f64,
}

/// Thrust direction of `mode` at time `t_s` (`law`: the arc's active steering law).
#[inline]
pub fn attitude_dir(mode: &Mode, law: &dyn ActiveLaw, t_s: f64, loc: &Local) -> Vector3<f64> {
    match mode.attitude {
        Attitude::Vertical => loc.up,
        Attitude::PitchOver {
            start_s,
            rate_rad_s,
            heading_rad,
        } => pitch_heading_dir(
            loc,
            std::f64::consts::FRAC_PI_2 - rate_rad_s * (t_s - start_s),
            heading_rad,
        ),
        Attitude::Hold {
            pitch_rad,
            heading_rad,
        } => pitch_heading_dir(loc, pitch_rad, heading_rad),
        Attitude::ZeroAlpha => unit_or(&loc.v_rel_mps, &loc.up),
        Attitude::Law => law.direction(t_s, loc),
    }
}

/// Mass of the strap-on boosters at `t_s` (they ignite at t = 0), kg.
pub fn booster_mass_kg(p: &FlightModel, mode: &Mode, t_s: f64) -> f64 {
    match (&p.vehicle.boosters, mode.boosters_attached) {
        (Some(b), true) => b.mass_at_kg(t_s),
        _ => 0.0,
    }
}

/// Propellant left in the current stage, kg.
pub fn stage_propellant_kg(p: &FlightModel, mode: &Mode, t_s: f64, m_kg: f64) -> f64 {
    m_kg - mode.other_mass_kg - booster_mass_kg(p, mode, t_s)
}

/// Throttle that holds the axial-acceleration limit: solves
/// `(κT_vac + T_b − p_a A_e + F_aero·û)/m = a_max` for κ (unclamped).
pub fn limit_throttle(
    a_max: f64,
    m: f64,
    core_vac_n: f64,
    other_net_n: f64,
    p_ae_core: f64,
    aero_axial_n: f64,
) -> f64 {
    (a_max * m + p_ae_core - aero_axial_n - other_net_n) / core_vac_n
}

/// The drag table of `mode`'s configuration: the boosters' while they are attached, else the
/// current stage's.
#[inline]
pub fn active_aero<'a>(p: &FlightModel<'a>, mode: &Mode) -> &'a DragTable {
    if mode.boosters_attached {
        p.vehicle.boosters.as_ref().map(|b| &b.aero)
    } else {
        None
    }
    .unwrap_or(&p.vehicle.stages[mode.stage].aero)
}

/// Thrust, drag and related quantities at one state.
pub fn forces(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    t_s: f64,
    m: f64,
    loc: &Local,
) -> Forces {
    let dir = attitude_dir(mode, law, t_s, loc);
    let vr = loc.v_rel_mps.norm();
    let q_pa = 0.5 * loc.air.density_kg_m3 * vr * vr;
    let mach = vr / loc.air.speed_of_sound_mps.max(1e-3);
    let aero = active_aero(p, mode);
    let aero_n = -loc.v_rel_mps * (q_pa * aero.cd_area_m2(mach) / vr.max(1e-12));
    let p_a = loc.air.pressure_pa;
    let (mut vac, mut area, mut mdot) = (0.0, 0.0, 0.0);
    if let (Some(b), true) = (&p.vehicle.boosters, mode.boosters_attached) {
        let n = f64::from(b.count);
        vac += n * b.engine.thrust_vac_n;
        area += n * b.engine.exit_area_m2;
        mdot += n * b.engine.mdot_full_kg_s();
    }
    let mut throttle = 0.0;
    if mode.thrusting {
        let s = &p.vehicle.stages[mode.stage];
        throttle = match mode.throttle {
            Throttle::Fixed(k) => k,
            Throttle::AccelLimit { nominal } => {
                let a_max = p.limits.max_axial_accel_mps2.unwrap_or(f64::INFINITY);
                let k = limit_throttle(
                    a_max,
                    m,
                    s.engine.thrust_vac_n,
                    vac - p_a * area,
                    p_a * s.engine.exit_area_m2,
                    aero_n.dot(&dir),
                );
                k.clamp(s.min_throttle, nominal)
            }
        };
        vac += throttle * s.engine.thrust_vac_n;
        area += s.engine.exit_area_m2;
        mdot += throttle * s.engine.mdot_full_kg_s();
    }
    Forces {
        dir,
        thrust_n: vac - p_a * area,
        thrust_vac_n: vac,
        exit_area_m2: area,
        mdot_kg_s: mdot,
        aero_n,
        throttle,
        q_pa,
        mach,
        speed_rel_mps: vr,
    }
}

/// The right-hand side: `dy = f(t, y)` for `mode` and the arc's active law. No allocation.
pub fn derivative(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    t_s: f64,
    y: &State,
    dy: &mut State,
) {
    derivative_keeping(p, mode, law, t_s, y, dy, None);
}

/// [`derivative`], also storing the local conditions and forces it computed in `keep` when
/// given, so that the caller can reuse them at the same (t, y) (events and extrema at a step's
/// end). Stored only on request: copying them on every evaluation would cost about what the
/// reuse saves. No allocation.
#[inline]
pub fn derivative_keeping(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    t_s: f64,
    y: &State,
    dy: &mut State,
    keep: Option<&mut Option<(Local, Forces)>>,
) {
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    let m = y[ix::M];
    let loc = p.environment.local(t_s, &r, &v);
    let f = forces(p, mode, law, t_s, m, &loc);
    let a = f.dir * (f.thrust_n / m) + f.aero_n / m + loc.gravity_mps2;
    let vhat = unit_or(&v, &f.dir);
    // unit_or(v_rel, dir) with the norm `forces` took.
    let vrhat = if f.speed_rel_mps > 1e-9 {
        loc.v_rel_mps / f.speed_rel_mps
    } else {
        f.dir
    };
    let t_over_m = f.thrust_n / m;
    dy.fixed_rows_mut::<3>(ix::R).copy_from(&v);
    dy.fixed_rows_mut::<3>(ix::V).copy_from(&a);
    dy[ix::M] = -f.mdot_kg_s;
    dy[ix::IDEAL] = f.thrust_vac_n / m;
    dy[ix::PRESS] = loc.air.pressure_pa * f.exit_area_m2 / m;
    dy[ix::STEER_I] = t_over_m * (1.0 - f.dir.dot(&vhat));
    dy[ix::DRAG_I] = -f.aero_n.dot(&vhat) / m;
    dy[ix::GRAV_I] = -loc.gravity_mps2.dot(&vhat);
    dy[ix::STEER_R] = t_over_m * (1.0 - f.dir.dot(&vrhat));
    dy[ix::DRAG_R] = -f.aero_n.dot(&vrhat) / m;
    dy[ix::GRAV_R] = -loc.gravity_mps2.dot(&vrhat);
    dy[ix::CENTRIF] = loc.centrifugal_mps2.dot(&vrhat);
    if let Some(k) = keep {
        *k = Some((loc, f));
    }
}

/// Sensed axial acceleration (thrust plus aerodynamic force along the thrust axis, over the
/// mass `m_kg`) of the forces `f`, m/s².
pub fn axial_accel_mps2(f: &Forces, m_kg: f64) -> f64 {
    (f.thrust_n + f.aero_n.dot(&f.dir)) / m_kg
}
