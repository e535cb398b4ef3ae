//! Text tables of the studies: sweep points, side-by-side comparison, trade factors.

use std::fmt::Write as _;

use crate::app::outcome::CAUTION;
use crate::app::study::{CompareReport, Point, SweepReport, TradeReport};
use crate::core::optimize::Objective;

/// The sweep as a table; `range` is the range as the user wrote it.
pub fn sweep(r: &SweepReport, range: &str) -> String {
    let label = r.axis.label();
    let title = format!("sweep of {label} over {range} ({} points)", r.points.len());
    points(&title, label, &r.points)
}

fn status_word(p: &Point) -> &'static str {
    p.status.as_str()
}

fn points(title: &str, label: &str, pts: &[Point]) -> String {
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
                    p.value, status_word(p), r.payload_kg, r.margin_kg, b.ideal_mps, b.gravity_loss_mps,
                    b.drag_loss_mps, b.steering_loss_mps, b.back_pressure_loss_mps,
                    b.earth_rotation_mps, r.flight.orbit.inclination_deg,
                    r.flight.max_dynamic_pressure_pa / 1e3
                );
            }
            None => {
                let m = p.message.as_deref().unwrap_or("");
                let _ = writeln!(s, "  {:>14.3} {:>16} {m}", p.value, status_word(p));
            }
        }
    }
    let _ = writeln!(
        s,
        "budget terms in m/s, Earth-relative bookkeeping (Earth rotation: inertial − relative speed at cutoff)"
    );
    let _ = writeln!(s, "CAUTION: {}", CAUTION);
    s
}

/// The comparison as a table, one column per problem.
pub fn compare(r: &CompareReport) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "comparison of solved ascents (Earth-relative bookkeeping, m/s unless noted)"
    );
    // Each column as wide as its problem's full name (two variants may share a long prefix).
    let widths: Vec<usize> = r
        .problems
        .iter()
        .map(|(name, _)| name.chars().count().max(12))
        .collect();
    let _ = write!(s, "  {:<34}", "");
    for ((name, _), w) in r.problems.iter().zip(&widths) {
        let _ = write!(s, " {name:>w$}");
    }
    let _ = writeln!(s);
    type Get = fn(&crate::app::solve::SolveReport) -> f64;
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
    for ((_, p), w) in r.problems.iter().zip(&widths) {
        let _ = write!(s, " {:>w$}", status_word(p));
    }
    let _ = writeln!(s);
    for (label, get) in rows {
        let _ = write!(s, "  {label:<34}");
        for ((_, p), w) in r.problems.iter().zip(&widths) {
            match &p.report {
                Some(rep) => {
                    let _ = write!(s, " {:>w$.1}", get(rep));
                }
                None => {
                    let _ = write!(s, " {:>w$}", "-");
                }
            }
        }
        let _ = writeln!(s);
    }
    let _ = writeln!(s, "CAUTION: {}", CAUTION);
    s
}

/// The trade factors as a table.
pub fn trade(r: &TradeReport) -> String {
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
    let _ = writeln!(s, "CAUTION: {}", CAUTION);
    s
}

/// The payload (kg) of a family of sweeps: one row per swept value, one column per family value
/// (`--family`); a point that did not solve shows its status.
pub fn family(
    axis: crate::app::study::Axis,
    family_axis: crate::app::study::Axis,
    values: &[f64],
    curves: &[(f64, Vec<crate::app::study::Point>)],
) -> String {
    use std::fmt::Write as _;
    let mut s = String::new();
    let _ = writeln!(
        s,
        "\npayload kg by {} (rows) and {} (columns)",
        axis.label(),
        family_axis.label()
    );
    let _ = write!(s, "  {:>16}", axis.label());
    for (v, _) in curves {
        let _ = write!(s, " {:>16}", crate::app::show(*v));
    }
    let _ = writeln!(s);
    for (i, x) in values.iter().enumerate() {
        let _ = write!(s, "  {:>16}", crate::app::show(*x));
        for (_, pts) in curves {
            let cell = pts.get(i).map_or(String::from("-"), |p| match &p.report {
                Some(r) if p.status == crate::app::study::PointStatus::Converged => {
                    format!("{:.1}", r.payload_kg)
                }
                // Solved but not converged (e.g. the budget ended the search): flagged.
                Some(r) => format!("{:.1}*", r.payload_kg),
                None => format!("{:?}", p.status).to_lowercase(),
            });
            let _ = write!(s, " {cell:>16}");
        }
        let _ = writeln!(s);
    }
    let _ = writeln!(
        s,
        "  * solved without convergence (see its status in a sweep of that value)"
    );
    s
}
