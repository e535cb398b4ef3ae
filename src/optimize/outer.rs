//! Outer search: automatic initial guess (kick scan) and the propellant minimization over the
//! outer variables (argmin: Brent in one dimension, Nelder–Mead in several), with the inner
//! terminal solve nested in every evaluation.

use std::sync::Mutex;

use argmin::core::{CostFunction, Error, Executor};
use argmin::solver::brent::BrentOpt;
use argmin::solver::neldermead::NelderMead;
use nalgebra::Vector3;

use super::design::Var;
use super::inner;
use super::targeting::Eval;
use super::{objective, Ctx, SolveOptions};
use crate::problem::Problem;
use crate::sim::{fly, FlyOptions};
use crate::steering::{Arc, Steering};

/// Kick angles tried by the initial scan, deg.
const KICK_GRID_DEG: [f64; 12] = [
    0.25, 0.5, 1.0, 1.5, 2.0, 3.0, 4.0, 5.0, 6.5, 8.0, 10.0, 13.0,
];

/// A point of the search: outer and inner variables (normalized) and its evaluation.
#[derive(Debug, Clone)]
pub struct Point {
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
    /// Why the search stopped.
    pub reason: String,
}

impl Point {
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
    let circ = ctx.inner.iter().any(|v| matches!(v, Var::ApogeeCutoff(_)));
    let last_owner = ctx.inner.iter().find_map(|v| match v {
        Var::Pitch0(a) => Some(*a),
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
    let apo = ctx.target.apogee_alt_m;
    for v in &ctx.inner {
        if let Var::ApogeeCutoff(_) = v {
            v.set(p, apo);
        }
    }
}

/// Heading at the start of the first law that reaches the target inclination:
/// cos i = cos φ sin ψ (spherical trigonometry; Kluever, Space Flight Dynamics, Ex. 3.3).
fn heading_guess(ctx: &Ctx, p: &Problem, arc: usize) -> f64 {
    let inc = ctx
        .target
        .inclination_rad
        .unwrap_or(std::f64::consts::FRAC_PI_2);
    let f = fly(p, &FlyOptions::default());
    let Some(ph) = f.phases.get(arc) else {
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

/// The automatic starting program, then the kick scan when enabled.
pub fn initial_guess(ctx: &Ctx, o: &SolveOptions) -> Point {
    let mut p = ctx.base.clone();
    if o.scan {
        auto_laws(ctx, &mut p);
    }
    for v in &ctx.inner {
        if let Var::Heading(arc) = v {
            if v.get(&p).is_none() || o.scan {
                let h = heading_guess(ctx, &p, *arc);
                v.set(&mut p, h);
            }
        }
    }
    let outer0 = ctx.normalized(&ctx.outer, &p);
    let inner0 = ctx.normalized(&ctx.inner, &p);
    let kick = ctx.outer.iter().position(|v| *v == Var::Kick);
    let starts: Vec<Vec<f64>> = match (o.scan, kick) {
        (true, Some(k)) => KICK_GRID_DEG
            .iter()
            .map(|deg| {
                let mut x = outer0.clone();
                x[k] = deg.to_radians() / Var::Kick.scale();
                x
            })
            .collect(),
        _ => vec![outer0],
    };
    let mut best: Option<Point> = None;
    for x in starts {
        let r = inner::solve(ctx, &x, &inner0);
        let pt = Point {
            outer: x,
            inner: r.x,
            eval: r.eval,
            iterations: 0,
            budget_hit: false,
            reason: String::new(),
        };
        if best.as_ref().is_none_or(|b| pt.cost() < b.cost()) {
            best = Some(pt);
        }
        if ctx.out_of_budget() {
            break;
        }
    }
    best.unwrap_or_else(|| {
        let e = ctx.eval(&[], &inner0);
        Point {
            outer: Vec::new(),
            inner: inner0,
            eval: e,
            iterations: 0,
            budget_hit: true,
            reason: String::new(),
        }
    })
}

/// The outer objective with the inner solve nested, warm-started from the last solution.
struct Outer<'a> {
    ctx: &'a Ctx<'a>,
    warm: Mutex<Vec<f64>>,
    best: Mutex<Point>,
    count: Mutex<usize>,
}

impl Outer<'_> {
    fn run(&self, x: &[f64]) -> Result<f64, Error> {
        if self.ctx.out_of_budget() {
            return Err(Error::msg("wall-time or trajectory budget spent"));
        }
        let warm = self.warm.lock().map(|w| w.clone()).unwrap_or_default();
        let r = inner::solve(self.ctx, x, &warm);
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
                *b = Point {
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

/// Minimizes propellant over the outer variables from `start`.
pub fn search(ctx: &Ctx, start: Point) -> Point {
    let n = start.outer.len();
    if n == 0 {
        return Point {
            reason: "no outer variables: terminal conditions solved".into(),
            ..start
        };
    }
    let outer = Outer {
        ctx,
        warm: Mutex::new(start.inner.clone()),
        best: Mutex::new(start.clone()),
        count: Mutex::new(0),
    };
    let result = if n == 1 && ctx.outer[0] == Var::Kick {
        brent_kick(&outer, start.outer[0])
    } else {
        nelder_mead(&outer, &start.outer)
    };
    let mut best = outer.best.into_inner().unwrap_or(start);
    best.iterations = outer.count.into_inner().unwrap_or(0);
    best.budget_hit = ctx.out_of_budget();
    best.reason = match result {
        Ok(r) => r,
        Err(e) => e.to_string(),
    };
    best
}

fn brent_kick(outer: &Outer, k0: f64) -> Result<String, Error> {
    let grid: Vec<f64> = KICK_GRID_DEG
        .iter()
        .map(|d| d.to_radians() / Var::Kick.scale())
        .collect();
    let i = grid.iter().position(|g| (g - k0).abs() < 1e-12);
    let (lo, hi) = match i {
        Some(0) => (grid[0] * 0.25, grid[1]),
        Some(i) if i + 1 == grid.len() => (grid[i - 1], grid[i] * 2.0),
        Some(i) => (grid[i - 1], grid[i + 1]),
        None => (k0 * 0.5, k0 * 1.5 + 0.5),
    };
    let solver = BrentOpt::new(lo, hi).set_tolerance(1e-10, 1e-5);
    let res = Executor::new(Outer1(outer), solver)
        .configure(|s| s.param(k0).max_iters(60))
        .run()?;
    Ok(format!(
        "Brent search on the kick angle: {}",
        res.state.termination_status
    ))
}

fn nelder_mead(outer: &Outer, x0: &[f64]) -> Result<String, Error> {
    let n = x0.len();
    let mut simplex = vec![x0.to_vec()];
    for i in 0..n {
        let mut x = x0.to_vec();
        x[i] += 0.5;
        simplex.push(x);
    }
    let solver = NelderMead::new(simplex).with_sd_tolerance(0.01)?;
    let res = Executor::new(OuterN(outer), solver)
        .configure(|s| s.max_iters(150 * n as u64))
        .run()?;
    Ok(format!(
        "Nelder–Mead on {n} outer variables: {}",
        res.state.termination_status
    ))
}
