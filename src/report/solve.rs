//! `solve`: tune the program, fly it, and report it like `fly` plus the tuned program and the
//! convergence report.

use std::fmt::Write as _;

use anyhow::{bail, Context};
use serde::Serialize;

use super::{text, FlightReport};
use crate::cli::{emit, write_atomic, SolveArgs, EXIT_BAD_INPUT, EXIT_NOT_REACHED, EXIT_OK};
use crate::optimize::{solve, Convergence, SolveOptions, SolveStatus};
use crate::problem::file::{AscentFile, LaunchFile, ProblemFile};
use crate::problem::{parse, validate, Problem};
use crate::sim::{fly, EventKind, FlyOptions};

/// The tuned program in the problem file's own syntax.
#[derive(Debug, Clone, Serialize)]
pub struct Program {
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
    /// Value in the field's unit.
    pub value: f64,
}

/// Everything `solve` reports (the `--json` document): the `fly` report of the tuned program plus
/// the solve's own fields.
#[derive(Debug, Clone, Serialize)]
pub struct SolveReport {
    /// The flight of the tuned program.
    #[serde(flatten)]
    pub flight: FlightReport,
    /// Tuned program, ready to paste into the problem file.
    pub program: Program,
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
    pub constraint_costs: Vec<crate::optimize::ActiveConstraint>,
    /// Richer programs tried with `--explore` and what they save.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub richer_programs: Vec<Richer>,
    /// When the target energy was not reached: the speed still missing at the end of the best
    /// program found, √(v² + 2ΔE) − v, m/s (null when reached).
    pub shortfall_mps: Option<f64>,
}

/// A richer program and its saving over the default one.
#[derive(Debug, Clone, Serialize)]
pub struct Richer {
    /// What is added.
    pub variant: String,
    /// How to ask for it.
    pub how: String,
    /// Propellant saved (payload mode: payload gained), kg.
    pub saves_kg: f64,
    /// The saving as last-stage ΔV at cutoff, m/s.
    pub saves_mps: f64,
    /// Outcome of that solve.
    pub status: SolveStatus,
}

/// Solves the richer variants of `p` and compares them with `base` (objective value, kg).
fn explore(p: &Problem, opts: &SolveOptions, base: f64, m_f: f64, c: f64) -> Vec<Richer> {
    use crate::steering::{Arc, LinearTangent, Steering};
    let mut variants: Vec<(String, String, Problem, SolveOptions)> = Vec::new();
    let mut free = opts.clone();
    free.free
        .extend(["pitch_rate".to_string(), "rise_time".to_string()]);
    variants.push((
        "free pitch-over rate and vertical rise".into(),
        "--free pitch_rate,rise_time".into(),
        p.clone(),
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
            let s = solve(&q, &o);
            let (value, status) = s.as_ref().map_or((base, SolveStatus::Infeasible), |s| {
                (crate::optimize::objective(&s.eval), s.convergence.status)
            });
            let saves = base - value;
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
    fn total_kg(&self) -> f64 {
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
fn shortfall_mps(p: &Problem, y: &crate::sim::dynamics::State) -> Option<f64> {
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
    held: &[crate::optimize::ActiveConstraint],
) -> Vec<String> {
    let mut v = Vec::new();
    if accel_limited {
        v.push("max_axial_accel_g: the throttle holds the limit".to_string());
    }
    let solved =
        matches!(r.status, super::Status::Orbit) && r.target_deviation.is_some_and(|d| d.met);
    for c in held.iter().filter(|_| solved) {
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

/// Runs `kickturn solve`.
pub fn run(a: &SolveArgs) -> anyhow::Result<u8> {
    if !(a.out.csv_step_s.is_finite() && a.out.csv_step_s > 0.0) {
        bail!(
            "--csv-step-s: must be a finite number > 0, got {}",
            a.out.csv_step_s
        );
    }
    if !(a.max_wall_s.is_finite() && a.max_wall_s > 0.0) {
        bail!(
            "--max-wall-s: must be a finite number > 0, got {}",
            a.max_wall_s
        );
    }
    let text_in =
        std::fs::read_to_string(&a.problem).with_context(|| format!("{}", a.problem.display()))?;
    let file = parse(&text_in).with_context(|| format!("{}", a.problem.display()))?;
    let mut p = validate::validate(&file).with_context(|| format!("{}", a.problem.display()))?;
    p.input_sha256 = crate::problem::sha256_hex(text_in.as_bytes());
    if let Some(u) = p.unreachable_inclination().filter(|_| !p.allow_dog_leg) {
        eprintln!("{}: {u}", a.problem.display());
        return Ok(EXIT_NOT_REACHED);
    }
    for g in &a.free {
        if !["pitch_rate", "rise_time", "azimuth", "coasts"].contains(&g.as_str()) {
            bail!("--free: unknown group `{g}` (pitch_rate, rise_time, azimuth, coasts)");
        }
    }
    for g in &a.fix {
        if !["kick", "steering", "azimuth", "coasts"].contains(&g.as_str()) {
            bail!("--fix: unknown group `{g}` (kick, steering, azimuth, coasts)");
        }
    }
    let opts = SolveOptions {
        max_wall_s: a.max_wall_s,
        max_trajectories: a.max_trajectories,
        free: a.free.clone(),
        fix: a.fix.clone(),
        scan: !a.no_scan,
        perturb_seed: a.perturb_seed,
        polish: true,
        objective: if a.max_payload {
            crate::optimize::Objective::MaxPayload
        } else {
            crate::optimize::Objective::LeastPropellant
        },
    };
    let (out, tuned_file, flight) =
        match solve_and_report(&file, &p, &opts, a.explore, record_of(a)) {
            Ok(x) => x,
            Err(e) => {
                eprintln!("error: {}: {e}", a.problem.display());
                return Ok(EXIT_BAD_INPUT);
            }
        };
    if let Some(path) = &a.out.csv {
        write_atomic(path, &a.problem, |w| {
            super::csv_out::write_history(w, &flight.history).map_err(Into::into)
        })?;
    }
    if let Some(path) = &a.write_program {
        let json = serde_json::to_string_pretty(&tuned_file)? + "\n";
        write_atomic(path, &a.problem, |w| {
            use std::io::Write;
            w.write_all(json.as_bytes()).map_err(Into::into)
        })?;
    }
    if let Some(dir) = &a.out.plot {
        super::figures::flight_figures(dir, &out.flight, &flight)?;
    }
    if let Some(path) = &a.out.report {
        let text = render(&out);
        let summary: String = text.split("\n\n").next().unwrap_or("").to_string();
        super::html::write(path, &a.problem, &out.flight, &flight, &summary)?;
    }
    if a.out.json {
        emit(&format!("{}\n", serde_json::to_string_pretty(&out)?))?;
    } else {
        emit(&render(&out))?;
    }
    let met = out.flight.target_deviation.is_some_and(|d| d.met);
    let ok = matches!(
        out.convergence.status,
        SolveStatus::Converged | SolveStatus::IterationLimit
    ) && out.flight.reached_orbit()
        && met;
    Ok(if ok { EXIT_OK } else { EXIT_NOT_REACHED })
}

/// Solves `p` (validated from `file`), flies the program as written and builds the report.
/// Returns the report, the tuned problem file and the flight (history recorded every `record`
/// seconds when given).
pub fn solve_and_report(
    file: &ProblemFile,
    p: &Problem,
    opts: &SolveOptions,
    explore_richer: bool,
    record: Option<f64>,
) -> Result<(SolveReport, ProblemFile, crate::sim::Flight), crate::optimize::SolveError> {
    let sol = solve(p, opts)?;
    let mut tuned_file = file.clone();
    for (v, x) in &sol.variables {
        v.write(&mut tuned_file, *x);
    }
    set_final_cutoff(&mut tuned_file);
    if let Some(b) = sol.problem.program.bucket {
        tuned_file.ascent.throttle_bucket = Some(crate::problem::file::BucketFile {
            start_s: b.start_s,
            duration_s: b.duration_s,
            throttle: b.throttle,
        });
    }
    // Report the program as written: the file's vehicle with the tuned values (in the payload
    // mode the reserves are then back in the last stage's tanks, left over at cutoff).
    let mut flown = validate::validate(&tuned_file).unwrap_or_else(|_| sol.problem.clone());
    flown.input_sha256 = p.input_sha256.clone();
    let flight = fly(
        &flown,
        &FlyOptions {
            record_step_s: record,
            initial: None,
        },
    );
    let report = FlightReport::new(&flown, &flight);
    let accel_limited = flight
        .events
        .iter()
        .any(|e| e.kind == EventKind::AccelLimitOnset);
    let last = flown.vehicle.stages.len() - 1;
    let stage = &flown.vehicle.stages[flight.final_mode.stage.min(last)];
    let m_f = report.final_mass_kg;
    let c = stage.engine.exhaust_velocity_mps();
    let res = reserves(&flown, report.budget.ideal_mps, m_f, c);
    let margin = report.propellant_remaining_kg - res.total_kg();
    let margin_mps = if m_f > margin.max(0.0) {
        margin.signum() * c * (m_f / (m_f - margin.abs())).ln()
    } else {
        f64::NAN
    };
    let out = SolveReport {
        program: Program {
            launch: tuned_file.launch.clone(),
            ascent: tuned_file.ascent.clone(),
        },
        tuned: sol
            .variables
            .iter()
            .map(|(v, x)| Tuned {
                field: v.name(),
                value: v.to_file_unit(*x),
            })
            .collect(),
        propellant_used_kg: flown.vehicle.propellant_loaded_kg() - report.propellant_remaining_kg,
        payload_kg: flown.vehicle.payload_kg,
        propellant_remaining_kg: report.propellant_remaining_kg,
        reserves: res,
        margin_kg: margin,
        margin_mps,
        active_constraints: active_constraints(&flown, &report, accel_limited, &sol.active),
        constraint_costs: sol.active.clone(),
        shortfall_mps: shortfall_mps(&flown, &flight.y1),
        richer_programs: if explore_richer {
            explore(p, opts, crate::optimize::objective(&sol.eval), m_f, c)
        } else {
            Vec::new()
        },
        convergence: sol.convergence.clone(),
        flight: report,
    };
    Ok((out, tuned_file, flight))
}

fn record_of(a: &SolveArgs) -> Option<f64> {
    a.out.record_step_s()
}

/// The optimizer cuts the last burn on the target energy; the written program says so.
fn set_final_cutoff(f: &mut ProblemFile) {
    use crate::problem::file::{ArcFile, CutoffFile};
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

fn status_line(c: &Convergence) -> &'static str {
    match c.status {
        SolveStatus::Converged => "SOLVED",
        SolveStatus::BudgetExhausted => {
            "STOPPED: the wall-time or trajectory budget ended the search"
        }
        SolveStatus::IterationLimit => "SOLVED (the outer search stopped at its iteration limit)",
        SolveStatus::Infeasible => "NOT SOLVED: no program found reaches the target",
    }
}

/// Text rendering: the solve verdict, the tuned program, then the flight report.
pub fn render(r: &SolveReport) -> String {
    let mut s = String::new();
    let c = &r.convergence;
    let _ = writeln!(
        s,
        "{}: propellant used {:.1} kg, left {:.1} kg, reserves {:.1} kg, margin {:.1} kg \
         ({:.1} m/s), payload {:.1} kg",
        status_line(c),
        r.propellant_used_kg,
        r.propellant_remaining_kg,
        r.reserves.total_kg(),
        r.margin_kg,
        r.margin_mps,
        r.payload_kg
    );
    let _ = writeln!(
        s,
        "search: {} outer iterations, {} trajectories, {:.2} s; {}",
        c.iterations, c.trajectories, c.wall_s, c.reason
    );
    if let Some(short) = r.shortfall_mps {
        let apo = r
            .flight
            .orbit
            .apogee_alt_km
            .map_or("unbound".into(), |a| format!("{a:.1} km"));
        let _ = writeln!(
            s,
            "best program found: {short:.1} m/s short of the target energy; apogee {apo}, perigee {:.1} km",
            r.flight.orbit.perigee_alt_km
        );
    }
    let res: Vec<String> = c
        .terminal_residuals
        .iter()
        .map(|(n, v)| format!("{n} {v:+.3e}"))
        .collect();
    let _ = writeln!(s, "terminal residuals: {}", res.join(", "));
    let _ = writeln!(s, "tuned program:");
    for t in &r.tuned {
        let _ = writeln!(s, "  {:<64} {:>14.6}", t.field, t.value);
    }
    for a in &r.active_constraints {
        let _ = writeln!(s, "active: {a}");
    }
    for x in &r.richer_programs {
        let _ = writeln!(
            s,
            "richer program: {} would gain {:.1} kg (propellant saved, or payload in the payload mode; {:.1} m/s of last-stage ΔV) [{}]",
            x.variant, x.saves_kg, x.saves_mps, x.how
        );
    }
    let _ = writeln!(s);
    s.push_str(&text::render(&r.flight));
    s
}
