//! Steering laws and the ascent program: vertical rise, pitch-over to a kick angle, attitude hold,
//! zero-angle-of-attack gravity turn, linear tangent steering, tabulated pitch, coasts, cutoffs.
//!
//! Thrust direction in the local frame (pitch θ above the local horizontal, heading ψ clockwise
//! from north): `û = cos θ (sin ψ Ê + cos ψ N̂) + sin θ Û`.
//!
//! Linear tangent law (Bryson & Ho, *Applied Optimal Control*, 1975, §2.4, from memory): in a flat,
//! uniform-gravity vacuum the optimal pitch obeys `tan θ = tan θ0 − c t`. It is flown in vector form
//! `û ∝ ĥ0 + (tan θ0 − c τ) Û0` with the horizontal ĥ0 and vertical Û0 frozen (inertially) at the
//! arc's start, which never passes through the ±90° singularity of the angle form. An optional
//! out-of-plane term `wτ n̂0` completes the vacuum-optimal vector form `û ∝ λ + λ̇τ` (Jaggers,
//! Powered Explicit Guidance, 1977, from memory) and flies a dog-leg.

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
    /// Pitch-over rate, rad/s (> 0).
    pub pitch_rate_rad_s: f64,
    /// Kick angle from the vertical, rad (≥ 0).
    pub kick_rad: f64,
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
}

/// Steering law of a burn arc.
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
