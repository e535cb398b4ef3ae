//! # kickturn
//!
//! Ascent pitch-program optimizer: integrates a point-mass ascent over a rotating WGS-84 Earth
//! through the U.S. Standard Atmosphere 1976 and reports the ΔV budget term by term (ideal,
//! gravity, drag, steering, back-pressure, Earth rotation) so that it closes exactly.
//!
//! Layers, each depending only on those below it (docs/architecture.md):
//! - [`render`]: text, CSV, figures and the HTML page, as pure functions of outcomes;
//! - [`app`]: what each command computes (`fly`, `solve`, `sweep`, `compare`, `trade`) as library
//!   functions with typed options and typed outcomes, and the outcome rules (orbit status, the
//!   insertion tolerance, reserves and margin);
//! - [`core`](mod@crate::core): physics, the problem model, the simulator, the ΔV bookkeeping and
//!   the optimizer.
//!
//! The command line (clap, files, exit codes, progress bars) lives in the binary, not here: the
//! library never prints, exits or touches a file on its own.
//!
//! ```
//! // Fly the bundled medium demo as written and check that it reaches orbit.
//! let text = include_str!("../problems/medium-2stage-leo200.json");
//! let case = kickturn::app::Case::from_json(text).expect("a valid problem");
//! let run = kickturn::app::fly::fly(&case, &Default::default()).expect("a reachable target");
//! assert!(run.succeeded());
//! assert!(run.report.budget.closure_error_mps.abs() < 1e-3);
//! let text_report = kickturn::render::text::render(&run.report);
//! assert!(text_report.contains("ORBIT REACHED"));
//! ```
//!
//! Preliminary design only: not for flight software, range safety or licensing.
#![deny(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod app;
pub mod core;
pub mod render;

// The Python extension module (built by maturin with the `python` feature; pyproject.toml).
#[cfg(feature = "python")]
mod python;

// The core's modules under their short names, for callers and tests.
pub use crate::core::{
    budget, dispersion, error, observe, optimize, physics, problem, random, sim, steering, vehicle,
};
