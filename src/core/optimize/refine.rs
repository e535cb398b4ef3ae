//! Refinement (`solve --refine`): the thrust direction freed on every powered arc, to measure how
//! far the simple program (gravity turn and linear tangent) is from the best the same vehicle can
//! do, and to fly that best.
//!
//! Direct shooting with a piecewise-linear control (Betts, *Practical Methods for Optimal Control
//! and Estimation Using Nonlinear Programming*, 2nd ed., 2010, §3.5 and §4.2, from memory): on
//! every powered arc the pitch and (with an inclination target) the heading are tabulated at `N`
//! nodes spread evenly over the arc as the shooting optimum flew it, linear between nodes
//! ([`AttitudeTable`]). The node values are the variables of the same constrained program as the
//! shooting solve ([`super::sqp`]): least propellant, the terminal conditions as equalities, the
//! last stage not running dry, a max-Q limit as `(max-Q − limit)/1 kPa ≤ 0` and a q·α limit
//! (`limits.max_q_alpha_pa_deg`) as `(max q·α − limit)/1 kPa·deg ≤ 0`. Both maxima are the
//! simulator's continuous ones (refined between steps), so the limits hold along the whole
//! flight, not only at the nodes. Everything else stays as the shooting solve left it: the
//! vertical rise (held vertical on the first arc), coasts, the throttle bucket, the launch
//! azimuth, the cutoff on the target energy. The start is the shooting optimum itself, sampled
//! at the nodes, so the refined program is never worse than the one it starts from.
//!
//! A node moves the control only from the node before it on, so its finite-difference column
//! is flown from a checkpoint of the current point's flight there ([`crate::core::sim::fly_from`],
//! bit for bit the flight from the pad; `Refine::eval`): on average under half a flight each.

use std::sync::{Arc as Shared, Mutex};

use rayon::prelude::*;

use super::sqp::{self, Program, Settings, Status, Values};
use super::targeting::{self, Eval, Q_SCALE_PA, SHORTFALL_WEIGHT};
use super::{SolveError, SolveStatus};
use crate::core::problem::{Problem, Target};
use crate::core::sim::{fly, fly_from, fly_recording, ArcKind, Checkpoint, FlyOptions, ResumeAt};
use crate::core::steering::{Arc, AttitudeTable, PitchTable, RiseEnd, Steering};

/// Settings of a refinement.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RefineOptions {
    /// Nodes per powered arc (default 20; at least 4).
    pub nodes_per_arc: usize,
    /// Trajectory budget (default 20 000).
    pub max_trajectories: usize,
}

impl Default for RefineOptions {
    fn default() -> Self {
        RefineOptions {
            nodes_per_arc: 20,
            max_trajectories: 20_000,
        }
    }
}

/// A refined program.
#[derive(Debug, Clone)]
pub struct Refined {
    /// The problem with every powered arc steered by an attitude table.
    pub problem: Problem,
    /// Its evaluation.
    pub eval: Eval,
    /// How the search ended.
    pub status: SolveStatus,
    /// Why, in words.
    pub reason: String,
    /// Iterations.
    pub iterations: usize,
    /// Trajectories flown.
    pub trajectories: usize,
    /// Nodes per powered arc.
    pub nodes_per_arc: usize,
    /// Variables (node pitches and headings).
    pub variables: usize,
}

/// The attitude table of one powered arc: fixed nodes (a vertical rise) then free ones.
#[derive(Debug, Clone)]
struct ArcNodes {
    arc: usize,
    /// Fixed leading nodes: (t s, pitch rad, heading rad).
    fixed: Vec<(f64, f64, f64)>,
    /// Free node times, s.
    t_s: Vec<f64>,
    /// Start values: pitch and heading at the free nodes, rad.
    pitch0: Vec<f64>,
    heading0: Vec<f64>,
}

/// The refinement's program.
struct Refine<'a> {
    base: &'a Problem,
    target: Target,
    arcs: Vec<ArcNodes>,
    yaw: bool,
    q_limit: Option<f64>,
    /// q·α limit, Pa·deg.
    q_alpha_limit: Option<f64>,
    unit_kg: f64,
    lo: Vec<f64>,
    hi: Vec<f64>,
    /// The distinct points where a variable's control starts to differ, in flight order.
    resume_at: Vec<ResumeAt>,
    /// For each variable, its index in `resume_at`.
    resume_of: Vec<usize>,
    /// The latest points flown from the pad, newest first, with their checkpoints.
    flown: Mutex<Vec<Flown>>,
}

/// A point flown from the pad and its checkpoints (one per entry of `Refine::resume_at`).
struct Flown {
    x: Vec<f64>,
    checkpoints: Vec<Option<Shared<Checkpoint>>>,
}

/// Points kept with their checkpoints: the current iterate and the latest line-search trials.
const FLOWN_KEPT: usize = 4;

/// How to fly a point.
enum Start {
    /// From this checkpoint of a point that differs in at most one variable.
    From(Shared<Checkpoint>),
    /// From the pad, as a point that others will differ from (keeping its checkpoints).
    Record,
    /// From the pad.
    Pad,
}

/// Objective unit as a fraction of the liftoff mass (as the shooting program's).
const OBJECTIVE_UNIT: f64 = 1e-3;

impl Refine<'_> {
    /// The problem with the node values `x` (pitches of every arc, then headings when free).
    fn problem(&self, x: &[f64]) -> Problem {
        let mut p = self.base.clone();
        let mut k = 0;
        let n_pitch: usize = self.arcs.iter().map(|a| a.t_s.len()).sum();
        for a in &self.arcs {
            let n = a.t_s.len();
            let pitch = &x[k..k + n];
            let heading: Vec<f64> = if self.yaw {
                x[n_pitch + k..n_pitch + k + n].to_vec()
            } else {
                a.heading0.clone()
            };
            k += n;
            let mut t = Vec::new();
            let mut pr = Vec::new();
            let mut hr = Vec::new();
            for (tf, pf, hf) in &a.fixed {
                t.push(*tf);
                pr.push(*pf);
                hr.push(*hf);
            }
            t.extend_from_slice(&a.t_s);
            pr.extend_from_slice(pitch);
            hr.extend_from_slice(&heading);
            if let Some(Arc::Burn { steering, .. }) = p.program.arcs.get_mut(a.arc) {
                *steering = Steering::AttitudeTable(AttitudeTable {
                    pitch: PitchTable {
                        t_s: t,
                        pitch_rad: pr,
                    },
                    heading_rad: hr,
                });
            }
        }
        p
    }

    /// Flies the node values `x` and evaluates them. A point that differs from a kept one in a
    /// single variable (a finite-difference column) is flown from that point's checkpoint just
    /// before the variable's node interval: the flight up to there is the same (see
    /// `sim::fly_from`, bit for bit).
    fn eval(&self, x: &[f64]) -> Eval {
        let p = self.problem(x);
        let opts = FlyOptions::default();
        let f = match self.start(x) {
            Start::From(c) => fly_from(&p, &c),
            Start::Pad => fly(&p, &opts),
            Start::Record => {
                let (f, checkpoints) = fly_recording(&p, &opts, &self.resume_at);
                let mut kept = self.flown.lock().unwrap_or_else(|e| e.into_inner());
                kept.insert(
                    0,
                    Flown {
                        x: x.to_vec(),
                        checkpoints,
                    },
                );
                kept.truncate(FLOWN_KEPT);
                f
            }
        };
        targeting::evaluate_flight(&p, &self.target, None, false, &f)
    }

    /// Where to start the flight of `x`: the kept point nearest to it (fewest variables that
    /// differ, bit for bit) decides.
    fn start(&self, x: &[f64]) -> Start {
        let kept = self.flown.lock().unwrap_or_else(|e| e.into_inner());
        let nearest = kept
            .iter()
            .map(|k| {
                let mut differ = 0;
                let mut first = self.resume_at.len().saturating_sub(1);
                for (j, (a, b)) in x.iter().zip(&k.x).enumerate() {
                    if a.to_bits() != b.to_bits() {
                        differ += 1;
                        first = first.min(self.resume_of[j]);
                    }
                }
                (differ, k.checkpoints.get(first).cloned().flatten())
            })
            .min_by_key(|(differ, _)| *differ);
        match nearest {
            Some((d, Some(c))) if d <= 1 => Start::From(c),
            Some((d, None)) if d <= 1 => Start::Pad,
            _ => Start::Record,
        }
    }

    fn values(&self, e: &Eval) -> Values {
        let r = &e.residuals;
        let n = r.len().saturating_sub(1);
        let mut ineq = Vec::new();
        if e.reached {
            let loaded = self.base.vehicle.propellant_loaded_kg();
            ineq.push(-SHORTFALL_WEIGHT * (loaded - e.propellant_used_kg) / loaded);
        } else {
            ineq.push(r.last().copied().unwrap_or(f64::NAN));
        }
        if let Some(lim) = self.q_limit {
            ineq.push((e.max_q_pa - lim) / Q_SCALE_PA);
        }
        // q·α per 1 kPa·deg, on the simulator's continuous maximum.
        if let Some(lim) = self.q_alpha_limit {
            ineq.push((e.max_q_alpha_pa_deg - lim) / 1e3);
        }
        Values {
            f: e.propellant_used_kg / self.unit_kg,
            eq: r[..n].to_vec(),
            ineq,
            switch: Vec::new(),
        }
    }
}

impl Program for Refine<'_> {
    fn dim(&self) -> usize {
        self.lo.len()
    }

    fn bounds(&self) -> (Vec<f64>, Vec<f64>) {
        (self.lo.clone(), self.hi.clone())
    }

    fn evaluate(&self, xs: &[Vec<f64>]) -> Vec<Values> {
        xs.par_iter().map(|x| self.values(&self.eval(x))).collect()
    }
}

/// Refines the program of `shot` (a solved problem, least propellant, that reaches its target).
///
/// # Errors
/// [`SolveError::NoTarget`] without a target; [`SolveError::Structure`] when no arc is powered or
/// the node count is below 4.
pub fn refine(shot: &Problem, o: &RefineOptions) -> Result<Refined, SolveError> {
    let target = shot.target.ok_or(SolveError::NoTarget)?;
    if o.nodes_per_arc < 4 {
        return Err(SolveError::Structure {
            field: "refine".into(),
            reason: format!("{} nodes per arc; at least 4", o.nodes_per_arc),
        });
    }
    let f = fly(
        shot,
        &FlyOptions {
            record_step_s: Some(0.1),
            initial: None,
        },
    );
    let h = &f.history;
    // Pitch and heading of the thrust axis at `t` (nearest recorded sample; the record is every
    // 0.1 s, against node spacings of seconds).
    let at = |t: f64| {
        let i = h
            .partition_point(|s| s.t_s < t)
            .min(h.len().saturating_sub(1));
        h.get(i)
            .map_or((std::f64::consts::FRAC_PI_2, shot.azimuth_rad), |s| {
                let pitch = s.pitch_deg.to_radians();
                // Near the vertical the heading is undefined: the launch azimuth.
                let heading = if s.pitch_deg > 89.5 {
                    shot.azimuth_rad
                } else {
                    s.heading_deg.to_radians()
                };
                (pitch, heading)
            })
    };
    let rise_end_s = f
        .events
        .iter()
        .find(|e| e.kind == crate::core::sim::EventKind::PitchOverStart)
        .map(|e| e.at.t_s)
        .or_else(|| match shot.program.liftoff.map(|l| l.rise) {
            Some(RiseEnd::Time(t)) => Some(t),
            _ => None,
        });
    let mut arcs = Vec::new();
    let mut burn = 0;
    for (i, a) in shot.program.arcs.iter().enumerate() {
        if !matches!(a, Arc::Burn { .. }) {
            continue;
        }
        // The flown arcs are the program's, in order, up to where the flight ended.
        let Some(rec) = f.arcs.iter().filter(|r| r.kind == ArcKind::Burn).nth(burn) else {
            break;
        };
        burn += 1;
        let mut fixed = Vec::new();
        let mut t0 = rec.t0_s;
        if i == 0 {
            if let Some(tr) = rise_end_s.filter(|t| *t > rec.t0_s && *t < rec.t1_s) {
                // The vertical rise stays vertical (tower clearance): two fixed nodes.
                let up = std::f64::consts::FRAC_PI_2;
                fixed.push((rec.t0_s, up, shot.azimuth_rad));
                fixed.push((tr, up, shot.azimuth_rad));
                t0 = tr;
            }
        }
        let n = o.nodes_per_arc;
        let t_s: Vec<f64> = (0..n)
            .map(|k| {
                let first = if fixed.is_empty() { 0 } else { 1 };
                let span = (n - 1 + first) as f64;
                let u = (k + first) as f64 / span;
                // The first arc turns fastest just after the rise: nodes graded toward it.
                let u = if i == 0 { u * u } else { u };
                t0 + (rec.t1_s - t0) * u
            })
            .collect();
        let (mut pitch0, mut heading0): (Vec<f64>, Vec<f64>) = t_s.iter().map(|t| at(*t)).unzip();
        // One branch of the heading along the arc (no jump across north).
        for k in 1..heading0.len() {
            let d = heading0[k] - heading0[k - 1];
            heading0[k] -= std::f64::consts::TAU * (d / std::f64::consts::TAU).round();
        }
        for p in &mut pitch0 {
            *p = p.clamp(-1.5, std::f64::consts::FRAC_PI_2);
        }
        arcs.push(ArcNodes {
            arc: i,
            fixed,
            t_s,
            pitch0,
            heading0,
        });
    }
    if arcs.is_empty() {
        return Err(SolveError::Structure {
            field: "ascent.arcs".into(),
            reason: "no powered arc was flown: nothing to refine".into(),
        });
    }
    let yaw = target.inclination_rad.is_some();
    let (resume_at, resume_of) = resume_points(&arcs, yaw);
    let (mut x0, mut lo, mut hi) = (Vec::new(), Vec::new(), Vec::new());
    for a in &arcs {
        for p in &a.pitch0 {
            x0.push(*p);
            lo.push(-1.5);
            hi.push(std::f64::consts::FRAC_PI_2);
        }
    }
    if yaw {
        for a in &arcs {
            for h in &a.heading0 {
                x0.push(*h);
                lo.push(h - 0.5);
                hi.push(h + 0.5);
            }
        }
    }
    let prog = Refine {
        base: shot,
        target,
        arcs,
        yaw,
        q_limit: shot.limits.max_dynamic_pressure_pa,
        q_alpha_limit: shot.limits.max_q_alpha_pa_deg,
        unit_kg: OBJECTIVE_UNIT * shot.vehicle.liftoff_mass_kg(),
        lo,
        hi,
        resume_at,
        resume_of,
        flown: Mutex::new(Vec::new()),
    };
    let settings = Settings {
        max_evaluations: o.max_trajectories,
        max_iterations: 200,
        tol_feas: super::inner::INNER_TOL,
        tol_opt: 1e-3,
        tol_progress: 1e-9,
        fd_step: 3e-4,
        max_step: 1.0,
        auto_scale: true,
        tol_gain: 1e-4,
        stop_at_f: f64::NEG_INFINITY,
    };
    let out = sqp::solve(&prog, &x0, &settings);
    let eval = prog.eval(&out.x);
    let met = eval.reached && out.values.max_violation() <= targeting::INSERTION_TOL;
    let status = match out.status {
        Status::EvaluationLimit => SolveStatus::BudgetExhausted,
        _ if !met => SolveStatus::Infeasible,
        Status::Converged => SolveStatus::Converged,
        Status::IterationLimit => SolveStatus::IterationLimit,
        Status::Stalled | Status::Infeasible => SolveStatus::Stalled,
    };
    let reason = match out.status {
        Status::Converged => "optimality and feasibility conditions met",
        Status::Infeasible => "the terminal conditions cannot be met from the start",
        Status::Stalled => "no further improving step found",
        Status::IterationLimit => "iteration limit",
        Status::EvaluationLimit => "trajectory budget spent",
    };
    Ok(Refined {
        problem: prog.problem(&out.x),
        eval,
        status,
        reason: format!(
            "SQP over {} node values: {reason} after {} iterations (stationarity {:.1e})",
            prog.dim(),
            out.iterations,
            out.stationarity
        ),
        iterations: out.iterations,
        trajectories: out.evaluations + 2,
        nodes_per_arc: o.nodes_per_arc,
        variables: prog.dim(),
    })
}

/// Where each variable's control starts to differ (pitches of every arc, then headings when
/// free, as the variables): a node moves the table on its arc from the node before it (linear
/// interpolation; held before the first node, so a first node without a fixed one before it
/// moves the arc from its start). Returns the distinct points in flight order and, for each
/// variable, its index among them.
fn resume_points(arcs: &[ArcNodes], yaw: bool) -> (Vec<ResumeAt>, Vec<usize>) {
    let per_node: Vec<ResumeAt> = arcs
        .iter()
        .flat_map(|a| {
            let before_first = a.fixed.last().map_or(f64::NEG_INFINITY, |f| f.0);
            (0..a.t_s.len()).map(move |k| ResumeAt {
                arc: a.arc,
                t_s: if k == 0 { before_first } else { a.t_s[k - 1] },
            })
        })
        .collect();
    let order = |a: &ResumeAt, b: &ResumeAt| a.arc.cmp(&b.arc).then(a.t_s.total_cmp(&b.t_s));
    let mut distinct = per_node.clone();
    distinct.sort_by(order);
    distinct.dedup_by(|a, b| order(a, b).is_eq());
    let index = |r: &ResumeAt| {
        distinct
            .binary_search_by(|d| order(d, r))
            .unwrap_or_default()
    };
    let mut of: Vec<usize> = per_node.iter().map(index).collect();
    if yaw {
        of.extend_from_within(..);
    }
    (distinct, of)
}
