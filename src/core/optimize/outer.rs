//! Outer search: automatic initial guess (kick scan) and the propellant minimization over the
//! outer variables (argmin: Brent in one dimension, Nelder–Mead in several), with the inner
//! terminal solve nested in every evaluation.

use std::sync::Mutex;

use argmin::core::{CostFunction, Error, Executor, TerminationReason, TerminationStatus};
use argmin::solver::brent::BrentOpt;
use argmin::solver::neldermead::NelderMead;
use nalgebra::Vector3;
use rayon::prelude::*;

use super::inner;
use super::targeting::Eval;
use super::{objective, Ctx, SolveOptions};
use crate::core::problem::params::Param;
use crate::core::problem::Problem;
use crate::core::random::SplitMix64;
use crate::core::sim::{fly, FlyOptions};
use crate::core::steering::{Arc, LawParam, Steering};

/// Objective returned once the budget is spent, kg.
const BUDGET_SPENT_COST: f64 = 1e30;

/// Kick angles tried by the initial scan, deg.
const KICK_GRID_DEG: [f64; 12] = [
    0.25, 0.5, 1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 6.5, 8.0, 10.0, 13.0,
];

/// Kick angles of the SQP method's starts, deg: a geometric grid (ratio 1.5) from 0.05° to 33°.
/// The kick that turns a vehicle onto a workable gravity turn spans three decades: about 0.1° at
/// a liftoff thrust-to-weight of 1.2 (the turn runs away from any larger kick), several degrees
/// at 1.5, tens of degrees after a 1 s vertical rise with a slow pitch-over; one trajectory each.
fn start_kicks_deg() -> impl Iterator<Item = f64> {
    (0..17).map(|i| 0.05 * 1.5_f64.powi(i))
}

/// A point of the search: outer and inner variables (normalized) and its evaluation.
#[derive(Debug, Clone)]
pub struct Candidate {
    /// Outer variables.
    pub outer: Vec<f64>,
    /// Inner variables solved for these outer ones.
    pub inner: Vec<f64>,
    /// Evaluation.
    pub eval: Eval,
    /// Outer evaluations so far.
    pub iterations: usize,
    /// The budget ended the search.
    pub budget_hit: bool,
    /// Why the search stopped, in words.
    pub reason: String,
    /// The (last) search stopped at its iteration limit rather than on its tolerance.
    pub at_iteration_limit: bool,
    /// Kick bracket (normalized) from the scan: the best scan point's neighbours.
    pub kick_bracket: Option<(f64, f64)>,
}

impl Candidate {
    fn cost(&self) -> f64 {
        objective(&self.eval)
    }
}

/// Automatic values for the laws: pitch 25° and a rate that brings the pitch to −25° over the
/// upper burns (flat-Earth linear tangent shape), circularization laws horizontal; apogee
/// cutoffs at the target apogee.
fn auto_laws(ctx: &Ctx, p: &mut Problem) {
    let t_upper: f64 = p.vehicle.stages[1.min(p.vehicle.stages.len() - 1)..]
        .iter()
        .map(|s| s.propellant_kg / s.engine.mdot_full_kg_s())
        .sum();
    let circ = ctx
        .spec
        .inner
        .iter()
        .any(|v| matches!(v, Param::ApogeeCutoff(_)));
    let last_owner = ctx.spec.inner.iter().find_map(|v| match v {
        Param::Law {
            arc,
            param: LawParam::Pitch0,
            ..
        } => Some(*arc),
        _ => None,
    });
    for (i, a) in p.program.arcs.iter_mut().enumerate() {
        if let Arc::Burn {
            steering: Steering::LinearTangent(lt),
            ..
        } = a
        {
            let horizontal = circ && Some(i) == last_owner;
            let p0 = if horizontal { 0.0 } else { 25f64.to_radians() };
            lt.pitch0_rad = p0;
            lt.tan_rate_per_s = if horizontal {
                0.0
            } else {
                2.0 * p0.tan() / t_upper.max(60.0)
            };
            lt.heading_rad = None;
        }
    }
    let apo = ctx.spec.target.apogee_alt_m;
    for v in &ctx.spec.inner {
        if let Param::ApogeeCutoff(_) = v {
            v.set(p, apo);
        }
    }
}

/// Heading at the start of the first law that reaches the target inclination:
/// cos i = cos φ sin ψ (spherical trigonometry; Kluever, Space Flight Dynamics, Ex. 3.3).
fn heading_guess(ctx: &Ctx, p: &Problem, arc: usize) -> f64 {
    let inc = ctx
        .spec
        .target
        .inclination_rad
        .unwrap_or(std::f64::consts::FRAC_PI_2);
    let f = fly(p, &FlyOptions::default());
    let Some(ph) = f.arcs.get(arc) else {
        return p.azimuth_rad;
    };
    let y = ph.y0;
    let r = Vector3::new(y[0], y[1], y[2]);
    let v = Vector3::new(y[3], y[4], y[5]);
    let loc = p.environment.local(ph.t0_s, &r, &v);
    let lat = (r.z / r.norm()).clamp(-1.0, 1.0).asin();
    let s = (inc.cos() / lat.cos()).clamp(-1.0, 1.0);
    let psi = s.asin();
    if v.dot(&loc.north) >= 0.0 {
        psi
    } else {
        std::f64::consts::PI - psi
    }
}

/// The starting points of the search: the program as written (missing headings guessed), then,
/// with the scan, the automatic program at every kick of the grid — one trajectory each, flown in
/// parallel.
pub fn starts(ctx: &Ctx, o: &SolveOptions) -> Vec<super::nlp::Start> {
    let vars: Vec<Param> = ctx
        .spec
        .inner
        .iter()
        .chain(&ctx.spec.outer)
        .copied()
        .collect();
    let mut written = ctx.spec.base.clone();
    guess_headings(ctx, &mut written, &vars, false);
    let mut points = vec![ctx.normalized(&vars, &written)];
    if o.scan {
        let mut p = ctx.spec.base.clone();
        auto_laws(ctx, &mut p);
        let mut jitter = jitter_laws(&mut p, o.perturb_seed);
        guess_headings(ctx, &mut p, &vars, true);
        let auto = ctx.normalized(&vars, &p);
        let shift = jitter.as_mut().map_or(1.0, |j| j.factor(0.3));
        match vars.iter().position(|v| *v == Param::Kick) {
            Some(k) => points.extend(start_kicks_deg().map(|deg| {
                let mut x = auto.clone();
                x[k] = shift * deg.to_radians() / Param::Kick.scale();
                x
            })),
            None => points.push(auto),
        }
    }
    let (lo, hi) = super::nlp::Ascent::new(ctx).pass_bounds();
    points
        .into_par_iter()
        .map(|x| {
            let x: Vec<f64> = x
                .iter()
                .zip(lo.iter().zip(&hi))
                .map(|(v, (l, h))| v.clamp(*l, *h))
                .collect();
            let k = ctx.spec.inner.len();
            let eval = ctx.eval(&x[k..], &x[..k]);
            super::nlp::Start { x, eval }
        })
        .collect()
}

/// With `--perturb-seed`: every linear tangent law's pitch and rate scaled by factors in
/// [0.7, 1.3] drawn from the seed; returns the generator for further draws.
fn jitter_laws(p: &mut Problem, seed: Option<u64>) -> Option<SplitMix64> {
    let mut jitter = seed.map(SplitMix64::new);
    if let Some(j) = jitter.as_mut() {
        for a in p.program.arcs.iter_mut() {
            if let Arc::Burn {
                steering: Steering::LinearTangent(lt),
                ..
            } = a
            {
                lt.pitch0_rad *= j.factor(0.3);
                lt.tan_rate_per_s *= j.factor(0.3);
            }
        }
    }
    jitter
}

/// Sets the heading of every law whose heading is tuned: a guess from the target inclination
/// where the program has none (or always, with `always`).
fn guess_headings(ctx: &Ctx, p: &mut Problem, vars: &[Param], always: bool) {
    for v in vars {
        if let Param::Law {
            arc,
            param: LawParam::Heading,
            ..
        } = v
        {
            if v.get(p).is_none() || always {
                let h = heading_guess(ctx, p, *arc);
                v.set(p, h);
            }
        }
    }
}

/// The automatic starting program, then the kick scan when enabled: the starting points of the
/// outer search.
pub fn initial_guess(ctx: &Ctx, o: &SolveOptions) -> Vec<Candidate> {
    let mut p = ctx.spec.base.clone();
    if o.scan {
        auto_laws(ctx, &mut p);
    }
    let mut jitter = jitter_laws(&mut p, o.perturb_seed);
    for v in ctx.spec.inner.iter().chain(&ctx.spec.outer) {
        if let Param::Law {
            arc,
            param: LawParam::Heading,
            ..
        } = v
        {
            if v.get(&p).is_none() || o.scan {
                let h = heading_guess(ctx, &p, *arc);
                v.set(&mut p, h);
            }
        }
    }
    let outer0 = ctx.normalized(&ctx.spec.outer, &p);
    let inner0 = ctx.normalized(&ctx.spec.inner, &p);
    let kick = ctx.spec.outer.iter().position(|v| *v == Param::Kick);
    // With an outer law, its initial pitch is scanned too when the plain kick scan finds no
    // start that meets the conditions: the feasible kick band of a low thrust-to-weight vehicle
    // moves with the upper-stage pitch.
    let law = ctx.spec.outer.iter().position(|v| {
        matches!(
            v,
            Param::Law {
                param: LawParam::Pitch0,
                ..
            }
        )
    });
    let shift = jitter.as_mut().map_or(1.0, |j| j.factor(0.3));
    let scan_row = |level: f64| -> Vec<Vec<f64>> {
        match (o.scan, kick) {
            (true, Some(k)) => KICK_GRID_DEG
                .iter()
                .map(|deg| {
                    let mut x = outer0.clone();
                    x[k] = shift * deg.to_radians() / Param::Kick.scale();
                    if let Some(q) = law {
                        x[q] *= level;
                    }
                    x
                })
                .collect(),
            _ => vec![outer0.clone()],
        }
    };
    let mut points = solve_points(ctx, &inner0, scan_row(1.0));
    let met = |pts: &[Candidate]| {
        pts.iter()
            .filter(|p| p.eval.max_abs() < inner::INNER_TOL)
            .count()
    };
    if o.scan && kick.is_some() && law.is_some() && met(&points) < 2 {
        for level in [0.6, 1.4] {
            points.extend(solve_points(ctx, &inner0, scan_row(level)));
        }
    }
    let mut starts: Vec<Candidate> = points
        .chunks(if o.scan && kick.is_some() {
            KICK_GRID_DEG.len()
        } else {
            points.len().max(1)
        })
        .flat_map(|row| scan_minima(row, kick))
        .collect();
    starts.sort_by(|a, b| a.cost().total_cmp(&b.cost()));
    starts.truncate(2);
    if starts.is_empty() {
        let e = ctx.eval(&[], &inner0);
        starts.push(Candidate {
            outer: Vec::new(),
            inner: inner0,
            eval: e,
            iterations: 0,
            budget_hit: true,
            reason: String::new(),
            at_iteration_limit: false,
            kick_bracket: None,
        });
    }
    starts
}

/// Inner solves of independent scan points, in parallel; results in input order (deterministic
/// whatever the thread count).
fn solve_points(ctx: &Ctx, inner0: &[f64], starts: Vec<Vec<f64>>) -> Vec<Candidate> {
    starts
        .into_par_iter()
        .map(|x| {
            let r = inner::solve_terminal(ctx, &x, inner0, None);
            Candidate {
                outer: x,
                inner: r.x,
                eval: r.eval,
                iterations: 0,
                budget_hit: false,
                reason: String::new(),
                at_iteration_limit: false,
                kick_bracket: None,
            }
        })
        .collect()
}

/// Local minima of the scan (cost no higher than both neighbours), best first, at most two:
/// the kick can have a lofted and a depressed optimum (multistart keeps both in play). Each
/// carries its grid neighbours as the kick bracket.
fn scan_minima(points: &[Candidate], kick: Option<usize>) -> Vec<Candidate> {
    let n = points.len();
    let cost = |i: usize| points[i].cost();
    let mut minima: Vec<usize> = (0..n)
        .filter(|&i| (i == 0 || cost(i) <= cost(i - 1)) && (i + 1 == n || cost(i) <= cost(i + 1)))
        .collect();
    minima.sort_by(|a, b| cost(*a).total_cmp(&cost(*b)).then(a.cmp(b)));
    minima.truncate(2);
    minima
        .into_iter()
        .map(|i| {
            let mut b = points[i].clone();
            if let (Some(k), true) = (kick, n > 1) {
                let at = |j: usize| points[j].outer[k];
                b.kick_bracket = Some(match i {
                    0 => (0.25 * at(0), at(1)),
                    i if i + 1 == n => (at(i - 1), 2.0 * at(i)),
                    i => (at(i - 1), at(i + 1)),
                });
            }
            b
        })
        .collect()
}

/// The outer objective with the inner solve nested, warm-started from the last solution.
struct Outer<'a> {
    ctx: &'a Ctx<'a>,
    warm: Mutex<Vec<f64>>,
    jac: Mutex<Option<nalgebra::DMatrix<f64>>>,
    best: Mutex<Candidate>,
    count: Mutex<usize>,
}

impl Outer<'_> {
    fn run(&self, x: &[f64]) -> Result<f64, Error> {
        // Out of budget: a large finite value, never an error (argmin's Nelder–Mead panics on an
        // error while it builds its simplex); the search then ends on its own limits, quickly.
        if self.ctx.out_of_budget() {
            return Ok(BUDGET_SPENT_COST);
        }
        let warm = self.warm.lock().map(|w| w.clone()).unwrap_or_default();
        let jac = self.jac.lock().ok().and_then(|j| j.clone());
        let before = self.ctx.flights.load(std::sync::atomic::Ordering::Relaxed);
        let r = inner::solve_terminal(self.ctx, x, &warm, jac.as_ref());
        self.ctx.obs.diagnostic(&|| {
            let n = self.ctx.flights.load(std::sync::atomic::Ordering::Relaxed) - before;
            format!(
                "outer {x:?} inner flights {n} conv {} res {:.2e} cost {:.3}",
                r.converged,
                r.eval.max_abs(),
                objective(&r.eval)
            )
        });
        if let (Ok(mut j), Some(new)) = (self.jac.lock(), r.jacobian.clone()) {
            *j = Some(new);
        }
        if let Ok(mut c) = self.count.lock() {
            *c += 1;
        }
        let cost = objective(&r.eval);
        if r.converged {
            if let Ok(mut w) = self.warm.lock() {
                w.clone_from(&r.x);
            }
        }
        if let Ok(mut b) = self.best.lock() {
            if cost < b.cost() {
                *b = Candidate {
                    outer: x.to_vec(),
                    inner: r.x,
                    eval: r.eval,
                    ..b.clone()
                };
            }
        }
        Ok(cost)
    }
}

struct Outer1<'a>(&'a Outer<'a>);

impl CostFunction for Outer1<'_> {
    type Param = f64;
    type Output = f64;
    fn cost(&self, x: &f64) -> Result<f64, Error> {
        self.0.run(&[*x])
    }
}

struct OuterN<'a>(&'a Outer<'a>);

impl CostFunction for OuterN<'_> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, x: &Vec<f64>) -> Result<f64, Error> {
        self.0.run(x)
    }
}

/// Minimizes propellant over the outer variables from each start; keeps the best.
pub fn search_all(ctx: &Ctx, starts: Vec<Candidate>) -> Candidate {
    let mut best: Option<Candidate> = None;
    let mut iterations = 0;
    for (k, s) in starts.into_iter().enumerate() {
        // A second start is worth its cost only when its scan value is close to the first's.
        if let Some(b) = &best {
            if k > 0 && s.cost() > b.cost() + 0.01 * b.eval.propellant_used_kg.abs().max(1.0) {
                continue;
            }
        }
        let r = search(ctx, s);
        iterations += r.iterations;
        if best.as_ref().is_none_or(|b| r.cost() < b.cost()) {
            best = Some(r);
        }
        if ctx.out_of_budget() {
            break;
        }
    }
    let skipped_for_budget = ctx.out_of_budget();
    let mut b = best.unwrap_or_else(|| unreachable_point(ctx));
    b.iterations = iterations;
    b.budget_hit |= skipped_for_budget;
    b
}

fn unreachable_point(ctx: &Ctx) -> Candidate {
    let e = ctx.eval(&[], &[]);
    Candidate {
        outer: Vec::new(),
        inner: Vec::new(),
        eval: e,
        iterations: 0,
        budget_hit: true,
        reason: "no start".into(),
        at_iteration_limit: false,
        kick_bracket: None,
    }
}

/// Minimizes propellant over the outer variables from `start`.
fn search(ctx: &Ctx, start: Candidate) -> Candidate {
    let n = start.outer.len();
    if n == 0 {
        return Candidate {
            reason: "no outer variables: terminal conditions solved".into(),
            ..start
        };
    }
    let outer = Outer {
        ctx,
        warm: Mutex::new(start.inner.clone()),
        jac: Mutex::new(None),
        best: Mutex::new(start.clone()),
        count: Mutex::new(0),
    };
    let result = if n == 1 && ctx.spec.outer[0] == Param::Kick {
        brent_kick(&outer, start.outer[0], start.kick_bracket)
    } else {
        // One restart from the best point with a smaller simplex: Nelder–Mead can stall on a
        // degenerate simplex (Kelley, Detection and remediation of stagnation, SIAM J. Optim.
        // 10(1), 1999, from memory).
        // Without a start that meets the conditions the search only minimizes the residual
        // penalty: keep it short, the problem is most likely infeasible.
        let met = start.eval.max_abs() < inner::INNER_TOL;
        let first = if met { 150 } else { 20 };
        nelder_mead(&outer, &start.outer, 0.1, first, 0.01).and_then(|r1| {
            let (b, met_now) = outer
                .best
                .lock()
                .map(|b| (b.outer.clone(), b.eval.max_abs() < inner::INNER_TOL))
                .unwrap_or_default();
            // No restart without a feasible point, or when the caller trades the last
            // kilogram for speed (sweeps).
            if !met_now || (met && !outer.ctx.polish) {
                return Ok(r1);
            }
            // From a start that meets the conditions: a restart with a smaller simplex; from
            // one that the penalty search made feasible: a full search.
            let step = if met { 0.02 } else { 0.1 };
            nelder_mead(&outer, &b, step, 150, 0.002).map(|r2| Ended {
                text: format!("{}; restart: {}", r1.text, r2.text),
                at_iteration_limit: r2.at_iteration_limit,
            })
        })
    };
    let mut best = outer.best.into_inner().unwrap_or(start);
    best.iterations = outer.count.into_inner().unwrap_or(0);
    best.budget_hit = ctx.out_of_budget();
    (best.reason, best.at_iteration_limit) = match result {
        Ok(r) if best.budget_hit => (
            format!("the wall-time or trajectory budget ran out ({})", r.text),
            r.at_iteration_limit,
        ),
        Ok(r) => (r.text, r.at_iteration_limit),
        Err(e) => (e.to_string(), false),
    };
    best
}

/// How one search ended: in words (for the report) and whether at its iteration limit.
struct Ended {
    text: String,
    at_iteration_limit: bool,
}

impl Ended {
    fn new(what: String, status: &TerminationStatus) -> Self {
        Ended {
            text: format!("{what}: {}", own_words(status)),
            at_iteration_limit: matches!(
                status,
                TerminationStatus::Terminated(TerminationReason::MaxItersReached)
            ),
        }
    }
}

/// A search's stopping reason in the tool's own words (not the optimization library's, which
/// read oddly mid-sentence: "Solver converged", "Maximum number of iterations reached").
fn own_words(status: &TerminationStatus) -> String {
    match status {
        TerminationStatus::NotTerminated => "still running".into(),
        TerminationStatus::Terminated(r) => match r {
            TerminationReason::SolverConverged => "converged to its tolerance".into(),
            TerminationReason::MaxItersReached => "stopped at its iteration limit".into(),
            TerminationReason::TargetCostReached => "reached its target value".into(),
            TerminationReason::Interrupt => "interrupted".into(),
            TerminationReason::Timeout => "stopped at its time limit".into(),
            TerminationReason::SolverExit(why) => format!("stopped ({why})"),
        },
    }
}

fn brent_kick(outer: &Outer, k0: f64, scan: Option<(f64, f64)>) -> Result<Ended, Error> {
    // A scan start is bracketed by its neighbours on the grid; any other start by a search.
    let (lo, hi) = match scan {
        Some(b) => b,
        None => bracket(outer, k0)?,
    };
    let solver = BrentOpt::new(lo, hi).set_tolerance(1e-10, 1e-5);
    let res = Executor::new(Outer1(outer), solver)
        .configure(|s| s.param(k0).max_iters(60))
        .run()?;
    Ok(Ended::new(
        "Brent search on the kick angle".into(),
        &res.state.termination_status,
    ))
}

/// Brackets the minimum downhill from `k0` by doubling steps (normalized kick units).
fn bracket(outer: &Outer, k0: f64) -> Result<(f64, f64), Error> {
    let lo_bound = Param::Kick.bounds().0 / Param::Kick.scale();
    let f0 = outer.run(&[k0])?;
    let mut step = (0.2 * k0).max(0.05);
    let fr = outer.run(&[k0 + step])?;
    let dir = if fr < f0 { 1.0 } else { -1.0 };
    let mut a = if dir > 0.0 { k0 } else { k0 + step };
    let (mut b, mut fb) = if dir > 0.0 { (k0 + step, fr) } else { (k0, f0) };
    for _ in 0..12 {
        let c = (b + dir * step).max(lo_bound);
        let fc = outer.run(&[c])?;
        if fc >= fb || c <= lo_bound {
            return Ok(if dir > 0.0 { (a, c) } else { (c, a) });
        }
        (a, b, fb) = (b, c, fc);
        step *= 2.0;
    }
    Ok(if dir > 0.0 {
        (a, b + step)
    } else {
        ((b - step).max(lo_bound), a)
    })
}

fn nelder_mead(
    outer: &Outer,
    x0: &[f64],
    step: f64,
    iters_per_var: u64,
    sd_kg: f64,
) -> Result<Ended, Error> {
    let n = x0.len();
    let mut simplex = vec![x0.to_vec()];
    // Steps of `step` × each variable (at least half that in normalized units): the feasible
    // region in the kick can be a fraction of a degree wide for a low thrust-to-weight vehicle.
    // Coasts get a long first step (20 s in the first pass): a staging coast can have a second,
    // much longer optimum (the heavy demo: 4 s → 81 s saves 1.1 t). Azimuth and heading steps
    // are absolute (2°), not a share of the angle's value.
    for i in 0..n {
        let mut x = x0.to_vec();
        x[i] += if matches!(
            outer.ctx.spec.outer[i],
            Param::Coast(_)
                | Param::Azimuth
                | Param::Law {
                    param: LawParam::Heading,
                    ..
                }
        ) {
            20.0 * step
        } else {
            (step * x0[i].abs()).max(0.5 * step)
        };
        simplex.push(x);
    }
    let solver = NelderMead::new(simplex).with_sd_tolerance(sd_kg)?;
    let res = Executor::new(OuterN(outer), solver)
        .configure(|s| s.max_iters(iters_per_var * n as u64))
        .run()?;
    Ok(Ended::new(
        format!("Nelder–Mead on {n} outer variables"),
        &res.state.termination_status,
    ))
}
