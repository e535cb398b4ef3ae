//! The application layer: what each command computes, as library functions that take a problem
//! ([`Case`]) and typed options and return typed outcomes.
//!
//! - [`fly`]: fly the program as written ([`fly::FlyRun`]);
//! - [`solve`]: tune the program for the least propellant (or the largest payload), write it back
//!   to the file form and fly it ([`solve::SolveRun`], reserves and margin);
//! - [`study`]: sweeps, comparisons and trade factors built on `solve`, solved in parallel;
//! - [`outcome`]: the rules that judge a flight (orbit status, insertion tolerance) and the
//!   [`outcome::FlightReport`] every renderer starts from.
//!
//! Owns the outcome rules; owns no equation (those are in [`crate::core`]) and no formatting (in
//! [`crate::render`]). Never prints, exits or touches a file: progress goes to an
//! [`Observer`](crate::core::observe::Observer), results come back as values, and each outcome
//! says whether it succeeded (the command line maps that to an exit code).

pub mod dispersions;
pub mod fly;
pub mod outcome;
pub mod solve;
pub mod study;

use crate::core::error::{ProblemError, UnreachableInclination};
use crate::core::optimize::SolveError;
use crate::core::problem::{self, validate, Problem, ProblemFile};

pub use crate::core::observe::{Observer, Silent};

/// The document of a target inclination out of reach (what `--json` prints, and the `info` of
/// the Python package's `UnreachableError`): `message` is the error, `located` the same with the
/// problem's path in front.
pub fn unreachable_document(
    u: &UnreachableInclination,
    message: &str,
    located: &str,
) -> serde_json::Value {
    serde_json::json!({
        "tool": tool_version(),
        "status": "unreachable_inclination",
        "message": message,
        "error": { "kind": "unreachable_inclination", "field": u.field, "message": located },
        "field": u.field,
        "inclination_deg": u.inclination_deg,
        "site_geocentric_latitude_deg": u.latitude_deg,
        "plane_change_mps": u.plane_change_mps,
    })
}

/// Tool name and version, as every document states it.
pub fn tool_version() -> String {
    format!("kickturn {}", env!("CARGO_PKG_VERSION"))
}

/// Why a command could not produce its outcome.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// The problem is malformed or invalid (the message names the field).
    #[error(transparent)]
    Problem(#[from] ProblemError),
    /// The target inclination cannot be reached by a direct ascent from the site. Not bad input:
    /// the command ran and reports that the target is out of reach.
    #[error(transparent)]
    Unreachable(#[from] UnreachableInclination),
    /// The problem cannot be posed to the optimizer (no target, missing controls).
    #[error(transparent)]
    Solve(#[from] SolveError),
    /// The tuned program, written back into the problem file, does not validate.
    #[error("the tuned program does not validate when written back into the problem file: {0}")]
    WriteBack(ProblemError),
    /// An option is out of its range.
    #[error("{option}: {reason}")]
    Option {
        /// Option name as the library spells it (the command line adds its flag).
        option: &'static str,
        /// What is wrong.
        reason: String,
    },
}

impl Error {
    /// True for input the user must correct: everything except an unreachable target and a
    /// tuned program that fails to write back (the tool's failure, not the user's input).
    pub fn is_bad_input(&self) -> bool {
        !matches!(self, Error::Unreachable(_) | Error::WriteBack(_))
    }
}

/// A problem as the application layer takes it: the file form (kept for write-back and studies)
/// and the validated problem.
#[derive(Debug, Clone)]
pub struct Case {
    /// The problem file as parsed.
    pub file: ProblemFile,
    /// The validated problem (with the SHA-256 of the text it came from, when known).
    pub problem: Problem,
    /// Plausibility warnings: values that validate but look like a unit or typing slip (the
    /// command line prints them on stderr; the library never prints).
    pub warnings: Vec<problem::Warning>,
}

impl Case {
    /// Parses and validates problem JSON text; the problem carries the text's SHA-256.
    pub fn from_json(text: &str) -> Result<Case, ProblemError> {
        let file = problem::parse(text)?;
        let mut problem = validate::validate(&file)?;
        problem.input_sha256 = problem::sha256_hex(text.as_bytes());
        let warnings = problem::warning::warnings(&problem);
        Ok(Case {
            file,
            problem,
            warnings,
        })
    }

    /// Validates a problem file mirror (no input hash).
    pub fn from_file(file: ProblemFile) -> Result<Case, ProblemError> {
        let problem = validate::validate(&file)?;
        let warnings = problem::warning::warnings(&problem);
        Ok(Case {
            file,
            problem,
            warnings,
        })
    }

    /// The problem, or why a direct ascent cannot reach its inclination (dog legs allowed by
    /// `launch.allow_dog_leg` pass).
    pub fn reachable(&self) -> Result<&Problem, UnreachableInclination> {
        self.check(self.problem.unreachable_inclination())
    }

    /// [`Self::reachable`] for a solve: a target inclination out of reach of a direct ascent is
    /// refused also when the launch azimuth is given (the optimizer would need a dog leg).
    pub fn target_reachable(&self) -> Result<&Problem, UnreachableInclination> {
        self.check(self.problem.unreachable_target_inclination())
    }

    fn check(
        &self,
        unreachable: Option<UnreachableInclination>,
    ) -> Result<&Problem, UnreachableInclination> {
        match unreachable.filter(|_| !self.problem.allow_dog_leg) {
            Some(u) => Err(u),
            None => Ok(&self.problem),
        }
    }
}

/// Smallest time-history spacing, s (a 1000-s flight then records a million rows at most).
pub const MIN_RECORD_STEP_S: f64 = 1e-3;
/// Largest time-history spacing, s.
pub const MAX_RECORD_STEP_S: f64 = 1e5;

/// Checks that an optional spacing lies in [`MIN_RECORD_STEP_S`, `MAX_RECORD_STEP_S`].
fn check_step(option: &'static str, v: Option<f64>) -> Result<(), Error> {
    check_range(option, v, MIN_RECORD_STEP_S, MAX_RECORD_STEP_S)
}

/// A number as a message shows it: plain, or in exponent form when very small or large.
pub fn show(v: f64) -> String {
    if v != 0.0 && v.is_finite() && !(1e-3..1e7).contains(&v.abs()) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

/// Checks that an optional value lies in [lo, hi] (and is a number).
fn check_range(option: &'static str, v: Option<f64>, lo: f64, hi: f64) -> Result<(), Error> {
    match v {
        Some(s) if !(s >= lo && s <= hi) => Err(Error::Option {
            option,
            reason: format!("must lie in [{lo}, {hi}], got {}", show(s)),
        }),
        _ => Ok(()),
    }
}
