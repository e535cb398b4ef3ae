//! Plain-text rendering of a [`FlightReport`] for the terminal.

use std::fmt::Write;

use crate::app::outcome::{FlightReport, Status, APSIS_TOL_KM, INCLINATION_TOL_DEG};
use crate::core::budget::{Bookkeeping, Budget};

fn status_word(s: Status) -> &'static str {
    match s {
        Status::Orbit => "ORBIT REACHED",
        Status::Suborbital => "NOT IN ORBIT (suborbital)",
        Status::Escape => "NOT IN ORBIT (escape trajectory)",
        Status::GroundImpact => "NOT IN ORBIT (ground impact)",
        Status::TimeLimit => "NOT IN ORBIT (flight-time limit)",
        Status::IntegrationFailure => "NOT IN ORBIT (integration failure)",
        Status::NoStageLeft => "NOT IN ORBIT (no stage left for a burn)",
    }
}

/// The verdict lines: status and orbit, the target and the deviation from it.
pub fn verdict_text(r: &FlightReport) -> String {
    let mut s = String::new();
    verdict(r, &mut s);
    s
}

fn verdict(r: &FlightReport, s: &mut String) {
    let o = &r.orbit;
    let apo = o
        .apogee_alt_km
        .map_or("unbound".to_string(), |a| format!("{a:.1}"));
    let _ = writeln!(
        s,
        "{}: perigee × apogee {:.1} × {} km, inclination {:.3}°; propellant remaining {:.0} kg",
        status_word(r.status).to_string()
            + &o.v_infinity_mps
                .map_or(String::new(), |v| format!(", v∞ {:.3} km/s", v / 1e3)),
        o.perigee_alt_km,
        apo,
        o.inclination_deg,
        r.propellant_remaining_kg
    );
    if let Some(t) = &r.target {
        let inc = t
            .inclination_deg
            .map_or(String::new(), |i| format!(", i {i:.3}°"));
        let dev = r.target_deviation.map_or(String::new(), |d| {
            let apo = d.apogee_km.map_or("unbound".into(), |a| format!("{a:+.2} km"));
            let inc = d.inclination_deg.map_or(String::new(), |i| format!(", inclination {i:+.4}°"));
            let met = if d.met { "within" } else { "outside" };
            format!(
                " (reached − target: perigee {:+.2} km, apogee {apo}{inc}; {met} ±{APSIS_TOL_KM} km / ±{INCLINATION_TOL_DEG}°)",
                d.perigee_km
            )
        });
        let _ = writeln!(
            s,
            "target: {:.1} × {:.1} km{inc}{dev}",
            t.perigee_alt_km, t.apogee_alt_km
        );
    }
    if let crate::core::sim::EndReason::IntegrationFailure { message } = &r.end {
        let _ = writeln!(s, "integration stopped: {message}");
    }
}

fn pct(x: f64, ideal: f64) -> String {
    if ideal > 0.0 {
        format!("{:6.2}", 100.0 * x / ideal)
    } else {
        "     -".into()
    }
}

fn budget_table(b: &Budget, s: &mut String) {
    let (title, rot_label) = match b.bookkeeping {
        Bookkeeping::EarthRelative => (
            "ΔV budget, Earth-relative bookkeeping (losses along the Earth-relative velocity)",
            "Earth rotation (inertial − relative speed at cutoff)",
        ),
        Bookkeeping::Inertial => (
            "ΔV budget, inertial bookkeeping (losses along the inertial velocity)",
            "Earth rotation (inertial speed on the pad)",
        ),
    };
    let _ = writeln!(s, "\n{title}");
    let _ = writeln!(s, "  {:<52} {:>10} {:>7}", "term", "m/s", "% ideal");
    let i = b.ideal_mps;
    let rows: [(&str, f64, bool); 8] = [
        ("ideal ΔV", i, true),
        ("gravity loss", -b.gravity_loss_mps, true),
        ("drag loss", -b.drag_loss_mps, true),
        ("steering loss", -b.steering_loss_mps, true),
        ("back-pressure loss", -b.back_pressure_loss_mps, true),
        (
            "rotating-frame (centrifugal) gain",
            b.rotating_frame_mps,
            true,
        ),
        (rot_label, b.earth_rotation_mps, true),
        ("Earth-relative speed at start", b.initial_speed_mps, false),
    ];
    for (name, v, show_pct) in rows {
        let p = if show_pct {
            pct(v.abs(), i)
        } else {
            String::new()
        };
        let _ = writeln!(s, "  {name:<52} {v:>+10.2} {p:>7}");
    }
    let _ = writeln!(
        s,
        "  {:<52} {:>10.2}",
        "= inertial speed at cutoff", b.final_speed_mps
    );
    let _ = writeln!(
        s,
        "  {:<52} {:>10.2e}",
        "closure error", b.closure_error_mps
    );
}

fn arc_table(r: &FlightReport, s: &mut String) {
    let _ = writeln!(
        s,
        "\nPer-arc budget, Earth-relative bookkeeping, m/s (on a coast the gravity term is speed traded for altitude)"
    );
    let _ = writeln!(
        s,
        "  {:<24} {:>8} {:>8} {:>9} {:>9} {:>8} {:>9} {:>8} {:>6} {:>9}",
        "arc", "t0 s", "t1 s", "ideal", "gravity", "drag", "steering", "back-p", "rot", "Δspeed"
    );
    for p in &r.arcs {
        let _ = writeln!(
            s,
            "  {:<24} {:>8.2} {:>8.2} {:>9.1} {:>9.1} {:>8.1} {:>9.1} {:>8.1} {:>6.1} {:>+9.1}",
            p.label,
            p.t0_s,
            p.t1_s,
            p.ideal_mps,
            p.gravity_loss_mps,
            p.drag_loss_mps,
            p.steering_loss_mps,
            p.back_pressure_loss_mps,
            p.rotating_frame_mps,
            p.speed_change_mps
        );
    }
}

fn extremes(r: &FlightReport, s: &mut String) {
    if let Some(m) = &r.max_q {
        let lim = r.max_dynamic_pressure_limit_pa.map_or(String::new(), |l| {
            let word = if m.value > l * (1.0 + 1e-6) {
                "EXCEEDS"
            } else {
                "within"
            };
            format!(" ({word} limit {:.1} kPa)", l / 1e3)
        });
        let _ = writeln!(
            s,
            "\nmax-Q {:.2} kPa at T+{:.2} s, altitude {:.2} km, Mach {:.2}{lim}",
            m.value / 1e3,
            m.at.t_s,
            m.at.altitude_m / 1e3,
            m.at.mach
        );
    }
    let lim = r.max_axial_accel_limit_g.map_or(String::new(), |l| {
        // The throttle holds the limit to integrator precision; only a stage that cannot
        // throttle low enough exceeds it.
        let word = if r.max_axial_accel_g > l * (1.0 + 1e-6) {
            "EXCEEDS"
        } else {
            "within"
        };
        format!(" ({word} limit {l:.2} g0)")
    });
    let _ = writeln!(
        s,
        "max axial acceleration {:.3} g0{lim}",
        r.max_axial_accel_g
    );
    if let Some(m) = &r.max_q_alpha {
        let lim = r.max_q_alpha_limit_pa_deg.map_or(String::new(), |l| {
            let word = if m.value > l * (1.0 + 1e-6) {
                "EXCEEDS"
            } else {
                "within"
            };
            format!(" ({word} limit {:.1} kPa·deg)", l / 1e3)
        });
        let _ = writeln!(
            s,
            "max q·α {:.2} kPa·deg at T+{:.2} s (q {:.2} kPa, α {:.2}°){lim}",
            m.value / 1e3,
            m.at.t_s,
            m.at.dynamic_pressure_pa / 1e3,
            m.at.alpha_deg
        );
    }
}

fn events(r: &FlightReport, s: &mut String) {
    let _ = writeln!(s, "\nEvents (altitude geodetic; γ Earth-relative)");
    let _ = writeln!(
        s,
        "  {:>9} {:>9} {:>10} {:>9} {:>9} {:>6} {:>8} {:>7} {:>10}  event",
        "t s", "alt km", "range km", "v_rel m/s", "v_in m/s", "Mach", "q kPa", "γ deg", "mass kg"
    );
    for e in &r.events {
        let a = &e.at;
        let _ = writeln!(
            s,
            "  {:>9.3} {:>9.3} {:>10.3} {:>9.1} {:>9.1} {:>6.2} {:>8.3} {:>7.3} {:>10.1}  {}",
            a.t_s,
            a.altitude_m / 1e3,
            a.downrange_m / 1e3,
            a.speed_rel_mps,
            a.speed_inertial_mps,
            a.mach,
            a.dynamic_pressure_pa / 1e3,
            a.flight_path_rel_deg,
            a.mass_kg,
            e.label
        );
    }
}

/// Renders the report for a terminal.
pub fn render(r: &FlightReport) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{} | {} | {} from {}, azimuth {:.3}°",
        r.tool, r.problem, r.vehicle, r.site, r.azimuth_deg
    );
    verdict(r, &mut s);
    budget_table(&r.budget, &mut s);
    budget_table(&r.budget_inertial, &mut s);
    arc_table(r, &mut s);
    extremes(r, &mut s);
    events(r, &mut s);
    let o = &r.orbit;
    let _ = writeln!(
        s,
        "\ncutoff: altitude {:.3} km, inertial speed {:.2} m/s, inertial flight-path angle {:.4}°, e = {:.6}",
        o.insertion_alt_km, o.insertion_speed_mps, o.flight_path_angle_deg, o.eccentricity
    );
    for c in &r.conventions {
        let _ = writeln!(s, "note: {c}");
    }
    let _ = writeln!(s, "input sha256 {}", r.input_sha256);
    let _ = writeln!(s, "CAUTION: {}", r.caution);
    s
}
