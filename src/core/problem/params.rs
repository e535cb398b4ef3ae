//! The registry of a problem's variable parameters: every quantity that the optimizer tunes, a
//! sweep varies or a trade factor perturbs (and, next, a dispersion draws), as one typed path
//! ([`Param`]) with its JSON path ([`Param::name`]), file unit, scale and bounds, a getter and
//! setter on the validated [`Problem`] (SI) and a write-back into the [`ProblemFile`].
//!
//! The optimizer sets values on the validated problem; studies write the file form and validate
//! it again, so that derived quantities (the launch azimuth from an inclination, mass flows from
//! thrust and Isp) follow. Values are SI (radians, seconds, metres, kilograms, newtons) except in
//! the file, which keeps its own units (degrees, kilometres).

use crate::core::problem::file::{
    ArcFile, BucketFile, CoastFile, CutoffFile, ProblemFile, RiseEndFile,
};
use crate::core::problem::Problem;
use crate::core::steering::{Arc, CoastEnd, Cutoff, LawParam, RiseEnd, Steering, SteeringLaw};

/// One variable parameter of a problem. Values are SI (radians, seconds, metres, kilograms).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Param {
    /// Dry mass of stage `usize`, kg.
    DryMass(usize),
    /// Propellant loaded in stage `usize`, kg.
    Propellant(usize),
    /// Vacuum specific impulse of stage `usize`, s.
    IspVac(usize),
    /// Vacuum thrust of stage `usize`, N. Sea-level thrust and exit area scale with it (the same
    /// nozzle, more engines).
    ThrustVac(usize),
    /// Target inclination, rad; in the file the launch then follows it (`launch.inclination_deg`).
    TargetInclination,
    /// Circular target altitude (perigee and apogee together), m.
    CircularAltitude,
    /// Factor on every drag coefficient of every configuration (1: as written). The file has no
    /// such field: writing it multiplies the written C_D tables (twice compounds).
    DragScale,
    /// Kick angle of the liftoff manoeuvre, rad.
    Kick,
    /// Pitch-over rate, rad/s.
    PitchRate,
    /// Vertical-rise duration, s (only for a rise that ends on time).
    RiseTime,
    /// Launch azimuth, rad.
    Azimuth,
    /// A tunable parameter of the steering law of an arc (declared by the law).
    Law {
        /// Arc index.
        arc: usize,
        /// The law's key in the problem file (`linear_tangent`).
        law: &'static str,
        /// Which parameter.
        param: LawParam,
    },
    /// Apogee-altitude cutoff value of arc `usize`, m.
    ApogeeCutoff(usize),
    /// Duration of coast arc `usize`, s.
    Coast(usize),
    /// Throttle bucket start, s after liftoff.
    BucketStart,
    /// Throttle bucket duration, s.
    BucketDuration,
    /// Throttle inside the bucket (fraction of full thrust).
    BucketThrottle,
    /// Payload mass, kg.
    Payload,
}

fn law(p: &Problem, arc: usize) -> Option<&dyn SteeringLaw> {
    match p.program.arcs.get(arc) {
        Some(Arc::Burn { steering, .. }) => Some(steering.law()),
        _ => None,
    }
}

fn law_mut(p: &mut Problem, arc: usize) -> Option<&mut dyn SteeringLaw> {
    match p.program.arcs.get_mut(arc) {
        Some(Arc::Burn { steering, .. }) => steering.law_mut(),
        _ => None,
    }
}

impl Param {
    /// Scale of one unit of the optimizer's normalized variable, in SI.
    pub fn scale(&self) -> f64 {
        match self {
            Param::DryMass(_) | Param::Propellant(_) => 100.0,
            Param::IspVac(_) => 1.0,
            Param::ThrustVac(_) => 1e4,
            Param::TargetInclination => 1f64.to_radians(),
            Param::CircularAltitude => 10e3,
            Param::DragScale => 0.01,
            Param::Kick | Param::Azimuth => 1f64.to_radians(),
            Param::Law { param, .. } => param.scale(),
            Param::PitchRate => 0.1f64.to_radians(),
            Param::RiseTime => 1.0,
            Param::ApogeeCutoff(_) => 10e3,
            Param::Coast(_) | Param::BucketStart | Param::BucketDuration => 10.0,
            Param::BucketThrottle => 0.1,
            Param::Payload => 100.0,
        }
    }

    /// Bounds (SI).
    pub fn bounds(&self) -> (f64, f64) {
        let d = f64::to_radians;
        match self {
            Param::DryMass(_) | Param::Propellant(_) => (0.0, 1e9),
            Param::IspVac(_) => (1.0, 1e4),
            Param::ThrustVac(_) => (0.0, 1e11),
            Param::TargetInclination => (0.0, d(180.0)),
            Param::CircularAltitude => (0.0, 1e9),
            Param::DragScale => (0.0, 100.0),
            Param::Kick => (d(0.01), d(45.0)),
            Param::PitchRate => (d(0.05), d(10.0)),
            Param::RiseTime => (1.0, 60.0),
            Param::Azimuth => (d(-720.0), d(720.0)),
            Param::Law { param, .. } => param.bounds(),
            Param::ApogeeCutoff(_) => (80e3, 1e8),
            Param::Coast(_) => (0.5, 1e5),
            Param::BucketStart => (0.0, 1e4),
            Param::BucketDuration => (1.0, 1e3),
            Param::BucketThrottle => (0.05, 1.0),
            Param::Payload => (0.0, 1e8),
        }
    }

    /// Current value in `p`, SI; `None` when the program has no such parameter.
    pub fn get(&self, p: &Problem) -> Option<f64> {
        let l = p.program.liftoff;
        let stage = |i: usize| p.vehicle.stages.get(i);
        match *self {
            Param::DryMass(i) => stage(i).map(|s| s.dry_mass_kg),
            Param::Propellant(i) => stage(i).map(|s| s.propellant_kg),
            Param::IspVac(i) => stage(i).map(|s| s.engine.isp_vac_s),
            Param::ThrustVac(i) => stage(i).map(|s| s.engine.thrust_vac_n),
            Param::TargetInclination => p.target.and_then(|t| t.inclination_rad),
            Param::CircularAltitude => p
                .target
                .filter(|t| (t.perigee_alt_m - t.apogee_alt_m).abs() < 1e-9)
                .map(|t| t.perigee_alt_m),
            Param::DragScale => stage(0).map(|s| s.aero.cd_scale),
            Param::Kick => l.map(|l| l.kick_rad),
            Param::PitchRate => l.map(|l| l.rate_rad_s()),
            Param::RiseTime => match l.map(|l| l.rise) {
                Some(RiseEnd::Time(t)) => Some(t),
                _ => None,
            },
            Param::Azimuth => Some(p.azimuth_rad),
            Param::Law { arc, param, .. } => law(p, arc).and_then(|l| l.get(param)),
            Param::ApogeeCutoff(a) => match p.program.arcs.get(a) {
                Some(Arc::Burn {
                    cutoff: Cutoff::ApogeeAlt(h),
                    ..
                }) => Some(*h),
                _ => None,
            },
            Param::Coast(a) => match p.program.arcs.get(a) {
                Some(Arc::Coast(CoastEnd::Duration(d))) => Some(*d),
                _ => None,
            },
            Param::BucketStart => p.program.bucket.map(|b| b.start_s),
            Param::BucketDuration => p.program.bucket.map(|b| b.duration_s),
            Param::BucketThrottle => p.program.bucket.map(|b| b.throttle),
            Param::Payload => Some(p.vehicle.payload_kg),
        }
    }

    /// Sets the value (SI) in `p`, clamped to the bounds.
    pub fn set(&self, p: &mut Problem, v: f64) {
        let (lo, hi) = self.bounds();
        let v = if v.is_finite() { v.clamp(lo, hi) } else { lo };
        match *self {
            Param::DryMass(i) | Param::Propellant(i) | Param::IspVac(i) | Param::ThrustVac(i) => {
                if let Some(s) = p.vehicle.stages.get_mut(i) {
                    match *self {
                        Param::DryMass(_) => s.dry_mass_kg = v,
                        Param::Propellant(_) => s.propellant_kg = v,
                        Param::IspVac(_) => s.engine.isp_vac_s = v,
                        _ => {
                            let k = v / s.engine.thrust_vac_n;
                            s.engine.thrust_vac_n = v;
                            s.engine.exit_area_m2 *= k;
                        }
                    }
                }
            }
            // The launch azimuth is derived at validation: write the file and validate again to
            // fly the new plane.
            Param::TargetInclination => {
                if let Some(t) = p.target.as_mut() {
                    t.inclination_rad = Some(v);
                }
            }
            Param::CircularAltitude => {
                if let Some(t) = p.target.as_mut() {
                    t.perigee_alt_m = v;
                    t.apogee_alt_m = v;
                }
            }
            Param::DragScale => {
                let v_ = &mut p.vehicle;
                v_.stages.iter_mut().for_each(|s| s.aero.cd_scale = v);
                if let Some(b) = v_.boosters.as_mut() {
                    b.aero.cd_scale = v;
                }
            }
            Param::Kick => {
                if let Some(l) = p.program.liftoff.as_mut() {
                    l.kick_rad = v;
                }
            }
            Param::PitchRate => {
                if let Some(l) = p.program.liftoff.as_mut() {
                    // A tuned rate replaces a pitch-over given by its duration.
                    l.pitch_rate_rad_s = v;
                    l.pitch_over_s = None;
                }
            }
            Param::RiseTime => {
                if let Some(l) = p.program.liftoff.as_mut() {
                    l.rise = RiseEnd::Time(v);
                }
            }
            Param::Azimuth => p.azimuth_rad = v.rem_euclid(std::f64::consts::TAU),
            Param::Law { arc, param, .. } => {
                if let Some(l) = law_mut(p, arc) {
                    l.set(param, v);
                }
            }
            Param::ApogeeCutoff(a) => {
                if let Some(Arc::Burn { cutoff, .. }) = p.program.arcs.get_mut(a) {
                    *cutoff = Cutoff::ApogeeAlt(v);
                }
            }
            Param::Coast(a) => {
                if let Some(Arc::Coast(c)) = p.program.arcs.get_mut(a) {
                    *c = CoastEnd::Duration(v);
                }
            }
            Param::Payload => p.vehicle.payload_kg = v,
            Param::BucketStart | Param::BucketDuration | Param::BucketThrottle => {
                let min = p.vehicle.stages[0].min_throttle;
                if let Some(b) = p.program.bucket.as_mut() {
                    match *self {
                        Param::BucketStart => b.start_s = v,
                        Param::BucketDuration => b.duration_s = v,
                        _ => b.throttle = v.max(min),
                    }
                }
            }
        }
    }

    /// Name as written in the problem file (JSON path of the field).
    pub fn name(&self) -> String {
        match self {
            Param::DryMass(i) => format!("vehicle.stages[{i}].dry_mass_kg"),
            Param::Propellant(i) => format!("vehicle.stages[{i}].propellant_kg"),
            Param::IspVac(i) => format!("vehicle.stages[{i}].isp_vac_s"),
            Param::ThrustVac(i) => format!("vehicle.stages[{i}].thrust_vac_n"),
            Param::TargetInclination => "target.inclination_deg".into(),
            Param::CircularAltitude => "target.perigee_alt_km".into(),
            Param::DragScale => "vehicle.*.aero.cd_mach (scale)".into(),
            Param::Kick => "ascent.liftoff.kick_deg".into(),
            Param::PitchRate => "ascent.liftoff.pitch_rate_deg_s".into(),
            Param::RiseTime => "ascent.liftoff.vertical_rise.time_s".into(),
            Param::Azimuth => "launch.azimuth_deg".into(),
            Param::Law { arc, law, param } => {
                format!(
                    "ascent.arcs[{arc}].burn.steering.{law}.{}",
                    param.file_key()
                )
            }
            Param::ApogeeCutoff(a) => format!("ascent.arcs[{a}].burn.cutoff.apogee_alt_km"),
            Param::Coast(a) => format!("ascent.arcs[{a}].coast.duration_s"),
            Param::BucketStart => "ascent.throttle_bucket.start_s".into(),
            Param::BucketDuration => "ascent.throttle_bucket.duration_s".into(),
            Param::BucketThrottle => "ascent.throttle_bucket.throttle".into(),
            Param::Payload => "vehicle.payload_kg".into(),
        }
    }

    /// Value (SI) in the problem file's unit.
    pub fn to_file_unit(&self, v: f64) -> f64 {
        match self {
            Param::Law { param, .. } => param.to_file_unit(v),
            Param::Kick | Param::PitchRate | Param::Azimuth | Param::TargetInclination => {
                v.to_degrees()
            }
            Param::ApogeeCutoff(_) | Param::CircularAltitude => v / 1e3,
            Param::DryMass(_)
            | Param::Propellant(_)
            | Param::IspVac(_)
            | Param::ThrustVac(_)
            | Param::DragScale => v,
            Param::RiseTime | Param::Coast(_) => v,
            Param::BucketStart | Param::BucketDuration | Param::BucketThrottle | Param::Payload => {
                v
            }
        }
    }

    /// Value in the problem file's unit, SI (the inverse of [`Param::to_file_unit`]).
    pub fn from_file_unit(&self, u: f64) -> f64 {
        match self {
            Param::Law { param, .. } => param.from_file_unit(u),
            Param::Kick | Param::PitchRate | Param::Azimuth | Param::TargetInclination => {
                u.to_radians()
            }
            Param::ApogeeCutoff(_) | Param::CircularAltitude => u * 1e3,
            _ => u,
        }
    }

    /// Value in the problem file, in the file's unit; `None` when the file does not state it.
    pub fn read_file(&self, f: &ProblemFile) -> Option<f64> {
        let stage = |i: usize| f.vehicle.stages.get(i);
        match *self {
            Param::DryMass(i) => stage(i).map(|s| s.dry_mass_kg),
            Param::Propellant(i) => stage(i).map(|s| s.propellant_kg),
            Param::IspVac(i) => stage(i).map(|s| s.isp_vac_s),
            Param::ThrustVac(i) => stage(i).map(|s| s.thrust_vac_n),
            Param::TargetInclination => f.target.as_ref().and_then(|t| t.inclination_deg),
            Param::CircularAltitude => f
                .target
                .as_ref()
                .filter(|t| t.perigee_alt_km == t.apogee_alt_km)
                .and_then(|t| t.perigee_alt_km),
            Param::Payload => Some(f.vehicle.payload_kg),
            Param::Azimuth => f.launch.azimuth_deg,
            _ => None,
        }
    }

    /// Writes the value (SI) into the problem file mirror.
    pub fn write(&self, f: &mut ProblemFile, v: f64) {
        self.write_file_unit(f, self.to_file_unit(v));
    }

    /// Writes the value, in the file's unit, into the problem file mirror.
    pub fn write_file_unit(&self, f: &mut ProblemFile, u: f64) {
        match *self {
            Param::DryMass(i) | Param::Propellant(i) | Param::IspVac(i) | Param::ThrustVac(i) => {
                if let Some(s) = f.vehicle.stages.get_mut(i) {
                    match *self {
                        Param::DryMass(_) => s.dry_mass_kg = u,
                        Param::Propellant(_) => s.propellant_kg = u,
                        Param::IspVac(_) => s.isp_vac_s = u,
                        _ => {
                            // Sea-level thrust and exit area scale with the vacuum thrust.
                            let k = u / s.thrust_vac_n;
                            s.thrust_vac_n = u;
                            if let Some(t) = s.thrust_sl_n.as_mut() {
                                *t *= k;
                            }
                            if let Some(a) = s.exit_area_m2.as_mut() {
                                *a *= k;
                            }
                        }
                    }
                }
            }
            Param::TargetInclination => {
                f.launch.azimuth_deg = None;
                f.launch.inclination_deg = Some(u);
                if let Some(t) = f.target.as_mut() {
                    t.inclination_deg = Some(u);
                }
            }
            Param::CircularAltitude => {
                if let Some(t) = f.target.as_mut() {
                    t.perigee_alt_km = Some(u);
                    t.apogee_alt_km = Some(u);
                }
            }
            Param::DragScale => {
                let scale = |a: &mut crate::core::problem::file::AeroFile| {
                    a.cd_mach.iter_mut().for_each(|p| p[1] *= u)
                };
                f.vehicle.stages.iter_mut().for_each(|s| scale(&mut s.aero));
                if let Some(b) = f.vehicle.boosters.as_mut() {
                    scale(&mut b.aero);
                }
            }
            Param::Kick => {
                if let Some(l) = f.ascent.liftoff.as_mut() {
                    l.kick_deg = u;
                }
            }
            Param::PitchRate => {
                if let Some(l) = f.ascent.liftoff.as_mut() {
                    l.pitch_rate_deg_s = Some(u);
                    l.pitch_over_s = None;
                }
            }
            Param::RiseTime => {
                if let Some(l) = f.ascent.liftoff.as_mut() {
                    l.vertical_rise = RiseEndFile::TimeS(u);
                }
            }
            Param::Azimuth => {
                f.launch.azimuth_deg = Some(u.rem_euclid(360.0));
                f.launch.inclination_deg = None;
                f.launch.branch = None;
                f.launch.allow_dog_leg = None;
            }
            Param::Law { arc, param, .. } => {
                if let Some(ArcFile::Burn(b)) = f.ascent.arcs.get_mut(arc) {
                    Steering::write_file(&mut b.steering, param, u);
                }
            }
            Param::ApogeeCutoff(a) => {
                if let Some(ArcFile::Burn(b)) = f.ascent.arcs.get_mut(a) {
                    b.cutoff = Some(CutoffFile::ApogeeAltKm(u));
                }
            }
            Param::Coast(a) => {
                if let Some(ArcFile::Coast(c)) = f.ascent.arcs.get_mut(a) {
                    *c = CoastFile::DurationS(u);
                }
            }
            Param::Payload => f.vehicle.payload_kg = u,
            Param::BucketStart | Param::BucketDuration | Param::BucketThrottle => {
                let b = f.ascent.throttle_bucket.get_or_insert(BucketFile {
                    start_s: 0.0,
                    duration_s: 1.0,
                    throttle: 1.0,
                });
                match *self {
                    Param::BucketStart => b.start_s = u,
                    Param::BucketDuration => b.duration_s = u,
                    _ => b.throttle = u,
                }
            }
        }
    }
}
