//! `kickturn sweep`, `compare` and `trade`: read the files, run the study in the application
//! layer with a progress bar, write the CSV and figures, print the table or JSON.

use std::path::{Path, PathBuf};

use anyhow::{bail, Context};

use kickturn::app::study::{self, Axis, CompareReport, SweepReport, TradeReport};
use kickturn::optimize::SolveOptions;
use kickturn::problem::ProblemFile;
use kickturn::render;

use super::exit_code;
use super::io::{
    check_outputs, emit, read_file, write_atomic, write_figures, OutputKind, Progress,
};

/// Prints `report` as JSON or as the text `table`.
fn print<T: serde::Serialize>(
    json: bool,
    report: &T,
    table: impl FnOnce() -> String,
) -> anyhow::Result<()> {
    if json {
        emit(&format!("{}\n", serde_json::to_string_pretty(report)?))
    } else {
        emit(&table())
    }
}

/// Reads a problem file and checks that it validates (a study of a bad file is bad input).
fn read_valid(path: &Path) -> anyhow::Result<(ProblemFile, String)> {
    let (file, sha) = read_file(path)?;
    kickturn::problem::validate::validate(&file).with_context(|| format!("{}", path.display()))?;
    Ok((file, sha))
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
    let mut outputs = Vec::new();
    if let Some(p) = csv_path {
        outputs.push(("--csv", p.as_path(), OutputKind::File));
    }
    if let Some(p) = plot {
        outputs.push(("--plot", p.as_path(), OutputKind::Folder));
    }
    check_outputs(&[problem], &outputs)?;
    let (file, sha) = read_valid(problem)?;
    let report = SweepReport::run(&file, sha, axis, &values, opts, &Progress::new());
    if let Some(path) = csv_path {
        let text = render::csv::points(axis.label(), &report.points);
        write_atomic(path, problem, text.as_bytes())?;
    }
    if let Some(dir) = plot {
        let figures = render::figures::sweep_figures(&file.name, axis, &report.points)?;
        write_figures(dir, problem, &figures)?;
    }
    print(json, &report, || render::study::sweep(&report, range))?;
    Ok(exit_code(report.succeeded()))
}

fn axis_flag(a: Axis) -> &'static str {
    match a {
        Axis::Azimuth => "azimuth",
        Axis::Inclination => "inclination",
        Axis::Altitude => "altitude",
        Axis::Payload => "payload",
    }
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
    let inputs: Vec<&Path> = files.iter().map(PathBuf::as_path).collect();
    if let Some(p) = csv_path {
        check_outputs(&inputs, &[("--csv", p.as_path(), OutputKind::File)])?;
    }
    let read: Vec<(ProblemFile, String)> = files
        .iter()
        .map(|p| read_file(p))
        .collect::<anyhow::Result<_>>()?;
    let report = CompareReport::run(read, opts, &Progress::new());
    if let Some(path) = csv_path {
        let pts: Vec<study::Point> = report.problems.iter().map(|(_, p)| p.clone()).collect();
        let text = render::csv::points("index", &pts);
        write_atomic(path, &files[0], text.as_bytes())?;
    }
    print(json, &report, || render::study::compare(&report))?;
    Ok(exit_code(report.succeeded()))
}

/// Runs `kickturn trade`.
pub fn run_trade(
    problem: &Path,
    opts: &SolveOptions,
    json: bool,
    csv_path: Option<&PathBuf>,
) -> anyhow::Result<u8> {
    if let Some(p) = csv_path {
        check_outputs(&[problem], &[("--csv", p.as_path(), OutputKind::File)])?;
    }
    let (file, sha) = read_valid(problem)?;
    let report = TradeReport::run(&file, sha, opts, &Progress::new());
    if let Some(path) = csv_path {
        write_atomic(path, problem, render::csv::trade(&report).as_bytes())?;
    }
    print(json, &report, || render::study::trade(&report))?;
    Ok(exit_code(report.succeeded()))
}
