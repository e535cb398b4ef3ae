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
//! Preliminary design only: not for flight software, range safety or licensing.
#![deny(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod app;
pub mod core;
pub mod render;

// The core's modules under their short names, for callers and tests.
pub use crate::core::{budget, error, observe, optimize, physics, problem, sim, steering, vehicle};
