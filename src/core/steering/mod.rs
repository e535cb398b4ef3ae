//! The ascent program and its steering laws: vertical rise, pitch-over to a kick angle, attitude
//! hold (the liftoff manoeuvre, flown by the simulator), then one steering law per burn arc —
//! zero-angle-of-attack gravity turn ([`gravity_turn`]), linear tangent ([`linear_tangent`]),
//! tabulated pitch ([`pitch_table`]), closed-loop guidance ([`guidance`]) or a law supplied by a
//! program ([`Steering::Custom`]); coasts
//! and cutoffs.
//!
//! Thrust direction in the local frame (pitch θ above the local horizontal, heading ψ clockwise
//! from north): `û = cos θ (sin ψ Ê + cos ψ N̂) + sin θ Û`.
//!
//! # The law seam
//! A law is a [`SteeringLaw`] (its settings, as validated from the problem file): at the start of
//! its arc it yields an [`ActiveLaw`], which the simulator's right-hand side asks for the thrust
//! direction and which may keep state. An active law that names a guidance period is updated at
//! every guidance-cycle time event of its arc with the current state ([`GuidanceInput`]), so a
//! closed-loop law re-solves there. Each law declares the parameters the optimizer may tune
//! ([`LawParam`]) and the terminal quantities it can steer to ([`Control`]), so the optimizer's
//! choice of variables asks the law instead of knowing its kind.
//!
//! Adding a law touches three files: its own module here (the settings, [`SteeringLaw`],
//! [`ActiveLaw`], validation from its file form), this module (the module, a [`Steering`] variant
//! and its arms in `law`, `law_mut`, `from_file` and `write_file`), and `problem/file.rs` (its
//! JSON form) — docs/architecture.md.

pub mod gravity_turn;
pub mod guidance;
pub mod linear_tangent;
pub mod pitch_table;

use nalgebra::Vector3;

use crate::core::error::ProblemError;
use crate::core::physics::environment::{Environment, Local};
use crate::core::problem::file::SteeringFile;
use crate::core::problem::Target;

pub use guidance::Guidance;
pub use linear_tangent::LinearTangent;
pub use pitch_table::{AttitudeTable, PitchTable};

/// End of the vertical rise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RiseEnd {
    /// After this time from liftoff, s.
    Time(f64),
    /// When the Earth-relative speed reaches this, m/s.
    Speed(f64),
}

/// Liftoff manoeuvre of the gravity-turn program.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Liftoff {
    /// End of the vertical rise.
    pub rise: RiseEnd,
    /// Pitch-over rate, rad/s (> 0); unused when `pitch_over_s` is given.
    pub pitch_rate_rad_s: f64,
    /// Pitch-over duration, s (> 0), when the file gives the manoeuvre by its duration: the
    /// rate then follows the kick (kick / duration).
    pub pitch_over_s: Option<f64>,
    /// Kick angle from the vertical, rad (≥ 0).
    pub kick_rad: f64,
}

impl Liftoff {
    /// The pitch-over rate flown, rad/s.
    pub fn rate_rad_s(&self) -> f64 {
        match self.pitch_over_s {
            Some(d) => self.kick_rad / d,
            None => self.pitch_rate_rad_s,
        }
    }

    /// The pitch-over's duration, s (0 for no kick).
    pub fn pitch_over_duration_s(&self) -> f64 {
        match self.pitch_over_s {
            Some(d) if self.kick_rad > 0.0 => d,
            Some(_) => 0.0,
            None => self.kick_rad / self.pitch_rate_rad_s,
        }
    }
}

/// Throttle bucket on the first stage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bucket {
    /// Start, s after liftoff.
    pub start_s: f64,
    /// Duration, s.
    pub duration_s: f64,
    /// Throttle inside the bucket.
    pub throttle: f64,
}

/// When a burn ends.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Cutoff {
    /// Stage propellant depleted.
    Depletion,
    /// Orbital energy reaches the target orbit's.
    TargetOrbit,
    /// Osculating apogee altitude reaches this, m.
    ApogeeAlt(f64),
    /// Osculating perigee altitude reaches this, m.
    PerigeeAlt(f64),
    /// After this burn duration, s.
    Duration(f64),
}

/// When a coast ends.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CoastEnd {
    /// After this duration, s.
    Duration(f64),
    /// At apogee (radial velocity changes sign from + to −).
    ToApogee,
}

/// One arc of the program.
#[derive(Debug, Clone, PartialEq)]
pub enum Arc {
    /// Powered arc on the current stage.
    Burn {
        /// Steering law.
        steering: Steering,
        /// Cutoff condition.
        cutoff: Cutoff,
    },
    /// Unpowered arc.
    Coast(CoastEnd),
}

/// The validated ascent program.
#[derive(Debug, Clone, PartialEq)]
pub struct Program {
    /// Liftoff manoeuvre (needed when the first arc is a gravity turn).
    pub liftoff: Option<Liftoff>,
    /// Optional first-stage throttle bucket.
    pub bucket: Option<Bucket>,
    /// Arcs in flight order; the first is a burn.
    pub arcs: Vec<Arc>,
}

/// Unit thrust direction for pitch θ and heading ψ in the local frame.
pub fn pitch_heading_dir(loc: &Local, pitch_rad: f64, heading_rad: f64) -> Vector3<f64> {
    let (sp, cp) = pitch_rad.sin_cos();
    let (sh, ch) = heading_rad.sin_cos();
    (loc.east * sh + loc.north * ch) * cp + loc.up * sp
}

/// `v` normalized, or `fallback` when `v` is (nearly) zero.
pub fn unit_or(v: &Vector3<f64>, fallback: &Vector3<f64>) -> Vector3<f64> {
    let n = v.norm();
    if n > 1e-9 {
        v / n
    } else {
        *fallback
    }
}

/// A parameter of a law that the optimizer may tune (SI inside; the file has its own units).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum LawParam {
    /// Initial pitch above the frozen horizontal, rad (file: degrees).
    Pitch0,
    /// Rate of the pitch tangent, 1/s.
    TanRate,
    /// Heading of the thrust plane, rad from north (file: degrees in (−180°, 180°]).
    Heading,
    /// Out-of-plane (yaw) rate, 1/s.
    YawRate,
}

impl LawParam {
    /// Key of the parameter in the law's file form.
    pub fn file_key(&self) -> &'static str {
        match self {
            LawParam::Pitch0 => "pitch0_deg",
            LawParam::TanRate => "tan_rate_per_s",
            LawParam::Heading => "heading_deg",
            LawParam::YawRate => "yaw_rate_per_s",
        }
    }

    /// Scale of one unit of the optimizer's normalized variable, SI.
    pub fn scale(&self) -> f64 {
        match self {
            LawParam::Pitch0 => 10f64.to_radians(),
            LawParam::Heading => 1f64.to_radians(),
            LawParam::TanRate | LawParam::YawRate => 1e-3,
        }
    }

    /// Bounds, SI.
    pub fn bounds(&self) -> (f64, f64) {
        match self {
            LawParam::Pitch0 => (-60f64.to_radians(), 80f64.to_radians()),
            LawParam::Heading => (-720f64.to_radians(), 720f64.to_radians()),
            LawParam::TanRate | LawParam::YawRate => (-0.05, 0.05),
        }
    }

    /// Value (SI) in the file's unit.
    pub fn to_file_unit(&self, v: f64) -> f64 {
        match self {
            LawParam::Pitch0 => v.to_degrees(),
            LawParam::Heading => {
                // (−180°, 180°]
                let w = (v.to_degrees() + 180.0).rem_euclid(360.0) - 180.0;
                if w <= -180.0 {
                    180.0
                } else {
                    w
                }
            }
            LawParam::TanRate | LawParam::YawRate => v,
        }
    }

    /// Value in the file's unit, SI.
    pub fn from_file_unit(&self, u: f64) -> f64 {
        match self {
            LawParam::Pitch0 | LawParam::Heading => u.to_radians(),
            LawParam::TanRate | LawParam::YawRate => u,
        }
    }
}

/// Terminal quantities a law can steer to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Control {
    /// The in-plane insertion conditions (radius, flight-path angle, perigee).
    InPlane,
    /// The orbit plane (inclination).
    Plane,
}

/// What a law sees when its arc starts.
pub struct ArcStart<'a> {
    /// Index of the arc.
    pub arc: usize,
    /// Time, s.
    pub t_s: f64,
    /// Inertial velocity, m/s.
    pub v_mps: Vector3<f64>,
    /// Local frame and conditions.
    pub loc: &'a Local,
    /// Launch azimuth, rad from north.
    pub azimuth_rad: f64,
    /// The law flown on an earlier arc that this arc may continue (the latest continuable one).
    pub previous: Option<&'a dyn ActiveLaw>,
    /// The full state at the arc's start (as a guidance cycle would see it).
    pub state: GuidanceInput,
    /// Earth and atmosphere models of the flight.
    pub environment: &'a Environment,
    /// The problem's target orbit, if any (closed-loop guidance aims at it).
    pub target: Option<&'a Target>,
}

/// The state a closed-loop law sees at a guidance-cycle event.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GuidanceInput {
    /// Time, s.
    pub t_s: f64,
    /// Inertial position, m.
    pub r_m: Vector3<f64>,
    /// Inertial velocity, m/s.
    pub v_mps: Vector3<f64>,
    /// Mass, kg.
    pub mass_kg: f64,
    /// Vacuum thrust of the firing engines at full throttle, N.
    pub thrust_vac_n: f64,
    /// Exhaust velocity of the current stage, m/s.
    pub exhaust_velocity_mps: f64,
    /// Propellant left in the current stage, kg.
    pub propellant_kg: f64,
    /// Sensed axial-acceleration limit that the throttle holds, m/s² (`None`: no limit).
    pub max_axial_accel_mps2: Option<f64>,
}

/// A vector-form steering plan `û ∝ λ + λ̇ (t − t_ref)`: what a closed-loop law flies until its
/// next update (inertial axes).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Plan {
    /// λ, unit.
    pub lambda: Vector3<f64>,
    /// λ̇, 1/s.
    pub lambda_dot: Vector3<f64>,
    /// Reference time t_ref, s.
    pub t_ref_s: f64,
}

/// A steering law's settings: what the problem file (or a program) states for a burn arc.
pub trait SteeringLaw: std::fmt::Debug + Send + Sync {
    /// The law's key in the problem file (`linear_tangent`, …).
    fn file_key(&self) -> &'static str;
    /// Starts the law on its arc.
    fn start(&self, s: &ArcStart) -> Box<dyn ActiveLaw>;
    /// The first arc flies the liftoff manoeuvre (vertical rise, kick) before this law takes over.
    fn starts_with_liftoff(&self) -> bool {
        false
    }
    /// The law continues an earlier arc's law, which owns the parameters.
    fn continues_previous(&self) -> bool {
        false
    }
    /// A later arc may continue this law (its active law is [`ActiveLaw::continuable`]).
    fn is_continuable(&self) -> bool {
        false
    }
    /// In-plane parameters the optimizer may tune, most influential first.
    fn shape_params(&self) -> &'static [LawParam] {
        &[]
    }
    /// Plane parameters: the heading first, then the out-of-plane term (if any).
    fn plane_params(&self) -> &'static [LawParam] {
        &[]
    }
    /// Terminal quantities this law can steer to.
    fn controls(&self) -> &'static [Control] {
        &[]
    }
    /// Value of a tunable parameter (SI); `None` when the law has no such parameter (or it is
    /// unset, like a heading that follows the launch azimuth).
    fn get(&self, _p: LawParam) -> Option<f64> {
        None
    }
    /// Sets a tunable parameter (SI); a law without it ignores the call.
    fn set(&mut self, _p: LawParam, _v: f64) {}
    /// The law's parameters can be tuned (a law shared by a program cannot: see
    /// [`Steering::law_mut`]).
    fn is_tunable(&self) -> bool {
        !self.shape_params().is_empty() || !self.plane_params().is_empty()
    }
}

/// A law in flight: the thrust direction at each instant, with any state it keeps.
pub trait ActiveLaw: std::fmt::Debug + Send + Sync {
    /// Unit thrust direction (integration frame) at `t_s` in local conditions `loc`. Called from
    /// the right-hand side: must not allocate.
    fn direction(&self, t_s: f64, loc: &Local) -> Vector3<f64>;
    /// Guidance cycle, s: `Some` for a closed-loop law, updated every cycle.
    fn guidance_period_s(&self) -> Option<f64> {
        None
    }
    /// Re-solves the steering from the current state (closed-loop laws).
    fn update(&mut self, _now: &GuidanceInput) {}
    /// The next time after `t_s` at which the direction has a kink (a table node), s.
    fn next_node_s(&self, _t_s: f64) -> Option<f64> {
        None
    }
    /// A copy a later arc may continue (`None`: not continuable).
    fn continuable(&self) -> Option<Box<dyn ActiveLaw>> {
        None
    }
    /// The plan a closed-loop law flies now (`None`: not a plan-based law); a recorder can
    /// replay the plans of one flight open loop.
    fn plan(&self) -> Option<Plan> {
        None
    }
}

/// A law supplied by a program, shared between the copies of a problem (equal only to itself).
#[derive(Debug, Clone)]
pub struct SharedLaw(pub std::sync::Arc<dyn SteeringLaw>);

impl PartialEq for SharedLaw {
    fn eq(&self, other: &Self) -> bool {
        std::sync::Arc::ptr_eq(&self.0, &other.0)
    }
}

/// Steering law of a burn arc: the laws the problem file knows, and any law a program supplies.
#[derive(Debug, Clone, PartialEq)]
pub enum Steering {
    /// Thrust along the Earth-relative velocity (after the liftoff manoeuvre on the first arc).
    GravityTurn,
    /// Linear tangent law.
    LinearTangent(LinearTangent),
    /// The previous linear-tangent arc's law, continued (same frame, same clock).
    LinearTangentContinued,
    /// Tabulated pitch against time since liftoff, heading = launch azimuth.
    PitchTable(PitchTable),
    /// Tabulated pitch and heading against time since liftoff (a free thrust direction).
    AttitudeTable(AttitudeTable),
    /// Closed-loop guidance (powered explicit guidance) to the target orbit.
    Guidance(Guidance),
    /// A law supplied by a program (not from the problem file): closed-loop guidance, tests.
    /// Shared, so the optimizer cannot tune it.
    Custom(SharedLaw),
}

impl Steering {
    /// The law.
    pub fn law(&self) -> &dyn SteeringLaw {
        match self {
            Steering::GravityTurn => &gravity_turn::GravityTurn,
            Steering::LinearTangent(l) => l,
            Steering::LinearTangentContinued => &linear_tangent::Continued,
            Steering::PitchTable(t) => t,
            Steering::AttitudeTable(t) => t,
            Steering::Guidance(g) => g,
            Steering::Custom(l) => l.0.as_ref(),
        }
    }

    /// The optimizer can tune this arc's law: it has parameters and is not shared.
    pub fn is_tunable(&self) -> bool {
        !matches!(self, Steering::Custom(_)) && self.law().is_tunable()
    }

    /// The law, to tune (`None` for a shared program-supplied law).
    pub fn law_mut(&mut self) -> Option<&mut dyn SteeringLaw> {
        match self {
            Steering::LinearTangent(l) => Some(l),
            Steering::PitchTable(t) => Some(t),
            Steering::AttitudeTable(t) => Some(t),
            Steering::GravityTurn
            | Steering::LinearTangentContinued
            | Steering::Guidance(_)
            | Steering::Custom(_) => None,
        }
    }

    /// Validates the file form at JSON path `path`.
    pub fn from_file(path: &str, s: &SteeringFile) -> Result<Steering, ProblemError> {
        Ok(match s {
            SteeringFile::GravityTurn => Steering::GravityTurn,
            SteeringFile::LinearTangent(l) => {
                Steering::LinearTangent(LinearTangent::from_file(path, l)?)
            }
            SteeringFile::PitchTable(pts) => {
                Steering::PitchTable(PitchTable::from_file(path, pts)?)
            }
            SteeringFile::AttitudeTable(pts) => {
                Steering::AttitudeTable(AttitudeTable::from_file(path, pts)?)
            }
            SteeringFile::LinearTangentContinued => Steering::LinearTangentContinued,
            SteeringFile::Guidance(g) => Steering::Guidance(Guidance::from_file(path, g)?),
        })
    }

    /// Writes a tunable parameter, in the file's unit, into the law's file form.
    pub fn write_file(s: &mut SteeringFile, p: LawParam, u: f64) {
        match s {
            SteeringFile::LinearTangent(l) => linear_tangent::write_file(l, p, u),
            // No tunable parameters in the file form.
            SteeringFile::GravityTurn
            | SteeringFile::LinearTangentContinued
            | SteeringFile::PitchTable(_)
            | SteeringFile::AttitudeTable(_)
            | SteeringFile::Guidance(_) => {}
        }
    }
}
