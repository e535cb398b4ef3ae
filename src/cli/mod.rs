//! The command line: clap arguments, reading problem files, atomic writes, progress bars and
//! exit codes — the binary's own modules, not part of the library. Each command reads its inputs,
//! calls the application layer (`kickturn::app`), hands the outcome to the renderers
//! (`kickturn::render`) and writes the results. Results go to stdout, diagnostics to stderr.
//!
//! Exit codes: 0 success (orbit reached, target met), 1 ran but did not reach orbit or the target
//! (or the target inclination is out of reach of a direct ascent), 2 bad input or usage, 130
//! interrupted by SIGINT or SIGTERM (a study keeps the points it finished in `--jsonl` and
//! `--csv`; see `stream`).

mod dispersions;
mod io;
mod solve;
mod stream;
mod study;

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::bail;
use clap::{Parser, Subcommand};

use kickturn::app::{self, fly::FlyOptions};
use kickturn::render;

pub use io::{check_outputs, load_case, write_atomic, OutputKind};

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
    /// Fly the program many times with launch-day dispersions (closed-loop guidance where the
    /// program has it) and size the flight performance reserve.
    Dispersions(dispersions::DispersionsArgs),
    /// Print the JSON Schema of the problem file (for editors and checks before a run).
    Schema,
    /// Print a shell completion script (bash, zsh, fish, elvish, powershell).
    Completions {
        /// The shell.
        shell: clap_complete::Shell,
    },
}

/// Options shared by the study commands.
#[derive(Debug, clap::Args)]
pub struct StudyArgs {
    /// Print one JSON object instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Write the table as CSV to this file. While the study runs, each finished row is appended
    /// at once (an `index` column first, rows in the order they finish), so that an interrupted
    /// run keeps them; at the end the file is replaced by the table in input order.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Write each point to this file as JSON Lines the moment it finishes (flushed per line):
    /// a header line, one line per point with its index and the fields of the `--json` point,
    /// and a last `"complete": true` line only when the run ends normally. On SIGINT or SIGTERM
    /// this file and `--csv` keep whole lines, stderr says how many points they keep, and the exit
    /// code is 130.
    #[arg(long, value_name = "FILE")]
    pub jsonl: Option<PathBuf>,
    /// Maximize payload at full propellant loads (default: least propellant for the file's
    /// payload).
    #[arg(long)]
    pub max_payload: bool,
    /// Optional wall-time cap per solve, s (the trajectory budget ends a solve by default, so
    /// that results do not depend on the machine).
    #[arg(long, value_name = "S")]
    pub max_wall_s: Option<f64>,
    /// Trajectory budget of each point's solve.
    #[arg(long, default_value_t = 50_000, value_name = "N")]
    pub max_trajectories: usize,
}

impl StudyArgs {
    /// Solve options of every point.
    pub fn options(&self) -> anyhow::Result<kickturn::optimize::SolveOptions> {
        let o = kickturn::app::solve::SolveSettings {
            solver: kickturn::optimize::SolveOptions {
                max_wall_s: self.max_wall_s,
                max_trajectories: self.max_trajectories,
                ..Default::default()
            },
            ..Default::default()
        };
        if let Err(kickturn::app::Error::Option { option, reason }) = o.check() {
            bail!("--{}: {reason}", option.replace('_', "-"));
        }
        Ok(kickturn::optimize::SolveOptions {
            max_wall_s: self.max_wall_s,
            max_trajectories: self.max_trajectories,
            objective: if self.max_payload {
                kickturn::optimize::Objective::MaxPayload
            } else {
                kickturn::optimize::Objective::LeastPropellant
            },
            ..kickturn::optimize::SolveOptions::default()
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
    /// Figure and report outputs (the sweep curves, and with `--family` the family).
    #[command(flatten)]
    pub figures: StudyFigureArgs,
    /// Also sweep once per value of a second axis, for a family of payload curves (figure
    /// `sweep_family`, a text table after the sweep's): AXIS=V1,V2,... or AXIS=FROM:TO:STEP with
    /// AXIS one of azimuth (deg), inclination (deg), altitude (km), payload (kg), not the swept one.
    #[arg(long, value_name = "AXIS=VALUES")]
    pub family: Option<String>,
    /// Shared options.
    #[command(flatten)]
    pub study: StudyArgs,
}

/// Figure and report outputs of `sweep`, `compare` and `trade`.
#[derive(Debug, clap::Args)]
pub struct StudyFigureArgs {
    /// Write the study's figures (PNG and SVG) into this folder.
    #[arg(long, value_name = "DIR")]
    pub plot: Option<PathBuf>,
    /// Write a self-contained HTML report (the table and the figures) to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
    /// Formats of the `--plot` files, comma-separated: png, svg, pdf.
    #[arg(
        long,
        value_name = "FORMATS",
        value_delimiter = ',',
        default_value = "png,svg"
    )]
    pub figure_format: Vec<FigureFormatArg>,
}

/// A figure file format on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FigureFormatArg {
    /// PNG, 1200×800 px.
    Png,
    /// SVG (vector).
    Svg,
    /// PDF (vector, converted from the SVG).
    Pdf,
}

/// The renderer's formats for the command line's.
fn figure_formats(f: &[FigureFormatArg]) -> Vec<render::plots::FigureFormat> {
    use render::plots::FigureFormat;
    f.iter()
        .map(|x| match x {
            FigureFormatArg::Png => FigureFormat::Png,
            FigureFormatArg::Svg => FigureFormat::Svg,
            FigureFormatArg::Pdf => FigureFormat::Pdf,
        })
        .collect()
}

/// Arguments of `compare`.
#[derive(Debug, clap::Args)]
pub struct CompareArgs {
    /// Two or more problem files.
    #[arg(required = true, num_args = 2..)]
    pub problems: Vec<PathBuf>,
    /// Figures and report.
    #[command(flatten)]
    pub figures: StudyFigureArgs,
    /// Shared options.
    #[command(flatten)]
    pub study: StudyArgs,
}

/// Arguments of `trade`.
#[derive(Debug, clap::Args)]
pub struct TradeArgs {
    /// Problem file (JSON) with a `target`.
    pub problem: PathBuf,
    /// Figures and report.
    #[command(flatten)]
    pub figures: StudyFigureArgs,
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
    /// Optional wall-time cap, s (the trajectory budget ends a solve by default, so that results
    /// do not depend on the machine).
    #[arg(long, value_name = "S")]
    pub max_wall_s: Option<f64>,
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
    /// Use the former nested search (Newton solves of the terminal conditions inside a
    /// Nelder–Mead search, after a kick scan; 5–10× more trajectories) instead of the default
    /// constrained SQP program. The SQP method falls back to it by itself where it cannot verify
    /// an optimum.
    #[arg(long, conflicts_with = "sqp")]
    pub nested: bool,
    /// The SQP method, now the default (accepted for scripts written when it was opt-in).
    #[arg(long, hide = true)]
    pub sqp: bool,
    /// Also solve richer programs (free pitch-over rate and vertical rise; separate laws for
    /// continued upper burns) and report what each would save.
    #[arg(long)]
    pub explore: bool,
    /// Find the largest payload with every stage burned to depletion (reserves set aside)
    /// instead of the least propellant for the file's payload.
    #[arg(long)]
    pub max_payload: bool,
    /// After the solve, free the thrust direction on every powered arc (pitch and heading
    /// tables) and report the simple program's gap to it; the refined program is the one
    /// reported and written (`--write-program`) when it meets the target and saves propellant.
    #[arg(long, conflicts_with = "max_payload")]
    pub refine: bool,
    /// Attitude nodes per powered arc for `--refine` (4 to 200).
    #[arg(long, value_name = "N", default_value_t = 20, requires = "refine")]
    pub refine_nodes: usize,
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
    /// Formats of the `--plot` files, comma-separated: png, svg, pdf.
    #[arg(
        long,
        value_name = "FORMATS",
        value_delimiter = ',',
        default_value = "png,svg"
    )]
    pub figure_format: Vec<FigureFormatArg>,
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
/// Exit code of a run stopped by SIGINT or SIGTERM (128 + SIGINT, as shells report it).
pub const EXIT_INTERRUPTED: u8 = 130;

/// Parses arguments, runs, and maps the outcome to an exit code.
pub fn main_with_args(args: impl IntoIterator<Item = std::ffi::OsString>) -> ExitCode {
    let args: Vec<std::ffi::OsString> = args.into_iter().collect();
    let cli = match Cli::try_parse_from(&args) {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() {
                EXIT_BAD_INPUT
            } else {
                EXIT_OK
            };
            let _ = e.print();
            // A command line that asked for `--json` gets its usage error as JSON too.
            if e.use_stderr() && args.iter().any(|a| a == "--json") {
                // clap's text without its `error: ` and its closing hint.
                let text = e.to_string();
                let message = text
                    .strip_prefix("error: ")
                    .unwrap_or(&text)
                    .split("\n\n")
                    .next()
                    .unwrap_or("")
                    .to_string();
                let field = match e.get(clap::error::ContextKind::InvalidArg) {
                    Some(clap::error::ContextValue::String(f)) => {
                        f.split_whitespace().next().map(str::to_string)
                    }
                    _ => None,
                };
                let doc = serde_json::json!({
                    "tool": app::tool_version(),
                    "status": "bad_input",
                    "message": message,
                    "error": error_object("usage", field.as_deref(), &message),
                });
                let _ = io::emit(&format!(
                    "{}\n",
                    serde_json::to_string_pretty(&doc).unwrap_or_default()
                ));
            }
            return ExitCode::from(code);
        }
    };
    io::remove_temporaries_on_interrupt();
    let json = cli.command.wants_json();
    match run(cli) {
        Ok(code) => ExitCode::from(code),
        Err(err) => {
            eprintln!("error: {err:#}");
            if json {
                let _ = io::emit(&format!(
                    "{}\n",
                    serde_json::to_string_pretty(&error_json(&err)).unwrap_or_default()
                ));
            }
            ExitCode::from(EXIT_BAD_INPUT)
        }
    }
}

impl Command {
    /// The command asked for `--json` (its errors then also go to stdout as a JSON object).
    fn wants_json(&self) -> bool {
        match self {
            Command::Fly(a) => a.out.json,
            Command::Solve(a) => a.out.json,
            Command::Sweep(a) => a.study.json,
            Command::Compare(a) => a.study.json,
            Command::Trade(a) => a.study.json,
            #[allow(unreachable_patterns)]
            _ => false,
        }
    }
}

/// The `error` object of a `--json` failure: its `kind` (`format`: the file does not parse;
/// `invalid`: a value is refused; `unreachable_inclination`; `usage`: an option, a path or the
/// command line), the `field` it names (a JSON path or an option) and the whole `message`.
fn error_object(kind: &str, field: Option<&str>, message: &str) -> serde_json::Value {
    serde_json::json!({ "kind": kind, "field": field, "message": message })
}

/// A bad-input failure as the JSON document printed under `--json` (exit 2): the same shape as
/// the unreachable-inclination document (`tool`, `status`, `message`, `error`).
fn error_json(err: &anyhow::Error) -> serde_json::Value {
    use kickturn::error::ProblemError;
    let problem = err.chain().find_map(|e| {
        e.downcast_ref::<ProblemError>()
            .or_else(|| match e.downcast_ref::<app::Error>() {
                Some(app::Error::Problem(p)) => Some(p),
                _ => None,
            })
    });
    let message = format!("{err:#}");
    let (kind, field) = match problem {
        Some(ProblemError::Format { path, .. }) => ("format", Some(path.clone())),
        Some(ProblemError::Invalid { field, .. }) => ("invalid", Some(field.clone())),
        _ => (
            "usage",
            message
                .strip_prefix("--")
                .and_then(|m| m.split([':', ' ']).next())
                .map(|f| format!("--{f}")),
        ),
    };
    serde_json::json!({
        "tool": app::tool_version(),
        "status": "bad_input",
        "message": message,
        "error": error_object(kind, field.as_deref(), &message),
    })
}

fn run(cli: Cli) -> anyhow::Result<u8> {
    match cli.command {
        Command::Fly(a) => run_fly(&a),
        Command::Solve(a) => solve::run(&a),
        Command::Sweep(a) => {
            use kickturn::app::study::Axis;
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
            let family = a
                .family
                .as_deref()
                .map(|f| study::parse_family(f, axis))
                .transpose()?;
            study::run_sweep(&a.problem, axis, range, &a.study, &a.figures, family)
        }
        Command::Compare(a) => study::run_compare(&a.problems, &a.study, &a.figures),
        Command::Trade(a) => study::run_trade(&a.problem, &a.study, &a.figures),
        Command::Dispersions(a) => dispersions::run(&a),
        Command::Schema => {
            let schema = kickturn::problem::json_schema();
            io::emit(&format!("{}\n", serde_json::to_string_pretty(&schema)?))?;
            Ok(EXIT_OK)
        }
        Command::Completions { shell } => {
            use clap::CommandFactory;
            let mut out = Vec::new();
            clap_complete::generate(shell, &mut Cli::command(), "kickturn", &mut out);
            io::emit(&String::from_utf8_lossy(&out))?;
            Ok(EXIT_OK)
        }
    }
}

/// Maps an application error to the exit code and message: an unreachable target exits 1 with
/// its reason on stderr (and, with `--json`, a JSON object on stdout that says why), anything
/// else is bad input (exit 2).
fn app_error(problem: &std::path::Path, e: app::Error, json: bool) -> anyhow::Result<u8> {
    if e.is_bad_input() {
        return Err(anyhow::Error::new(e).context(problem.display().to_string()));
    }
    eprintln!("error: {}: {e}", problem.display());
    if json {
        let message = format!("{}: {e}", problem.display());
        let obj = match &e {
            app::Error::Unreachable(u) => app::unreachable_document(u, &e.to_string(), &message),
            _ => serde_json::json!({
                "tool": app::tool_version(),
                "status": "error",
                "message": e.to_string(),
                "error": error_object("run", None, &message),
            }),
        };
        io::emit(&format!("{}\n", serde_json::to_string_pretty(&obj)?))?;
    }
    Ok(EXIT_NOT_REACHED)
}

/// The exit code of a finished command.
fn exit_code(succeeded: bool) -> u8 {
    if succeeded {
        EXIT_OK
    } else {
        EXIT_NOT_REACHED
    }
}

/// Checks `--csv-step-s` and returns the history spacing the outputs need.
fn record_step(out: &FlightOutputArgs) -> anyhow::Result<Option<f64>> {
    let (lo, hi) = (app::MIN_RECORD_STEP_S, app::MAX_RECORD_STEP_S);
    let s = out.csv_step_s;
    if !(s >= lo && s <= hi) {
        bail!(
            "--csv-step-s: must lie in [{lo}, {hi}] s, got {}",
            app::show(s)
        );
    }
    Ok(out.record_step_s())
}

/// Checks the outputs of `fly` and `solve` (`extra`: `--write-program`) before any work.
fn check_flight_outputs(
    out: &FlightOutputArgs,
    input: &std::path::Path,
    extra: Option<&std::path::Path>,
) -> anyhow::Result<()> {
    let mut outputs: Vec<(&str, &std::path::Path, OutputKind)> = Vec::new();
    if let Some(p) = &out.csv {
        outputs.push(("--csv", p, OutputKind::File));
    }
    if let Some(p) = &out.report {
        outputs.push(("--report", p, OutputKind::File));
    }
    if let Some(p) = &out.plot {
        outputs.push(("--plot", p, OutputKind::Folder));
    }
    if let Some(p) = extra {
        outputs.push(("--write-program", p, OutputKind::File));
    }
    check_outputs(&[input], &outputs)
}

fn run_fly(a: &FlyArgs) -> anyhow::Result<u8> {
    let record_step_s = record_step(&a.out)?;
    check_flight_outputs(&a.out, &a.problem, None)?;
    io::check_json_stdout(a.out.json)?;
    let case = load_case(&a.problem)?;
    let run = match app::fly::fly(&case, &FlyOptions { record_step_s }) {
        Ok(r) => r,
        Err(e) => return app_error(&a.problem, e, a.out.json),
    };
    let outputs = FlightOutputs {
        vehicle: Some(&case.problem.vehicle),
        solve: None,
    };
    write_flight_outputs(&a.out, &a.problem, &run.report, &run.flight, &outputs)?;
    if a.out.json {
        io::emit_report(&format!("{}\n", serde_json::to_string_pretty(&run.report)?))?;
    } else {
        io::emit_report(&render::text::render(&run.report))?;
    }
    Ok(exit_code(run.succeeded()))
}

/// What the HTML report adds to a flight: the input vehicle's table and the solve's summary.
struct FlightOutputs<'a> {
    vehicle: Option<&'a kickturn::vehicle::Vehicle>,
    solve: Option<&'a app::solve::SolveReport>,
}

/// Writes `--csv`, `--plot` and `--report` of a flight (with the vehicle table and the solve's
/// summary in the page when `extra` has them).
fn write_flight_outputs(
    out: &FlightOutputArgs,
    input: &std::path::Path,
    report: &app::outcome::FlightReport,
    flight: &kickturn::sim::Flight,
    extra: &FlightOutputs,
) -> anyhow::Result<()> {
    if let Some(path) = &out.csv {
        let text = render::csv::history(&flight.history);
        write_atomic(path, input, text.as_bytes())?;
    }
    if let Some(dir) = &out.plot {
        let files = render::plots::select_formats(
            render::figures::flight_figures(report, flight)?,
            &figure_formats(&out.figure_format),
        )?;
        io::write_figures(dir, input, &files)?;
    }
    if let Some(path) = &out.report {
        let page = render::html::page_with_vehicle(report, flight, extra.solve, extra.vehicle)?;
        write_atomic(path, input, page.as_bytes())?;
    }
    Ok(())
}
