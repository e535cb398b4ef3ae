//! Text tables of the studies: sweep points, side-by-side comparison, trade factors.

use std::fmt::Write as _;

use crate::app::outcome::CAUTION;
use crate::app::study::{CompareReport, Point, SweepReport, TradeReport};
use crate::core::optimize::Objective;
use crate::render::table::{Align, Table};

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
    let r_ = Align::Right;
    let mut t = Table::new(&[
        (label, r_),
        ("status", r_),
        ("payload kg", r_),
        ("margin kg", r_),
        ("ideal m/s", r_),
        ("gravity m/s", r_),
        ("drag m/s", r_),
        ("steering m/s", r_),
        ("back-p m/s", r_),
        ("Earth rot m/s", r_),
        ("incl deg", r_),
        ("q kPa", r_),
    ]);
    for p in pts {
        let value = format!("{:.3}", p.value);
        match &p.report {
            Some(r) => {
                let b = &r.flight.budget;
                let f1 = |x: f64| format!("{x:.1}");
                t.row(vec![
                    value,
                    status_word(p).into(),
                    f1(r.payload_kg),
                    f1(r.margin_kg),
                    f1(b.ideal_mps),
                    f1(b.gravity_loss_mps),
                    f1(b.drag_loss_mps),
                    f1(b.steering_loss_mps),
                    f1(b.back_pressure_loss_mps),
                    f1(b.earth_rotation_mps),
                    format!("{:.3}", r.flight.orbit.inclination_deg),
                    format!("{:.2}", r.flight.max_dynamic_pressure_pa / 1e3),
                ]);
            }
            None => {
                let m = p.message.as_deref().unwrap_or("");
                t.row_with_note(vec![value, status_word(p).into()], m.into());
            }
        }
    }
    s.push_str(&t.render("  "));
    let _ = writeln!(
        s,
        "budget terms in Earth-relative bookkeeping (Earth rotation: inertial − relative speed at cutoff)"
    );
    let _ = writeln!(s, "CAUTION: {}", CAUTION);
    s
}

/// The comparison as a table, one column per problem.
pub fn compare(r: &CompareReport) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "comparison of solved ascents (Earth-relative bookkeeping)"
    );
    // Each column as wide as its problem's full name (two variants may share a long prefix).
    let mut head: Vec<(&str, Align)> = vec![("", Align::Left)];
    head.extend(
        r.problems
            .iter()
            .map(|(name, _)| (name.as_str(), Align::Right)),
    );
    let mut t = Table::new(&head);
    type Get = fn(&crate::app::solve::SolveReport) -> f64;
    let rows: [(&str, Get); 14] = [
        ("payload kg", |r| r.payload_kg),
        ("propellant used kg", |r| r.propellant_used_kg),
        ("margin after reserves kg", |r| r.margin_kg),
        ("margin m/s", |r| r.margin_mps),
        ("ideal ΔV m/s", |r| r.flight.budget.ideal_mps),
        ("gravity loss m/s", |r| r.flight.budget.gravity_loss_mps),
        ("drag loss m/s", |r| r.flight.budget.drag_loss_mps),
        ("steering loss m/s", |r| r.flight.budget.steering_loss_mps),
        ("back-pressure loss m/s", |r| {
            r.flight.budget.back_pressure_loss_mps
        }),
        ("Earth rotation (at cutoff) m/s", |r| {
            r.flight.budget.earth_rotation_mps
        }),
        ("rotating-frame gain m/s", |r| {
            r.flight.budget.rotating_frame_mps
        }),
        ("inertial speed at cutoff m/s", |r| {
            r.flight.budget.final_speed_mps
        }),
        ("max-Q kPa", |r| r.flight.max_dynamic_pressure_pa / 1e3),
        ("max axial acceleration g0", |r| r.flight.max_axial_accel_g),
    ];
    let mut status = vec!["status".to_string()];
    status.extend(r.problems.iter().map(|(_, p)| status_word(p).to_string()));
    t.row(status);
    for (label, get) in rows {
        let mut cells = vec![label.to_string()];
        cells.extend(r.problems.iter().map(|(_, p)| match &p.report {
            Some(rep) => format!("{:.1}", get(rep)),
            None => "-".into(),
        }));
        t.row(cells);
    }
    s.push_str(&t.render("  "));
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
    let mut t = Table::new(&[
        ("parameter", Align::Left),
        ("factor", Align::Right),
        ("unit", Align::Left),
        ("step", Align::Left),
    ]);
    for f in &r.factors {
        let cells = vec![
            f.name.clone(),
            format!("{:+.4}", f.factor),
            f.unit.to_string(),
            format!("±{} {}", f.step, f.step_unit),
        ];
        if f.ok {
            t.row(cells);
        } else {
            t.row_with_note(cells, "(a perturbed solve missed the target)".into());
        }
    }
    s.push_str(&t.render("  "));
    let ideal: Vec<String> = r
        .ideal_isp_factors
        .iter()
        .map(|x| format!("{x:+.2}"))
        .collect();
    let _ = writeln!(
        s,
        "rocket-equation ideal Isp factors by stage (kg per 1 s of Isp, no losses, no boosters): {}",
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
