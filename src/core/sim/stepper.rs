//! The flight's integrators: Dormand–Prince 5(4) with its fourth-order continuous extension (the
//! default, this module), and Dormand–Prince 8(5,3) with its seventh-order one ([`dop853`],
//! `model.integrator: "dop853"`), behind one [`integrate`] and one [`DenseOutput`]. Both can end
//! a rejected step's retry on a corner the system reports ([`OdeSystem::kink`]) and start from a
//! given step size ([`Options::h0`]); without either, DP5 is `ode_solvers`' arithmetic bit for bit.
//!
//! Every floating-point operation is the one `ode_solvers` 0.6.2's `Dopri5` performs, in the same
//! order (tableau, stage sums, error norm, PI step-size controller, initial step, stiffness test,
//! dense-output coefficients), so a flight is bit for bit the one that crate gives: the unit test
//! `same_bits_as_ode_solvers` integrates a time-dependent system with both. It replaces that crate
//! on the hot path because the crate allocates on every accepted step (five vectors of dense
//! output, growing result vectors) and every segment, and reaches the system through `&self`;
//! here the dense output lives in a store that keeps its capacity from segment to segment, and
//! the system is called through `&mut self` and told which evaluation ends a step (issue 11:
//! measured on the medium demo, see the commit).
//!
//! # References
//! - J. R. Dormand, P. J. Prince, "A family of embedded Runge–Kutta formulae", J. Comput. Appl.
//!   Math. 6(1), 19–26, 1980 (the tableau).
//! - E. Hairer, S. P. Nørsett, G. Wanner, *Solving Ordinary Differential Equations I*, 2nd ed.,
//!   1993, §II.4 (starting step size), §II.5 (DOPRI5 and its dense output), §IV.2 (stiffness
//!   detection); PI step control per Hairer & Wanner, *Solving ODEs II*, §IV.2. From memory.

use std::cmp::Ordering;
use std::fmt;

use super::dynamics::{State, N};

mod dop853;

/// The Runge–Kutta pair a flight is integrated with.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub(crate) enum Method {
    /// Dormand–Prince 5(4), `ode_solvers`' arithmetic (this module); the default.
    #[default]
    DormandPrince5,
    /// Dormand–Prince 8(5,3) with its seventh-order continuous extension ([`dop853`]).
    DormandPrince853,
}

/// Runge–Kutta matrix a_ij (row i = stage 2..7), Dormand & Prince (1980).
const A: [[f64; 6]; 6] = [
    [1.0 / 5.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
    [
        19372.0 / 6561.0,
        -25360.0 / 2187.0,
        64448.0 / 6561.0,
        -212.0 / 729.0,
        0.0,
        0.0,
    ],
    [
        9017.0 / 3168.0,
        -355.0 / 33.0,
        46732.0 / 5247.0,
        49.0 / 176.0,
        -5103.0 / 18656.0,
        0.0,
    ],
    [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
    ],
];
/// Nodes c_i (stages 1..7).
const C: [f64; 7] = [0.0, 1.0 / 5.0, 3.0 / 10.0, 4.0 / 5.0, 8.0 / 9.0, 1.0, 1.0];
/// Dense-output coefficients d_i (Hairer, Nørsett & Wanner §II.6; d_2 = 0).
const D: [f64; 7] = [
    -12715105075.0 / 11282082432.0,
    0.0,
    87487479700.0 / 32700410799.0,
    -10690763975.0 / 1880347072.0,
    701980252875.0 / 199316789632.0,
    -1453857185.0 / 822651844.0,
    69997945.0 / 29380423.0,
];
/// Error-estimate coefficients e_i = b_i − b̂_i (e_2 = 0).
const E: [f64; 7] = [
    71.0 / 57600.0,
    0.0,
    -71.0 / 16695.0,
    71.0 / 1920.0,
    -17253.0 / 339200.0,
    22.0 / 525.0,
    -1.0 / 40.0,
];

/// Steps a new dense-output store makes room for (83 KB).
const INITIAL_STEPS: usize = 128;
/// Most steps of one integration.
const N_MAX: u32 = 100_000;
/// The stiffness test runs every this many accepted steps (and while it is suspicious).
const N_STIFF: u32 = 1000;
/// h·λ above this counts as stiff (Hairer & Wanner's DOPRI5 threshold).
const STIFF_THRESHOLD: f64 = 3.25;
/// Stiff verdicts in a row that stop the integration.
const MAX_STIFF: u32 = 15;
/// Non-stiff verdicts in a row that clear the suspicion.
const NON_STIFF_RESET: u32 = 6;
/// PI controller: β, α = 1/5 − 0.75 β, safety factor, step ratio bounds.
const BETA: f64 = 0.04;
const ALPHA: f64 = 0.2 - 0.04 * 0.75;
const SAFETY: f64 = 0.9;
/// 1 / (smallest step ratio 0.2).
const FACC1: f64 = 1.0 / 0.2;
/// 1 / (largest step ratio 10).
const FACC2: f64 = 1.0 / 10.0;

/// What the integrator needs of the system.
pub(crate) trait OdeSystem {
    /// `dy = f(t, y)`. `end_of_step`: this is the evaluation at the candidate end of a step
    /// (stage 7, at exactly the (t, y) that [`OdeSystem::accepted`] receives if the step is
    /// accepted; it is then also the next step's first stage).
    fn rhs(&mut self, t: f64, y: &State, dy: &mut State, end_of_step: bool);
    /// Called after each accepted step with its end; `true` stops the integration there.
    fn accepted(&mut self, t: f64, y: &State) -> bool;
    /// Whether the integrator should ask [`OdeSystem::kink`] about rejected steps (default: no,
    /// and then it never does).
    fn has_kinks(&self) -> bool {
        false
    }
    /// The time of the earliest corner of the right-hand side (a point where f is continuous
    /// but its slope jumps, such as a table node) that the step from (`t0`, `y0`) to (`t1`,
    /// `y1`) crosses, located on `path` (the state along the step, an interpolant of it), or
    /// `None`; only corners [`inside_step`] counts. Asked about rejected steps only; the
    /// integrator then retries the step so that it ends on the corner, instead of shrinking it
    /// until the corner costs little.
    fn kink(
        &mut self,
        _t0: f64,
        _y0: &State,
        _t1: f64,
        _y1: &State,
        _path: &dyn Fn(f64) -> State,
    ) -> Option<f64> {
        None
    }
}

/// Fraction of a step within which a corner next to either end is not worth a step of its own:
/// one next to the start is passed already (the step before ended on it, to the precision of
/// the interpolant that located it), one next to the end is where the step ends anyway. A
/// corner straddled by δ costs an error ~δ² (the slope's jump times δ²/2).
const CORNER_MARGIN: f64 = 1e-4;

/// Whether a corner at `tk` lies inside the step from `t0` to `t1`, farther than
/// [`CORNER_MARGIN`] of the step from either end.
pub(crate) fn inside_step(tk: f64, t0: f64, t1: f64) -> bool {
    let margin = CORNER_MARGIN * (t1 - t0);
    (tk - t0) * margin.signum() > margin.abs() && (t1 - tk) * margin.signum() > margin.abs()
}

/// Integrator work of one integration.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub(crate) struct Stats {
    /// Right-hand-side evaluations.
    pub num_eval: u32,
    /// Accepted steps.
    pub accepted_steps: u32,
    /// Rejected steps (after the first accepted one).
    pub rejected_steps: u32,
}

/// Why an integration stopped early (messages as `ode_solvers` words them).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum StepError {
    /// More than [`N_MAX`] steps.
    MaxSteps { t: f64, n_step: u32 },
    /// The step fell below round-off of t.
    Underflow { t: f64 },
    /// The stiffness test fired [`MAX_STIFF`] times in a row.
    Stiff { t: f64 },
}

impl fmt::Display for StepError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            StepError::MaxSteps { t, n_step } => {
                write!(f, "Stopped at x = {t}. Need more than {n_step} steps.")
            }
            StepError::Underflow { t } => write!(f, "Stopped at x = {t}. Step size underflow."),
            StepError::Stiff { t } => write!(f, "The problem seems to become stiff at x = {t}."),
        }
    }
}

/// One accepted step's continuous extension: on [t_end − h, t_end], with θ the fraction of the
/// step and θ' = 1 − θ, y = r0 + θ(r1 + θ'(r2 + θ(r3 + θ' r4))) (Hairer, Nørsett & Wanner §II.6).
#[derive(Debug, Clone, Copy)]
struct DenseStep {
    h: f64,
    r: [State; 5],
}

/// The continuous extension of one integration, step by step. Reused from segment to segment:
/// the steps of an earlier integration stay in place and are overwritten (`len` says how many
/// belong to this one), so a flight allocates only while the store first grows and no step's
/// coefficients are copied.
#[derive(Debug, Clone, Default)]
pub(crate) struct DenseOutput {
    t0: f64,
    /// Method of the current integration (which of the step stores it fills).
    method: Method,
    /// Steps of the current integration.
    len: usize,
    /// End time of each step, s (increasing over the first `len`).
    ends: Vec<f64>,
    /// Dormand–Prince 5(4) steps.
    steps: Vec<DenseStep>,
    /// Dormand–Prince 8(5,3) steps.
    steps8: Vec<dop853::DenseStep>,
}

impl DenseOutput {
    /// Steps the store holds without growing.
    pub(crate) fn capacity(&self) -> usize {
        self.steps.capacity().max(self.steps8.capacity())
    }

    fn reset(&mut self, t0: f64, method: Method) {
        self.t0 = t0;
        self.len = 0;
        self.method = method;
        // Room for a typical segment at once (a long burn takes ~150 steps of DP5, ~50 of DP853)
        // instead of growing by doubling, which copies every step stored so far.
        if self.ends.capacity() == 0 {
            self.ends.reserve(INITIAL_STEPS);
        }
        match method {
            Method::DormandPrince5 if self.steps.capacity() == 0 => {
                self.steps.reserve(INITIAL_STEPS);
            }
            Method::DormandPrince853 if self.steps8.capacity() == 0 => {
                self.steps8.reserve(INITIAL_STEPS / 2);
            }
            _ => {}
        }
    }

    /// Appends a DP853 step ending at `t_end`; returns it to fill.
    fn next_step8(&mut self, t_end: f64) -> &mut dop853::DenseStep {
        let k = self.len;
        self.len += 1;
        if k == self.ends.len() {
            self.ends.push(t_end);
        } else {
            self.ends[k] = t_end;
        }
        if k == self.steps8.len() {
            self.steps8.push(dop853::DenseStep::empty());
        }
        &mut self.steps8[k]
    }

    /// Index of the step holding `t` (the first whose end is ≥ t); `None` outside the
    /// integrated interval (or for NaN).
    fn step_of(&self, t: f64) -> Option<usize> {
        if t.is_nan() || t < self.t0 {
            return None;
        }
        match self.ends[..self.len]
            .binary_search_by(|e| e.partial_cmp(&t).unwrap_or(Ordering::Less))
        {
            Ok(k) => Some(k),
            Err(k) if k < self.len => Some(k),
            Err(_) => None,
        }
    }

    /// Whether steps need [`DenseOutput::complete`] before they are interpolated (DP853).
    pub(crate) fn completes_on_demand(&self) -> bool {
        self.method == Method::DormandPrince853
    }

    /// Makes the continuous extension available on [`t_lo`, `t_hi`] (clamped to the integrated
    /// interval): a DP853 step's coefficients need three more right-hand-side evaluations, made
    /// here with `rhs` the first time a step is needed. Returns the evaluations made (always 0
    /// for DP5, whose coefficients are formed as it steps).
    pub(crate) fn complete(
        &mut self,
        t_lo: f64,
        t_hi: f64,
        rhs: &mut dyn FnMut(f64, &State, &mut State),
    ) -> u32 {
        if self.method == Method::DormandPrince5 || t_lo.is_nan() || t_hi.is_nan() {
            return 0;
        }
        // Steps that overlap the open interval (t_lo, t_hi): the first ending after t_lo to the
        // first ending at or after t_hi. A step's two ends are known without its coefficients.
        let ends = &self.ends[..self.len];
        let first = ends.partition_point(|e| *e <= t_lo);
        let last = ends
            .partition_point(|e| *e < t_hi)
            .min(self.len.saturating_sub(1));
        let mut evals = 0;
        if first <= last && last < self.len {
            for s in &mut self.steps8[first..=last] {
                if !s.done() {
                    s.complete(rhs);
                    evals += 3;
                }
            }
        }
        evals
    }

    /// Appends a step ending at `t_end` of size `h`; returns its coefficients to fill.
    fn next_step(&mut self, t_end: f64, h: f64) -> &mut [State; 5] {
        let k = self.len;
        self.len += 1;
        if k == self.ends.len() {
            self.ends.push(t_end);
        } else {
            self.ends[k] = t_end;
        }
        if k == self.steps.len() {
            self.steps.push(DenseStep {
                h,
                r: [State::zeros(); 5],
            });
        } else {
            self.steps[k].h = h;
        }
        &mut self.steps[k].r
    }

    /// State at `t`; `None` outside the integrated interval (or for NaN), and for a DP853 step
    /// not made available by [`DenseOutput::complete`].
    pub(crate) fn evaluate(&self, t: f64) -> Option<State> {
        let k = self.step_of(t)?;
        if self.method == Method::DormandPrince853 {
            return self.steps8[k].evaluate(t);
        }
        let start = if k == 0 { self.t0 } else { self.ends[k - 1] };
        let s = &self.steps[k];
        Some(dense_at(&s.r, (t - start) / s.h))
    }
}

/// A DP5 step's continuous extension at the fraction `theta` of the step.
#[inline(always)]
fn dense_at(r: &[State; 5], theta: f64) -> State {
    let theta1 = 1.0 - theta;
    let mut y = State::zeros();
    let o = arr_mut(&mut y);
    let [r0, r1, r2, r3, r4] = r;
    let (r0, r1, r2, r3, r4) = (arr(r0), arr(r1), arr(r2), arr(r3), arr(r4));
    for i in 0..N {
        o[i] = r0[i] + (r1[i] + (r2[i] + (r3[i] + r4[i] * theta1) * theta) * theta1) * theta;
    }
    y
}

/// |a| with the sign of b (b ≤ 0 gives −|a|).
fn sign(a: f64, b: f64) -> f64 {
    if b > 0.0 {
        a.abs()
    } else {
        -a.abs()
    }
}

/// The PI step-size controller.
struct Controller {
    fac_old: f64,
    h_max: f64,
    reject: bool,
    posneg: f64,
}

impl Controller {
    /// Accepts or rejects a step of size `h` with error norm `err`; sets the next step size.
    fn accept(&mut self, err: f64, h: f64, h_new: &mut f64) -> bool {
        let fac11 = err.powf(ALPHA);
        let mut fac = fac11 * self.fac_old.powf(-BETA);
        fac = FACC2.max(FACC1.min(fac / SAFETY));
        *h_new = h / fac;
        if err <= 1.0 {
            self.fac_old = err.max(1.0e-4);
            if h_new.abs() > self.h_max {
                *h_new = self.posneg * self.h_max;
            }
            if self.reject {
                *h_new = self.posneg * h_new.abs().min(h.abs());
            }
            self.reject = false;
            true
        } else {
            *h_new = h / FACC1.min(fac11 / SAFETY);
            self.reject = true;
            false
        }
    }
}

/// Starting step size (Hairer, Nørsett & Wanner §II.4, as `ode_solvers` computes it).
fn initial_step<S: OdeSystem>(
    sys: &mut S,
    t: f64,
    y: &State,
    t_end: f64,
    h_max: f64,
    rtol: f64,
    atol: f64,
) -> f64 {
    let mut f0 = State::zeros();
    sys.rhs(t, y, &mut f0, false);
    let posneg = sign(1.0, t_end - t);
    let (mut d0, mut d1) = (0.0, 0.0);
    for i in 0..N {
        let sci = atol + y[i].abs() * rtol;
        d0 += (y[i] / sci) * (y[i] / sci);
        d1 += (f0[i] / sci) * (f0[i] / sci);
    }
    let tol = 1.0e-10;
    let mut h0 = if d0 < tol || d1 < tol {
        1.0e-6
    } else {
        0.01 * (d0 / d1).sqrt()
    };
    h0 = h0.min(h_max);
    h0 = sign(h0, posneg);
    let mut y1 = State::zeros();
    for i in 0..N {
        y1[i] = y[i] + f0[i] * h0;
    }
    let mut f1 = State::zeros();
    sys.rhs(t + h0, &y1, &mut f1, false);
    let mut d2 = 0.0;
    for i in 0..N {
        let sci = atol + y[i].abs() * rtol;
        d2 += ((f1[i] - f0[i]) / sci) * ((f1[i] - f0[i]) / sci);
    }
    d2 = d2.sqrt() / h0;
    let h1 = if d1.sqrt().max(d2.abs()) <= 1.0e-15 {
        1.0e-6_f64.max(h0.abs() * 1.0e-3)
    } else {
        (0.01 / d1.sqrt().max(d2)).powf(1.0 / 5.0)
    };
    sign((100.0 * h0.abs()).min(h1.min(h_max)), posneg)
}

/// How to integrate one segment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Options {
    /// The Runge–Kutta pair.
    pub method: Method,
    /// Relative tolerance.
    pub rtol: f64,
    /// Absolute tolerance (every component).
    pub atol: f64,
    /// First step size to try, s (clamped to the segment); `None`: the starting-step estimate
    /// of Hairer, Nørsett & Wanner §II.4 (two evaluations).
    pub h0: Option<f64>,
}

/// What one integration did.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Run {
    /// Its work.
    pub stats: Stats,
    /// The last accepted (t, y); `None` if no step was accepted.
    pub end: Option<(f64, State)>,
    /// The step size the controller proposes after the last accepted step, s (a last step
    /// shortened to end on `t_end` proposes the step it was shortened from, if larger).
    pub h_next: f64,
}

/// The first step size of an integration: `h0` clamped to the segment (a step of the sign of
/// `posneg`), else `estimate()`.
fn first_step(h0: Option<f64>, posneg: f64, h_max: f64, estimate: impl FnOnce() -> f64) -> f64 {
    match h0.filter(|h| h.is_finite() && *h != 0.0) {
        Some(h) => posneg * h.abs().min(h_max),
        None => estimate(),
    }
}

/// Integrates `sys` from (`t0`, `y0`) towards `t_end` as `opts` say, until `t_end` or until
/// [`OdeSystem::accepted`] asks to stop. Fills `dense` with the steps' continuous extension
/// (DP853: to be completed on demand, see [`DenseOutput::complete`]).
pub(crate) fn integrate<S: OdeSystem>(
    sys: &mut S,
    opts: &Options,
    t0: f64,
    t_end: f64,
    y0: &State,
    dense: &mut DenseOutput,
) -> Result<Run, StepError> {
    dense.reset(t0, opts.method);
    match opts.method {
        Method::DormandPrince5 => integrate5(sys, opts, t0, t_end, y0, dense),
        Method::DormandPrince853 => dop853::integrate(sys, opts, t0, t_end, y0, dense),
    }
}

/// [`integrate`] by Dormand–Prince 5(4).
fn integrate5<S: OdeSystem>(
    sys: &mut S,
    opts: &Options,
    t0: f64,
    t_end: f64,
    y0: &State,
    dense: &mut DenseOutput,
) -> Result<Run, StepError> {
    let (rtol, atol) = (opts.rtol, opts.atol);
    let posneg = sign(1.0, t_end - t0);
    let mut ctl = Controller {
        fac_old: 1.0e-4,
        h_max: (t_end - t0).abs(),
        reject: false,
        posneg,
    };
    let mut stats = Stats::default();
    let (mut x, mut y) = (t0, *y0);
    let mut h = first_step(opts.h0, posneg, ctl.h_max, || {
        stats.num_eval += 2;
        initial_step(sys, x, &y, t_end, ctl.h_max, rtol, atol)
    });
    let mut k = [State::zeros(); 7];
    sys.rhs(x, &y, &mut k[0], false);
    stats.num_eval += 1;
    let (mut n_step, mut last, mut h_new) = (0_u32, false, 0.0);
    let (mut non_stiff, mut iasti) = (0_u32, 0_u32);
    let mut end = None;
    let kinks = sys.has_kinks();
    // While a retry ends on a corner: the size of the attempt that crossed it.
    let mut kink_retry: Option<f64> = None;
    // The step a last step was shortened from (to end on t_end).
    let mut h_unshortened = 0.0_f64;
    while !last {
        if n_step > N_MAX {
            return Err(StepError::MaxSteps { t: x, n_step });
        }
        if 0.1 * h.abs() <= f64::EPSILON * x.abs() {
            return Err(StepError::Underflow { t: x });
        }
        // Stretch a step that would end just short of t_end to end on it; a retry that ends on
        // a corner keeps its length (stretched, it would cross the corner again, for ever).
        if kink_retry.is_none() && (x + 1.01 * h - t_end) * posneg > 0.0 {
            h_unshortened = h;
            h = t_end - x;
            last = true;
        }
        n_step += 1;
        let (y_next, y_stiff) = stages(sys, x, h, &y, &mut k);
        stats.num_eval += 6;
        let err = error_norm(&k, h, &y, &y_next, rtol, atol);
        if ctl.accept(err, h, &mut h_new) {
            stats.accepted_steps += 1;
            if stats.accepted_steps % N_STIFF == 0 || iasti > 0 {
                let num = (k[1] - k[5]).dot(&(k[1] - k[5]));
                let den = (y_next - y_stiff).dot(&(y_next - y_stiff));
                let h_lamb = if den > 0.0 {
                    h * (num / den).sqrt()
                } else {
                    0.0
                };
                if h_lamb > STIFF_THRESHOLD {
                    iasti += 1;
                    non_stiff = 0;
                    if iasti == MAX_STIFF {
                        return Err(StepError::Stiff { t: x });
                    }
                } else {
                    non_stiff += 1;
                    if non_stiff == NON_STIFF_RESET {
                        iasti = 0;
                    }
                }
            }
            dense_coefficients(&k, h, &y, &y_next, dense.next_step(x + h, h));
            k[0] = k[1];
            y = y_next;
            x += h;
            end = Some((x, y));
            if sys.accepted(x, &y) {
                last = true;
            }
            if last {
                let h_next = posneg * h_new.abs().max(h_unshortened.abs());
                return Ok(Run { stats, end, h_next });
            }
            if let Some(h_was) = kink_retry.take() {
                // Past the corner the solution is as smooth as before it: resume with the step
                // that was tried across it (the controller's shrink after a rejection would
                // otherwise hold the next step to the shortened one).
                h_new = posneg * h_new.abs().max(h_was.abs()).min(ctl.h_max);
            }
        } else {
            last = false;
            h_unshortened = 0.0;
            if stats.accepted_steps >= 1 {
                stats.rejected_steps += 1;
            }
            if kinks {
                let h_was = kink_retry.take().unwrap_or(h);
                if let Some(tk) = corner_in_step5(sys, &k, x, h, &y, &y_next) {
                    h_new = tk - x;
                    kink_retry = Some(h_was);
                }
            }
        }
        h = h_new;
    }
    Ok(Run {
        stats,
        end,
        h_next: h_new,
    })
}

/// The corner a rejected DP5 step from (`x`, `y`) of size `h` crossed, located on the step's
/// own continuous extension (see [`OdeSystem::kink`]). Out of line: the default flight never
/// calls it.
#[inline(never)]
fn corner_in_step5<S: OdeSystem>(
    sys: &mut S,
    k: &[State; 7],
    x: f64,
    h: f64,
    y: &State,
    y_next: &State,
) -> Option<f64> {
    let mut r = [State::zeros(); 5];
    dense_coefficients(k, h, y, y_next, &mut r);
    let path = |t: f64| dense_at(&r, (t - x) / h);
    sys.kink(x, y, x + h, y_next, &path)
}

/// The components of `v` as an array (the vector's own storage: no copy), so that loops over
/// them carry no bounds checks and vectorize.
fn arr(v: &State) -> &[f64; N] {
    &v.data.0[0]
}

/// Mutable [`arr`].
fn arr_mut(v: &mut State) -> &mut [f64; N] {
    &mut v.data.0[0]
}

/// k_j·h of each stage so far, computed once per stage (the products `ode_solvers` forms anew
/// for every later stage, with the same result).
type Scaled = [[f64; N]; 6];

/// Stores k_j·h of stage `j` in `kh`.
fn scale(kh: &mut Scaled, j: usize, k: &State, h: f64) {
    let (o, k) = (&mut kh[j], arr(k));
    for i in 0..N {
        o[i] = k[i] * h;
    }
}

/// The argument of stage `S + 1`: y + Σ_j (k_j h) a_j over the first `S` stages, summed in
/// stage order (the operations `ode_solvers` performs, element by element).
fn stage_arg<const S: usize>(y: &State, kh: &Scaled, a: &[f64; 6]) -> State {
    let mut out = *y;
    let o = arr_mut(&mut out);
    for i in 0..N {
        let mut acc = o[i];
        for j in 0..S {
            acc += kh[j][i] * a[j];
        }
        o[i] = acc;
    }
    out
}

/// Stages 2–7 of a step of size `h` from (`x`, `y`) with `k[0]` = f(x, y): fills `k[1..7]`
/// (then copies stage 7 into `k[1]`, as the dense output and error formulas index it) and
/// returns the fifth-order solution and stage 6's argument (for the stiffness test).
fn stages<S: OdeSystem>(
    sys: &mut S,
    x: f64,
    h: f64,
    y: &State,
    k: &mut [State; 7],
) -> (State, State) {
    let mut kh: Scaled = [[0.0; N]; 6];
    scale(&mut kh, 0, &k[0], h);
    let y2 = stage_arg::<1>(y, &kh, &A[0]);
    sys.rhs(x + h * C[1], &y2, &mut k[1], false);
    scale(&mut kh, 1, &k[1], h);
    let y3 = stage_arg::<2>(y, &kh, &A[1]);
    sys.rhs(x + h * C[2], &y3, &mut k[2], false);
    scale(&mut kh, 2, &k[2], h);
    let y4 = stage_arg::<3>(y, &kh, &A[2]);
    sys.rhs(x + h * C[3], &y4, &mut k[3], false);
    scale(&mut kh, 3, &k[3], h);
    let y5 = stage_arg::<4>(y, &kh, &A[3]);
    sys.rhs(x + h * C[4], &y5, &mut k[4], false);
    scale(&mut kh, 4, &k[4], h);
    let y_stiff = stage_arg::<5>(y, &kh, &A[4]);
    sys.rhs(x + h * C[5], &y_stiff, &mut k[5], false);
    scale(&mut kh, 5, &k[5], h);
    let y_next = stage_arg::<6>(y, &kh, &A[5]);
    sys.rhs(x + h * C[6], &y_next, &mut k[6], true);
    k[1] = k[6];
    (y_next, y_stiff)
}

/// Weighted RMS norm of the embedded error estimate.
fn error_norm(k: &[State; 7], h: f64, y: &State, y_next: &State, rtol: f64, atol: f64) -> f64 {
    let (k0, k1, k2, k3, k4, k5) = (
        arr(&k[0]),
        arr(&k[1]),
        arr(&k[2]),
        arr(&k[3]),
        arr(&k[4]),
        arr(&k[5]),
    );
    let (y, y_next) = (arr(y), arr(y_next));
    // Each component's scaled error first (vectorizes), then the sum in component order.
    let mut q = [0.0; N];
    for i in 0..N {
        let e = (k0[i] * E[0]
            + k2[i] * E[2]
            + k3[i] * E[3]
            + k4[i] * E[4]
            + k5[i] * E[5]
            + k1[i] * E[6])
            * h;
        let sc = atol + y[i].abs().max(y_next[i].abs()) * rtol;
        q[i] = e / sc;
    }
    let mut err = 0.0;
    for qi in q {
        err += qi * qi;
    }
    (err / N as f64).sqrt()
}

/// Continuous-extension coefficients of an accepted step (`k[1]` holds stage 7).
fn dense_coefficients(k: &[State; 7], h: f64, y: &State, y_next: &State, r: &mut [State; 5]) {
    let (k0, k1, k2, k3, k4, k5) = (
        arr(&k[0]),
        arr(&k[1]),
        arr(&k[2]),
        arr(&k[3]),
        arr(&k[4]),
        arr(&k[5]),
    );
    let (ya, yn) = (arr(y), arr(y_next));
    let [r0, r1, r2, r3, r4] = r;
    let (r0, r1, r2, r3, r4) = (
        arr_mut(r0),
        arr_mut(r1),
        arr_mut(r2),
        arr_mut(r3),
        arr_mut(r4),
    );
    for i in 0..N {
        let ydiff = yn[i] - ya[i];
        let bspl = k0[i] * h - ydiff;
        r0[i] = ya[i];
        r1[i] = ydiff;
        r2[i] = bspl;
        r3[i] = -k1[i] * h + ydiff - bspl;
        r4[i] = (k0[i] * D[0]
            + k2[i] * D[2]
            + k3[i] * D[3]
            + k4[i] * D[4]
            + k5[i] * D[5]
            + k1[i] * D[6])
            * h;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use ode_solvers::continuous_output_model::ContinuousOutputModel;
    use ode_solvers::{Dopri5, System};

    /// A forced, damped oscillator in every component pair, time-dependent forcing, and a
    /// stop when component 0 first exceeds 0.9 (to exercise `accepted`).
    fn f(t: f64, y: &State, dy: &mut State) {
        for p in 0..N / 2 {
            let w = 1.0 + p as f64 * 0.37;
            dy[2 * p] = y[2 * p + 1];
            dy[2 * p + 1] = -w * w * y[2 * p] - 0.05 * y[2 * p + 1] + (0.3 * t).sin();
        }
    }

    struct Theirs;
    impl System<f64, State> for Theirs {
        fn system(&self, t: f64, y: &State, dy: &mut State) {
            f(t, y, dy);
        }
        fn solout(&mut self, _t: f64, y: &State, _dy: &State) -> bool {
            y[0] > 0.9
        }
    }

    struct Ours;
    impl OdeSystem for Ours {
        fn rhs(&mut self, t: f64, y: &State, dy: &mut State, _end: bool) {
            f(t, y, dy);
        }
        fn accepted(&mut self, _t: f64, y: &State) -> bool {
            y[0] > 0.9
        }
    }

    #[test]
    fn same_bits_as_ode_solvers() {
        // Source: ode_solvers 0.6.2's Dopri5 itself (this module repeats its arithmetic).
        let mut y0 = State::zeros();
        for i in 0..N {
            y0[i] = 0.1 * (i as f64 + 1.0);
        }
        for (t_end, rtol, atol) in [(30.0, 1e-11, 1e-8), (30.0, 1e-6, 1e-6), (0.7, 1e-9, 1e-9)] {
            let mut theirs = Dopri5::new(Theirs, 0.0, t_end, 1.0, y0, rtol, atol);
            let mut com = ContinuousOutputModel::default();
            let st = theirs
                .integrate_with_continuous_output_model(&mut com)
                .expect("integrates");
            let mut dense = DenseOutput::default();
            let opts = Options {
                method: Method::DormandPrince5,
                rtol,
                atol,
                h0: None,
            };
            let run = integrate(&mut Ours, &opts, 0.0, t_end, &y0, &mut dense).expect("integrates");
            let (ours, end) = (run.stats, run.end);
            assert_eq!(ours.num_eval, st.num_eval);
            assert_eq!(ours.accepted_steps, st.accepted_steps);
            assert_eq!(ours.rejected_steps, st.rejected_steps);
            let (t1, y1) = end.expect("steps");
            assert_eq!(t1.to_bits(), theirs.x_out().last().unwrap().to_bits());
            assert_eq!(&y1, theirs.y_out().last().unwrap());
            for j in 0..=200 {
                let t = t1 * f64::from(j) / 200.0;
                assert_eq!(dense.evaluate(t), com.evaluate(t), "t = {t}");
            }
            assert_eq!(dense.evaluate(t1 + 1e-9), None);
        }
    }
}

#[cfg(test)]
mod corner_tests {
    use super::*;

    /// Nodes (u, c) of a continuous, piecewise-linear rate with three corners, held beyond the
    /// ends (like a drag table).
    const NODES: [(f64, f64); 4] = [(0.0, 1.0), (0.7, 2.0), (1.9, -1.0), (2.6, 0.5)];

    fn rate(u: f64) -> f64 {
        if u <= NODES[0].0 {
            return NODES[0].1;
        }
        for w in NODES.windows(2) {
            if u <= w[1].0 {
                return w[0].1 + (u - w[0].0) / (w[1].0 - w[0].0) * (w[1].1 - w[0].1);
            }
        }
        NODES[3].1
    }

    /// ∫₀ᵗ rate(u) du with u = t: the trapezoids of the linear pieces, exact.
    fn integral(t: f64) -> f64 {
        let mut s = 0.0;
        let mut a = 0.0;
        for &(u, _) in NODES
            .iter()
            .skip(1)
            .chain(std::iter::once(&(f64::INFINITY, 0.0)))
        {
            let b = u.min(t);
            if b > a {
                s += 0.5 * (rate(a) + rate(b)) * (b - a);
            }
            a = b;
            if a >= t {
                break;
            }
        }
        s
    }

    /// u' = 1 (so u = t: a state coordinate), y' = rate(u), z' = y (one more order of
    /// smoothness to carry the corner's error).
    struct Cornered {
        report: bool,
    }

    impl OdeSystem for Cornered {
        fn rhs(&mut self, _t: f64, y: &State, dy: &mut State, _end: bool) {
            dy[0] = 1.0;
            dy[1] = rate(y[0]);
            dy[2] = y[1];
        }
        fn accepted(&mut self, _t: f64, _y: &State) -> bool {
            false
        }
        fn has_kinks(&self) -> bool {
            self.report
        }
        fn kink(
            &mut self,
            t0: f64,
            y0: &State,
            t1: f64,
            y1: &State,
            path: &dyn Fn(f64) -> State,
        ) -> Option<f64> {
            NODES
                .iter()
                .filter(|(u, _)| (y0[0] - u) * (y1[0] - u) < 0.0)
                .filter_map(|(u, _)| {
                    super::super::events::brent_root(t0, t1, 1e-12, 100, |t| Some(path(t)[0] - u))
                })
                .filter(|t| inside_step(*t, t0, t1))
                .min_by(f64::total_cmp)
        }
    }

    fn run(method: Method, report: bool, h0: Option<f64>) -> Run {
        run_to(method, report, h0, 3.0)
    }

    fn run_to(method: Method, report: bool, h0: Option<f64>, t_end: f64) -> Run {
        let opts = Options {
            method,
            rtol: 1e-10,
            atol: 1e-10,
            h0,
        };
        let mut dense = DenseOutput::default();
        integrate(
            &mut Cornered { report },
            &opts,
            0.0,
            t_end,
            &State::zeros(),
            &mut dense,
        )
        .expect("integrates")
    }

    /// A corner within the last 1 % of a segment: the retry that ends on it must not be
    /// stretched to the segment's end (it crossed the corner again, and the integration looped
    /// until the step limit; found on the heavy demo by the optimizer).
    #[test]
    fn a_corner_just_before_the_end_of_a_segment_is_not_crossed_again() {
        for method in [Method::DormandPrince5, Method::DormandPrince853] {
            for t_end in [1.9005, 1.903, 1.91, 2.6001] {
                let r = run_to(method, true, Some(0.5), t_end);
                let (t, y) = r.end.expect("steps");
                assert!((t - t_end).abs() < 1e-12, "{method:?} {t_end}");
                assert!((y[1] - integral(t_end)).abs() < 1e-9, "{method:?} {t_end}");
                assert!(
                    r.stats.rejected_steps < 10,
                    "{method:?} {t_end}: {:?}",
                    r.stats
                );
            }
        }
    }

    /// A rejected step across a corner is retried to end on it: far fewer rejections and
    /// evaluations, and a result exact to round-off where straddled corners leave errors at
    /// the tolerance's level. Measured (rtol = atol = 1e-10): DP5 36 → 3 rejected steps, 471 →
    /// 75 evaluations, error 7e-8 → 9e-16; DP853 39 → 3, 899 → 158, 7e-9 → 2e-15.
    #[test]
    fn steps_end_on_reported_corners() {
        let exact = integral(3.0);
        for method in [Method::DormandPrince5, Method::DormandPrince853] {
            let (plain, aligned) = (run(method, false, None), run(method, true, None));
            for (r, tol) in [(&plain, 1e-6), (&aligned, 1e-12)] {
                let (t, y) = r.end.expect("steps");
                assert!((t - 3.0).abs() < 1e-12);
                assert!((y[1] - exact).abs() < tol, "{method:?}: {}", y[1] - exact);
            }
            assert!(
                aligned.stats.rejected_steps <= 3
                    && aligned.stats.rejected_steps < plain.stats.rejected_steps,
                "{method:?}: {:?} vs {:?}",
                aligned.stats,
                plain.stats
            );
            assert!(aligned.stats.num_eval < plain.stats.num_eval);
        }
    }

    /// A given first step replaces the starting-step estimate (two evaluations) and is clamped
    /// to the segment; the proposal for the next segment is a step the controller would take.
    #[test]
    fn a_given_first_step_skips_the_estimate() {
        let est = run(Method::DormandPrince5, true, None);
        let given = run(Method::DormandPrince5, true, Some(0.05));
        // DP5: 3 start evaluations with the estimate (two for it, one first stage), 1 without,
        // then 6 per attempted step.
        assert_eq!(est.stats.num_eval % 6, 3);
        assert_eq!(given.stats.num_eval % 6, 1);
        let huge = run(Method::DormandPrince853, true, Some(1e9));
        assert!(huge.end.is_some());
        assert!(est.h_next > 0.0 && est.h_next <= 3.0, "{}", est.h_next);
    }
}
