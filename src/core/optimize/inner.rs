//! Inner solve: the terminal conditions for the steering variables, by Levenberg–Marquardt
//! (`levenberg-marquardt` crate, Moré 1978) with a forward-difference Jacobian whose columns are
//! flown in parallel (rayon).

use std::cell::RefCell;

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt};
use nalgebra::storage::Owned;
use nalgebra::{DMatrix, DVector, Dyn};
use rayon::prelude::*;

use super::targeting::Eval;
use super::Ctx;

/// Forward-difference step in normalized variables (see `Param::scale`).
pub const FD_STEP: f64 = 1e-4;
/// The inner solve stops once every residual is below this (0.1 % of the insertion tolerance:
/// 10 cm, 1e-6°).
pub const INNER_TOL: f64 = 1e-6;

struct Lsq<'a> {
    ctx: &'a Ctx<'a>,
    outer: &'a [f64],
    x: DVector<f64>,
    cache: RefCell<Vec<(DVector<f64>, Eval)>>,
    last_jacobian: RefCell<Option<DMatrix<f64>>>,
}

impl Lsq<'_> {
    fn eval_at(&self, x: &DVector<f64>) -> Eval {
        if let Some((_, e)) = self.cache.borrow().iter().find(|(k, _)| k == x) {
            return e.clone();
        }
        let e = self.ctx.eval(self.outer, x.as_slice());
        let mut c = self.cache.borrow_mut();
        if c.len() > 8 {
            c.remove(0);
        }
        c.push((x.clone(), e.clone()));
        e
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for Lsq<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.x.copy_from(x);
    }

    fn params(&self) -> DVector<f64> {
        self.x.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        if self.ctx.out_of_budget() {
            return None;
        }
        let e = self.eval_at(&self.x);
        // Conditions met to the inner tolerance count as met: LM then stops ("residuals zero")
        // instead of chasing integrator noise.
        if e.max_abs() < INNER_TOL {
            return Some(DVector::zeros(e.residuals.len()));
        }
        Some(DVector::from_vec(e.residuals))
    }

    fn jacobian(&self) -> Option<DMatrix<f64>> {
        if self.ctx.out_of_budget() {
            return None;
        }
        let r0 = self.eval_at(&self.x).residuals;
        let (ctx, outer, x) = (self.ctx, self.outer, &self.x);
        let n = x.len();
        let cols: Vec<Vec<f64>> = (0..n)
            .into_par_iter()
            .map(|j| {
                let mut xj = x.clone();
                xj[j] += FD_STEP;
                ctx.eval(outer, xj.as_slice()).residuals
            })
            .collect();
        let mut jac = DMatrix::zeros(r0.len(), n);
        for (j, c) in cols.iter().enumerate() {
            for i in 0..r0.len() {
                jac[(i, j)] = (c[i] - r0[i]) / FD_STEP;
            }
        }
        *self.last_jacobian.borrow_mut() = Some(jac.clone());
        Some(jac)
    }
}

/// Result of an inner solve.
#[derive(Debug, Clone)]
pub struct InnerResult {
    /// Normalized inner variables at the end.
    pub x: Vec<f64>,
    /// Evaluation at `x`.
    pub eval: Eval,
    /// Every residual within [`INNER_TOL`].
    pub converged: bool,
    /// The last finite-difference Jacobian (for chord steps from a nearby outer point).
    pub jacobian: Option<DMatrix<f64>>,
}

/// Chord (simplified Newton) steps with a Jacobian from a nearby solve: each costs one
/// trajectory. Returns the point reached and whether the conditions are met.
fn chord(ctx: &Ctx, outer: &[f64], x0: &[f64], jac: &DMatrix<f64>) -> (Vec<f64>, Eval) {
    let mut x = DVector::from_column_slice(x0);
    let mut e = ctx.eval(outer, x.as_slice());
    let svd = jac.clone().svd(true, true);
    for _ in 0..5 {
        if e.max_abs() < INNER_TOL || ctx.out_of_budget() {
            break;
        }
        let r = DVector::from_vec(e.residuals.clone());
        let Ok(dx) = svd.solve(&r, 1e-12) else { break };
        let xn = &x - dx;
        let en = ctx.eval(outer, xn.as_slice());
        if en.max_abs() > 0.5 * e.max_abs() {
            if en.max_abs() < e.max_abs() {
                (x, e) = (xn, en);
            }
            break;
        }
        (x, e) = (xn, en);
    }
    (x.as_slice().to_vec(), e)
}

/// Solves the terminal conditions for the inner variables from `x0` (normalized), the outer
/// variables held at `outer` (normalized): chord steps with `jac` when given, then
/// Levenberg–Marquardt if they do not converge.
pub fn solve_terminal(
    ctx: &Ctx,
    outer: &[f64],
    x0: &[f64],
    jac: Option<&DMatrix<f64>>,
) -> InnerResult {
    let mut x = x0.to_vec();
    if let Some(j) = jac.filter(|j| j.ncols() == x0.len()) {
        let (xc, e) = chord(ctx, outer, x0, j);
        if e.max_abs() < INNER_TOL {
            return InnerResult {
                x: xc,
                eval: e,
                converged: true,
                jacobian: Some(j.clone()),
            };
        }
        x = xc;
    }
    let mut best: Option<InnerResult> = None;
    let mut last_jac: Option<DMatrix<f64>> = jac.cloned();
    // LM restarts from its own end point while it keeps improving: its default stopping tests
    // are relative, ours is absolute.
    for round in 0..3 {
        let problem = Lsq {
            ctx,
            outer,
            x: DVector::from_vec(x.clone()),
            cache: RefCell::new(Vec::new()),
            last_jacobian: RefCell::new(None),
        };
        let lm = LevenbergMarquardt::new()
            .with_ftol(1e-14)
            .with_xtol(1e-12)
            .with_gtol(1e-14)
            .with_stepbound(1.0)
            .with_patience(4);
        let (p, _report) = lm.minimize(problem);
        if let Some(j) = p.last_jacobian.borrow_mut().take() {
            last_jac = Some(j);
        }
        x = p.x.as_slice().to_vec();
        let eval = p.eval_at(&p.x);
        let size = eval.max_abs();
        let converged = size < INNER_TOL;
        let better = best
            .as_ref()
            .is_none_or(|b| eval.max_abs() < b.eval.max_abs() * 0.999);
        if better {
            best = Some(InnerResult {
                x: x.clone(),
                eval,
                converged,
                jacobian: None,
            });
        }
        // Far from feasible after a full round: this outer point is infeasible; do not spend
        // more trajectories on it (the outer search sees the penalty).
        let hopeless = size > 1e-2 && round > 0;
        if converged || !better || hopeless || ctx.out_of_budget() {
            break;
        }
    }
    match best {
        Some(b) => InnerResult {
            jacobian: last_jac,
            ..b
        },
        None => {
            let eval = ctx.eval(outer, x0);
            InnerResult {
                x: x0.to_vec(),
                converged: eval.max_abs() < INNER_TOL,
                eval,
                jacobian: last_jac,
            }
        }
    }
}
