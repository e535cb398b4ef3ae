//! `kickturn dispersions PROBLEM --samples N --seed S`: read the problem (and an optional separate
//! dispersions file), run the study with a progress bar, print the text or JSON report, write the
//! per-sample CSV and the figures; `--sample K` re-flies one sample alone and prints its flight.

use std::path::PathBuf;

use anyhow::{bail, Context};

use kickturn::app::dispersions::{self, DispersionOptions};
use kickturn::app::Case;
use kickturn::problem::file::DispersionsFile;
use kickturn::render;

use super::io::{
    check_outputs, emit_report, load_case, read_text, write_atomic, OutputKind, Progress,
};
use super::{app_error, exit_code};

/// Arguments of `dispersions`.
#[derive(Debug, clap::Args)]
pub struct DispersionsArgs {
    /// Problem file (JSON) with a `target` (and optionally a `dispersions` section).
    pub problem: PathBuf,
    /// Number of dispersed flights.
    #[arg(long, default_value_t = 1000, value_name = "N")]
    pub samples: usize,
    /// Seed of the study (the same seed gives the same report on any thread count).
    #[arg(long, default_value_t = 1, value_name = "S")]
    pub seed: u64,
    /// Fly every guided arc open loop: the steering the guidance computes at that arc's start on
    /// the nominal flight, frozen.
    #[arg(long)]
    pub open_loop: bool,
    /// Probability that the reserve covers the need (default: the file's, else 0.997).
    #[arg(long, value_name = "P")]
    pub probability: Option<f64>,
    /// Confidence of the reserve (default: the file's, else 0.90).
    #[arg(long, value_name = "C")]
    pub confidence: Option<f64>,
    /// A sample meets the target when its apsides are within this, km.
    #[arg(long, default_value_t = kickturn::app::outcome::APSIS_TOL_KM, value_name = "KM")]
    pub apsis_tol_km: f64,
    /// … and its inclination within this, deg.
    #[arg(long, default_value_t = kickturn::app::outcome::INCLINATION_TOL_DEG, value_name = "DEG")]
    pub inclination_tol_deg: f64,
    /// Read the `dispersions` section from this JSON file instead of the problem file (the file
    /// holds the section's object itself).
    #[arg(long, value_name = "FILE")]
    pub dispersions: Option<PathBuf>,
    /// Re-fly sample K alone and print its flight report (text, or `--json`).
    #[arg(long, value_name = "K")]
    pub sample: Option<usize>,
    /// Print one JSON object instead of the text report.
    #[arg(long)]
    pub json: bool,
    /// Write one CSV row per sample to this file.
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// Write the figures (PNG and SVG) into this folder.
    #[arg(long, value_name = "DIR")]
    pub plot: Option<PathBuf>,
    /// Write a self-contained HTML report (text and figures) to this file.
    #[arg(long, value_name = "FILE.html")]
    pub report: Option<PathBuf>,
}

fn load(a: &DispersionsArgs) -> anyhow::Result<Case> {
    let case = load_case(&a.problem)?;
    let Some(path) = &a.dispersions else {
        return Ok(case);
    };
    let text = read_text(path)?;
    let d: DispersionsFile = serde_json::from_str(&text)
        .with_context(|| format!("{}: not a dispersions section", path.display()))?;
    let mut file = case.file.clone();
    file.dispersions = Some(d);
    let mut c = Case::from_file(file).with_context(|| format!("{}", path.display()))?;
    c.problem.input_sha256 = case.problem.input_sha256;
    Ok(c)
}

/// Runs `dispersions`.
pub fn run(a: &DispersionsArgs) -> anyhow::Result<u8> {
    let mut outputs = Vec::new();
    if let Some(p) = &a.csv {
        outputs.push(("--csv", p.as_path(), OutputKind::File));
    }
    if let Some(p) = &a.plot {
        outputs.push(("--plot", p.as_path(), OutputKind::Folder));
    }
    if let Some(p) = &a.report {
        outputs.push(("--report", p.as_path(), OutputKind::File));
    }
    let mut inputs = vec![a.problem.as_path()];
    if let Some(d) = &a.dispersions {
        inputs.push(d.as_path());
    }
    check_outputs(&inputs, &outputs)?;
    super::io::check_json_stdout(a.json)?;
    let case = load(a)?;
    let o = DispersionOptions {
        samples: a.samples,
        seed: a.seed,
        open_loop: a.open_loop,
        probability: a.probability,
        confidence: a.confidence,
        apsis_tol_km: a.apsis_tol_km,
        inclination_tol_deg: a.inclination_tol_deg,
    };
    let flag = |e: kickturn::app::Error| -> anyhow::Result<u8> {
        if let kickturn::app::Error::Option { option, reason } = &e {
            bail!("--{}: {reason}", option.replace('_', "-"));
        }
        app_error(&a.problem, e, a.json)
    };
    if let Some(k) = a.sample {
        if a.csv.is_some() || a.plot.is_some() || a.report.is_some() {
            bail!("--sample prints one flight; --csv, --plot and --report belong to the study");
        }
        let run = match dispersions::fly_one(&case, &o, k, None) {
            Ok(r) => r,
            Err(e) => return flag(e),
        };
        if a.json {
            let v = serde_json::json!({ "sample": run.sample, "flight": run.report });
            emit_report(&format!("{}\n", serde_json::to_string_pretty(&v)?))?;
        } else {
            let draws: Vec<String> = run
                .sample
                .draws
                .iter()
                .map(|d| format!("{d:+.4}"))
                .collect();
            emit_report(&format!(
                "sample {} of seed {} (sample seed {:#018x}); draws in the order of the study's \
                 quantities: {}\n{}",
                k,
                a.seed,
                run.sample.sample_seed,
                draws.join(" "),
                render::text::render(&run.report)
            ))?;
        }
        return Ok(exit_code(run.sample.target_met));
    }
    let report = match dispersions::run(&case, &o, &Progress::new()) {
        Ok(r) => r,
        Err(e) => return flag(e),
    };
    if let Some(path) = &a.csv {
        write_atomic(
            path,
            &a.problem,
            render::dispersions::csv(&report).as_bytes(),
        )?;
    }
    if let Some(dir) = &a.plot {
        super::io::write_figures(
            dir,
            &a.problem,
            &render::figures::dispersion_figures(&report)?,
        )?;
    }
    if let Some(path) = &a.report {
        let page = render::html::dispersions_page(&report)?;
        write_atomic(path, &a.problem, page.as_bytes())?;
    }
    if a.json {
        emit_report(&format!("{}\n", serde_json::to_string_pretty(&report)?))?;
    } else {
        emit_report(&render::dispersions::text(&report))?;
    }
    Ok(exit_code(report.succeeded()))
}
