//! Command-line front end: argument parsing and dispatch. Results go to stdout, diagnostics to
//! stderr. Exit codes: 0 success (orbit reached), 1 ran but did not reach orbit (or the target
//! inclination is out of reach of a direct ascent), 2 bad input or usage.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::{Parser, Subcommand};

use crate::error::ProblemError;
use crate::problem::Problem;
use crate::report::{text, FlightReport};
use crate::sim::{fly, FlyOptions};

/// kickturn: ascent pitch-program optimizer with an exact ΔV loss budget.
#[derive(Debug, Parser)]
#[command(name = "kickturn", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Fly the program in a problem file and report the ΔV budget.
    Fly(FlyArgs),
    /// Tune the ascent program for the least propellant to the target orbit, then report.
    Solve(SolveArgs),
    /// Re-solve over a range of launch azimuth, inclination, circular altitude or payload.
    Sweep(SweepArgs),
    /// Solve several problems and show their budgets side by side.
    Compare(CompareArgs),
    /// Payload (or margin) change per unit change of each stage's dry mass, propellant, Isp and
    /// thrust, and of the drag coefficient.
    Trade(TradeArgs),
}

/// Options shared by the study commands.
#[derive(Debug, clap::Args)]
pub struct StudyArgs {
    /// Print one JSON object instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Write the table as CSV to this file.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Maximize payload at full propellant loads (default: least propellant for the file's
    /// payload).
    #[arg(long)]
    pub max_payload: bool,
    /// Wall-time budget per solve, s.
    #[arg(long, default_value_t = 60.0, value_name = "S")]
    pub max_wall_s: f64,
}

impl StudyArgs {
    /// Solve options of every point.
    pub fn options(&self) -> anyhow::Result<crate::optimize::SolveOptions> {
        if !(self.max_wall_s.is_finite() && self.max_wall_s > 0.0) {
            bail!(
                "--max-wall-s: must be a finite number > 0, got {}",
                self.max_wall_s
            );
        }
        Ok(crate::optimize::SolveOptions {
            max_wall_s: self.max_wall_s,
            objective: if self.max_payload {
                crate::optimize::Objective::MaxPayload
            } else {
                crate::optimize::Objective::LeastPropellant
            },
            ..crate::optimize::SolveOptions::default()
        })
    }
}

/// Arguments of `sweep`: exactly one range.
#[derive(Debug, clap::Args)]
#[command(group(clap::ArgGroup::new("range").required(true).args(["azimuth", "inclination", "altitude", "payload"])))]
pub struct SweepArgs {
    /// Problem file (JSON) with a `target`.
    pub problem: PathBuf,
    /// Launch azimuth range FROM:TO:STEP, deg (the target inclination is then free).
    #[arg(long, value_name = "FROM:TO:STEP")]
    pub azimuth: Option<String>,
    /// Target inclination range FROM:TO:STEP, deg.
    #[arg(long, value_name = "FROM:TO:STEP")]
    pub inclination: Option<String>,
    /// Circular target altitude range FROM:TO:STEP, km.
    #[arg(long, value_name = "FROM:TO:STEP")]
    pub altitude: Option<String>,
    /// Payload range FROM:TO:STEP, kg.
    #[arg(long, value_name = "FROM:TO:STEP")]
    pub payload: Option<String>,
    /// Write the sweep curves (PNG and SVG) into this folder.
    #[arg(long, value_name = "DIR")]
    pub plot: Option<PathBuf>,
    /// Shared options.
    #[command(flatten)]
    pub study: StudyArgs,
}

/// Arguments of `compare`.
#[derive(Debug, clap::Args)]
pub struct CompareArgs {
    /// Two or more problem files.
    #[arg(required = true, num_args = 2..)]
    pub problems: Vec<PathBuf>,
    /// Shared options.
    #[command(flatten)]
    pub study: StudyArgs,
}

/// Arguments of `trade`.
#[derive(Debug, clap::Args)]
pub struct TradeArgs {
    /// Problem file (JSON) with a `target`.
    pub problem: PathBuf,
    /// Shared options.
    #[command(flatten)]
    pub study: StudyArgs,
}

/// Arguments of `solve`.
#[derive(Debug, clap::Args)]
pub struct SolveArgs {
    /// Problem file (JSON) with a `target`.
    pub problem: PathBuf,
    /// Outputs.
    #[command(flatten)]
    pub out: FlightOutputArgs,
    /// Write the problem with the tuned program to this file (atomic; never over the input).
    #[arg(long, value_name = "OUT.json")]
    pub write_program: Option<PathBuf>,
    /// Wall-time budget, s.
    #[arg(long, default_value_t = 60.0, value_name = "S")]
    pub max_wall_s: f64,
    /// Trajectory budget.
    #[arg(long, default_value_t = 50_000, value_name = "N")]
    pub max_trajectories: usize,
    /// Also tune these variable groups: pitch_rate, rise_time, azimuth, coasts (azimuth with an
    /// inclination target and timed coasts are free by default).
    #[arg(long, value_name = "GROUP", value_delimiter = ',')]
    pub free: Vec<String>,
    /// Hold these variable groups at the file's values: kick, steering, azimuth, coasts.
    #[arg(long, value_name = "GROUP", value_delimiter = ',')]
    pub fix: Vec<String>,
    /// Start from the file's program instead of the automatic guess and kick scan.
    #[arg(long)]
    pub no_scan: bool,
    /// Also solve richer programs (free pitch-over rate and vertical rise; separate laws for
    /// continued upper burns) and report what each would save.
    #[arg(long)]
    pub explore: bool,
    /// Find the largest payload with every stage burned to depletion (reserves set aside)
    /// instead of the least propellant for the file's payload.
    #[arg(long)]
    pub max_payload: bool,
    /// Perturb the automatic start with this seed (robustness checks).
    #[arg(long, value_name = "SEED")]
    pub perturb_seed: Option<u64>,
}

/// Output options of `fly` and `solve`.
#[derive(Debug, clap::Args)]
pub struct FlightOutputArgs {
    /// Print one JSON object instead of the text report.
    #[arg(long)]
    pub json: bool,
    /// Write the time history to this CSV file.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Time-history spacing for --csv, s.
    #[arg(long, default_value_t = 1.0, value_name = "S")]
    pub csv_step_s: f64,
    /// Write the figures (PNG and SVG) into this folder.
    #[arg(long, value_name = "DIR")]
    pub plot: Option<PathBuf>,
    /// Write a self-contained HTML report to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
}

impl FlightOutputArgs {
    /// History spacing to record, s, when any output needs the time history.
    pub fn record_step_s(&self) -> Option<f64> {
        (self.csv.is_some() || self.plot.is_some() || self.report.is_some())
            .then_some(self.csv_step_s)
    }
}

/// Arguments of `fly`.
#[derive(Debug, clap::Args)]
pub struct FlyArgs {
    /// Problem file (JSON).
    pub problem: PathBuf,
    /// Outputs.
    #[command(flatten)]
    pub out: FlightOutputArgs,
}

/// Exit code for success.
pub const EXIT_OK: u8 = 0;
/// Exit code when the run completed but orbit was not reached.
pub const EXIT_NOT_REACHED: u8 = 1;
/// Exit code for bad input or usage.
pub const EXIT_BAD_INPUT: u8 = 2;

/// Parses arguments, runs, and maps the outcome to an exit code.
pub fn main_with_args(args: impl IntoIterator<Item = std::ffi::OsString>) -> ExitCode {
    let cli = match Cli::try_parse_from(args) {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() {
                EXIT_BAD_INPUT
            } else {
                EXIT_OK
            };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    match run(cli) {
        Ok(code) => ExitCode::from(code),
        Err(err) => {
            eprintln!("error: {err:#}");
            ExitCode::from(EXIT_BAD_INPUT)
        }
    }
}

fn run(cli: Cli) -> anyhow::Result<u8> {
    match cli.command {
        Command::Fly(a) => run_fly(&a),
        Command::Solve(a) => crate::report::solve::run(&a),
        Command::Sweep(a) => {
            use crate::study::Axis;
            let (axis, range) = match (&a.azimuth, &a.inclination, &a.altitude, &a.payload) {
                (Some(r), _, _, _) => (Axis::Azimuth, r),
                (_, Some(r), _, _) => (Axis::Inclination, r),
                (_, _, Some(r), _) => (Axis::Altitude, r),
                (_, _, _, Some(_)) if a.study.max_payload => bail!(
                    "sweep: --payload and --max-payload contradict each other (the payload \
                     mode solves for the payload)"
                ),
                (_, _, _, Some(r)) => (Axis::Payload, r),
                _ => bail!("sweep: give one of --azimuth, --inclination, --altitude, --payload"),
            };
            crate::report::study::run_sweep(
                &a.problem,
                axis,
                range,
                &a.study.options()?,
                a.study.json,
                a.study.csv.as_ref(),
                a.plot.as_ref(),
            )
        }
        Command::Compare(a) => crate::report::study::run_compare(
            &a.problems,
            &a.study.options()?,
            a.study.json,
            a.study.csv.as_ref(),
        ),
        Command::Trade(a) => crate::report::study::run_trade(
            &a.problem,
            &a.study.options()?,
            a.study.json,
            a.study.csv.as_ref(),
        ),
    }
}

/// Loads and validates a problem file, with the path in any error.
pub fn load(path: &Path) -> anyhow::Result<Problem> {
    Problem::from_path(path).map_err(|e| match e {
        ProblemError::Io(io) => anyhow::Error::new(io).context(format!("{}", path.display())),
        other => anyhow::Error::new(other).context(format!("{}", path.display())),
    })
}

fn run_fly(a: &FlyArgs) -> anyhow::Result<u8> {
    if !(a.out.csv_step_s.is_finite() && a.out.csv_step_s > 0.0) {
        bail!(
            "--csv-step-s: must be a finite number > 0, got {}",
            a.out.csv_step_s
        );
    }
    let p = load(&a.problem)?;
    if let Some(u) = p.unreachable_inclination().filter(|_| !p.allow_dog_leg) {
        eprintln!("{}: {u}", a.problem.display());
        return Ok(EXIT_NOT_REACHED);
    }
    let opts = FlyOptions {
        record_step_s: a.out.record_step_s(),
        initial: None,
    };
    let flight = fly(&p, &opts);
    let report = FlightReport::new(&p, &flight);
    if let Some(path) = &a.out.csv {
        write_atomic(path, &a.problem, |w| {
            crate::report::csv_out::write_history(w, &flight.history).map_err(Into::into)
        })?;
    }
    if let Some(dir) = &a.out.plot {
        crate::report::figures::flight_figures(dir, &report, &flight)?;
    }
    if let Some(path) = &a.out.report {
        crate::report::html::write(path, &a.problem, &report, &flight, "")?;
    }
    if a.out.json {
        emit(&format!("{}\n", serde_json::to_string_pretty(&report)?))?;
    } else {
        emit(&text::render(&report))?;
    }
    Ok(if report.reached_orbit() {
        EXIT_OK
    } else {
        EXIT_NOT_REACHED
    })
}

/// Writes results to stdout; a closed pipe (`kickturn fly … | head`) is not an error.
pub fn emit(text: &str) -> anyhow::Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|()| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(()),
    }
}

/// Writes a file atomically (temporary file in the same folder, then rename); refuses to write
/// over the input file.
pub fn write_atomic(
    path: &Path,
    input: &Path,
    body: impl FnOnce(&mut std::fs::File) -> anyhow::Result<()>,
) -> anyhow::Result<()> {
    if let (Ok(a), Ok(b)) = (path.canonicalize(), input.canonicalize()) {
        if a == b {
            bail!("{}: refusing to write over the input file", path.display());
        }
    }
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .with_context(|| format!("{}: not a file name", path.display()))?;
    let tmp = dir.join(format!(
        ".{}.tmp{}",
        name.to_string_lossy(),
        std::process::id()
    ));
    let result = (|| {
        let mut f = std::fs::File::create(&tmp)
            .with_context(|| format!("cannot create {}", tmp.display()))?;
        body(&mut f)?;
        f.sync_all()?;
        std::fs::rename(&tmp, path).with_context(|| format!("cannot write {}", path.display()))
    })();
    if result.is_err() {
        let _ = std::fs::remove_file(&tmp);
    }
    result
}
