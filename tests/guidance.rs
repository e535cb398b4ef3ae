//! Closed-loop upper-stage guidance (`"steering": {"guidance": {}}`): the linear tangent optimum in
//! a flat-Earth vacuum, the demos' targets met with guidance on their insertion burn, and
//! convergence from thrust and Isp errors.

use kickturn::app::outcome::FlightReport;
use kickturn::optimize::{tune, SolveOptions, SolveStatus};
use kickturn::physics::environment::{AtmosphereModel, EarthModel, Environment};
use kickturn::problem::{Insertion, Problem, Target};
use kickturn::sim::{fly, Flight, FlyOptions};
use serde_json::{json, Value};

fn demo_json(name: &str) -> Value {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("problems")
        .join(name);
    serde_json::from_str(&std::fs::read_to_string(&path).unwrap_or_default())
        .unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// The demo with its last burn (the insertion burn) handed to guidance.
fn guided(name: &str) -> Value {
    let mut v = demo_json(name);
    let arcs = v["ascent"]["arcs"].as_array_mut().expect("arcs");
    let last = arcs
        .iter_mut()
        .rev()
        .find(|a| a.get("burn").is_some())
        .expect("a burn");
    last["burn"]["steering"] = json!({ "guidance": {} });
    last["burn"]["cutoff"] = json!("target_orbit");
    v
}

fn problem(v: &Value) -> Problem {
    Problem::from_json(&v.to_string()).unwrap_or_else(|e| panic!("{e}"))
}

fn report(p: &Problem) -> (Flight, FlightReport) {
    let f = fly(p, &FlyOptions::default());
    let r = FlightReport::new(p, &f);
    (f, r)
}

/// A flat-Earth lander (invented) from rest to an insertion state: y = 185 km, vx = 1627 m/s,
/// vy = 0, lunar-like gravity g = 1.61544 m/s², thrust 3 g at ignition.
fn flat_lander(steering: Value, isp_s: f64, dry_kg: f64, prop_kg: f64) -> Problem {
    let g = 1.61544;
    let m0 = dry_kg + prop_kg;
    // The optimizer chooses its own cutoff; guidance ends on the target energy.
    let burn = if steering.get("guidance").is_some() {
        json!({ "steering": steering, "cutoff": "target_orbit" })
    } else {
        json!({ "steering": steering })
    };
    let v = json!({
      "name": "flat guidance check",
      "site": { "name": "Flat test range", "latitude_deg": 0.0, "longitude_deg": 0.0 },
      "launch": { "azimuth_deg": 90.0 },
      "target": { "perigee_alt_km": 185.0, "apogee_alt_km": 185.0 },
      "vehicle": { "name": "Test lander", "payload_kg": 0.0, "stages": [ {
        "name": "ascent stage", "dry_mass_kg": dry_kg, "propellant_kg": prop_kg,
        "thrust_vac_n": 30.0 * m0, "isp_vac_s": 300.0, "exit_area_m2": 0.0,
        "aero": { "ref_area_m2": 1.0, "cd_mach": [[0.0, 0.0]] } } ] },
      "ascent": { "arcs": [ { "burn": burn } ] },
      "model": { "atmosphere": "vacuum" }
    });
    let mut p = problem(&v);
    // The insertion state is a flat-Earth target, which validation (on the round Earth) would
    // refuse: set it on the validated problem.
    p.target = Some(Target {
        insertion: Insertion::State {
            alt_m: 185e3,
            speed_mps: 1627.0,
            flight_path_rad: 0.0,
        },
        perigee_alt_m: 185e3,
        apogee_alt_m: 185e3,
        inclination_rad: None,
    });
    p.environment = Environment {
        earth: EarthModel::Flat { gravity_mps2: g },
        atmosphere: AtmosphereModel::Vacuum,
    };
    // Validation checks the liftoff thrust against the round Earth's weight and bounds the Isp:
    // set the flat-Earth engine on the validated problem.
    let e = &mut p.vehicle.stages[0].engine;
    e.thrust_vac_n = 3.0 * g * m0;
    e.isp_vac_s = isp_s;
    p
}

#[test]
fn flat_vacuum_guidance_flies_the_linear_tangent_optimum() {
    // Source: Bryson & Ho, Applied Optimal Control (1975) §2.4 (from memory): in a flat,
    // uniform-gravity vacuum the minimum-time (hence minimum-propellant) ascent to a given height
    // and horizontal speed flies tan θ = tan θ0 − c t. Worked example from its closed form
    // (domain brief §3b, derived): g = 1.61544, a = 3g constant, from rest to y = 185 km,
    // vx = 1627 m/s, vy = 0: tf = 481.948 s. Constant acceleration: negligible mass flow.
    let p = flat_lander(json!({ "guidance": {} }), 1e15, 1000.0, 1.0);
    let (f, _) = report(&p);
    assert!(
        ((f.t1_s - 481.948) / 481.948).abs() < 1e-4,
        "cutoff at {} s",
        f.t1_s
    );
    assert!((f.y1[2] - 185e3).abs() < 1.0, "height {}", f.y1[2]);
    assert!((f.y1[3] - 1627.0).abs() < 0.01 && f.y1[5].abs() < 0.01);
    // Downrange at cutoff, closed form x = (a/c²)[secθ0 − secθ − tanθ·L] (derived): 338.171 km.
    assert!((f.y1[0] - 338_171.0).abs() < 50.0, "downrange {}", f.y1[0]);
    println!("cutoff {:.4} s, downrange {:.1} m", f.t1_s, f.y1[0]);
}

#[test]
fn flat_vacuum_guidance_matches_the_optimized_linear_tangent_final_mass() {
    // Source: Bryson & Ho, Applied Optimal Control (1975) §2.4 (from memory): the linear tangent
    // law is optimal for any thrust-acceleration history in a flat, uniform-gravity vacuum, so the
    // optimizer's linear tangent solution (checked against the closed form in tests/solve.rs) is
    // the optimum; the guidance must reach the same final mass (issue 13: 1e-3 relative).
    let lt = json!({ "linear_tangent": { "pitch0_deg": 70.0, "tan_rate_per_s": 0.008,
                                          "heading_deg": 90.0 } });
    let open = flat_lander(lt, 450.0, 800.0, 700.0);
    let sol = tune(
        &open,
        &SolveOptions {
            scan: false,
            ..SolveOptions::default()
        },
    )
    .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        sol.convergence.status,
        SolveStatus::Converged,
        "{:?}",
        sol.convergence
    );
    let optimum = fly(&sol.problem, &FlyOptions::default());
    let (f, _) = report(&flat_lander(json!({ "guidance": {} }), 450.0, 800.0, 700.0));
    let (m_opt, m_g) = (optimum.y1[6], f.y1[6]);
    assert!(
        ((m_g - m_opt) / m_opt).abs() < 1e-3,
        "final mass guided {m_g} kg, optimum {m_opt} kg"
    );
    assert!((f.y1[2] - 185e3).abs() < 1.0 && (f.y1[3] - 1627.0).abs() < 0.01);
    println!("final mass guided {m_g:.4} kg, optimum {m_opt:.4} kg");
}

const DEMOS: [&str; 3] = [
    "small-3stage-sso500.json",
    "medium-2stage-leo200.json",
    "heavy-boosters-leo300.json",
];

/// Propellant used from liftoff to the end of the flight, kg.
fn used_kg(p: &Problem, f: &Flight) -> f64 {
    let loaded: f64 = p
        .vehicle
        .stages
        .iter()
        .map(|s| s.propellant_kg)
        .sum::<f64>()
        + p.vehicle
            .boosters
            .as_ref()
            .map_or(0.0, |b| f64::from(b.count) * b.propellant_kg);
    loaded - f.propellant_remaining_kg
}

fn assert_on_target(what: &str, r: &FlightReport) {
    // Issue 13: guided ascents reach their targets within ±1 km and ±0.01°.
    let d = r
        .target_deviation
        .unwrap_or_else(|| panic!("{what}: no target"));
    assert!(
        d.perigee_km.abs() < 1.0
            && d.apogee_km.is_some_and(|a| a.abs() < 1.0)
            && d.inclination_deg.is_some_and(|i| i.abs() < 0.01),
        "{what}: {d:?}"
    );
}

#[test]
fn guided_demos_reach_their_targets_on_the_open_loop_propellant() {
    for name in DEMOS {
        let open = problem(&demo_json(name));
        let (fo, _) = report(&open);
        let p = problem(&guided(name));
        let (f, r) = report(&p);
        assert_on_target(name, &r);
        // Issue 13: within 0.2 % of the propellant of the open-loop optimum (the demos ship
        // their optimized programs).
        let (u, uo) = (used_kg(&p, &f), used_kg(&open, &fo));
        assert!(
            ((u - uo) / uo).abs() < 2e-3,
            "{name}: used {u} kg vs {uo} kg"
        );
        println!("{name}: used {u:.1} kg guided, {uo:.1} kg open loop");
    }
}

#[test]
fn guidance_converges_from_thrust_and_isp_errors() {
    // Issue 13: the guidance converges from ±3 % thrust and ±2 s Isp errors (both signs) on the
    // stage it flies. The first stages fly open loop (a fixed kick into a zero-α gravity turn),
    // which no upper-stage guidance can repair: at 3 % less first-stage thrust the medium demo
    // stages at 42 km instead of 73 km and the small one falls back to the ground (domain brief
    // §5, pitfall 1: kick sensitivity); `kickturn dispersions` shows that spread. So the errors
    // go on the guided stage (the upper stage; the small demo's kick stage, whose open-loop
    // transfer burn is cut off on its apogee).
    for name in DEMOS {
        let first = if name.starts_with("small") { 2 } else { 1 };
        for (k_thrust, d_isp) in [(1.03, 2.0), (0.97, -2.0), (1.03, -2.0), (0.97, 2.0)] {
            let mut v = guided(name);
            let scale = |s: &mut Value| {
                let t = s["thrust_vac_n"].as_f64().unwrap_or(0.0) * k_thrust;
                s["thrust_vac_n"] = json!(t);
                if let Some(sl) = s.get("thrust_sl_n").and_then(Value::as_f64) {
                    s["thrust_sl_n"] = json!(sl * k_thrust);
                }
                let i = s["isp_vac_s"].as_f64().unwrap_or(0.0) + d_isp;
                s["isp_vac_s"] = json!(i);
            };
            for s in v["vehicle"]["stages"]
                .as_array_mut()
                .expect("stages")
                .iter_mut()
                .skip(first)
            {
                scale(s);
            }
            let (f, r) = report(&problem(&v));
            assert_on_target(&format!("{name} thrust ×{k_thrust} Isp {d_isp:+} s"), &r);
            println!(
                "{name} thrust ×{k_thrust} Isp {d_isp:+}: {:?}, {:.1} kg left",
                r.target_deviation, f.propellant_remaining_kg
            );
        }
    }
}

#[test]
fn solve_tunes_the_rest_of_the_program_and_hands_the_last_burn_to_guidance() {
    use kickturn::app::solve::{solve, SolveSettings};
    use kickturn::app::{Case, Silent};
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let case = |rel: &str| {
        Case::from_json(&std::fs::read_to_string(root.join(rel)).unwrap_or_default())
            .unwrap_or_else(|e| panic!("{rel}: {e}"))
    };
    let open = solve(
        &case("problems/medium-2stage-leo200.json"),
        &SolveSettings::default(),
        &Silent,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    let guided = solve(
        &case("problems/guided/medium-2stage-leo200-guided.json"),
        &SolveSettings::default(),
        &Silent,
    )
    .unwrap_or_else(|e| panic!("{e}"));
    assert!(guided.succeeded(), "{:?}", guided.report.convergence);
    // The written program keeps the guided burn; no stand-in parameter is reported.
    let text = serde_json::to_string(&guided.tuned_file.ascent).unwrap_or_default();
    assert!(text.contains("\"guidance\""), "{text}");
    assert!(guided
        .report
        .tuned
        .iter()
        .all(|t| !t.field.contains("arcs[2].burn")));
    // Issue 13: within 0.2 % of the propellant of the open-loop optimum.
    let (u, uo) = (
        guided.report.propellant_used_kg,
        open.report.propellant_used_kg,
    );
    assert!(((u - uo) / uo).abs() < 2e-3, "used {u} kg vs {uo} kg");
}

#[test]
fn guidance_without_enough_propellant_flies_to_depletion_without_panicking() {
    // Half the upper stage's propellant: the target energy is out of reach; the guidance keeps a
    // finite plan and the stage burns out (the flight ends, short of the target).
    let mut v = guided("medium-2stage-leo200.json");
    let prop = v["vehicle"]["stages"][1]["propellant_kg"]
        .as_f64()
        .unwrap_or(0.0);
    v["vehicle"]["stages"][1]["propellant_kg"] = json!(0.5 * prop);
    let (f, r) = report(&problem(&v));
    assert!(f.y1.iter().all(|x| x.is_finite()));
    assert!(!r.target_deviation.is_some_and(|d| d.met));
    assert!(
        f.propellant_remaining_kg < 1.0,
        "{}",
        f.propellant_remaining_kg
    );
}
