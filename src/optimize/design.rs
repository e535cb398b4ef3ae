//! Decision variables of the ascent program: what the optimizer may change, in which units, within
//! which bounds, and how each maps back onto the problem file.

use crate::problem::file::{
    ArcFile, BucketFile, CoastFile, CutoffFile, ProblemFile, RiseEndFile, SteeringFile,
};
use crate::problem::Problem;
use crate::steering::{Arc, CoastEnd, Cutoff, RiseEnd, Steering};

/// One decision variable. Values are SI (radians, seconds, metres) inside the optimizer.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Var {
    /// Kick angle of the liftoff manoeuvre, rad.
    Kick,
    /// Pitch-over rate, rad/s.
    PitchRate,
    /// Vertical-rise duration, s (only for a rise that ends on time).
    RiseTime,
    /// Launch azimuth, rad.
    Azimuth,
    /// Initial pitch of the linear tangent law of arc `usize`, rad.
    Pitch0(usize),
    /// Tangent rate of the law of arc `usize`, 1/s.
    TanRate(usize),
    /// Heading of the law of arc `usize`, rad.
    Heading(usize),
    /// Out-of-plane (yaw) rate of the law of arc `usize`, 1/s.
    YawRate(usize),
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

fn lt_mut(p: &mut Problem, arc: usize) -> Option<&mut crate::steering::LinearTangent> {
    match p.program.arcs.get_mut(arc) {
        Some(Arc::Burn {
            steering: Steering::LinearTangent(lt),
            ..
        }) => Some(lt),
        _ => None,
    }
}

fn lt(p: &Problem, arc: usize) -> Option<&crate::steering::LinearTangent> {
    match p.program.arcs.get(arc) {
        Some(Arc::Burn {
            steering: Steering::LinearTangent(lt),
            ..
        }) => Some(lt),
        _ => None,
    }
}

impl Var {
    /// Scale of one unit of the optimizer's normalized variable, in SI.
    pub fn scale(&self) -> f64 {
        match self {
            Var::Kick | Var::Azimuth | Var::Heading(_) => 1f64.to_radians(),
            Var::PitchRate => 0.1f64.to_radians(),
            Var::RiseTime => 1.0,
            Var::Pitch0(_) => 10f64.to_radians(),
            Var::TanRate(_) | Var::YawRate(_) => 1e-3,
            Var::ApogeeCutoff(_) => 10e3,
            Var::Coast(_) | Var::BucketStart | Var::BucketDuration => 10.0,
            Var::BucketThrottle => 0.1,
            Var::Payload => 100.0,
        }
    }

    /// Bounds (SI).
    pub fn bounds(&self) -> (f64, f64) {
        let d = f64::to_radians;
        match self {
            Var::Kick => (d(0.01), d(45.0)),
            Var::PitchRate => (d(0.05), d(10.0)),
            Var::RiseTime => (1.0, 60.0),
            Var::Azimuth => (d(-720.0), d(720.0)),
            Var::Pitch0(_) => (d(-60.0), d(80.0)),
            Var::TanRate(_) | Var::YawRate(_) => (-0.05, 0.05),
            Var::Heading(_) => (d(-720.0), d(720.0)),
            Var::ApogeeCutoff(_) => (80e3, 1e8),
            Var::Coast(_) => (0.5, 1e5),
            Var::BucketStart => (0.0, 1e4),
            Var::BucketDuration => (1.0, 1e3),
            Var::BucketThrottle => (0.05, 1.0),
            Var::Payload => (0.0, 1e8),
        }
    }

    /// Current value in `p`, SI; `None` when the program has no such parameter.
    pub fn get(&self, p: &Problem) -> Option<f64> {
        let l = p.program.liftoff;
        match *self {
            Var::Kick => l.map(|l| l.kick_rad),
            Var::PitchRate => l.map(|l| l.pitch_rate_rad_s),
            Var::RiseTime => match l.map(|l| l.rise) {
                Some(RiseEnd::Time(t)) => Some(t),
                _ => None,
            },
            Var::Azimuth => Some(p.azimuth_rad),
            Var::Pitch0(a) => lt(p, a).map(|l| l.pitch0_rad),
            Var::TanRate(a) => lt(p, a).map(|l| l.tan_rate_per_s),
            Var::Heading(a) => lt(p, a).and_then(|l| l.heading_rad),
            Var::YawRate(a) => lt(p, a).map(|l| l.yaw_rate_per_s),
            Var::ApogeeCutoff(a) => match p.program.arcs.get(a) {
                Some(Arc::Burn {
                    cutoff: Cutoff::ApogeeAlt(h),
                    ..
                }) => Some(*h),
                _ => None,
            },
            Var::Coast(a) => match p.program.arcs.get(a) {
                Some(Arc::Coast(CoastEnd::Duration(d))) => Some(*d),
                _ => None,
            },
            Var::BucketStart => p.program.bucket.map(|b| b.start_s),
            Var::BucketDuration => p.program.bucket.map(|b| b.duration_s),
            Var::BucketThrottle => p.program.bucket.map(|b| b.throttle),
            Var::Payload => Some(p.vehicle.payload_kg),
        }
    }

    /// Sets the value (SI) in `p`, clamped to the bounds.
    pub fn set(&self, p: &mut Problem, v: f64) {
        let (lo, hi) = self.bounds();
        let v = if v.is_finite() { v.clamp(lo, hi) } else { lo };
        match *self {
            Var::Kick => {
                if let Some(l) = p.program.liftoff.as_mut() {
                    l.kick_rad = v;
                }
            }
            Var::PitchRate => {
                if let Some(l) = p.program.liftoff.as_mut() {
                    l.pitch_rate_rad_s = v;
                }
            }
            Var::RiseTime => {
                if let Some(l) = p.program.liftoff.as_mut() {
                    l.rise = RiseEnd::Time(v);
                }
            }
            Var::Azimuth => p.azimuth_rad = v.rem_euclid(std::f64::consts::TAU),
            Var::Pitch0(a) => {
                if let Some(l) = lt_mut(p, a) {
                    l.pitch0_rad = v;
                }
            }
            Var::TanRate(a) => {
                if let Some(l) = lt_mut(p, a) {
                    l.tan_rate_per_s = v;
                }
            }
            Var::Heading(a) => {
                if let Some(l) = lt_mut(p, a) {
                    l.heading_rad = Some(v);
                }
            }
            Var::YawRate(a) => {
                if let Some(l) = lt_mut(p, a) {
                    l.yaw_rate_per_s = v;
                }
            }
            Var::ApogeeCutoff(a) => {
                if let Some(Arc::Burn { cutoff, .. }) = p.program.arcs.get_mut(a) {
                    *cutoff = Cutoff::ApogeeAlt(v);
                }
            }
            Var::Coast(a) => {
                if let Some(Arc::Coast(c)) = p.program.arcs.get_mut(a) {
                    *c = CoastEnd::Duration(v);
                }
            }
            Var::Payload => p.vehicle.payload_kg = v,
            Var::BucketStart | Var::BucketDuration | Var::BucketThrottle => {
                let min = p.vehicle.stages[0].min_throttle;
                if let Some(b) = p.program.bucket.as_mut() {
                    match *self {
                        Var::BucketStart => b.start_s = v,
                        Var::BucketDuration => b.duration_s = v,
                        _ => b.throttle = v.max(min),
                    }
                }
            }
        }
    }

    /// Name as written in the problem file (JSON path of the field).
    pub fn name(&self) -> String {
        match self {
            Var::Kick => "ascent.liftoff.kick_deg".into(),
            Var::PitchRate => "ascent.liftoff.pitch_rate_deg_s".into(),
            Var::RiseTime => "ascent.liftoff.vertical_rise.time_s".into(),
            Var::Azimuth => "launch.azimuth_deg".into(),
            Var::Pitch0(a) => format!("ascent.arcs[{a}].burn.steering.linear_tangent.pitch0_deg"),
            Var::TanRate(a) => {
                format!("ascent.arcs[{a}].burn.steering.linear_tangent.tan_rate_per_s")
            }
            Var::Heading(a) => format!("ascent.arcs[{a}].burn.steering.linear_tangent.heading_deg"),
            Var::YawRate(a) => {
                format!("ascent.arcs[{a}].burn.steering.linear_tangent.yaw_rate_per_s")
            }
            Var::ApogeeCutoff(a) => format!("ascent.arcs[{a}].burn.cutoff.apogee_alt_km"),
            Var::Coast(a) => format!("ascent.arcs[{a}].coast.duration_s"),
            Var::BucketStart => "ascent.throttle_bucket.start_s".into(),
            Var::BucketDuration => "ascent.throttle_bucket.duration_s".into(),
            Var::BucketThrottle => "ascent.throttle_bucket.throttle".into(),
            Var::Payload => "vehicle.payload_kg".into(),
        }
    }

    /// Value (SI) in the problem file's unit.
    pub fn to_file_unit(&self, v: f64) -> f64 {
        match self {
            Var::Heading(_) => {
                // (−180°, 180°]
                let w = (v.to_degrees() + 180.0).rem_euclid(360.0) - 180.0;
                if w <= -180.0 {
                    180.0
                } else {
                    w
                }
            }
            Var::Kick | Var::PitchRate | Var::Azimuth | Var::Pitch0(_) => v.to_degrees(),
            Var::ApogeeCutoff(_) => v / 1e3,
            Var::RiseTime | Var::TanRate(_) | Var::YawRate(_) | Var::Coast(_) => v,
            Var::BucketStart | Var::BucketDuration | Var::BucketThrottle | Var::Payload => v,
        }
    }

    /// Writes the value (SI) into the problem file mirror.
    pub fn write(&self, f: &mut ProblemFile, v: f64) {
        let u = self.to_file_unit(v);
        match *self {
            Var::Kick => {
                if let Some(l) = f.ascent.liftoff.as_mut() {
                    l.kick_deg = u;
                }
            }
            Var::PitchRate => {
                if let Some(l) = f.ascent.liftoff.as_mut() {
                    l.pitch_rate_deg_s = u;
                }
            }
            Var::RiseTime => {
                if let Some(l) = f.ascent.liftoff.as_mut() {
                    l.vertical_rise = RiseEndFile::TimeS(u);
                }
            }
            Var::Azimuth => {
                f.launch.azimuth_deg = Some(u.rem_euclid(360.0));
                f.launch.inclination_deg = None;
                f.launch.branch = None;
                f.launch.allow_dog_leg = None;
            }
            Var::Pitch0(a) | Var::TanRate(a) | Var::Heading(a) | Var::YawRate(a) => {
                if let Some(ArcFile::Burn(b)) = f.ascent.arcs.get_mut(a) {
                    if let SteeringFile::LinearTangent(l) = &mut b.steering {
                        match *self {
                            Var::Pitch0(_) => l.pitch0_deg = u,
                            Var::TanRate(_) => l.tan_rate_per_s = u,
                            Var::YawRate(_) => l.yaw_rate_per_s = Some(u),
                            _ => l.heading_deg = Some(u),
                        }
                    }
                }
            }
            Var::ApogeeCutoff(a) => {
                if let Some(ArcFile::Burn(b)) = f.ascent.arcs.get_mut(a) {
                    b.cutoff = Some(CutoffFile::ApogeeAltKm(u));
                }
            }
            Var::Coast(a) => {
                if let Some(ArcFile::Coast(c)) = f.ascent.arcs.get_mut(a) {
                    *c = CoastFile::DurationS(u);
                }
            }
            Var::Payload => f.vehicle.payload_kg = u,
            Var::BucketStart | Var::BucketDuration | Var::BucketThrottle => {
                let b = f.ascent.throttle_bucket.get_or_insert(BucketFile {
                    start_s: 0.0,
                    duration_s: 1.0,
                    throttle: 1.0,
                });
                match *self {
                    Var::BucketStart => b.start_s = u,
                    Var::BucketDuration => b.duration_s = u,
                    _ => b.throttle = u,
                }
            }
        }
    }
}
