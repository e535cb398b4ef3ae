//! The numerical core: physics models, the problem model (problem file → validated problem), the
//! vehicle and its ascent program, the simulator, the ΔV bookkeeping and the optimizer.
//!
//! Owns every equation and every number the tool computes. Does not own what a command means
//! (orbit status, insertion tolerance, reserves and margin: [`crate::app`]), how a result looks
//! ([`crate::render`]) or anything about files, terminals or exit codes (the binary). Depends on
//! nothing above it; reports progress only through [`observe::Observer`].

pub mod budget;
pub mod dispersion;
pub mod error;
pub mod observe;
pub mod optimize;
pub mod physics;
pub mod problem;
pub mod random;
pub mod sim;
pub mod steering;
pub mod vehicle;
