//! The shooting optimizer: the least-propellant ascent program that reaches the target orbit.
//!
//! Method (docs/method.md, "Optimizer"): the decision variables are split in two.
//! - *Inner* variables, one per terminal condition (the final linear tangent law's pitch and rate,
//!   or the transfer burn's apogee cutoff and the circularization pitch; the first law's heading
//!   for the inclination), are solved by Levenberg–Marquardt on the terminal residuals
//!   ([`targeting`]) for each setting of the outer variables.
//! - *Outer* variables (the kick angle by default, plus any other free law parameters) minimize the
//!   propellant burned, with the inner solve nested: Brent's method in one dimension, Nelder–Mead
//!   in several (argmin). A coarse scan of the kick angle first finds a feasible, low-propellant
//!   region (the kick is the most sensitive parameter: Curtis, Orbital Mechanics for Engineering
//!   Students, Ex. 11.3),
//!   which also makes the start independent of the user's guess.
//!
//! Nesting keeps the outer problem smooth and low-dimensional: every outer point is a trajectory
//! that meets the target, so the objective compares like with like.

pub mod inner;
pub mod nlp;
mod outer;
pub mod refine;
pub mod sensitivity;
pub mod sqp;
pub mod targeting;

use std::sync::atomic::{AtomicUsize, Ordering};
use std::time::{Duration, Instant};

use serde::Serialize;

use crate::core::observe::Observer;
pub use crate::core::problem::params::Param;
use crate::core::problem::{Problem, Target};
use crate::core::steering::{Arc, CoastEnd, Control, Cutoff, SteeringLaw};
use targeting::Eval;

/// Objective penalty per unit of normalized residual above the inner tolerance, kg.
pub const PENALTY_KG: f64 = 1e5;

/// Settings of one solve.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveOptions {
    /// Optional wall-time cap, s (default none: the trajectory budget ends a solve, so that the
    /// same input gives the same answer on any machine).
    pub max_wall_s: Option<f64>,
    /// Trajectory budget (default 50 000).
    pub max_trajectories: usize,
    /// Variable groups to free in addition to the defaults (`pitch_rate`, `rise_time`;
    /// `azimuth` with an inclination target and timed `coasts` are free by default).
    pub free: Vec<String>,
    /// Variable groups to hold at the problem file's values (`kick`, `steering`, `azimuth`,
    /// `coasts`).
    pub fix: Vec<String>,
    /// Scan the kick angle for a start (default true); off: start from the file's program.
    pub scan: bool,
    /// What to optimize.
    pub objective: Objective,
    /// The search method (default: SQP).
    pub method: Method,
    /// Restart the outer Nelder–Mead once from its best point (default true; sweeps turn it off:
    /// the restart refines the optimum by about a kilogram at about a third more trajectories).
    pub polish: bool,
    /// Perturb the automatic start (law parameters ±30 %, kick grid ×0.7–1.3) with this seed:
    /// for robustness checks. `None`: the plain automatic start.
    pub perturb_seed: Option<u64>,
}

impl Default for SolveOptions {
    fn default() -> Self {
        Self {
            max_wall_s: None,
            max_trajectories: 50_000,
            free: Vec::new(),
            fix: Vec::new(),
            scan: true,
            perturb_seed: None,
            objective: Objective::LeastPropellant,
            polish: true,
            method: Method::Sqp,
        }
    }
}

/// The search method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// Terminal conditions by Levenberg–Marquardt nested in a Brent or Nelder–Mead search over
    /// the remaining parameters, after a kick scan (the former default; still used for the pass
    /// that holds a max-Q limit, and as the SQP method's fallback).
    Nested,
    /// One constrained program over every parameter, solved by SQP ([`sqp`], [`nlp`]), with the
    /// nested search as fallback where it cannot verify an optimum (the default).
    #[default]
    Sqp,
}

/// The optimization objective.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "snake_case")]
pub enum Objective {
    /// Least propellant burned for the given payload (last burn cut on the target energy).
    #[default]
    LeastPropellant,
    /// Largest payload with every stage burned to depletion (reserves set aside first).
    MaxPayload,
}

/// How the solve ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SolveStatus {
    /// Terminal conditions met and the outer search converged.
    Converged,
    /// The wall-time or trajectory budget ended the search (the target may or may not be met:
    /// see the residuals).
    BudgetExhausted,
    /// Terminal conditions met, but the outer search stopped at its iteration limit.
    IterationLimit,
    /// No program met the terminal conditions.
    Infeasible,
    /// The terminal conditions are met, but the search found no improving step and its
    /// first-order optimality test did not pass (the SQP method; a kink or noise in the
    /// functions): not a verified optimum.
    Stalled,
}

/// Convergence report.
#[derive(Debug, Clone, Serialize)]
pub struct Convergence {
    /// Outcome.
    pub status: SolveStatus,
    /// Why the search stopped, in words.
    pub reason: String,
    /// Outer iterations (objective evaluations).
    pub iterations: usize,
    /// Trajectories flown.
    pub trajectories: usize,
    /// Wall time, s (text report only: kept out of JSON so that the same input gives the same
    /// bytes).
    #[serde(skip)]
    pub wall_s: f64,
    /// Terminal residuals at the solution (names with units).
    pub terminal_residuals: Vec<(String, f64)>,
}

/// Result of a solve.
#[derive(Debug, Clone)]
pub struct Solution {
    /// The problem with the tuned program.
    pub problem: Problem,
    /// Tuned variables and their values (SI), inner ones first.
    pub variables: Vec<(Param, f64)>,
    /// Evaluation of the tuned program.
    pub eval: Eval,
    /// Convergence report.
    pub convergence: Convergence,
    /// Path constraints held at their limit, with their cost.
    pub active: Vec<ActiveConstraint>,
    /// How the optimum moves with the target, the payload and a held limit (from the
    /// multipliers; empty unless the SQP search converged).
    pub sensitivities: Vec<sensitivity::Sensitivity>,
}

/// A path constraint that is active at the optimum.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ActiveConstraint {
    /// Which limit (`limits.max_dynamic_pressure_pa`).
    pub limit: String,
    /// The limit, in its unit.
    pub value: f64,
    /// Value the unconstrained optimum reached.
    pub unconstrained: f64,
    /// Extra propellant the limit costs, kg (constrained − unconstrained optimum).
    pub cost_kg: f64,
    /// Cost per unit of the limit (kg per kPa), from the two solves.
    pub cost_kg_per_unit: f64,
    /// How it is held.
    pub how: String,
}

/// Why the problem cannot be solved as posed.
#[derive(Debug, thiserror::Error, Clone, PartialEq)]
#[non_exhaustive]
pub enum SolveError {
    /// The problem has no target orbit.
    #[error("target: missing; `solve` needs a target orbit")]
    NoTarget,
    /// The program's structure does not give the optimizer the controls it needs.
    #[error("{field}: {reason}")]
    Structure {
        /// JSON path.
        field: String,
        /// What is missing.
        reason: String,
    },
}

/// Evaluation context shared by the inner and outer searches.
pub struct Ctx<'a> {
    /// Restart the outer Nelder–Mead from its best point with a small simplex.
    polish: bool,
    /// Problem, coast floor, target and variables of this pass.
    spec: PassSpec<'a>,
    max_payload: bool,
    flights: AtomicUsize,
    start: Instant,
    /// Optional wall-time cap of the pass.
    deadline: Option<Duration>,
    max_flights: usize,
    obs: &'a dyn Observer,
}

impl Ctx<'_> {
    /// The problem with outer and inner variables set (normalized values).
    pub fn problem_with(&self, outer: &[f64], inner: &[f64]) -> Problem {
        let mut p = self.spec.base.clone();
        for (v, x) in self
            .spec
            .outer
            .iter()
            .zip(outer)
            .chain(self.spec.inner.iter().zip(inner))
        {
            v.set(&mut p, x * v.scale());
        }
        // A coast written in the file is the shortest allowed (separation, ignition sequence):
        // the optimizer may only lengthen it.
        for v in self
            .spec
            .outer
            .iter()
            .filter(|v| matches!(v, Param::Coast(_)))
        {
            if let (Some(now), Some(min)) = (v.get(&p), v.get(self.spec.floor)) {
                if now < min {
                    v.set(&mut p, min);
                }
            }
        }
        p
    }

    /// Flies and evaluates one program. Past the optional wall-time cap nothing is flown: the
    /// evaluation fails at once (residuals at 1e6), so the cap holds within one trajectory's
    /// time however many evaluations a search has under way.
    pub fn eval(&self, outer: &[f64], inner: &[f64]) -> Eval {
        if self.past_deadline() {
            return Eval {
                residuals: vec![
                    1e6;
                    targeting::residual_count(&self.spec.target, self.spec.q_limit)
                ],
                propellant_used_kg: f64::INFINITY,
                reached: false,
                apogee_alt_m: f64::NAN,
                shortfall: 1.0,
                max_q_pa: f64::NAN,
                max_q_by_bucket_pa: None,
                max_q_alpha_pa_deg: f64::NAN,
                payload_kg: self.spec.base.vehicle.payload_kg,
                payload_mode: self.max_payload,
                switches: vec![f64::NAN; targeting::switch_count(self.spec.base)],
            };
        }
        self.flights.fetch_add(1, Ordering::Relaxed);
        targeting::evaluate(
            &self.problem_with(outer, inner),
            &self.spec.target,
            self.spec.q_limit,
            self.max_payload,
        )
    }

    /// Counts one trajectory flown outside [`Ctx::eval`].
    fn count_flight(&self) {
        self.flights.fetch_add(1, Ordering::Relaxed);
    }

    /// True once the trajectory budget (or the optional wall-time cap) is spent.
    pub fn out_of_budget(&self) -> bool {
        self.flights.load(Ordering::Relaxed) >= self.max_flights || self.past_deadline()
    }

    /// True once the optional wall-time cap has passed.
    pub fn past_deadline(&self) -> bool {
        self.deadline.is_some_and(|d| self.start.elapsed() >= d)
    }

    /// Trajectories left in the budget.
    pub fn flights_left(&self) -> usize {
        self.max_flights
            .saturating_sub(self.flights.load(Ordering::Relaxed))
    }

    fn normalized(&self, vars: &[Param], p: &Problem) -> Vec<f64> {
        vars.iter()
            .map(|v| v.get(p).unwrap_or(0.0) / v.scale())
            .collect()
    }
}

/// Objective of an evaluated program: propellant burned plus a penalty on unmet conditions, kg.
/// In the payload mode: minus the payload plus the penalty, kg.
pub fn objective(e: &Eval) -> f64 {
    let base = if e.payload_mode {
        -e.payload_kg
    } else {
        e.propellant_used_kg
    };
    base + PENALTY_KG * (e.max_abs() - inner::INNER_TOL).max(0.0)
}

fn struct_err(field: &str, reason: &str) -> SolveError {
    SolveError::Structure {
        field: field.into(),
        reason: reason.into(),
    }
}

/// Index of the arc whose tunable law steers arc `i`: itself when its law can be tuned (it has
/// parameters and is not a shared program-supplied law), the latest such earlier arc when its
/// law continues an earlier one.
fn law_owner(p: &Problem, i: usize) -> Option<usize> {
    let Arc::Burn { steering, .. } = &p.program.arcs[i] else {
        return None;
    };
    if steering.law().continues_previous() {
        (0..i).rev().find(|j| law_owner(p, *j) == Some(*j))
    } else {
        steering.is_tunable().then_some(i)
    }
}

/// The law of arc `arc` (a burn's; `None` for a coast).
fn law_of(p: &Problem, arc: usize) -> Option<&dyn SteeringLaw> {
    match p.program.arcs.get(arc) {
        Some(Arc::Burn { steering, .. }) => Some(steering.law()),
        _ => None,
    }
}

/// The registry parameters of arc `arc`'s law: its shape (`plane` false) or plane parameters.
fn law_params(p: &Problem, arc: usize, plane: bool) -> Vec<Param> {
    law_of(p, arc).map_or_else(Vec::new, |law| {
        let list = if plane {
            law.plane_params()
        } else {
            law.shape_params()
        };
        list.iter()
            .map(|&param| Param::Law {
                arc,
                law: law.file_key(),
                param,
            })
            .collect()
    })
}

/// The law of arc `arc` can steer to `c`.
fn controls(p: &Problem, arc: usize, c: Control) -> bool {
    law_of(p, arc).is_some_and(|l| l.controls().contains(&c))
}

/// A burn–coast-to-apogee–burn ending: (transfer burn with an apogee cutoff, final burn).
fn circularization(p: &Problem, last: usize) -> Option<usize> {
    let arcs = &p.program.arcs;
    let coast = (0..last)
        .rev()
        .find(|j| matches!(arcs[*j], Arc::Coast(_)))?;
    if !matches!(arcs[coast], Arc::Coast(CoastEnd::ToApogee)) {
        return None;
    }
    (0..coast).rev().find(|j| {
        matches!(
            arcs[*j],
            Arc::Burn {
                cutoff: Cutoff::ApogeeAlt(_),
                ..
            }
        )
    })
}

/// Which arcs' laws the optimizer tunes: the owner of the last burn's law (it steers to the
/// insertion), every arc that owns a tunable law, and the first law that steers the plane.
struct LawRoles {
    last: usize,
    owner: usize,
    owners: Vec<usize>,
    plane: usize,
}

fn law_roles(p: &Problem) -> Result<LawRoles, SolveError> {
    let arcs = &p.program.arcs;
    let last = (0..arcs.len())
        .rev()
        .find(|i| matches!(arcs[*i], Arc::Burn { .. }))
        .ok_or_else(|| struct_err("ascent.arcs", "no burn"))?;
    let owner = law_owner(p, last)
        .filter(|o| controls(p, *o, Control::InPlane))
        .ok_or_else(|| {
            struct_err(
                &format!("ascent.arcs[{last}].burn.steering"),
                "the last burn must use a law that steers to the insertion conditions \
                 (linear_tangent, or continue one) for the optimizer",
            )
        })?;
    let owners: Vec<usize> = (0..arcs.len())
        .filter(|i| law_owner(p, *i) == Some(*i))
        .collect();
    let plane = owners
        .iter()
        .copied()
        .find(|i| controls(p, *i, Control::Plane))
        .unwrap_or(owner);
    Ok(LawRoles {
        last,
        owner,
        owners,
        plane,
    })
}

/// Chooses inner and outer variables from the program's structure and the options.
fn choose_vars(
    p: &Problem,
    t: &Target,
    o: &SolveOptions,
) -> Result<(Vec<Param>, Vec<Param>), SolveError> {
    let roles = law_roles(p)?;
    let (inner, mut outer) = terminal_vars(p, t, o, &roles);
    free_vars(p, t, o, &roles, &mut outer);
    Ok((inner, outer))
}

/// The variables that meet the terminal conditions (inner), and the law parameters those
/// conditions leave free (outer).
fn terminal_vars(
    p: &Problem,
    t: &Target,
    o: &SolveOptions,
    roles: &LawRoles,
) -> (Vec<Param>, Vec<Param>) {
    let fixed = |g: &str| o.fix.iter().any(|f| f == g);
    let shape = law_params(p, roles.owner, false);
    let plane = law_params(p, roles.plane, true);
    let mut inner = Vec::new();
    let mut outer = Vec::new();
    // The law's first shape parameter (the initial pitch) meets the radius or perigee condition;
    // its second (the pitch rate) the flight-path angle, or it is tuned outside for a free
    // insertion.
    let (first, second) = (shape.first().copied(), shape.get(1).copied());
    match (circularization(p, roles.last), t.insertion) {
        (Some(transfer), _) => {
            inner.push(Param::ApogeeCutoff(transfer));
            inner.extend(first);
        }
        (None, crate::core::problem::Insertion::Free) => {
            inner.extend(first);
            if !fixed("steering") {
                outer.extend(second);
            }
        }
        (None, _) => {
            inner.extend(first);
            inner.extend(second);
        }
    }
    if t.inclination_rad.is_some() {
        let (heading, yaw) = (plane.first().copied(), plane.get(1).copied());
        if p.allow_dog_leg && p.unreachable_target_inclination().is_some() {
            // Dog-leg: the yaw term makes the plane change; the heading is tuned outside.
            inner.extend(yaw);
            outer.extend(heading);
            if !fixed("azimuth") && !outer.contains(&Param::Azimuth) {
                outer.push(Param::Azimuth);
            }
        } else {
            inner.extend(heading);
        }
    }
    (inner, outer)
}

/// The outer variables the program and the options free: kick, the other laws' shapes, the
/// `--free` groups, the azimuth and the timed coasts.
fn free_vars(p: &Problem, t: &Target, o: &SolveOptions, roles: &LawRoles, outer: &mut Vec<Param>) {
    let has = |g: &str| o.free.iter().any(|f| f == g);
    let fixed = |g: &str| o.fix.iter().any(|f| f == g);
    if p.program.liftoff.is_some() && !fixed("kick") {
        outer.push(Param::Kick);
    }
    if !fixed("steering") {
        for i in roles.owners.iter().copied().filter(|i| *i != roles.owner) {
            outer.extend(law_params(p, i, false));
        }
    }
    for (g, v) in [
        ("pitch_rate", Param::PitchRate),
        ("rise_time", Param::RiseTime),
    ] {
        if has(g) && v.get(p).is_some() {
            outer.push(v);
        }
    }
    // The launch azimuth is free by default when the inclination is the target: the formula's
    // azimuth plus upper-stage yaw is not the cheapest split (105 kg on the heavy demo).
    let az_default = t.inclination_rad.is_some() && !fixed("azimuth");
    if (has("azimuth") || az_default) && !outer.contains(&Param::Azimuth) {
        outer.push(Param::Azimuth);
    }
    // Timed coasts are free by default (a staging coast can pay to lengthen: 1.1 t of
    // propellant on the heavy demo), never shorter than written.
    if has("coasts") || !fixed("coasts") {
        outer.extend(
            (0..p.program.arcs.len())
                .map(Param::Coast)
                .filter(|v| v.get(p).is_some()),
        );
    }
}

/// Prepares the base problem: the last burn cuts off on the target energy.
fn prepare(p: &Problem, objective: Objective) -> Problem {
    let mut q = p.clone();
    if let Some(i) = (0..q.program.arcs.len())
        .rev()
        .find(|i| matches!(q.program.arcs[*i], Arc::Burn { .. }))
    {
        if let Arc::Burn { cutoff, .. } = &mut q.program.arcs[i] {
            *cutoff = match objective {
                Objective::LeastPropellant => Cutoff::TargetOrbit,
                Objective::MaxPayload => Cutoff::Depletion,
            };
        }
    }
    if objective == Objective::MaxPayload {
        set_aside_reserves(&mut q, None);
    }
    q
}

/// Payload mode: the reserves stay in the last stage's tanks, so its usable load is reduced by
/// them. The ΔV-percentage reserve x = f·ΔV_ideal/c costs `FPR = (m_payload + m_dry + other
/// reserves)(eˣ − 1)` at the last stage's exhaust velocity c (Tsiolkovsky), with ΔV_ideal from
/// a flight (`ideal_mps`) or, before one exists, from the rocket equation stage by stage.
fn set_aside_reserves(p: &mut Problem, ideal_mps: Option<f64>) {
    let r = p.reserves;
    let mut m = p.vehicle.liftoff_mass_kg();
    let mut estimate = 0.0;
    for s in &p.vehicle.stages {
        estimate += s.engine.exhaust_velocity_mps() * (m / (m - s.propellant_kg)).ln();
        m -= s.propellant_kg + s.dry_mass_kg;
    }
    let ideal = ideal_mps.unwrap_or(estimate);
    let payload = p.vehicle.payload_kg;
    let Some(last) = p.vehicle.stages.last_mut() else {
        return;
    };
    let c = last.engine.exhaust_velocity_mps();
    let others = r.fpr_kg + r.residuals_kg + r.disposal_kg;
    let m_end = payload + last.dry_mass_kg + others;
    let keep = m_end * ((r.fpr_fraction_dv * ideal / c).exp() - 1.0) + others;
    let usable = (last.propellant_kg - keep).max(1.0);
    // The reserves fly to orbit in the tanks: mass on board, not burned.
    last.dry_mass_kg += last.propellant_kg - usable;
    last.propellant_kg = usable;
}

/// Tunes the program of `p`: the least-propellant (or largest-payload) program that reaches its
/// target.
pub fn tune(p: &Problem, o: &SolveOptions) -> Result<Solution, SolveError> {
    tune_observed(p, o, &crate::core::observe::Silent)
}

/// [`tune`], with the search's diagnostics sent to `obs`.
pub fn tune_observed(
    p: &Problem,
    o: &SolveOptions,
    obs: &dyn Observer,
) -> Result<Solution, SolveError> {
    let run = Run {
        t0: Instant::now(),
        obs,
    };
    let mut s = solve_timed(p, o, &run)?;
    s.convergence.wall_s = run.t0.elapsed().as_secs_f64();
    Ok(s)
}

/// What every pass of one solve shares: its start time (for the wall-time budget) and observer.
struct Run<'a> {
    t0: Instant,
    obs: &'a dyn Observer,
}

/// Both passes (free, then a held max-Q limit) pin the kinks where a jettison meets an ignition
/// (see [`targeting::switch_count`]).
fn solve_timed(p: &Problem, o: &SolveOptions, run: &Run) -> Result<Solution, SolveError> {
    let target = p.target.ok_or(SolveError::NoTarget)?;
    let base = prepare(p, o.objective);
    let (mut inner, outer) = choose_vars(&base, &target, o)?;
    if o.objective == Objective::MaxPayload {
        inner.push(Param::Payload);
    }
    let spec = PassSpec {
        base: &base,
        floor: &base,
        target,
        inner: inner.clone(),
        outer: outer.clone(),
        q_limit: None,
        kinks: true,
    };
    let mut free = run_pass(spec, o, run);
    if o.objective == Objective::MaxPayload && p.reserves.fpr_fraction_dv > 0.0 {
        free = reserve_pass(p, free, target, &inner, o, run);
    }
    let Some(q_lim) = p.limits.max_dynamic_pressure_pa else {
        return Ok(free);
    };
    // The payload mode does not hold a max-Q limit yet: the report shows it as exceeded.
    if free.eval.max_q_pa <= q_lim
        || free.convergence.status == SolveStatus::Infeasible
        || o.objective == Objective::MaxPayload
    {
        return Ok(free);
    }
    // Max-Q above the limit: hold it with a first-stage throttle bucket whose depth is one more
    // inner variable (condition: max-Q = limit), started from the unconstrained optimum.
    let from_file = free.problem.program.bucket.is_some();
    let mut b = free.problem.clone();
    match b.program.bucket.as_mut() {
        None => b.program.bucket = Some(bucket_guess(&free.problem, q_lim)),
        // Nested: start below full throttle (at the bound the forward difference sees no slope).
        Some(k) => k.throttle = k.throttle.min(0.97).max(b.vehicle.stages[0].min_throttle),
    }
    let mut inner_q = inner;
    inner_q.push(Param::BucketThrottle);
    // The trajectory budget is for the whole solve: later passes get what is left. The held
    // pass holds one max-Q row per part of the bucket's timeline (`nlp::Ascent::q_rows`: each
    // part's peak is smooth where the overall one has a kink) and starts from a program under
    // the limit found by its phase 1 (`nlp::restore`), or stops there with the least peak any
    // program reaching the target flies as the evidence that the limit cannot be held.
    let held = SolveOptions {
        method: o.method,
        scan: false,
        max_trajectories: o
            .max_trajectories
            .saturating_sub(free.convergence.trajectories),
        ..o.clone()
    };
    let mut sol = run_pass(
        PassSpec {
            base: &b,
            floor: &base,
            target,
            inner: inner_q,
            outer,
            q_limit: Some(q_lim),
            kinks: true,
        },
        &held,
        run,
    );
    sol.convergence.trajectories += free.convergence.trajectories;
    sol.convergence.iterations += free.convergence.iterations;
    // A bucket left at full throttle holds nothing (a first stage that cannot throttle, or a
    // limit the pitch program holds alone): it is not written into the program, and the report
    // says what holds the limit.
    let inert = !from_file
        && sol
            .problem
            .program
            .bucket
            .is_some_and(|k| k.throttle >= 1.0 - 1e-9);
    if inert {
        sol.problem.program.bucket = None;
        sol.variables.retain(|(v, _)| *v != Param::BucketThrottle);
    }
    let cost = sol.eval.propellant_used_kg - free.eval.propellant_used_kg;
    sol.active.push(ActiveConstraint {
        limit: "limits.max_dynamic_pressure_pa".into(),
        value: q_lim,
        unconstrained: free.eval.max_q_pa,
        cost_kg: cost,
        cost_kg_per_unit: cost / ((free.eval.max_q_pa - q_lim) / 1e3),
        how: if inert {
            "pitch program (kick and steering; the first-stage throttle bucket stays at full \
             throttle)"
                .into()
        } else if from_file {
            "first-stage throttle bucket (depth solved; start and duration from the file)".into()
        } else {
            "first-stage throttle bucket (depth solved; start and duration from the \
             unconstrained q history)"
                .into()
        },
    });
    Ok(sol)
}

/// Payload mode, second pass: the ΔV reserve recomputed with the ideal ΔV of the first pass's
/// flight, and the terminal conditions (payload included) re-solved with the outer variables
/// held at the first pass's optimum (the small reserve change moves that optimum negligibly).
fn reserve_pass(
    p: &Problem,
    first: Solution,
    target: Target,
    inner: &[Param],
    o: &SolveOptions,
    run: &Run,
) -> Solution {
    let f = crate::core::sim::fly(&first.problem, &crate::core::sim::FlyOptions::default());
    let ideal =
        f.y1[crate::core::sim::dynamics::ix::IDEAL] - f.y0[crate::core::sim::dynamics::ix::IDEAL];
    let mut base = first.problem.clone();
    base.vehicle.stages.clone_from(&p.vehicle.stages);
    set_aside_reserves(&mut base, Some(ideal));
    let again = SolveOptions {
        scan: false,
        max_trajectories: o
            .max_trajectories
            .saturating_sub(first.convergence.trajectories),
        ..o.clone()
    };
    let spec = PassSpec {
        base: &base,
        floor: &base,
        target,
        inner: inner.to_vec(),
        outer: Vec::new(),
        q_limit: None,
        kinks: false,
    };
    let mut second = run_pass(spec, &again, run);
    second.convergence.trajectories += first.convergence.trajectories;
    second.convergence.iterations += first.convergence.iterations;
    second.convergence.reason = first.convergence.reason.clone();
    // The second pass holds the first pass's outer variables: it cannot vouch for them, so a
    // first pass that stopped short of converging keeps its status.
    if first.convergence.status != SolveStatus::Converged
        && second.convergence.status == SolveStatus::Converged
    {
        second.convergence.status = first.convergence.status;
    }
    // Report every tuned variable: the held outer ones keep the first pass's values.
    for (v, x) in &first.variables {
        if !second.variables.iter().any(|(w, _)| w == v) {
            second.variables.push((*v, *x));
        }
    }
    if second.convergence.status == SolveStatus::Infeasible {
        first
    } else {
        second
    }
}

/// A throttle bucket spanning the time the unconstrained ascent spends above 70 % of the limit.
fn bucket_guess(p: &Problem, q_lim: f64) -> crate::core::steering::Bucket {
    let f = crate::core::sim::fly(
        p,
        &crate::core::sim::FlyOptions {
            record_step_s: Some(0.5),
            initial: None,
        },
    );
    let above: Vec<f64> = f
        .history
        .iter()
        .filter(|s| s.dynamic_pressure_pa >= 0.7 * q_lim)
        .map(|s| s.t_s)
        .collect();
    let (t0, t1) = match (above.first(), above.last()) {
        (Some(a), Some(b)) => (*a, *b),
        _ => (30.0, 60.0),
    };
    crate::core::steering::Bucket {
        start_s: t0,
        duration_s: (t1 - t0).max(5.0),
        throttle: 0.97f64.max(p.vehicle.stages[0].min_throttle),
    }
}

/// What one pass of a solve works on: the problem, the coast floor, target and variables.
struct PassSpec<'a> {
    base: &'a Problem,
    floor: &'a Problem,
    target: Target,
    inner: Vec<Param>,
    outer: Vec<Param>,
    q_limit: Option<f64>,
    /// Report the switching functions (jettison against ignition) to the SQP method, which
    /// may pin one (see `sqp::Sqp::pin`).
    kinks: bool,
}

/// One pass of a solve: a guess and a search on one [`PassSpec`].
fn run_pass(spec: PassSpec, o: &SolveOptions, run: &Run) -> Solution {
    // A cap too large for a `Duration` is no cap.
    let deadline = o.max_wall_s.and_then(|w| {
        Duration::try_from_secs_f64((w - run.t0.elapsed().as_secs_f64()).max(0.0)).ok()
    });
    let ctx = Ctx {
        polish: o.polish,
        spec,
        max_payload: o.objective == Objective::MaxPayload,
        flights: AtomicUsize::new(0),
        start: Instant::now(),
        deadline,
        max_flights: o.max_trajectories,
        obs: run.obs,
    };
    if o.method == Method::Nested {
        let start = outer::initial_guess(&ctx, o);
        ctx.obs.diagnostic(&|| {
            format!(
                "scan used {} trajectories",
                ctx.flights.load(Ordering::Relaxed)
            )
        });
        let best = outer::search_all(&ctx, start);
        return finish(&ctx, best);
    }
    let starts = outer::starts(&ctx, o);
    let scanned = ctx.flights.load(Ordering::Relaxed);
    ctx.obs
        .diagnostic(&|| format!("{} starts, {scanned} trajectories", starts.len()));
    let prog = nlp::Ascent::new(&ctx);
    // A held limit: its pass starts from the free optimum, over the limit; phase 1 first finds
    // a program under it (see `nlp::Restore`), or the evidence that none reaches the target.
    let mut phase1_peak = None;
    let restored = match starts.len() {
        1 if ctx.spec.q_limit.is_some() => {
            let mut starts = starts;
            match nlp::restore(&prog, starts.remove(0)) {
                nlp::Restored::Start(s, level) => {
                    phase1_peak = level;
                    Ok(vec![s])
                }
                nlp::Restored::OutOfReach(found) => Err(*found),
            }
        }
        _ => Ok(starts),
    };
    let out_of_reach = restored.is_err();
    let found = match restored {
        Ok(starts) => nlp::search(&prog, starts, o),
        Err(found) => found,
    };
    ctx.obs.diagnostic(&|| {
        format!(
            "search: {:?} after {} iterations, {} evaluations",
            found.outcome.status, found.outcome.iterations, found.outcome.evaluations
        )
    });
    let k = ctx.spec.inner.len();
    let sqp_point = outer::Candidate {
        outer: found.x[k..].to_vec(),
        inner: found.x[..k].to_vec(),
        eval: found.eval.clone(),
        iterations: 0,
        budget_hit: false,
        reason: String::new(),
        at_iteration_limit: false,
        kick_bracket: None,
    };
    let proven_infeasible = found.outcome.status == sqp::Status::Infeasible;
    let sens = if found.outcome.status == sqp::Status::Converged {
        sensitivity::of_optimum(&prog, &found.outcome)
    } else {
        Vec::new()
    };
    let mut sol = finish_found(&ctx, found);
    if let Some(over) = phase1_peak.filter(|l| *l > 0.0) {
        if sol.convergence.status == SolveStatus::Infeasible {
            sol.convergence.reason = format!(
                "held-limit phase 1 stalled {over:.2} kPa over the limit (the least peak it found \
                 over programs that reach the target); from there {}",
                sol.convergence.reason
            );
        }
    }
    if out_of_reach {
        sol.convergence.reason = format!(
            "held-limit phase 1: the least max-Q over programs that reach the target is \
             stationary at {:.2} kPa, above the {:.2} kPa limit ({} iterations)",
            sol.eval.max_q_pa / 1e3,
            ctx.spec.q_limit.unwrap_or(f64::NAN) / 1e3,
            sol.convergence.iterations
        );
    }
    if sol.convergence.status == SolveStatus::Converged {
        sol.sensitivities = sens;
        sol.convergence.trajectories = ctx.flights.load(Ordering::Relaxed);
    }
    // A verdict of infeasibility is evidence (a stationary point of the constraint violation,
    // reached from the two best starts): it is reported at once, with the shortfall of the best
    // point, rather than after thousands of nested trajectories (a 5× payload took 8 805).
    if matches!(
        sol.convergence.status,
        SolveStatus::Converged | SolveStatus::BudgetExhausted
    ) || proven_infeasible
        || ctx.out_of_budget()
    {
        return sol;
    }
    // The SQP method did not verify an optimum (a kink in max-Q where two humps meet, noise in
    // the finite differences, or no feasible point found): the nested search, whose inner
    // Newton solves keep every outer point on the target and whose simplex does not need
    // gradients, continues from the SQP point (or from its own kick scan when that point misses
    // the target). The better verified answer is kept.
    let starts = if sol.eval.reached && sol.eval.max_abs() < targeting::INSERTION_TOL {
        vec![sqp_point]
    } else {
        outer::initial_guess(&ctx, o)
    };
    let mut nested = finish(&ctx, outer::search_all(&ctx, starts));
    nested.convergence.reason = format!(
        "{}; then {}",
        sol.convergence.reason, nested.convergence.reason
    );
    nested.convergence.iterations += sol.convergence.iterations;
    let rank = |s: &Solution| {
        (
            s.convergence.status != SolveStatus::Converged,
            !(s.eval.reached && s.eval.max_abs() < targeting::INSERTION_TOL),
        )
    };
    if rank(&nested) < rank(&sol)
        || (rank(&nested) == rank(&sol) && objective(&nested.eval) <= objective(&sol.eval))
    {
        nested
    } else {
        Solution {
            convergence: Convergence {
                trajectories: nested.convergence.trajectories,
                reason: nested.convergence.reason.clone(),
                ..sol.convergence
            },
            ..sol
        }
    }
}

/// The solution of a pass from the search's result.
fn finish_found(ctx: &Ctx, found: nlp::Found) -> Solution {
    let k = ctx.spec.inner.len();
    let best = outer::Candidate {
        outer: found.x[k..].to_vec(),
        inner: found.x[..k].to_vec(),
        eval: found.eval,
        iterations: found.outcome.iterations,
        budget_hit: matches!(found.outcome.status, sqp::Status::EvaluationLimit)
            || ctx.out_of_budget(),
        reason: describe(&found.outcome, found.starts_tried),
        at_iteration_limit: matches!(found.outcome.status, sqp::Status::IterationLimit),
        kick_bracket: None,
    };
    let mut sol = finish(ctx, best);
    // The program's own verdict: its inequalities (a held max-Q limit, the last stage not running
    // dry) count as met when below zero, which the residual test of `finish` cannot tell.
    let met = sol.eval.reached && found.outcome.values.max_violation() <= targeting::INSERTION_TOL;
    sol.convergence.status = match found.outcome.status {
        _ if sol.convergence.status == SolveStatus::BudgetExhausted => SolveStatus::BudgetExhausted,
        sqp::Status::EvaluationLimit => SolveStatus::BudgetExhausted,
        _ if !met => SolveStatus::Infeasible,
        sqp::Status::Converged => SolveStatus::Converged,
        sqp::Status::IterationLimit => SolveStatus::IterationLimit,
        sqp::Status::Stalled | sqp::Status::Infeasible => SolveStatus::Stalled,
    };
    sol
}

/// How the search ended, in words.
fn describe(o: &sqp::Outcome, starts: usize) -> String {
    let how = match o.status {
        sqp::Status::Converged => "optimality and feasibility conditions met",
        sqp::Status::Infeasible => {
            "the constraints (terminal conditions, held limits) cannot be met from the best start"
        }
        sqp::Status::Stalled => "no further improving step found",
        sqp::Status::IterationLimit => "iteration limit",
        sqp::Status::EvaluationLimit => "trajectory budget spent",
    };
    format!(
        "SQP: {how} after {} iterations and {} trajectories (stationarity {:.1e}; {starts} start{})",
        o.iterations,
        o.evaluations,
        o.stationarity,
        if starts == 1 { "" } else { "s" }
    )
}

fn finish(ctx: &Ctx, best: outer::Candidate) -> Solution {
    let problem = ctx.problem_with(&best.outer, &best.inner);
    let variables = ctx
        .spec
        .inner
        .iter()
        .chain(&ctx.spec.outer)
        .map(|v| (*v, v.get(&problem).unwrap_or(f64::NAN)))
        .collect();
    let met = best.eval.reached && conditions_met(ctx, &best.eval);
    let status = if best.budget_hit {
        SolveStatus::BudgetExhausted
    } else if !met {
        SolveStatus::Infeasible
    } else if best.at_iteration_limit {
        SolveStatus::IterationLimit
    } else {
        SolveStatus::Converged
    };
    let convergence = Convergence {
        status,
        reason: best.reason.clone(),
        iterations: best.iterations,
        trajectories: ctx.flights.load(Ordering::Relaxed),
        wall_s: ctx.start.elapsed().as_secs_f64(),
        terminal_residuals: residual_names(&ctx.spec.target, &best.eval),
    };
    Solution {
        problem,
        variables,
        eval: best.eval,
        convergence,
        active: Vec::new(),
        sensitivities: Vec::new(),
    }
}

/// The terminal conditions and a held max-Q limit are met within the insertion tolerance: the
/// max-Q residual (the one before the last, when a limit is held) counts only above the limit,
/// a flight that peaks below it meets the limit.
fn conditions_met(ctx: &Ctx, e: &Eval) -> bool {
    let n = e.residuals.len();
    let q_at = (ctx.spec.q_limit.is_some() && n >= 2).then(|| n - 2);
    e.residuals.iter().enumerate().all(|(i, r)| {
        let r = if Some(i) == q_at { r.max(0.0) } else { r.abs() };
        r < targeting::INSERTION_TOL
    })
}

/// Residuals in physical units with their names.
fn residual_names(t: &Target, e: &Eval) -> Vec<(String, f64)> {
    use crate::core::problem::Insertion;
    let r_km = targeting::R_SCALE_M / 1e3;
    let deg = targeting::ANGLE_SCALE_RAD.to_degrees();
    let mut names: Vec<(&str, f64)> = match t.insertion {
        Insertion::Perigee => vec![
            ("cutoff_radius_minus_perigee_km", r_km),
            ("flight_path_angle_deg", deg),
        ],
        Insertion::Free => vec![("perigee_alt_error_km", r_km)],
        Insertion::State { .. } => vec![
            ("insertion_alt_error_km", r_km),
            ("flight_path_angle_error_deg", deg),
        ],
    };
    match t.inclination_rad {
        Some(i) if targeting::equatorial(i) => {
            names.push(("orbit_normal_tilt_x_deg", deg));
            names.push(("orbit_normal_tilt_y_deg", deg));
        }
        Some(_) => names.push(("inclination_error_deg", deg)),
        None => {}
    }
    if e.residuals.len() == targeting::residual_count(t, Some(0.0)) {
        names.push(("max_q_minus_limit_kpa", targeting::Q_SCALE_PA / 1e3));
    }
    names.push((
        "energy_shortfall_fraction",
        1.0 / targeting::SHORTFALL_WEIGHT,
    ));
    names
        .iter()
        .zip(&e.residuals)
        .map(|((n, s), r)| (n.to_string(), r * s))
        .collect()
}
