//! Rendering and commands for `sweep`, `compare` and `trade`.

use std::fmt::Write as _;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

use anyhow::{bail, Context};
use indicatif::{ProgressBar, ProgressStyle};
use serde::Serialize;

use crate::cli::{emit, write_atomic, EXIT_NOT_REACHED, EXIT_OK};
use crate::optimize::{Objective, SolveOptions};
use crate::problem::file::ProblemFile;
use crate::problem::parse;
use crate::study::{self, Axis, Point, TradeFactor};

/// A progress bar on stderr when stderr is a terminal, hidden otherwise.
pub fn progress(n: usize, what: &str) -> ProgressBar {
    if !std::io::stderr().is_terminal() {
        return ProgressBar::hidden();
    }
    let pb = ProgressBar::new(n as u64);
    if let Ok(style) = ProgressStyle::with_template("{msg} [{bar:30}] {pos}/{len} {elapsed}") {
        pb.set_style(style);
    }
    pb.set_message(what.to_string());
    pb
}

/// Reads and parses a problem file; returns it with the SHA-256 of its text.
pub fn read_file(path: &Path) -> anyhow::Result<(ProblemFile, String)> {
    let text = std::fs::read_to_string(path).with_context(|| format!("{}", path.display()))?;
    let f = parse(&text).with_context(|| format!("{}", path.display()))?;
    Ok((f, crate::problem::sha256_hex(text.as_bytes())))
}

/// Columns of a point row: (header, value).
fn row(label: &str, p: &Point) -> Vec<(String, String)> {
    // The swept value gets its own column name: `payload_kg` is also a result column.
    let mut v = vec![
        (format!("swept_{label}"), format!("{}", p.value)),
        ("status".into(), p.status.clone()),
    ];
    let f = |x: f64| format!("{x:.3}");
    if let Some(r) = &p.report {
        let b = &r.flight.budget;
        let o = &r.flight.orbit;
        for (h, x) in [
            ("payload_kg", r.payload_kg),
            ("propellant_used_kg", r.propellant_used_kg),
            ("margin_kg", r.margin_kg),
            ("margin_mps", r.margin_mps),
            ("ideal_mps", b.ideal_mps),
            ("gravity_loss_mps", b.gravity_loss_mps),
            ("drag_loss_mps", b.drag_loss_mps),
            ("steering_loss_mps", b.steering_loss_mps),
            ("back_pressure_loss_mps", b.back_pressure_loss_mps),
            ("earth_rotation_mps", b.earth_rotation_mps),
            ("rotating_frame_mps", b.rotating_frame_mps),
            ("inclination_deg", o.inclination_deg),
            ("perigee_alt_km", o.perigee_alt_km),
            (
                "max_dynamic_pressure_kpa",
                r.flight.max_dynamic_pressure_pa / 1e3,
            ),
            ("max_axial_accel_g", r.flight.max_axial_accel_g),
        ] {
            v.push((h.into(), f(x)));
        }
        v.push((
            "trajectories".into(),
            r.convergence.trajectories.to_string(),
        ));
    }
    v
}

/// Writes point rows as CSV (every row has every column; unsolved points leave them empty).
fn write_points_csv(w: &mut std::fs::File, label: &str, pts: &[Point]) -> anyhow::Result<()> {
    let header: Vec<String> = pts
        .iter()
        .map(|p| row(label, p))
        .max_by_key(Vec::len)
        .map(|r| r.into_iter().map(|(h, _)| h).collect())
        .unwrap_or_default();
    let mut out = csv::Writer::from_writer(w);
    out.write_record(&header)?;
    for p in pts {
        let r = row(label, p);
        let rec: Vec<String> = header
            .iter()
            .map(|h| {
                r.iter()
                    .find(|(k, _)| k == h)
                    .map(|(_, v)| v.clone())
                    .unwrap_or_default()
            })
            .collect();
        out.write_record(&rec)?;
    }
    out.flush()?;
    Ok(())
}

fn text_points(title: &str, label: &str, pts: &[Point]) -> String {
    let mut s = String::new();
    let _ = writeln!(s, "{title}");
    let _ = writeln!(
        s,
        "  {:>14} {:>16} {:>10} {:>10} {:>9} {:>9} {:>8} {:>9} {:>8} {:>9} {:>8} {:>7}",
        label,
        "status",
        "payload kg",
        "margin kg",
        "ideal",
        "gravity",
        "drag",
        "steering",
        "back-p",
        "Earth rot",
        "incl°",
        "q kPa"
    );
    for p in pts {
        match &p.report {
            Some(r) => {
                let b = &r.flight.budget;
                let _ = writeln!(
                    s,
                    "  {:>14.3} {:>16} {:>10.1} {:>10.1} {:>9.1} {:>9.1} {:>8.1} {:>9.1} {:>8.1} {:>9.1} {:>8.3} {:>7.2}",
                    p.value, p.status, r.payload_kg, r.margin_kg, b.ideal_mps, b.gravity_loss_mps,
                    b.drag_loss_mps, b.steering_loss_mps, b.back_pressure_loss_mps,
                    b.earth_rotation_mps, r.flight.orbit.inclination_deg,
                    r.flight.max_dynamic_pressure_pa / 1e3
                );
            }
            None => {
                let m = p.message.as_deref().unwrap_or("");
                let _ = writeln!(s, "  {:>14.3} {:>16} {m}", p.value, p.status);
            }
        }
    }
    let _ = writeln!(
        s,
        "budget terms in m/s, Earth-relative bookkeeping (Earth rotation: inertial − relative speed at cutoff)"
    );
    let _ = writeln!(s, "CAUTION: {}", crate::report::CAUTION);
    s
}

/// Output of a sweep (`--json`).
#[derive(Debug, Serialize)]
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

/// Runs `kickturn sweep`.
pub fn run_sweep(
    problem: &Path,
    axis: Axis,
    range: &str,
    opts: &SolveOptions,
    json: bool,
    csv_path: Option<&PathBuf>,
    plot: Option<&PathBuf>,
) -> anyhow::Result<u8> {
    let values =
        study::parse_range(range).map_err(|e| anyhow::anyhow!("--{}: {e}", axis_flag(axis)))?;
    let (file, sha) = read_file(problem)?;
    crate::problem::validate::validate(&file).with_context(|| format!("{}", problem.display()))?;
    let pb = progress(values.len(), "sweep");
    let pts = study::sweep(&file, axis, &values, opts, &pb);
    pb.finish_and_clear();
    if let Some(path) = csv_path {
        write_atomic(path, problem, |w| write_points_csv(w, axis.label(), &pts))?;
    }
    if let Some(dir) = plot {
        crate::report::figures::sweep_figures(dir, &file.name, axis, &pts)?;
    }
    let all_ok = pts
        .iter()
        .all(|p| p.status == "converged" || p.status == "iteration_limit");
    let report = SweepReport {
        tool: format!("kickturn {}", env!("CARGO_PKG_VERSION")),
        input_sha256: sha,
        axis,
        objective: opts.objective,
        points: pts,
        caution: crate::report::CAUTION,
    };
    if json {
        emit(&format!("{}\n", serde_json::to_string_pretty(&report)?))?;
    } else {
        let title = format!(
            "sweep of {} over {range} ({} points)",
            axis.label(),
            report.points.len()
        );
        emit(&text_points(&title, axis.label(), &report.points))?;
    }
    Ok(if all_ok { EXIT_OK } else { EXIT_NOT_REACHED })
}

fn axis_flag(a: Axis) -> &'static str {
    match a {
        Axis::Azimuth => "azimuth",
        Axis::Inclination => "inclination",
        Axis::Altitude => "altitude",
        Axis::Payload => "payload",
    }
}

/// Output of a comparison (`--json`).
#[derive(Debug, Serialize)]
pub struct CompareReport {
    /// Tool and version.
    pub tool: String,
    /// SHA-256 of each problem file, in argument order.
    pub input_sha256: Vec<String>,
    /// One entry per problem file, in argument order.
    pub problems: Vec<(String, Point)>,
    /// Safety caution.
    pub caution: &'static str,
}

/// Runs `kickturn compare`.
pub fn run_compare(
    files: &[PathBuf],
    opts: &SolveOptions,
    json: bool,
    csv_path: Option<&PathBuf>,
) -> anyhow::Result<u8> {
    if files.len() < 2 {
        bail!("compare: give at least two problem files");
    }
    let read: Vec<(ProblemFile, String)> = files
        .iter()
        .map(|p| read_file(p))
        .collect::<anyhow::Result<_>>()?;
    let (parsed, shas): (Vec<ProblemFile>, Vec<String>) = read.into_iter().unzip();
    let pb = progress(files.len(), "compare");
    use rayon::prelude::*;
    let pts: Vec<Point> = parsed
        .par_iter()
        .enumerate()
        .map(|(i, f)| {
            let p = study::solve_file(f, i as f64, opts);
            pb.inc(1);
            p
        })
        .collect();
    pb.finish_and_clear();
    let names: Vec<String> = parsed.iter().map(|f| f.name.clone()).collect();
    if let Some(path) = csv_path {
        write_atomic(path, &files[0], |w| write_points_csv(w, "index", &pts))?;
    }
    let all_ok = pts
        .iter()
        .all(|p| p.status == "converged" || p.status == "iteration_limit");
    let report = CompareReport {
        tool: format!("kickturn {}", env!("CARGO_PKG_VERSION")),
        input_sha256: shas,
        problems: names.into_iter().zip(pts).collect(),
        caution: crate::report::CAUTION,
    };
    if json {
        emit(&format!("{}\n", serde_json::to_string_pretty(&report)?))?;
    } else {
        emit(&text_compare(&report))?;
    }
    Ok(if all_ok { EXIT_OK } else { EXIT_NOT_REACHED })
}

fn text_compare(r: &CompareReport) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "comparison of solved ascents (Earth-relative bookkeeping, m/s unless noted)"
    );
    let _ = write!(s, "  {:<34}", "");
    for (name, _) in &r.problems {
        let short: String = name.chars().take(24).collect();
        let _ = write!(s, " {short:>24}");
    }
    let _ = writeln!(s);
    type Get = fn(&crate::report::solve::SolveReport) -> f64;
    let rows: [(&str, Get); 14] = [
        ("payload kg", |r| r.payload_kg),
        ("propellant used kg", |r| r.propellant_used_kg),
        ("margin after reserves kg", |r| r.margin_kg),
        ("margin m/s", |r| r.margin_mps),
        ("ideal ΔV", |r| r.flight.budget.ideal_mps),
        ("gravity loss", |r| r.flight.budget.gravity_loss_mps),
        ("drag loss", |r| r.flight.budget.drag_loss_mps),
        ("steering loss", |r| r.flight.budget.steering_loss_mps),
        ("back-pressure loss", |r| {
            r.flight.budget.back_pressure_loss_mps
        }),
        ("Earth rotation (at cutoff)", |r| {
            r.flight.budget.earth_rotation_mps
        }),
        ("rotating-frame gain", |r| {
            r.flight.budget.rotating_frame_mps
        }),
        ("inertial speed at cutoff", |r| {
            r.flight.budget.final_speed_mps
        }),
        ("max-Q kPa", |r| r.flight.max_dynamic_pressure_pa / 1e3),
        ("max axial acceleration g0", |r| r.flight.max_axial_accel_g),
    ];
    let _ = write!(s, "  {:<34}", "status");
    for (_, p) in &r.problems {
        let _ = write!(s, " {:>24}", p.status);
    }
    let _ = writeln!(s);
    for (label, get) in rows {
        let _ = write!(s, "  {label:<34}");
        for (_, p) in &r.problems {
            match &p.report {
                Some(rep) => {
                    let _ = write!(s, " {:>24.1}", get(rep));
                }
                None => {
                    let _ = write!(s, " {:>24}", "-");
                }
            }
        }
        let _ = writeln!(s);
    }
    let _ = writeln!(s, "CAUTION: {}", crate::report::CAUTION);
    s
}

/// Output of `trade` (`--json`).
#[derive(Debug, Serialize)]
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

/// Runs `kickturn trade`.
pub fn run_trade(
    problem: &Path,
    opts: &SolveOptions,
    json: bool,
    csv_path: Option<&PathBuf>,
) -> anyhow::Result<u8> {
    let (file, sha) = read_file(problem)?;
    crate::problem::validate::validate(&file).with_context(|| format!("{}", problem.display()))?;
    let pb = progress(2 * study::params(&file).len(), "trade");
    let factors = study::trade(&file, opts, &pb);
    pb.finish_and_clear();
    let report = TradeReport {
        tool: format!("kickturn {}", env!("CARGO_PKG_VERSION")),
        problem: file.name.clone(),
        input_sha256: sha,
        objective: opts.objective,
        ideal_isp_factors: (0..file.vehicle.stages.len())
            .map(|k| study::ideal_isp_factor(&file, k))
            .collect(),
        factors,
        caution: crate::report::CAUTION,
    };
    if let Some(path) = csv_path {
        write_atomic(path, problem, |w| {
            let mut out = csv::Writer::from_writer(w);
            out.write_record(["parameter", "step", "factor", "unit", "ok"])?;
            for f in &report.factors {
                out.write_record([
                    f.name.clone(),
                    f.step.to_string(),
                    f.factor.to_string(),
                    f.unit.to_string(),
                    f.ok.to_string(),
                ])?;
            }
            out.flush()?;
            Ok(())
        })?;
    }
    let all_ok = report.factors.iter().all(|f| f.ok);
    if json {
        emit(&format!("{}\n", serde_json::to_string_pretty(&report)?))?;
    } else {
        emit(&text_trade(&report))?;
    }
    Ok(if all_ok { EXIT_OK } else { EXIT_NOT_REACHED })
}

fn text_trade(r: &TradeReport) -> String {
    let mut s = String::new();
    let what = match r.objective {
        Objective::MaxPayload => "payload",
        Objective::LeastPropellant => "propellant margin",
    };
    let _ = writeln!(s, "trade factors of {}: change in {what} per unit change (central differences of re-solved problems)", r.problem);
    for f in &r.factors {
        let flag = if f.ok {
            ""
        } else {
            "  (a perturbed solve missed the target)"
        };
        let _ = writeln!(
            s,
            "  {:<48} {:>+12.4} {:<16} step ±{}{flag}",
            f.name, f.factor, f.unit, f.step
        );
    }
    let ideal: Vec<String> = r
        .ideal_isp_factors
        .iter()
        .map(|x| format!("{x:+.2}"))
        .collect();
    let _ = writeln!(
        s,
        "rocket-equation ideal Isp factors by stage (kg/s, no losses, no boosters): {}",
        ideal.join(", ")
    );
    let _ = writeln!(s, "CAUTION: {}", crate::report::CAUTION);
    s
}
