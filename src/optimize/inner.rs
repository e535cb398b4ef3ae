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

/// Forward-difference step in normalized variables (see `Var::scale`).
pub const FD_STEP: f64 = 1e-4;
/// The inner solve stops once every residual is below this (1 % of the insertion tolerance).
pub const INNER_TOL: f64 = 1e-5;

struct Lsq<'a> {
    ctx: &'a Ctx<'a>,
    outer: &'a [f64],
    x: DVector<f64>,
    cache: RefCell<Vec<(DVector<f64>, Eval)>>,
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
        Some(DVector::from_vec(self.eval_at(&self.x).residuals))
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
}

/// Solves the terminal conditions for the inner variables from `x0` (normalized), the outer
/// variables held at `outer` (normalized).
pub fn solve(ctx: &Ctx, outer: &[f64], x0: &[f64]) -> InnerResult {
    let mut x = x0.to_vec();
    let mut best: Option<InnerResult> = None;
    // LM restarts from its own end point while it keeps improving: its default stopping tests
    // are relative, ours is absolute.
    for _ in 0..4 {
        let problem = Lsq {
            ctx,
            outer,
            x: DVector::from_vec(x.clone()),
            cache: RefCell::new(Vec::new()),
        };
        let lm = LevenbergMarquardt::new()
            .with_ftol(1e-14)
            .with_xtol(1e-12)
            .with_gtol(1e-14)
            .with_stepbound(1.0)
            .with_patience(6);
        let (p, _report) = lm.minimize(problem);
        x = p.x.as_slice().to_vec();
        let eval = p.eval_at(&p.x);
        let converged = eval.max_abs() < INNER_TOL;
        let better = best
            .as_ref()
            .is_none_or(|b| eval.max_abs() < b.eval.max_abs() * 0.999);
        if better {
            best = Some(InnerResult {
                x: x.clone(),
                eval,
                converged,
            });
        }
        if converged || !better || ctx.out_of_budget() {
            break;
        }
    }
    match best {
        Some(b) => b,
        None => {
            let eval = ctx.eval(outer, x0);
            InnerResult {
                x: x0.to_vec(),
                converged: eval.max_abs() < INNER_TOL,
                eval,
            }
        }
    }
}
