//! Python bindings (cargo feature `python`): the extension module `kickturn._kickturn`, which the
//! pure-Python package `kickturn` (python/kickturn/, built by maturin from pyproject.toml) wraps.
//!
//! Every function takes the problem as JSON text (the package reads files and turns dicts into
//! text, so that this library never touches a file) and the file's name for messages, calls the
//! same application functions as the command line, and returns the same document as its `--json`
//! output, as compact JSON text (the package parses it into a dict). Errors are raised as the
//! package's exception classes (`kickturn._errors`), with the command line's messages:
//! `ProblemError` (with the field's JSON path), `UnreachableError` (with the object that
//! `--json` prints), `OptionError`, `KickturnError`. The interpreter is released (`detach`) while
//! flights run, so that other Python threads go on.

use pyo3::exceptions::{PyIndexError, PyValueError};
use pyo3::prelude::*;

use crate::app::dispersions::{self as study_dispersions, DispersionOptions, Sample};
use crate::app::fly::FlyOptions;
use crate::app::outcome::{APSIS_TOL_KM, INCLINATION_TOL_DEG};
use crate::app::solve::SolveSettings;
use crate::app::study::{self, Axis, CompareReport, SweepReport, TradeFactor, TradeReport};
use crate::app::{self, Case, Silent};
use crate::core::error::ProblemError;
use crate::core::optimize::{Method, Objective, SolveOptions};
use crate::core::problem::{self, ProblemFile};

/// An exception of class `name` from `kickturn._errors`, made with `args`.
fn raise<'py, A>(py: Python<'py>, name: &str, args: A) -> PyErr
where
    A: pyo3::call::PyCallArgs<'py>,
{
    let made = py
        .import("kickturn._errors")
        .and_then(|m| m.getattr(name))
        .and_then(|class| class.call1(args));
    match made {
        Ok(obj) => PyErr::from_value(obj),
        Err(e) => e,
    }
}

/// `message` with the file's name in front, as the command line writes it.
fn located(file: Option<&str>, message: &str) -> String {
    match file {
        Some(f) => format!("{f}: {message}"),
        None => message.to_string(),
    }
}

/// `ProblemError(message, field, reason, file)`.
fn problem_error(py: Python<'_>, e: &ProblemError, file: Option<&str>) -> PyErr {
    let (field, reason) = match e {
        ProblemError::Format { path, message } => (path.clone(), message.clone()),
        ProblemError::Invalid { field, reason } => (field.clone(), reason.clone()),
    };
    let message = located(file, &e.to_string());
    raise(py, "ProblemError", (message, field, reason, file))
}

/// `OptionError(message)`: an option out of its range.
fn option_error(py: Python<'_>, message: String) -> PyErr {
    raise(py, "OptionError", (message,))
}

/// Maps an application error to the package's exceptions (the command line's `app_error`).
fn app_error(py: Python<'_>, e: app::Error, file: Option<&str>) -> PyErr {
    use crate::core::optimize::SolveError;
    let text = e.to_string();
    let message = located(file, &text);
    match e {
        app::Error::Problem(p) => problem_error(py, &p, file),
        app::Error::Solve(SolveError::Structure { field, reason }) => {
            raise(py, "ProblemError", (message, field, reason, file))
        }
        app::Error::Solve(SolveError::NoTarget) => {
            let reason = "missing; `solve` needs a target orbit";
            raise(py, "ProblemError", (message, "target", reason, file))
        }
        app::Error::Unreachable(u) => {
            // The object `--json` prints for an unreachable inclination.
            let info = app::unreachable_document(&u, &text, &message);
            raise(py, "UnreachableError", (message, info.to_string()))
        }
        app::Error::Option { option, reason } => option_error(py, format!("{option}: {reason}")),
        _ => raise(py, "KickturnError", (message,)),
    }
}

/// Parses and validates problem text.
fn load(py: Python<'_>, text: &str, file: Option<&str>) -> PyResult<Case> {
    Case::from_json(text).map_err(|e| problem_error(py, &e, file))
}

/// Parses problem text (not validated) and hashes it, as the studies read their files.
fn read(py: Python<'_>, text: &str, file: Option<&str>) -> PyResult<(ProblemFile, String)> {
    let f = problem::parse(text).map_err(|e| problem_error(py, &e, file))?;
    Ok((f, problem::sha256_hex(text.as_bytes())))
}

/// [`read`], then validate: a study of an invalid problem is bad input.
fn read_valid(py: Python<'_>, text: &str, file: Option<&str>) -> PyResult<(ProblemFile, String)> {
    let (f, sha) = read(py, text, file)?;
    problem::validate::validate(&f).map_err(|e| problem_error(py, &e, file))?;
    Ok((f, sha))
}

/// A document as compact JSON text.
fn to_json<T: serde::Serialize>(value: &T) -> PyResult<String> {
    serde_json::to_string(value).map_err(|e| PyValueError::new_err(e.to_string()))
}

/// The solve options of every study point (the command line's `StudyArgs::options`).
fn study_options(
    py: Python<'_>,
    max_payload: bool,
    max_wall_s: Option<f64>,
    max_trajectories: usize,
) -> PyResult<SolveOptions> {
    let o = SolveOptions {
        max_wall_s,
        max_trajectories,
        objective: if max_payload {
            Objective::MaxPayload
        } else {
            Objective::LeastPropellant
        },
        ..SolveOptions::default()
    };
    let settings = SolveSettings {
        solver: o.clone(),
        ..SolveSettings::default()
    };
    match settings.check() {
        Err(e) => Err(app_error(py, e, None)),
        Ok(()) => Ok(o),
    }
}

/// `kickturn fly --json`.
#[pyfunction]
#[pyo3(signature = (text, file=None))]
fn fly(py: Python<'_>, text: String, file: Option<String>) -> PyResult<String> {
    let file = file.as_deref();
    let case = load(py, &text, file)?;
    let run = py.detach(|| app::fly::fly(&case, &FlyOptions::default()));
    to_json(&run.map_err(|e| app_error(py, e, file))?.report)
}

/// `--refine` with `n` nodes per powered arc.
fn kickturn_refine(n: usize) -> crate::core::optimize::refine::RefineOptions {
    crate::core::optimize::refine::RefineOptions {
        nodes_per_arc: n,
        ..Default::default()
    }
}

/// `kickturn solve --json` with its options.
#[pyfunction]
#[pyo3(signature = (
    text, file=None, *, max_trajectories=50_000, max_wall_s=None, free=Vec::new(),
    fix=Vec::new(), scan=true, nested=false, explore=false, max_payload=false, perturb_seed=None,
    refine_nodes=None
))]
#[allow(clippy::too_many_arguments)]
fn solve(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    max_trajectories: usize,
    max_wall_s: Option<f64>,
    free: Vec<String>,
    fix: Vec<String>,
    scan: bool,
    nested: bool,
    explore: bool,
    max_payload: bool,
    perturb_seed: Option<u64>,
    refine_nodes: Option<usize>,
) -> PyResult<String> {
    let file = file.as_deref();
    let settings = SolveSettings {
        solver: SolveOptions {
            max_wall_s,
            max_trajectories,
            free,
            fix,
            scan,
            perturb_seed,
            polish: true,
            method: if nested { Method::Nested } else { Method::Sqp },
            objective: if max_payload {
                Objective::MaxPayload
            } else {
                Objective::LeastPropellant
            },
        },
        explore,
        record_step_s: None,
        refine: refine_nodes.map(kickturn_refine),
    };
    settings.check().map_err(|e| app_error(py, e, None))?;
    let case = load(py, &text, file)?;
    let run = py.detach(|| app::solve::solve(&case, &settings, &Silent));
    to_json(&run.map_err(|e| app_error(py, e, file))?.report)
}

/// `FROM:TO:STEP` into values; `option` names the range in the message.
#[pyfunction]
fn parse_range(py: Python<'_>, option: &str, range: &str) -> PyResult<Vec<f64>> {
    study::parse_range(range).map_err(|e| option_error(py, format!("{option}: {e}")))
}

fn axis_of(py: Python<'_>, name: &str) -> PyResult<Axis> {
    Ok(match name {
        "azimuth" => Axis::Azimuth,
        "inclination" => Axis::Inclination,
        "altitude" => Axis::Altitude,
        "payload" => Axis::Payload,
        other => {
            return Err(option_error(
                py,
                format!("sweep: `{other}` is no axis; azimuth, inclination, altitude or payload"),
            ))
        }
    })
}

/// `kickturn sweep --json` over `values` (in the axis' unit) of `axis`.
#[pyfunction]
#[pyo3(signature = (
    text, file, axis, values, *, max_payload=false, max_wall_s=None, max_trajectories=50_000
))]
#[allow(clippy::too_many_arguments)]
fn sweep(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    axis: &str,
    values: Vec<f64>,
    max_payload: bool,
    max_wall_s: Option<f64>,
    max_trajectories: usize,
) -> PyResult<String> {
    let file = file.as_deref();
    let axis = axis_of(py, axis)?;
    if axis == Axis::Payload && max_payload {
        return Err(option_error(
            py,
            "sweep: payload and max_payload contradict each other (the payload mode solves for \
             the payload)"
                .into(),
        ));
    }
    let opts = study_options(py, max_payload, max_wall_s, max_trajectories)?;
    let (f, sha) = read_valid(py, &text, file)?;
    let report = py.detach(|| SweepReport::run(&f, sha, axis, &values, &opts, &Silent));
    to_json(&report)
}

/// A grid of sweeps: every combination of values of several axes (`kickturn.grid`). Not a
/// command of its own: each point is a sweep point with its axes applied in order.
#[derive(serde::Serialize)]
struct GridReport {
    /// Tool and version.
    tool: String,
    /// SHA-256 of the problem text.
    input_sha256: String,
    /// The axes, in the order they are applied.
    axes: Vec<Axis>,
    /// Objective of every solve.
    objective: Objective,
    /// Each point's values of the axes (in their units), in input order.
    rows: Vec<Vec<f64>>,
    /// The points in input order; a point's `value` is its last axis' value.
    points: Vec<study::Point>,
    /// Safety caution.
    caution: &'static str,
}

/// The grid document of `rows` (each a value of every axis, in `axes` order): every point is
/// re-solved like a sweep point (`app::study::sweep`: no outer restart), in parallel.
#[pyfunction]
#[pyo3(signature = (
    text, file, axes, rows, *, max_payload=false, max_wall_s=None, max_trajectories=50_000
))]
#[allow(clippy::too_many_arguments)]
fn grid(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    axes: Vec<String>,
    rows: Vec<Vec<f64>>,
    max_payload: bool,
    max_wall_s: Option<f64>,
    max_trajectories: usize,
) -> PyResult<String> {
    let file = file.as_deref();
    let axes = axes
        .iter()
        .map(|a| axis_of(py, a))
        .collect::<PyResult<Vec<Axis>>>()?;
    if axes.is_empty() {
        return Err(option_error(py, "grid: give at least one axis".into()));
    }
    for (i, a) in axes.iter().enumerate() {
        if axes[..i].contains(a) {
            return Err(option_error(py, format!("grid: {} given twice", a.label())));
        }
        if *a == Axis::Payload && max_payload {
            return Err(option_error(
                py,
                "grid: payload and max_payload contradict each other (the payload mode solves \
                 for the payload)"
                    .into(),
            ));
        }
    }
    if let Some(r) = rows.iter().find(|r| r.len() != axes.len()) {
        return Err(PyValueError::new_err(format!(
            "grid: a row of {} values for {} axes",
            r.len(),
            axes.len()
        )));
    }
    let opts = SolveOptions {
        // As a sweep: no outer restart.
        polish: false,
        ..study_options(py, max_payload, max_wall_s, max_trajectories)?
    };
    let (f, sha) = read_valid(py, &text, file)?;
    let points: Vec<(ProblemFile, f64)> = rows
        .iter()
        .map(|row| {
            let g = axes
                .iter()
                .zip(row)
                .fold(f.clone(), |g, (a, v)| study::apply(&g, *a, *v));
            (g, row.last().copied().unwrap_or(f64::NAN))
        })
        .collect();
    let solved = py.detach(|| study::solve_points("grid", &points, &opts, &Silent));
    to_json(&GridReport {
        tool: app::tool_version(),
        input_sha256: sha,
        axes,
        objective: opts.objective,
        rows,
        points: solved,
        caution: app::outcome::CAUTION,
    })
}

/// `kickturn compare --json` of `(text, file)` pairs.
#[pyfunction]
#[pyo3(signature = (problems, *, max_payload=false, max_wall_s=None, max_trajectories=50_000))]
fn compare(
    py: Python<'_>,
    problems: Vec<(String, Option<String>)>,
    max_payload: bool,
    max_wall_s: Option<f64>,
    max_trajectories: usize,
) -> PyResult<String> {
    let opts = study_options(py, max_payload, max_wall_s, max_trajectories)?;
    if problems.len() < 2 {
        return Err(option_error(
            py,
            "compare: give at least two problems".into(),
        ));
    }
    let files = problems
        .iter()
        .map(|(text, file)| read(py, text, file.as_deref()))
        .collect::<PyResult<Vec<_>>>()?;
    let report = py.detach(|| CompareReport::run(files, &opts, &Silent));
    to_json(&report)
}

/// `kickturn trade --json`.
#[pyfunction]
#[pyo3(signature = (text, file=None, *, max_payload=false, max_wall_s=None, max_trajectories=50_000))]
fn trade(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    max_payload: bool,
    max_wall_s: Option<f64>,
    max_trajectories: usize,
) -> PyResult<String> {
    let file = file.as_deref();
    let opts = study_options(py, max_payload, max_wall_s, max_trajectories)?;
    let (f, sha) = read_valid(py, &text, file)?;
    let report = py.detach(|| TradeReport::run(&f, sha, &opts, &Silent));
    to_json(&report)
}

/// How many re-solved points a trade has (two per traded parameter), after checking the problem
/// and the options as `trade` does (so that a distributed trade fails at once on bad input).
#[pyfunction]
#[pyo3(signature = (
    text, file=None, *, max_payload=false, max_wall_s=None, max_trajectories=50_000
))]
fn trade_size(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    max_payload: bool,
    max_wall_s: Option<f64>,
    max_trajectories: usize,
) -> PyResult<usize> {
    study_options(py, max_payload, max_wall_s, max_trajectories)?;
    let (f, _) = read_valid(py, &text, file.as_deref())?;
    Ok(study::trade_points(&f).len())
}

/// Solves the trade points `indices` (see `app::study::trade_points`) and returns, for each, the
/// pair `[point, objective value or null]` as JSON text: a part of a trade run elsewhere.
#[pyfunction]
#[pyo3(signature = (
    text, file, indices, *, max_payload=false, max_wall_s=None, max_trajectories=50_000
))]
#[allow(clippy::too_many_arguments)]
fn trade_batch(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    indices: Vec<usize>,
    max_payload: bool,
    max_wall_s: Option<f64>,
    max_trajectories: usize,
) -> PyResult<String> {
    let opts = study_options(py, max_payload, max_wall_s, max_trajectories)?;
    let (f, _) = read_valid(py, &text, file.as_deref())?;
    let all = study::trade_points(&f);
    let chosen = indices
        .iter()
        .map(|&i| {
            all.get(i).cloned().ok_or_else(|| {
                PyIndexError::new_err(format!("trade point {i}: the trade has {}", all.len()))
            })
        })
        .collect::<PyResult<Vec<_>>>()?;
    let points = py.detach(|| study::solve_points("trade", &chosen, &opts, &Silent));
    let pairs: Vec<_> = points
        .iter()
        .map(|p| (p, study::objective_value(p, opts.objective)))
        .collect();
    to_json(&pairs)
}

/// The `kickturn trade --json` document from the objective values of every trade point, in
/// order (as `trade_batch` returns them).
#[pyfunction]
#[pyo3(signature = (text, file, values, *, max_payload=false))]
fn trade_report(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    values: Vec<Option<f64>>,
    max_payload: bool,
) -> PyResult<String> {
    let (f, sha) = read_valid(py, &text, file.as_deref())?;
    let params = study::traded(&f);
    if values.len() != 2 * params.len() {
        return Err(PyValueError::new_err(format!(
            "trade_report: {} values for a trade of {} points",
            values.len(),
            2 * params.len()
        )));
    }
    let factors: Vec<TradeFactor> = params
        .iter()
        .zip(values.chunks_exact(2))
        .map(|(p, v)| TradeFactor::from_values(&f, *p, v[0], v[1]))
        .collect();
    let objective = if max_payload {
        Objective::MaxPayload
    } else {
        Objective::LeastPropellant
    };
    to_json(&TradeReport::from_factors(&f, sha, objective, factors))
}

/// The options of a dispersion study (the command line's `DispersionsArgs`).
fn dispersion_options(
    samples: usize,
    seed: u64,
    open_loop: bool,
    probability: Option<f64>,
    confidence: Option<f64>,
    apsis_tol_km: f64,
    inclination_tol_deg: f64,
) -> DispersionOptions {
    DispersionOptions {
        samples,
        seed,
        open_loop,
        probability,
        confidence,
        apsis_tol_km,
        inclination_tol_deg,
    }
}

/// `kickturn dispersions --json` (the whole study in this process, in parallel).
#[pyfunction]
#[pyo3(signature = (
    text, file=None, *, samples=1000, seed=1, open_loop=false, probability=None, confidence=None,
    apsis_tol_km=APSIS_TOL_KM, inclination_tol_deg=INCLINATION_TOL_DEG
))]
#[allow(clippy::too_many_arguments)]
fn dispersions(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    samples: usize,
    seed: u64,
    open_loop: bool,
    probability: Option<f64>,
    confidence: Option<f64>,
    apsis_tol_km: f64,
    inclination_tol_deg: f64,
) -> PyResult<String> {
    let file = file.as_deref();
    let o = dispersion_options(
        samples,
        seed,
        open_loop,
        probability,
        confidence,
        apsis_tol_km,
        inclination_tol_deg,
    );
    let case = load(py, &text, file)?;
    let run = py.detach(|| study_dispersions::run(&case, &o, &Silent));
    to_json(&run.map_err(|e| app_error(py, e, file))?)
}

/// The samples `indices` of a dispersion study (each below `samples`), in that order, as a JSON
/// array of the `runs` entries of `kickturn dispersions --json`: a part of a study run
/// elsewhere. Sample `k` is the same whatever the indices flown with it. No indices: the
/// problem and options are only checked (`[]`).
#[pyfunction]
#[pyo3(signature = (
    text, file, indices, *, samples=1000, seed=1, open_loop=false, probability=None,
    confidence=None, apsis_tol_km=APSIS_TOL_KM, inclination_tol_deg=INCLINATION_TOL_DEG
))]
#[allow(clippy::too_many_arguments)]
fn dispersion_samples(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    indices: Vec<usize>,
    samples: usize,
    seed: u64,
    open_loop: bool,
    probability: Option<f64>,
    confidence: Option<f64>,
    apsis_tol_km: f64,
    inclination_tol_deg: f64,
) -> PyResult<String> {
    let file = file.as_deref();
    let o = dispersion_options(
        samples,
        seed,
        open_loop,
        probability,
        confidence,
        apsis_tol_km,
        inclination_tol_deg,
    );
    let case = load(py, &text, file)?;
    let run = py.detach(|| study_dispersions::run_samples(&case, &o, &indices, &Silent));
    to_json(&run.map_err(|e| app_error(py, e, file))?)
}

/// The `kickturn dispersions --json` document from every sample of the study (`runs`: JSON
/// text of an array, sample `k` at place `k`, as `dispersion_samples` returns them), with the
/// nominal flight flown here.
#[pyfunction]
#[pyo3(signature = (
    text, file, runs, *, samples=1000, seed=1, open_loop=false, probability=None,
    confidence=None, apsis_tol_km=APSIS_TOL_KM, inclination_tol_deg=INCLINATION_TOL_DEG
))]
#[allow(clippy::too_many_arguments)]
fn dispersion_report(
    py: Python<'_>,
    text: String,
    file: Option<String>,
    runs: String,
    samples: usize,
    seed: u64,
    open_loop: bool,
    probability: Option<f64>,
    confidence: Option<f64>,
    apsis_tol_km: f64,
    inclination_tol_deg: f64,
) -> PyResult<String> {
    let file = file.as_deref();
    let o = dispersion_options(
        samples,
        seed,
        open_loop,
        probability,
        confidence,
        apsis_tol_km,
        inclination_tol_deg,
    );
    let runs: Vec<Sample> = serde_json::from_str(&runs)
        .map_err(|e| PyValueError::new_err(format!("dispersion_report: runs: {e}")))?;
    let case = load(py, &text, file)?;
    let report = py.detach(|| study_dispersions::report_from_samples(&case, &o, runs));
    to_json(&report.map_err(|e| app_error(py, e, file))?)
}

/// The extension module `kickturn._kickturn`.
#[pymodule]
#[pyo3(name = "_kickturn")]
fn kickturn_module(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add_function(wrap_pyfunction!(fly, m)?)?;
    m.add_function(wrap_pyfunction!(solve, m)?)?;
    m.add_function(wrap_pyfunction!(parse_range, m)?)?;
    m.add_function(wrap_pyfunction!(sweep, m)?)?;
    m.add_function(wrap_pyfunction!(grid, m)?)?;
    m.add_function(wrap_pyfunction!(compare, m)?)?;
    m.add_function(wrap_pyfunction!(trade, m)?)?;
    m.add_function(wrap_pyfunction!(trade_size, m)?)?;
    m.add_function(wrap_pyfunction!(trade_batch, m)?)?;
    m.add_function(wrap_pyfunction!(trade_report, m)?)?;
    m.add_function(wrap_pyfunction!(dispersions, m)?)?;
    m.add_function(wrap_pyfunction!(dispersion_samples, m)?)?;
    m.add_function(wrap_pyfunction!(dispersion_report, m)?)?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    m.add("TOOL", app::tool_version())?;
    m.add("CAUTION", app::outcome::CAUTION)?;
    m.add("APSIS_TOL_KM", APSIS_TOL_KM)?;
    m.add("INCLINATION_TOL_DEG", INCLINATION_TOL_DEG)?;
    Ok(())
}
