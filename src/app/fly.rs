//! `fly`: the program as written, flown once, with its report.

use super::outcome::FlightReport;
use super::{check_step, Case, Error};
use crate::core::sim::{self, Flight};

/// Options of a flight.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct FlyOptions {
    /// Record the time history every this many seconds (and at every event), s; `None` (the
    /// default): no history.
    pub record_step_s: Option<f64>,
}

/// A flown program: the report and the flight it came from (events, arcs, history).
#[derive(Debug, Clone)]
pub struct FlyRun {
    /// The `fly --json` document.
    pub report: FlightReport,
    /// The flight itself.
    pub flight: Flight,
}

impl FlyRun {
    /// The vehicle reached orbit.
    pub fn succeeded(&self) -> bool {
        self.report.reached_orbit()
    }
}

/// Flies the program of `case` as written.
///
/// # Errors
/// [`Error::Unreachable`] when the launch asks for an inclination a direct ascent cannot reach;
/// [`Error::Option`] for a spacing that is not a finite number > 0.
pub fn fly(case: &Case, o: &FlyOptions) -> Result<FlyRun, Error> {
    check_step("record_step_s", o.record_step_s)?;
    let p = case.reachable()?;
    let flight = sim::fly(
        p,
        &sim::FlyOptions {
            record_step_s: o.record_step_s,
            initial: None,
        },
    );
    Ok(FlyRun {
        report: FlightReport::new(p, &flight),
        flight,
    })
}
