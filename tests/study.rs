//! Trade-study checks: azimuth sweep physics, trade factors against the rocket equation, and
//! sweeps over infeasible ranges.

use kickturn::app::study::{self, Axis, PointStatus, Traded};
use kickturn::observe::Silent;
use kickturn::optimize::{Objective, SolveOptions};
use kickturn::problem::file::ProblemFile;

fn file(name: &str) -> ProblemFile {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("problems")
        .join(name);
    let text = std::fs::read_to_string(path).unwrap_or_default();
    kickturn::problem::parse(&text).unwrap_or_else(|e| panic!("{e}"))
}

fn payload_opts() -> SolveOptions {
    SolveOptions {
        objective: Objective::MaxPayload,
        ..SolveOptions::default()
    }
}

#[test]
fn azimuth_sweep_peaks_due_east_and_keeps_the_pad_speed() {
    let f = file("medium-2stage-leo200.json");
    let values = [30.0, 60.0, 90.0, 120.0, 150.0];
    let pts = study::sweep(&f, Axis::Azimuth, &values, &payload_opts(), &Silent);
    assert_eq!(pts.len(), values.len());
    let reports: Vec<_> = pts
        .iter()
        .map(|p| {
            p.report
                .as_ref()
                .unwrap_or_else(|| panic!("{}: {:?}", p.value, p.message))
        })
        .collect();
    let payload: Vec<f64> = reports.iter().map(|r| r.payload_kg).collect();
    let rot: Vec<f64> = reports
        .iter()
        .map(|r| r.flight.budget.earth_rotation_mps)
        .collect();
    let best = |v: &[f64]| {
        (0..v.len())
            .max_by(|a, b| v[*a].total_cmp(&v[*b]))
            .unwrap_or(0)
    };
    // Payload and the Earth-rotation contribution both peak due east (common practice).
    assert_eq!(best(&payload), 2, "payload {payload:?}");
    assert_eq!(best(&rot), 2, "Earth rotation {rot:?}");
    // Due east at cutoff: inertial − relative speed ≈ ω r cos φ (WGS-84, NIMA TR8350.2, from memory).
    let r = reports[2];
    let omega_r = 7.292115e-5 * (6_378_137.0 + r.flight.orbit.insertion_alt_km * 1e3);
    assert!(
        rot[2] > 0.85 * omega_r && rot[2] < omega_r,
        "{} vs ωr {omega_r}",
        rot[2]
    );
    // The inertial form starts from the pad's inertial speed at every azimuth:
    // ω (N + h) cos φ (WGS-84, NIMA TR8350.2, from memory).
    let pad: Vec<f64> = reports
        .iter()
        .map(|r| r.flight.budget_inertial.earth_rotation_mps)
        .collect();
    for p in &pad {
        assert!((p - pad[0]).abs() < 1e-6, "pad speed varies: {pad:?}");
    }
    assert!((pad[0] - 410.2).abs() < 0.5, "pad speed {}", pad[0]);
}

#[test]
fn trade_factors_agree_with_the_rocket_equation() {
    let f = file("medium-2stage-leo200.json");
    let factors = study::trade(&f, &payload_opts(), &Silent);
    let get = |p: Traded| {
        factors
            .iter()
            .find(|x| x.param == p)
            .map_or(f64::NAN, |x| x.factor)
    };
    // Top stage: a kilogram of dry mass is a kilogram of payload (exact for a payload objective).
    let top_dry = get(Traded::DryMass { stage: 1 });
    assert!(
        (top_dry + 1.0).abs() < 0.01,
        "top-stage dry-mass factor {top_dry}"
    );
    // Source: ideal exchange ratios ∂P/∂Isp_k derived from the rocket equation (Tsiolkovsky); losses change
    // the values a little, not the sign or the order of magnitude.
    for k in 0..2 {
        let got = get(Traded::Isp { stage: k });
        let ideal = study::ideal_isp_factor(&f, k);
        assert!(
            got > 0.0 && (got / ideal - 1.0).abs() < 0.2,
            "stage {k} Isp: {got} vs {ideal}"
        );
    }
    let low_dry = get(Traded::DryMass { stage: 0 });
    assert!(
        low_dry < 0.0 && low_dry > -0.5,
        "first-stage dry-mass factor {low_dry}"
    );
    assert!(get(Traded::Drag) < 0.0);
}

#[test]
fn ideal_isp_factor_matches_the_worked_example() {
    // Source: rocket-equation exchange ratios, computed by hand for stage 1 80 t / 8 t / 310 s, stage 2 16 t / 2 t / 340 s,
    // payload 1 t: ∂P/∂Isp = +13.2 and +17.7 kg/s [der].
    let mut f = file("medium-2stage-leo200.json");
    f.vehicle.payload_kg = 1000.0;
    f.vehicle.jettisons.clear();
    let s = &mut f.vehicle.stages;
    (s[0].propellant_kg, s[0].dry_mass_kg, s[0].isp_vac_s) = (80e3, 8e3, 310.0);
    (s[1].propellant_kg, s[1].dry_mass_kg, s[1].isp_vac_s) = (16e3, 2e3, 340.0);
    assert!((study::ideal_isp_factor(&f, 0) - 13.2).abs() < 0.05);
    assert!((study::ideal_isp_factor(&f, 1) - 17.7).abs() < 0.05);
}

#[test]
fn a_sweep_into_infeasible_payloads_keeps_every_point_with_its_status() {
    let f = file("medium-2stage-leo200.json");
    let values = [8000.0, 30000.0];
    let opts = SolveOptions {
        max_trajectories: 3000,
        ..SolveOptions::default()
    };
    let pts = study::sweep(&f, Axis::Payload, &values, &opts, &Silent);
    assert_eq!(pts.len(), 2);
    assert_eq!(pts[0].status, PointStatus::Converged);
    assert!(
        matches!(
            pts[1].status,
            PointStatus::Infeasible | PointStatus::BudgetExhausted
        ),
        "{}",
        pts[1].status
    );
    assert!((pts[1].value - 30000.0).abs() < 1e-9);
}

#[test]
fn ranges_parse_inclusively_and_reject_nonsense() {
    assert_eq!(
        study::parse_range("0:180:45").unwrap_or_default(),
        vec![0.0, 45.0, 90.0, 135.0, 180.0]
    );
    for bad in ["1:2", "a:b:c", "5:1:1", "0:1:0", "0:1e9:1e-3"] {
        assert!(study::parse_range(bad).is_err(), "{bad}");
    }
}
