//! The integrator-tolerance study of docs/method.md §7 (issue 11, item 4): for each integrator
//! setting (Dormand–Prince 5(4) or 8(5,3), with or without `end_steps_at_corners` and
//! `carry_step_size`, "fast" below) and relative tolerance, on each demo's solved program,
//!
//! - the right-hand-side evaluations of one flight;
//! - the orbit change against the same integrator at a 100× tighter rtol (largest change of
//!   perigee and apogee altitude, m; inclination, deg; final mass, kg);
//! - the finite-difference noise the optimizer sees: each tuned variable is stepped 21 times by
//!   3e-5 of its scale (a tenth of the SQP's difference step 3e-4), and the noise of each scaled
//!   residual and of the objective (units of 0.1 % of the liftoff mass) is the RMS of the second
//!   differences, less their mean (which a smooth curvature contributes), over √6 (white noise
//!   of deviation σ gives second differences of deviation √6 σ), on each side of the solved
//!   value separately (see [`noise`]). The largest over variables and residual components is
//!   printed.
//!
//! Run with `cargo run --release --example tolerance_study` (about a minute on one core).

use std::path::Path;

use kickturn::optimize::targeting::evaluate;
use kickturn::optimize::{tune, SolveOptions};
use kickturn::problem::{IntegratorMethod, Problem};
use kickturn::sim::{fly, FlyOptions};

const DEMOS: [&str; 3] = [
    "small-3stage-sso500",
    "medium-2stage-leo200",
    "heavy-boosters-leo300",
];

/// Step of the noise probe, in units of the variable's scale.
const PROBE_STEP: f64 = 3e-5;
/// Probe points on each side of the solved value.
const PROBE_HALF: i32 = 10;

/// (perigee altitude m, apogee altitude m, inclination deg, final mass kg, RHS evaluations).
fn orbit(p: &Problem) -> (f64, f64, f64, f64, u64) {
    let f = fly(p, &FlyOptions::default());
    let r = kickturn::app::outcome::FlightReport::new(p, &f);
    (
        r.orbit.perigee_alt_km * 1e3,
        r.orbit.apogee_alt_km.unwrap_or(f64::NAN) * 1e3,
        r.orbit.inclination_deg,
        r.final_mass_kg,
        f.stats.rhs_evals,
    )
}

/// Noise deviation of a sequence from its second differences, less their mean (see the module
/// doc).
fn side_noise(xs: &[f64]) -> f64 {
    let d: Vec<f64> = xs.windows(3).map(|w| w[0] - 2.0 * w[1] + w[2]).collect();
    let mean = d.iter().sum::<f64>() / d.len() as f64;
    let var = d.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / d.len() as f64;
    (var / 6.0).sqrt()
}

/// Noise of the probe sequence `xs` (odd length, the solved value in the middle): the larger of
/// the two sides' [`side_noise`], each side including the middle. A solved program may sit on
/// a kink of the terminal state (the medium demo's optimum holds a jettison at an ignition,
/// docs/method.md §10.14): a second difference across the middle would count that kink as
/// noise.
fn noise(xs: &[f64]) -> f64 {
    let mid = xs.len() / 2;
    side_noise(&xs[..=mid]).max(side_noise(&xs[mid..]))
}

fn main() {
    let mut candidates = Vec::new();
    for (method, fast) in [
        (IntegratorMethod::DormandPrince5, false),
        (IntegratorMethod::DormandPrince5, true),
        (IntegratorMethod::DormandPrince853, false),
        (IntegratorMethod::DormandPrince853, true),
    ] {
        for rtol in [1e-8, 1e-9, 1e-10, 1e-11] {
            candidates.push((method, fast, rtol));
        }
    }
    println!(
        "demo | method | fast | rtol | RHS evals | Δapsis vs 100× tighter m | Δi deg | Δmass kg | \
         residual noise | objective noise"
    );
    for name in DEMOS {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("problems")
            .join(format!("{name}.json"));
        let text = std::fs::read_to_string(&path).unwrap_or_default();
        let base = match Problem::from_json(&text) {
            Ok(p) => p,
            Err(e) => {
                eprintln!("{name}: {e}");
                continue;
            }
        };
        let sol = match tune(&base, &SolveOptions::default()) {
            Ok(s) => s,
            Err(e) => {
                eprintln!("{name}: {e}");
                continue;
            }
        };
        let Some(target) = sol.problem.target else {
            continue;
        };
        let unit_kg = 1e-3 * base.vehicle.liftoff_mass_kg();
        for &(method, fast, rtol) in &candidates {
            let mut p = sol.problem.clone();
            p.integrator.method = method;
            p.integrator.end_steps_at_corners = fast;
            p.integrator.carry_step_size = fast;
            p.integrator.rtol = rtol;
            let mut tight = p.clone();
            tight.integrator.rtol = rtol / 100.0;
            let (a, b) = (orbit(&p), orbit(&tight));
            let d_apsis = (a.0 - b.0).abs().max((a.1 - b.1).abs());
            let (mut res_noise, mut obj_noise) = (0.0_f64, 0.0_f64);
            for (v, x0) in &sol.variables {
                let evals: Vec<_> = (-PROBE_HALF..=PROBE_HALF)
                    .map(|j| {
                        let mut q = p.clone();
                        v.set(&mut q, x0 + f64::from(j) * PROBE_STEP * v.scale());
                        evaluate(&q, &target, None, false)
                    })
                    .collect();
                let n_res = evals[0].residuals.len();
                for i in 0..n_res {
                    let xs: Vec<f64> = evals.iter().map(|e| e.residuals[i]).collect();
                    res_noise = res_noise.max(noise(&xs));
                }
                let xs: Vec<f64> = evals
                    .iter()
                    .map(|e| e.propellant_used_kg / unit_kg)
                    .collect();
                obj_noise = obj_noise.max(noise(&xs));
            }
            println!(
                "{name} | {method:?} | {fast} | {rtol:e} | {} | {d_apsis:.2e} | {:.1e} | {:.1e} | \
                 {res_noise:.1e} | {obj_noise:.1e}",
                a.4,
                (a.2 - b.2).abs(),
                (a.3 - b.3).abs(),
            );
        }
    }
}
