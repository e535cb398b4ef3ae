//! Typed errors at the library boundary. Each message names the input field (as a JSON path such
//! as `vehicle.stages[1].isp_vac_s`) or the time and state where something went wrong.

use thiserror::Error;

/// A problem file that cannot be used.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum ProblemError {
    /// The JSON is malformed or does not match the format (unknown or missing field, wrong type).
    #[error("{path}: {message}")]
    Format {
        /// JSON path of the offending field (`.` for the document).
        path: String,
        /// What is wrong, with line and column.
        message: String,
    },
    /// A value is out of range or inconsistent with another.
    #[error("{field}: {reason}")]
    Invalid {
        /// JSON path of the field.
        field: String,
        /// Why it is rejected.
        reason: String,
    },
}

impl ProblemError {
    /// Shorthand for [`ProblemError::Invalid`].
    pub fn invalid(field: impl Into<String>, reason: impl Into<String>) -> Self {
        ProblemError::Invalid {
            field: field.into(),
            reason: reason.into(),
        }
    }
}

/// Requires `lo < x < hi` (open) or `lo <= x <= hi` (closed) and finite.
pub fn in_range(field: &str, x: f64, lo: f64, hi: f64, closed: bool) -> Result<f64, ProblemError> {
    let ok = x.is_finite()
        && if closed {
            x >= lo && x <= hi
        } else {
            x > lo && x < hi
        };
    if ok {
        Ok(x)
    } else {
        let (a, b) = if closed { ('[', ']') } else { ('(', ')') };
        Err(ProblemError::invalid(
            field,
            format!("{x} is outside the allowed range {a}{lo}, {hi}{b}"),
        ))
    }
}

/// The requested launch cannot reach the inclination by a direct ascent. Not bad input: the
/// command reports it and exits with code 1.
#[derive(Debug, Error, Clone, PartialEq)]
#[error(
    "{field}: {inclination_deg:.3}° cannot be reached by a direct ascent from \
     geocentric latitude {latitude_deg:.3}° (reachable: {latitude_deg:.3}° to \
     {reach_max:.3}°); a plane change of {plane_change_mps:.0} m/s at the target's circular speed \
     would still be needed (upper bound 2·v·sin(Δi/2), not combined with another burn); {hint}",
    reach_max = 180.0 - latitude_deg
)]
pub struct UnreachableInclination {
    /// The field that asks for the inclination (`launch.inclination_deg` or
    /// `target.inclination_deg`).
    pub field: &'static str,
    /// How to fly it anyway.
    pub hint: &'static str,
    /// Requested inclination, degrees.
    pub inclination_deg: f64,
    /// Site geocentric latitude, degrees (absolute value).
    pub latitude_deg: f64,
    /// ΔV of the plane change after a launch into i = |latitude|, m/s.
    pub plane_change_mps: f64,
}
