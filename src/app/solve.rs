//! `solve`: tune the program, write it back into the file form, fly it as written, and report it
//! like `fly` plus the tuned program, the convergence report, reserves and margin.
//!
//! The reserve and margin rules live here: the flight performance reserve is a share of the ideal
//! ΔV converted to mass at the last stage's exhaust velocity (Tsiolkovsky), plus the mass form,
//! residuals and disposal propellant; the margin is what is left after them.

use serde::Serialize;

use super::outcome::{FlightReport, Status};
use super::{check_range, check_step, Case, Error};
use crate::core::observe::Observer;
use crate::core::optimize::{tune_observed, Convergence, SolveOptions, SolveStatus};
use crate::core::problem::file::{ArcFile, AscentFile, LaunchFile, ProblemFile};
use crate::core::problem::params::Param;
use crate::core::problem::{validate, Problem};
use crate::core::sim::dynamics::ix;
use crate::core::sim::{fly, EventKind, Flight, FlyOptions};

/// The tuned program in the problem file's own syntax.
#[derive(Debug, Clone, Serialize)]
pub struct TunedProgram {
    /// `launch` section (changed only when the azimuth was tuned).
    pub launch: LaunchFile,
    /// `ascent` section with the tuned values.
    pub ascent: AscentFile,
}

/// One tuned variable.
#[derive(Debug, Clone, Serialize)]
pub struct Tuned {
    /// JSON path of the field.
    pub field: String,
    /// Value in the field's unit (the unit ends the field's name: `kick_deg`, `duration_s`).
    pub value: f64,
    /// The value the problem file gave, in the same unit (`None` when the file states none: the
    /// search started from its own guess).
    pub written: Option<f64>,
    /// The bound the value sits on, if any: the optimum may lie beyond it (widen it, or free
    /// another variable), so it is not a free optimum in this variable.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub at_bound: Option<AtBound>,
}

/// Which bound a tuned variable sits on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum AtBound {
    /// Its lower bound (for a timed coast: the written length, the shortest allowed).
    Lower,
    /// Its upper bound.
    Upper,
}

/// Where a tuned variable acts in flight, for listing them in flight order: the launch and the
/// liftoff manoeuvre first, the throttle bucket on the first arc, then each arc's law, cutoff and
/// coast in program order (the arcs fly in that order), anything else last.
fn flight_order(v: &Param) -> (usize, u8) {
    match *v {
        Param::Azimuth | Param::TargetInclination => (0, 0),
        Param::RiseTime => (0, 1),
        Param::PitchRate => (0, 2),
        Param::Kick => (0, 3),
        Param::BucketStart | Param::BucketDuration | Param::BucketThrottle => (0, 4),
        Param::Law { arc, .. } => (arc, 5),
        Param::ApogeeCutoff(arc) => (arc, 6),
        Param::Coast(arc) => (arc, 5),
        _ => (usize::MAX, 0),
    }
}

/// The bound `x` (SI) of `v` sits on: the registry's bounds, and for a timed coast its written
/// length in `written` (the shortest allowed). Within 1e-6 of the variable's scale.
fn bound_hit(v: &Param, x: f64, written: &Problem) -> Option<AtBound> {
    let (mut lo, hi) = v.bounds();
    if matches!(v, Param::Coast(_)) {
        lo = lo.max(v.get(written).unwrap_or(lo));
    }
    let tol = 1e-6 * v.scale().max(x.abs());
    if x - lo <= tol {
        Some(AtBound::Lower)
    } else if hi - x <= tol {
        Some(AtBound::Upper)
    } else {
        None
    }
}

/// Everything `solve` reports (the `--json` document): the `fly` report of the tuned program plus
/// the solve's own fields.
#[derive(Debug, Clone, Serialize)]
pub struct SolveReport {
    /// The flight of the tuned program.
    #[serde(flatten)]
    pub flight: FlightReport,
    /// Tuned program, ready to paste into the problem file.
    pub program: TunedProgram,
    /// Tuned variables.
    pub tuned: Vec<Tuned>,
    /// Convergence report.
    pub convergence: Convergence,
    /// Propellant burned, kg.
    pub propellant_used_kg: f64,
    /// Payload, kg.
    pub payload_kg: f64,
    /// Propellant left after cutoff, kg.
    pub propellant_remaining_kg: f64,
    /// Reserves deducted from it, kg.
    pub reserves: ReservesReport,
    /// Margin after reserves, kg (negative: the reserves are not covered).
    pub margin_kg: f64,
    /// The margin as ΔV of the last stage at cutoff: c·ln(m_f / (m_f − |margin|)), with the
    /// margin's sign, m/s.
    pub margin_mps: f64,
    /// Path limits that are active on the solved ascent.
    pub active_constraints: Vec<String>,
    /// Limits held by the optimizer, with their cost.
    pub constraint_costs: Vec<crate::core::optimize::ActiveConstraint>,
    /// How the optimum moves with the target, the payload and a held max-Q limit, from the
    /// optimizer's multipliers (one extra trajectory each): trade factors without re-solving.
    /// Empty unless the search converged.
    pub sensitivities: Vec<crate::core::optimize::sensitivity::Sensitivity>,
    /// The free-attitude refinement (`--refine`) and the gap of the simple program.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub refinement: Option<Refinement>,
    /// Richer programs tried with `--explore` and what they save.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub richer_programs: Vec<Richer>,
    /// When the target energy was not reached: the speed still missing at the end of the best
    /// program found, √(v² + 2ΔE) − v, m/s (null when reached).
    pub shortfall_mps: Option<f64>,
    /// When the solve did not succeed: what stands in the way, in words (null otherwise).
    pub failure_cause: Option<String>,
}

/// What `--refine` found: the simple program's optimality gap against a free thrust direction.
#[derive(Debug, Clone, Serialize)]
pub struct Refinement {
    /// Attitude nodes per powered arc.
    pub nodes_per_arc: usize,
    /// Variables of the refinement (node pitches, and headings with an inclination target).
    pub variables: usize,
    /// How the refinement's search ended.
    pub status: SolveStatus,
    /// Why, in words.
    pub reason: String,
    /// Its trajectories (beyond the shooting solve's).
    pub trajectories: usize,
    /// Propellant burned by the simple (shooting) program, kg.
    pub simple_propellant_used_kg: f64,
    /// Propellant burned by the refined program, kg.
    pub refined_propellant_used_kg: f64,
    /// The simple program's gap: propellant the refined program saves, kg.
    pub gap_kg: f64,
    /// The gap as ΔV of the last stage at cutoff, c·ln(m_f,refined / m_f,simple), m/s.
    pub gap_mps: f64,
    /// The refined program was kept (it met the target and the path limits and saved
    /// propellant); otherwise the report flies the simple program.
    pub kept: bool,
}

/// A richer program and its saving over the default one.
#[derive(Debug, Clone, Serialize)]
pub struct Richer {
    /// What is added.
    pub variant: String,
    /// How to ask for it.
    pub how: String,
    /// Propellant saved (payload mode: payload gained), kg; zero when the richer search found
    /// nothing better than the base program (which lies inside its space).
    pub saves_kg: f64,
    /// The saving as last-stage ΔV at cutoff, m/s.
    pub saves_mps: f64,
    /// Outcome of that solve.
    pub status: SolveStatus,
}

/// Solves the richer variants of `p` and compares them with `base` (objective value, kg) of the
/// tuned program `tuned`. The base program lies inside the space of the freed variables: that
/// search starts from it, and a richer search that ends above it counts as no gain (never a
/// negative one).
fn explore(
    p: &Problem,
    tuned: &Problem,
    opts: &SolveOptions,
    base: f64,
    m_f: f64,
    c: f64,
    obs: &dyn Observer,
) -> Vec<Richer> {
    use crate::core::steering::{Arc, LinearTangent, Steering};
    let mut variants: Vec<(String, String, Problem, SolveOptions)> = Vec::new();
    let mut free = SolveOptions {
        scan: false,
        ..opts.clone()
    };
    free.free
        .extend(["pitch_rate".to_string(), "rise_time".to_string()]);
    variants.push((
        "free pitch-over rate and vertical rise".into(),
        "--free pitch_rate,rise_time".into(),
        tuned.clone(),
        free,
    ));
    let mut per_arc = p.clone();
    let mut changed = false;
    for a in per_arc.program.arcs.iter_mut() {
        if let Arc::Burn { steering, .. } = a {
            if *steering == Steering::LinearTangentContinued {
                *steering = Steering::LinearTangent(LinearTangent {
                    pitch0_rad: 10f64.to_radians(),
                    tan_rate_per_s: 0.002,
                    heading_rad: None,
                    yaw_rate_per_s: 0.0,
                });
                changed = true;
            }
        }
    }
    if changed {
        variants.push((
            "a separate linear tangent law on each upper burn".into(),
            "write \"linear_tangent\" instead of \"linear_tangent_continued\"".into(),
            per_arc,
            opts.clone(),
        ));
    }
    variants
        .into_iter()
        .map(|(variant, how, q, o)| {
            let s = tune_observed(&q, &o, obs);
            let (value, status) = s.as_ref().map_or((base, SolveStatus::Infeasible), |s| {
                (
                    crate::core::optimize::objective(&s.eval),
                    s.convergence.status,
                )
            });
            let saves = (base - value).max(0.0);
            Richer {
                variant,
                how,
                saves_kg: saves,
                saves_mps: c * ((m_f + saves.max(-0.9 * m_f)) / m_f).ln(),
                status,
            }
        })
        .collect()
}

/// Reserves deducted from the propellant left, kg.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct ReservesReport {
    /// Flight performance reserve (percentage of ideal ΔV converted at the last stage's Isp, plus
    /// the mass form), kg.
    pub fpr_kg: f64,
    /// Unusable residuals, kg.
    pub residuals_kg: f64,
    /// Disposal propellant, kg.
    pub disposal_kg: f64,
}

impl ReservesReport {
    /// All reserves, kg.
    pub fn total_kg(&self) -> f64 {
        self.fpr_kg + self.residuals_kg + self.disposal_kg
    }
}

/// Reserves of `p` for a flight with ideal ΔV `ideal_mps` ending at mass `m_f` with exhaust
/// velocity `c` on the last stage: the ΔV reserve costs `m_f (1 − e^(−Δv/c))` (Tsiolkovsky).
fn reserves(p: &Problem, ideal_mps: f64, m_f: f64, c: f64) -> ReservesReport {
    let r = &p.reserves;
    let dv = r.fpr_fraction_dv * ideal_mps;
    ReservesReport {
        fpr_kg: m_f * (1.0 - (-dv / c).exp()) + r.fpr_kg,
        residuals_kg: r.residuals_kg,
        disposal_kg: r.disposal_kg,
    }
}

/// Speed missing at the end state to reach the target energy, m/s.
fn shortfall_mps(p: &Problem, y: &crate::core::sim::dynamics::State) -> Option<f64> {
    let t = p.target?;
    let r = nalgebra::Vector3::new(y[0], y[1], y[2]);
    let v = nalgebra::Vector3::new(y[3], y[4], y[5]);
    let de = t.energy_j_kg(&p.environment) - p.environment.specific_energy_j_kg(&r, &v);
    (de > 1e-6 * t.energy_j_kg(&p.environment).abs())
        .then(|| (v.norm_squared() + 2.0 * de).sqrt() - v.norm())
}

fn active_constraints(
    p: &Problem,
    r: &FlightReport,
    accel_limited: bool,
    accel_peak_t_s: Option<f64>,
    held: &[crate::core::optimize::ActiveConstraint],
) -> Vec<String> {
    let mut v = Vec::new();
    // The throttle holds the acceleration limit to integrator precision; a stage that cannot
    // throttle low enough (its `min_throttle`) exceeds it whatever the pitch program does.
    let accel_over = r
        .max_axial_accel_limit_g
        .filter(|l| r.max_axial_accel_g > l * (1.0 + 1e-6));
    match accel_over {
        Some(l) => v.push(format!(
            "max_axial_accel_g: EXCEEDED ({:.2} g0 > {:.2} g0 at T+{:.1} s): the stage burning \
             then cannot throttle low enough (its min_throttle), and no pitch program changes \
             thrust over mass",
            r.max_axial_accel_g,
            l,
            accel_peak_t_s.unwrap_or(f64::NAN)
        )),
        None if accel_limited => {
            v.push("max_axial_accel_g: the throttle holds the limit".to_string())
        }
        None => {}
    }
    let solved = matches!(r.status, Status::Orbit) && r.target_deviation.is_some_and(|d| d.met);
    // A limit is reported held only when the flight keeps it: never "held" beside "EXCEEDED".
    let kept = |c: &crate::core::optimize::ActiveConstraint| {
        r.max_dynamic_pressure_pa <= c.value * (1.0 + 1e-6)
    };
    for c in held.iter().filter(|c| solved && kept(c)) {
        v.push(format!(
            "{}: held at {:.1} kPa by a {}; the unconstrained optimum reached {:.1} kPa; cost \
             {:.1} kg ({:.1} kg per kPa)",
            c.limit,
            c.value / 1e3,
            c.how,
            c.unconstrained / 1e3,
            c.cost_kg,
            c.cost_kg_per_unit
        ));
    }
    if let Some(q) = p.limits.max_dynamic_pressure_pa {
        if r.max_dynamic_pressure_pa > q * (1.0 + 1e-6) {
            v.push(format!(
                "max_dynamic_pressure_pa: EXCEEDED ({:.2} kPa > {:.2} kPa)",
                r.max_dynamic_pressure_pa / 1e3,
                q / 1e3
            ));
        }
    }
    v
}

/// Settings of a solve.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SolveSettings {
    /// The optimizer's options (budgets, free and fixed groups, objective).
    pub solver: SolveOptions,
    /// Also solve richer programs and report what each would save.
    pub explore: bool,
    /// Record the time history of the tuned flight every this many seconds, s; `None`: none.
    pub record_step_s: Option<f64>,
    /// Refine the solved program with a free thrust direction (`solve --refine`): the report then
    /// flies and writes the refined program and states the gap. `None`: no refinement.
    pub refine: Option<crate::core::optimize::refine::RefineOptions>,
}

/// Variable groups `--free` accepts.
pub const FREE_GROUPS: [&str; 4] = ["pitch_rate", "rise_time", "azimuth", "coasts"];
/// Variable groups `--fix` accepts.
pub const FIX_GROUPS: [&str; 4] = ["kick", "steering", "azimuth", "coasts"];

impl SolveSettings {
    /// Checks the options that do not depend on the problem.
    pub fn check(&self) -> Result<(), Error> {
        check_step("record_step_s", self.record_step_s)?;
        if let Some(r) = self.refine {
            check_range("refine_nodes", Some(r.nodes_per_arc as f64), 4.0, 200.0)?;
        }
        let o = &self.solver;
        // A wall cap is optional: at most about eleven days, and more than a millisecond.
        check_range("max_wall_s", o.max_wall_s, 1e-3, 1e6)?;
        check_range(
            "max_trajectories",
            Some(o.max_trajectories as f64),
            1.0,
            1e8,
        )?;
        let unknown = |option, given: &[String], known: &[&str]| {
            given
                .iter()
                .find(|g| !known.contains(&g.as_str()))
                .map(|g| Error::Option {
                    option,
                    reason: format!("unknown group `{g}` ({})", known.join(", ")),
                })
        };
        match unknown("free", &o.free, &FREE_GROUPS).or(unknown("fix", &o.fix, &FIX_GROUPS)) {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }
}

/// A solved case: the report, the tuned problem file, and the flight of the tuned program.
#[derive(Debug, Clone)]
pub struct SolveRun {
    /// The `solve --json` document.
    pub report: SolveReport,
    /// The problem file with the tuned program written back (what `--write-program` writes).
    pub tuned_file: ProblemFile,
    /// The flight of the tuned program as written.
    pub flight: Flight,
}

impl SolveRun {
    /// The search ended with the conditions met (converged or at its iteration limit), the
    /// vehicle reached orbit and the orbit is within the insertion tolerance of the target.
    pub fn succeeded(&self) -> bool {
        self.report.succeeded()
    }
}

impl SolveReport {
    /// See [`SolveRun::succeeded`].
    pub fn succeeded(&self) -> bool {
        matches!(
            self.convergence.status,
            SolveStatus::Converged | SolveStatus::IterationLimit
        ) && self.flight.reached_orbit()
            && self.flight.target_deviation.is_some_and(|d| d.met)
    }
}

/// Tunes the program of `case`, writes it back into the file form and flies it as written.
///
/// # Errors
/// [`Error::Unreachable`] for an inclination out of reach of a direct ascent; [`Error::Option`]
/// for bad settings; [`Error::Solve`] when the problem cannot be posed (no target, missing
/// controls); [`Error::WriteBack`] when the tuned program does not validate in the file form.
pub fn solve(case: &Case, s: &SolveSettings, obs: &dyn Observer) -> Result<SolveRun, Error> {
    s.check()?;
    // A guided last burn is tuned through a linear tangent stand-in (the law guidance flies in
    // vacuum), then handed back to guidance: the rest of the program is tuned as usual and the
    // guided stage closes the loop in the flight reported.
    let standin = guided_standin(case)?;
    let case = standin.as_ref().map_or(case, |(c, _)| c);
    let p = case.target_reachable()?;
    let mut sol = tune_observed(p, &s.solver, obs)?;
    let mut tuned_file = case.file.clone();
    for (v, x) in &sol.variables {
        v.write(&mut tuned_file, *x);
    }
    set_final_cutoff(&mut tuned_file);
    if let Some((_, (arc, guidance))) = &standin {
        if let Some(ArcFile::Burn(b)) = tuned_file.ascent.arcs.get_mut(*arc) {
            b.steering = guidance.clone();
        }
        // The stand-in's parameters are not in the written program.
        sol.variables
            .retain(|(v, _)| !matches!(v, Param::Law { arc: a, .. } if a == arc));
    }
    if let Some(b) = sol.problem.program.bucket {
        tuned_file.ascent.throttle_bucket = Some(crate::core::problem::file::BucketFile {
            start_s: b.start_s,
            duration_s: b.duration_s,
            throttle: b.throttle,
        });
    }
    // Report the program as written: the file's vehicle with the tuned values (in the payload
    // mode the reserves are then back in the last stage's tanks, left over at cutoff).
    let mut flown = validate::validate(&tuned_file).map_err(Error::WriteBack)?;
    flown.input_sha256 = p.input_sha256.clone();
    let flight = fly(
        &flown,
        &FlyOptions {
            record_step_s: s.record_step_s,
            initial: None,
        },
    );
    let (flown, tuned_file, flight, refinement) = match s.refine {
        Some(o) if flight.end == crate::core::sim::EndReason::Completed => {
            refine_program(flown, tuned_file, flight, &o, s.record_step_s)?
        }
        _ => (flown, tuned_file, flight, None),
    };
    let mut report = report(p, &flown, &tuned_file, &flight, &sol, s, obs);
    report.refinement = refinement;
    report.failure_cause = failure_cause(&flown, &report);
    Ok(SolveRun {
        report,
        tuned_file,
        flight,
    })
}

/// `--refine`: refines the written program `flown` with a free thrust direction, writes the
/// attitude tables into the file form and flies them as written. The refined program replaces the
/// simple one only when it meets the target and burns less.
fn refine_program(
    flown: Problem,
    tuned_file: ProblemFile,
    flight: Flight,
    o: &crate::core::optimize::refine::RefineOptions,
    record_step_s: Option<f64>,
) -> Result<(Problem, ProblemFile, Flight, Option<Refinement>), Error> {
    use crate::core::problem::file::{ArcFile, SteeringFile};
    use crate::core::steering::{Arc, Steering};
    let r = crate::core::optimize::refine::refine(&flown, o)?;
    let mut file = tuned_file.clone();
    for (i, a) in r.problem.program.arcs.iter().enumerate() {
        if let (
            Arc::Burn {
                steering: Steering::AttitudeTable(t),
                ..
            },
            Some(ArcFile::Burn(b)),
        ) = (a, file.ascent.arcs.get_mut(i))
        {
            b.steering = SteeringFile::AttitudeTable(t.to_file());
            // The table holds the vertical rise as its first nodes; the liftoff manoeuvre
            // (rise, kick, pitch-over) belongs to a gravity-turn first arc only.
            if i == 0 {
                file.ascent.liftoff = None;
            }
        }
    }
    let mut refined = validate::validate(&file).map_err(Error::WriteBack)?;
    refined.input_sha256 = flown.input_sha256.clone();
    let rflight = fly(
        &refined,
        &FlyOptions {
            record_step_s,
            initial: None,
        },
    );
    let used =
        |p: &Problem, f: &Flight| p.vehicle.propellant_loaded_kg() - f.propellant_remaining_kg;
    let (simple, refined_used) = (used(&flown, &flight), used(&refined, &rflight));
    // Met: the target within its tolerance and every path limit within the reports' own rule
    // (a value above its limit by more than 1e-6 is reported EXCEEDS).
    let within = |v: f64, lim: Option<f64>| lim.is_none_or(|l| v <= l * (1.0 + 1e-6));
    let rep = FlightReport::new(&refined, &rflight);
    let met = rflight.end == crate::core::sim::EndReason::Completed
        && rep.target_deviation.is_some_and(|d| d.met)
        && within(
            rep.max_dynamic_pressure_pa,
            rep.max_dynamic_pressure_limit_pa,
        )
        && within(rep.max_q_alpha_pa_deg, rep.max_q_alpha_limit_pa_deg);
    let kept = met && refined_used <= simple;
    let last = flown.vehicle.stages.len() - 1;
    let c = flown.vehicle.stages[flight.final_mode.stage.min(last)]
        .engine
        .exhaust_velocity_mps();
    let (m_s, m_r) = (flight.y1[ix::M], rflight.y1[ix::M]);
    let summary = Refinement {
        nodes_per_arc: r.nodes_per_arc,
        variables: r.variables,
        status: r.status,
        reason: r.reason,
        trajectories: r.trajectories,
        simple_propellant_used_kg: simple,
        refined_propellant_used_kg: refined_used,
        gap_kg: simple - refined_used,
        gap_mps: c * (m_r / m_s).ln(),
        kept,
    };
    Ok(if kept {
        (refined, file, rflight, Some(summary))
    } else {
        (flown, tuned_file, flight, Some(summary))
    })
}

/// The solve report of the tuned program `flown` (flight `flight`) of problem `p`.
fn report(
    p: &Problem,
    flown: &Problem,
    tuned_file: &ProblemFile,
    flight: &Flight,
    sol: &crate::core::optimize::Solution,
    s: &SolveSettings,
    obs: &dyn Observer,
) -> SolveReport {
    let report = FlightReport::new(flown, flight);
    let accel_limited = flight
        .events
        .iter()
        .any(|e| e.kind == EventKind::AccelLimitOnset);
    let last = flown.vehicle.stages.len() - 1;
    let stage = &flown.vehicle.stages[flight.final_mode.stage.min(last)];
    let m_f = report.final_mass_kg;
    let c = stage.engine.exhaust_velocity_mps();
    let res = reserves(flown, report.budget.ideal_mps, m_f, c);
    let margin = report.propellant_remaining_kg - res.total_kg();
    let margin_mps = if m_f > margin.max(0.0) {
        margin.signum() * c * (m_f / (m_f - margin.abs())).ln()
    } else {
        f64::NAN
    };
    SolveReport {
        program: TunedProgram {
            launch: tuned_file.launch.clone(),
            ascent: tuned_file.ascent.clone(),
        },
        tuned: {
            let mut t: Vec<(Param, Tuned)> = sol
                .variables
                .iter()
                .map(|(v, x)| {
                    (
                        *v,
                        Tuned {
                            field: v.name(),
                            value: v.to_file_unit(*x),
                            written: v.get(p).map(|w| v.to_file_unit(w)),
                            at_bound: bound_hit(v, *x, p),
                        },
                    )
                })
                .collect();
            t.sort_by_key(|(v, _)| flight_order(v));
            t.into_iter().map(|(_, t)| t).collect()
        },
        propellant_used_kg: flown.vehicle.propellant_loaded_kg() - report.propellant_remaining_kg,
        payload_kg: flown.vehicle.payload_kg,
        propellant_remaining_kg: report.propellant_remaining_kg,
        reserves: res,
        margin_kg: margin,
        margin_mps,
        active_constraints: active_constraints(
            flown,
            &report,
            accel_limited,
            flight.max_axial_accel.map(|m| m.at.t_s),
            &sol.active,
        ),
        constraint_costs: sol.active.clone(),
        refinement: None,
        sensitivities: sol.sensitivities.clone(),
        shortfall_mps: shortfall_mps(flown, &flight.y1),
        failure_cause: None,
        richer_programs: if s.explore {
            let base = crate::core::optimize::objective(&sol.eval);
            explore(p, &sol.problem, &s.solver, base, m_f, c, obs)
        } else {
            Vec::new()
        },
        convergence: sol.convergence.clone(),
        flight: report,
    }
}

/// What stands in the way of a solve that did not succeed, read from its best flight: the
/// energy (the vehicle falls short), a max-Q limit the program cannot hold together with the
/// target (naming a first stage that cannot throttle deep), or the remaining terminal
/// conditions. `None` for a successful solve or a search stopped by its budget.
fn failure_cause(flown: &Problem, r: &SolveReport) -> Option<String> {
    if r.succeeded() || r.convergence.status == SolveStatus::BudgetExhausted {
        return None;
    }
    if let Some(short) = r.shortfall_mps.filter(|s| *s > 0.05) {
        return Some(format!(
            "the vehicle cannot reach the target energy: the best program found ends {short:.1} \
             m/s short"
        ));
    }
    let f = &r.flight;
    if let Some(lim) = f
        .max_dynamic_pressure_limit_pa
        .filter(|l| f.max_dynamic_pressure_pa > l * (1.0 + 1e-6))
    {
        let s0 = &flown.vehicle.stages[0];
        let how = if flown.vehicle.boosters.is_some() {
            format!(
                "; the boosters cannot throttle and the core goes down only to {:.0} %",
                s0.min_throttle * 100.0
            )
        } else if s0.min_throttle > 0.9 {
            format!(
                "; the first stage throttles down only to {:.0} %, so the pitch program must \
                 hold it almost alone",
                s0.min_throttle * 100.0
            )
        } else {
            String::new()
        };
        return Some(format!(
            "the max-Q limit cannot be held together with the target orbit: the best program \
             peaks at {:.2} kPa against {:.2} kPa{how}",
            f.max_dynamic_pressure_pa / 1e3,
            lim / 1e3
        ));
    }
    Some(match f.target_deviation {
        Some(d) if !d.met => format!(
            "the terminal conditions cannot be met: the best program misses the target by \
             {:+.2} km in perigee, {} in apogee and {:+.4}° in inclination",
            d.perigee_km,
            d.apogee_km
                .map_or("(unbound)".to_string(), |a| format!("{a:+.2} km")),
            d.inclination_deg.unwrap_or(0.0)
        ),
        _ => "the search did not verify an optimum".to_string(),
    })
}

/// The optimizer cuts the last burn on the target energy; the written program says so.
fn set_final_cutoff(f: &mut ProblemFile) {
    use crate::core::problem::file::{ArcFile, CutoffFile};
    if let Some(ArcFile::Burn(b)) = f
        .ascent
        .arcs
        .iter_mut()
        .rev()
        .find(|a| matches!(a, ArcFile::Burn(_)))
    {
        b.cutoff = Some(CutoffFile::TargetOrbit);
    }
}

/// A case with a stand-in law for its guided last burn, and (arc index, the guided steering to
/// put back).
type Standin = (Case, (usize, crate::core::problem::file::SteeringFile));

/// When the last burn of `case` is guided: the case with that burn flown by a linear tangent
/// stand-in (the optimizer tunes it, its automatic start included), and (arc index, the guided
/// steering to put back).
fn guided_standin(case: &Case) -> Result<Option<Standin>, Error> {
    use crate::core::problem::file::{LinearTangentFile, SteeringFile};
    let Some((i, ArcFile::Burn(b))) = case
        .file
        .ascent
        .arcs
        .iter()
        .enumerate()
        .rev()
        .find(|(_, a)| matches!(a, ArcFile::Burn(_)))
    else {
        return Ok(None);
    };
    if !matches!(b.steering, SteeringFile::Guidance(_)) {
        return Ok(None);
    }
    let mut file = case.file.clone();
    if let Some(ArcFile::Burn(sb)) = file.ascent.arcs.get_mut(i) {
        sb.steering = SteeringFile::LinearTangent(LinearTangentFile {
            pitch0_deg: 20.0,
            tan_rate_per_s: 0.004,
            yaw_rate_per_s: None,
            heading_deg: None,
        });
    }
    let mut c = Case::from_file(file)?;
    c.problem.input_sha256 = case.problem.input_sha256.clone();
    Ok(Some((c, (i, b.steering.clone()))))
}
