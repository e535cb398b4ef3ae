//! `kickturn sweep`, `compare` and `trade`: read the files, run the study in the application
//! layer with a progress bar, keep each finished point (`--jsonl`, `--csv`) as it comes, write
//! the CSV and figures, print the table or JSON.
//!
//! `--csv` is written twice: while the study runs, each finished row is appended to the file
//! (an `index` column first, rows in the order they finish, flushed per row), so that an
//! interrupted run keeps them; when the study ends, the file is replaced atomically by the table
//! in input order, without the `index` column (the same bytes as a run that was never streamed).

use std::path::{Path, PathBuf};
use std::sync::Mutex;

use anyhow::{bail, Context};

use kickturn::app::study::{
    self, Axis, CompareReport, Point, PointSink, SweepReport, TradeFactor, TradeReport,
};
use kickturn::problem::ProblemFile;
use kickturn::render;
use kickturn::render::stream::{PointLabel, StreamHeader};

use super::exit_code;
use super::io::{check_outputs, read_file, write_atomic, write_figures, OutputKind, Progress};
use super::stream::LineFile;
use super::{StudyArgs, StudyFigureArgs};

/// `--plot` and `--report` of a study, for [`check_outputs`].
fn figure_outputs(f: &StudyFigureArgs) -> Vec<(&'static str, &Path, OutputKind)> {
    let mut v = Vec::new();
    if let Some(p) = &f.plot {
        v.push(("--plot", p.as_path(), OutputKind::Folder));
    }
    if let Some(p) = &f.report {
        v.push(("--report", p.as_path(), OutputKind::File));
    }
    v
}

/// Writes a study's figures (`--plot`) and its HTML page (`--report`: `title`, the text
/// `table` and the same figures with captions); draws nothing when neither is asked for.
fn write_study_figures(
    f: &StudyFigureArgs,
    input: &Path,
    title: &str,
    table: impl FnOnce() -> String,
    draw: impl FnOnce() -> Result<Vec<render::plots::FigureFile>, render::plots::PlotError>,
) -> anyhow::Result<()> {
    if f.plot.is_none() && f.report.is_none() {
        return Ok(());
    }
    let figures = draw()?;
    if let Some(dir) = &f.plot {
        let files = render::plots::select_formats(
            figures.clone(),
            &super::figure_formats(&f.figure_format),
        )?;
        write_figures(dir, input, &files)?;
    }
    if let Some(path) = &f.report {
        let captions = render::figures::study_captions(&figures);
        let page = render::html::study_page(title, &table(), &figures, &captions);
        write_atomic(path, input, page.as_bytes())?;
    }
    Ok(())
}

/// Prints `report` as JSON or as the text `table`.
fn print<T: serde::Serialize>(
    json: bool,
    report: &T,
    table: impl FnOnce() -> String,
) -> anyhow::Result<()> {
    if json {
        super::io::emit_report(&format!("{}\n", serde_json::to_string_pretty(report)?))
    } else {
        super::io::emit_report(&table())
    }
}

/// Reads a problem file and checks that it validates (a study of a bad file is bad input).
fn read_valid(path: &Path) -> anyhow::Result<(ProblemFile, String)> {
    let (file, sha) = read_file(path)?;
    let p = kickturn::problem::validate::validate(&file)
        .with_context(|| format!("{}", path.display()))?;
    super::io::warn(path, &kickturn::problem::warning::warnings(&p));
    Ok((file, sha))
}

/// The file outputs of every study (`--csv`, `--jsonl`), for [`check_outputs`].
fn study_outputs(a: &StudyArgs) -> Vec<(&'static str, &Path, OutputKind)> {
    let mut v = Vec::new();
    if let Some(p) = &a.csv {
        v.push(("--csv", p.as_path(), OutputKind::File));
    }
    if let Some(p) = &a.jsonl {
        v.push(("--jsonl", p.as_path(), OutputKind::File));
    }
    v
}

/// Where a running study keeps each finished point: the `--jsonl` line of `line(index, point)`
/// and the `--csv` row of `row(index, point)` (none while a trade factor waits for its other
/// point).
struct Keep<L, R> {
    jsonl: Option<LineFile>,
    csv: Option<LineFile>,
    line: L,
    row: R,
}

/// The header of the `--csv` stream, and how many rows of what it plans.
struct CsvPlan {
    header: String,
    rows: usize,
    unit: &'static str,
}

impl<L, R> Keep<L, R>
where
    L: Fn(usize, &Point) -> String + Sync,
    R: Fn(usize, &Point) -> Option<String> + Sync,
{
    /// Creates the files the options name and writes their header lines.
    fn open(
        a: &StudyArgs,
        header: &StreamHeader<'_>,
        csv: CsvPlan,
        line: L,
        row: R,
    ) -> anyhow::Result<Self> {
        let jsonl = match &a.jsonl {
            Some(p) => Some(LineFile::create(
                "--jsonl",
                p,
                &render::stream::header_line(header),
                header.planned_points,
                "points",
            )?),
            None => None,
        };
        let csv = match &a.csv {
            // `--csv -`: the table goes to standard output at the end (nothing to stream into).
            Some(p) if super::io::is_dash(p) => None,
            Some(p) => Some(LineFile::create(
                "--csv",
                p,
                &csv.header,
                csv.rows,
                csv.unit,
            )?),
            None => None,
        };
        Ok(Keep {
            jsonl,
            csv,
            line,
            row,
        })
    }

    /// The run ended normally: the completion line ends the JSON Lines file.
    fn close(self, points: usize, succeeded: bool) -> anyhow::Result<()> {
        if let Some(f) = self.jsonl {
            f.close(Some(&render::stream::complete_line(points, succeeded)))?;
        }
        if let Some(f) = self.csv {
            f.close(None)?;
        }
        Ok(())
    }
}

impl<L, R> PointSink for Keep<L, R>
where
    L: Fn(usize, &Point) -> String + Sync,
    R: Fn(usize, &Point) -> Option<String> + Sync,
{
    fn point(&self, index: usize, point: &Point) {
        if let Some(f) = &self.jsonl {
            f.record(&(self.line)(index, point));
        }
        if let (Some(f), Some(row)) = (&self.csv, (self.row)(index, point)) {
            f.record(&row);
        }
    }
}

/// Runs `kickturn sweep`.
pub fn run_sweep(
    problem: &Path,
    axis: Axis,
    range: &str,
    a: &StudyArgs,
    figures: &StudyFigureArgs,
    family: Option<(Axis, Vec<f64>)>,
) -> anyhow::Result<u8> {
    let opts = a.options()?;
    let values =
        study::parse_range(range).map_err(|e| anyhow::anyhow!("--{}: {e}", axis_flag(axis)))?;
    let mut outputs = study_outputs(a);
    outputs.extend(figure_outputs(figures));
    check_outputs(&[problem], &outputs)?;
    super::io::check_json_stdout(a.json)?;
    let (file, sha) = read_valid(problem)?;
    let label = axis.label();
    let shas = [sha.clone()];
    let header = StreamHeader {
        study: "sweep",
        planned_points: values.len(),
        value: label,
        objective: opts.objective,
        input_sha256: &shas,
    };
    let csv = CsvPlan {
        header: render::csv::points_stream_header(label),
        rows: values.len(),
        unit: "points",
    };
    let keep = Keep::open(
        a,
        &header,
        csv,
        |i, p| render::stream::point_line(i, PointLabel::Sweep, p),
        |i, p| Some(render::csv::points_stream_row(label, i, p)),
    )?;
    let report = SweepReport::run_streamed(
        &file,
        sha.clone(),
        axis,
        &values,
        &opts,
        &Progress::new(),
        &keep,
    );
    keep.close(report.points.len(), report.succeeded())?;
    if let Some(path) = &a.csv {
        let text = render::csv::points(label, &report.points);
        write_atomic(path, problem, text.as_bytes())?;
    }
    // The family: the same sweep once per value of the second axis (each a full sweep).
    let curves: Vec<(f64, Vec<Point>)> = match &family {
        Some((fam_axis, fam_values)) => fam_values
            .iter()
            .map(|&v| {
                let f = study::apply(&file, *fam_axis, v);
                let r = SweepReport::run(&f, sha.clone(), axis, &values, &opts, &Progress::new());
                (v, r.points)
            })
            .collect(),
        None => Vec::new(),
    };
    let family_table = family
        .as_ref()
        .map(|(fa, _)| render::study::family(axis, *fa, &values, &curves))
        .unwrap_or_default();
    write_study_figures(
        figures,
        problem,
        &format!("{}: sweep of {label}", file.name),
        || render::study::sweep(&report, range) + &family_table,
        || {
            let mut figs = render::figures::sweep_figures(&file.name, axis, &report.points)?;
            if let Some((fa, _)) = &family {
                figs.extend(render::figures::family_figure(
                    &file.name, axis, *fa, &curves,
                )?);
            }
            Ok(figs)
        },
    )?;
    print(a.json, &report, || {
        render::study::sweep(&report, range) + &family_table
    })?;
    Ok(exit_code(report.succeeded()))
}

/// Parses `--family AXIS=V1,V2,...` (or `AXIS=FROM:TO:STEP`); the axis must differ from the
/// swept one.
pub fn parse_family(text: &str, swept: Axis) -> anyhow::Result<(Axis, Vec<f64>)> {
    let Some((name, values)) = text.split_once('=') else {
        bail!("--family: write AXIS=V1,V2,... (e.g. inclination=28.5,51.6), got `{text}`");
    };
    let axis = match name.trim() {
        "azimuth" => Axis::Azimuth,
        "inclination" => Axis::Inclination,
        "altitude" => Axis::Altitude,
        "payload" => Axis::Payload,
        other => bail!(
            "--family: `{other}` is not an axis; use azimuth, inclination, altitude or payload"
        ),
    };
    if axis == swept {
        bail!("--family: {name} is the swept axis; choose another");
    }
    let values = if values.contains(':') {
        study::parse_range(values).map_err(|e| anyhow::anyhow!("--family: {e}"))?
    } else {
        values
            .split(',')
            .map(|v| {
                v.trim()
                    .parse::<f64>()
                    .ok()
                    .filter(|x| x.is_finite())
                    .ok_or_else(|| anyhow::anyhow!("--family: `{v}` is not a number"))
            })
            .collect::<anyhow::Result<Vec<f64>>>()?
    };
    if values.is_empty() || values.len() > 12 {
        bail!("--family: give 1 to 12 values, got {}", values.len());
    }
    Ok((axis, values))
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
    a: &StudyArgs,
    figures: &StudyFigureArgs,
) -> anyhow::Result<u8> {
    let opts = a.options()?;
    if files.len() < 2 {
        bail!("compare: give at least two problem files");
    }
    let inputs: Vec<&Path> = files.iter().map(PathBuf::as_path).collect();
    let mut outputs = study_outputs(a);
    outputs.extend(figure_outputs(figures));
    check_outputs(&inputs, &outputs)?;
    super::io::check_json_stdout(a.json)?;
    let read = files
        .iter()
        .map(|p| {
            let r = read_file(p)?;
            // A file that does not validate becomes a failed column; one that does may warn.
            if let Ok(v) = kickturn::problem::validate::validate(&r.0) {
                super::io::warn(p, &kickturn::problem::warning::warnings(&v));
            }
            Ok(r)
        })
        .collect::<anyhow::Result<Vec<_>>>()?;
    let read = unique_names(read, files);
    let names: Vec<String> = read.iter().map(|(f, _)| f.name.clone()).collect();
    let shas: Vec<String> = read.iter().map(|(_, s)| s.clone()).collect();
    let header = StreamHeader {
        study: "compare",
        planned_points: read.len(),
        value: "problem_index",
        objective: opts.objective,
        input_sha256: &shas,
    };
    let csv = CsvPlan {
        header: render::csv::compare_stream_header(),
        rows: read.len(),
        unit: "points",
    };
    let name = |i: usize| names.get(i).map_or("", String::as_str);
    let keep = Keep::open(
        a,
        &header,
        csv,
        |i, p| render::stream::point_line(i, PointLabel::Problem(name(i)), p),
        |i, p| Some(render::csv::compare_stream_row(i, name(i), p)),
    )?;
    let report = CompareReport::run_streamed(read, &opts, &Progress::new(), &keep);
    keep.close(report.problems.len(), report.succeeded())?;
    if let Some(path) = &a.csv {
        let text = render::csv::compare(&report);
        write_atomic(path, &files[0], text.as_bytes())?;
    }
    write_study_figures(
        figures,
        &files[0],
        "comparison of solved ascents",
        || render::study::compare(&report),
        || render::figures::compare_figures(&report),
    )?;
    print(a.json, &report, || render::study::compare(&report))?;
    Ok(exit_code(report.succeeded()))
}

/// Problems that share a name are told apart by their file's stem (`name [stem]`), and by their
/// place when the stems are also alike: every column, CSV row and JSON entry names one problem.
fn unique_names(
    mut read: Vec<(ProblemFile, String)>,
    files: &[PathBuf],
) -> Vec<(ProblemFile, String)> {
    let names: Vec<String> = read.iter().map(|(f, _)| f.name.clone()).collect();
    let shared = |i: usize| names.iter().filter(|n| **n == names[i]).count() > 1;
    let stems: Vec<String> = files
        .iter()
        .map(|p| {
            p.file_stem()
                .map_or_else(|| "-".into(), |s| s.to_string_lossy().into_owned())
        })
        .collect();
    for (i, (f, _)) in read.iter_mut().enumerate() {
        if shared(i) {
            let stem_shared = (0..names.len())
                .any(|j| j != i && names[j] == names[i] && stems.get(j) == stems.get(i));
            f.name = if stem_shared {
                format!("{} [{} #{}]", names[i], stems[i], i + 1)
            } else {
                format!("{} [{}]", names[i], stems[i])
            };
        }
    }
    read
}

/// Runs `kickturn trade`.
pub fn run_trade(problem: &Path, a: &StudyArgs, figures: &StudyFigureArgs) -> anyhow::Result<u8> {
    let opts = a.options()?;
    let mut outputs = study_outputs(a);
    outputs.extend(figure_outputs(figures));
    check_outputs(&[problem], &outputs)?;
    super::io::check_json_stdout(a.json)?;
    let (file, sha) = read_valid(problem)?;
    let traded = study::traded(&file);
    let names: Vec<String> = traded.iter().map(|t| t.name(&file)).collect();
    let shas = [sha.clone()];
    let header = StreamHeader {
        study: "trade",
        planned_points: 2 * traded.len(),
        value: "signed_step",
        objective: opts.objective,
        input_sha256: &shas,
    };
    let csv = CsvPlan {
        header: render::csv::trade_stream_header(),
        rows: traded.len(),
        unit: "trade factors",
    };
    // Point 2k is +step and 2k + 1 is −step of traded[k]; a factor's row waits for both.
    let waiting: Mutex<Vec<Option<Point>>> = Mutex::new(vec![None; 2 * traded.len()]);
    let factor_row = |i: usize, p: &Point| -> Option<String> {
        let k = i / 2;
        let param = *traded.get(k)?;
        let mut w = waiting
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        let other = w.get_mut(i ^ 1)?.take();
        let Some(other) = other else {
            *w.get_mut(i)? = Some(p.clone());
            return None;
        };
        let (plus, minus) = if i % 2 == 0 { (p, &other) } else { (&other, p) };
        let f = TradeFactor::of(&file, param, plus, minus, opts.objective);
        Some(render::csv::trade_stream_row(k, &f))
    };
    let keep = Keep::open(
        a,
        &header,
        csv,
        |i, p| {
            let k = i / 2;
            let label = match (traded.get(k), names.get(k)) {
                (Some(t), Some(n)) => PointLabel::Traded(*t, n),
                _ => PointLabel::Sweep,
            };
            render::stream::point_line(i, label, p)
        },
        factor_row,
    )?;
    let report = TradeReport::run_streamed(&file, sha, &opts, &Progress::new(), &keep);
    keep.close(2 * report.factors.len(), report.succeeded())?;
    if let Some(path) = &a.csv {
        write_atomic(path, problem, render::csv::trade(&report).as_bytes())?;
    }
    write_study_figures(
        figures,
        problem,
        &format!("{}: trade factors", report.problem),
        || render::study::trade(&report),
        || render::figures::trade_figures(&report),
    )?;
    print(a.json, &report, || render::study::trade(&report))?;
    Ok(exit_code(report.succeeded()))
}
