//! Linear tangent steering (Bryson & Ho, *Applied Optimal Control*, 1975, §2.4, from memory): in
//! a flat, uniform-gravity vacuum the optimal pitch obeys `tan θ = tan θ0 − c t`. It is flown in
//! vector form `û ∝ ĥ0 + (tan θ0 − c τ) Û0` with the horizontal ĥ0 and vertical Û0 frozen
//! (inertially) at the arc's start, which never passes through the ±90° singularity of the angle
//! form. An optional out-of-plane term `wτ n̂0` completes the vacuum-optimal vector form
//! `û ∝ λ + λ̇τ` (Jaggers, Powered Explicit Guidance, 1977, from memory) and flies a dog-leg.
//! A later arc may continue the law (same frozen frame, same clock): one law across several
//! upper burns.

use nalgebra::Vector3;

use super::{unit_or, ActiveLaw, ArcStart, Control, LawParam, SteeringLaw};
use crate::core::error::in_range as range;
use crate::core::error::ProblemError;
use crate::core::physics::environment::Local;
use crate::core::problem::file::LinearTangentFile;

/// Linear tangent law parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LinearTangent {
    /// Pitch above the frozen horizontal at the arc's start, rad.
    pub pitch0_rad: f64,
    /// Rate c of the tangent, 1/s.
    pub tan_rate_per_s: f64,
    /// Out-of-plane rate w (yaw), 1/s: `û ∝ ĥ0 + (tan θ0 − cτ)Û0 + wτ n̂0`, n̂0 = ĥ0 × Û0.
    pub yaw_rate_per_s: f64,
    /// Heading of the thrust plane, rad from north; `None`: the launch azimuth on the first arc,
    /// the inertial velocity heading at the arc's start on later arcs.
    pub heading_rad: Option<f64>,
}

impl LinearTangent {
    /// Validates the file form at JSON path `path`.
    pub fn from_file(path: &str, l: &LinearTangentFile) -> Result<Self, ProblemError> {
        let p0 = range(
            &format!("{path}.pitch0_deg"),
            l.pitch0_deg,
            -89.0,
            89.0,
            true,
        )?;
        let c = range(
            &format!("{path}.tan_rate_per_s"),
            l.tan_rate_per_s,
            -1.0,
            1.0,
            true,
        )?;
        let h = l
            .heading_deg
            .map(|h| range(&format!("{path}.heading_deg"), h, -360.0, 360.0, true))
            .transpose()?;
        let w = range(
            &format!("{path}.yaw_rate_per_s"),
            l.yaw_rate_per_s.unwrap_or(0.0),
            -1.0,
            1.0,
            true,
        )?;
        Ok(LinearTangent {
            pitch0_rad: p0.to_radians(),
            tan_rate_per_s: c,
            yaw_rate_per_s: w,
            heading_rad: h.map(f64::to_radians),
        })
    }
}

/// Writes a tunable parameter, in the file's unit, into the file form.
pub fn write_file(l: &mut LinearTangentFile, p: LawParam, u: f64) {
    match p {
        LawParam::Pitch0 => l.pitch0_deg = u,
        LawParam::TanRate => l.tan_rate_per_s = u,
        LawParam::YawRate => l.yaw_rate_per_s = Some(u),
        LawParam::Heading => l.heading_deg = Some(u),
    }
}

impl SteeringLaw for LinearTangent {
    fn file_key(&self) -> &'static str {
        "linear_tangent"
    }

    fn start(&self, s: &ArcStart) -> Box<dyn ActiveLaw> {
        let loc = s.loc;
        let heading = self.heading_rad.unwrap_or_else(|| {
            if s.arc == 0 {
                s.azimuth_rad
            } else {
                s.v_mps.dot(&loc.east).atan2(s.v_mps.dot(&loc.north))
            }
        });
        let (sh, ch) = heading.sin_cos();
        let hor0 = loc.east * sh + loc.north * ch;
        Box::new(Frozen {
            up0: loc.up,
            hor0,
            tan0: self.pitch0_rad.tan(),
            rate_per_s: self.tan_rate_per_s,
            yaw_rate: hor0.cross(&loc.up) * self.yaw_rate_per_s,
            start_s: s.t_s,
        })
    }

    fn shape_params(&self) -> &'static [LawParam] {
        &[LawParam::Pitch0, LawParam::TanRate]
    }

    fn plane_params(&self) -> &'static [LawParam] {
        &[LawParam::Heading, LawParam::YawRate]
    }

    fn controls(&self) -> &'static [Control] {
        &[Control::InPlane, Control::Plane]
    }

    fn is_continuable(&self) -> bool {
        true
    }

    fn get(&self, p: LawParam) -> Option<f64> {
        match p {
            LawParam::Pitch0 => Some(self.pitch0_rad),
            LawParam::TanRate => Some(self.tan_rate_per_s),
            LawParam::Heading => self.heading_rad,
            LawParam::YawRate => Some(self.yaw_rate_per_s),
        }
    }

    fn set(&mut self, p: LawParam, v: f64) {
        match p {
            LawParam::Pitch0 => self.pitch0_rad = v,
            LawParam::TanRate => self.tan_rate_per_s = v,
            LawParam::Heading => self.heading_rad = Some(v),
            LawParam::YawRate => self.yaw_rate_per_s = v,
        }
    }
}

/// "Continue the previous linear tangent law": flies the latest continuable law of an earlier
/// arc; that arc owns the parameters.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Continued;

impl SteeringLaw for Continued {
    fn file_key(&self) -> &'static str {
        "linear_tangent_continued"
    }

    fn start(&self, s: &ArcStart) -> Box<dyn ActiveLaw> {
        // Validation guarantees an earlier law; vertical is only a defensive fallback.
        s.previous
            .and_then(|p| p.continuable())
            .unwrap_or_else(|| Box::new(Vertical))
    }

    fn continues_previous(&self) -> bool {
        true
    }
}

/// The linear tangent law in flight, in the frame frozen at its arc's start.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Frozen {
    /// Frozen vertical (integration frame), unit.
    pub up0: Vector3<f64>,
    /// Frozen horizontal thrust-plane direction, unit.
    pub hor0: Vector3<f64>,
    /// tan θ0.
    pub tan0: f64,
    /// Rate of the tangent, 1/s.
    pub rate_per_s: f64,
    /// Out-of-plane rate times the frozen normal n̂0 = ĥ0 × Û0, 1/s.
    pub yaw_rate: Vector3<f64>,
    /// Arc start, s.
    pub start_s: f64,
}

impl ActiveLaw for Frozen {
    fn direction(&self, t_s: f64, _loc: &Local) -> Vector3<f64> {
        let tau = t_s - self.start_s;
        unit_or(
            &(self.hor0 + self.up0 * (self.tan0 - self.rate_per_s * tau) + self.yaw_rate * tau),
            &self.hor0,
        )
    }

    fn continuable(&self) -> Option<Box<dyn ActiveLaw>> {
        Some(Box::new(*self))
    }
}

/// Along the local vertical (fallback of a continuation with nothing to continue).
#[derive(Debug, Clone, Copy)]
struct Vertical;

impl ActiveLaw for Vertical {
    fn direction(&self, _t_s: f64, loc: &Local) -> Vector3<f64> {
        loc.up
    }
}
