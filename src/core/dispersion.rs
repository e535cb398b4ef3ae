//! Launch-day dispersions: the dispersed quantities, their draws, a dispersed copy of a problem,
//! and the statistics of a sample of flights (order statistics for the flight performance
//! reserve, rank correlation for the contributors, a normal fit where the sample is too small).
//!
//! Every draw comes from [`random::stream`]`(seed, index)`, split again per quantity, so that
//! sample `index` is the same on any thread count and in any order, and adding or removing one
//! quantity leaves the others' draws unchanged.
//!
//! # References
//! - Pinson & Hanson, "Calculating Launch-Vehicle Flight Performance Reserve", J. Spacecraft and
//!   Rockets 49, 353–363, 2012 (the reserve from dispersed closed-loop flights).
//! - Hanson & Beard, "Applying Monte Carlo Simulation to Launch Vehicle Design and Requirements
//!   Verification", J. Spacecraft and Rockets 49(1), 2012 (order statistics, sample counts).
//! - Wilks, "Determination of sample sizes for setting tolerance limits", Ann. Math. Stat. 12,
//!   1941 (from memory): the smallest of n samples bounds the (1 − p) quantile with confidence
//!   1 − pⁿ.
//! - Box & Muller, "A note on the generation of random normal deviates", Ann. Math. Stat. 29,
//!   1958 (from memory).
//! - Spearman's rank correlation: Pearson's correlation of the ranks, ties at mean rank (any
//!   statistics text).

use crate::core::error::{in_range, ProblemError};
use crate::core::physics::environment::AtmosphereModel;
use crate::core::problem::file::{DispersionsFile, SpreadFile};
use crate::core::problem::Problem;
use crate::core::random::{stream, SplitMix64};

/// Default probability that the reserve covers the need.
pub const DEFAULT_PROBABILITY: f64 = 0.997;
/// Default confidence of that statement.
pub const DEFAULT_CONFIDENCE: f64 = 0.90;
/// Drawn factors are kept at or above this (a normal tail must not make a mass or thrust ≤ 0).
const MIN_FACTOR: f64 = 0.05;

/// A distribution of one quantity, in its unit (% or s), zero-centred unless bounds say otherwise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Spread {
    /// Normal, mean 0, this standard deviation.
    Normal {
        /// Standard deviation.
        sigma: f64,
    },
    /// Uniform on [lo, hi].
    Uniform {
        /// Low bound.
        lo: f64,
        /// High bound.
        hi: f64,
    },
}

impl Spread {
    /// One draw from generator `g` (two uniforms for a normal: Box–Muller).
    pub fn draw(&self, g: &mut SplitMix64) -> f64 {
        match *self {
            Spread::Normal { sigma } => {
                // u1 in (0, 1]: ln u1 finite.
                let u1 = 1.0 - g.uniform();
                let u2 = g.uniform();
                sigma * (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
            }
            Spread::Uniform { lo, hi } => lo + (hi - lo) * g.uniform(),
        }
    }

    /// Standard deviation.
    pub fn sigma(&self) -> f64 {
        match *self {
            Spread::Normal { sigma } => sigma,
            Spread::Uniform { lo, hi } => (hi - lo) / 12f64.sqrt(),
        }
    }

    /// How the report states it.
    pub fn describe(&self, unit: &str) -> String {
        match *self {
            Spread::Normal { sigma } => format!("normal, 3σ = {} {unit}", 3.0 * sigma),
            Spread::Uniform { lo, hi } => format!("uniform [{lo}, {hi}] {unit}"),
        }
    }
}

/// Which dispersed quantity.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// Vacuum thrust, %.
    Thrust,
    /// Vacuum Isp, s.
    Isp,
    /// Propellant loaded, %.
    Propellant,
    /// Dry mass, %.
    DryMass,
    /// Drag coefficient factor, %.
    CdScale,
    /// Air density factor, %.
    DensityScale,
}

impl Kind {
    /// Key in the `dispersions` section.
    pub fn key(&self) -> &'static str {
        match self {
            Kind::Thrust => "thrust_percent",
            Kind::Isp => "isp_s",
            Kind::Propellant => "propellant_percent",
            Kind::DryMass => "dry_mass_percent",
            Kind::CdScale => "cd_scale_percent",
            Kind::DensityScale => "density_scale_percent",
        }
    }

    /// Unit of a draw.
    pub fn unit(&self) -> &'static str {
        match self {
            Kind::Isp => "s",
            _ => "%",
        }
    }

    /// The invented placeholder default (3σ of a normal), in the unit of the key. Not data of
    /// any vehicle: replace them with the vehicle's own.
    pub fn placeholder_3sigma(&self) -> f64 {
        match self {
            Kind::Thrust => 1.0,
            Kind::Isp => 1.0,
            Kind::Propellant => 0.3,
            Kind::DryMass => 1.5,
            Kind::CdScale => 10.0,
            Kind::DensityScale => 5.0,
        }
    }

    /// Allowed magnitude of a spread's values (3σ or bounds).
    fn limit(&self) -> f64 {
        match self {
            Kind::Isp => 50.0,
            Kind::CdScale | Kind::DensityScale => 90.0,
            _ => 50.0,
        }
    }
}

/// What a dispersed quantity belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Owner {
    /// Serial stage `k`.
    Stage(usize),
    /// The strap-on boosters (one draw for the set).
    Boosters,
    /// The whole vehicle or the air.
    Flight,
}

/// One dispersed quantity.
#[derive(Debug, Clone, PartialEq)]
pub struct Variable {
    /// Name for reports, e.g. `stages[1].thrust_percent`.
    pub name: String,
    /// What is dispersed.
    pub kind: Kind,
    /// Whose.
    pub owner: Owner,
    /// Its distribution.
    pub spread: Spread,
}

/// The validated dispersion model of a problem.
#[derive(Debug, Clone, PartialEq)]
pub struct Model {
    /// The dispersed quantities, in a fixed order (stages bottom first, boosters, flight).
    pub variables: Vec<Variable>,
    /// Probability that the reserve covers the need.
    pub probability: f64,
    /// Confidence of that statement.
    pub confidence: f64,
    /// Keys that took their placeholder default.
    pub placeholders: Vec<&'static str>,
}

fn spread(path: &str, kind: Kind, s: Option<&SpreadFile>) -> Result<(Spread, bool), ProblemError> {
    let lim = kind.limit();
    match s {
        None => Ok((
            Spread::Normal {
                sigma: kind.placeholder_3sigma() / 3.0,
            },
            true,
        )),
        Some(SpreadFile {
            normal_3sigma: Some(t),
            uniform: None,
        }) => {
            let t = in_range(&format!("{path}.normal_3sigma"), *t, 0.0, lim, true)?;
            Ok((Spread::Normal { sigma: t / 3.0 }, false))
        }
        Some(SpreadFile {
            normal_3sigma: None,
            uniform: Some([lo, hi]),
        }) => {
            let lo = in_range(&format!("{path}.uniform[0]"), *lo, -lim, lim, true)?;
            let hi = in_range(&format!("{path}.uniform[1]"), *hi, -lim, lim, true)?;
            if hi < lo {
                return Err(ProblemError::invalid(
                    format!("{path}.uniform"),
                    format!("high bound {hi} is below low bound {lo}"),
                ));
            }
            Ok((Spread::Uniform { lo, hi }, false))
        }
        Some(_) => Err(ProblemError::invalid(
            path,
            "give exactly one of `normal_3sigma` or `uniform`",
        )),
    }
}

impl Model {
    /// Validates the `dispersions` section (absent: every placeholder) for problem `p`.
    pub fn from_file(f: Option<&DispersionsFile>, p: &Problem) -> Result<Model, ProblemError> {
        let d = f.cloned().unwrap_or_default();
        let probability = in_range(
            "dispersions.probability",
            d.probability.unwrap_or(DEFAULT_PROBABILITY),
            0.5,
            1.0,
            false,
        )?;
        let confidence = in_range(
            "dispersions.confidence",
            d.confidence.unwrap_or(DEFAULT_CONFIDENCE),
            0.0,
            1.0,
            false,
        )?;
        let mut placeholders = Vec::new();
        let mut get = |kind: Kind, s: Option<&SpreadFile>| -> Result<Spread, ProblemError> {
            let (sp, ph) = spread(&format!("dispersions.{}", kind.key()), kind, s)?;
            if ph {
                placeholders.push(kind.key());
            }
            Ok(sp)
        };
        let per_engine = [
            (Kind::Thrust, get(Kind::Thrust, d.thrust_percent.as_ref())?),
            (Kind::Isp, get(Kind::Isp, d.isp_s.as_ref())?),
            (
                Kind::Propellant,
                get(Kind::Propellant, d.propellant_percent.as_ref())?,
            ),
            (
                Kind::DryMass,
                get(Kind::DryMass, d.dry_mass_percent.as_ref())?,
            ),
        ];
        let cd = get(Kind::CdScale, d.cd_scale_percent.as_ref())?;
        let rho = get(Kind::DensityScale, d.density_scale_percent.as_ref())?;
        let mut variables = Vec::new();
        for k in 0..p.vehicle.stages.len() {
            for (kind, s) in per_engine {
                variables.push(Variable {
                    name: format!("stages[{k}].{}", kind.key()),
                    kind,
                    owner: Owner::Stage(k),
                    spread: s,
                });
            }
        }
        if p.vehicle.boosters.is_some() {
            for (kind, s) in per_engine {
                variables.push(Variable {
                    name: format!("boosters.{}", kind.key()),
                    kind,
                    owner: Owner::Boosters,
                    spread: s,
                });
            }
        }
        variables.push(Variable {
            name: Kind::CdScale.key().into(),
            kind: Kind::CdScale,
            owner: Owner::Flight,
            spread: cd,
        });
        if !matches!(p.environment.atmosphere, AtmosphereModel::Vacuum) {
            variables.push(Variable {
                name: Kind::DensityScale.key().into(),
                kind: Kind::DensityScale,
                owner: Owner::Flight,
                spread: rho,
            });
        }
        Ok(Model {
            variables,
            probability,
            confidence,
            placeholders,
        })
    }

    /// The draws of sample `index` of a study seeded `seed`, one per variable (in its unit).
    pub fn draw(&self, seed: u64, index: u64) -> Vec<f64> {
        let sample_seed = sample_seed(seed, index);
        self.variables
            .iter()
            .enumerate()
            .map(|(j, v)| v.spread.draw(&mut stream(sample_seed, j as u64)))
            .collect()
    }

    /// A copy of `p` with the draws `d` (one per variable) applied.
    pub fn apply(&self, p: &Problem, d: &[f64]) -> Problem {
        let mut q = p.clone();
        let factor = |x: f64| (1.0 + x / 100.0).max(MIN_FACTOR);
        for (v, x) in self.variables.iter().zip(d) {
            let x = *x;
            let (engine, dry, prop) = match v.owner {
                Owner::Stage(k) => match q.vehicle.stages.get_mut(k) {
                    Some(s) => (
                        Some(&mut s.engine),
                        Some(&mut s.dry_mass_kg),
                        Some(&mut s.propellant_kg),
                    ),
                    None => (None, None, None),
                },
                Owner::Boosters => match q.vehicle.boosters.as_mut() {
                    Some(b) => (
                        Some(&mut b.engine),
                        Some(&mut b.dry_mass_kg),
                        Some(&mut b.propellant_kg),
                    ),
                    None => (None, None, None),
                },
                Owner::Flight => (None, None, None),
            };
            match v.kind {
                Kind::Thrust => {
                    if let Some(e) = engine {
                        e.thrust_vac_n *= factor(x);
                    }
                }
                Kind::Isp => {
                    if let Some(e) = engine {
                        e.isp_vac_s = (e.isp_vac_s + x).max(MIN_FACTOR * e.isp_vac_s);
                    }
                }
                Kind::Propellant => {
                    if let Some(m) = prop {
                        *m *= factor(x);
                    }
                }
                Kind::DryMass => {
                    if let Some(m) = dry {
                        *m *= factor(x);
                    }
                }
                Kind::CdScale => {
                    let k = factor(x);
                    for s in &mut q.vehicle.stages {
                        s.aero.cd_scale *= k;
                    }
                    if let Some(b) = q.vehicle.boosters.as_mut() {
                        b.aero.cd_scale *= k;
                    }
                }
                Kind::DensityScale => {
                    let k = factor(x);
                    q.environment.atmosphere = match q.environment.atmosphere {
                        AtmosphereModel::Us1976 => AtmosphereModel::Us1976Scaled(k),
                        AtmosphereModel::Us1976Scaled(k0) => AtmosphereModel::Us1976Scaled(k0 * k),
                        AtmosphereModel::Constant(mut a) => {
                            a.density_kg_m3 *= k;
                            AtmosphereModel::Constant(a)
                        }
                        AtmosphereModel::Vacuum => AtmosphereModel::Vacuum,
                    };
                }
            }
        }
        q
    }
}

/// The seed of sample `index` of a study seeded `seed` (reported, so a sample can be named).
pub fn sample_seed(seed: u64, index: u64) -> u64 {
    stream(seed, index).next_u64()
}

/// Smallest sample count for which the smallest value bounds the (1 − p) quantile with
/// confidence c: n ≥ ln(1 − c)/ln p (Wilks 1941, from memory).
pub fn wilks_min_samples(p: f64, c: f64) -> usize {
    ((1.0 - c).ln() / p.ln()).ceil().max(1.0) as usize
}

/// The order statistic (1-based rank from the smallest) that bounds the (1 − p) quantile from
/// below with confidence at least c among n samples: the largest k with
/// P(Binomial(n, 1 − p) ≥ k) ≥ c (Hanson & Beard 2012). `None` when even k = 1 is not enough
/// (n below [`wilks_min_samples`]).
pub fn lower_bound_rank(n: usize, p: f64, c: f64) -> Option<usize> {
    let q = 1.0 - p;
    if n == 0 || q <= 0.0 {
        return None;
    }
    // P(B ≥ k) = 1 − Σ_{j<k} C(n, j) qʲ pⁿ⁻ʲ, terms in logs.
    let (lq, lp) = (q.ln(), p.ln());
    let mut log_c = 0.0; // ln C(n, j)
    let mut below = 0.0; // P(B < k)
    let mut best = None;
    for k in 1..=n {
        let j = k - 1;
        if j > 0 {
            log_c += ((n - j + 1) as f64).ln() - (j as f64).ln();
        }
        below += (log_c + j as f64 * lq + (n - j) as f64 * lp).exp();
        if 1.0 - below >= c {
            best = Some(k);
        } else {
            break;
        }
    }
    best
}

/// Standard normal cumulative distribution Φ(z), by Simpson's rule on the density (accurate to
/// ~1e-12 for |z| ≤ 10).
pub fn normal_cdf(z: f64) -> f64 {
    let zc = z.clamp(-10.0, 10.0);
    let n = 2000;
    let h = zc / n as f64;
    let f = |t: f64| (-0.5 * t * t).exp();
    let mut s = f(0.0) + f(zc);
    for k in 1..n {
        s += if k % 2 == 1 { 4.0 } else { 2.0 } * f(h * k as f64);
    }
    0.5 + s * h / 3.0 / (std::f64::consts::TAU).sqrt()
}

/// The standard normal quantile Φ⁻¹(p), p in (0, 1), by bisection on [`normal_cdf`].
pub fn normal_quantile(p: f64) -> f64 {
    let (mut lo, mut hi) = (-10.0, 10.0);
    for _ in 0..80 {
        let m = 0.5 * (lo + hi);
        if normal_cdf(m) < p {
            lo = m;
        } else {
            hi = m;
        }
    }
    0.5 * (lo + hi)
}

/// Mean and sample standard deviation (n − 1); (NaN, NaN) for no values.
pub fn mean_sigma(x: &[f64]) -> (f64, f64) {
    let n = x.len() as f64;
    if x.is_empty() {
        return (f64::NAN, f64::NAN);
    }
    let m = x.iter().sum::<f64>() / n;
    if x.len() < 2 {
        return (m, 0.0);
    }
    let v = x.iter().map(|a| (a - m) * (a - m)).sum::<f64>() / (n - 1.0);
    (m, v.sqrt())
}

/// Percentile q ∈ [0, 100] of ascending `sorted` by linear interpolation between order
/// statistics (rank (n − 1)q/100); NaN for no values.
pub fn percentile(sorted: &[f64], q: f64) -> f64 {
    if sorted.is_empty() {
        return f64::NAN;
    }
    let r = (sorted.len() - 1) as f64 * q.clamp(0.0, 100.0) / 100.0;
    let (i, f) = (r.floor() as usize, r - r.floor());
    let j = (i + 1).min(sorted.len() - 1);
    sorted[i] + f * (sorted[j] - sorted[i])
}

/// Ranks (1-based, ties at their mean rank).
fn ranks(x: &[f64]) -> Vec<f64> {
    let mut idx: Vec<usize> = (0..x.len()).collect();
    idx.sort_by(|a, b| x[*a].total_cmp(&x[*b]));
    let mut r = vec![0.0; x.len()];
    let mut i = 0;
    while i < idx.len() {
        let mut j = i;
        // Ties: exactly equal values (total order), not nearly equal ones.
        while j + 1 < idx.len() && x[idx[j + 1]].total_cmp(&x[idx[i]]).is_eq() {
            j += 1;
        }
        let mean = (i + j) as f64 / 2.0 + 1.0;
        for k in i..=j {
            r[idx[k]] = mean;
        }
        i = j + 1;
    }
    r
}

/// Spearman's rank correlation of `x` and `y` (equal lengths); 0 when either is constant.
pub fn spearman(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len().min(y.len());
    if n < 2 {
        return 0.0;
    }
    let (rx, ry) = (ranks(&x[..n]), ranks(&y[..n]));
    let (mx, my) = (mean_sigma(&rx).0, mean_sigma(&ry).0);
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for k in 0..n {
        let (a, b) = (rx[k] - mx, ry[k] - my);
        sxy += a * b;
        sxx += a * a;
        syy += b * b;
    }
    if sxx <= 0.0 || syy <= 0.0 {
        0.0
    } else {
        sxy / (sxx * syy).sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn wilks_counts_match_the_published_rule() {
        // Source: n ≥ ln(1 − c)/ln p (Wilks 1941, from memory), values computed in the domain
        // brief §6: p = 0.99865, c = 0.90 → 1705; c = 0.50 → 514; p = 0.997, c = 0.90 → 767;
        // p = 0.99, c = 0.90 → 230; p = 0.99, c = 0.95 → 299.
        assert_eq!(wilks_min_samples(0.99865, 0.90), 1705);
        assert_eq!(wilks_min_samples(0.99865, 0.50), 514);
        assert_eq!(wilks_min_samples(0.997, 0.90), 767);
        assert_eq!(wilks_min_samples(0.99, 0.90), 230);
        assert_eq!(wilks_min_samples(0.99, 0.95), 299);
        // The binomial form agrees at its edge: rank 1 from n_min on, none below.
        assert_eq!(lower_bound_rank(767, 0.997, 0.90), Some(1));
        assert_eq!(lower_bound_rank(766, 0.997, 0.90), None);
        assert_eq!(lower_bound_rank(230, 0.99, 0.90), Some(1));
        assert_eq!(lower_bound_rank(229, 0.99, 0.90), None);
        // Source: binomial arithmetic (derived): n = 1000, q = 0.01: P(B ≥ 6) = 0.9329 ≥ 0.9
        // and P(B ≥ 7) = 0.8700 < 0.9, so the 6th smallest.
        assert_eq!(lower_bound_rank(1000, 0.99, 0.90), Some(6));
    }

    #[test]
    fn normal_quantiles_match_the_tables() {
        // Source: standard normal tables (any statistics text): Φ(3) = 0.998650, Φ⁻¹(0.975) =
        // 1.959964, Φ⁻¹(0.997) = 2.747781.
        assert!((normal_cdf(3.0) - 0.998_650_102).abs() < 1e-9);
        assert!((normal_quantile(0.975) - 1.959_964).abs() < 1e-6);
        assert!((normal_quantile(0.997) - 2.747_781).abs() < 1e-6);
    }

    #[test]
    fn spearman_of_monotone_and_reversed_data() {
        // Source: definition: a monotone map has ρ = 1, a reversing one −1.
        let x = [1.0, 5.0, 2.0, 8.0, 3.0];
        let y: Vec<f64> = x.iter().map(|v: &f64| v.powi(3)).collect();
        assert!((spearman(&x, &y) - 1.0).abs() < 1e-12);
        let z: Vec<f64> = x.iter().map(|v| -v).collect();
        assert!((spearman(&x, &z) + 1.0).abs() < 1e-12);
        assert!(spearman(&x, &[2.0; 5]).abs() < 1e-300);
    }

    #[test]
    fn normal_draws_have_the_asked_spread() {
        let s = Spread::Normal { sigma: 2.0 };
        let x: Vec<f64> = (0..20_000).map(|i| s.draw(&mut stream(11, i))).collect();
        let (m, sd) = mean_sigma(&x);
        // Standard errors: σ/√n = 0.014 on the mean, σ/√(2n) = 0.01 on σ.
        assert!(m.abs() < 0.06 && (sd - 2.0).abs() < 0.05, "{m} {sd}");
        let mut sorted = x.clone();
        sorted.sort_by(f64::total_cmp);
        assert!((percentile(&sorted, 50.0)).abs() < 0.06);
    }
}
