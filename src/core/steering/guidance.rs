//! Closed-loop upper-stage guidance: powered explicit guidance in the form of Jaggers
//! ("An explicit solution to the exoatmospheric powered flight guidance and trajectory
//! optimization problem for rocket propelled vehicles", AIAA paper, 1977, from memory;
//! the same scheme as the Space Shuttle's PEG), with its gravity and thrust predictor replaced by
//! a numerical one.
//!
//! The steering is the vacuum-optimal vector form `û ∝ λ + λ̇ (t − t_λ)` (linear tangent in vector
//! form; Bryson & Ho, *Applied Optimal Control*, 1975, §2.4, from memory), λ unit along the
//! velocity to be gained `v_go`. Every guidance cycle (default 1 s) the law re-solves
//! λ, λ̇ and the time to go `T` from the current state:
//!
//! 1. `L = |v_go|` gives `T` by the rocket equation (with the acceleration limit, if any);
//! 2. thrust integrals `L = ∫a`, `J = ∫a t`, `S = T L − J`, `Q = T J − ∫a t²` over `[0, T]`,
//!    `t_λ = J/L`;
//! 3. position to be gained `r_go = r_d − (r + v T + r_grav) − r_bias`, its downrange component
//!    replaced so that λ̇ has no downrange component (downrange position is free: the optimal
//!    primer's downrange component is constant, which makes the law linear tangent), then
//!    `λ̇ = (r_go − S λ)/(Q − S t_λ)`;
//! 4. the predictor integrates the vacuum flight under this steering (RK4, the simulator's gravity
//!    model, the stage's thrust, flow and acceleration limit) to the predicted cutoff, which gives
//!    `r_grav = ∬g`, the thrust's own displacement (hence `r_bias`) and the cutoff state;
//! 5. the desired cutoff state (`r_d` on the target radius in the target plane, `v_d` of the
//!    target orbit at `r_d`) is compared with the prediction and `v_go += v_d − v_p`.
//!
//! Between cycles `v_go` loses the sensed velocity (`Δv − ∫g dt`). At the arc's start the law
//! iterates until the velocity miss is below 1 mm/s. Over the last seconds to go the steering is
//! held (the λ̇ formula divides by `Q − S t_λ`, which vanishes like `T⁴`). The burn is cut off by the
//! arc's `"target_orbit"` cutoff (target energy), which a converged solution reaches exactly at the
//! desired state.
//!
//! The plane: the plane of the target inclination through the position at the arc's start (the
//! node is free: the tool has no launch-time model), on the branch closest to the current motion;
//! with no inclination the osculating plane at the arc's start. Yaw steering follows from the
//! out-of-plane components of `v_go` and `r_go`.
//!
//! What the law knows: the flown vehicle's thrust, exhaust velocity, mass and propellant at each
//! cycle (as a navigation system measuring sensed acceleration and flow would), but not the
//! future: a thrust or Isp error, or a jettison, shows up as a changing state, and the next
//! cycles absorb it. It ignores drag. An intermediate burn aims at its own `aim` orbit and is cut
//! off on its apogee or perigee.

use nalgebra::Vector3;

use super::{unit_or, ActiveLaw, ArcStart, GuidanceInput, Plan, SteeringLaw};
use crate::core::error::in_range as range;
use crate::core::error::ProblemError;
use crate::core::physics::earth::WGS84_GM_M3_S2;
use crate::core::physics::environment::{EarthModel, Local};
use crate::core::problem::file::GuidanceFile;
use crate::core::problem::{Insertion, Target};

/// Default guidance cycle, s.
pub const DEFAULT_CYCLE_S: f64 = 1.0;
/// Default time to go below which the steering is held, s.
pub const DEFAULT_HOLD_S: f64 = 4.0;
/// Corrector iterations at the arc's start (it stops earlier once converged).
const START_ITERATIONS: usize = 60;
/// Corrector iterations per guidance cycle.
const CYCLE_ITERATIONS: usize = 3;
/// Velocity miss at which the corrector stops iterating, m/s.
const CONVERGED_MPS: f64 = 1e-3;
/// Longest predictor step, s.
const PREDICT_STEP_S: f64 = 4.0;

/// Settings of the guided law.
#[derive(Debug, Clone, PartialEq)]
pub struct Guidance {
    /// Guidance cycle, s.
    pub cycle_s: f64,
    /// Time to go below which the steering is held, s.
    pub hold_s: f64,
    /// Open loop: replay these plans (each from its time on, s) instead of guiding: the
    /// commands of a recorded flight, in inertial axes against time, without guidance cycles.
    /// Not in the file: `kickturn dispersions --open-loop` sets it from the nominal flight.
    pub replay: Option<Vec<(f64, Plan)>>,
    /// The orbit this burn aims at instead of the problem's target (an intermediate burn).
    /// Validation sets it from the file's `aim`.
    pub aim: Option<Target>,
}

impl Default for Guidance {
    fn default() -> Self {
        Guidance {
            cycle_s: DEFAULT_CYCLE_S,
            hold_s: DEFAULT_HOLD_S,
            replay: None,
            aim: None,
        }
    }
}

impl Guidance {
    /// Validates the file form at JSON path `path`.
    pub fn from_file(path: &str, g: &GuidanceFile) -> Result<Self, ProblemError> {
        let cycle_s = range(
            &format!("{path}.guidance.cycle_s"),
            g.cycle_s.unwrap_or(DEFAULT_CYCLE_S),
            0.01,
            60.0,
            true,
        )?;
        let hold_s = range(
            &format!("{path}.guidance.hold_s"),
            g.hold_s.unwrap_or(DEFAULT_HOLD_S.max(2.0 * cycle_s)),
            0.0,
            600.0,
            true,
        )?;
        Ok(Guidance {
            cycle_s,
            hold_s,
            replay: None,
            aim: None,
        })
    }
}

impl SteeringLaw for Guidance {
    fn file_key(&self) -> &'static str {
        "guidance"
    }

    fn start(&self, s: &ArcStart) -> Box<dyn ActiveLaw> {
        Box::new(Guided::start(self.clone(), s))
    }
}

/// The cutoff state the guidance aims at.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Aim {
    insertion: Insertion,
    /// Perigee and apogee radii (round models) or heights (flat), m.
    rp_m: f64,
    ra_m: f64,
    /// Gravitational parameter of the vis-viva speeds, m³/s².
    mu_m3_s2: f64,
}

/// Geometry of the Earth model as the guidance sees it.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Geometry {
    /// WGS-84 or the sphere: the model's gravity, GM and reference radius.
    Round {
        earth: EarthModel,
    },
    Flat {
        g_mps2: f64,
    },
}

impl Geometry {
    fn gravity(&self, r: &Vector3<f64>) -> Vector3<f64> {
        match *self {
            Geometry::Round { earth } => earth.gravity_mps2(r),
            Geometry::Flat { g_mps2 } => Vector3::new(0.0, 0.0, -g_mps2),
        }
    }

    /// The "radial" unit vector (flat: up).
    fn up(&self, r: &Vector3<f64>) -> Vector3<f64> {
        match self {
            Geometry::Round { .. } => unit_or(r, &Vector3::z()),
            Geometry::Flat { .. } => Vector3::z(),
        }
    }

    /// Radius (flat: height), m.
    fn radius(&self, r: &Vector3<f64>) -> f64 {
        match self {
            Geometry::Round { .. } => r.norm(),
            Geometry::Flat { .. } => r.z,
        }
    }

    /// A point of radius (height) `rad` above the direction of `r` in the plane of normal `n`.
    fn point(&self, r: &Vector3<f64>, n: &Vector3<f64>, rad: f64) -> Vector3<f64> {
        match self {
            Geometry::Round { .. } => unit_or(&(r - n * r.dot(n)), r) * rad,
            Geometry::Flat { .. } => {
                let p = r - n * r.dot(n);
                Vector3::new(p.x, p.y, rad)
            }
        }
    }
}

/// The stage as the guidance models it over the rest of the burn.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Stage {
    mass_kg: f64,
    thrust_n: f64,
    ve_mps: f64,
    propellant_kg: f64,
    a_max_mps2: f64,
}

impl Stage {
    fn of(g: &GuidanceInput) -> Stage {
        Stage {
            mass_kg: g.mass_kg.max(1e-9),
            thrust_n: g.thrust_vac_n.max(1e-9),
            ve_mps: g.exhaust_velocity_mps.max(1e-9),
            propellant_kg: g.propellant_kg.max(0.0),
            a_max_mps2: g.max_axial_accel_mps2.unwrap_or(f64::INFINITY),
        }
    }

    /// Mass flow at full thrust, kg/s.
    fn mdot(&self) -> f64 {
        self.thrust_n / self.ve_mps
    }

    /// Time at which the acceleration limit is reached, s (∞: never in this burn).
    fn t_limit_s(&self) -> f64 {
        let m_sw = self.thrust_n / self.a_max_mps2;
        if m_sw >= self.mass_kg {
            0.0
        } else if m_sw <= self.mass_kg - self.propellant_kg {
            f64::INFINITY
        } else {
            (self.mass_kg - m_sw) / self.mdot()
        }
    }

    /// Longest burn, s (all propellant).
    fn t_max_s(&self) -> f64 {
        let tl = self.t_limit_s();
        let m_end = self.mass_kg - self.propellant_kg;
        if tl.is_infinite() {
            self.propellant_kg / self.mdot()
        } else {
            // Throttled at a_max: m(t) = m_sw exp(−a (t − t_l)/ve).
            let m_sw = self.mass_kg - self.mdot() * tl;
            tl + self.ve_mps / self.a_max_mps2 * (m_sw / m_end.max(1e-9)).ln()
        }
    }

    /// Thrust acceleration t seconds from now, m/s².
    fn accel(&self, t: f64) -> f64 {
        let tl = self.t_limit_s();
        if t < tl {
            self.thrust_n / (self.mass_kg - self.mdot() * t).max(1e-9)
        } else {
            self.a_max_mps2
        }
    }

    /// Burn time that gains `l` m/s of thrust velocity (rocket equation), capped at all
    /// propellant, s.
    fn time_for(&self, l: f64) -> f64 {
        let tl = self.t_limit_s();
        let tau = self.mass_kg / self.mdot();
        let t = if tl.is_infinite() {
            -tau * (-l / self.ve_mps).exp_m1()
        } else {
            let l1 = -self.ve_mps * (1.0 - tl / tau).ln();
            if l <= l1 {
                -tau * (-l / self.ve_mps).exp_m1()
            } else {
                tl + (l - l1) / self.a_max_mps2
            }
        };
        t.min(self.t_max_s())
    }

    /// Thrust integrals over [0, T]: (L, J, P) = ∫a, ∫a t, ∫a t² (Simpson on each smooth piece).
    fn integrals(&self, big_t: f64) -> (f64, f64, f64) {
        let tl = self.t_limit_s().min(big_t);
        let mut acc = (0.0, 0.0, 0.0);
        for (a, b) in [(0.0, tl), (tl, big_t)] {
            if b <= a {
                continue;
            }
            let n = 16;
            let h = (b - a) / n as f64;
            for k in 0..=n {
                let t = a + h * k as f64;
                let w = if k == 0 || k == n {
                    1.0
                } else if k % 2 == 1 {
                    4.0
                } else {
                    2.0
                } * h
                    / 3.0;
                let at = self.accel(t);
                acc.0 += w * at;
                acc.1 += w * at * t;
                acc.2 += w * at * t * t;
            }
        }
        acc
    }
}

/// The guided law in flight.
#[derive(Debug, Clone, PartialEq)]
pub struct Guided {
    settings: Guidance,
    geometry: Geometry,
    aim: Option<Aim>,
    /// Target plane normal (along the orbit's angular momentum), unit.
    normal: Vector3<f64>,
    /// Steering: û ∝ λ + λ̇ (t − t_ref_s).
    lambda: Vector3<f64>,
    lambda_dot: Vector3<f64>,
    t_ref_s: f64,
    /// Velocity to be gained by thrust, m/s.
    v_go: Vector3<f64>,
    /// Predicted time to go at the last solution, s.
    t_go_s: f64,
    /// Time of the last solution, s.
    solved_at_s: f64,
    /// Gravity displacement over the last prediction, m, and its horizon, s.
    r_grav: Vector3<f64>,
    r_grav_horizon_s: f64,
    /// Thrust displacement achieved minus asked at the last prediction, m.
    r_bias: Vector3<f64>,
    /// Desired cutoff position, m.
    r_d: Vector3<f64>,
    /// State at the last update (t s, r m, v m/s), for the sensed velocity.
    last: Option<(f64, Vector3<f64>, Vector3<f64>)>,
    /// Velocity miss of the last corrector step, m/s.
    miss_mps: f64,
}

/// The normal of the plane through `r` of inclination `inc_rad` closest to the motion `h`
/// (angular momentum direction). An inclination below the latitude of r (no such plane) gives
/// the nearest reachable plane (the one heading due east or west).
fn plane_normal(r: &Vector3<f64>, h: &Vector3<f64>, inc_rad: f64) -> Vector3<f64> {
    // n ⊥ r̂ and n·ẑ = cos i: n = c1 e1 + c2 e2, e1 = unit(ẑ − (ẑ·r̂)r̂), e2 = r̂ × e1 (e2 ⊥ ẑ).
    let rh = unit_or(r, &Vector3::x());
    let z = Vector3::z();
    let zp = z - rh * z.dot(&rh);
    let cos_lat = zp.norm();
    if cos_lat < 1e-9 {
        return unit_or(h, &Vector3::z());
    }
    let e1 = zp / cos_lat;
    let e2 = rh.cross(&e1);
    let c1 = (inc_rad.cos() / cos_lat).clamp(-1.0, 1.0);
    let c2 = (1.0 - c1 * c1).max(0.0).sqrt();
    let a = e1 * c1 + e2 * c2;
    let b = e1 * c1 - e2 * c2;
    if a.dot(h) >= b.dot(h) {
        a
    } else {
        b
    }
}

impl Guided {
    fn start(settings: Guidance, s: &ArcStart) -> Guided {
        let geometry = match s.environment.earth {
            earth @ (EarthModel::Wgs84 { .. } | EarthModel::Spherical { .. }) => {
                Geometry::Round { earth }
            }
            EarthModel::Flat { gravity_mps2 } => Geometry::Flat {
                g_mps2: gravity_mps2,
            },
        };
        let state = s.state;
        let r = state.r_m;
        let v = state.v_mps;
        let up = geometry.up(&r);
        // The motion's plane: the velocity's, or the launch azimuth's when (nearly) at rest.
        let (sa, ca) = s.azimuth_rad.sin_cos();
        let hor = s.loc.east * sa + s.loc.north * ca;
        let v_hor = v - up * v.dot(&up);
        let dir = if v_hor.norm() > 1.0 { v_hor } else { hor };
        let h = unit_or(&up.cross(&dir), &Vector3::z());
        let target = settings.aim.as_ref().or(s.target);
        let inclination = target
            .and_then(|t| t.inclination_rad)
            .or(s.target.and_then(|t| t.inclination_rad));
        let normal = match (geometry, inclination) {
            (Geometry::Round { .. }, Some(i)) => plane_normal(&r, &h, i),
            _ => h,
        };
        let aim = target.map(|t| aim_of(t, &geometry));
        let mut g = Guided {
            settings,
            geometry,
            aim,
            normal,
            lambda: unit_or(&dir, &hor),
            lambda_dot: Vector3::zeros(),
            t_ref_s: s.t_s,
            v_go: Vector3::zeros(),
            t_go_s: 0.0,
            solved_at_s: s.t_s,
            r_grav: Vector3::zeros(),
            r_grav_horizon_s: 0.0,
            r_bias: Vector3::zeros(),
            r_d: r,
            last: None,
            miss_mps: f64::INFINITY,
        };
        if let Some(first) = g.settings.replay.as_ref().and_then(|r| r.first()).copied() {
            g.set_plan(&first.1);
            return g;
        }
        if g.aim.is_some() {
            g.initialize(&state);
            for _ in 0..START_ITERATIONS {
                g.correct(&state);
                if g.miss_mps < CONVERGED_MPS {
                    break;
                }
            }
            g.last = Some((state.t_s, state.r_m, state.v_mps));
        }
        g
    }

    /// First guess: the target speed along the downrange direction, gravity over a guessed burn.
    fn initialize(&mut self, now: &GuidanceInput) {
        let Some(aim) = self.aim else { return };
        let r = now.r_m;
        let (rad, speed, gamma) = desired(&aim, self.geometry.radius(&r));
        self.r_d = self.geometry.point(&r, &self.normal, rad);
        let up = self.geometry.up(&self.r_d);
        let down = self.normal.cross(&up);
        let v_d = (down * gamma.cos() + up * gamma.sin()) * speed;
        let stage = Stage::of(now);
        let g = self.geometry.gravity(&r);
        let mut t = stage.time_for((v_d - now.v_mps).norm());
        for _ in 0..5 {
            t = stage.time_for((v_d - now.v_mps - g * t).norm());
        }
        self.v_go = v_d - now.v_mps - g * t;
        self.r_grav = g * (0.5 * t * t);
        self.r_grav_horizon_s = t;
        self.r_bias = Vector3::zeros();
    }

    /// One corrector step from the state `now`: new steering, prediction, velocity miss.
    fn correct(&mut self, now: &GuidanceInput) {
        let before = self.clone();
        self.correct_once(now);
        // A step that leaves numbers behind (a diverging corrector, a spent stage) is undone:
        // the law keeps flying its last finite plan.
        let finite = |v: &Vector3<f64>| v.iter().all(|x| x.is_finite());
        if !(finite(&self.v_go)
            && finite(&self.lambda)
            && finite(&self.lambda_dot)
            && self.t_ref_s.is_finite()
            && self.miss_mps.is_finite())
        {
            *self = before;
            self.miss_mps = 0.0;
        }
    }

    fn correct_once(&mut self, now: &GuidanceInput) {
        let Some(aim) = self.aim else { return };
        let stage = Stage::of(now);
        let l_go = self.v_go.norm().max(1e-6);
        let lambda = self.v_go / l_go;
        let t = stage.time_for(l_go).max(1e-3);
        let (l, j, p) = stage.integrals(t);
        let s_int = t * l - j;
        let q_int = t * j - p;
        let t_lambda = j / l.max(1e-12);
        let scale = if self.r_grav_horizon_s > 0.0 {
            (t / self.r_grav_horizon_s).powi(2)
        } else {
            0.0
        };
        let mut r_go = self.r_d - (now.r_m + now.v_mps * t + self.r_grav * scale) - self.r_bias;
        // Downrange position is free, so its costate vanishes and the downrange component of the
        // primer λ + λ̇τ stays constant (Bryson & Ho §2.4: λ̇·î_z = 0, the linear tangent law).
        // r_go = λ S + λ̇ (Q − S t_λ) then fixes r_go's downrange component at S λ·î_z. (Jaggers'
        // PEG asks λ̇ ⊥ λ instead, λ·r_go = S: a bilinear tangent that costs ~0.5 % of burn time
        // in the flat-Earth check.)
        let iz = self.normal.cross(&self.geometry.up(&self.r_d));
        r_go += iz * (s_int * lambda.dot(&iz) - r_go.dot(&iz));
        let den = q_int - s_int * t_lambda;
        let lambda_dot = if den.abs() > 1e-9 {
            (r_go - lambda * s_int) / den
        } else {
            Vector3::zeros()
        };
        self.lambda = lambda;
        self.lambda_dot = lambda_dot;
        self.t_ref_s = now.t_s + t_lambda;
        self.t_go_s = t;
        self.solved_at_s = now.t_s;
        // Predict the cutoff state under this steering.
        let pr = self.predict(now, &stage, t);
        let r_thrust = pr.r - now.r_m - now.v_mps * t - pr.r_grav;
        self.r_bias = r_thrust - r_go;
        self.r_grav = pr.r_grav;
        self.r_grav_horizon_s = t;
        let (rad, speed, gamma) = desired(&aim, self.geometry.radius(&pr.r));
        self.r_d = self.geometry.point(&pr.r, &self.normal, rad);
        let up = self.geometry.up(&self.r_d);
        let down = self.normal.cross(&up);
        let v_d = (down * gamma.cos() + up * gamma.sin()) * speed;
        let miss = v_d - pr.v;
        self.miss_mps = miss.norm();
        self.v_go += miss;
    }

    /// Integrates the vacuum flight from `now` for `t` s under the current steering (RK4).
    fn predict(&self, now: &GuidanceInput, stage: &Stage, t: f64) -> Prediction {
        let n = ((t / PREDICT_STEP_S).ceil() as usize).clamp(8, 200);
        let h = t / n as f64;
        // State: r, v, r_grav, v_grav; time τ from now.
        type S = [Vector3<f64>; 4];
        let f = |tau: f64, y: &S| -> S {
            let g = self.geometry.gravity(&y[0]);
            let u = unit_or(
                &(self.lambda + self.lambda_dot * (now.t_s + tau - self.t_ref_s)),
                &self.lambda,
            );
            [y[1], u * stage.accel(tau) + g, y[3], g]
        };
        let mut y: S = [now.r_m, now.v_mps, Vector3::zeros(), Vector3::zeros()];
        for k in 0..n {
            let tau = h * k as f64;
            let k1 = f(tau, &y);
            let y2: S = std::array::from_fn(|i| y[i] + k1[i] * (0.5 * h));
            let k2 = f(tau + 0.5 * h, &y2);
            let y3: S = std::array::from_fn(|i| y[i] + k2[i] * (0.5 * h));
            let k3 = f(tau + 0.5 * h, &y3);
            let y4: S = std::array::from_fn(|i| y[i] + k3[i] * h);
            let k4 = f(tau + h, &y4);
            y = std::array::from_fn(|i| y[i] + (k1[i] + (k2[i] + k3[i]) * 2.0 + k4[i]) * (h / 6.0));
        }
        Prediction {
            r: y[0],
            v: y[1],
            r_grav: y[2],
        }
    }

    fn set_plan(&mut self, p: &Plan) {
        self.lambda = p.lambda;
        self.lambda_dot = p.lambda_dot;
        self.t_ref_s = p.t_ref_s;
    }

    /// Time to go of the latest solution, s.
    pub fn time_to_go_s(&self) -> f64 {
        self.t_go_s
    }

    /// Velocity miss of the latest corrector step, m/s.
    pub fn miss_mps(&self) -> f64 {
        self.miss_mps
    }
}

struct Prediction {
    r: Vector3<f64>,
    v: Vector3<f64>,
    r_grav: Vector3<f64>,
}

/// The target as radii (heights on the flat model).
fn aim_of(t: &Target, g: &Geometry) -> Aim {
    // The flat model aims at heights, with the WGS-84 GM in its (unused) vis-viva speeds as
    // before; the round models at radii above their reference radius, with their own GM.
    let (base, mu_m3_s2) = match g {
        Geometry::Round { earth } => (earth.reference_radius_m(), earth.gm_m3_s2()),
        Geometry::Flat { .. } => (0.0, WGS84_GM_M3_S2),
    };
    Aim {
        insertion: match t.insertion {
            Insertion::State {
                alt_m,
                speed_mps,
                flight_path_rad,
            } => Insertion::State {
                alt_m: base + alt_m,
                speed_mps,
                flight_path_rad,
            },
            i => i,
        },
        rp_m: base + t.perigee_alt_m,
        ra_m: base + t.apogee_alt_m,
        mu_m3_s2,
    }
}

/// Desired cutoff (radius or height m, speed m/s, flight-path angle rad) for a cutoff predicted
/// at radius `r_pred`.
fn desired(aim: &Aim, r_pred: f64) -> (f64, f64, f64) {
    let mu = aim.mu_m3_s2;
    let sma = 0.5 * (aim.rp_m + aim.ra_m);
    let vis_viva = |r: f64| (mu * (2.0 / r - 1.0 / sma)).max(0.0).sqrt();
    match aim.insertion {
        Insertion::State {
            alt_m,
            speed_mps,
            flight_path_rad,
        } => (alt_m, speed_mps, flight_path_rad),
        Insertion::Perigee => (aim.rp_m, vis_viva(aim.rp_m), 0.0),
        Insertion::Free => {
            // Anywhere on the orbit: the predicted radius (within the apsides), climbing.
            let r = r_pred.clamp(aim.rp_m, aim.ra_m);
            let v = vis_viva(r);
            // h = √(μ p), p = 2 rp ra/(rp + ra); cos γ = h/(r v).
            let p = 2.0 * aim.rp_m * aim.ra_m / (aim.rp_m + aim.ra_m);
            let cos_g = ((mu * p).sqrt() / (r * v).max(1e-9)).clamp(-1.0, 1.0);
            (r, v, cos_g.acos())
        }
    }
}

impl Guided {
    fn plan_now(&self) -> Plan {
        Plan {
            lambda: self.lambda,
            lambda_dot: self.lambda_dot,
            t_ref_s: self.t_ref_s,
        }
    }
}

impl ActiveLaw for Guided {
    fn direction(&self, t_s: f64, _loc: &Local) -> Vector3<f64> {
        let p = match &self.settings.replay {
            Some(r) if !r.is_empty() => {
                // The plan in force at t: the last one that starts at or before t.
                let k = r.partition_point(|(t0, _)| *t0 <= t_s).saturating_sub(1);
                r[k].1
            }
            _ => self.plan_now(),
        };
        unit_or(&(p.lambda + p.lambda_dot * (t_s - p.t_ref_s)), &p.lambda)
    }

    fn guidance_period_s(&self) -> Option<f64> {
        match self.settings.replay {
            Some(_) => None,
            None => Some(self.settings.cycle_s),
        }
    }

    fn plan(&self) -> Option<Plan> {
        Some(self.plan_now())
    }

    fn next_node_s(&self, t_s: f64) -> Option<f64> {
        // A replayed plan changes at each recorded update: stop the integrator there.
        let r = self.settings.replay.as_ref()?;
        r.iter().map(|(t0, _)| *t0).find(|t0| *t0 > t_s)
    }

    fn update(&mut self, now: &GuidanceInput) {
        if self.aim.is_none() {
            return;
        }
        // Sensed velocity since the last update: Δv − ∫g dt (trapezoid).
        if let Some((t0, r0, v0)) = self.last {
            let dt = now.t_s - t0;
            let g_avg = (self.geometry.gravity(&r0) + self.geometry.gravity(&now.r_m)) * 0.5;
            self.v_go -= (now.v_mps - v0) - g_avg * dt;
        }
        self.last = Some((now.t_s, now.r_m, now.v_mps));
        let remaining = self.t_go_s - (now.t_s - self.solved_at_s);
        if remaining < self.settings.hold_s {
            return;
        }
        for _ in 0..CYCLE_ITERATIONS {
            self.correct(now);
            if self.miss_mps < CONVERGED_MPS {
                break;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plane_normal_has_the_asked_inclination_and_contains_r() {
        // Source: definition of inclination, cos i = n̂·ẑ (any text, e.g. Curtis ch. 4).
        let lat = 28.5f64.to_radians();
        let r = Vector3::new(lat.cos(), 0.0, lat.sin()) * 6.5e6;
        let h = Vector3::new(0.0, -0.3, 1.0); // prograde, northerly motion
        for inc in [30.0f64, 51.6, 97.4] {
            let n = plane_normal(&r, &h, inc.to_radians());
            assert!((n.norm() - 1.0).abs() < 1e-12);
            assert!(n.dot(&r).abs() < 1e-6, "r in the plane");
            assert!((n.z.acos().to_degrees() - inc).abs() < 1e-9, "{inc}");
        }
    }

    #[test]
    fn burn_time_inverts_the_rocket_equation() {
        // Source: Tsiolkovsky, Δv = c ln(m0/m1) (domain brief §3g); above the acceleration limit
        // the thrust acceleration is held, so Δv grows linearly in time.
        let s = Stage {
            mass_kg: 10_000.0,
            thrust_n: 100_000.0,
            ve_mps: 3_000.0,
            propellant_kg: 8_000.0,
            a_max_mps2: f64::INFINITY,
        };
        let t = s.time_for(3_000.0 * (2.0f64).ln());
        // Half the mass burned at 100/3 kg/s: 150 s.
        assert!((t - 150.0).abs() < 1e-9, "{t}");
        // Simpson on 16 intervals: ~1e-6 relative, enough for the corrector (which removes the
        // integrals' errors through its bias terms).
        let (l, _, _) = s.integrals(t);
        assert!((l - 3_000.0 * (2.0f64).ln()).abs() < 1e-2, "{l}");
        let limited = Stage {
            a_max_mps2: 20.0,
            ..s
        };
        // Full thrust until m = 5000 kg (150 s, Δv = c ln 2), then 20 m/s² held.
        let t2 = limited.time_for(3_000.0 * (2.0f64).ln() + 200.0);
        assert!((t2 - 160.0).abs() < 1e-9, "{t2}");
        let (l2, _, _) = limited.integrals(t2);
        assert!(
            (l2 - (3_000.0 * (2.0f64).ln() + 200.0)).abs() < 1e-2,
            "{l2}"
        );
    }
}
