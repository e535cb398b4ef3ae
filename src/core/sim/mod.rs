//! Flies an ascent program: integrates the point-mass equations arc by arc and segment by
//! segment, stopping exactly at every event (staging, booster separation, jettison, throttle-limit
//! onset, the kick's phases, the α = 0 hand-over, cutoff), and restarting after it.
//!
//! Integrator: Dormand–Prince 5(4) (Hairer, Nørsett & Wanner, *Solving ODEs I*, §II.5) with the
//! problem's `rtol`/`atol`, in `stepper`: `ode_solvers` 0.6.2's `Dopri5` arithmetic without its
//! allocations; or, with `model.integrator: "dop853"`, our own Dormand–Prince 8(5,3) (§II.6;
//! `ode_solvers`' Dop853 mis-evaluates time-dependent right-hand sides, docs/method.md §7); with
//! `model.end_steps_at_corners` a rejected step that crossed a corner of the right-hand side (a
//! drag-table point, an atmosphere layer base) is retried to end on it, and with
//! `model.carry_step_size` each segment starts with the previous one's step size. Nothing is ever integrated
//! across a discontinuity: each segment ends at the next event (time events exactly, state events by
//! root-finding on the dense output) and the next segment restarts from the located state.
//!
//! Owns: the flight sequence and event bookkeeping. Does not own: the physics (`physics`,
//! [`dynamics`]), the ΔV budget arithmetic (`crate::core::budget`), the steering laws
//! (`crate::core::steering`: the driver starts each arc's law and updates it at guidance cycles),
//! or any formatting (`crate::render`).

pub mod dynamics;
pub mod events;
mod flight;
mod record;
mod stepper;

pub use flight::{
    fly, fly_from, fly_recording, ArcKind, ArcRecord, Checkpoint, EndReason, EventKind,
    EventRecord, Extremum, Flight, FlyOptions, InitialState, ResumeAt, SimStats,
};
pub use record::{snapshot, Snapshot};
