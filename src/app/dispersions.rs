//! `dispersions`: the program flown N times with launch-day dispersions drawn from the problem's
//! `dispersions` section, in parallel, and the flight performance reserve sized from the
//! propellant left at insertion (docs/method.md §14).
//!
//! Sample `k` of seed `S` is the same flight on any thread count and in any order (its draws come
//! from `random::stream`), and the report is built from the samples in index order, so the same
//! seed gives a byte-identical report. A study can be split: [`run_samples`] flies any subset of
//! the indices (e.g. one task of a cluster) and [`report_from_samples`] builds the report from
//! all the samples gathered in index order; [`run`] is the two in one process. `--open-loop` flies the same samples with every guided arc
//! replaying, open loop, the commands the guidance gave on the nominal flight.

use std::sync::{Arc as Shared, Mutex};

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::outcome::{FlightReport, Status, APSIS_TOL_KM, CAUTION, INCLINATION_TOL_DEG};
use super::{tool_version, Case, Error};
use crate::core::dispersion::{self, Model};
use crate::core::observe::Observer;
use crate::core::physics::environment::Local;
use crate::core::problem::Problem;
use crate::core::sim::{self, Flight};
use crate::core::steering::{
    ActiveLaw, Arc, ArcStart, Guidance, GuidanceInput, Plan, SharedLaw, Steering, SteeringLaw,
};
use nalgebra::Vector3;

/// Largest sample count.
pub const MAX_SAMPLES: usize = 1_000_000;
/// Percentiles of the propellant remaining that the report lists.
pub const PERCENTILES: [f64; 7] = [0.5, 1.0, 5.0, 50.0, 95.0, 99.0, 99.5];

/// Options of a dispersion study.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DispersionOptions {
    /// Number of samples.
    pub samples: usize,
    /// Seed of the study.
    pub seed: u64,
    /// Fly every guided arc open loop (replaying the nominal flight's guidance commands).
    pub open_loop: bool,
    /// Probability that the reserve covers the need (`None`: the file's, else 0.997).
    pub probability: Option<f64>,
    /// Confidence (`None`: the file's, else 0.90).
    pub confidence: Option<f64>,
    /// A sample meets the target when its apsides are within this, km (default: the insertion
    /// tolerance of every command, 0.1 km).
    pub apsis_tol_km: f64,
    /// … and its inclination within this, deg (default 0.001°).
    pub inclination_tol_deg: f64,
}

impl Default for DispersionOptions {
    fn default() -> Self {
        DispersionOptions {
            samples: 1000,
            seed: 1,
            open_loop: false,
            probability: None,
            confidence: None,
            apsis_tol_km: APSIS_TOL_KM,
            inclination_tol_deg: INCLINATION_TOL_DEG,
        }
    }
}

/// One dispersed quantity as the report states it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VariableInfo {
    /// Name, e.g. `stages[1].thrust_percent`.
    pub name: String,
    /// Unit of its draws (`%` or `s`).
    pub unit: &'static str,
    /// The distribution, in words.
    pub spread: String,
    /// The value is the invented placeholder default (the file does not give it).
    pub placeholder: bool,
}

/// One flown sample (read back by [`report_from_samples`] when the samples were flown elsewhere).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Sample {
    /// Index of the sample (0-based): `--sample K` re-flies it alone.
    pub index: usize,
    /// Its own seed (derived from the study's seed and the index).
    pub sample_seed: u64,
    /// The draws, one per variable, in its unit.
    pub draws: Vec<f64>,
    /// How the flight ended.
    pub status: Status,
    /// In orbit and within the study's tolerance of the target (apsides, inclination).
    pub target_met: bool,
    /// Perigee altitude error, km (orbit reached).
    pub perigee_error_km: Option<f64>,
    /// Apogee altitude error, km (bound orbit).
    pub apogee_error_km: Option<f64>,
    /// Inclination error, deg.
    pub inclination_error_deg: Option<f64>,
    /// Propellant left in the last stage(s) at the end of the flight, kg.
    pub propellant_remaining_kg: f64,
}

/// Statistics of a set of values.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Stats {
    /// Number of values.
    pub count: usize,
    /// Mean.
    pub mean: f64,
    /// Sample standard deviation.
    pub sigma: f64,
    /// Smallest.
    pub min: f64,
    /// Largest.
    pub max: f64,
}

impl Stats {
    fn of(x: &[f64]) -> Stats {
        let (mean, sigma) = dispersion::mean_sigma(x);
        Stats {
            count: x.len(),
            mean,
            sigma,
            min: x.iter().copied().fold(f64::INFINITY, f64::min),
            max: x.iter().copied().fold(f64::NEG_INFINITY, f64::max),
        }
    }
}

/// How the reserve was found.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ReserveMethod {
    /// The k-th smallest propellant remaining (distribution-free, at the stated confidence).
    OrderStatistic,
    /// Mean − z_p σ of a normal fitted to the propellant remaining: an estimate without a
    /// confidence level (too few samples for order statistics).
    NormalFit,
    /// Too many failures: the samples that did not reach the target fall inside the order
    /// statistic, so no reserve covers the probability asked.
    NotBounded,
}

/// The flight performance reserve.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Reserve {
    /// Probability that the reserve covers the need.
    pub probability: f64,
    /// Confidence.
    pub confidence: f64,
    /// Samples needed for the smallest value to bound the quantile (Wilks).
    pub min_samples: usize,
    /// Method used.
    pub method: ReserveMethod,
    /// Rank (1 = smallest) of the order statistic used.
    pub rank: Option<usize>,
    /// Propellant remaining at that probability (lower bound), kg.
    pub remaining_at_probability_kg: Option<f64>,
    /// Propellant remaining in the nominal flight, kg.
    pub nominal_remaining_kg: f64,
    /// Reserve: nominal remaining − remaining at probability, kg.
    pub reserve_kg: Option<f64>,
    /// The same as ΔV of the last stage at the nominal insertion mass, m/s.
    pub reserve_mps: Option<f64>,
}

/// A contributor to the spread.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Contributor {
    /// Variable name.
    pub name: String,
    /// Spearman rank correlation with the propellant remaining (samples on target).
    pub rank_correlation_propellant: f64,
    /// Spearman rank correlation with the perigee error (samples in orbit).
    pub rank_correlation_perigee: f64,
}

/// A sample that did not meet the target.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Failure {
    /// Sample index (`--sample K`).
    pub index: usize,
    /// Its seed.
    pub sample_seed: u64,
    /// How it ended.
    pub status: Status,
    /// Why it counts as a failure.
    pub reason: String,
}

/// The dispersion study.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DispersionReport {
    /// Tool name and version.
    pub tool: String,
    /// SHA-256 of the problem file.
    pub input_sha256: String,
    /// Problem name.
    pub problem: String,
    /// Study seed.
    pub seed: u64,
    /// Samples flown.
    pub samples: usize,
    /// The problem has guided arcs and they fly closed loop.
    pub guided: bool,
    /// `--open-loop` was asked.
    pub open_loop: bool,
    /// Number of guided arcs in the program.
    pub guided_arcs: usize,
    /// The dispersed quantities.
    pub variables: Vec<VariableInfo>,
    /// The nominal (undispersed) flight met the target.
    pub nominal_target_met: bool,
    /// Apsis tolerance of "target met", km.
    pub apsis_tol_km: f64,
    /// Inclination tolerance of "target met", deg.
    pub inclination_tol_deg: f64,
    /// Samples that met the target.
    pub target_met: usize,
    /// Fraction of samples that met the target.
    pub target_met_fraction: f64,
    /// Perigee error over the samples in orbit, km.
    pub perigee_error_km: Stats,
    /// Apogee error over the samples in a bound orbit, km.
    pub apogee_error_km: Stats,
    /// Inclination error, deg.
    pub inclination_error_deg: Stats,
    /// Propellant remaining over the samples on target, kg.
    pub propellant_remaining_kg: Stats,
    /// Its percentiles, (percent, kg).
    pub propellant_percentiles_kg: Vec<(f64, f64)>,
    /// The flight performance reserve.
    pub reserve: Reserve,
    /// Contributors, largest |rank correlation with the propellant| first (with the perigee error
    /// when fewer than two samples meet the target).
    pub contributors: Vec<Contributor>,
    /// Samples that missed the target, by index.
    pub failures: Vec<Failure>,
    /// Every sample, in index order.
    pub runs: Vec<Sample>,
    /// Caution.
    pub caution: &'static str,
}

impl DispersionReport {
    /// The study ran and the target was met by the nominal flight (the exit code's rule; the
    /// failures are results, not errors).
    pub fn succeeded(&self) -> bool {
        self.nominal_target_met
    }
}

/// One sample re-flown alone.
#[derive(Debug, Clone)]
pub struct SampleRun {
    /// The sample's summary.
    pub sample: Sample,
    /// The flight's report.
    pub report: FlightReport,
    /// The flight.
    pub flight: Flight,
}

/// Records the plans a guided arc flies (the nominal flight's), with their start times.
#[derive(Debug)]
struct Capture {
    inner: Guidance,
    arc: usize,
    seen: Shared<Mutex<Vec<(usize, f64, Plan)>>>,
}

#[derive(Debug)]
struct Recorder {
    inner: Box<dyn ActiveLaw>,
    arc: usize,
    seen: Shared<Mutex<Vec<(usize, f64, Plan)>>>,
}

impl Recorder {
    fn record(&self, t_s: f64) {
        if let (Some(p), Ok(mut v)) = (self.inner.plan(), self.seen.lock()) {
            v.push((self.arc, t_s, p));
        }
    }
}

impl SteeringLaw for Capture {
    fn file_key(&self) -> &'static str {
        "guidance"
    }
    fn start(&self, s: &ArcStart) -> Box<dyn ActiveLaw> {
        let r = Recorder {
            inner: self.inner.start(s),
            arc: self.arc,
            seen: self.seen.clone(),
        };
        r.record(s.t_s);
        Box::new(r)
    }
}

impl ActiveLaw for Recorder {
    fn direction(&self, t_s: f64, loc: &Local) -> Vector3<f64> {
        self.inner.direction(t_s, loc)
    }
    fn guidance_period_s(&self) -> Option<f64> {
        self.inner.guidance_period_s()
    }
    fn update(&mut self, now: &GuidanceInput) {
        self.inner.update(now);
        self.record(now.t_s);
    }
}

fn guided_arcs(p: &Problem) -> Vec<usize> {
    p.program
        .arcs
        .iter()
        .enumerate()
        .filter_map(|(i, a)| match a {
            Arc::Burn {
                steering: Steering::Guidance(_),
                ..
            } => Some(i),
            _ => None,
        })
        .collect()
}

/// The problem with every guided arc replaying, open loop, the plans the guidance flew on the
/// nominal flight.
fn frozen(p: &Problem) -> Problem {
    let seen = Shared::new(Mutex::new(Vec::new()));
    let mut q = p.clone();
    for i in guided_arcs(p) {
        if let Some(Arc::Burn {
            steering: s @ Steering::Guidance(_),
            ..
        }) = q.program.arcs.get_mut(i)
        {
            if let Steering::Guidance(g) = s.clone() {
                *s = Steering::Custom(SharedLaw(Shared::new(Capture {
                    inner: g,
                    arc: i,
                    seen: seen.clone(),
                })));
            }
        }
    }
    sim::fly(&q, &sim::FlyOptions::default());
    let plans = seen.lock().map(|v| v.clone()).unwrap_or_default();
    let mut out = p.clone();
    for i in guided_arcs(p) {
        if let Some(Arc::Burn {
            steering: Steering::Guidance(g),
            ..
        }) = out.program.arcs.get_mut(i)
        {
            g.replay = Some(
                plans
                    .iter()
                    .filter(|(a, _, _)| *a == i)
                    .map(|(_, t, pl)| (*t, *pl))
                    .collect(),
            );
        }
    }
    out
}

/// The study's prepared inputs.
struct Prepared {
    model: Model,
    base: Problem,
    guided_arcs: usize,
}

fn prepare(case: &Case, o: &DispersionOptions) -> Result<Prepared, Error> {
    if o.samples == 0 || o.samples > MAX_SAMPLES {
        return Err(Error::Option {
            option: "samples",
            reason: format!("must lie in [1, {MAX_SAMPLES}], got {}", o.samples),
        });
    }
    for (name, v) in [
        ("apsis_tol_km", o.apsis_tol_km),
        ("inclination_tol_deg", o.inclination_tol_deg),
    ] {
        if !(v > 0.0 && v <= 1e4) {
            return Err(Error::Option {
                option: name,
                reason: format!("must lie in (0, 10000], got {}", super::show(v)),
            });
        }
    }
    let p = case.reachable()?;
    if p.target.is_none() {
        return Err(Error::Problem(crate::core::error::ProblemError::invalid(
            "target",
            "missing: dispersions measure the propellant left at the target orbit",
        )));
    }
    let mut model = Model::from_file(case.file.dispersions.as_ref(), p)?;
    for (v, name) in [(o.probability, "probability"), (o.confidence, "confidence")] {
        if let Some(x) = v {
            let (lo, hi) = if name == "probability" {
                (0.5, 1.0)
            } else {
                (0.0, 1.0)
            };
            if !(x > lo && x < hi) {
                return Err(Error::Option {
                    option: name,
                    reason: format!("must lie in ({lo}, {hi}), got {}", super::show(x)),
                });
            }
        }
    }
    model.probability = o.probability.unwrap_or(model.probability);
    model.confidence = o.confidence.unwrap_or(model.confidence);
    let n_guided = guided_arcs(p).len();
    let base = if o.open_loop && n_guided > 0 {
        frozen(p)
    } else {
        p.clone()
    };
    Ok(Prepared {
        model,
        base,
        guided_arcs: n_guided,
    })
}

fn fly_sample(
    pr: &Prepared,
    seed: u64,
    index: usize,
    record: Option<f64>,
    tol: (f64, f64),
) -> SampleRun {
    let draws = pr.model.draw(seed, index as u64);
    let p = pr.model.apply(&pr.base, &draws);
    let flight = sim::fly(
        &p,
        &sim::FlyOptions {
            record_step_s: record,
            initial: None,
        },
    );
    let report = FlightReport::new(&p, &flight);
    let d = report.target_deviation;
    let in_orbit = report.status == Status::Orbit;
    let sample = Sample {
        index,
        sample_seed: dispersion::sample_seed(seed, index as u64),
        draws,
        status: report.status,
        target_met: in_orbit
            && d.is_some_and(|d| {
                d.perigee_km.abs() <= tol.0
                    && d.apogee_km.is_some_and(|a| a.abs() <= tol.0)
                    && d.inclination_deg.is_none_or(|i| i.abs() <= tol.1)
            }),
        perigee_error_km: d.filter(|_| in_orbit).map(|d| d.perigee_km),
        apogee_error_km: d.filter(|_| in_orbit).and_then(|d| d.apogee_km),
        inclination_error_deg: d.filter(|_| in_orbit).and_then(|d| d.inclination_deg),
        propellant_remaining_kg: flight.propellant_remaining_kg,
    };
    SampleRun {
        sample,
        report,
        flight,
    }
}

/// Re-flies sample `index` of the study alone, with its time history every `record_step_s`.
///
/// # Errors
/// As [`run`].
pub fn fly_one(
    case: &Case,
    o: &DispersionOptions,
    index: usize,
    record_step_s: Option<f64>,
) -> Result<SampleRun, Error> {
    super::check_step("record_step_s", record_step_s)?;
    let pr = prepare(
        case,
        &DispersionOptions {
            samples: index.saturating_add(1).min(MAX_SAMPLES),
            ..*o
        },
    )?;
    Ok(fly_sample(
        &pr,
        o.seed,
        index,
        record_step_s,
        (o.apsis_tol_km, o.inclination_tol_deg),
    ))
}

/// Flies the study: `o.samples` dispersed flights in parallel, one [`Observer::advanced`] each;
/// [`run_samples`] of every index, then [`report_from_samples`].
///
/// # Errors
/// [`Error::Option`] for a sample count or probability out of range; [`Error::Problem`] for a
/// problem without a target or with a bad `dispersions` section; [`Error::Unreachable`] as `fly`.
pub fn run(
    case: &Case,
    o: &DispersionOptions,
    obs: &dyn Observer,
) -> Result<DispersionReport, Error> {
    let all: Vec<usize> = (0..o.samples).collect();
    // Checked before the progress starts (an empty index list is valid).
    prepare(case, o)?;
    obs.started("dispersions", o.samples);
    let runs = run_samples(case, o, &all, obs);
    obs.finished();
    report_from_samples(case, o, runs?)
}

/// Flies the samples `indices` of the study (each below `o.samples`) in parallel, one
/// [`Observer::advanced`] each, and returns them in the order of `indices`: a part of a study
/// run elsewhere (e.g. one task of a cluster). Sample `k` draws from its own stream
/// (`random::stream(seed, k)`), so any split of the indices gives the same samples as [`run`].
///
/// # Errors
/// As [`run`]; [`Error::Option`] (`indices`) for an index at or above `o.samples`.
pub fn run_samples(
    case: &Case,
    o: &DispersionOptions,
    indices: &[usize],
    obs: &dyn Observer,
) -> Result<Vec<Sample>, Error> {
    let pr = prepare(case, o)?;
    if let Some(k) = indices.iter().find(|&&k| k >= o.samples) {
        return Err(Error::Option {
            option: "indices",
            reason: format!("sample {k} is not in a study of {} samples", o.samples),
        });
    }
    let tol = (o.apsis_tol_km, o.inclination_tol_deg);
    Ok(indices
        .par_iter()
        .map(|&k| {
            let s = fly_sample(&pr, o.seed, k, None, tol).sample;
            obs.advanced();
            s
        })
        .collect())
}

/// The study's report from all its samples (`samples[k]` is sample `k`, as [`run_samples`]
/// returns them), with the nominal flight flown here: what [`run`] returns.
///
/// # Errors
/// As [`run`]; [`Error::Option`] (`samples`) when the samples are not those of the study: not
/// `o.samples` of them, out of index order, of another seed, or with another number of draws.
pub fn report_from_samples(
    case: &Case,
    o: &DispersionOptions,
    samples: Vec<Sample>,
) -> Result<DispersionReport, Error> {
    let pr = prepare(case, o)?;
    check_samples(&pr, o, &samples)?;
    let nominal_flight = sim::fly(&pr.base, &sim::FlyOptions::default());
    let nominal = FlightReport::new(&pr.base, &nominal_flight);
    Ok(summarize(case, o, &pr, samples, &nominal, &nominal_flight))
}

/// The samples are the study's, in index order.
fn check_samples(pr: &Prepared, o: &DispersionOptions, samples: &[Sample]) -> Result<(), Error> {
    let wrong = |reason: String| Error::Option {
        option: "samples",
        reason,
    };
    if samples.len() != o.samples {
        return Err(wrong(format!(
            "{} samples given for a study of {}",
            samples.len(),
            o.samples
        )));
    }
    let nvar = pr.model.variables.len();
    for (k, s) in samples.iter().enumerate() {
        if s.index != k {
            return Err(wrong(format!("sample {} given in place {k}", s.index)));
        }
        if s.sample_seed != dispersion::sample_seed(o.seed, k as u64) {
            return Err(wrong(format!("sample {k} is not of seed {}", o.seed)));
        }
        if s.draws.len() != nvar {
            return Err(wrong(format!(
                "sample {k} has {} draws for {nvar} dispersed quantities",
                s.draws.len()
            )));
        }
    }
    Ok(())
}

fn summarize(
    case: &Case,
    o: &DispersionOptions,
    pr: &Prepared,
    runs: Vec<Sample>,
    nominal: &FlightReport,
    nominal_flight: &Flight,
) -> DispersionReport {
    let p = &pr.base;
    let model = &pr.model;
    let on_target: Vec<&Sample> = runs.iter().filter(|s| s.target_met).collect();
    let prop: Vec<f64> = on_target
        .iter()
        .map(|s| s.propellant_remaining_kg)
        .collect();
    let mut sorted = prop.clone();
    sorted.sort_by(f64::total_cmp);
    let collect =
        |f: &dyn Fn(&Sample) -> Option<f64>| -> Vec<f64> { runs.iter().filter_map(f).collect() };
    let perigee = collect(&|s| s.perigee_error_km);
    let apogee = collect(&|s| s.apogee_error_km);
    let incl = collect(&|s| s.inclination_error_deg);
    // Reserve: failures count as the smallest values (they need more than the vehicle has).
    let n = runs.len();
    let failures_n = n - on_target.len();
    let nominal_remaining = nominal_flight.propellant_remaining_kg;
    let (pp, cc) = (model.probability, model.confidence);
    let min_samples = dispersion::wilks_min_samples(pp, cc);
    let (method, rank, at_p) = match dispersion::lower_bound_rank(n, pp, cc) {
        Some(k) if k > failures_n => (
            ReserveMethod::OrderStatistic,
            Some(k),
            sorted.get(k - failures_n - 1).copied(),
        ),
        Some(k) => (ReserveMethod::NotBounded, Some(k), None),
        None if failures_n == 0 && sorted.len() >= 2 => {
            let (m, s) = dispersion::mean_sigma(&sorted);
            (
                ReserveMethod::NormalFit,
                None,
                Some(m - dispersion::normal_quantile(pp) * s),
            )
        }
        None => (ReserveMethod::NotBounded, None, None),
    };
    let reserve_kg = at_p.map(|x| nominal_remaining - x);
    // ΔV of the reserve on the last stage at the nominal insertion mass: c ln(m / (m − R)).
    let m_f = nominal_flight.y1[crate::core::sim::dynamics::ix::M];
    let ve = p
        .vehicle
        .stages
        .last()
        .map_or(0.0, |s| s.engine.exhaust_velocity_mps());
    let reserve_mps = reserve_kg
        .filter(|r| *r < m_f)
        .map(|r| ve * (m_f / (m_f - r)).ln());
    let mut contributors: Vec<Contributor> = model
        .variables
        .iter()
        .enumerate()
        .map(|(j, v)| {
            let xs: Vec<f64> = on_target.iter().map(|s| s.draws[j]).collect();
            let (xo, yo): (Vec<f64>, Vec<f64>) = runs
                .iter()
                .filter_map(|s| s.perigee_error_km.map(|e| (s.draws[j], e)))
                .unzip();
            Contributor {
                name: v.name.clone(),
                rank_correlation_propellant: dispersion::spearman(&xs, &prop),
                rank_correlation_perigee: dispersion::spearman(&xo, &yo),
            }
        })
        .collect();
    // Largest first: against the propellant remaining when samples reach the target, else
    // (open loop) against the perigee error.
    let by_prop = on_target.len() >= 2;
    let key = |c: &Contributor| {
        if by_prop {
            c.rank_correlation_propellant.abs()
        } else {
            c.rank_correlation_perigee.abs()
        }
    };
    contributors.sort_by(|a, b| key(b).total_cmp(&key(a)).then_with(|| a.name.cmp(&b.name)));
    let failures = runs
        .iter()
        .filter(|s| !s.target_met)
        .map(|s| Failure {
            index: s.index,
            sample_seed: s.sample_seed,
            status: s.status,
            reason: match (s.status, s.perigee_error_km) {
                (Status::Orbit, Some(dp)) => format!(
                    "orbit off target: perigee {dp:+.3} km, apogee {} km, inclination {} deg",
                    s.apogee_error_km
                        .map_or("unbound".to_string(), |a| format!("{a:+.3}")),
                    s.inclination_error_deg
                        .map_or("-".to_string(), |i| format!("{i:+.4}"))
                ),
                (st, _) => serde_json::to_value(st)
                    .ok()
                    .and_then(|v| v.as_str().map(str::to_string))
                    .unwrap_or_default(),
            },
        })
        .collect();
    DispersionReport {
        tool: tool_version(),
        input_sha256: case.problem.input_sha256.clone(),
        problem: p.name.clone(),
        seed: o.seed,
        samples: n,
        guided: pr.guided_arcs > 0 && !o.open_loop,
        open_loop: o.open_loop,
        guided_arcs: pr.guided_arcs,
        variables: model
            .variables
            .iter()
            .map(|v| VariableInfo {
                name: v.name.clone(),
                unit: v.kind.unit(),
                spread: v.spread.describe(v.kind.unit()),
                placeholder: model.placeholders.contains(&v.kind.key()),
            })
            .collect(),
        nominal_target_met: nominal.target_deviation.is_some_and(|d| d.met)
            && nominal.reached_orbit(),
        apsis_tol_km: o.apsis_tol_km,
        inclination_tol_deg: o.inclination_tol_deg,
        target_met: on_target.len(),
        target_met_fraction: on_target.len() as f64 / n.max(1) as f64,
        perigee_error_km: Stats::of(&perigee),
        apogee_error_km: Stats::of(&apogee),
        inclination_error_deg: Stats::of(&incl),
        propellant_remaining_kg: Stats::of(&prop),
        propellant_percentiles_kg: PERCENTILES
            .iter()
            .map(|q| (*q, dispersion::percentile(&sorted, *q)))
            .collect(),
        reserve: Reserve {
            probability: pp,
            confidence: cc,
            min_samples,
            method,
            rank,
            remaining_at_probability_kg: at_p,
            nominal_remaining_kg: nominal_remaining,
            reserve_kg,
            reserve_mps,
        },
        contributors,
        failures,
        runs,
        caution: CAUTION,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::app::Silent;

    fn case() -> Case {
        let text = include_str!("../../problems/guided/medium-2stage-leo200-guided.json");
        Case::from_json(text).expect("the guided demo is valid")
    }

    #[test]
    fn a_study_split_into_parts_equals_the_whole_run() {
        let (case, o) = (
            case(),
            DispersionOptions {
                samples: 6,
                seed: 11,
                ..DispersionOptions::default()
            },
        );
        let whole = run(&case, &o, &Silent).expect("the study runs");
        // Two parts, out of order, as two cluster tasks would fly them.
        let a = run_samples(&case, &o, &[5, 1, 3], &Silent).expect("part a");
        let b = run_samples(&case, &o, &[0, 4, 2], &Silent).expect("part b");
        assert_eq!(
            a.iter().map(|s| s.index).collect::<Vec<_>>(),
            [5, 1, 3],
            "samples come back in the order of the indices"
        );
        let mut all: Vec<Sample> = a.into_iter().chain(b).collect();
        all.sort_by_key(|s| s.index);
        assert_eq!(all, whole.runs);
        // Through JSON text (how they travel between processes) they come back equal.
        let text = serde_json::to_string(&all).expect("samples serialize");
        let back: Vec<Sample> = serde_json::from_str(&text).expect("samples deserialize");
        assert_eq!(back, all);
        let report = report_from_samples(&case, &o, back).expect("the report builds");
        assert_eq!(report, whole);
        assert_eq!(report.samples, 6);
    }

    fn named<T>(r: Result<T, Error>) -> &'static str {
        match r {
            Err(Error::Option { option, .. }) => option,
            Err(e) => panic!("another error: {e}"),
            Ok(_) => panic!("accepted"),
        }
    }

    #[test]
    fn samples_not_of_the_study_are_refused_with_the_option_named() {
        let (case, o) = (
            case(),
            DispersionOptions {
                samples: 2,
                ..DispersionOptions::default()
            },
        );
        assert_eq!(named(run_samples(&case, &o, &[2], &Silent)), "indices");
        let mut s = run_samples(&case, &o, &[1, 0], &Silent).expect("two samples");
        assert_eq!(named(report_from_samples(&case, &o, s.clone())), "samples");
        s.reverse();
        let other_seed = DispersionOptions { seed: 2, ..o };
        assert_eq!(
            named(report_from_samples(&case, &other_seed, s.clone())),
            "samples"
        );
        s.pop();
        assert_eq!(named(report_from_samples(&case, &o, s)), "samples");
    }
}
