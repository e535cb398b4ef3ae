//! Tabulated pitch against time since liftoff, in the launch-azimuth plane ([`PitchTable`]), or
//! pitch and heading ([`AttitudeTable`], what `solve --refine` writes): linear between nodes,
//! held beyond the ends. The simulator stops at every node (the direction has a kink there).

use nalgebra::Vector3;

use super::{pitch_heading_dir, ActiveLaw, ArcStart, SteeringLaw};
use crate::core::error::ProblemError;
use crate::core::physics::environment::Local;

/// Most nodes in a pitch table (every node ends a segment of the flight).
pub const MAX_NODES: usize = 2000;

/// Pitch against time since liftoff, linear between nodes, held beyond the ends.
#[derive(Debug, Clone, PartialEq)]
pub struct PitchTable {
    /// Node times, s, strictly increasing.
    pub t_s: Vec<f64>,
    /// Pitch at the nodes, rad.
    pub pitch_rad: Vec<f64>,
}

impl PitchTable {
    /// Pitch at time `t_s`, rad.
    pub fn pitch_rad(&self, t_s: f64) -> f64 {
        let n = self.t_s.len();
        if n == 0 {
            return std::f64::consts::FRAC_PI_2;
        }
        if t_s <= self.t_s[0] {
            return self.pitch_rad[0];
        }
        for i in 1..n {
            if t_s <= self.t_s[i] {
                let f = (t_s - self.t_s[i - 1]) / (self.t_s[i] - self.t_s[i - 1]);
                return self.pitch_rad[i - 1] + f * (self.pitch_rad[i] - self.pitch_rad[i - 1]);
            }
        }
        self.pitch_rad[n - 1]
    }

    /// Validates `[time_s, pitch_deg]` pairs at JSON path `path`.
    pub fn from_file(path: &str, pts: &[[f64; 2]]) -> Result<PitchTable, ProblemError> {
        let max = MAX_NODES;
        if pts.len() > max {
            return Err(ProblemError::invalid(
                path,
                format!(
                    "{} nodes; at most {max} (every node ends a segment of the flight)",
                    pts.len()
                ),
            ));
        }
        if pts.is_empty() {
            return Err(ProblemError::invalid(
                path,
                "needs at least one [time_s, pitch_deg] pair",
            ));
        }
        for (i, p) in pts.iter().enumerate() {
            let fp = format!("{path}[{i}]");
            crate::core::error::in_range(&fp, p[0], 0.0, 1e5, true)?;
            crate::core::error::in_range(&fp, p[1], -90.0, 90.0, true)?;
            if i > 0 && p[0] <= pts[i - 1][0] {
                return Err(ProblemError::invalid(
                    fp,
                    "times must be strictly increasing",
                ));
            }
        }
        Ok(PitchTable {
            t_s: pts.iter().map(|p| p[0]).collect(),
            pitch_rad: pts.iter().map(|p| p[1].to_radians()).collect(),
        })
    }
}

impl SteeringLaw for PitchTable {
    fn file_key(&self) -> &'static str {
        "pitch_table"
    }

    fn start(&self, s: &ArcStart) -> Box<dyn ActiveLaw> {
        Box::new(ActiveTable {
            table: self.clone(),
            heading_rad: s.azimuth_rad,
        })
    }
}

/// A pitch table in flight, in the launch-azimuth plane.
#[derive(Debug, Clone)]
struct ActiveTable {
    table: PitchTable,
    heading_rad: f64,
}

impl ActiveLaw for ActiveTable {
    fn direction(&self, t_s: f64, loc: &Local) -> Vector3<f64> {
        pitch_heading_dir(loc, self.table.pitch_rad(t_s), self.heading_rad)
    }

    fn next_node_s(&self, t_s: f64) -> Option<f64> {
        self.table.t_s.iter().find(|t| **t > t_s).copied()
    }
}

/// Pitch above the local horizontal and heading (clockwise from north) against time since
/// liftoff, each linear between nodes and held beyond the ends: a free thrust direction (the
/// form `solve --refine` writes).
#[derive(Debug, Clone, PartialEq)]
pub struct AttitudeTable {
    /// Pitch against time.
    pub pitch: PitchTable,
    /// Heading at the same nodes, rad.
    pub heading_rad: Vec<f64>,
}

impl AttitudeTable {
    /// Heading at time `t_s`, rad.
    pub fn heading_rad(&self, t_s: f64) -> f64 {
        interpolate(&self.pitch.t_s, &self.heading_rad, t_s)
    }

    /// Validates `[time_s, pitch_deg, heading_deg]` triples at JSON path `path`.
    pub fn from_file(path: &str, pts: &[[f64; 3]]) -> Result<AttitudeTable, ProblemError> {
        let pairs: Vec<[f64; 2]> = pts.iter().map(|p| [p[0], p[1]]).collect();
        let pitch = PitchTable::from_file(path, &pairs)?;
        for (i, p) in pts.iter().enumerate() {
            crate::core::error::in_range(&format!("{path}[{i}]"), p[2], -360.0, 360.0, true)?;
        }
        Ok(AttitudeTable {
            pitch,
            heading_rad: pts.iter().map(|p| p[2].to_radians()).collect(),
        })
    }

    /// The file form: `[time_s, pitch_deg, heading_deg]` triples.
    pub fn to_file(&self) -> Vec<[f64; 3]> {
        self.pitch
            .t_s
            .iter()
            .zip(&self.pitch.pitch_rad)
            .zip(&self.heading_rad)
            .map(|((t, p), h)| [*t, p.to_degrees(), h.to_degrees()])
            .collect()
    }
}

/// Linear interpolation of `y` over strictly increasing `x`, held beyond the ends.
fn interpolate(x: &[f64], y: &[f64], at: f64) -> f64 {
    let n = x.len().min(y.len());
    if n == 0 {
        return 0.0;
    }
    if at <= x[0] {
        return y[0];
    }
    let i = x[..n].partition_point(|v| *v < at);
    if i >= n {
        return y[n - 1];
    }
    let f = (at - x[i - 1]) / (x[i] - x[i - 1]);
    y[i - 1] + f * (y[i] - y[i - 1])
}

impl SteeringLaw for AttitudeTable {
    fn file_key(&self) -> &'static str {
        "attitude_table"
    }

    fn start(&self, _s: &ArcStart) -> Box<dyn ActiveLaw> {
        Box::new(ActiveAttitude(self.clone()))
    }
}

/// An attitude table in flight.
#[derive(Debug, Clone)]
struct ActiveAttitude(AttitudeTable);

impl ActiveLaw for ActiveAttitude {
    fn direction(&self, t_s: f64, loc: &Local) -> Vector3<f64> {
        let t = &self.0;
        pitch_heading_dir(
            loc,
            interpolate(&t.pitch.t_s, &t.pitch.pitch_rad, t_s),
            interpolate(&t.pitch.t_s, &t.heading_rad, t_s),
        )
    }

    fn next_node_s(&self, t_s: f64) -> Option<f64> {
        self.0.pitch.t_s.iter().find(|t| **t > t_s).copied()
    }
}
