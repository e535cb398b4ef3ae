//! Trade studies built on `solve`: parameter sweeps, side-by-side comparison of problems, and
//! trade factors (payload change per unit change of a vehicle parameter) by central differences
//! of re-solved problems. Points are solved in parallel (rayon); results keep input order.

use indicatif::ProgressBar;
use rayon::prelude::*;
use serde::Serialize;

use crate::optimize::{Objective, SolveOptions};
use crate::problem::file::{LaunchFile, ProblemFile};
use crate::problem::validate::validate;
use crate::report::solve::{solve_and_report, SolveReport};

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
}

/// One solved point (or why it could not be solved).
#[derive(Debug, Clone, Serialize)]
pub struct Point {
    /// Swept value.
    pub value: f64,
    /// `converged`, `iteration_limit`, `budget_exhausted`, `infeasible`, `unreachable` or
    /// `bad_input`.
    pub status: String,
    /// Message when not solved.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub message: Option<String>,
    /// Full report of the solved point.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub report: Option<Box<SolveReport>>,
}

/// The problem file with the swept value applied.
pub fn apply(file: &ProblemFile, axis: Axis, v: f64) -> ProblemFile {
    let mut f = file.clone();
    match axis {
        Axis::Azimuth => {
            f.launch = LaunchFile {
                azimuth_deg: Some(v),
                ..LaunchFile::default()
            };
            if let Some(t) = f.target.as_mut() {
                t.inclination_deg = None;
            }
            // The upper stage keeps to the plane the azimuth sets: no fixed heading.
            clear_headings(&mut f);
        }
        Axis::Inclination => {
            f.launch.azimuth_deg = None;
            f.launch.inclination_deg = Some(v);
            if let Some(t) = f.target.as_mut() {
                t.inclination_deg = Some(v);
            }
        }
        Axis::Altitude => {
            if let Some(t) = f.target.as_mut() {
                t.perigee_alt_km = Some(v);
                t.apogee_alt_km = Some(v);
            }
        }
        Axis::Payload => f.vehicle.payload_kg = v,
    }
    f
}

fn clear_headings(f: &mut ProblemFile) {
    use crate::problem::file::{ArcFile, SteeringFile};
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
    let bad = |status: &str, m: String| Point {
        value,
        status: status.into(),
        message: Some(m),
        report: None,
    };
    let p = match validate(file) {
        Ok(p) => p,
        Err(e) => return bad("bad_input", e.to_string()),
    };
    if let Some(u) = p.unreachable_inclination().filter(|_| !p.allow_dog_leg) {
        return bad("unreachable", u.to_string());
    }
    match solve_and_report(file, &p, opts, false, None) {
        Ok((r, _, _)) => Point {
            value,
            status: serde_json::to_value(r.convergence.status)
                .ok()
                .and_then(|v| v.as_str().map(str::to_string))
                .unwrap_or_default(),
            message: None,
            report: Some(Box::new(r)),
        },
        Err(e) => bad("bad_input", e.to_string()),
    }
}

/// Solves every value of a sweep in parallel, in input order.
pub fn sweep(
    file: &ProblemFile,
    axis: Axis,
    values: &[f64],
    opts: &SolveOptions,
    progress: &ProgressBar,
) -> Vec<Point> {
    let fast = SolveOptions {
        polish: false,
        ..opts.clone()
    };
    values
        .par_iter()
        .map(|v| {
            let pt = solve_file(&apply(file, axis, *v), *v, &fast);
            progress.inc(1);
            pt
        })
        .collect()
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

/// A vehicle parameter perturbed for a trade factor.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(rename_all = "snake_case", tag = "kind")]
pub enum Param {
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
}

impl Param {
    /// The step used for the central difference, in the parameter's unit.
    fn step(&self, f: &ProblemFile) -> f64 {
        match *self {
            Param::DryMass { stage } => (0.01 * f.vehicle.stages[stage].dry_mass_kg).max(1.0),
            Param::Propellant { stage } => (0.01 * f.vehicle.stages[stage].propellant_kg).max(1.0),
            Param::Isp { .. } => 1.0,
            Param::Thrust { stage } => 0.01 * f.vehicle.stages[stage].thrust_vac_n / 1e3,
            Param::Drag => 5.0,
        }
    }

    /// Unit of the trade factor.
    pub fn unit(&self) -> &'static str {
        match self {
            Param::DryMass { .. } | Param::Propellant { .. } => "kg/kg",
            Param::Isp { .. } => "kg/s",
            Param::Thrust { .. } => "kg/kN",
            Param::Drag => "kg per % of C_D",
        }
    }

    /// Changes the parameter by `d` (its unit).
    fn apply(&self, f: &ProblemFile, d: f64) -> ProblemFile {
        let mut g = f.clone();
        match *self {
            Param::DryMass { stage } => g.vehicle.stages[stage].dry_mass_kg += d,
            Param::Propellant { stage } => g.vehicle.stages[stage].propellant_kg += d,
            Param::Isp { stage } => g.vehicle.stages[stage].isp_vac_s += d,
            Param::Thrust { stage } => {
                let s = &mut g.vehicle.stages[stage];
                // Sea-level thrust scales with the vacuum thrust (same nozzle, more engines).
                let k = 1.0 + d * 1e3 / s.thrust_vac_n;
                s.thrust_vac_n *= k;
                if let Some(t) = s.thrust_sl_n.as_mut() {
                    *t *= k;
                }
                if let Some(a) = s.exit_area_m2.as_mut() {
                    *a *= k;
                }
            }
            Param::Drag => {
                let k = 1.0 + d / 100.0;
                let scale = |a: &mut crate::problem::file::AeroFile| {
                    a.cd_mach.iter_mut().for_each(|p| p[1] *= k)
                };
                g.vehicle.stages.iter_mut().for_each(|s| scale(&mut s.aero));
                if let Some(b) = g.vehicle.boosters.as_mut() {
                    scale(&mut b.aero);
                }
            }
        }
        g
    }

    /// Name for tables.
    pub fn name(&self, f: &ProblemFile) -> String {
        let st = |i: usize| f.vehicle.stages[i].name.clone();
        match *self {
            Param::DryMass { stage } => format!("{} dry mass", st(stage)),
            Param::Propellant { stage } => format!("{} propellant", st(stage)),
            Param::Isp { stage } => format!("{} vacuum Isp", st(stage)),
            Param::Thrust { stage } => format!("{} vacuum thrust", st(stage)),
            Param::Drag => "drag coefficient (all configurations)".into(),
        }
    }
}

/// A trade factor: payload change per unit change of a parameter.
#[derive(Debug, Clone, Serialize)]
pub struct TradeFactor {
    /// Parameter.
    pub param: Param,
    /// Readable name.
    pub name: String,
    /// Central-difference step, in the parameter's unit.
    pub step: f64,
    /// ∂payload/∂parameter (payload objective) or ∂margin/∂parameter (propellant objective).
    pub factor: f64,
    /// Unit of `factor`.
    pub unit: &'static str,
    /// Both perturbed solves met the target.
    pub ok: bool,
}

/// The parameters traded for a problem file.
pub fn params(f: &ProblemFile) -> Vec<Param> {
    let mut v = Vec::new();
    for stage in 0..f.vehicle.stages.len() {
        v.push(Param::DryMass { stage });
        v.push(Param::Propellant { stage });
        v.push(Param::Isp { stage });
        v.push(Param::Thrust { stage });
    }
    v.push(Param::Drag);
    v
}

fn objective_value(p: &Point, objective: Objective) -> Option<f64> {
    let r = p.report.as_ref()?;
    let met = r.flight.target_deviation.is_some_and(|d| d.met);
    met.then_some(match objective {
        Objective::MaxPayload => r.payload_kg,
        Objective::LeastPropellant => r.margin_kg,
    })
}

/// Trade factors by central differences of re-solved problems, in parallel.
pub fn trade(f: &ProblemFile, opts: &SolveOptions, progress: &ProgressBar) -> Vec<TradeFactor> {
    let ps = params(f);
    let runs: Vec<(usize, f64)> = (0..ps.len()).flat_map(|i| [(i, 1.0), (i, -1.0)]).collect();
    let pts: Vec<Point> = runs
        .par_iter()
        .map(|(i, sign)| {
            let h = ps[*i].step(f);
            let pt = solve_file(&ps[*i].apply(f, sign * h), sign * h, opts);
            progress.inc(1);
            pt
        })
        .collect();
    ps.iter()
        .enumerate()
        .map(|(i, p)| {
            let h = p.step(f);
            let (a, b) = (
                objective_value(&pts[2 * i], opts.objective),
                objective_value(&pts[2 * i + 1], opts.objective),
            );
            TradeFactor {
                param: *p,
                name: p.name(f),
                step: h,
                factor: match (a, b) {
                    (Some(a), Some(b)) => (a - b) / (2.0 * h),
                    _ => f64::NAN,
                },
                unit: p.unit(),
                ok: a.is_some() && b.is_some(),
            }
        })
        .collect()
}

/// Ideal exchange ratio ∂P/∂Isp_k of the rocket equation, kg/s (../shared/domain.md §3(g)):
/// `g0 ln(m_ig,k/m_bo,k) / Σ_j c_j (1/m_bo,j − 1/m_ig,j)`, serial stages, no boosters.
pub fn ideal_isp_factor(f: &ProblemFile, k: usize) -> f64 {
    let g0 = crate::physics::earth::G0_MPS2;
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
