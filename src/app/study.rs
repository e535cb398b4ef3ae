//! Trade studies built on `solve`: parameter sweeps, side-by-side comparison of problems, and
//! trade factors (payload or margin change per unit change of a vehicle parameter) by central
//! differences of re-solved problems (docs/method.md §11). What a study varies is a
//! [`Param`] of the registry, written into the file form and validated again.
//!
//! Every study runs its points through one runner ([`run_each`], with [`solve_points`] for
//! re-solved points): in parallel (rayon), in input order, one [`Observer::advanced`] per point,
//! errors kept as the point's status. The `*_streamed` forms also hand each point to a
//! [`PointSink`] the moment it is finished, so that the caller can keep finished points of a run
//! that is stopped before its end; the report is the same either way.

use rayon::prelude::*;
use serde::Serialize;

use super::solve::{solve, SolveReport, SolveSettings};
use super::{tool_version, Case, Error};
use crate::core::observe::Observer;
use crate::core::optimize::{Objective, SolveOptions, SolveStatus};
use crate::core::problem::file::{ArcFile, LaunchFile, ProblemFile, SteeringFile};
use crate::core::problem::params::Param;

pub use super::outcome::CAUTION;

/// What a sweep varies.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Axis {
    /// Launch azimuth, deg (the target's inclination is then free).
    Azimuth,
    /// Target inclination, deg (launch azimuth from it).
    Inclination,
    /// Circular target altitude, km.
    Altitude,
    /// Payload, kg.
    Payload,
}

impl Axis {
    /// Column name with unit.
    pub fn label(&self) -> &'static str {
        match self {
            Axis::Azimuth => "azimuth_deg",
            Axis::Inclination => "inclination_deg",
            Axis::Altitude => "altitude_km",
            Axis::Payload => "payload_kg",
        }
    }

    /// The registry parameter the axis varies (values in the file's unit).
    pub fn param(&self) -> Param {
        match self {
            Axis::Azimuth => Param::Azimuth,
            Axis::Inclination => Param::TargetInclination,
            Axis::Altitude => Param::CircularAltitude,
            Axis::Payload => Param::Payload,
        }
    }
}

/// How a study point ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PointStatus {
    /// Solved: the conditions are met and the search converged.
    Converged,
    /// Solved: the conditions are met, the outer search stopped at its iteration limit.
    IterationLimit,
    /// The budget ended the search.
    BudgetExhausted,
    /// The target is met, but the optimality test did not pass.
    Stalled,
    /// The search ended, but the flight of the tuned program does not reach orbit or the target
    /// (the same rule as `solve`'s exit code).
    NotReached,
    /// No program met the target.
    Infeasible,
    /// The inclination cannot be reached by a direct ascent.
    Unreachable,
    /// The point's problem is invalid (message says why).
    BadInput,
}

impl PointStatus {
    /// The status as JSON and CSV spell it.
    pub fn as_str(&self) -> &'static str {
        match self {
            PointStatus::Converged => "converged",
            PointStatus::IterationLimit => "iteration_limit",
            PointStatus::BudgetExhausted => "budget_exhausted",
            PointStatus::Stalled => "stalled",
            PointStatus::NotReached => "not_reached",
            PointStatus::Infeasible => "infeasible",
            PointStatus::Unreachable => "unreachable",
            PointStatus::BadInput => "bad_input",
        }
    }

    /// The status of a solved point: the search's `status`, unless the search counts as solved
    /// but the written program's flight does not meet the target (`flown_ok`: the same rule as
    /// `solve`'s exit code), which is [`PointStatus::NotReached`].
    pub fn of_solve(status: SolveStatus, flown_ok: bool) -> Self {
        match PointStatus::from(status) {
            s if s.is_solved() && !flown_ok => PointStatus::NotReached,
            s => s,
        }
    }

    /// The point counts as solved.
    pub fn is_solved(&self) -> bool {
        matches!(self, PointStatus::Converged | PointStatus::IterationLimit)
    }
}

impl std::fmt::Display for PointStatus {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

impl From<SolveStatus> for PointStatus {
    fn from(s: SolveStatus) -> Self {
        match s {
            SolveStatus::Converged => PointStatus::Converged,
            SolveStatus::IterationLimit => PointStatus::IterationLimit,
            SolveStatus::BudgetExhausted => PointStatus::BudgetExhausted,
            SolveStatus::Infeasible => PointStatus::Infeasible,
            SolveStatus::Stalled => PointStatus::Stalled,
        }
    }
}

/// One solved study point (or why it could not be solved).
#[derive(Debug, Clone, Serialize)]
pub struct Point {
    /// Swept value (sweeps, in the axis' unit), index (comparisons) or signed step (trades).
    pub value: f64,
    /// How it ended.
    pub status: PointStatus,
    /// Message when not solved.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub message: Option<String>,
    /// Full report of the solved point.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub report: Option<Box<SolveReport>>,
}

/// The problem file with the swept value (in the axis' unit) applied.
pub fn apply(file: &ProblemFile, axis: Axis, v: f64) -> ProblemFile {
    let mut f = file.clone();
    if axis == Axis::Azimuth {
        // A fixed azimuth replaces the whole launch section, and the plane is free: no target
        // inclination, and the upper stage keeps to the plane the azimuth sets (no heading).
        f.launch = LaunchFile::default();
        if let Some(t) = f.target.as_mut() {
            t.inclination_deg = None;
        }
        clear_headings(&mut f);
    }
    axis.param().write_file_unit(&mut f, v);
    f
}

fn clear_headings(f: &mut ProblemFile) {
    for a in f.ascent.arcs.iter_mut() {
        if let ArcFile::Burn(b) = a {
            if let SteeringFile::LinearTangent(l) = &mut b.steering {
                l.heading_deg = None;
                l.yaw_rate_per_s = None;
            }
        }
    }
}

/// Solves one problem file; never fails (errors become the point's status).
pub fn solve_file(file: &ProblemFile, value: f64, opts: &SolveOptions) -> Point {
    let bad = |status, m: String| Point {
        value,
        status,
        message: Some(m),
        report: None,
    };
    let case = match Case::from_file(file.clone()) {
        Ok(c) => c,
        Err(e) => return bad(PointStatus::BadInput, e.to_string()),
    };
    let settings = SolveSettings {
        solver: opts.clone(),
        ..SolveSettings::default()
    };
    match solve(&case, &settings, &crate::core::observe::Silent) {
        Ok(run) => Point {
            value,
            status: PointStatus::of_solve(run.report.convergence.status, run.report.succeeded()),
            message: None,
            report: Some(Box::new(run.report)),
        },
        Err(e @ Error::Unreachable(_)) => bad(PointStatus::Unreachable, e.to_string()),
        Err(e) => bad(PointStatus::BadInput, e.to_string()),
    }
}

/// Receives each study point as soon as it is solved, before the study ends, so that a caller can
/// keep finished points of a long run (the command line streams them to a file). Called from
/// worker threads in the order the points finish, which is not their input order: `index` is the
/// point's place in the study's input order (for a trade, point `2k` is `+step` and `2k + 1` is
/// `−step` of `traded(file)[k]`). The final report is the same with or without a sink.
pub trait PointSink: Sync {
    /// Point `index` (input order) is finished.
    fn point(&self, index: usize, point: &Point);
}

/// The sink that keeps nothing.
#[derive(Debug, Clone, Copy, Default)]
pub struct Discard;

impl PointSink for Discard {
    fn point(&self, _index: usize, _point: &Point) {}
}

impl<F: Fn(usize, &Point) + Sync> PointSink for F {
    fn point(&self, index: usize, point: &Point) {
        self(index, point)
    }
}

/// The one study runner: runs `each` on every item in parallel (rayon), returns the results in
/// input order, and reports one unit of progress per item. Results must not depend on the order
/// in which items run (a sampled study draws from [`crate::core::random::stream`] by index).
pub fn run_each<T: Sync, R: Send>(
    what: &str,
    items: &[T],
    obs: &dyn Observer,
    each: impl Fn(&T) -> R + Sync,
) -> Vec<R> {
    run_each_streamed(what, items, obs, each, |_, _| {})
}

/// [`run_each`] that also hands each result to `done(index, &result)` as soon as it is finished
/// (from the worker thread, in finish order), before it counts as progress.
pub fn run_each_streamed<T: Sync, R: Send>(
    what: &str,
    items: &[T],
    obs: &dyn Observer,
    each: impl Fn(&T) -> R + Sync,
    done: impl Fn(usize, &R) + Sync,
) -> Vec<R> {
    obs.started(what, items.len());
    let out = items
        .par_iter()
        .enumerate()
        .map(|(i, item)| {
            let r = each(item);
            done(i, &r);
            obs.advanced();
            r
        })
        .collect();
    obs.finished();
    out
}

/// Solves `(file, value)` pairs with [`run_each`].
pub fn solve_points(
    what: &str,
    points: &[(ProblemFile, f64)],
    opts: &SolveOptions,
    obs: &dyn Observer,
) -> Vec<Point> {
    solve_points_streamed(what, points, opts, obs, &Discard)
}

/// [`solve_points`] that hands each finished point to `sink`.
pub fn solve_points_streamed(
    what: &str,
    points: &[(ProblemFile, f64)],
    opts: &SolveOptions,
    obs: &dyn Observer,
    sink: &dyn PointSink,
) -> Vec<Point> {
    run_each_streamed(
        what,
        points,
        obs,
        |(f, v)| solve_file(f, *v, opts),
        |i, p| sink.point(i, p),
    )
}

/// Solves every value of a sweep in parallel, in input order.
pub fn sweep(
    file: &ProblemFile,
    axis: Axis,
    values: &[f64],
    opts: &SolveOptions,
    obs: &dyn Observer,
) -> Vec<Point> {
    sweep_streamed(file, axis, values, opts, obs, &Discard)
}

/// [`sweep`] that hands each finished point to `sink` (index: the value's place in `values`).
pub fn sweep_streamed(
    file: &ProblemFile,
    axis: Axis,
    values: &[f64],
    opts: &SolveOptions,
    obs: &dyn Observer,
    sink: &dyn PointSink,
) -> Vec<Point> {
    // Sweeps trade the last kilogram of each point for speed: no outer restart.
    let fast = SolveOptions {
        polish: false,
        ..opts.clone()
    };
    let points: Vec<(ProblemFile, f64)> =
        values.iter().map(|v| (apply(file, axis, *v), *v)).collect();
    solve_points_streamed("sweep", &points, &fast, obs, sink)
}

/// `FROM:TO:STEP` into values (inclusive of TO within half a step).
pub fn parse_range(s: &str) -> Result<Vec<f64>, String> {
    let parts: Vec<f64> = s
        .split(':')
        .map(|x| x.trim().parse::<f64>().map_err(|e| format!("`{x}`: {e}")))
        .collect::<Result<_, _>>()?;
    let [from, to, step] = parts[..] else {
        return Err(format!("`{s}`: expected FROM:TO:STEP"));
    };
    if !(from.is_finite() && to.is_finite() && step.is_finite() && step > 0.0 && to >= from) {
        return Err(format!("`{s}`: needs finite FROM ≤ TO and STEP > 0"));
    }
    let n = ((to - from) / step + 0.5).floor() as usize + 1;
    if n > 10_000 {
        return Err(format!("`{s}`: {n} points; at most 10 000"));
    }
    Ok((0..n).map(|i| from + step * i as f64).collect())
}

/// Output of a sweep (`--json`).
#[derive(Debug, Clone, Serialize)]
pub struct SweepReport {
    /// Tool and version.
    pub tool: String,
    /// SHA-256 of the problem file.
    pub input_sha256: String,
    /// What was swept.
    pub axis: Axis,
    /// Objective of every solve.
    pub objective: Objective,
    /// Points in input order.
    pub points: Vec<Point>,
    /// Safety caution.
    pub caution: &'static str,
}

impl SweepReport {
    /// Sweeps `file` (whose text hashes to `input_sha256`) along `axis` over `values`.
    pub fn run(
        file: &ProblemFile,
        input_sha256: String,
        axis: Axis,
        values: &[f64],
        opts: &SolveOptions,
        obs: &dyn Observer,
    ) -> Self {
        Self::run_streamed(file, input_sha256, axis, values, opts, obs, &Discard)
    }

    /// [`SweepReport::run`] that hands each finished point to `sink` (see [`PointSink`]).
    pub fn run_streamed(
        file: &ProblemFile,
        input_sha256: String,
        axis: Axis,
        values: &[f64],
        opts: &SolveOptions,
        obs: &dyn Observer,
        sink: &dyn PointSink,
    ) -> Self {
        SweepReport {
            tool: tool_version(),
            input_sha256,
            axis,
            objective: opts.objective,
            points: sweep_streamed(file, axis, values, opts, obs, sink),
            caution: CAUTION,
        }
    }

    /// Every point solved.
    pub fn succeeded(&self) -> bool {
        self.points.iter().all(|p| p.status.is_solved())
    }
}

/// Output of a comparison (`--json`).
#[derive(Debug, Clone, Serialize)]
pub struct CompareReport {
    /// Tool and version.
    pub tool: String,
    /// SHA-256 of each problem file, in argument order.
    pub input_sha256: Vec<String>,
    /// One entry per problem file, in argument order: its name and its point.
    pub problems: Vec<(String, Point)>,
    /// Safety caution.
    pub caution: &'static str,
}

impl CompareReport {
    /// Solves each `(file, input SHA-256)` and lines them up in input order.
    pub fn run(files: Vec<(ProblemFile, String)>, opts: &SolveOptions, obs: &dyn Observer) -> Self {
        Self::run_streamed(files, opts, obs, &Discard)
    }

    /// [`CompareReport::run`] that hands each finished point to `sink` (index: the file's place).
    pub fn run_streamed(
        files: Vec<(ProblemFile, String)>,
        opts: &SolveOptions,
        obs: &dyn Observer,
        sink: &dyn PointSink,
    ) -> Self {
        let (files, shas): (Vec<ProblemFile>, Vec<String>) = files.into_iter().unzip();
        let points: Vec<(ProblemFile, f64)> = files
            .iter()
            .enumerate()
            .map(|(i, f)| (f.clone(), i as f64))
            .collect();
        let pts = solve_points_streamed("compare", &points, opts, obs, sink);
        CompareReport {
            tool: tool_version(),
            input_sha256: shas,
            problems: files.into_iter().map(|f| f.name).zip(pts).collect(),
            caution: CAUTION,
        }
    }

    /// Every problem solved.
    pub fn succeeded(&self) -> bool {
        self.problems.iter().all(|(_, p)| p.status.is_solved())
    }
}

/// A traded parameter: a registry [`Param`] (stage and drag rows) or a field of the file that the
/// optimizer never tunes (booster, jettison and reserve rows), with the trade's step and unit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum Traded {
    /// Dry mass of stage `stage`, kg.
    DryMass {
        /// Stage index.
        stage: usize,
    },
    /// Propellant load of stage `stage`, kg.
    Propellant {
        /// Stage index.
        stage: usize,
    },
    /// Vacuum Isp of stage `stage`, s.
    Isp {
        /// Stage index.
        stage: usize,
    },
    /// Vacuum thrust of stage `stage`, kN.
    Thrust {
        /// Stage index.
        stage: usize,
    },
    /// Every drag coefficient, % of its value.
    Drag,
    /// Dry mass of one strap-on booster, kg (all boosters change together).
    BoosterDryMass,
    /// Propellant of one strap-on booster, kg.
    BoosterPropellant,
    /// Vacuum Isp of the boosters, s.
    BoosterIsp,
    /// Vacuum thrust of one booster, kN (sea-level thrust and exit area scale with it).
    BoosterThrust,
    /// Mass of jettisoned item `index` (a fairing, an interstage), kg.
    Jettison {
        /// Index in `vehicle.jettisons`.
        index: usize,
    },
    /// Unusable residual propellant of the last stage (`reserves.residuals_kg`), kg: every
    /// reserve mass acts alike.
    Reserve,
}

impl Traded {
    /// The registry parameter, for the rows that have one (stage and drag rows).
    pub fn param(&self) -> Option<Param> {
        match *self {
            Traded::DryMass { stage } => Some(Param::DryMass(stage)),
            Traded::Propellant { stage } => Some(Param::Propellant(stage)),
            Traded::Isp { stage } => Some(Param::IspVac(stage)),
            Traded::Thrust { stage } => Some(Param::ThrustVac(stage)),
            Traded::Drag => Some(Param::DragScale),
            _ => None,
        }
    }

    /// The parameter's value in the file, SI (N for thrust, 1 for the drag scale).
    fn read(&self, f: &ProblemFile) -> f64 {
        let b = f.vehicle.boosters.as_ref();
        match *self {
            Traded::BoosterDryMass => b.map(|b| b.dry_mass_kg),
            Traded::BoosterPropellant => b.map(|b| b.propellant_kg),
            Traded::BoosterIsp => b.map(|b| b.isp_vac_s),
            Traded::BoosterThrust => b.map(|b| b.thrust_vac_n),
            Traded::Jettison { index } => f.vehicle.jettisons.get(index).map(|j| j.mass_kg),
            Traded::Reserve => f.reserves.as_ref().and_then(|r| r.residuals_kg),
            _ => self.param().and_then(|p| p.read_file(f)),
        }
        .unwrap_or(0.0)
    }

    /// The step used for the central difference, in the trade's unit (kg, s, kN, %).
    fn step(&self, f: &ProblemFile) -> f64 {
        let file_value = || self.read(f);
        match *self {
            Traded::DryMass { .. }
            | Traded::Propellant { .. }
            | Traded::BoosterDryMass
            | Traded::BoosterPropellant
            | Traded::Jettison { .. } => (0.01 * file_value()).max(1.0),
            // A reserve of a few kg must not step below zero.
            Traded::Reserve => (0.01 * file_value()).max(1.0).min(0.5 * file_value()),
            Traded::Isp { .. } | Traded::BoosterIsp => 1.0,
            Traded::Thrust { .. } | Traded::BoosterThrust => 0.01 * file_value() / 1e3,
            Traded::Drag => 5.0,
        }
    }

    /// Unit of the trade factor, in words (`kg per 1 s of Isp`: not a mass flow).
    pub fn unit(&self) -> &'static str {
        match self {
            Traded::DryMass { .. }
            | Traded::Propellant { .. }
            | Traded::BoosterDryMass
            | Traded::BoosterPropellant
            | Traded::Jettison { .. }
            | Traded::Reserve => "kg per kg",
            Traded::Isp { .. } | Traded::BoosterIsp => "kg per 1 s of Isp",
            Traded::Thrust { .. } | Traded::BoosterThrust => "kg per 1 kN of thrust",
            Traded::Drag => "kg per 1 % of C_D",
        }
    }

    /// Unit of the step.
    pub fn step_unit(&self) -> &'static str {
        match self {
            Traded::Isp { .. } | Traded::BoosterIsp => "s",
            Traded::Thrust { .. } | Traded::BoosterThrust => "kN",
            Traded::Drag => "% of C_D",
            _ => "kg",
        }
    }

    /// The file with the parameter changed by `d` (the trade's unit).
    fn apply(&self, f: &ProblemFile, d: f64) -> ProblemFile {
        let mut g = f.clone();
        if let Some(p) = self.param() {
            let now = || p.read_file(f).unwrap_or(0.0);
            let u = match self {
                Traded::Thrust { .. } => now() + d * 1e3,
                Traded::Drag => 1.0 + d / 100.0,
                _ => now() + d,
            };
            p.write_file_unit(&mut g, u);
            return g;
        }
        let u = self.read(f)
            + if *self == Traded::BoosterThrust {
                d * 1e3
            } else {
                d
            };
        match *self {
            Traded::Jettison { index } => {
                if let Some(j) = g.vehicle.jettisons.get_mut(index) {
                    j.mass_kg = u;
                }
            }
            Traded::Reserve => {
                if let Some(r) = g.reserves.as_mut() {
                    r.residuals_kg = Some(u);
                }
            }
            _ => {
                if let Some(b) = g.vehicle.boosters.as_mut() {
                    match *self {
                        Traded::BoosterDryMass => b.dry_mass_kg = u,
                        Traded::BoosterPropellant => b.propellant_kg = u,
                        Traded::BoosterIsp => b.isp_vac_s = u,
                        _ => {
                            // Sea-level thrust and exit area scale with the vacuum thrust.
                            let k = u / b.thrust_vac_n;
                            b.thrust_vac_n = u;
                            if let Some(t) = b.thrust_sl_n.as_mut() {
                                *t *= k;
                            }
                            if let Some(a) = b.exit_area_m2.as_mut() {
                                *a *= k;
                            }
                        }
                    }
                }
            }
        }
        g
    }

    /// Name for tables.
    pub fn name(&self, f: &ProblemFile) -> String {
        let st = |i: usize| f.vehicle.stages[i].name.clone();
        let booster = || {
            f.vehicle
                .boosters
                .as_ref()
                .map_or_else(|| "booster".to_string(), |b| b.name.clone())
        };
        match *self {
            Traded::DryMass { stage } => format!("{} dry mass", st(stage)),
            Traded::Propellant { stage } => format!("{} propellant", st(stage)),
            Traded::Isp { stage } => format!("{} vacuum Isp", st(stage)),
            Traded::Thrust { stage } => format!("{} vacuum thrust", st(stage)),
            Traded::Drag => "drag coefficient (all configurations)".into(),
            Traded::BoosterDryMass => format!("{} dry mass (each booster)", booster()),
            Traded::BoosterPropellant => format!("{} propellant (each booster)", booster()),
            Traded::BoosterIsp => format!("{} vacuum Isp", booster()),
            Traded::BoosterThrust => format!("{} vacuum thrust (each booster)", booster()),
            Traded::Jettison { index } => format!(
                "{} mass (jettisoned)",
                f.vehicle
                    .jettisons
                    .get(index)
                    .map_or("jettison", |j| j.name.as_str())
            ),
            Traded::Reserve => "last-stage reserve (reserves.residuals_kg)".into(),
        }
    }
}

/// A trade factor: payload change per unit change of a parameter.
#[derive(Debug, Clone, Serialize)]
pub struct TradeFactor {
    /// Parameter.
    pub param: Traded,
    /// Readable name.
    pub name: String,
    /// Central-difference step, in the parameter's unit.
    pub step: f64,
    /// Unit of `step`.
    pub step_unit: &'static str,
    /// ∂payload/∂parameter (payload objective) or ∂margin/∂parameter (propellant objective).
    pub factor: f64,
    /// Unit of `factor`.
    pub unit: &'static str,
    /// Both perturbed solves met the target.
    pub ok: bool,
}

/// The parameters traded for a problem file: each stage's dry mass, propellant, Isp and thrust,
/// the drag coefficient, then the boosters' (when fitted), each jettisoned mass and the
/// last-stage reserve (when the file has `reserves.residuals_kg` above zero).
pub fn traded(f: &ProblemFile) -> Vec<Traded> {
    let mut v = Vec::new();
    for stage in 0..f.vehicle.stages.len() {
        v.push(Traded::DryMass { stage });
        v.push(Traded::Propellant { stage });
        v.push(Traded::Isp { stage });
        v.push(Traded::Thrust { stage });
    }
    v.push(Traded::Drag);
    if f.vehicle.boosters.is_some() {
        v.extend([
            Traded::BoosterDryMass,
            Traded::BoosterPropellant,
            Traded::BoosterIsp,
            Traded::BoosterThrust,
        ]);
    }
    v.extend((0..f.vehicle.jettisons.len()).map(|index| Traded::Jettison { index }));
    if f.reserves
        .as_ref()
        .and_then(|r| r.residuals_kg)
        .is_some_and(|r| r > 0.0)
    {
        v.push(Traded::Reserve);
    }
    v
}

/// What a trade compares of a re-solved point: its payload (payload objective) or its margin
/// (propellant objective), kg; `None` unless its flight met the target.
pub fn objective_value(p: &Point, objective: Objective) -> Option<f64> {
    let r = p.report.as_ref()?;
    let met = r.flight.target_deviation.is_some_and(|d| d.met);
    met.then_some(match objective {
        Objective::MaxPayload => r.payload_kg,
        Objective::LeastPropellant => r.margin_kg,
    })
}

impl TradeFactor {
    /// The factor of `param` from its two re-solved points, `plus` (`+step`) and `minus`
    /// (`−step`), for `objective`: `NaN` and not `ok` unless both met the target.
    pub fn of(
        f: &ProblemFile,
        param: Traded,
        plus: &Point,
        minus: &Point,
        objective: Objective,
    ) -> Self {
        let (a, b) = (
            objective_value(plus, objective),
            objective_value(minus, objective),
        );
        Self::from_values(f, param, a, b)
    }

    /// The factor of `param` from the [`objective_value`]s of its `+step` and `−step` points
    /// (`NaN` and not `ok` unless both are known): for callers that solve the points elsewhere
    /// and keep only these values.
    pub fn from_values(f: &ProblemFile, param: Traded, a: Option<f64>, b: Option<f64>) -> Self {
        let h = param.step(f);
        TradeFactor {
            param,
            name: param.name(f),
            step: h,
            step_unit: param.step_unit(),
            factor: match (a, b) {
                (Some(a), Some(b)) => (a - b) / (2.0 * h),
                _ => f64::NAN,
            },
            unit: param.unit(),
            ok: a.is_some() && b.is_some(),
        }
    }
}

/// Trade factors by central differences of re-solved problems, in parallel.
pub fn trade(f: &ProblemFile, opts: &SolveOptions, obs: &dyn Observer) -> Vec<TradeFactor> {
    trade_streamed(f, opts, obs, &Discard)
}

/// [`trade`] that hands each finished point to `sink`: point `2k` is `+step` and `2k + 1` is
/// `−step` of `traded(f)[k]` (its `value` is the signed step).
pub fn trade_streamed(
    f: &ProblemFile,
    opts: &SolveOptions,
    obs: &dyn Observer,
    sink: &dyn PointSink,
) -> Vec<TradeFactor> {
    let ps = traded(f);
    let pts = solve_points_streamed("trade", &trade_points(f), opts, obs, sink);
    ps.iter()
        .enumerate()
        .map(|(i, p)| TradeFactor::of(f, *p, &pts[2 * i], &pts[2 * i + 1], opts.objective))
        .collect()
}

/// The re-solved problems of a trade and their signed steps, in study order: point `2k` is
/// `+step` and `2k + 1` is `−step` of `traded(f)[k]`. Each point is solved on its own, so a
/// caller may solve any subset of them anywhere and get the same points.
pub fn trade_points(f: &ProblemFile) -> Vec<(ProblemFile, f64)> {
    traded(f)
        .iter()
        .flat_map(|p| {
            let h = p.step(f);
            [(p.apply(f, h), h), (p.apply(f, -h), -h)]
        })
        .collect()
}

/// Ideal exchange ratio ∂P/∂Isp_k of the rocket equation, kg/s (docs/method.md §11.4; the
/// exchange ratios of the ideal rocket): `g0 ln(m_ig,k/m_bo,k) / Σ_j c_j (1/m_bo,j − 1/m_ig,j)`,
/// serial stages, no boosters.
pub fn ideal_isp_factor(f: &ProblemFile, k: usize) -> f64 {
    let g0 = crate::core::physics::earth::G0_MPS2;
    let v = &f.vehicle;
    let mut m_ig = v.payload_kg
        + v.stages
            .iter()
            .map(|s| s.dry_mass_kg + s.propellant_kg)
            .sum::<f64>()
        + v.jettisons.iter().map(|j| j.mass_kg).sum::<f64>();
    let mut sum = 0.0;
    let mut num = 0.0;
    for (j, s) in v.stages.iter().enumerate() {
        let m_bo = m_ig - s.propellant_kg;
        sum += g0 * s.isp_vac_s * (1.0 / m_bo - 1.0 / m_ig);
        if j == k {
            num = g0 * (m_ig / m_bo).ln();
        }
        m_ig = m_bo - s.dry_mass_kg;
    }
    num / sum
}

/// Output of `trade` (`--json`).
#[derive(Debug, Clone, Serialize)]
pub struct TradeReport {
    /// Tool and version.
    pub tool: String,
    /// Problem name.
    pub problem: String,
    /// SHA-256 of the problem file.
    pub input_sha256: String,
    /// Objective of the re-solves (payload: factors are ∂payload; propellant: ∂margin).
    pub objective: Objective,
    /// Trade factors.
    pub factors: Vec<TradeFactor>,
    /// Rocket-equation ideal Isp exchange ratios for comparison, kg/s (serial stages).
    pub ideal_isp_factors: Vec<f64>,
    /// Safety caution.
    pub caution: &'static str,
}

impl TradeReport {
    /// Trade factors of `file` (whose text hashes to `input_sha256`).
    pub fn run(
        file: &ProblemFile,
        input_sha256: String,
        opts: &SolveOptions,
        obs: &dyn Observer,
    ) -> Self {
        Self::run_streamed(file, input_sha256, opts, obs, &Discard)
    }

    /// [`TradeReport::run`] that hands each finished point to `sink` (see [`trade_streamed`]).
    pub fn run_streamed(
        file: &ProblemFile,
        input_sha256: String,
        opts: &SolveOptions,
        obs: &dyn Observer,
        sink: &dyn PointSink,
    ) -> Self {
        let factors = trade_streamed(file, opts, obs, sink);
        Self::from_factors(file, input_sha256, opts.objective, factors)
    }

    /// The report of `file`'s trade `factors` (in [`traded`] order), however they were solved.
    pub fn from_factors(
        file: &ProblemFile,
        input_sha256: String,
        objective: Objective,
        factors: Vec<TradeFactor>,
    ) -> Self {
        TradeReport {
            tool: tool_version(),
            problem: file.name.clone(),
            input_sha256,
            objective,
            ideal_isp_factors: (0..file.vehicle.stages.len())
                .map(|k| ideal_isp_factor(file, k))
                .collect(),
            factors,
            caution: CAUTION,
        }
    }

    /// Every factor from two solved points.
    pub fn succeeded(&self) -> bool {
        self.factors.iter().all(|f| f.ok)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::Mutex;

    #[test]
    fn every_finished_item_is_handed_on_once_with_its_index_and_the_results_keep_input_order() {
        let items: Vec<u64> = (0..64).collect();
        let seen = Mutex::new(Vec::new());
        let out = run_each_streamed(
            "test",
            &items,
            &crate::core::observe::Silent,
            |x| x * x,
            |i, r| {
                if let Ok(mut s) = seen.lock() {
                    s.push((i, *r));
                }
            },
        );
        assert_eq!(out, items.iter().map(|x| x * x).collect::<Vec<_>>());
        let mut seen = seen.into_inner().unwrap_or_default();
        seen.sort_unstable();
        let want: Vec<(usize, u64)> = items.iter().map(|x| (*x as usize, x * x)).collect();
        assert_eq!(seen, want);
    }

    #[test]
    fn a_search_that_ends_solved_but_whose_flight_misses_is_not_reached() {
        use SolveStatus as S;
        for s in [S::Converged, S::IterationLimit] {
            assert_eq!(PointStatus::of_solve(s, false), PointStatus::NotReached);
            assert_eq!(PointStatus::of_solve(s, false).as_str(), "not_reached");
            assert!(PointStatus::of_solve(s, true).is_solved());
        }
        // An unsolved search keeps its own status whatever the flight does.
        for (s, p) in [
            (S::BudgetExhausted, PointStatus::BudgetExhausted),
            (S::Infeasible, PointStatus::Infeasible),
            (S::Stalled, PointStatus::Stalled),
        ] {
            assert_eq!(PointStatus::of_solve(s, false), p);
            assert_eq!(PointStatus::of_solve(s, true), p);
        }
    }

    #[test]
    fn trade_points_come_in_plus_minus_pairs_and_factors_follow_from_their_values() {
        let text = include_str!("../../problems/medium-2stage-leo200.json");
        let f = crate::core::problem::parse(text).expect("the medium demo parses");
        let params = traded(&f);
        let pts = trade_points(&f);
        assert_eq!(pts.len(), 2 * params.len());
        for (k, p) in params.iter().enumerate() {
            let h = p.step(&f);
            assert_eq!(pts[2 * k].1.to_bits(), h.to_bits());
            assert_eq!(pts[2 * k + 1].1.to_bits(), (-h).to_bits());
        }
        // Central difference (a − b) / 2h: the dry-mass step of the core is 1 % of 18 000 kg.
        let core_dry = TradeFactor::from_values(&f, params[0], Some(10.0), Some(65.0));
        assert!(core_dry.ok);
        assert!((core_dry.step - 180.0).abs() < 1e-12);
        assert!((core_dry.factor - (10.0 - 65.0) / 360.0).abs() < 1e-15);
        let missing = TradeFactor::from_values(&f, params[0], Some(10.0), None);
        assert!(!missing.ok && missing.factor.is_nan());
    }

    #[test]
    fn a_closure_is_a_point_sink() {
        let count = std::sync::atomic::AtomicUsize::new(0);
        let sink = |i: usize, p: &Point| {
            assert_eq!(p.value as usize, i);
            count.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        };
        let p = Point {
            value: 1.0,
            status: PointStatus::BadInput,
            message: None,
            report: None,
        };
        let s: &dyn PointSink = &sink;
        s.point(1, &p);
        Discard.point(1, &p);
        assert_eq!(count.load(std::sync::atomic::Ordering::Relaxed), 1);
    }
}
