//! The flight driver: arcs, segments, events.

use nalgebra::Vector3;
use serde::Serialize;

use super::dynamics::{
    active_aero, axial_accel_mps2, derivative, derivative_keeping, forces, ix, Attitude,
    FlightModel, Forces, Mode, State, Throttle,
};
use super::events::{self, StateEvent};
use super::record::{snapshot, Snapshot};
use super::stepper::{self, DenseOutput, OdeSystem};
use crate::core::physics::earth::G0_MPS2;
use crate::core::physics::environment::{AtmosphereModel, Environment, Local};
use crate::core::problem::{IntegratorMethod, Problem};
use crate::core::steering::gravity_turn::ZeroAlpha;
use crate::core::steering::{ActiveLaw, Arc, ArcStart, CoastEnd, Cutoff, GuidanceInput, RiseEnd};
use crate::core::vehicle::JettisonWhen;

/// Liftoff mass below which the integrator's absolute tolerance scales with the mass, kg.
const ATOL_MASS_REF_KG: f64 = 1e4;
/// Segments allowed in one flight before it is stopped as runaway.
const MAX_SEGMENTS: usize = 10_000;
/// A time event this close to the segment start fires without integrating, s.
const TIME_EPS_S: f64 = 1e-9;

/// A non-pad initial state (checks and continuation).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InitialState {
    /// Start time, s.
    pub t_s: f64,
    /// Position in the integration frame, m.
    pub r_m: Vector3<f64>,
    /// Inertial velocity, m/s.
    pub v_mps: Vector3<f64>,
}

/// Options of one flight.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct FlyOptions {
    /// Record a time history every this many seconds (and at every event); `None`: no history.
    pub record_step_s: Option<f64>,
    /// Start from this state instead of the pad.
    pub initial: Option<InitialState>,
}

/// Why the flight ended.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum EndReason {
    /// The program ran to its end (last cutoff).
    Completed,
    /// The vehicle hit the ground.
    GroundImpact,
    /// The flight-time limit was reached.
    TimeLimit,
    /// A burn arc had no stage left to fire.
    NoStageLeft {
        /// Index of the arc.
        arc: usize,
    },
    /// The integrator could not proceed.
    IntegrationFailure {
        /// What the integrator reported, with the time.
        message: String,
    },
    /// Too many events (runaway event sequence).
    EventLimit,
}

/// What happened at an event.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum EventKind {
    /// Liftoff (or start of the flight).
    Liftoff,
    /// End of the vertical rise.
    PitchOverStart,
    /// Pitch-over complete; attitude held.
    PitchOverEnd,
    /// Earth-relative velocity turned to the held attitude: zero-α gravity turn begins.
    GravityTurnStart,
    /// Throttle bucket begins.
    BucketStart,
    /// Throttle bucket ends.
    BucketEnd,
    /// Axial-acceleration limit reached: throttling down.
    AccelLimitOnset,
    /// Limit-holding throttle reached the stage minimum.
    MinThrottle,
    /// Strap-on boosters burn out and separate.
    BoosterSeparation,
    /// Stage propellant depleted (and stage separated if another follows).
    Burnout,
    /// Ignition of a burn arc.
    Ignition,
    /// Commanded cutoff.
    Cutoff,
    /// Mass jettisoned.
    Jettison,
    /// End of a timed coast.
    CoastEnd,
    /// Apogee reached at the end of a coast.
    Apogee,
    /// Maximum dynamic pressure.
    MaxQ,
    /// Ground impact.
    Impact,
    /// Flight-time limit.
    TimeLimit,
}

/// One event with the flight state at that instant.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EventRecord {
    /// What happened.
    pub kind: EventKind,
    /// Human-readable description.
    pub label: String,
    /// State just before the event's effect.
    #[serde(flatten)]
    pub at: Snapshot,
}

/// Burn or coast.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ArcKind {
    /// Powered.
    Burn,
    /// Unpowered.
    Coast,
}

/// One arc as flown: its boundary states (ΔV integrals included).
#[derive(Debug, Clone, PartialEq)]
pub struct ArcRecord {
    /// Label ("burn 1: Core", "coast 1").
    pub label: String,
    /// Burn or coast.
    pub kind: ArcKind,
    /// Start time, s.
    pub t0_s: f64,
    /// End time, s.
    pub t1_s: f64,
    /// State at the start.
    pub y0: State,
    /// State at the end.
    pub y1: State,
}

/// A maximum along the flight.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Extremum {
    /// The maximum value.
    pub value: f64,
    /// Flight state at the maximum.
    pub at: Snapshot,
}

/// Integrator work.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct SimStats {
    /// Right-hand-side evaluations by the integrator (event location excluded).
    pub rhs_evals: u64,
    /// Accepted steps.
    pub accepted_steps: u64,
    /// Rejected steps.
    pub rejected_steps: u64,
    /// Integration segments.
    pub segments: u64,
}

/// A flown trajectory.
#[derive(Debug, Clone, PartialEq)]
pub struct Flight {
    /// Why it ended.
    pub end: EndReason,
    /// Start time, s.
    pub t0_s: f64,
    /// Initial state.
    pub y0: State,
    /// Final time, s.
    pub t1_s: f64,
    /// Final state.
    pub y1: State,
    /// Mode at the end (for derived quantities).
    pub final_mode: Mode,
    /// Events in time order.
    pub events: Vec<EventRecord>,
    /// Arcs as flown.
    pub arcs: Vec<ArcRecord>,
    /// Maximum dynamic pressure.
    pub max_q: Option<Extremum>,
    /// Maximum dynamic pressure before, inside and after the throttle bucket, Pa (0 for a part
    /// not flown). Each part's maximum is a smooth function of the program where the overall
    /// maximum has a kink (two humps at the same height): the optimizer holds a limit on each.
    pub max_q_by_bucket_pa: [f64; 3],
    /// Maximum sensed axial acceleration, in g0.
    pub max_axial_accel: Option<Extremum>,
    /// Maximum q·α, Pa·deg (dynamic pressure times the total angle of attack of the thrust
    /// axis, while thrusting; `None` when it stays 0).
    pub max_q_alpha: Option<Extremum>,
    /// Propellant left in the current and later stages, kg.
    pub propellant_remaining_kg: f64,
    /// Time of each jettison (vehicle order), s; NaN for one not jettisoned. The optimizer
    /// watches where a conditional jettison crosses an ignition: the propellant has a kink there.
    pub jettison_times_s: Vec<f64>,
    /// Time history (empty unless recorded).
    pub history: Vec<Snapshot>,
    /// Integrator work.
    pub stats: SimStats,
}

/// What a segment stopped on.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Stop {
    State(StateEvent),
    Time(TimeEvent),
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum TimeEvent {
    RiseEnd,
    PitchOverEnd,
    BoosterSeparation,
    BucketStart,
    BucketEnd,
    /// A kink of the active law's direction (a pitch-table node).
    LawNode,
    /// A guidance cycle of a closed-loop law.
    GuidanceCycle,
    Jettison(usize),
    BurnDuration,
    CoastDuration,
    TimeLimit,
}

/// Event bookkeeping carried through the flight.
#[derive(Debug)]
struct Flags {
    jettisoned: Vec<bool>,
    heating_armed: Vec<bool>,
    in_bucket: bool,
    bucket_done: bool,
    stage_spent: bool,
    arc_start_s: f64,
    /// The latest law flown that a later arc may continue.
    last_law: Option<Box<dyn ActiveLaw>>,
    /// Time of the next guidance cycle of a closed-loop law, s.
    next_guidance_s: Option<f64>,
}

impl Clone for Flags {
    /// A copy; the continuable law is copied through [`ActiveLaw::continuable`] (which is how
    /// it was made: a continuable law's copy of itself).
    fn clone(&self) -> Self {
        Flags {
            jettisoned: self.jettisoned.clone(),
            heating_armed: self.heating_armed.clone(),
            in_bucket: self.in_bucket,
            bucket_done: self.bucket_done,
            stage_spent: self.stage_spent,
            arc_start_s: self.arc_start_s,
            last_law: copy_law(self.last_law.as_deref()),
            next_guidance_s: self.next_guidance_s,
        }
    }
}

/// A copy of a continuable law (`None` for none, or for a law that is not continuable).
fn copy_law(law: Option<&dyn ActiveLaw>) -> Option<Box<dyn ActiveLaw>> {
    law.and_then(|l| l.continuable())
}

/// ODE system handed to the integrator; watches state events and extrema after each accepted
/// step.
struct Sys<'a> {
    p: &'a FlightModel<'a>,
    law: &'a dyn ActiveLaw,
    mode: Mode,
    evs: &'a [StateEvent],
    watch: &'a mut Watch,
    /// Report corners of the right-hand side to the integrator (`model.end_steps_at_corners`).
    corners: bool,
}

/// Corner times are located to this, s (on an interpolant good to ~1e-4 s on long steps; the
/// error of straddling a corner by δ grows as δ², and 1e-7 s is far below any tolerance).
const CORNER_TIME_TOL_S: f64 = 1e-7;

/// What the system records during one segment. Kept by the flyer and reused from segment to
/// segment, so that its vectors keep their capacity: no allocation per step.
#[derive(Default)]
struct Watch {
    /// Switching-function values at the latest accepted step, one per state event.
    g_prev: Vec<f64>,
    /// State events whose switching function crossed from negative to ≥ 0.
    fired: Vec<bool>,
    /// (t s, dynamic pressure Pa, sensed axial acceleration g0, q·α Pa·deg) at the segment
    /// start and at each accepted step's end.
    samples: Vec<(f64, f64, f64, f64)>,
    /// Local conditions and forces of the latest end-of-step right-hand-side evaluation
    /// (Dormand–Prince's stage 7, "first same as last"): after an accepted step, those of that
    /// step's end, which the event check and the extrema reuse instead of recomputing.
    last: Option<(Local, Forces)>,
}

/// Dynamic pressure (Pa), sensed axial acceleration (g0) and q·α (Pa·deg: dynamic pressure
/// times the total angle of attack, the angle between the thrust axis and the Earth-relative
/// velocity; 0 off thrust, where the model has no attitude) of forces `f` at mass `m_kg` in local
/// conditions `loc`.
fn q_and_accel_of(f: &Forces, m_kg: f64, loc: &Local) -> (f64, f64, f64) {
    let v = f.speed_rel_mps;
    let q_alpha = if f.thrust_vac_n > 0.0 && v > 0.0 && f.q_pa > 0.0 {
        let c = (f.dir.dot(&loc.v_rel_mps) / (f.dir.norm() * v)).clamp(-1.0, 1.0);
        f.q_pa * c.acos().to_degrees()
    } else {
        0.0
    };
    (f.q_pa, axial_accel_mps2(f, m_kg) / G0_MPS2, q_alpha)
}

/// The two quantities the right-hand side's corners are placed in: altitude (m) and Mach
/// number, at state `y` (the Mach number only when `with_mach`; else 0).
fn corner_coordinates(env: &Environment, y: &State, with_mach: bool) -> (f64, f64) {
    let r = Vector3::new(y[0], y[1], y[2]);
    let alt = env.altitude_m(&r);
    if !with_mach {
        return (alt, 0.0);
    }
    let v = Vector3::new(y[3], y[4], y[5]);
    let v_rel = v - env.omega_rad_s().cross(&r);
    // As `forces` forms it.
    let mach = v_rel.norm() / env.speed_of_sound_mps(alt).max(1e-3);
    (alt, mach)
}

impl OdeSystem for Sys<'_> {
    fn rhs(&mut self, t: f64, y: &State, dy: &mut State, end_of_step: bool) {
        // Keep only the evaluation at a step's candidate end: the one `accepted` will need.
        let keep = if end_of_step {
            Some(&mut self.watch.last)
        } else {
            None
        };
        derivative_keeping(self.p, &self.mode, self.law, t, y, dy, keep);
    }

    fn has_kinks(&self) -> bool {
        self.corners
    }

    /// Corners of the right-hand side: the air's layer bases in altitude (density and speed of
    /// sound change slope there), and the nodes of the active linear drag table in Mach.
    fn kink(
        &mut self,
        t0: f64,
        y0: &State,
        t1: f64,
        y1: &State,
        path: &dyn Fn(f64) -> State,
    ) -> Option<f64> {
        let env = self.p.environment;
        let vacuum = matches!(env.atmosphere, AtmosphereModel::Vacuum);
        let machs = if vacuum {
            &[]
        } else {
            active_aero(self.p, &self.mode).corner_machs()
        };
        let with_mach = !machs.is_empty();
        let (a0, m0) = corner_coordinates(env, y0, with_mach);
        let (a1, m1) = corner_coordinates(env, y1, with_mach);
        let mut first: Option<f64> = None;
        let mut keep = |t: Option<f64>| {
            if let Some(t) = t.filter(|t| stepper::inside_step(*t, t0, t1)) {
                first = Some(first.map_or(t, |f| f.min(t)));
            }
        };
        for &z in env.air_corner_altitudes_m() {
            if (a0 - z) * (a1 - z) < 0.0 {
                keep(events::brent_root(t0, t1, CORNER_TIME_TOL_S, 100, |t| {
                    Some(corner_coordinates(env, &path(t), false).0 - z)
                }));
            }
        }
        for &mk in machs {
            if (m0 - mk) * (m1 - mk) < 0.0 {
                keep(events::brent_root(t0, t1, CORNER_TIME_TOL_S, 100, |t| {
                    Some(corner_coordinates(env, &path(t), true).1 - mk)
                }));
            }
        }
        first
    }

    fn accepted(&mut self, t: f64, y: &State) -> bool {
        let w = &mut *self.watch;
        // The integrator's last end-of-step evaluation was at exactly this (t, y).
        let computed;
        let (loc, f) = match &w.last {
            Some((loc, f)) => (loc, f),
            None => {
                let r = Vector3::new(y[0], y[1], y[2]);
                let v = Vector3::new(y[3], y[4], y[5]);
                let loc = self.p.environment.local(t, &r, &v);
                let f = forces(self.p, &self.mode, self.law, t, y[ix::M], &loc);
                computed = (loc, f);
                (&computed.0, &computed.1)
            }
        };
        let (q, a, qa) = q_and_accel_of(f, y[ix::M], loc);
        w.samples.push((t, q, a, qa));
        let mut any = false;
        for (i, ev) in self.evs.iter().enumerate() {
            let g = events::value_with(self.p, &self.mode, self.law, ev, t, y, loc, Some(f));
            if w.g_prev[i] < 0.0 && g >= 0.0 {
                w.fired[i] = true;
                any = true;
            }
            w.g_prev[i] = g;
        }
        any
    }
}

/// The buffers of a flight, handed from one flight to the next on the same thread, so that a
/// flight allocates nothing for its integration once the thread has flown one like it (the
/// optimizer and the studies fly thousands).
#[derive(Default)]
struct Scratch {
    watch: Watch,
    dense: DenseOutput,
}

/// A dense-output store holding more steps than this (2.6 MB of DP5 steps, 5.8 MB of DP853 ones)
/// is not kept for the next flight:
/// bounds the memory a thread keeps after a pathological flight (the store holds one segment;
/// the demos' longest takes under 200 steps).
const SCRATCH_MAX_STEPS: usize = 4_096;

thread_local! {
    static SCRATCH: std::cell::RefCell<Scratch> = std::cell::RefCell::new(Scratch::default());
}

impl Scratch {
    /// The thread's buffers (empty ones if another flight on this thread holds them, or while
    /// the thread shuts down).
    fn take() -> Scratch {
        SCRATCH
            .try_with(|s| s.try_borrow_mut().map(|mut s| std::mem::take(&mut *s)).ok())
            .ok()
            .flatten()
            .unwrap_or_default()
    }

    /// Leaves the buffers for the thread's next flight.
    fn give_back(self) {
        if self.dense.capacity() > SCRATCH_MAX_STEPS {
            return;
        }
        let _ = SCRATCH.try_with(|s| {
            if let Ok(mut s) = s.try_borrow_mut() {
                *s = self;
            }
        });
    }
}

struct Flyer<'a> {
    p: &'a Problem,
    /// The flight model of `p`.
    m: FlightModel<'a>,
    /// The active steering law of the current burn arc.
    law: Box<dyn ActiveLaw>,
    opts: FlyOptions,
    t: f64,
    y: State,
    mode: Mode,
    flags: Flags,
    out: Flight,
    arc_done: bool,
    ended: Option<EndReason>,
    next_record_s: f64,
    /// The integration recorder, reused by every segment.
    watch: Watch,
    /// The integrator's continuous extension, reused by every segment.
    dense: DenseOutput,
    /// Maxima found whose snapshots are not taken yet ([`MAX_Q`], [`MAX_ACCEL`], [`MAX_Q_ALPHA`]).
    found: [Option<Found>; 3],
    /// The arc being flown.
    cursor: Cursor,
    /// How the current law was started (kept only while recording checkpoints).
    law_start: Option<LawStart>,
    /// The checkpoints asked for ([`fly_recording`]).
    recorder: Option<Recorder>,
    /// The latest time at which anything on the current arc has been computed so far: its
    /// start, and the end time of every integration on it, s ([`ResumeAt`]).
    horizon_s: f64,
    /// The step size the last segment's controller proposed, s (`model.carry_step_size`).
    h_next: Option<f64>,
}

/// The arc being flown and what its record needs at its end.
#[derive(Debug, Clone)]
struct Cursor {
    /// Index of the arc in the program.
    arc: usize,
    /// Burn and coast arcs started so far (for the labels).
    burns: usize,
    coasts: usize,
    /// The arc's start time, s, and state.
    t0_s: f64,
    y0: State,
    /// The arc's label and kind.
    label: String,
    kind: ArcKind,
}

/// What the current arc's law was started from ([`ArcStart`] without the problem's parts), so
/// that a resumed flight can start its own problem's law on this arc exactly as a flight from
/// the pad would have.
#[derive(Debug)]
struct LawStart {
    arc: usize,
    t_s: f64,
    v_mps: Vector3<f64>,
    loc: Local,
    state: GuidanceInput,
    /// The continuable law before this arc started (`ArcStart::previous`).
    previous: Option<Box<dyn ActiveLaw>>,
}

impl Clone for LawStart {
    fn clone(&self) -> Self {
        LawStart {
            previous: copy_law(self.previous.as_deref()),
            ..*self
        }
    }
}

/// Where a flight may be resumed ([`fly_recording`], [`fly_from`]): the last point between two
/// integrations of the flight that lies on an earlier arc than `arc`, or on arc `arc` with
/// nothing on that arc computed after `t_s` so far: the arc's start and every integration on
/// it up to its end time (the next time event; every right-hand side of an integration is
/// evaluated at or before that, even one stopped early by a state event).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ResumeAt {
    /// Index of the program's arc.
    pub arc: usize,
    /// Time, s (`f64::NEG_INFINITY`: before the arc starts).
    pub t_s: f64,
}

impl ResumeAt {
    fn cmp(&self, other: &ResumeAt) -> std::cmp::Ordering {
        self.arc
            .cmp(&other.arc)
            .then(self.t_s.total_cmp(&other.t_s))
    }
}

/// The complete state of a flight between two of its integrations: everything the rest of the
/// flight depends on (time, state vector, mode, event flags, the events, arcs, maxima and work
/// so far, maxima not yet described, the arc being flown and how its law was started). Made by
/// [`fly_recording`], resumed by [`fly_from`].
#[derive(Debug, Clone)]
pub struct Checkpoint {
    opts: FlyOptions,
    t: f64,
    y: State,
    mode: Mode,
    flags: Flags,
    out: Flight,
    arc_done: bool,
    ended: Option<EndReason>,
    next_record_s: f64,
    found: [Option<Found>; 3],
    cursor: Cursor,
    law_start: LawStart,
    shape: Shape,
    horizon_s: f64,
    /// The step size carried into the next segment (`model.carry_step_size`): a resumed flight
    /// starts its next integration with the same step as the uninterrupted one.
    h_next: Option<f64>,
}

/// What a problem must share with the one a checkpoint was taken on for the checkpoint's
/// indices to mean the same things: arcs, stages, jettisons, boosters.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Shape {
    arcs: usize,
    stages: usize,
    jettisons: usize,
    boosters: bool,
}

impl Shape {
    fn of(p: &Problem) -> Shape {
        Shape {
            arcs: p.program.arcs.len(),
            stages: p.vehicle.stages.len(),
            jettisons: p.vehicle.jettisons.len(),
            boosters: p.vehicle.boosters.is_some(),
        }
    }
}

impl Checkpoint {
    /// Time of the checkpoint, s.
    pub fn t_s(&self) -> f64 {
        self.t
    }

    /// Index of the arc being flown at the checkpoint.
    pub fn arc(&self) -> usize {
        self.cursor.arc
    }
}

/// The checkpoints a flight is asked for.
struct Recorder {
    /// The requests in increasing order, each with its index in `out`.
    order: Vec<(ResumeAt, usize)>,
    /// Requests answered (a prefix of `order`).
    done: usize,
    /// The latest checkpoint taken.
    last: Option<std::sync::Arc<Checkpoint>>,
    /// The answers, in the order asked.
    out: Vec<Option<std::sync::Arc<Checkpoint>>>,
}

/// Index of max-Q in [`Flyer::found`].
const MAX_Q: usize = 0;
/// Index of the maximum axial acceleration in [`Flyer::found`].
const MAX_ACCEL: usize = 1;
/// Index of the maximum q·α in [`Flyer::found`].
const MAX_Q_ALPHA: usize = 2;

/// A maximum found on a segment, described (its snapshot taken) later.
#[derive(Debug, Clone, Copy)]
struct Found {
    value: f64,
    t_s: f64,
    y: State,
    mode: Mode,
}

/// Flies the problem's program and returns the trajectory summary.
pub fn fly(p: &Problem, opts: &FlyOptions) -> Flight {
    let mut f = Flyer::new(p, *opts);
    f.run(false);
    f.finish().0
}

/// [`fly`], also returning a checkpoint for each of `at` ([`ResumeAt`]; `None` where the
/// flight has no such point). A checkpoint is only taken between two integrations (where every
/// flight restarts its integrator) and where the law flown keeps no state of its own (no
/// guidance cycles), so that [`fly_from`] continues exactly as this flight did.
pub fn fly_recording(
    p: &Problem,
    opts: &FlyOptions,
    at: &[ResumeAt],
) -> (Flight, Vec<Option<std::sync::Arc<Checkpoint>>>) {
    let mut order: Vec<(ResumeAt, usize)> = at.iter().copied().zip(0..).collect();
    order.sort_by(|a, b| a.0.cmp(&b.0));
    let mut f = Flyer::new(p, *opts);
    f.recorder = Some(Recorder {
        order,
        done: 0,
        last: None,
        out: vec![None; at.len()],
    });
    f.run(false);
    f.finish()
}

/// Flies `p` from checkpoint `from` (taken by [`fly_recording`] on a problem `q`) to its end.
///
/// The result is bit for bit the flight of `p` from the pad ([`fly`]) when `p` flies exactly as
/// `q` up to the checkpoint: the same problem except for the steering of later arcs and of the
/// checkpoint's arc after the time asked for ([`ResumeAt::t_s`]; a table's nodes after it,
/// say). The caller answers for that. (One caveat of round-off: an integration's last step
/// `x + (t_end − x)` lands exactly on `t_end` whenever it starts at or after `t_end/2` (Sterbenz's
/// lemma), which every step does unless one step spans more than half the time since t = 0;
/// otherwise it may end an ulp past `t_end` and see the change there, a difference of order
/// 1e-16 in the direction.) A `p` of another shape (arcs, stages, jettisons, boosters), or with
/// no burn where `q`'s law was started, is flown from the pad.
pub fn fly_from(p: &Problem, from: &Checkpoint) -> Flight {
    let mut f = Flyer::new(p, from.opts);
    if !f.restore(from) {
        return fly(p, &from.opts);
    }
    f.run(true);
    f.finish().0
}

fn initial_state(p: &Problem, opts: &FlyOptions) -> (f64, State) {
    let (t, r, v) = match opts.initial {
        Some(i) => (i.t_s, i.r_m, i.v_mps),
        None => {
            let (r, v) = p.environment.pad_state(&p.site.geodetic);
            (0.0, r, v)
        }
    };
    let mut y = State::zeros();
    y.fixed_rows_mut::<3>(ix::R).copy_from(&r);
    y.fixed_rows_mut::<3>(ix::V).copy_from(&v);
    y[ix::M] = p.vehicle.liftoff_mass_kg();
    (t, y)
}

impl<'a> Flyer<'a> {
    fn new(p: &'a Problem, opts: FlyOptions) -> Self {
        let mut scratch = Scratch::take();
        let (t, y) = initial_state(p, &opts);
        let boosters = p.vehicle.boosters.is_some();
        let booster_mass = p
            .vehicle
            .boosters
            .as_ref()
            .map_or(0.0, |b| b.mass_at_kg(0.0));
        let mode = Mode {
            stage: 0,
            arc: 0,
            thrusting: false,
            boosters_attached: boosters,
            attitude: Attitude::Vertical,
            throttle: Throttle::Fixed(1.0),
            other_mass_kg: y[ix::M] - p.vehicle.stages[0].propellant_kg - booster_mass,
        };
        let n_j = p.vehicle.jettisons.len();
        let out = Flight {
            end: EndReason::Completed,
            t0_s: t,
            y0: y,
            t1_s: t,
            y1: y,
            final_mode: mode,
            events: Vec::new(),
            arcs: Vec::new(),
            max_q: None,
            max_q_by_bucket_pa: [0.0; 3],
            max_axial_accel: None,
            max_q_alpha: None,
            propellant_remaining_kg: 0.0,
            jettison_times_s: vec![f64::NAN; n_j],
            history: Vec::new(),
            stats: SimStats::default(),
        };
        Flyer {
            p,
            m: p.flight_model(),
            law: Box::new(ZeroAlpha),
            opts,
            t,
            y,
            mode,
            flags: Flags {
                jettisoned: vec![false; n_j],
                heating_armed: vec![false; n_j],
                in_bucket: false,
                bucket_done: false,
                stage_spent: false,
                arc_start_s: t,
                last_law: None,
                next_guidance_s: None,
            },
            out,
            arc_done: false,
            ended: None,
            next_record_s: t,
            watch: std::mem::take(&mut scratch.watch),
            dense: std::mem::take(&mut scratch.dense),
            found: [None; 3],
            cursor: Cursor {
                arc: 0,
                burns: 0,
                coasts: 0,
                t0_s: t,
                y0: y,
                label: String::new(),
                kind: ArcKind::Burn,
            },
            law_start: None,
            recorder: None,
            horizon_s: t,
            h_next: None,
        }
    }

    /// Takes up checkpoint `c`'s state, with this problem's law started on the checkpoint's arc
    /// from the same inputs; false when this problem has another shape than the checkpoint's
    /// ([`Shape`]) or no burn there.
    fn restore(&mut self, c: &Checkpoint) -> bool {
        let ls = &c.law_start;
        if c.shape != Shape::of(self.p) {
            return false;
        }
        let Some(Arc::Burn { steering, .. }) = self.p.program.arcs.get(ls.arc) else {
            return false;
        };
        self.law = steering.law().start(&ArcStart {
            arc: ls.arc,
            t_s: ls.t_s,
            v_mps: ls.v_mps,
            loc: &ls.loc,
            azimuth_rad: self.p.azimuth_rad,
            previous: ls.previous.as_deref(),
            state: ls.state,
            environment: &self.p.environment,
            target: self.p.target.as_ref(),
        });
        self.t = c.t;
        self.y = c.y;
        self.mode = c.mode;
        self.flags = c.flags.clone();
        // As `start_law` left it: this law's copy, or the one before when it has none.
        self.flags.last_law = self
            .law
            .continuable()
            .or_else(|| copy_law(ls.previous.as_deref()));
        self.out = c.out.clone();
        self.arc_done = c.arc_done;
        self.ended = c.ended.clone();
        self.next_record_s = c.next_record_s;
        self.found = c.found;
        self.cursor = c.cursor.clone();
        self.horizon_s = c.horizon_s;
        self.h_next = c.h_next;
        true
    }

    /// The flight can be resumed from here: the law keeps no state of its own (no guidance
    /// cycles) and its start is known.
    fn resumable(&self) -> bool {
        self.law.guidance_period_s().is_none() && self.law_start.is_some()
    }

    /// The flight's state now, if it can be resumed from here (see [`fly_recording`]).
    fn checkpoint(&self) -> Option<Checkpoint> {
        if !self.resumable() {
            return None;
        }
        Some(Checkpoint {
            opts: self.opts,
            t: self.t,
            y: self.y,
            mode: self.mode,
            flags: self.flags.clone(),
            out: self.out.clone(),
            arc_done: self.arc_done,
            ended: self.ended.clone(),
            next_record_s: self.next_record_s,
            found: self.found,
            cursor: self.cursor.clone(),
            law_start: self.law_start.clone()?,
            shape: Shape::of(self.p),
            horizon_s: self.horizon_s,
            h_next: self.h_next,
        })
    }

    /// Between two integrations: answers the requests that lie before this point with the
    /// latest checkpoint, and takes a new one if requests remain.
    fn at_boundary(&mut self) {
        let Some(mut rec) = self.recorder.take() else {
            return;
        };
        if rec.done < rec.order.len() && self.resumable() {
            let here = ResumeAt {
                arc: self.cursor.arc,
                t_s: self.horizon_s,
            };
            while let Some(&(at, i)) = rec.order.get(rec.done) {
                if at.cmp(&here).is_ge() {
                    break;
                }
                rec.out[i].clone_from(&rec.last);
                rec.done += 1;
            }
            if rec.done < rec.order.len() {
                rec.last = self.checkpoint().map(std::sync::Arc::new);
            }
        }
        self.recorder = Some(rec);
    }

    fn event(&mut self, kind: EventKind, label: impl Into<String>) {
        let at = snapshot(&self.m, &self.mode, self.law.as_ref(), self.t, &self.y);
        self.out.events.push(EventRecord {
            kind,
            label: label.into(),
            at,
        });
    }

    /// Flies the program's arcs from the cursor's; `resumed`: the cursor's arc has started
    /// already (a flight resumed from a checkpoint).
    fn run(&mut self, resumed: bool) {
        let mut started = resumed;
        while self.cursor.arc < self.p.program.arcs.len() {
            if !started && !self.begin_arc() {
                break;
            }
            started = false;
            while !self.arc_done && self.ended.is_none() {
                self.at_boundary();
                self.segment();
            }
            self.out.arcs.push(ArcRecord {
                label: std::mem::take(&mut self.cursor.label),
                kind: self.cursor.kind,
                t0_s: self.cursor.t0_s,
                t1_s: self.t,
                y0: self.cursor.y0,
                y1: self.y,
            });
            if self.ended.is_some() {
                break;
            }
            self.cursor.arc += 1;
        }
    }

    /// Starts the cursor's arc; false if the flight cannot continue.
    fn begin_arc(&mut self) -> bool {
        let arc_i = self.cursor.arc;
        self.horizon_s = self.t;
        let c = &mut self.cursor;
        (c.t0_s, c.y0) = (self.t, self.y);
        (c.label, c.kind) = match &self.p.program.arcs[arc_i] {
            Arc::Burn { .. } => {
                c.burns += 1;
                let name = &self.p.vehicle.stages[self.mode.stage].name;
                (format!("burn {}: {name}", c.burns), ArcKind::Burn)
            }
            Arc::Coast(_) => {
                c.coasts += 1;
                (format!("coast {}", c.coasts), ArcKind::Coast)
            }
        };
        if !self.start_arc(arc_i) {
            return false;
        }
        if arc_i == 0 {
            // Taken once the first burn has lit its engines, so that the liftoff row shows
            // the throttle and acceleration at release (issue 12: it showed 0.0 and 0.0 g
            // while the history showed 1.0 and 1.30 g).
            self.event(
                EventKind::Liftoff,
                format!("liftoff from {}", self.p.site.name),
            );
        }
        true
    }

    /// Sets the mode for arc `i`; false if the flight cannot continue.
    fn start_arc(&mut self, i: usize) -> bool {
        self.arc_done = false;
        self.flags.arc_start_s = self.t;
        self.flags.next_guidance_s = None;
        self.mode.arc = i;
        match &self.p.program.arcs[i] {
            Arc::Coast(_) => {
                self.mode.thrusting = false;
                self.mode.attitude = Attitude::ZeroAlpha;
                true
            }
            Arc::Burn { steering, .. } => {
                if self.flags.stage_spent {
                    self.ended = Some(EndReason::NoStageLeft { arc: i });
                    return false;
                }
                self.mode.thrusting = true;
                self.mode.throttle = Throttle::Fixed(self.nominal_throttle());
                self.start_law(i, steering.law());
                if i > 0 {
                    let name = self.p.vehicle.stages[self.mode.stage].name.clone();
                    self.event(EventKind::Ignition, format!("ignition: {name}"));
                }
                true
            }
        }
    }

    /// Starts arc `i`'s law; the first arc's gravity turn begins with the liftoff manoeuvre.
    fn start_law(&mut self, i: usize, law: &dyn crate::core::steering::SteeringLaw) {
        let r = Vector3::new(self.y[0], self.y[1], self.y[2]);
        let v = Vector3::new(self.y[3], self.y[4], self.y[5]);
        let loc = self.p.environment.local(self.t, &r, &v);
        let state = self.guidance_input();
        self.describe_maxima();
        self.law = law.start(&ArcStart {
            arc: i,
            t_s: self.t,
            v_mps: v,
            loc: &loc,
            azimuth_rad: self.p.azimuth_rad,
            previous: self.flags.last_law.as_deref(),
            state,
            environment: &self.p.environment,
            target: self.p.target.as_ref(),
        });
        if self.recorder.is_some() {
            self.law_start = Some(LawStart {
                arc: i,
                t_s: self.t,
                v_mps: v,
                loc,
                state,
                previous: copy_law(self.flags.last_law.as_deref()),
            });
        }
        if let Some(c) = self.law.continuable() {
            self.flags.last_law = Some(c);
        }
        self.flags.next_guidance_s = self.law.guidance_period_s().map(|dt| self.t + dt);
        self.mode.attitude = match self.p.program.liftoff.map(|l| l.rise) {
            _ if !(law.starts_with_liftoff() && i == 0 && self.opts.initial.is_none()) => {
                Attitude::Law
            }
            Some(RiseEnd::Time(t)) if t <= 0.0 => self.pitch_over(),
            _ => Attitude::Vertical,
        };
    }

    /// The pitch-over attitude starting now.
    fn pitch_over(&self) -> Attitude {
        Attitude::PitchOver {
            start_s: self.t,
            rate_rad_s: self.p.program.liftoff.map_or(0.0, |l| l.rate_rad_s()),
            heading_rad: self.p.azimuth_rad,
        }
    }

    fn nominal_throttle(&self) -> f64 {
        match (self.flags.in_bucket, self.p.program.bucket) {
            (true, Some(b)) => b.throttle,
            _ => 1.0,
        }
    }

    /// State events active in the current mode.
    fn state_events(&self) -> Vec<StateEvent> {
        let p = self.p;
        let mut evs = vec![StateEvent::Ground(
            p.site.geodetic.altitude_m.min(0.0) - 1.0,
        )];
        if self.mode.thrusting {
            evs.push(StateEvent::Depletion);
            if p.limits.max_axial_accel_mps2.is_some() {
                match self.mode.throttle {
                    Throttle::Fixed(k) if k > p.vehicle.stages[self.mode.stage].min_throttle => {
                        evs.push(StateEvent::AccelLimitOnset)
                    }
                    Throttle::AccelLimit { .. } => evs.push(StateEvent::MinThrottle),
                    _ => {}
                }
            }
        }
        match self.mode.attitude {
            Attitude::Vertical => {
                if let Some(RiseEnd::Speed(s)) = p.program.liftoff.map(|l| l.rise) {
                    evs.push(StateEvent::RiseSpeed(s));
                }
            }
            Attitude::Hold { pitch_rad, .. } => evs.push(StateEvent::AlphaZero(pitch_rad)),
            _ => {}
        }
        for (i, j) in p.vehicle.jettisons.iter().enumerate() {
            if self.flags.jettisoned[i] {
                continue;
            }
            match j.when {
                JettisonWhen::Altitude(h) => evs.push(StateEvent::JettisonAltitude(i, h)),
                JettisonWhen::HeatingBelow(q) if self.flags.heating_armed[i] => {
                    evs.push(StateEvent::HeatingFall(i, q))
                }
                JettisonWhen::HeatingBelow(q) => evs.push(StateEvent::HeatingArm(i, q)),
                JettisonWhen::Time(_) => {}
            }
        }
        self.arc_end_events(&mut evs);
        evs
    }

    fn arc_end_events(&self, evs: &mut Vec<StateEvent>) {
        let p = self.p;
        match &p.program.arcs[self.mode.arc] {
            Arc::Burn { cutoff, .. } => match *cutoff {
                Cutoff::TargetOrbit => {
                    if let Some(t) = p.target {
                        evs.push(StateEvent::Energy(t.energy_j_kg(&p.environment)));
                    }
                }
                Cutoff::ApogeeAlt(h) => evs.push(StateEvent::ApogeeRadius(
                    p.environment.reference_radius_m() + h,
                )),
                Cutoff::PerigeeAlt(h) => evs.push(StateEvent::PerigeeRadius(
                    p.environment.reference_radius_m() + h,
                )),
                Cutoff::Depletion | Cutoff::Duration(_) => {}
            },
            Arc::Coast(CoastEnd::ToApogee) => evs.push(StateEvent::Apogee),
            Arc::Coast(CoastEnd::Duration(_)) => {}
        }
    }

    /// Time events pending, with their times.
    fn time_events(&self) -> Vec<(TimeEvent, f64)> {
        let p = self.p;
        let mut tv = vec![(
            TimeEvent::TimeLimit,
            self.out.t0_s + p.integrator.max_flight_time_s,
        )];
        let lift = p.program.liftoff;
        match (self.mode.attitude, lift) {
            (Attitude::Vertical, Some(l)) => {
                if let RiseEnd::Time(t) = l.rise {
                    tv.push((TimeEvent::RiseEnd, t));
                }
            }
            (Attitude::PitchOver { start_s, .. }, Some(l)) => {
                tv.push((TimeEvent::PitchOverEnd, start_s + l.pitch_over_duration_s()))
            }
            (Attitude::Law, _) => {
                if let Some(t) = self.law.next_node_s(self.t + TIME_EPS_S) {
                    tv.push((TimeEvent::LawNode, t));
                }
                if let Some(t) = self.flags.next_guidance_s {
                    tv.push((TimeEvent::GuidanceCycle, t));
                }
            }
            _ => {}
        }
        if let (Some(b), true) = (&p.vehicle.boosters, self.mode.boosters_attached) {
            tv.push((TimeEvent::BoosterSeparation, b.burn_time_s()));
        }
        if let (Some(b), true, 0) = (p.program.bucket, self.mode.thrusting, self.mode.stage) {
            if !self.flags.in_bucket && !self.flags.bucket_done {
                tv.push((TimeEvent::BucketStart, b.start_s));
            } else if self.flags.in_bucket {
                tv.push((TimeEvent::BucketEnd, b.start_s + b.duration_s));
            }
        }
        for (i, j) in p.vehicle.jettisons.iter().enumerate() {
            if let (JettisonWhen::Time(t), false) = (j.when, self.flags.jettisoned[i]) {
                tv.push((TimeEvent::Jettison(i), t));
            }
        }
        let start = self.flags.arc_start_s;
        match &p.program.arcs[self.mode.arc] {
            Arc::Burn {
                cutoff: Cutoff::Duration(d),
                ..
            } => tv.push((TimeEvent::BurnDuration, start + d)),
            Arc::Coast(CoastEnd::Duration(d)) => tv.push((TimeEvent::CoastDuration, start + d)),
            _ => {}
        }
        tv
    }

    /// Integrates to the next event and applies it.
    fn segment(&mut self) {
        self.out.stats.segments += 1;
        if self.out.stats.segments as usize > MAX_SEGMENTS {
            self.ended = Some(EndReason::EventLimit);
            return;
        }
        let evs = self.state_events();
        let tevs = self.time_events();
        let r = Vector3::new(self.y[0], self.y[1], self.y[2]);
        let v = Vector3::new(self.y[3], self.y[4], self.y[5]);
        let loc0 = self.p.environment.local(self.t, &r, &v);
        // Conditions already true at the segment start fire at once.
        for ev in evs.iter().filter(|e| !e.crossing_only()) {
            let g = events::value_at(
                &self.m,
                &self.mode,
                self.law.as_ref(),
                ev,
                self.t,
                &self.y,
                &loc0,
            );
            if g >= 0.0 {
                return self.apply(Stop::State(*ev));
            }
        }
        let (tev, t_end) =
            tevs.iter()
                .copied()
                .fold((TimeEvent::TimeLimit, f64::INFINITY), |a, b| {
                    if b.1 < a.1 {
                        b
                    } else {
                        a
                    }
                });
        if t_end <= self.t + TIME_EPS_S {
            return self.apply(Stop::Time(tev));
        }
        match self.integrate(&evs, t_end, &loc0) {
            Ok(Some(ev)) => self.apply(Stop::State(ev)),
            Ok(None) => {
                self.t = t_end;
                self.apply(Stop::Time(tev))
            }
            Err(message) => self.ended = Some(EndReason::IntegrationFailure { message }),
        }
    }

    /// Integrates from the current state towards `t_end`; returns the state event that stopped it
    /// (state and time already moved to its root) or `None` if `t_end` was reached. `loc0`: the
    /// local conditions at the current state.
    fn integrate(
        &mut self,
        evs: &[StateEvent],
        t_end: f64,
        loc0: &Local,
    ) -> Result<Option<StateEvent>, String> {
        self.horizon_s = self.horizon_s.max(t_end);
        let law = self.law.as_ref();
        let mut w = std::mem::take(&mut self.watch);
        w.g_prev.clear();
        w.g_prev.extend(
            evs.iter()
                .map(|e| events::value_at(&self.m, &self.mode, law, e, self.t, &self.y, loc0)),
        );
        w.fired.clear();
        w.fired.resize(evs.len(), false);
        w.samples.clear();
        let f0 = forces(&self.m, &self.mode, law, self.t, self.y[ix::M], loc0);
        let (q0, a0, qa0) = q_and_accel_of(&f0, self.y[ix::M], loc0);
        w.samples.push((self.t, q0, a0, qa0));
        w.last = None;
        let ig = self.p.integrator;
        // One absolute tolerance serves every state component; for the mass (kg) it would be
        // relatively looser the lighter the vehicle, and a vehicle scaled down ×1e-4 would fly
        // with noise in its propellant that stalls the optimizer. Below 10 t of liftoff mass the
        // tolerance shrinks with the mass, so any vehicle is integrated to the same relative
        // accuracy (heavier ones, all demos included, are unchanged).
        let atol = ig.atol * (self.p.vehicle.liftoff_mass_kg() / ATOL_MASS_REF_KG).min(1.0);
        let mut dense = std::mem::take(&mut self.dense);
        let mut sys = Sys {
            p: &self.m,
            law,
            mode: self.mode,
            evs,
            watch: &mut w,
            corners: ig.end_steps_at_corners,
        };
        let opts = stepper::Options {
            method: match ig.method {
                IntegratorMethod::DormandPrince5 => stepper::Method::DormandPrince5,
                IntegratorMethod::DormandPrince853 => stepper::Method::DormandPrince853,
            },
            rtol: ig.rtol,
            atol,
            h0: self.h_next.filter(|_| ig.carry_step_size),
        };
        let result = stepper::integrate(&mut sys, &opts, self.t, t_end, &self.y, &mut dense);
        self.watch = w;
        let (stats, end) = match result {
            Ok(r) => {
                self.h_next = Some(r.h_next);
                (r.stats, r.end)
            }
            Err(e) => {
                self.dense = dense;
                return Err(self.integration_message(&e.to_string()));
            }
        };
        let (t_last, y_last) = end.unwrap_or((self.t, self.y));
        self.out.stats.rhs_evals += u64::from(stats.num_eval);
        self.out.stats.accepted_steps += u64::from(stats.accepted_steps);
        self.out.stats.rejected_steps += u64::from(stats.rejected_steps);
        let w = &self.watch;
        // Start of the last step: the samples hold the segment start and every step's end.
        let t_prev = w.samples.iter().rev().nth(1).map_or(self.t, |s| s.0);
        if dense.completes_on_demand() && w.fired.iter().any(|f| *f) {
            self.out.stats.rhs_evals += u64::from(complete_dense(
                &self.m, &self.mode, law, &mut dense, t_prev, t_last,
            ));
        }
        let w = &self.watch;
        let stop = evs
            .iter()
            .zip(&w.fired)
            .filter(|(_, f)| **f)
            .map(|(e, _)| {
                (
                    *e,
                    events::locate(&self.m, &self.mode, law, e, &dense, t_prev, t_last),
                )
            })
            .min_by(|a, b| a.1.total_cmp(&b.1));
        let (t_stop, y_stop) = match stop {
            Some((_, t)) => (t, dense.evaluate(t).unwrap_or(y_last)),
            None => (t_last, y_last),
        };
        self.track(&mut dense, t_stop, &y_stop);
        self.dense = dense;
        self.t = t_stop;
        self.y = y_stop;
        Ok(stop.map(|s| s.0))
    }

    fn integration_message(&self, e: &str) -> String {
        let s = snapshot(&self.m, &self.mode, self.law.as_ref(), self.t, &self.y);
        format!(
            "integrator stopped ({e}); segment started at t = {:.3} s, altitude {:.1} km, \
             speed {:.1} m/s, mass {:.1} kg",
            self.t,
            s.altitude_m / 1e3,
            s.speed_inertial_mps,
            s.mass_kg
        )
    }

    /// Max-Q, max acceleration and the time history over the segment just integrated, which
    /// stopped at (`t_stop`, `y_stop`). The samples at the step ends come from the integrator's
    /// own end-of-step evaluations; only the stop and the refinement evaluate anew.
    fn track(&mut self, com: &mut DenseOutput, t_stop: f64, y_stop: &State) {
        let (p, mode, law) = (&self.m, self.mode, self.law.as_ref());
        let w = &mut self.watch;
        let kept = w.samples.partition_point(|s| s.0 < t_stop);
        w.samples.truncate(kept);
        let (q_stop, a_stop, qa_stop) = q_and_accel(p, &mode, law, t_stop, y_stop);
        w.samples.push((t_stop, q_stop, a_stop, qa_stop));
        self.out.stats.rhs_evals += u64::from(self.complete_for_tracking(com, t_stop));
        let com = &*com;
        let (p, law) = (&self.m, self.law.as_ref());
        let qa = |t: f64| com.evaluate(t).map(|y| q_and_accel(p, &mode, law, t, &y));
        // The segment lies in one part of the bucket's timeline (its start and end stop
        // segments); without a bucket every segment is in part 0 and the part's maximum is the
        // overall one, so this costs nothing extra.
        let part = if self.flags.in_bucket {
            1
        } else if self.flags.bucket_done {
            2
        } else {
            0
        };
        let best_q = self.best_value(MAX_Q).unwrap_or(f64::NEG_INFINITY);
        let best_part = self.out.max_q_by_bucket_pa[part];
        let best_a = self.best_value(MAX_ACCEL).unwrap_or(f64::NEG_INFINITY);
        let best_qa = self.best_value(MAX_Q_ALPHA).unwrap_or(0.0);
        let w = &self.watch;
        let q = w
            .samples
            .iter()
            .any(|s| s.1 > best_part)
            .then(|| {
                refine_max(
                    &w.samples,
                    |s| s.1,
                    |t| qa(t).map_or(f64::NEG_INFINITY, |s| s.0),
                )
            })
            .flatten()
            .filter(|(v, _)| *v > best_part);
        let a = w
            .samples
            .iter()
            .any(|s| s.2 > best_a)
            .then(|| {
                refine_max(
                    &w.samples,
                    |s| s.2,
                    |t| qa(t).map_or(f64::NEG_INFINITY, |s| s.1),
                )
            })
            .flatten()
            .filter(|(v, _)| *v > best_a);
        let m = w
            .samples
            .iter()
            .any(|s| s.3 > best_qa)
            .then(|| {
                refine_max(
                    &w.samples,
                    |s| s.3,
                    |t| qa(t).map_or(f64::NEG_INFINITY, |s| s.2),
                )
            })
            .flatten()
            .filter(|(v, _)| *v > best_qa);
        if let Some((v, t)) = q {
            self.out.max_q_by_bucket_pa[part] = v;
            if v > best_q {
                self.found(MAX_Q, v, t, com);
            }
        }
        if let Some((v, t)) = a {
            self.found(MAX_ACCEL, v, t, com);
        }
        if let Some((v, t)) = m {
            self.found(MAX_Q_ALPHA, v, t, com);
        }
        let (p, law) = (&self.m, self.law.as_ref());
        if let Some(dt) = self.opts.record_step_s {
            while self.next_record_s < t_stop {
                if let Some(y) = com.evaluate(self.next_record_s) {
                    self.out
                        .history
                        .push(snapshot(p, &mode, law, self.next_record_s, &y));
                }
                self.next_record_s += dt;
            }
        }
    }

    /// Makes the dense output available where [`Flyer::track`] will interpolate (DP853 forms a
    /// step's coefficients on demand): around the best sample of each quantity that beats its
    /// running maximum, and over the whole segment when a history is recorded. Returns the
    /// right-hand-side evaluations made.
    fn complete_for_tracking(&self, com: &mut DenseOutput, t_stop: f64) -> u32 {
        if !com.completes_on_demand() {
            return 0;
        }
        let samples = &self.watch.samples;
        let part = if self.flags.in_bucket {
            1
        } else if self.flags.bucket_done {
            2
        } else {
            0
        };
        let bests = [
            self.out.max_q_by_bucket_pa[part],
            self.best_value(MAX_ACCEL).unwrap_or(f64::NEG_INFINITY),
            self.best_value(MAX_Q_ALPHA).unwrap_or(0.0),
        ];
        let field = |s: &(f64, f64, f64, f64), i: usize| [s.1, s.2, s.3][i];
        let mut evals = 0;
        for (i, best) in bests.into_iter().enumerate() {
            if samples.iter().any(|s| field(s, i) > best) {
                if let Some((a, b)) = max_bracket(samples, |s| field(s, i)) {
                    evals += complete_dense(&self.m, &self.mode, self.law.as_ref(), com, a, b);
                }
            }
        }
        if self.opts.record_step_s.is_some() && self.next_record_s < t_stop {
            evals += complete_dense(
                &self.m,
                &self.mode,
                self.law.as_ref(),
                com,
                self.next_record_s,
                t_stop,
            );
        }
        evals
    }

    /// The running maximum of tracked quantity `i` ([`MAX_Q`], [`MAX_ACCEL`], [`MAX_Q_ALPHA`]).
    fn best_value(&self, i: usize) -> Option<f64> {
        match &self.found[i] {
            Some(f) => Some(f.value),
            None => self.extremum(i).map(|m| m.value),
        }
    }

    fn extremum(&self, i: usize) -> Option<Extremum> {
        match i {
            MAX_Q => self.out.max_q,
            MAX_ACCEL => self.out.max_axial_accel,
            _ => self.out.max_q_alpha,
        }
    }

    fn extremum_mut(&mut self, i: usize) -> &mut Option<Extremum> {
        match i {
            MAX_Q => &mut self.out.max_q,
            MAX_ACCEL => &mut self.out.max_axial_accel,
            _ => &mut self.out.max_q_alpha,
        }
    }

    /// A new maximum `value` of quantity `i` at `t_s` on the segment's dense output `com`; its
    /// snapshot waits for [`Flyer::describe_maxima`].
    fn found(&mut self, i: usize, value: f64, t_s: f64, com: &DenseOutput) {
        match com.evaluate(t_s) {
            Some(y) => {
                self.found[i] = Some(Found {
                    value,
                    t_s,
                    y,
                    mode: self.mode,
                })
            }
            None => {
                self.found[i] = None;
                *self.extremum_mut(i) = None;
            }
        }
    }

    /// Takes the snapshots of the maxima found since the last call. Called before the active law
    /// changes (a new arc's law, a guidance cycle) and at the end, so that each snapshot sees the
    /// law that flew it: one snapshot per maximum and arc instead of one per segment that raised
    /// it (each costs about as much as a few dozen right-hand sides).
    fn describe_maxima(&mut self) {
        for i in [MAX_Q, MAX_ACCEL, MAX_Q_ALPHA] {
            if let Some(f) = self.found[i].take() {
                let at = snapshot(&self.m, &f.mode, self.law.as_ref(), f.t_s, &f.y);
                *self.extremum_mut(i) = Some(Extremum { value: f.value, at });
            }
        }
    }

    fn apply(&mut self, stop: Stop) {
        match stop {
            Stop::Time(te) => self.apply_time(te),
            Stop::State(se) => self.apply_state(se),
        }
        if self.opts.record_step_s.is_some() {
            let s = snapshot(&self.m, &self.mode, self.law.as_ref(), self.t, &self.y);
            self.out.history.push(s);
        }
    }

    fn apply_time(&mut self, te: TimeEvent) {
        let p = self.p;
        match te {
            TimeEvent::RiseEnd => self.start_pitch_over(),
            TimeEvent::PitchOverEnd => {
                let kick = p.program.liftoff.map_or(0.0, |l| l.kick_rad);
                self.event(
                    EventKind::PitchOverEnd,
                    format!("pitch-over complete ({:.3}° kick)", kick.to_degrees()),
                );
                self.mode.attitude = Attitude::Hold {
                    pitch_rad: std::f64::consts::FRAC_PI_2 - kick,
                    heading_rad: p.azimuth_rad,
                };
            }
            TimeEvent::BoosterSeparation => self.separate_boosters(),
            TimeEvent::BucketStart => {
                self.event(EventKind::BucketStart, "throttle bucket begins");
                self.flags.in_bucket = true;
                self.set_nominal(self.nominal_throttle());
            }
            TimeEvent::BucketEnd => {
                self.event(EventKind::BucketEnd, "throttle bucket ends");
                self.flags.in_bucket = false;
                self.flags.bucket_done = true;
                self.set_nominal(1.0);
            }
            TimeEvent::LawNode => {}
            TimeEvent::GuidanceCycle => self.guidance_cycle(),
            TimeEvent::Jettison(i) => self.jettison(i),
            TimeEvent::BurnDuration => self.cutoff(),
            TimeEvent::CoastDuration => {
                self.event(EventKind::CoastEnd, "end of coast");
                self.arc_done = true;
            }
            TimeEvent::TimeLimit => {
                self.event(EventKind::TimeLimit, "flight-time limit");
                self.ended = Some(EndReason::TimeLimit);
            }
        }
    }

    fn apply_state(&mut self, se: StateEvent) {
        match se {
            StateEvent::RiseSpeed(_) => self.start_pitch_over(),
            StateEvent::AlphaZero(_) => {
                self.event(EventKind::GravityTurnStart, "gravity turn begins (α = 0)");
                self.mode.attitude = Attitude::Law;
            }
            StateEvent::Depletion => self.burnout(),
            StateEvent::AccelLimitOnset => {
                self.event(
                    EventKind::AccelLimitOnset,
                    "throttling to hold the acceleration limit",
                );
                let nominal = self.nominal_throttle();
                self.mode.throttle = Throttle::AccelLimit { nominal };
            }
            StateEvent::MinThrottle => {
                self.event(EventKind::MinThrottle, "throttle at its minimum");
                let k = self.p.vehicle.stages[self.mode.stage].min_throttle;
                self.mode.throttle = Throttle::Fixed(k);
            }
            StateEvent::JettisonAltitude(i, _) | StateEvent::HeatingFall(i, _) => self.jettison(i),
            StateEvent::HeatingArm(i, _) => self.flags.heating_armed[i] = true,
            StateEvent::Energy(_) | StateEvent::ApogeeRadius(_) | StateEvent::PerigeeRadius(_) => {
                self.cutoff()
            }
            StateEvent::Apogee => {
                self.event(EventKind::Apogee, "apogee: end of coast");
                self.arc_done = true;
            }
            StateEvent::Ground(_) => {
                self.event(EventKind::Impact, "ground impact");
                self.ended = Some(EndReason::GroundImpact);
            }
        }
    }

    fn set_nominal(&mut self, k: f64) {
        self.mode.throttle = match self.mode.throttle {
            Throttle::Fixed(_) => Throttle::Fixed(k),
            Throttle::AccelLimit { .. } => Throttle::AccelLimit { nominal: k },
        };
    }

    fn start_pitch_over(&mut self) {
        self.event(
            EventKind::PitchOverStart,
            "end of vertical rise: pitch-over begins",
        );
        self.mode.attitude = self.pitch_over();
    }

    /// A guidance cycle: the closed-loop law re-solves from the current state.
    fn guidance_cycle(&mut self) {
        let now = self.guidance_input();
        self.describe_maxima();
        self.law.update(&now);
        self.flags.next_guidance_s = self.law.guidance_period_s().map(|dt| self.t + dt);
    }

    /// The state a closed-loop law sees now.
    fn guidance_input(&self) -> GuidanceInput {
        let s = &self.p.vehicle.stages[self.mode.stage];
        GuidanceInput {
            t_s: self.t,
            r_m: Vector3::new(self.y[0], self.y[1], self.y[2]),
            v_mps: Vector3::new(self.y[3], self.y[4], self.y[5]),
            mass_kg: self.y[ix::M],
            thrust_vac_n: s.engine.thrust_vac_n,
            exhaust_velocity_mps: s.engine.exhaust_velocity_mps(),
            propellant_kg: super::dynamics::stage_propellant_kg(
                &self.m,
                &self.mode,
                self.t,
                self.y[ix::M],
            )
            .max(0.0),
            max_axial_accel_mps2: self.p.limits.max_axial_accel_mps2,
        }
    }

    fn separate_boosters(&mut self) {
        if let Some(b) = &self.p.vehicle.boosters {
            let left = b.mass_at_kg(self.t) - f64::from(b.count) * b.dry_mass_kg;
            let label = if left > 1e-6 {
                format!(
                    "{} × {} separation with {left:.0} kg propellant left",
                    b.count, b.name
                )
            } else {
                format!("{} × {} burnout and separation", b.count, b.name)
            };
            self.event(EventKind::BoosterSeparation, label);
            self.y[ix::M] -= b.mass_at_kg(self.t);
        }
        self.mode.boosters_attached = false;
    }

    fn jettison(&mut self, i: usize) {
        let j = &self.p.vehicle.jettisons[i];
        self.event(EventKind::Jettison, format!("jettison: {}", j.name));
        self.y[ix::M] -= j.mass_kg;
        self.mode.other_mass_kg -= j.mass_kg;
        self.flags.jettisoned[i] = true;
        self.out.jettison_times_s[i] = self.t;
    }

    fn cutoff(&mut self) {
        let name = self.p.vehicle.stages[self.mode.stage].name.clone();
        self.event(EventKind::Cutoff, format!("cutoff: {name}"));
        // Strap-on boosters cannot be shut down: a core cutoff drops any still attached.
        if self.mode.boosters_attached {
            self.separate_boosters();
        }
        self.mode.thrusting = false;
        self.arc_done = true;
    }

    /// Stage depletion: drop the stage if another follows (boosters still attached go with it).
    fn burnout(&mut self) {
        let p = self.p;
        let s = self.mode.stage;
        let label = if s + 1 < p.vehicle.stages.len() {
            format!("burnout and separation: {}", p.vehicle.stages[s].name)
        } else {
            format!("burnout: {}", p.vehicle.stages[s].name)
        };
        self.event(EventKind::Burnout, label);
        self.mode.thrusting = false;
        self.arc_done = true;
        self.flags.in_bucket = false;
        if s + 1 >= p.vehicle.stages.len() {
            self.flags.stage_spent = true;
            return;
        }
        if self.mode.boosters_attached {
            self.separate_boosters();
        }
        let residual = events::value(
            &self.m,
            &self.mode,
            self.law.as_ref(),
            &StateEvent::Depletion,
            self.t,
            &self.y,
        );
        self.y[ix::M] -= p.vehicle.stages[s].dry_mass_kg;
        self.mode.stage = s + 1;
        self.mode.throttle = Throttle::Fixed(1.0);
        // Carry the located-root round-off (|residual| ~ 1e-9 kg) into the next stage's bookkeeping.
        self.mode.other_mass_kg = self.y[ix::M] - p.vehicle.stages[s + 1].propellant_kg + residual;
    }

    /// The flight, and the checkpoints asked for (empty unless recording).
    fn finish(mut self) -> (Flight, Vec<Option<std::sync::Arc<Checkpoint>>>) {
        let checkpoints = self.recorder.take().map_or_else(Vec::new, |mut rec| {
            for &(_, i) in &rec.order[rec.done..] {
                rec.out[i].clone_from(&rec.last);
            }
            rec.out
        });
        self.describe_maxima();
        Scratch {
            watch: std::mem::take(&mut self.watch),
            dense: std::mem::take(&mut self.dense),
        }
        .give_back();
        self.out.end = self.ended.take().unwrap_or(EndReason::Completed);
        self.out.t1_s = self.t;
        self.out.y1 = self.y;
        self.out.final_mode = self.mode;
        let spent = self.flags.stage_spent;
        let current = if spent {
            0.0
        } else {
            super::dynamics::stage_propellant_kg(&self.m, &self.mode, self.t, self.y[ix::M])
                .max(0.0)
        };
        let later: f64 = self
            .p
            .vehicle
            .stages
            .iter()
            .skip(self.mode.stage + 1)
            .map(|s| s.propellant_kg)
            .sum();
        self.out.propellant_remaining_kg = current + later;
        if let Some(m) = self.out.max_q {
            let pos = self.out.events.partition_point(|e| e.at.t_s <= m.at.t_s);
            self.out.events.insert(
                pos,
                EventRecord {
                    kind: EventKind::MaxQ,
                    label: "maximum dynamic pressure".into(),
                    at: m.at,
                },
            );
        }
        (self.out, checkpoints)
    }
}

/// Dynamic pressure (Pa) and sensed axial acceleration (g0) at (t, y).
fn q_and_accel(
    p: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    t: f64,
    y: &State,
) -> (f64, f64, f64) {
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    let loc = p.environment.local(t, &r, &v);
    q_and_accel_of(&forces(p, mode, law, t, y[ix::M], &loc), y[ix::M], &loc)
}

/// A maximum is refined until its bracket is this narrow, s (as the golden-section search that
/// this replaces). Brent's tolerance tol1 is a quarter of it: the search stops when
/// |x − m| ≤ 2 tol1 − (b − a)/2, i.e. at a bracket of 4 tol1 at most.
const EXTREMUM_BRACKET_S: f64 = 1e-6;
/// Values this close (relative) at three distinct points: the function is flat to round-off (an
/// acceleration held at its limit), and any of them is the maximum.
const EXTREMUM_FLAT_REL: f64 = 1e-14;
/// At most this many evaluations refine one maximum (the bracket halves at least every few).
const EXTREMUM_MAX_EVALS: usize = 100;

/// Forms the dense output's coefficients on [`t_lo`, `t_hi`] where they are formed on demand
/// (DP853), evaluating the right-hand side of `mode` under `law`; returns the evaluations made.
fn complete_dense(
    m: &FlightModel,
    mode: &Mode,
    law: &dyn ActiveLaw,
    dense: &mut DenseOutput,
    t_lo: f64,
    t_hi: f64,
) -> u32 {
    dense.complete(t_lo, t_hi, &mut |t, y, dy| {
        derivative(m, mode, law, t, y, dy);
    })
}

/// The interval [`refine_max`] searches for the largest `value` of `samples`: between the
/// neighbours of the best sample.
fn max_bracket(
    samples: &[(f64, f64, f64, f64)],
    value: impl Fn(&(f64, f64, f64, f64)) -> f64,
) -> Option<(f64, f64)> {
    let k = best_sample(samples, &value)?;
    Some((
        samples[k.saturating_sub(1)].0,
        samples[(k + 1).min(samples.len() - 1)].0,
    ))
}

/// Index of the largest finite `value` of `samples` (the last of equals, as `max_by` picks).
fn best_sample(
    samples: &[(f64, f64, f64, f64)],
    value: impl Fn(&(f64, f64, f64, f64)) -> f64,
) -> Option<usize> {
    (0..samples.len())
        .filter(|k| value(&samples[*k]).is_finite())
        .max_by(|a, b| value(&samples[*a]).total_cmp(&value(&samples[*b])))
}

/// Largest of the sampled values (`value(sample)` over `samples`, each `(t, q, accel, qα)`, in time
/// order), refined on `f` (the dense output) between the neighbours of the best sample by
/// Brent's method: parabolic interpolation through the three best points, with a
/// golden-section step whenever the parabola's step is not acceptable (R. P. Brent,
/// *Algorithms for Minimization without Derivatives*, 1973, ch. 5, procedure `localmin`; as in
/// Press et al., *Numerical Recipes*, 3rd ed., §10.3, from memory). The parabola alone would
/// stall on a cusp: max-Q can sit on the tropopause (11 km′), where dT/dh, hence dq/dt, jumps.
/// Returns (value, time).
fn refine_max(
    samples: &[(f64, f64, f64, f64)],
    value: impl Fn(&(f64, f64, f64, f64)) -> f64,
    f: impl Fn(f64) -> f64,
) -> Option<(f64, f64)> {
    let k = best_sample(samples, &value)?;
    let (t_k, v_k) = (samples[k].0, value(&samples[k]));
    // Best at either end and the function falling away from it: a maximum on the boundary
    // (a rising quantity at a segment's end), no search. One evaluation instead of a search
    // that would crawl to the end.
    let last = samples.len() - 1;
    if (k == last && k > 0 && f(t_k - EXTREMUM_BRACKET_S) < v_k)
        || (k == 0 && last > 0 && f(t_k + EXTREMUM_BRACKET_S) < v_k)
    {
        return Some((v_k, t_k));
    }
    let (a, b) = (
        samples[k.saturating_sub(1)].0,
        samples[(k + 1).min(samples.len() - 1)].0,
    );
    let (t, v) = brent_max(a, b, t_k, v_k, f);
    Some(if v >= v_k { (v, t) } else { (v_k, t_k) })
}

/// True unless `a` and `b` are the same number (Brent's bookkeeping of which points coincide).
fn distinct(a: f64, b: f64) -> bool {
    a.to_bits() != b.to_bits()
}

/// Maximum of `f` on [a, b] by Brent's `localmin` (on −f), started from x0 ∈ [a, b] with
/// f(x0) = f0 known. Returns (time, value) of the best point evaluated.
fn brent_max(mut a: f64, mut b: f64, x0: f64, f0: f64, f: impl Fn(f64) -> f64) -> (f64, f64) {
    // (3 − √5)/2: the golden-section fraction.
    const C: f64 = 0.381_966_011_250_105_1;
    let tol1 = 0.25 * EXTREMUM_BRACKET_S;
    let tol2 = 2.0 * tol1;
    // Minimise g = −f. x: best point; w: second best; v: previous w.
    let (mut x, mut w, mut v) = (x0, x0, x0);
    let (mut gx, mut gw, mut gv) = (-f0, -f0, -f0);
    let (mut d, mut e) = (0.0_f64, 0.0_f64);
    for _ in 0..EXTREMUM_MAX_EVALS {
        let m = 0.5 * (a + b);
        if (x - m).abs() <= tol2 - 0.5 * (b - a) {
            break;
        }
        if distinct(w, x) && distinct(v, x) && distinct(v, w) {
            let scale = gx.abs().max(f64::MIN_POSITIVE);
            if (gw - gx).abs() <= EXTREMUM_FLAT_REL * scale
                && (gv - gx).abs() <= EXTREMUM_FLAT_REL * scale
            {
                break;
            }
        }
        let mut golden = true;
        if e.abs() > tol1 {
            // Parabola through (v, gv), (w, gw), (x, gx): its vertex is x + p/q.
            let r = (x - w) * (gx - gv);
            let mut q = (x - v) * (gx - gw);
            let mut p = (x - v) * q - (x - w) * r;
            q = 2.0 * (q - r);
            if q > 0.0 {
                p = -p;
            } else {
                q = -q;
            }
            let e_prev = e;
            e = d;
            // Accept the parabolic step if it falls inside (a, b) and is less than half the
            // step before last (so the steps shrink).
            if p.abs() < (0.5 * q * e_prev).abs() && p > q * (a - x) && p < q * (b - x) {
                d = p / q;
                let u = x + d;
                if u - a < tol2 || b - u < tol2 {
                    d = tol1.copysign(m - x);
                }
                golden = false;
            }
        }
        if golden {
            e = if x >= m { a - x } else { b - x };
            d = C * e;
        }
        let u = if d.abs() >= tol1 {
            x + d
        } else {
            x + tol1.copysign(d)
        };
        let gu = -f(u);
        if gu <= gx {
            if u >= x {
                a = x;
            } else {
                b = x;
            }
            (v, gv) = (w, gw);
            (w, gw) = (x, gx);
            (x, gx) = (u, gu);
        } else {
            if u < x {
                a = u;
            } else {
                b = u;
            }
            if gu <= gw || !distinct(w, x) {
                (v, gv) = (w, gw);
                (w, gw) = (u, gu);
            } else if gu <= gv || !distinct(v, x) || !distinct(v, w) {
                (v, gv) = (u, gu);
            }
        }
    }
    (x, -gx)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Samples `(t, f(t), 0)` at the given times.
    fn sampled(ts: &[f64], f: impl Fn(f64) -> f64) -> Vec<(f64, f64, f64, f64)> {
        ts.iter().map(|t| (*t, f(*t), 0.0, 0.0)).collect()
    }

    #[test]
    fn refine_max_finds_smooth_and_cusped_maxima() {
        // Source: closed forms: the maximum of 1 − (t − 0.37)² and of 1 − |t − 0.37| is 1 at
        // t = 0.37; the search's bracket is 1e-6 s.
        let ts = [0.0, 0.3, 0.55, 1.0];
        let smooth = |t: f64| 1.0 - (t - 0.37).powi(2);
        let (v, t) = refine_max(&sampled(&ts, smooth), |s| s.1, smooth).unwrap();
        assert!((t - 0.37).abs() < 1e-6, "{t}");
        assert!((v - 1.0).abs() < 1e-12, "{v}");
        let cusp = |t: f64| 1.0 - (t - 0.37).abs();
        let (v, t) = refine_max(&sampled(&ts, cusp), |s| s.1, cusp).unwrap();
        assert!((t - 0.37).abs() < 1e-6, "{t}");
        assert!((v - 1.0).abs() < 1e-6, "{v}");
    }

    #[test]
    fn refine_max_keeps_a_maximum_on_the_boundary() {
        // Source: closed form: a rising function's maximum on [0, 1] is at t = 1.
        let ts = [0.0, 0.4, 1.0];
        let rising = |t: f64| t * t;
        let (v, t) = refine_max(&sampled(&ts, rising), |s| s.1, rising).unwrap();
        assert!((v - 1.0).abs() < 1e-15 && (t - 1.0).abs() < 1e-15);
        let falling = |t: f64| -t;
        let (v, t) = refine_max(&sampled(&ts, falling), |s| s.1, falling).unwrap();
        assert!(v.abs() < 1e-15 && t.abs() < 1e-15);
        // A held value (an acceleration at its limit): any point is the maximum.
        let flat = |_: f64| 5.0;
        let (v, _) = refine_max(&sampled(&ts, flat), |s| s.1, flat).unwrap();
        assert!((v - 5.0).abs() < 1e-15);
    }
}
