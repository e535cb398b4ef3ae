//! Self-contained HTML reports (inline SVG figures, no network, figures scale to the window).
//!
//! [`page`] / [`page_with_vehicle`]: one flight (problem summary, verdict, the input vehicle's
//! stages, masses, thrust and Isp, the cutoff state and osculating orbital elements, both
//! budgets, the per-arc budget with every column of the text report, events, captioned figures
//! and the safety caution). [`study_page`]: a study (`compare`, `trade`): its table and its
//! captioned figures.

use std::fmt::Write as _;

use super::plots::PlotError;
use crate::app::outcome::{FlightReport, CAUTION};
use crate::app::solve::SolveReport;
use crate::core::budget::Budget;
use crate::core::physics::earth::G0_MPS2;
use crate::core::physics::orbit::Elements;
use crate::core::sim::{EventKind, Flight};
use crate::core::vehicle::{Engine, Vehicle};

/// Page style: tables, the caution box, and figures that shrink to the window (the SVGs carry a
/// viewBox, so `max-width: 100%` with `height: auto` scales them).
const STYLE: &str = "body{font-family:sans-serif;max-width:1250px;margin:auto;padding:1em}table{border-collapse:collapse;margin:0.5em 0}td,th{border:1px solid #bbb;padding:2px 6px;text-align:right}td:first-child,th:first-child{text-align:left}.caution{border:2px solid #b00;padding:0.5em;background:#fee}pre{background:#f6f6f6;padding:0.5em;white-space:pre-wrap;overflow-x:auto}td.l{text-align:left}figure{margin:1.5em 0}figure svg{max-width:100%;height:auto;display:block}figcaption{font-size:0.9em;color:#333;max-width:60em}";

fn esc(s: &str) -> String {
    super::plots::printable(s)
        .replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

fn budget_rows(b: &Budget, s: &mut String) {
    let i = b.ideal_mps;
    let pct = |x: f64| {
        if i > 0.0 {
            format!("{:.2}", 100.0 * x.abs() / i)
        } else {
            String::new()
        }
    };
    for (name, v) in [
        ("ideal ΔV", i),
        ("gravity loss", -b.gravity_loss_mps),
        ("drag loss", -b.drag_loss_mps),
        ("steering loss", -b.steering_loss_mps),
        ("back-pressure loss", -b.back_pressure_loss_mps),
        ("rotating-frame gain", b.rotating_frame_mps),
        ("Earth rotation", b.earth_rotation_mps),
        ("= inertial speed at cutoff", b.final_speed_mps),
    ] {
        let _ = writeln!(
            s,
            "<tr><td>{name}</td><td>{v:+.2}</td><td>{}</td></tr>",
            pct(v)
        );
    }
    let _ = writeln!(
        s,
        "<tr><td>closure error</td><td>{:.2e}</td><td></td></tr>",
        b.closure_error_mps
    );
}

fn tables(r: &FlightReport, s: &mut String) {
    for (title, b) in [
        ("ΔV budget, Earth-relative bookkeeping (losses along the Earth-relative velocity; Earth rotation = inertial − relative speed at cutoff)", &r.budget),
        ("ΔV budget, inertial bookkeeping (losses along the inertial velocity; Earth rotation = inertial speed on the pad)", &r.budget_inertial),
    ] {
        let _ = writeln!(s, "<h2>{}</h2><table><tr><th>term</th><th>m/s</th><th>% of ideal</th></tr>", esc(title));
        budget_rows(b, s);
        let _ = writeln!(s, "</table>");
    }
    let _ = writeln!(s, "<h2>Per-arc budget (Earth-relative, m/s; on a coast the gravity term is speed traded for altitude)</h2>");
    let _ = writeln!(s, "<table><tr><th>arc</th><th>t0 s</th><th>t1 s</th><th>ideal</th><th>gravity</th><th>drag</th><th>steering</th><th>back-p</th><th>rot</th><th>Δspeed</th></tr>");
    for p in &r.arcs {
        let _ = writeln!(
            s,
            "<tr><td>{}</td><td>{:.2}</td><td>{:.2}</td><td>{:.1}</td><td>{:.1}</td><td>{:.1}</td><td>{:.1}</td><td>{:.1}</td><td>{:.1}</td><td>{:+.1}</td></tr>",
            esc(&p.label), p.t0_s, p.t1_s, p.ideal_mps, p.gravity_loss_mps, p.drag_loss_mps,
            p.steering_loss_mps, p.back_pressure_loss_mps, p.rotating_frame_mps, p.speed_change_mps
        );
    }
    let _ = writeln!(s, "</table><h2>Events</h2><table><tr><th>t s</th><th>event</th><th>alt km</th><th>range km</th><th>v_rel m/s</th><th>v_in m/s</th><th>Mach</th><th>q kPa</th><th>γ deg</th><th>mass kg</th></tr>");
    for e in &r.events {
        let a = &e.at;
        let _ = writeln!(
            s,
            "<tr><td>{:.3}</td><td class=\"l\">{}</td><td>{:.3}</td><td>{:.3}</td><td>{:.1}</td><td>{:.1}</td><td>{:.2}</td><td>{:.3}</td><td>{:.3}</td><td>{:.1}</td></tr>",
            a.t_s, esc(&e.label), a.altitude_m / 1e3, a.downrange_m / 1e3, a.speed_rel_mps,
            a.speed_inertial_mps, a.mach, a.dynamic_pressure_pa / 1e3, a.flight_path_rel_deg, a.mass_kg
        );
    }
    let _ = writeln!(s, "</table>");
}

/// Builds the HTML page of a flight, with the solve's summary when `solve` is given. The figures
/// are drawn in memory and inlined as SVG. Without the vehicle the page has no vehicle table:
/// see [`page_with_vehicle`].
pub fn page(
    r: &FlightReport,
    f: &Flight,
    solve: Option<&SolveReport>,
) -> Result<String, PlotError> {
    page_with_vehicle(r, f, solve, None)
}

/// [`page`] with a summary of the input vehicle (stages, boosters, jettisoned masses: masses,
/// thrust, Isp, burn time).
pub fn page_with_vehicle(
    r: &FlightReport,
    f: &Flight,
    solve: Option<&SolveReport>,
    vehicle: Option<&Vehicle>,
) -> Result<String, PlotError> {
    let files = super::figures::flight_figures(r, f)?;
    let mut s = String::new();
    head(&mut s, &r.problem);
    let _ = writeln!(s, "<p>{} — vehicle {}, site {}, launch azimuth {:.3}°; Earth model: {}. Generated by {}; input SHA-256 {}.</p>",
        esc(&r.problem), esc(&r.vehicle), esc(&r.site), r.azimuth_deg, esc(&r.earth.describe()), esc(&r.tool), esc(&r.input_sha256));
    let _ = writeln!(
        s,
        "<pre>{}</pre>",
        esc(super::text::verdict_text(r).trim_end())
    );
    if let Some(solve) = solve {
        let _ = writeln!(
            s,
            "<pre>{}</pre>",
            esc(super::solve::summary(solve).trim_end())
        );
    }
    if let Some(v) = vehicle {
        vehicle_table(v, solve.map(|x| x.payload_kg), &mut s);
    }
    cutoff_tables(r, f, &mut s);
    tables(r, &mut s);
    figures(&files, &mut s);
    for c in &r.conventions {
        let _ = writeln!(s, "<p><small>{}</small></p>", esc(c));
    }
    let _ = writeln!(s, "</body></html>");
    Ok(s)
}

/// A study's page (`compare`, `trade`): title, caution, the text table as preformatted text,
/// then the figures with their captions (`captions`: file stem → caption).
pub fn study_page(
    title: &str,
    table: &str,
    figure_files: &[super::plots::FigureFile],
    captions: &[(String, String)],
) -> String {
    let mut s = String::new();
    head(&mut s, title);
    let _ = writeln!(s, "<pre>{}</pre>", esc(table.trim_end()));
    let _ = writeln!(s, "<h2>Figures</h2>");
    for svg in figure_files.iter().filter(|p| p.name.ends_with(".svg")) {
        let stem = svg.name.trim_end_matches(".svg");
        let caption = captions
            .iter()
            .find(|(k, _)| k == stem)
            .map_or("", |(_, c)| c.as_str());
        figure(&mut s, svg, caption);
    }
    let _ = writeln!(s, "</body></html>");
    s
}

/// Doctype, style, title and the caution box.
fn head(s: &mut String, title: &str) {
    let _ = writeln!(
        s,
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"><title>{}</title>",
        esc(title)
    );
    let _ = writeln!(s, "<style>{STYLE}</style></head><body>");
    let _ = writeln!(s, "<h1>{}</h1>", esc(title));
    let _ = writeln!(
        s,
        "<p class=\"caution\"><b>Caution.</b> {}</p>",
        esc(CAUTION)
    );
}

fn figure(s: &mut String, svg: &super::plots::FigureFile, caption: &str) {
    let stem = svg.name.trim_end_matches(".svg");
    let _ = writeln!(
        s,
        "<figure id=\"fig-{}\">{}<figcaption><b>{}</b>. {}</figcaption></figure>",
        esc(stem),
        String::from_utf8_lossy(&svg.bytes),
        esc(stem),
        esc(caption)
    );
}

fn figures(files: &[super::plots::FigureFile], s: &mut String) {
    let _ = writeln!(s, "<h2>Figures</h2>");
    for svg in files.iter().filter(|p| p.name.ends_with(".svg")) {
        let stem = svg.name.trim_end_matches(".svg");
        let caption = super::figures::caption(stem).unwrap_or_default();
        figure(s, svg, &caption);
    }
}

/// One row of the vehicle table: name, count, dry and propellant mass, vacuum thrust, vacuum
/// Isp, burn time at full throttle.
fn engine_row(s: &mut String, name: &str, count: u32, dry_kg: f64, prop_kg: f64, e: &Engine) {
    let burn_s = prop_kg * G0_MPS2 * e.isp_vac_s / e.thrust_vac_n;
    // Sea-level thrust T_sl = T_vac − p_sl A_e (vehicle module's propulsion model).
    let t_sl_kn = (e.thrust_vac_n - crate::core::vehicle::P_SL_PA * e.exit_area_m2) / 1e3;
    let _ = writeln!(
        s,
        "<tr><td class=\"l\">{}</td><td>{count}</td><td>{:.0}</td><td>{:.0}</td><td>{:.1}</td><td>{:.1}</td><td>{:.1}</td><td>{:.1}</td></tr>",
        esc(name),
        dry_kg,
        prop_kg,
        e.thrust_vac_n / 1e3,
        t_sl_kn,
        e.isp_vac_s,
        burn_s
    );
}

fn vehicle_table(v: &Vehicle, solved_payload_kg: Option<f64>, s: &mut String) {
    let _ = writeln!(s, "<h2>Vehicle (input)</h2><table><tr><th>element</th><th>count</th><th>dry mass kg (each)</th><th>propellant kg (each)</th><th>vacuum thrust kN (each)</th><th>sea-level thrust kN (each)</th><th>vacuum Isp s</th><th>burn time s (full throttle)</th></tr>");
    if let Some(b) = &v.boosters {
        engine_row(
            s,
            &b.name,
            b.count,
            b.dry_mass_kg,
            b.propellant_kg,
            &b.engine,
        );
    }
    for st in &v.stages {
        engine_row(s, &st.name, 1, st.dry_mass_kg, st.propellant_kg, &st.engine);
    }
    let _ = writeln!(s, "</table><table>");
    for j in &v.jettisons {
        let _ = writeln!(
            s,
            "<tr><td>jettisoned: {}</td><td>{:.0} kg</td></tr>",
            esc(&j.name),
            j.mass_kg
        );
    }
    let _ = writeln!(
        s,
        "<tr><td>payload in the file</td><td>{:.1} kg</td></tr>",
        v.payload_kg
    );
    if let Some(p) = solved_payload_kg.filter(|p| (p - v.payload_kg).abs() > 1e-6) {
        let _ = writeln!(s, "<tr><td>payload solved for</td><td>{p:.1} kg</td></tr>");
    }
    let _ = writeln!(
        s,
        "<tr><td>liftoff mass</td><td>{:.1} kg</td></tr><tr><td>propellant loaded</td><td>{:.1} kg</td></tr></table>",
        v.liftoff_mass_kg(),
        v.propellant_loaded_kg()
    );
}

/// The cutoff state (the last cutoff event, else the end of the flight) and the osculating
/// elements of the final state (two-body, WGS-84 GM; Vallado's RV2COE via `Elements`).
fn cutoff_tables(r: &FlightReport, f: &Flight, s: &mut String) {
    let at = r
        .events
        .iter()
        .rev()
        .find(|e| e.kind == EventKind::Cutoff)
        .or_else(|| r.events.last())
        .map(|e| &e.at);
    if let Some(a) = at {
        let _ = writeln!(s, "<h2>Cutoff state</h2><table>");
        for (name, value) in [
            ("time since liftoff, s", format!("{:.3}", a.t_s)),
            (
                &format!("{}, km", r.earth.altitude_label()),
                format!("{:.3}", a.altitude_m / 1e3),
            ),
            ("downrange, km", format!("{:.3}", a.downrange_m / 1e3)),
            (
                &format!("{}, deg", r.earth.latitude_label()),
                format!("{:.4}", a.latitude_deg),
            ),
            ("longitude, deg east", format!("{:.4}", a.longitude_deg)),
            (
                "Earth-relative speed, m/s",
                format!("{:.2}", a.speed_rel_mps),
            ),
            (
                "inertial speed, m/s",
                format!("{:.2}", a.speed_inertial_mps),
            ),
            (
                "Earth-relative flight-path angle, deg",
                format!("{:.4}", a.flight_path_rel_deg),
            ),
            (
                "inertial flight-path angle, deg",
                format!("{:.4}", a.flight_path_inertial_deg),
            ),
            ("mass, kg", format!("{:.1}", a.mass_kg)),
            (
                "propellant remaining, kg",
                format!("{:.1}", r.propellant_remaining_kg),
            ),
        ] {
            let _ = writeln!(s, "<tr><td>{name}</td><td>{value}</td></tr>");
        }
        let _ = writeln!(s, "</table>");
    }
    let o = &r.orbit;
    let pos = nalgebra::Vector3::new(f.y1[0], f.y1[1], f.y1[2]);
    let vel = nalgebra::Vector3::new(f.y1[3], f.y1[4], f.y1[5]);
    let el = Elements::from_state(&pos, &vel, r.earth.gm_m3_s2);
    let deg = |x: f64| format!("{:.4}", x.to_degrees());
    if r.earth.model == "sphere" {
        let _ = writeln!(s, "<h2>Orbit at the end of the flight (osculating two-body elements, GM = {:e} m³/s²; altitudes above the spherical Earth of radius {:.3} km)</h2><table>",
            r.earth.gm_m3_s2, r.earth.radius_m / 1e3);
    } else {
        let _ = writeln!(s, "<h2>Orbit at the end of the flight (osculating two-body elements, WGS-84 GM; altitudes above a sphere of 6378.137 km)</h2><table>");
    }
    let mut rows = vec![
        ("perigee altitude, km", format!("{:.3}", o.perigee_alt_km)),
        (
            "apogee altitude, km",
            o.apogee_alt_km
                .map_or("unbound".to_string(), |a| format!("{a:.3}")),
        ),
        (
            "semi-major axis, km",
            format!("{:.3}", el.semi_major_axis_m / 1e3),
        ),
        ("eccentricity", format!("{:.6}", o.eccentricity)),
        ("inclination, deg", format!("{:.4}", o.inclination_deg)),
        (
            "right ascension of the ascending node (inertial x axis = Greenwich at liftoff), deg",
            deg(el.raan_rad),
        ),
        ("argument of perigee, deg", deg(el.arg_perigee_rad)),
        ("true anomaly, deg", deg(el.true_anomaly_rad)),
    ];
    if let Some(v) = o.v_infinity_mps {
        rows.push(("hyperbolic excess speed, m/s", format!("{v:.1}")));
    }
    for (name, value) in rows {
        let _ = writeln!(s, "<tr><td>{name}</td><td>{value}</td></tr>");
    }
    let _ = writeln!(s, "</table>");
}

/// The dispersion study as one self-contained page: the text report and the figures (inline SVG)
/// with their captions.
pub fn dispersions_page(
    r: &crate::app::dispersions::DispersionReport,
) -> Result<String, PlotError> {
    let files = super::figures::dispersion_figures(r)?;
    let captions = [
        (
            "dispersions-propellant",
            "Propellant remaining at insertion of the samples that meet the target, with the \
             nominal flight's and the reserve bound at the chosen probability and confidence.",
        ),
        (
            "dispersions-orbit-errors",
            "Perigee and apogee errors of every sample in orbit.",
        ),
        (
            "dispersions-contributors",
            "Spearman rank correlation of each dispersed quantity with the propellant remaining.",
        ),
    ]
    .map(|(a, b)| (a.to_string(), b.to_string()));
    Ok(study_page(
        &format!("dispersions of {}", r.problem),
        &super::dispersions::text(r),
        &files,
        &captions,
    ))
}
