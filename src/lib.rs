//! # kickturn
//!
//! Ascent pitch-program optimizer: integrates a point-mass ascent over a rotating WGS-84 Earth
//! through the U.S. Standard Atmosphere 1976 and reports the ΔV budget term by term (ideal,
//! gravity, drag, steering, back-pressure, Earth rotation) so that it closes exactly.
//!
//! Layout: [`physics`] (Earth, gravity, atmosphere, orbits, drag), [`vehicle`] and [`steering`]
//! (validated models), [`problem`] (JSON file and validation), [`sim`] (equations of motion, events,
//! the flight driver), [`budget`] (ΔV bookkeeping), [`report`] (text, JSON, CSV), [`cli`].
//!
//! Preliminary design only: not for flight software, range safety or licensing.
#![deny(missing_docs)]
#![deny(clippy::float_cmp)]

pub mod budget;
pub mod cli;
pub mod error;
pub mod optimize;
pub mod physics;
pub mod problem;
pub mod report;
pub mod sim;
pub mod steering;
pub mod study;
pub mod vehicle;
