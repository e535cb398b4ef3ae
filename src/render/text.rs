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
    use super::table::{Align, Table};
    let mut t = Table::new(&[
        ("term", Align::Left),
        ("m/s", Align::Right),
        ("% ideal", Align::Right),
    ]);
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
            pct(v.abs(), i).trim().to_string()
        } else {
            String::new()
        };
        t.row(vec![name.into(), format!("{v:+.2}"), p]);
    }
    t.row(vec![
        "= inertial speed at cutoff".into(),
        format!("{:.2}", b.final_speed_mps),
    ]);
    t.row(vec![
        "closure error".into(),
        format!("{:.2e}", b.closure_error_mps),
    ]);
    s.push_str(&t.render("  "));
}

fn arc_table(r: &FlightReport, s: &mut String) {
    use super::table::{Align, Table};
    let _ = writeln!(
        s,
        "\nPer-arc budget, Earth-relative bookkeeping, m/s (on a coast the gravity term is speed traded for altitude)"
    );
    let r_ = Align::Right;
    let mut t = Table::new(&[
        ("arc", Align::Left),
        ("t0 s", r_),
        ("t1 s", r_),
        ("ideal", r_),
        ("gravity", r_),
        ("drag", r_),
        ("steering", r_),
        ("back-p", r_),
        ("rot", r_),
        ("Δspeed", r_),
    ]);
    for p in &r.arcs {
        let f1 = |x: f64| format!("{x:.1}");
        t.row(vec![
            p.label.clone(),
            format!("{:.2}", p.t0_s),
            format!("{:.2}", p.t1_s),
            f1(p.ideal_mps),
            f1(p.gravity_loss_mps),
            f1(p.drag_loss_mps),
            f1(p.steering_loss_mps),
            f1(p.back_pressure_loss_mps),
            f1(p.rotating_frame_mps),
            format!("{:+.1}", p.speed_change_mps),
        ]);
    }
    s.push_str(&t.render("  "));
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
    use super::table::{Align, Table};
    let alt = if r.earth.model != "sphere" {
        "altitude geodetic"
    } else {
        r.earth.altitude_label()
    };
    let _ = writeln!(s, "\nEvents ({alt}; γ Earth-relative)");
    let r_ = Align::Right;
    let mut t = Table::new(&[
        ("t s", r_),
        ("alt km", r_),
        ("range km", r_),
        ("v_rel m/s", r_),
        ("v_in m/s", r_),
        ("Mach", r_),
        ("q kPa", r_),
        ("γ deg", r_),
        ("mass kg", r_),
        ("event", Align::Left),
    ]);
    for e in &r.events {
        let a = &e.at;
        t.row(vec![
            format!("{:.3}", a.t_s),
            format!("{:.3}", a.altitude_m / 1e3),
            format!("{:.3}", a.downrange_m / 1e3),
            format!("{:.1}", a.speed_rel_mps),
            format!("{:.1}", a.speed_inertial_mps),
            format!("{:.2}", a.mach),
            format!("{:.3}", a.dynamic_pressure_pa / 1e3),
            format!("{:.3}", a.flight_path_rel_deg),
            format!("{:.1}", a.mass_kg),
            e.label.clone(),
        ]);
    }
    s.push_str(&t.render("  "));
}

/// Renders the report for a terminal.
pub fn render(r: &FlightReport) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{} | {} | {} from {}, azimuth {}°",
        r.tool,
        r.problem,
        r.vehicle,
        r.site,
        super::table::angle_0_360(r.azimuth_deg, 3)
    );
    if !r.earth.is_wgs84() {
        // WGS-84 is the default, named in the notes; another model is said at the top.
        let _ = writeln!(s, "Earth model: {}", r.earth.describe());
    }
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
