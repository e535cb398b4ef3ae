//! Sensitivities of the optimum to the target, the payload and a held max-Q limit, from the
//! Lagrange multipliers of the solved program: trade factors without re-solving.
//!
//! Envelope theorem (Nocedal & Wright, *Numerical Optimization*, 2nd ed., 2006, §12.8 and
//! Theorem 12.1's multipliers; Fiacco, *Introduction to Sensitivity and Stability Analysis in
//! Nonlinear Programming*, 1983): for `f*(θ) = min f(x, θ)` s.t. `c(x, θ) = 0, d(x, θ) ≤ 0`, at a
//! regular optimum with multipliers `λ, ν` of the Lagrangian `f + λᵀc + νᵀd`,
//!
//! ```text
//! df*/dθ = ∂f/∂θ + λᵀ ∂c/∂θ + νᵀ ∂d/∂θ      (partial derivatives at the optimal program x*)
//! ```
//!
//! The partial derivatives are one forward difference in `θ` each: the optimal program flown
//! once more against the perturbed target (or with the perturbed payload), in parallel. No
//! re-optimization: one trajectory per sensitivity.

use rayon::prelude::*;
use serde::Serialize;

use super::nlp::Ascent;
use super::sqp::{Outcome, Values};

/// What a sensitivity is taken with respect to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Target perigee altitude.
    PerigeeAlt,
    /// Target apogee altitude.
    ApogeeAlt,
    /// Target inclination.
    Inclination,
    /// Payload mass (least-propellant solves only: in the payload mode it is the objective).
    Payload,
    /// The held max-Q limit.
    MaxQLimit,
}

impl Quantity {
    /// The problem-file field, the unit the sensitivity is given per, that unit in SI, and the
    /// forward-difference step in SI.
    fn describe(self, m0_kg: f64) -> (&'static str, &'static str, f64, f64) {
        match self {
            Quantity::PerigeeAlt => ("target.perigee_alt_m", "km", 1e3, 1e3),
            Quantity::ApogeeAlt => ("target.apogee_alt_m", "km", 1e3, 1e3),
            Quantity::Inclination => (
                "target.inclination_deg",
                "deg",
                1f64.to_radians(),
                0.02f64.to_radians(),
            ),
            // 1e-4 of the liftoff mass: well above the noise, small against the payload.
            Quantity::Payload => ("vehicle.payload_kg", "kg", 1.0, (1e-4 * m0_kg).max(1e-3)),
            Quantity::MaxQLimit => ("limits.max_dynamic_pressure_pa", "kPa", 1e3, 0.0),
        }
    }
}

/// How the optimum moves with one input.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Sensitivity {
    /// The input, as the problem file names it.
    pub field: String,
    /// The unit of the input the figure is per.
    pub per: String,
    /// What moves: `propellant_kg` (least propellant) or `payload_kg` (largest payload).
    pub of: String,
    /// Change of that quantity per unit increase of the input (kg per `per`).
    pub kg_per_unit: f64,
}

/// The sensitivities of the optimum `out` of `prog` to the inputs that apply to its pass; empty
/// unless the search converged (the multipliers mean nothing elsewhere).
pub fn of_optimum(prog: &Ascent, out: &Outcome) -> Vec<Sensitivity> {
    let ctx = prog.ctx();
    let t = ctx.spec.target;
    let flat_state = matches!(
        ctx.spec.base.environment.earth,
        crate::core::physics::environment::EarthModel::Flat { .. }
    );
    let mut qs = Vec::new();
    if !flat_state {
        qs.push(Quantity::PerigeeAlt);
        qs.push(Quantity::ApogeeAlt);
    }
    // An equatorial target's cost is V-shaped in the inclination: no derivative to report.
    if t.inclination_rad
        .is_some_and(|i| !super::targeting::equatorial(i))
    {
        qs.push(Quantity::Inclination);
    }
    if !prog.payload_mode() {
        qs.push(Quantity::Payload);
    }
    let m0 = ctx.spec.base.vehicle.liftoff_mass_kg();
    let base = &out.values;
    let results: Vec<Option<Sensitivity>> = qs
        .par_iter()
        .map(|&q| {
            let (field, per, unit, step) = q.describe(m0);
            let perturbed: Values = match q {
                Quantity::MaxQLimit => return None,
                _ => prog.values_perturbed(&out.x, |p, target| match q {
                    Quantity::PerigeeAlt => target.perigee_alt_m += step,
                    Quantity::ApogeeAlt => target.apogee_alt_m += step,
                    Quantity::Inclination => {
                        if let Some(i) = target.inclination_rad.as_mut() {
                            *i += step;
                        }
                    }
                    Quantity::Payload => p.vehicle.payload_kg += step,
                    Quantity::MaxQLimit => {}
                })?,
            };
            let d = directional(base, &perturbed, out) / step;
            finite_sens(field, per, prog, d * unit)
        })
        .collect();
    let mut v: Vec<Sensitivity> = results.into_iter().flatten().collect();
    // A held max-Q limit: each of its rows is (q_max − q_lim)/1 kPa ≤ 0, so ∂d/∂q_lim = −1 per
    // kPa exactly and no flight is needed.
    let rows = prog.q_rows();
    if rows > 0 && out.lambda_ineq.len() >= rows {
        let nu: f64 = out.lambda_ineq[..rows].iter().sum();
        let (field, per, _, _) = Quantity::MaxQLimit.describe(m0);
        if let Some(s) = finite_sens(field, per, prog, -nu) {
            v.push(s);
        }
    }
    v
}

/// `∂f + λᵀ∂c + νᵀ∂d` between the optimum's values and a perturbed flight's (not divided by the
/// step).
fn directional(base: &Values, pert: &Values, out: &Outcome) -> f64 {
    let mut d = pert.f - base.f;
    for (l, (a, b)) in out.lambda_eq.iter().zip(base.eq.iter().zip(&pert.eq)) {
        d += l * (b - a);
    }
    for (l, (a, b)) in out.lambda_ineq.iter().zip(base.ineq.iter().zip(&pert.ineq)) {
        d += l * (b - a);
    }
    // A pinned switching function is a constraint of the optimum too (it stays on its kink).
    let me = out.lambda_eq.len().saturating_sub(out.pins.len());
    for (l, &k) in out.lambda_eq[me..].iter().zip(&out.pins) {
        if let (Some(a), Some(b)) = (base.switch.get(k), pert.switch.get(k)) {
            d += l * (b - a);
        }
    }
    d
}

/// A sensitivity in kg per unit from the derivative of the objective (objective units per
/// unit); `None` when not finite.
fn finite_sens(field: &str, per: &str, prog: &Ascent, d_obj: f64) -> Option<Sensitivity> {
    let kg = d_obj * prog.unit_kg();
    // In the payload mode the objective is minus the payload.
    let (of, kg) = if prog.payload_mode() {
        ("payload_kg", -kg)
    } else {
        ("propellant_kg", kg)
    };
    kg.is_finite().then(|| Sensitivity {
        field: field.into(),
        per: per.into(),
        of: of.into(),
        kg_per_unit: kg,
    })
}
