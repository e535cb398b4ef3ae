//! A line-search SQP method for small, dense nonlinear programs whose functions are expensive
//! (one trajectory per evaluation) and whose derivatives come from finite differences:
//!
//! ```text
//! minimize f(x)  subject to  c_E(x) = 0,  c_I(x) ≤ 0,  l ≤ x ≤ u.
//! ```
//!
//! Method: Nocedal & Wright, *Numerical Optimization*, 2nd ed. (2006), Algorithm 18.3 (line-search
//! SQP): each iteration solves the quadratic model
//! `min ½pᵀBp + ∇fᵀp` s.t. `c_E + J_E p = 0`, `c_I + J_I p ≤ 0`, bounds and a step box, in its
//! elastic form (§18.3, "ℓ1 penalty"; slacks on the linearized constraints, so the subproblem is
//! always feasible and an infeasible nonlinear program is detected rather than crashed into), with
//! the interior-point QP solver Clarabel (Goulart & Chen, 2024). The step is accepted by backtracking
//! on the ℓ1 merit function `f + μ(‖c_E‖₁ + ‖c_I⁺‖₁)` (§15.4, eq. 18.27–18.29) with
//! `μ > ‖λ‖∞`. `B` is the damped BFGS approximation of the Lagrangian's Hessian (Powell's
//! damping, §18.3, Procedure 18.2). Gradients and Jacobians are forward differences, every column
//! evaluated in one batch (the problem may run a batch in parallel).
//!
//! Termination (scale-free, on scaled variables and functions): converged when the constraints are
//! met within `tol_feas` and the step and the Lagrangian's gradient at the QP multipliers are
//! below `tol_opt` (the first-order KKT conditions to that tolerance); `Infeasible` when the
//! elastic subproblem keeps a nonzero linearized violation at a point where the violation cannot
//! be reduced further (a stationary point of the violation).

use clarabel::algebra::CscMatrix;
use clarabel::solver::{
    DefaultSettings, DefaultSolver, IPSolver, SolverStatus,
    SupportedConeT::{NonnegativeConeT, ZeroConeT},
};
use nalgebra::{DMatrix, DVector};

/// A variable this close to a bound (relative to `1 + |x|`) sits on it: the interior-point
/// subproblem stops short of its bounds by about this much.
const BOUND_TOL: f64 = 1e-6;

/// The final test's second look, at this many difference steps (see `Sqp::final_test`).
const KINK_PROBE: f64 = 10.0;

/// The smallest variable scale factor of [`Sqp::rescale`].
const MIN_SCALE: f64 = 1e-5;

/// The values of the program at one point.
#[derive(Debug, Clone, PartialEq)]
pub struct Values {
    /// Objective.
    pub f: f64,
    /// Equality constraints (met at 0).
    pub eq: Vec<f64>,
    /// Inequality constraints (met when ≤ 0).
    pub ineq: Vec<f64>,
    /// Switching functions: where one changes sign the functions above have a kink (an event
    /// order changes). Not constraints; the method may pin one at zero (see `Sqp::pins`).
    pub switch: Vec<f64>,
}

impl Values {
    /// No values: a point not evaluated (past a wall-time cap, or before the first evaluation);
    /// its objective is NaN and its merit infinite.
    pub fn unevaluated() -> Values {
        Values {
            f: f64::NAN,
            eq: Vec::new(),
            ineq: Vec::new(),
            switch: Vec::new(),
        }
    }

    /// ℓ1 violation `‖c_E‖₁ + ‖c_I⁺‖₁` (infinite for a non-finite value).
    pub fn violation(&self) -> f64 {
        let v = self.eq.iter().map(|c| c.abs()).sum::<f64>()
            + self.ineq.iter().map(|c| c.max(0.0)).sum::<f64>();
        if v.is_finite() && self.f.is_finite() {
            v
        } else {
            f64::INFINITY
        }
    }

    /// Largest violation of any constraint.
    pub fn max_violation(&self) -> f64 {
        let m = self
            .eq
            .iter()
            .map(|c| c.abs())
            .chain(self.ineq.iter().map(|c| c.max(0.0)))
            .fold(0.0, f64::max);
        if m.is_finite() {
            m
        } else {
            f64::INFINITY
        }
    }
}

/// A nonlinear program in scaled variables.
pub trait Program: Sync {
    /// Number of variables.
    fn dim(&self) -> usize;
    /// Lower and upper bounds.
    fn bounds(&self) -> (Vec<f64>, Vec<f64>);
    /// The values at each point, in order (an implementation may evaluate them in parallel).
    fn evaluate(&self, xs: &[Vec<f64>]) -> Vec<Values>;
    /// A developers' trace line (one per iteration); the default drops it.
    fn trace(&self, _line: &dyn Fn() -> String) {}
}

/// Settings of the method.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Settings {
    /// Iteration limit (default 60).
    pub max_iterations: usize,
    /// Evaluation limit, counting every point evaluated (default 400).
    pub max_evaluations: usize,
    /// Constraint tolerance (default 1e-6).
    pub tol_feas: f64,
    /// First-order optimality tolerance, relative to `max(1, ‖∇f‖∞)` (default 1e-6).
    pub tol_opt: f64,
    /// Relative merit change below which an accepted step counts as no progress (default
    /// 1e-10); three in a row, or a failed line search at a feasible point, end the run with a
    /// two-sided optimality test.
    pub tol_progress: f64,
    /// Forward-difference step (default 1e-4).
    pub fd_step: f64,
    /// Largest step per iteration in each variable (default 1).
    pub max_step: f64,
    /// Rescale the variables from the first derivatives (default false; see `Sqp::rescale`).
    pub auto_scale: bool,
    /// The final (two-sided) test also passes when the gain still available, estimated from
    /// measured slopes and curvature (`Sqp::measured_gain`), is below this, in objective units
    /// (default 1e-10). Finite-difference truncation leaves a Lagrangian-gradient floor near
    /// `h·‖∇²L‖`, above a relative `tol_opt`, at points whose remaining gain is far below
    /// anything that matters. (The gain the quadratic model promises, Kraft's SLSQP test, was
    /// tried and rejected: right after a quasi-Newton reset it promised nothing at points 0.4 kg
    /// from the optimum.)
    pub tol_gain: f64,
    /// Stop, as converged, at the first feasible iterate whose objective is at or below this
    /// (default −∞: never). Phase 1 of a restoration needs a feasible point, not the optimum.
    pub stop_at_f: f64,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            max_iterations: 60,
            max_evaluations: 400,
            tol_feas: 1e-6,
            tol_opt: 1e-6,
            tol_progress: 1e-10,
            fd_step: 1e-4,
            max_step: 1.0,
            auto_scale: false,
            tol_gain: 1e-10,
            stop_at_f: f64::NEG_INFINITY,
        }
    }
}

/// How the method ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Status {
    /// First-order optimality and feasibility within the tolerances.
    Converged,
    /// The constraints cannot be met from here: the linearized violation cannot be reduced.
    Infeasible,
    /// The constraints are met, but no step improves the objective and the first-order test
    /// (two-sided at the end) did not pass: a kink in the functions or noise.
    Stalled,
    /// The iteration limit ended the run.
    IterationLimit,
    /// The evaluation limit ended the run.
    EvaluationLimit,
}

/// The result.
#[derive(Debug, Clone)]
pub struct Outcome {
    /// The best point found (the last accepted iterate).
    pub x: Vec<f64>,
    /// Its values.
    pub values: Values,
    /// Multipliers of the equality constraints (Lagrangian `f + λᵀc`), then of the pinned
    /// switching functions.
    pub lambda_eq: Vec<f64>,
    /// Switching functions pinned at zero at the end (indices into `Values::switch`); the
    /// optimum sits on their kink.
    pub pins: Vec<usize>,
    /// Multipliers of the inequality constraints (≥ 0).
    pub lambda_ineq: Vec<f64>,
    /// Variables at a bound at the end: (index, true for the upper bound).
    pub at_bounds: Vec<(usize, bool)>,
    /// How it ended.
    pub status: Status,
    /// Iterations.
    pub iterations: usize,
    /// Points evaluated.
    pub evaluations: usize,
    /// Stationarity measure at the end (`‖Bp‖∞` and `‖p‖∞`, the larger).
    pub stationarity: f64,
}

/// Solves the convex QP `min ½zᵀPz + qᵀz` s.t. the first `n_eq` rows hold with equality and the
/// others as `row · z ≤ rhs`, with Clarabel (quiet: the library never prints). Returns the
/// solution and the constraint duals, or `None` when the solver does not report a solution.
fn solve_qp(
    p_upper: &[Vec<f64>],
    q: &[f64],
    rows: &[Vec<f64>],
    rhs: &[f64],
    n_eq: usize,
) -> Option<(Vec<f64>, Vec<f64>)> {
    let cones = [ZeroConeT(n_eq), NonnegativeConeT(rows.len() - n_eq)];
    let settings = DefaultSettings::<f64> {
        verbose: false,
        max_iter: 100,
        ..DefaultSettings::default()
    };
    let pm = CscMatrix::from(p_upper);
    let am = CscMatrix::from(rows);
    let mut solver = DefaultSolver::new(&pm, q, &am, rhs, &cones, settings).ok()?;
    solver.solve();
    let sol = &solver.solution;
    matches!(
        sol.status,
        SolverStatus::Solved | SolverStatus::AlmostSolved
    )
    .then(|| (sol.x.clone(), sol.z.clone()))
}

/// Solves `prog` from `x0` (clamped into the bounds).
pub fn solve(prog: &dyn Program, x0: &[f64], s: &Settings) -> Outcome {
    Sqp::new(prog, x0, s).run()
}

/// The state of one run.
struct Sqp<'a> {
    prog: &'a dyn Program,
    s: Settings,
    lo: Vec<f64>,
    hi: Vec<f64>,
    x: Vec<f64>,
    v: Values,
    b: DMatrix<f64>,
    mu: f64,
    /// Elastic penalty on the linearized violation (kept above the multipliers).
    rho: f64,
    /// Current step box (a trust region on the step, at most `Settings::max_step`).
    delta: f64,
    evals: usize,
    lam_eq: Vec<f64>,
    lam_in: Vec<f64>,
    /// Variable scaling: the method works on `x / d` (chosen from the first derivatives).
    d: Vec<f64>,
    /// Switching functions pinned at zero, appended to the equalities in this order.
    pins: Vec<usize>,
    /// Switching functions whose pin the unpinned optimality test refused.
    refused: Vec<usize>,
    /// A switching function that changed sign between the current point and a point of the
    /// last line search.
    crossed: Option<usize>,
    /// The run has been at a feasible point.
    was_feasible: bool,
}

/// A derivative snapshot at the current point: objective gradient and constraint Jacobians.
struct Derivs {
    g: DVector<f64>,
    je: DMatrix<f64>,
    ji: DMatrix<f64>,
}

/// The quadratic subproblem's answer.
struct Step {
    p: DVector<f64>,
    lam_eq: Vec<f64>,
    lam_in: Vec<f64>,
    /// ℓ1 violation of the linearized constraints after the step.
    lin_violation: f64,
}

impl<'a> Sqp<'a> {
    fn new(prog: &'a dyn Program, x0: &[f64], s: &Settings) -> Self {
        let (lo, hi) = prog.bounds();
        let x: Vec<f64> = x0
            .iter()
            .zip(lo.iter().zip(&hi))
            .map(|(x, (l, h))| x.clamp(*l, *h))
            .collect();
        let n = x.len();
        let mut me = Sqp {
            prog,
            s: *s,
            lo,
            hi,
            v: Values::unevaluated(),
            x,
            b: DMatrix::identity(n, n),
            mu: 1.0,
            rho: 1e3,
            delta: s.max_step,
            evals: 0,
            lam_eq: Vec::new(),
            lam_in: Vec::new(),
            d: vec![1.0; n],
            pins: Vec::new(),
            refused: Vec::new(),
            crossed: None,
            was_feasible: false,
        };
        let x0 = me.x.clone();
        me.v = me.eval(&[x0]).remove(0);
        me
    }

    fn eval(&mut self, xs: &[Vec<f64>]) -> Vec<Values> {
        self.evals += xs.len();
        let outer: Vec<Vec<f64>> = xs
            .iter()
            .map(|x| x.iter().zip(&self.d).map(|(x, d)| x * d).collect())
            .collect();
        let mut vals = self.prog.evaluate(&outer);
        for v in &mut vals {
            for &k in &self.pins {
                v.eq.push(v.switch.get(k).copied().unwrap_or(f64::NAN));
            }
        }
        vals
    }

    /// Notes a switching function (not pinned, not refused) that changed sign between the
    /// current point and `v`.
    fn watch_crossing(&mut self, v: &Values) {
        for (k, (a, b)) in self.v.switch.iter().zip(&v.switch).enumerate() {
            if a.is_finite()
                && b.is_finite()
                && (a.signum() != b.signum())
                && !self.pins.contains(&k)
                && !self.refused.contains(&k)
            {
                self.crossed = Some(k);
            }
        }
    }

    /// Pins switching function `k` at zero: an equality from now on (one batch of derivatives
    /// with the new row). A minimum on a kink of a piecewise-smooth function is a smooth minimum
    /// of the function restricted to the switching surface; quasi-Newton steps across the kink
    /// crawl (tens of iterations on the medium demo, where the upper stage's ignition meets the
    /// fairing jettison), steps along the surface converge as on a smooth problem (the
    /// active-set view of nonsmooth minima, Lewis & Overton, Math. Program. 141, 2013, from
    /// memory).
    fn pin(&mut self, k: usize) -> Derivs {
        self.pins.push(k);
        let s = self.v.switch.get(k).copied().unwrap_or(f64::NAN);
        self.v.eq.push(s);
        self.lam_eq.push(0.0);
        self.prog.trace(&|| format!("pin switch {k} at {s:.3e}"));
        self.derivatives(false)
    }

    /// At a minimum found with pins: the unpinned problem's two-sided optimality test. The
    /// pins are kept (and the outcome reports their multipliers) when it passes; otherwise they
    /// are dropped for good and the run goes on from the unpinned forward derivatives returned.
    fn verify_pins(&mut self) -> Result<f64, Derivs> {
        let saved = (self.v.clone(), self.pins.clone(), self.lam_eq.clone());
        let me = self.v.eq.len() - self.pins.len();
        self.v.eq.truncate(me);
        self.lam_eq.truncate(me);
        let pins = std::mem::take(&mut self.pins);
        let fwd = self.derivatives(false);
        let (st, r) = self.final_test(&fwd);
        self.prog
            .trace(&|| format!("unpinned test: {st:?}, stationarity {r:.2e}"));
        if st == Status::Converged {
            (self.v, self.pins, self.lam_eq) = saved;
            Ok(r)
        } else {
            self.refused.extend(pins);
            Err(fwd)
        }
    }

    /// Rescales the variables so that a unit step moves the most sensitive function (objective
    /// or constraint, all already in their own units) by about one unit: `d_j = 1/s_j`, with
    /// `s_j` the largest first derivative in column `j`, clamped to `[MIN_SCALE, 1]` (only
    /// over-sensitive variables shrink; a variable with no effect keeps its scale). Equilibrating
    /// the Jacobian's columns is the usual remedy for a badly scaled NLP (Gill, Murray & Wright,
    /// *Practical Optimization*, 1981, §8.7); here the pitch kick of a low-thrust vehicle moves
    /// the perigee by 10⁴ km per degree while the coasts move it by metres. The derivatives
    /// `d` were taken in the current scale and are converted in place.
    fn rescale(&mut self, d: &mut Derivs) {
        let n = self.x.len();
        for j in 0..n {
            let s =
                d.g.row(j)
                    .iter()
                    .chain(d.je.column(j).iter())
                    .chain(d.ji.column(j).iter())
                    .fold(0.0_f64, |m, v| m.max(v.abs()));
            let k = if s.is_finite() && s > 1.0 {
                (1.0 / s).max(MIN_SCALE)
            } else {
                1.0
            };
            self.d[j] *= k;
            self.x[j] /= k;
            self.lo[j] /= k;
            self.hi[j] /= k;
            d.g[j] *= k;
            d.je.column_mut(j).scale_mut(k);
            d.ji.column_mut(j).scale_mut(k);
        }
    }

    fn run(mut self) -> Outcome {
        let mut derivs = self.derivatives(false);
        if self.s.auto_scale {
            self.rescale(&mut derivs);
        }
        let mut status = Status::IterationLimit;
        let mut stationarity = f64::INFINITY;
        let mut iterations = 0;
        let mut flat = 0;
        let mut restarts = 0;
        for k in 0..self.s.max_iterations {
            iterations = k + 1;
            let feasible = self.v.max_violation() <= self.s.tol_feas;
            self.was_feasible |= feasible;
            stationarity = self.kkt_residual(&derivs, None);
            self.prog.trace(&|| {
                format!(
                    "sqp {k}: f {:.6} violation {:.2e} stationarity {:.2e} box {:.2e} evals {} mu {:.1e} lam {:?} x {:?}",
                    self.v.f,
                    self.v.max_violation(),
                    stationarity,
                    self.delta,
                    self.evals,
                    self.mu,
                    self.lam_eq.iter().map(|e| format!("{e:.1e}")).collect::<Vec<_>>(),
                    self.x.iter().zip(&self.d).map(|(v, d)| (v * d * 1e4).round() / 1e4).collect::<Vec<_>>()
                )
            });
            if feasible && (stationarity <= self.s.tol_opt || flat >= 3) && !self.pins.is_empty() {
                match self.verify_pins() {
                    Ok(r) => {
                        (status, stationarity) = (Status::Converged, r);
                        break;
                    }
                    Err(fwd) => {
                        derivs = fwd;
                        flat = 0;
                        continue;
                    }
                }
            }
            if feasible && (stationarity <= self.s.tol_opt || self.v.f <= self.s.stop_at_f) {
                status = Status::Converged;
                break;
            }
            if feasible && flat >= 3 {
                (status, stationarity) = self.final_test(&derivs);
                break;
            }
            let Some(step) = self.subproblem(&derivs) else {
                status = Status::Stalled;
                break;
            };
            self.lam_eq.clone_from(&step.lam_eq);
            self.lam_in.clone_from(&step.lam_in);
            // The linearized violation cannot be reduced and is not zero: the nonlinear
            // constraints are (locally) out of reach.
            if step.lin_violation > self.s.tol_feas && step.p.amax() <= 1e-9 && !feasible {
                status = Status::Infeasible;
                break;
            }
            if self.evals + 1 > self.s.max_evaluations {
                status = Status::EvaluationLimit;
                break;
            }
            let (x_old, phi_old) = (self.x.clone(), Self::merit(&self.v, self.mu));
            let searched = self.line_search(&derivs, &step);
            // The step met a kink (a switching function changed sign): pin it and go on along
            // the switching surface (see `Sqp::pin`).
            if let Some(k) = self.crossed.take() {
                if self.evals + self.x.len() > self.s.max_evaluations {
                    status = Status::EvaluationLimit;
                    break;
                }
                flat = 0;
                derivs = self.pin(k);
                continue;
            }
            if !searched {
                // A failed line search at a feasible point is most often a Hessian approximation
                // gone stale along a curved valley: start it afresh (at most twice) before
                // judging the point (Nocedal & Wright §6.1, on resetting quasi-Newton matrices).
                if feasible && restarts < 2 && self.evals < self.s.max_evaluations {
                    restarts += 1;
                    let n = self.x.len();
                    self.b = DMatrix::identity(n, n);
                    self.delta = self.s.max_step;
                    continue;
                }
                // Nearly feasible: one least-norm Newton step on the equalities restores
                // feasibility at the cost of one trajectory (and a fresh Jacobian).
                if !feasible
                    && restarts < 2
                    && self.v.max_violation() <= 1e3 * self.s.tol_feas
                    && self.evals + 1 + self.x.len() <= self.s.max_evaluations
                {
                    let zero = DVector::zeros(self.x.len());
                    let here = self.v.clone();
                    if let Some(c) = self.correction(&derivs, &here, &zero) {
                        let vc = self.eval(std::slice::from_ref(&c)).remove(0);
                        if vc.max_violation() < here.max_violation() {
                            restarts += 1;
                            self.x = c;
                            self.v = vc;
                            self.delta = self.s.max_step;
                            derivs = self.derivatives(false);
                            continue;
                        }
                    }
                }
                // Infeasible and still moving (the last steps reduced the violation): a failed
                // line search is no proof that the constraints are out of reach; the same fresh
                // start as at a feasible point (the medium demo with max-Q 35 kPa held by the
                // pitch program alone was called infeasible at a violation of 4e-3, falling).
                if !feasible && restarts < 2 && self.evals < self.s.max_evaluations {
                    restarts += 1;
                    let n = self.x.len();
                    self.b = DMatrix::identity(n, n);
                    self.delta = self.s.max_step;
                    continue;
                }
                status = if self.evals >= self.s.max_evaluations {
                    Status::EvaluationLimit
                } else if step.lin_violation > self.s.tol_feas && !feasible {
                    Status::Infeasible
                } else if feasible {
                    let (st, r) = self.final_test(&derivs);
                    stationarity = r;
                    st
                } else {
                    Status::Stalled
                };
                break;
            }
            let gain = phi_old - Self::merit(&self.v, self.mu);
            flat = if gain.abs() <= self.s.tol_progress * (1.0 + self.v.f.abs()) {
                flat + 1
            } else {
                0
            };
            if self.evals + self.x.len() > self.s.max_evaluations {
                status = Status::EvaluationLimit;
                break;
            }
            let next = self.derivatives(false);
            self.update_hessian(&x_old, &derivs, &next);
            derivs = next;
        }
        // The multipliers reported (sensitivities) are fitted afresh at the final point: the
        // last subproblem's belong to the point before the last step (the medium demo's
        // inclination sensitivity read 27.2 kg/deg from them against 30.2 from re-solves).
        if status == Status::Converged {
            self.fit_multipliers(&derivs);
        }
        let at_bounds = self
            .x
            .iter()
            .enumerate()
            .filter_map(|(i, x)| {
                let tol = BOUND_TOL * (1.0 + x.abs());
                if (x - self.hi[i]).abs() <= tol {
                    Some((i, true))
                } else if (x - self.lo[i]).abs() <= tol {
                    Some((i, false))
                } else {
                    None
                }
            })
            .collect();
        let mut values = self.v;
        values.eq.truncate(values.eq.len() - self.pins.len());
        Outcome {
            x: self.x.iter().zip(&self.d).map(|(x, d)| x * d).collect(),
            values,
            pins: self.pins,
            lambda_eq: self.lam_eq,
            lambda_ineq: self.lam_in,
            at_bounds,
            status,
            iterations,
            evaluations: self.evals,
            stationarity,
        }
    }

    /// One-sided differences of every function, all columns in one batch: forward, or backward
    /// with `backward`; a column whose point would leave the bounds is taken the other way.
    fn derivatives(&mut self, backward: bool) -> Derivs {
        self.derivatives_with(backward, self.s.fd_step)
    }

    /// [`Self::derivatives`] with the difference step `h`.
    fn derivatives_with(&mut self, backward: bool, h: f64) -> Derivs {
        let n = self.x.len();
        let mut points: Vec<Vec<f64>> = (0..n)
            .map(|j| {
                let mut y = self.x.clone();
                let fits_up = y[j] + h <= self.hi[j];
                let fits_down = y[j] - h >= self.lo[j];
                y[j] += if (backward && fits_down) || !fits_up {
                    -h
                } else {
                    h
                };
                y
            })
            .collect();
        let mut vals = self.eval(&points);
        self.one_side(&mut points, &mut vals);
        let (me, mi) = (self.v.eq.len(), self.v.ineq.len());
        let mut d = Derivs {
            g: DVector::zeros(n),
            je: DMatrix::zeros(me, n),
            ji: DMatrix::zeros(mi, n),
        };
        for (j, (pt, val)) in points.iter().zip(&vals).enumerate() {
            let dx = pt[j] - self.x[j];
            let ok = val.violation().is_finite() && val.eq.len() == me && val.ineq.len() == mi;
            if !ok || dx == 0.0 {
                continue;
            }
            d.g[j] = (val.f - self.v.f) / dx;
            for i in 0..me {
                d.je[(i, j)] = (val.eq[i] - self.v.eq[i]) / dx;
            }
            for i in 0..mi {
                d.ji[(i, j)] = (val.ineq[i] - self.v.ineq[i]) / dx;
            }
        }
        d
    }

    /// With pins: the difference columns whose point fell on the other side of a pinned
    /// switching surface than the current point are flown again with the opposite step. On the
    /// surface the function is continuous but its gradient jumps by a multiple of the switch's
    /// gradient; differences taken on both sides would mix the two gradients column by column,
    /// which no multiplier of the pin absorbs (the pinned search then stalls). One side (the
    /// current point's, or the positive side on the surface) keeps them consistent.
    fn one_side(&mut self, points: &mut [Vec<f64>], vals: &mut [Values]) {
        if self.pins.is_empty() {
            return;
        }
        // A difference across the kink is wrong by the gradient's jump however short the
        // crossing: the side is the current point's own (the positive one exactly on it).
        let side = |s: f64| s >= 0.0;
        let wrong = |v: &Values, me: &Self| {
            me.pins.iter().any(|&k| {
                let (a, b) = (me.v.switch[k], v.switch.get(k).copied().unwrap_or(f64::NAN));
                b.is_finite() && b != 0.0 && (b > 0.0) != side(a)
            })
        };
        let redo: Vec<usize> = (0..points.len())
            .filter(|&j| wrong(&vals[j], self))
            .filter(|&j| {
                let back = 2.0 * self.x[j] - points[j][j];
                back >= self.lo[j] && back <= self.hi[j]
            })
            .collect();
        if redo.is_empty() {
            return;
        }
        let again: Vec<Vec<f64>> = redo
            .iter()
            .map(|&j| {
                let mut y = points[j].clone();
                y[j] = 2.0 * self.x[j] - points[j][j];
                y
            })
            .collect();
        let vals2 = self.eval(&again);
        for ((&j, y), v) in redo.iter().zip(again).zip(vals2) {
            if !wrong(&v, self) {
                points[j] = y;
                vals[j] = v;
            }
        }
    }

    /// The test at the end of a run that stopped making progress at a feasible point: backward
    /// differences (one more batch), then the two-sided first-order test.
    fn final_test(&mut self, forward: &Derivs) -> (Status, f64) {
        if self.evals + self.x.len() > self.s.max_evaluations {
            return (Status::Stalled, self.kkt_residual(forward, None));
        }
        let back = self.derivatives(true);
        let h = self.s.fd_step;
        let r = self.kkt_residual(forward, Some(&back));
        let gain = self.measured_gain(forward, &back, h);
        self.prog
            .trace(&|| format!("final test: stationarity {r:.2e}, measured gain {gain:.2e}"));
        if r <= self.s.tol_opt || gain <= self.s.tol_gain {
            return (Status::Converged, r);
        }
        // A line search that fails along a direction of descent at step h, with the function
        // rising linearly from the smallest trial step on, has met a kink a little farther than
        // h (on the medium demo: the order of fairing drop and upper-stage ignition as the coast
        // changes). The two-sided test is repeated once at the resolution of those trial steps
        // (KINK_PROBE·h): slopes that bracket zero there are stationarity at that resolution,
        // as in gradient sampling (Burke, Lewis & Overton, SIAM J. Optim. 15, 2005).
        let h2 = KINK_PROBE * h;
        if self.evals + 2 * self.x.len() > self.s.max_evaluations {
            return (Status::Stalled, r);
        }
        let f2 = self.derivatives_with(false, h2);
        let b2 = self.derivatives_with(true, h2);
        let r2 = self.kkt_residual(&f2, Some(&b2));
        let gain2 = self.measured_gain(&f2, &b2, h2);
        self.prog.trace(&|| {
            format!("final test at step {h2:.1e}: stationarity {r2:.2e}, measured gain {gain2:.2e}")
        });
        if r2 <= self.s.tol_opt || gain2 <= self.s.tol_gain {
            (Status::Converged, r2)
        } else {
            (Status::Stalled, r)
        }
    }

    /// The objective gain still available along the coordinate directions, estimated from
    /// measured slopes and curvature rather than from the quasi-Newton matrix: for each variable
    /// off its bounds, the central slope of the Lagrangian `s = (r⁺ + r⁻)/2` and its second
    /// derivative `c = (r⁺ − r⁻)/h` (forward and backward differences at the same point) give the
    /// one-dimensional Newton decrement `s²/(2c)`; summed. Infinite where the curvature is not
    /// positive and the slope is not negligible. A point whose Lagrangian slopes are only
    /// finite-difference truncation (`h·c/2`, above a relative gradient tolerance on a strongly
    /// curved valley) passes; a point with a real slope does not.
    fn measured_gain(&self, fwd: &Derivs, back: &Derivs, h: f64) -> f64 {
        let n = self.x.len();
        let free: Vec<usize> = (0..n)
            .filter(|&j| {
                let tol = BOUND_TOL * (1.0 + self.x[j].abs());
                self.x[j] - self.lo[j] > tol && self.hi[j] - self.x[j] > tol
            })
            .collect();
        let (r, rb) = self.lagrangian_slopes(fwd, Some(back), &free);
        let Some(rb) = rb else {
            return f64::INFINITY;
        };

        self.prog.trace(&|| {
            format!(
                "slopes (forward, backward): {:?}",
                free.iter()
                    .map(|&j| (format!("{:.2e}", r[j]), format!("{:.2e}", rb[j])))
                    .collect::<Vec<_>>()
            )
        });
        free.iter().fold(0.0, |sum, &j| {
            let (sp, sm) = (r[j], rb[j]);
            let slope = 0.5 * (sp + sm);
            let curv = (sp - sm) / h;
            // Slopes that bracket zero: no descent either way (a smooth minimum, or a kink).
            let gain = if sm <= 0.0 && sp >= 0.0 {
                0.0
            } else if curv > 0.0 {
                slope * slope / (2.0 * curv)
            } else if slope.abs() <= self.s.tol_opt {
                0.0
            } else {
                f64::INFINITY
            };
            sum + gain
        })
    }

    /// First-order optimality measure: the largest component of the Lagrangian's gradient
    /// `∇f + J_Eᵀλ_E + J_Aᵀλ_A` with least-squares multipliers over the equalities and the active
    /// inequalities (a negative inequality multiplier drops that constraint), components that a
    /// bound blocks removed, relative to `max(1, ‖∇f‖∞)`.
    /// With `back` (backward differences at the same point), a component also passes when its
    /// one-sided slopes bracket zero (`r⁻ ≤ 0 ≤ r⁺`): the minimum sits on a kink in that
    /// variable (Clarke stationarity along it).
    fn kkt_residual(&self, d: &Derivs, back: Option<&Derivs>) -> f64 {
        let n = self.x.len();
        let on_bound = |j: usize| {
            let tol = BOUND_TOL * (1.0 + self.x[j].abs());
            self.x[j] - self.lo[j] <= tol || self.hi[j] - self.x[j] <= tol
        };
        let mut fit_on: Vec<usize> = (0..n).filter(|&j| !on_bound(j)).collect();
        let (mut r, mut r_back) = self.lagrangian_slopes(d, back, &fit_on);
        // A variable whose two one-sided slopes disagree sits on a kink: its slopes say nothing
        // about the multipliers, so they are fitted again without it.
        if let Some(rb) = &r_back {
            let scale = d.g.amax().max(1.0);
            let kinked = |j: usize| {
                let gap = (r[j] - rb[j]).abs();
                gap > self.s.tol_opt * scale && gap > 0.1 * r[j].abs().max(rb[j].abs())
            };
            let smooth: Vec<usize> = fit_on.iter().copied().filter(|&j| !kinked(j)).collect();
            if smooth.len() < fit_on.len() {
                fit_on = smooth;
                (r, r_back) = self.lagrangian_slopes(d, back, &fit_on);
            }
        }
        // Descent available along +x_j is max(−right, 0) and along −x_j max(left, 0), where right
        // and left are the one-sided slopes of the Lagrangian (both the forward slope without
        // `back`); a bound removes the direction it blocks.
        let worst = (0..n).fold(0.0_f64, |m, j| {
            let right = r[j];
            let left = r_back.as_ref().map_or(r[j], |rb| rb[j]);
            let tol = BOUND_TOL * (1.0 + self.x[j].abs());
            let up = if self.hi[j] - self.x[j] > tol {
                (-right).max(0.0)
            } else {
                0.0
            };
            let down = if self.x[j] - self.lo[j] > tol {
                left.max(0.0)
            } else {
                0.0
            };
            m.max(up).max(down)
        });
        worst / d.g.amax().max(1.0)
    }

    /// The Lagrangian's forward (and, with `back`, backward) slopes, with least-squares
    /// multipliers fitted on the variables `fit_on` over the equalities and the active
    /// inequalities (a negative inequality multiplier drops that constraint).
    fn lagrangian_slopes(
        &self,
        d: &Derivs,
        back: Option<&Derivs>,
        fit_on: &[usize],
    ) -> (DVector<f64>, Option<DVector<f64>>) {
        let (lam, active) = self.fitted_multipliers(d, fit_on);
        let m = self.v.eq.len() + active.len();
        let lam = lam.unwrap_or_else(|| DVector::zeros(m));
        let r = &d.g + self.constraint_rows(d, &active).transpose() * &lam;
        let rb = back.map(|b| &b.g + self.constraint_rows(b, &active).transpose() * &lam);
        (r, rb)
    }

    /// The equality rows then the inequality rows `active` of `d`'s Jacobians.
    fn constraint_rows(&self, d: &Derivs, active: &[usize]) -> DMatrix<f64> {
        let me = self.v.eq.len();
        let mut a = DMatrix::zeros(me + active.len(), self.x.len());
        for i in 0..me {
            a.set_row(i, &d.je.row(i));
        }
        for (k, &i) in active.iter().enumerate() {
            a.set_row(me + k, &d.ji.row(i));
        }
        a
    }

    /// Least-squares multipliers `∇f + J_Eᵀλ + J_Aᵀν ≈ 0` over the variables `fit_on`, with
    /// the active inequalities (a negative `ν` drops its row), and the rows kept active. `None`
    /// when there is nothing to fit or the fit fails.
    fn fitted_multipliers(
        &self,
        d: &Derivs,
        fit_on: &[usize],
    ) -> (Option<DVector<f64>>, Vec<usize>) {
        let mut active: Vec<usize> = (0..self.v.ineq.len())
            .filter(|&i| self.v.ineq[i] >= -self.s.tol_feas && d.ji.row(i).amax() > 0.0)
            .collect();
        loop {
            let a = self.constraint_rows(d, &active);
            let m = a.nrows();
            if m == 0 || fit_on.is_empty() {
                return (None, active);
            }
            let at = DMatrix::from_fn(fit_on.len(), m, |r, c| a[(c, fit_on[r])]);
            let rhs = DVector::from_fn(fit_on.len(), |r, _| -d.g[fit_on[r]]);
            let Ok(lam) = at.svd(true, true).solve(&rhs, 1e-12) else {
                return (None, active);
            };
            let me = self.v.eq.len();
            if let Some(k) = (0..active.len()).find(|k| lam[me + k] < 0.0) {
                active.remove(k);
                continue;
            }
            return (Some(lam), active);
        }
    }

    /// Least-squares multipliers at the current point over the variables off their bounds
    /// ([`Self::fitted_multipliers`]), stored as the run's multipliers.
    fn fit_multipliers(&mut self, d: &Derivs) {
        let me = self.v.eq.len();
        if d.je.nrows() != me || d.ji.nrows() != self.v.ineq.len() {
            return;
        }
        let free: Vec<usize> = (0..self.x.len())
            .filter(|&j| {
                let tol = BOUND_TOL * (1.0 + self.x[j].abs());
                self.x[j] - self.lo[j] > tol && self.hi[j] - self.x[j] > tol
            })
            .collect();
        let (Some(lam), active) = self.fitted_multipliers(d, &free) else {
            return;
        };
        self.lam_eq = lam.iter().take(me).copied().collect();
        self.lam_in = vec![0.0; self.v.ineq.len()];
        for (k, &i) in active.iter().enumerate() {
            self.lam_in[i] = lam[me + k];
        }
    }

    /// The elastic quadratic subproblem (variables `p`, then slacks `v`, `w` on the equalities and
    /// `t` on the inequalities, each ≥ 0 and penalized by `ρ`).
    fn subproblem(&self, d: &Derivs) -> Option<Step> {
        self.subproblem_in(d, self.delta)
    }

    /// [`Self::subproblem`] in the step box `delta`.
    fn subproblem_in(&self, d: &Derivs, delta: f64) -> Option<Step> {
        let n = self.x.len();
        let (me, mi) = (self.v.eq.len(), self.v.ineq.len());
        let nz = n + 2 * me + mi;
        // The elastic weight is fixed relative to the objective's gradient: an exact penalty as
        // long as it exceeds the multipliers (checked in the line search).
        let rho = self.rho * d.g.amax().max(1.0);
        // P: the BFGS matrix on p (upper triangle), zero on the slacks.
        let mut p_upper = vec![vec![0.0; nz]; nz];
        for (i, row) in p_upper.iter_mut().enumerate().take(n) {
            for (j, e) in row.iter_mut().enumerate().take(n).skip(i) {
                *e = self.b[(i, j)];
            }
        }
        let q: Vec<f64> = (0..nz).map(|j| if j < n { d.g[j] } else { rho }).collect();
        // An inequality the step cannot change (a zero Jacobian row) is left to its slack: its
        // multiplier would be arbitrary.
        let movable: Vec<bool> = (0..mi).map(|i| d.ji.row(i).amax() > 0.0).collect();
        let (rows, rhs) = self.elastic_rows(d, &movable, delta);
        let (z, duals) = solve_qp(&p_upper, &q, &rows, &rhs, me)?;
        Some(Step {
            p: DVector::from_iterator(n, z[..n].iter().copied()),
            lam_eq: duals[..me].to_vec(),
            lam_in: duals[me..me + mi]
                .iter()
                .zip(&movable)
                .map(|(z, m)| if *m { *z } else { 0.0 })
                .collect(),
            lin_violation: z[n..].iter().map(|s| s.max(0.0)).sum(),
        })
    }

    /// The subproblem's constraint rows over `[p, v, w, t]` and their right-hand sides: first the
    /// equalities `J_E p − v + w = −c_E`, then (as `row · z ≤ rhs`) `J_I p − t ≤ −c_I`, the step
    /// box and bounds on `p`, and the slacks `≥ 0`.
    fn elastic_rows(&self, d: &Derivs, movable: &[bool], delta: f64) -> (Vec<Vec<f64>>, Vec<f64>) {
        let n = self.x.len();
        let (me, mi) = (self.v.eq.len(), self.v.ineq.len());
        let nz = n + 2 * me + mi;
        // A row: the Jacobian row `jac` on p, `slack` at column `k`.
        let row = |jac: Option<(&DMatrix<f64>, usize)>, k: Option<(usize, f64)>| {
            let mut r = vec![0.0; nz];
            if let Some((m, i)) = jac {
                for (j, e) in r.iter_mut().enumerate().take(n) {
                    *e = m[(i, j)];
                }
            }
            if let Some((k, v)) = k {
                r[k] = v;
            }
            r
        };
        let mut rows: Vec<Vec<f64>> = Vec::new();
        let mut rhs: Vec<f64> = Vec::new();
        for i in 0..me {
            let mut r = row(Some((&d.je, i)), Some((n + i, -1.0)));
            r[n + me + i] = 1.0;
            rows.push(r);
            rhs.push(-self.v.eq[i]);
        }
        for (i, &can_move) in movable.iter().enumerate() {
            let jac = can_move.then_some((&d.ji, i));
            rows.push(row(jac, Some((n + 2 * me + i, -1.0))));
            rhs.push(if can_move {
                -self.v.ineq[i]
            } else {
                -self.v.ineq[i].max(0.0)
            });
        }
        for j in 0..n {
            rows.push(row(None, Some((j, 1.0))));
            rhs.push((self.hi[j] - self.x[j]).min(delta).max(0.0));
            rows.push(row(None, Some((j, -1.0))));
            rhs.push((self.x[j] - self.lo[j]).min(delta).max(0.0));
        }
        for k in n..nz {
            rows.push(row(None, Some((k, -1.0))));
            rhs.push(0.0);
        }
        (rows, rhs)
    }

    /// ℓ1 merit at values `v` with penalty `mu`.
    fn merit(v: &Values, mu: f64) -> f64 {
        let viol = v.violation();
        if viol.is_finite() {
            v.f + mu * viol
        } else {
            f64::INFINITY
        }
    }

    /// Backtracking on the ℓ1 merit function, with one second-order correction of the full step
    /// (N&W §18.3, eq. 18.56: the Maratos effect); true when a step was accepted. The step box
    /// follows the accepted step length (a trust region on the linearization).
    fn line_search(&mut self, d: &Derivs, step: &Step) -> bool {
        // μ > ‖λ‖∞ makes the step a descent direction of the merit (N&W eq. 18.32). Multipliers
        // at the elastic weight belong to constraints the subproblem could not meet inside the
        // step box: they say nothing about λ* and would only inflate μ.
        let rho = self.rho * d.g.amax().max(1.0);
        let lam_max = step
            .lam_eq
            .iter()
            .chain(&step.lam_in)
            .map(|l| l.abs())
            .filter(|l| *l < 0.5 * rho)
            .fold(0.0_f64, f64::max);
        // Once the run has met the constraints, μ follows the multipliers down as well as up
        // (Powell's update, halving its excess each iteration; Powell 1978, "A fast algorithm
        // for nonlinearly constrained optimization calculations", from memory): a μ that only
        // grows keeps the value of one multiplier met far from feasibility (10³ on the T/W 1.2
        // case against about 3 at its optimum), and every later step that bends a constraint
        // quadratically is refused. Before that μ only grows: letting it fall while the
        // constraints are still being restored trades restoration for objective (the flat-Earth
        // linear-tangent check then ended infeasible).
        self.mu = if self.was_feasible {
            (1.1 * lam_max).max(0.5 * (self.mu + 1.1 * lam_max))
        } else {
            self.mu.max(1.1 * lam_max)
        };
        let phi0 = Self::merit(&self.v, self.mu);
        // Directional derivative of the merit along p (N&W eq. 18.29, with the elastic slacks'
        // remaining violation).
        let slope =
            (d.g.dot(&step.p) - self.mu * (self.v.violation() - step.lin_violation)).min(0.0);
        let accept = |phi: f64, alpha: f64| phi <= phi0 + 1e-4 * alpha * slope;
        let p_len = step.p.amax();
        let mut alpha = 1.0;
        while alpha >= 1.0 / 256.0 {
            if self.evals >= self.s.max_evaluations {
                return false;
            }
            let trial = self.along(&step.p, alpha);
            let v = self.eval(std::slice::from_ref(&trial)).remove(0);
            self.watch_crossing(&v);
            if accept(Self::merit(&v, self.mu), alpha) {
                self.accept(trial, v, alpha, p_len);
                return true;
            }
            // Second-order correction of the full step: the least-norm move that meets the
            // equality constraints linearized at the trial point.
            if alpha >= 1.0
                && v.violation() > self.v.violation()
                && self.evals < self.s.max_evaluations
            {
                if let Some(c) = self.correction(d, &v, &step.p) {
                    let vc = self.eval(std::slice::from_ref(&c)).remove(0);
                    self.watch_crossing(&vc);
                    if accept(Self::merit(&vc, self.mu), 1.0) {
                        self.accept(c, vc, 1.0, p_len);
                        return true;
                    }
                }
            }
            self.prog.trace(&|| {
                format!(
                    "  trial alpha {alpha}: f {:.6} eq {:?} ineq {:?} viol {:.2e} merit {:.6} vs {:.6} slope {:.2e} |p| {:.2e}",
                    v.f,
                    v.eq.iter().map(|e| format!("{e:.1e}")).collect::<Vec<_>>(),
                    v.ineq.iter().map(|e| format!("{e:.1e}")).collect::<Vec<_>>(),
                    v.violation(),
                    Self::merit(&v, self.mu),
                    phi0,
                    slope,
                    p_len
                )
            });
            alpha *= 0.5;
        }
        false
    }

    /// `x + αp`, inside the bounds.
    fn along(&self, p: &DVector<f64>, alpha: f64) -> Vec<f64> {
        self.x
            .iter()
            .zip(p.iter())
            .enumerate()
            .map(|(j, (x, p))| (x + alpha * p).clamp(self.lo[j], self.hi[j]))
            .collect()
    }

    /// Takes the step and adapts the step box: it doubles after a full step that the box limited,
    /// and shrinks to the length accepted after a shortened one.
    fn accept(&mut self, x: Vec<f64>, v: Values, alpha: f64, p_len: f64) {
        self.x = x;
        self.v = v;
        self.delta = if alpha >= 1.0 {
            if p_len >= 0.99 * self.delta {
                (2.0 * self.delta).min(self.s.max_step)
            } else {
                self.delta
            }
        } else {
            // Halve rather than shrink to the accepted length: a short step taken once (a
            // kink, a curved valley) must not hold every later step to its length.
            (0.5 * self.delta)
                .max(alpha * p_len)
                .max(1e-3 * self.s.max_step)
        };
    }

    /// The corrected full step `x + p + d`, `d = −J_Eᵀ(J_E J_Eᵀ)⁻¹ c_E(x + p)`.
    fn correction(&self, d: &Derivs, at_trial: &Values, p: &DVector<f64>) -> Option<Vec<f64>> {
        if at_trial.eq.len() != d.je.nrows() || d.je.nrows() == 0 {
            return None;
        }
        let ce = DVector::from_column_slice(&at_trial.eq);
        let jjt = &d.je * d.je.transpose();
        let y = jjt.lu().solve(&ce)?;
        let dx = -(d.je.transpose() * y);
        let full = p + dx;
        full.iter()
            .all(|v| v.is_finite())
            .then(|| self.along(&full, 1.0))
    }

    /// Damped BFGS update of the Lagrangian's Hessian approximation (N&W Procedure 18.2).
    fn update_hessian(&mut self, x_old: &[f64], old: &Derivs, new: &Derivs) {
        let n = self.x.len();
        let s = DVector::from_iterator(n, self.x.iter().zip(x_old).map(|(a, b)| a - b));
        let le = DVector::from_column_slice(&self.lam_eq);
        let li = DVector::from_column_slice(&self.lam_in);
        let grad_l = |d: &Derivs| &d.g + d.je.transpose() * &le + d.ji.transpose() * &li;
        let y = grad_l(new) - grad_l(old);
        let bs = &self.b * &s;
        let sbs = s.dot(&bs);
        if sbs.is_nan() || sbs <= 1e-16 || !y.iter().all(|v| v.is_finite()) {
            return;
        }
        let sy = s.dot(&y);
        let theta = if sy >= 0.2 * sbs {
            1.0
        } else {
            0.8 * sbs / (sbs - sy)
        };
        let r = &y * theta + &bs * (1.0 - theta);
        let sr = s.dot(&r);
        if sr <= 1e-16 {
            return;
        }
        self.b += &r * r.transpose() / sr - &bs * bs.transpose() / sbs;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A program from closures, evaluated one point at a time.
    struct Closure<F: Fn(&[f64]) -> Values + Sync> {
        lo: Vec<f64>,
        hi: Vec<f64>,
        f: F,
    }

    impl<F: Fn(&[f64]) -> Values + Sync> Program for Closure<F> {
        fn dim(&self) -> usize {
            self.lo.len()
        }
        fn bounds(&self) -> (Vec<f64>, Vec<f64>) {
            (self.lo.clone(), self.hi.clone())
        }
        fn evaluate(&self, xs: &[Vec<f64>]) -> Vec<Values> {
            xs.iter().map(|x| (self.f)(x)).collect()
        }
    }

    fn settings() -> Settings {
        Settings {
            fd_step: 1e-7,
            tol_progress: 1e-16,
            max_evaluations: 2000,
            max_iterations: 200,
            ..Settings::default()
        }
    }

    #[test]
    fn hock_schittkowski_71() {
        // Source: Hock & Schittkowski, Test Examples for Nonlinear Programming Codes (1981),
        // problem 71: f* = 17.0140173 at x* = (1, 4.7429994, 3.8211503, 1.3794082).
        let prog = Closure {
            lo: vec![1.0; 4],
            hi: vec![5.0; 4],
            f: |x: &[f64]| Values {
                f: x[0] * x[3] * (x[0] + x[1] + x[2]) + x[2],
                eq: vec![x.iter().map(|v| v * v).sum::<f64>() - 40.0],
                ineq: vec![25.0 - x[0] * x[1] * x[2] * x[3]],
                switch: Vec::new(),
            },
        };
        let out = solve(&prog, &[1.0, 5.0, 5.0, 1.0], &settings());
        assert_eq!(out.status, Status::Converged, "{out:?}");
        assert!(
            (out.values.f - 17.014_017_3).abs() < 1e-4,
            "{}",
            out.values.f
        );
        for (got, want) in out
            .x
            .iter()
            .zip([1.0, 4.742_999_4, 3.821_150_3, 1.379_408_2])
        {
            assert!((got - want).abs() < 1e-3, "{:?}", out.x);
        }
        // x1 sits on its lower bound at the optimum.
        assert!(out.at_bounds.contains(&(0, false)));
        assert!(out.lambda_ineq[0] > 0.0, "the product constraint is active");
    }

    #[test]
    fn hock_schittkowski_6_equality_only() {
        // Source: Hock & Schittkowski (1981), problem 6: min (1 − x1)² s.t. 10(x2 − x1²) = 0,
        // from (−1.2, 1): f* = 0 at (1, 1).
        let prog = Closure {
            lo: vec![-10.0; 2],
            hi: vec![10.0; 2],
            f: |x: &[f64]| Values {
                f: (1.0 - x[0]).powi(2),
                eq: vec![10.0 * (x[1] - x[0] * x[0])],
                ineq: vec![],
                switch: Vec::new(),
            },
        };
        let out = solve(&prog, &[-1.2, 1.0], &settings());
        assert_eq!(out.status, Status::Converged, "{out:?}");
        assert!((out.x[0] - 1.0).abs() < 1e-3 && (out.x[1] - 1.0).abs() < 1e-3);
    }

    #[test]
    fn inconsistent_constraints_are_reported_infeasible() {
        // x ≥ 2 and x ≤ 1 cannot both hold.
        let prog = Closure {
            lo: vec![-10.0],
            hi: vec![10.0],
            f: |x: &[f64]| Values {
                f: x[0] * x[0],
                eq: vec![],
                ineq: vec![2.0 - x[0], x[0] - 1.0],
                switch: Vec::new(),
            },
        };
        let out = solve(&prog, &[0.0], &settings());
        assert_eq!(out.status, Status::Infeasible, "{out:?}");
        assert!(out.values.max_violation() > 0.4);
    }

    #[test]
    fn the_evaluation_budget_is_never_exceeded() {
        let prog = Closure {
            lo: vec![-10.0; 2],
            hi: vec![10.0; 2],
            f: |x: &[f64]| Values {
                f: 100.0 * (x[1] - x[0] * x[0]).powi(2) + (1.0 - x[0]).powi(2),
                eq: vec![],
                ineq: vec![],
                switch: Vec::new(),
            },
        };
        let s = Settings {
            max_evaluations: 25,
            ..settings()
        };
        let out = solve(&prog, &[-1.2, 1.0], &s);
        assert!(out.evaluations <= 25, "{}", out.evaluations);
        assert_eq!(out.status, Status::EvaluationLimit);
        // Unlimited, it reaches the Rosenbrock minimum (1, 1) to the accuracy forward differences
        // allow (truncation error h·f''/2 ≈ 1e-4 here).
        let s = Settings {
            tol_opt: 1e-3,
            ..settings()
        };
        let out = solve(&prog, &[-1.2, 1.0], &s);
        assert_eq!(out.status, Status::Converged, "{out:?}");
        assert!((out.x[0] - 1.0).abs() < 1e-3);
    }

    /// `f = |x − y| + 0.1((x − 1)² + (y + 1)²)`: its minimum lies on the kink `x = y`, at the
    /// origin (along the kink `0.1((t − 1)² + (t + 1)²)` is least at t = 0, and the jump of the
    /// kink's slope, 2, exceeds the smooth part's normal slope there, 0.4√2: Clarke
    /// stationarity). The switching function `x − y` is reported or not.
    fn kinked(report_switch: bool) -> Outcome {
        let prog = Closure {
            lo: vec![-5.0, -5.0],
            hi: vec![5.0, 5.0],
            f: move |x: &[f64]| Values {
                f: (x[0] - x[1]).abs() + 0.1 * ((x[0] - 1.0).powi(2) + (x[1] + 1.0).powi(2)),
                eq: vec![],
                ineq: vec![],
                switch: if report_switch {
                    vec![x[0] - x[1]]
                } else {
                    vec![]
                },
            },
        };
        let s = Settings {
            fd_step: 1e-6,
            tol_progress: 1e-12,
            tol_opt: 1e-6,
            max_evaluations: 400,
            max_iterations: 100,
            ..Settings::default()
        };
        solve(&prog, &[2.0, -1.5], &s)
    }

    #[test]
    fn a_minimum_on_a_kink_is_found_along_its_pinned_switching_function() {
        // Closed form: the minimum is at the origin (see `kinked`).
        let out = kinked(true);
        assert_eq!(out.status, Status::Converged, "{out:?}");
        assert_eq!(out.pins, vec![0]);
        assert!(
            out.x[0].abs() < 1e-4 && out.x[1].abs() < 1e-4,
            "{:?}",
            out.x
        );
        assert!((out.values.f - 0.2).abs() < 1e-7, "{}", out.values.f);
        // Without the switching function the quasi-Newton steps crawl along the kink: more
        // evaluations for a worse point.
        let blind = kinked(false);
        assert!(
            blind.evaluations > out.evaluations && blind.values.f >= out.values.f - 1e-12,
            "{} evaluations (f {}) without the switch, {} with (f {})",
            blind.evaluations,
            blind.values.f,
            out.evaluations,
            out.values.f
        );
    }

    #[test]
    fn automatic_scaling_solves_a_badly_scaled_variable() {
        // Hock & Schittkowski (1981) problem 6 (f* = 0 at (1, 1), from (−1.2, 1)) with its first
        // variable written in units 1e3 times smaller (x1 = 1e3·y1): a unit step in y1 is a
        // thousand units of x1; scaled from the first derivatives the method finds the optimum.
        let prog = Closure {
            lo: vec![-1e-2, -10.0],
            hi: vec![1e-2, 10.0],
            f: |x: &[f64]| {
                let x1 = 1e3 * x[0];
                Values {
                    f: (1.0 - x1).powi(2),
                    eq: vec![10.0 * (x[1] - x1 * x1)],
                    ineq: vec![],
                    switch: Vec::new(),
                }
            },
        };
        let s = Settings {
            auto_scale: true,
            max_evaluations: 400,
            ..settings()
        };
        let out = solve(&prog, &[-1.2e-3, 1.0], &s);
        assert_eq!(out.status, Status::Converged, "{out:?}");
        assert!(
            (out.x[0] - 1e-3).abs() < 1e-6 && (out.x[1] - 1.0).abs() < 1e-3,
            "{:?}",
            out.x
        );
    }
}
