//! Text rendering of a solve: the verdict, the search, the tuned program, then the flight report.

use std::fmt::Write as _;

use super::text;
use crate::app::solve::SolveReport;
use crate::core::optimize::{Convergence, SolveStatus};

fn status_line(c: &Convergence) -> &'static str {
    match c.status {
        SolveStatus::Converged => "SOLVED",
        SolveStatus::BudgetExhausted => {
            "STOPPED: the wall-time or trajectory budget ended the search"
        }
        SolveStatus::IterationLimit => "SOLVED (the outer search stopped at its iteration limit)",
        SolveStatus::Infeasible => "NOT SOLVED: no program found reaches the target",
        SolveStatus::Stalled => {
            "NOT CONVERGED: the target is met, but no improving step was found and the \
             optimality test did not pass"
        }
    }
}

/// The tuned variables as a table: field, the file's value → the tuned one, and a flag where the
/// tuned value sits on a bound (its optimum may lie beyond).
fn tuned_table(tuned: &[crate::app::solve::Tuned]) -> String {
    use super::table::{angle_0_360, Align, Table};
    let mut t = Table::new(&[
        ("field", Align::Left),
        ("written", Align::Right),
        ("", Align::Left),
        ("tuned", Align::Right),
        ("", Align::Left),
    ]);
    for x in tuned {
        let angle = x.field.ends_with("azimuth_deg") || x.field.ends_with("heading_deg");
        let show = |v: f64| {
            if angle {
                angle_0_360(v, 6)
            } else {
                format!("{v:.6}")
            }
        };
        let bound = match x.at_bound {
            None => "",
            Some(crate::app::solve::AtBound::Lower) => "(at its lower bound)",
            Some(crate::app::solve::AtBound::Upper) => "(at its upper bound)",
        };
        t.row(vec![
            x.field.clone(),
            x.written.map_or_else(|| "(none)".into(), show),
            "→".into(),
            show(x.value),
            bound.into(),
        ]);
    }
    t.render("  ")
}

/// Text rendering: the solve verdict, the tuned program, then the flight report.
pub fn render(r: &SolveReport) -> String {
    let mut s = summary(r);
    s.push('\n');
    s.push_str(&text::render(&r.flight));
    s
}

/// The solve's own part of the report: verdict, search, residuals, tuned program, active limits
/// and richer programs (no blank line inside).
pub fn summary(r: &SolveReport) -> String {
    let mut s = String::new();
    let c = &r.convergence;
    let met = r.flight.reached_orbit() && r.flight.target_deviation.is_some_and(|d| d.met);
    // The target met by a program that breaks a limit (the least max-Q a program reaching
    // the target can fly is above the limit): the cause first, no margin.
    let limit_broken = met && c.status == SolveStatus::Infeasible && r.failure_cause.is_some();
    if limit_broken {
        let _ = writeln!(
            s,
            "NOT SOLVED: {}. The best program's flight reaches the target only beyond that limit, \
             so it has no margin; propellant used {:.1} kg, left {:.1} kg, payload {:.1} kg",
            r.failure_cause.as_deref().unwrap_or_default(),
            r.propellant_used_kg,
            r.propellant_remaining_kg,
            r.payload_kg
        );
    } else if met {
        // A limit no program can hold (a stage that cannot throttle low enough for the
        // acceleration limit) stands beside the verdict, not only in the list below.
        let over = r
            .active_constraints
            .iter()
            .filter(|a| a.contains("EXCEEDED"))
            .filter_map(|a| a.split(':').next())
            .collect::<Vec<_>>();
        let verdict = if over.is_empty() {
            status_line(c).to_string()
        } else {
            format!("{} (limit exceeded: {})", status_line(c), over.join(", "))
        };
        let _ = writeln!(
            s,
            "{}: propellant used {:.1} kg, left {:.1} kg, reserves {:.1} kg, margin {:.1} kg \
             ({:.1} m/s), payload {:.1} kg",
            verdict,
            r.propellant_used_kg,
            r.propellant_remaining_kg,
            r.reserves.total_kg(),
            r.margin_kg,
            r.margin_mps,
            r.payload_kg
        );
    } else {
        // A flight that misses the target has no margin to show (the propellant left is that of
        // a different, failed flight).
        let head = match (&r.failure_cause, c.status) {
            (Some(cause), SolveStatus::Infeasible) => format!("NOT SOLVED: {cause}"),
            (Some(cause), _) => format!("{}; {cause}", status_line(c)),
            (None, _) => status_line(c).to_string(),
        };
        let _ = writeln!(
            s,
            "{}{}he tuned program's flight does not reach the target, so it has no margin; \
             propellant used {:.1} kg, left {:.1} kg, payload {:.1} kg",
            head,
            if r.failure_cause.is_some() {
                ". T"
            } else {
                ": t"
            },
            r.propellant_used_kg,
            r.propellant_remaining_kg,
            r.payload_kg
        );
    }
    let _ = writeln!(
        s,
        "search: {} outer iterations, {} trajectories, {:.2} s; {}",
        c.iterations, c.trajectories, c.wall_s, c.reason
    );
    if let Some(short) = r.shortfall_mps {
        let apo = r
            .flight
            .orbit
            .apogee_alt_km
            .map_or("unbound".into(), |a| format!("{a:.1} km"));
        let _ = writeln!(
            s,
            "best program found: {short:.1} m/s short of the target energy; apogee {apo}, perigee {:.1} km",
            r.flight.orbit.perigee_alt_km
        );
    }
    let res: Vec<String> = c
        .terminal_residuals
        .iter()
        .map(|(n, v)| format!("{n} {v:+.3e}"))
        .collect();
    let _ = writeln!(s, "terminal residuals: {}", res.join(", "));
    let _ = writeln!(
        s,
        "tuned program (in flight order; written in the file → tuned; headings in [0, 360)°):"
    );
    s.push_str(&tuned_table(&r.tuned));
    for a in &r.active_constraints {
        let _ = writeln!(s, "active: {a}");
    }
    if let Some(x) = &r.refinement {
        let _ = writeln!(
            s,
            "refinement (free thrust direction, {} nodes per powered arc, {} variables): {}; {} \
             trajectories; {}",
            x.nodes_per_arc,
            x.variables,
            serde_json::to_value(x.status)
                .ok()
                .and_then(|v| v.as_str().map(str::to_string))
                .unwrap_or_default(),
            x.trajectories,
            x.reason
        );
        let _ = writeln!(
            s,
            "  simple program {:.1} kg, refined {:.1} kg: the simple program's gap is {:.1} kg \
             ({:.2} m/s of last-stage ΔV); {}",
            x.simple_propellant_used_kg,
            x.refined_propellant_used_kg,
            x.gap_kg,
            x.gap_mps,
            if x.kept {
                "the refined program is the one reported and written"
            } else {
                "the refined program is not kept (it misses the target, exceeds a path limit or \
                 saves nothing): the simple program is reported"
            }
        );
    }
    if !r.sensitivities.is_empty() {
        let _ = writeln!(
            s,
            "sensitivities of the optimum (from its multipliers; no re-solve):"
        );
        for x in &r.sensitivities {
            let what = if x.of == "payload_kg" {
                "payload"
            } else {
                "propellant"
            };
            let _ = writeln!(
                s,
                "  {:<40} {:>+10.2} kg {what} per {}",
                x.field, x.kg_per_unit, x.per
            );
        }
    }
    for x in &r.richer_programs {
        let _ = writeln!(
            s,
            "richer program: {} would gain {:.1} kg (propellant saved, or payload in the payload mode; {:.1} m/s of last-stage ΔV) [{}]",
            x.variant, x.saves_kg, x.saves_mps, x.how
        );
    }
    s
}
