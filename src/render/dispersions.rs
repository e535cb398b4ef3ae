//! The dispersion study as text and CSV (one row per sample).

use std::fmt::Write as _;

use crate::app::dispersions::{DispersionReport, ReserveMethod, Stats};

fn stats_line(s: &mut String, what: &str, unit: &str, x: &Stats, digits: usize) {
    if x.count == 0 {
        let _ = writeln!(s, "  {what:<28} (no samples)");
        return;
    }
    let _ = writeln!(
        s,
        "  {what:<28} mean {:+.d$} {unit}, σ {:.d$}, min {:+.d$}, max {:+.d$} ({} samples)",
        x.mean,
        x.sigma,
        x.min,
        x.max,
        x.count,
        d = digits
    );
}

/// The study as a text report.
pub fn text(r: &DispersionReport) -> String {
    let mut s = String::new();
    let mode = match (r.guided_arcs, r.open_loop) {
        (0, _) => "open loop (the program has no guided arc)".to_string(),
        (n, false) => format!("closed loop ({n} guided arc(s), re-solved every cycle)"),
        (n, true) => {
            format!("open loop: the {n} guided arc(s) frozen to the nominal flight's steering")
        }
    };
    let _ = writeln!(s, "{} | dispersions of {}", r.tool, r.problem);
    let _ = writeln!(s, "{} samples, seed {}; {mode}", r.samples, r.seed);
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "Dispersed quantities (zero-mean; * = invented placeholder, not vehicle data)"
    );
    for v in &r.variables {
        let mark = if v.placeholder { "*" } else { " " };
        let _ = writeln!(s, "  {mark} {:<34} {}", v.name, v.spread);
    }
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "Target met (±{} km apsides, ±{}° inclination): {} of {} = {:.2} %{}",
        r.apsis_tol_km,
        r.inclination_tol_deg,
        r.target_met,
        r.samples,
        100.0 * r.target_met_fraction,
        if r.nominal_target_met {
            ""
        } else {
            " (the nominal flight itself misses the target)"
        }
    );
    let _ = writeln!(s, "Orbit error, reached − target (samples in orbit)");
    stats_line(&mut s, "perigee", "km", &r.perigee_error_km, 3);
    stats_line(&mut s, "apogee", "km", &r.apogee_error_km, 3);
    stats_line(&mut s, "inclination", "deg", &r.inclination_error_deg, 4);
    let _ = writeln!(s, "Propellant remaining at insertion (samples on target)");
    stats_line(&mut s, "remaining", "kg", &r.propellant_remaining_kg, 1);
    let pct: Vec<String> = r
        .propellant_percentiles_kg
        .iter()
        .map(|(q, v)| format!("P{q}: {v:.1}"))
        .collect();
    let _ = writeln!(s, "  percentiles, kg: {}", pct.join(", "));
    let res = &r.reserve;
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "Flight performance reserve at probability {} with confidence {} (order statistics need \
         n ≥ {} samples, Wilks)",
        res.probability, res.confidence, res.min_samples
    );
    match (res.method, res.reserve_kg) {
        (ReserveMethod::OrderStatistic, Some(kg)) => {
            let _ = writeln!(
                s,
                "  order statistic: the {} smallest remaining ({:.1} kg) against the nominal {:.1} kg",
                ordinal(res.rank.unwrap_or(1)),
                res.remaining_at_probability_kg.unwrap_or(f64::NAN),
                res.nominal_remaining_kg
            );
            let _ = writeln!(s, "  reserve {kg:.1} kg{}", mps(res.reserve_mps));
        }
        (ReserveMethod::NormalFit, Some(kg)) => {
            let _ = writeln!(
                s,
                "  NORMAL FIT (estimate: {} samples are fewer than {}, no confidence level): \
                 mean − z·σ = {:.1} kg against the nominal {:.1} kg",
                r.samples,
                res.min_samples,
                res.remaining_at_probability_kg.unwrap_or(f64::NAN),
                res.nominal_remaining_kg
            );
            let _ = writeln!(
                s,
                "  reserve {kg:.1} kg{} (normal fit)",
                mps(res.reserve_mps)
            );
        }
        _ => {
            let _ = writeln!(
                s,
                "  not bounded: {} of {} samples miss the target, within the order statistic \
                 the probability needs",
                r.samples - r.target_met,
                r.samples
            );
        }
    }
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "Contributors (Spearman rank correlation with the propellant remaining; with the perigee error)"
    );
    for c in r.contributors.iter().take(8) {
        let _ = writeln!(
            s,
            "  {:<34} {:+.3}   {:+.3}",
            c.name, c.rank_correlation_propellant, c.rank_correlation_perigee
        );
    }
    let _ = writeln!(s);
    if r.failures.is_empty() {
        let _ = writeln!(s, "No sample missed the target.");
    } else {
        let _ = writeln!(
            s,
            "Samples that missed the target ({}; re-fly one with --sample K):",
            r.failures.len()
        );
        for f in r.failures.iter().take(20) {
            let _ = writeln!(
                s,
                "  sample {:>6} (seed {:#018x}): {}",
                f.index, f.sample_seed, f.reason
            );
        }
        if r.failures.len() > 20 {
            let _ = writeln!(
                s,
                "  … {} more (all in --json and --csv)",
                r.failures.len() - 20
            );
        }
    }
    let _ = writeln!(s);
    let _ = writeln!(s, "{}", r.caution);
    s
}

fn mps(v: Option<f64>) -> String {
    v.map_or(String::new(), |m| {
        format!(" (ΔV {m:.1} m/s of the last stage at the nominal insertion mass)")
    })
}

fn ordinal(k: usize) -> String {
    let suffix = match (k % 10, k % 100) {
        (1, r) if r != 11 => "st",
        (2, r) if r != 12 => "nd",
        (3, r) if r != 13 => "rd",
        _ => "th",
    };
    format!("{k}{suffix}")
}

fn opt(v: Option<f64>) -> String {
    v.map_or(String::new(), |x| format!("{x}"))
}

/// One CSV row per sample: index, seed, draws (one column per variable), status, target met,
/// orbit errors, propellant remaining.
pub fn csv(r: &DispersionReport) -> String {
    let mut s = String::from("index,sample_seed");
    for v in &r.variables {
        let _ = write!(s, ",{}", v.name);
    }
    s.push_str(
        ",status,target_met,perigee_error_km,apogee_error_km,inclination_error_deg,propellant_remaining_kg\n",
    );
    for x in &r.runs {
        let _ = write!(s, "{},{}", x.index, x.sample_seed);
        for d in &x.draws {
            let _ = write!(s, ",{d}");
        }
        let status = serde_json::to_value(x.status)
            .ok()
            .and_then(|v| v.as_str().map(str::to_string))
            .unwrap_or_default();
        let _ = writeln!(
            s,
            ",{status},{},{},{},{},{}",
            x.target_met,
            opt(x.perigee_error_km),
            opt(x.apogee_error_km),
            opt(x.inclination_error_deg),
            x.propellant_remaining_kg
        );
    }
    s
}
