//! Verification of the optimizer (`solve`): a closed-form optimal-steering check, convergence from
//! perturbed starts, a kick scan around the optimum, the written program reproducing the orbit,
//! and infeasible targets.

use std::path::Path;

use kickturn::app::outcome::FlightReport;
use kickturn::optimize::{objective, tune, Param, SolveOptions, SolveStatus};
use kickturn::physics::environment::{AtmosphereModel, EarthModel, Environment};
use kickturn::problem::{Insertion, Problem, Target};
use kickturn::sim::{fly, FlyOptions};
use kickturn::steering::LawParam;

mod bin_support;
use bin_support::{json_of, kickturn, root};

fn demo(name: &str) -> Problem {
    let path = root().join("problems").join(name);
    match Problem::from_json(&std::fs::read_to_string(&path).unwrap_or_default()) {
        Ok(p) => p,
        Err(e) => panic!("{name}: {e}"),
    }
}

const DEMOS: [&str; 3] = [
    "small-3stage-sso500.json",
    "medium-2stage-leo200.json",
    "heavy-boosters-leo300.json",
];

/// Linear tangent closed form (flat Earth, uniform g, vacuum, constant thrust acceleration a),
/// Bryson & Ho, Applied Optimal Control (1975) §2.4 (from memory), integrated in closed form: with L = ln[(secθ0 + tanθ0)/(secθ + tanθ)], tanθ = tanθ0 − c t,
/// returns (vx, vy, y) at time t from rest.
fn lt_closed_form(tan0: f64, c: f64, t: f64, a: f64, g: f64) -> (f64, f64, f64) {
    let tan = tan0 - c * t;
    let (sec0, sec) = ((1.0 + tan0 * tan0).sqrt(), (1.0 + tan * tan).sqrt());
    let l = ((sec0 + tan0) / (sec + tan)).ln();
    let vx = a / c * l;
    let vy = a / c * (sec0 - sec) - g * t;
    let y = a / (2.0 * c * c) * (tan0 * sec0 - 2.0 * tan * sec0 + tan * sec - l) - 0.5 * g * t * t;
    (vx, vy, y)
}

/// Solves the closed-form conditions vx = 1627, vy = 0, y = 185 km for (tanθ0, c, tf) by Newton.
fn lt_optimum(a: f64, g: f64) -> [f64; 3] {
    let mut x = [2.7, 0.008, 480.0];
    let f = |x: &[f64; 3]| {
        let (vx, vy, y) = lt_closed_form(x[0], x[1], x[2], a, g);
        [vx - 1627.0, vy, (y - 185e3) / 100.0]
    };
    for _ in 0..50 {
        let f0 = f(&x);
        let mut j = nalgebra::Matrix3::zeros();
        for k in 0..3 {
            let mut xk = x;
            let h = 1e-7 * x[k].abs();
            xk[k] += h;
            let fk = f(&xk);
            for i in 0..3 {
                j[(i, k)] = (fk[i] - f0[i]) / h;
            }
        }
        let dx = j
            .lu()
            .solve(&nalgebra::Vector3::from(f0))
            .unwrap_or_default();
        for k in 0..3 {
            x[k] -= dx[k];
        }
    }
    x
}

#[test]
fn linear_tangent_optimum_matches_the_closed_form() {
    // Source: Bryson & Ho, Applied Optimal Control (1975) §2.4 (from memory), a worked example
    // computed from that closed form: g = 1.61544, a = 3g, from rest to y = 185 km, vx = 1627 m/s,
    // vy = 0: tanθ0 = 2.74497, c = 0.0082687 s⁻¹, tf = 481.948 s, xf = 338.171 km [der].
    let g = 1.61544;
    let a = 3.0 * g;
    let [tan0, c, tf] = lt_optimum(a, g);
    assert!((tan0 - 2.74497).abs() < 5e-6, "closed form tanθ0 {tan0}");
    assert!((c - 0.0082687).abs() < 5e-8, "closed form c {c}");
    assert!((tf - 481.948).abs() < 5e-4, "closed form tf {tf}");

    let json = r#"{
      "name": "flat linear tangent check",
      "site": { "name": "Flat test range", "latitude_deg": 0.0, "longitude_deg": 0.0 },
      "launch": { "azimuth_deg": 90.0 },
      "vehicle": { "name": "Test lander", "payload_kg": 0.0, "stages": [ {
        "name": "ascent stage", "dry_mass_kg": 1000.0, "propellant_kg": 10.0,
        "thrust_vac_n": 1.0e5, "isp_vac_s": 300.0, "exit_area_m2": 0.0,
        "aero": { "ref_area_m2": 1.0, "cd_mach": [[0.0, 0.0]] } } ] },
      "ascent": { "arcs": [ { "burn": { "steering": { "linear_tangent":
        { "pitch0_deg": 60.0, "tan_rate_per_s": 0.005, "heading_deg": 90.0 } } } } ] }
    }"#;
    let mut p = match Problem::from_json(json) {
        Ok(p) => p,
        Err(e) => panic!("{e}"),
    };
    p.environment = Environment {
        earth: EarthModel::Flat { gravity_mps2: g },
        atmosphere: AtmosphereModel::Vacuum,
    };
    // Constant thrust acceleration: negligible mass flow, thrust a·m.
    let m0 = p.vehicle.liftoff_mass_kg();
    let s = &mut p.vehicle.stages[0];
    s.engine.isp_vac_s = 1e15;
    s.engine.thrust_vac_n = a * m0;
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
    let sol = match tune(
        &p,
        &SolveOptions {
            scan: false,
            ..SolveOptions::default()
        },
    ) {
        Ok(s) => s,
        Err(e) => panic!("{e}"),
    };
    assert_eq!(sol.convergence.status, SolveStatus::Converged);
    let value = |v: Param| {
        sol.variables
            .iter()
            .find(|(w, _)| *w == v)
            .map_or(f64::NAN, |(_, x)| *x)
    };
    let law = |param| Param::Law {
        arc: 0,
        law: "linear_tangent",
        param,
    };
    let theta0 = value(law(LawParam::Pitch0));
    let rate = value(law(LawParam::TanRate));
    let flight = fly(&sol.problem, &FlyOptions::default());
    let rel = |got: f64, want: f64| ((got - want) / want).abs();
    assert!(
        rel(theta0, tan0.atan()) < 1e-6,
        "θ0 {} vs {}",
        theta0.to_degrees(),
        tan0.atan().to_degrees()
    );
    assert!(rel(rate, c) < 1e-6, "c {rate} vs {c}");
    assert!(rel(flight.t1_s, tf) < 1e-6, "tf {} vs {tf}", flight.t1_s);
    // Downrange at cutoff: x = (a/c²)[secθ0 − secθ − tanθ·L] (closed form of Bryson & Ho's linear tangent law, derived); 338.171 km.
    assert!(
        (flight.y1[0] - 338_171.0).abs() < 1.0,
        "xf {}",
        flight.y1[0]
    );
}

fn solved(name: &str, o: &SolveOptions) -> kickturn::optimize::Solution {
    match tune(&demo(name), o) {
        Ok(s) => s,
        Err(e) => panic!("{name}: {e}"),
    }
}

#[test]
fn demos_converge_to_the_target_within_tolerance_and_the_budget_closes() {
    for name in DEMOS {
        let sol = solved(name, &SolveOptions::default());
        assert_eq!(
            sol.convergence.status,
            SolveStatus::Converged,
            "{name}: {:?}",
            sol.convergence
        );
        let f = fly(&sol.problem, &FlyOptions::default());
        let r = FlightReport::new(&sol.problem, &f);
        let d = r
            .target_deviation
            .unwrap_or_else(|| panic!("{name}: no target"));
        // Tolerances of the optimizer issue: apsides ±0.1 km, inclination ±0.001°.
        assert!(d.met, "{name}: {d:?}");
        assert!(
            d.perigee_km.abs() < 0.01 && d.apogee_km.unwrap_or(1.0).abs() < 0.01,
            "{name}: {d:?}"
        );
        assert!(r.budget.closure_error_mps.abs() < 1e-3);
        assert!(r.budget_inertial.closure_error_mps.abs() < 1e-3);
        assert!(
            sol.convergence.trajectories < 5000,
            "{name}: {} trajectories",
            sol.convergence.trajectories
        );
    }
}

#[test]
fn perturbed_starts_reach_the_same_optimum() {
    for name in DEMOS {
        let base = solved(name, &SolveOptions::default());
        let m0 = base.eval.propellant_used_kg;
        let final_mass = demo(name).vehicle.liftoff_mass_kg() - m0;
        let tol = 0.5f64.max(1e-4 * final_mass);
        for seed in 1..=5u64 {
            let s = solved(
                name,
                &SolveOptions {
                    perturb_seed: Some(seed),
                    ..SolveOptions::default()
                },
            );
            assert_eq!(
                s.convergence.status,
                SolveStatus::Converged,
                "{name} seed {seed}"
            );
            let d = s.eval.propellant_used_kg - m0;
            assert!(
                d.abs() <= tol,
                "{name} seed {seed}: final mass differs by {d:.3} kg"
            );
        }
    }
}

#[test]
fn the_optimum_is_a_minimum_along_the_kick() {
    // Re-solve the terminal conditions with the kick held a little either side of the optimum:
    // the propellant burned must not fall.
    let name = "medium-2stage-leo200.json";
    let sol = solved(name, &SolveOptions::default());
    let k = sol
        .variables
        .iter()
        .find(|(v, _)| *v == Param::Kick)
        .map_or(f64::NAN, |(_, x)| *x);
    let best = objective(&sol.eval);
    for dk_deg in [-0.2, -0.05, 0.05, 0.2] {
        let mut p = sol.problem.clone();
        Param::Kick.set(&mut p, k + f64::to_radians(dk_deg));
        let s = match tune(
            &p,
            &SolveOptions {
                scan: false,
                fix: vec!["kick".into()],
                ..SolveOptions::default()
            },
        ) {
            Ok(s) => s,
            Err(e) => panic!("{e}"),
        };
        assert_eq!(s.convergence.status, SolveStatus::Converged);
        let j = objective(&s.eval);
        assert!(
            j >= best - 0.01,
            "kick {dk_deg:+}°: {j:.3} kg < optimum {best:.3} kg"
        );
    }
}

#[test]
fn the_written_program_flies_to_the_same_orbit() {
    let dir = std::env::temp_dir().join(format!("kickturn-solve-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let out_path = dir.join("tuned.json");
    let o = out_path.to_string_lossy().to_string();
    let solved = kickturn(&[
        "solve",
        "problems/heavy-boosters-leo300.json",
        "--json",
        "--write-program",
        &o,
    ]);
    assert_eq!(
        solved.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&solved.stderr)
    );
    let s = json_of(&solved);
    for k in [
        "program",
        "convergence",
        "propellant_used_kg",
        "payload_kg",
        "margin_kg",
        "margin_mps",
        "active_constraints",
    ] {
        assert!(!s[k].is_null(), "missing {k}");
    }
    assert_eq!(s["convergence"]["status"], "converged");
    let flown = kickturn(&["fly", &o, "--json"]);
    assert_eq!(flown.status.code(), Some(0));
    let f = json_of(&flown);
    for k in ["perigee_alt_km", "apogee_alt_km", "inclination_deg"] {
        let a = s["orbit"][k].as_f64().unwrap_or(f64::NAN);
        let b = f["orbit"][k].as_f64().unwrap_or(0.0);
        assert!((a - b).abs() < 1e-9, "{k}: solve {a} vs fly {b}");
    }
    let _ = std::fs::remove_dir_all(&dir);
    assert!(Path::new(&root()).exists());
}

#[test]
fn an_infeasible_target_is_reported_with_exit_1() {
    // Five times the payload: the medium vehicle cannot reach orbit. No wall cap: the trajectory
    // budget ends the search, so the verdict does not depend on the machine's load (issue 9).
    let dir = std::env::temp_dir().join(format!("kickturn-infeasible-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let path = dir.join("heavy-payload.json");
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let text = text.replace("\"payload_kg\": 8000.0", "\"payload_kg\": 40000.0");
    let _ = std::fs::write(&path, text);
    let p = path.to_string_lossy().to_string();
    let out = kickturn(&["solve", &p, "--json"]);
    assert_eq!(out.status.code(), Some(1));
    let r = json_of(&out);
    assert_eq!(r["convergence"]["status"], "infeasible");
    let short = r["shortfall_mps"].as_f64().unwrap_or(0.0);
    assert!(short > 100.0, "ΔV shortfall {short}");
    // Promptly (issue 9: it took 8 501 trajectories): the SQP verdict of infeasibility, a
    // stationary point of the violation from the two best starts, is final.
    let n = r["convergence"]["trajectories"]
        .as_u64()
        .unwrap_or(u64::MAX);
    assert!(n <= 1000, "{n} trajectories");
    // A flight that misses the target shows no margin in the headline.
    let text = kickturn(&["solve", &p]);
    let head = String::from_utf8_lossy(&text.stdout);
    let head = head.lines().next().unwrap_or_default();
    assert!(head.starts_with("NOT SOLVED"), "{head}");
    assert!(!head.contains("margin -"), "{head}");
    // The headline names the cause: the energy.
    assert!(
        head.contains("cannot reach the target energy") && head.contains("m/s short"),
        "{head}"
    );
    let cause = r["failure_cause"].as_str().unwrap_or_default();
    assert!(cause.contains("target energy"), "{cause}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_max_q_limit_that_cannot_be_held_is_named_as_the_cause() {
    // Repro (issue 9): max-Q 30 kPa with a first stage that throttles down only to 97 %: the
    // orbit alone is reachable, the limit with it is not. The headline must say so (it said
    // "no program found reaches the target", beside an EXCEEDED limit).
    let (code, r) = solve_json("tests/data/repro/maxq30_minthr097.json");
    assert_eq!(code, Some(1), "{}", r["convergence"]);
    let cause = r["failure_cause"].as_str().unwrap_or_default();
    assert!(
        cause.contains("max-Q limit cannot be held") && cause.contains("97 %"),
        "{cause}"
    );
    // The energy is (all but) reached: a few cm/s at most.
    assert!(
        r["shortfall_mps"].as_f64().unwrap_or(0.0) < 0.05,
        "{}",
        r["shortfall_mps"]
    );
    // The evidence is the least peak over programs that reach the target (phase 1 of the held
    // pass, stationary above the limit): between the limit and the unconstrained optimum's
    // 35.6 kPa, flown by a program that meets the target, found within a fixed trajectory
    // budget (1 441 trajectories before phase 1; 864 with it).
    let q = r["max_dynamic_pressure_pa"].as_f64().unwrap_or(f64::NAN);
    assert!(q > 30_000.0 && q < 35_000.0, "least peak {q} Pa");
    assert_eq!(
        r["target_deviation"]["met"], true,
        "{}",
        r["target_deviation"]
    );
    let n = r["convergence"]["trajectories"]
        .as_u64()
        .unwrap_or(u64::MAX);
    assert!(n <= 1_000, "{n} trajectories");
    // The text headline names the cause and shows no margin beside a broken limit.
    let out = kickturn(&["solve", "tests/data/repro/maxq30_minthr097.json"]);
    let text = String::from_utf8_lossy(&out.stdout);
    let head = text.lines().next().unwrap_or_default();
    assert!(
        head.starts_with("NOT SOLVED: the max-Q limit cannot be held")
            && head.contains("no margin"),
        "{head}"
    );
}

#[test]
fn a_dog_leg_reaches_an_inclination_below_the_site_latitude_at_a_steering_cost() {
    // Site at 28.2° N: 26° is out of direct reach. Allowed as a dog-leg, the solve yaws the upper
    // stage; the plane change shows as steering loss (common practice).
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let direct = text.replace("\"inclination_deg\": 51.6", "\"inclination_deg\": 30.0");
    let dogleg = text
        .replace(
            "\"inclination_deg\": 51.6, \"branch\": \"northerly\"",
            "\"inclination_deg\": 26.0, \"allow_dog_leg\": true",
        )
        .replace("\"inclination_deg\": 51.6", "\"inclination_deg\": 26.0");
    let run = |t: &str| {
        let p = Problem::from_json(t).unwrap_or_else(|e| panic!("{e}"));
        let s = tune(&p, &SolveOptions::default()).unwrap_or_else(|e| panic!("{e}"));
        let f = fly(&s.problem, &FlyOptions::default());
        (s, FlightReport::new(&p, &f))
    };
    let (sd, rd) = run(&dogleg);
    // The yaw-rate landscape is flat: the search may end on its iteration limit with the
    // conditions met, which is a solution.
    assert!(
        matches!(
            sd.convergence.status,
            SolveStatus::Converged | SolveStatus::IterationLimit
        ),
        "{:?}",
        sd.convergence
    );
    assert!(rd.target_deviation.is_some_and(|d| d.met));
    let (_, r30) = run(&direct);
    assert!(
        rd.budget.steering_loss_mps > r30.budget.steering_loss_mps + 100.0,
        "dog-leg steering {} vs direct {}",
        rd.budget.steering_loss_mps,
        r30.budget.steering_loss_mps
    );
}

#[test]
fn a_dynamic_pressure_limit_is_held_by_a_throttle_bucket_and_costed() {
    // The medium demo's unconstrained optimum peaks near 38.8 kPa; limit it to 32 kPa.
    let mut p = demo("medium-2stage-leo200.json");
    p.limits.max_dynamic_pressure_pa = Some(32_000.0);
    let free = solved("medium-2stage-leo200.json", &SolveOptions::default());
    let s = tune(&p, &SolveOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        s.convergence.status,
        SolveStatus::Converged,
        "{:?}",
        s.convergence
    );
    let f = fly(&s.problem, &FlyOptions::default());
    let q = f.max_q.map_or(f64::NAN, |m| m.value);
    assert!((q - 32_000.0).abs() < 1.0, "max-Q {q} Pa");
    assert!(s.problem.program.bucket.is_some_and(|b| b.throttle < 1.0));
    let a = s
        .active
        .first()
        .unwrap_or_else(|| panic!("no active constraint reported"));
    assert!(
        a.cost_kg > 0.0 && a.cost_kg < 2000.0,
        "cost {} kg",
        a.cost_kg
    );
    assert!((a.cost_kg - (s.eval.propellant_used_kg - free.eval.propellant_used_kg)).abs() < 1e-6);
}

#[test]
fn the_payload_mode_fills_the_margin_with_payload() {
    // Largest payload with every stage burned to depletion: flown as written (cutoff on the target
    // energy) it leaves just the reserves, and it carries more than the file's payload, whose
    // least-propellant solve left a positive margin.
    let dir = std::env::temp_dir().join(format!("kickturn-payload-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let path = dir.join("p.json");
    let o = path.to_string_lossy().to_string();
    let out = kickturn(&[
        "solve",
        "problems/medium-2stage-leo200.json",
        "--max-payload",
        "--json",
        "--write-program",
        &o,
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let r = json_of(&out);
    let payload = r["payload_kg"].as_f64().unwrap_or(0.0);
    assert!(payload > 9000.0, "payload {payload}");
    let margin = r["margin_kg"].as_f64().unwrap_or(f64::NAN);
    assert!(margin.abs() < 30.0, "margin after reserves {margin} kg");
    let flown = json_of(&kickturn(&["fly", &o, "--json"]));
    let d = &flown["target_deviation"];
    assert_eq!(d["met"], true, "{d}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_written_program_with_a_throttle_bucket_reproduces_the_held_max_q() {
    let dir = std::env::temp_dir().join(format!("kickturn-bucket-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let input = dir.join("q32.json");
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let _ = std::fs::write(
        &input,
        text.replace(
            "\"max_dynamic_pressure_pa\": 45000.0",
            "\"max_dynamic_pressure_pa\": 32000.0",
        ),
    );
    let out = dir.join("tuned.json");
    let (i, o) = (
        input.to_string_lossy().to_string(),
        out.to_string_lossy().to_string(),
    );
    let s = kickturn(&["solve", &i, "--write-program", &o, "--json"]);
    assert_eq!(
        s.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&s.stderr)
    );
    let f = json_of(&kickturn(&["fly", &o, "--json"]));
    let q = f["max_dynamic_pressure_pa"].as_f64().unwrap_or(f64::NAN);
    assert!(
        (q - 32_000.0).abs() < 1.0,
        "max-Q of the written program {q} Pa"
    );
    assert_eq!(f["target_deviation"]["met"], true);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn the_sqp_method_reaches_the_nested_optimum_with_few_trajectories() {
    // Issue 9: one constrained program over every parameter (experimental `--sqp`). It must meet
    // the terminal conditions, pass its first-order test, and land on the nested search's
    // propellant within the spread the perturbed-start test allows the nested search itself
    // (0.5 kg or 1e-4 of the final mass), on a fixed trajectory budget of 400 (the nested search
    // needs 1300 to 1900).
    for name in DEMOS {
        let nested = solved(
            name,
            &SolveOptions {
                method: kickturn::optimize::Method::Nested,
                ..SolveOptions::default()
            },
        );
        let sqp = solved(
            name,
            &SolveOptions {
                method: kickturn::optimize::Method::Sqp,
                max_trajectories: 400,
                ..SolveOptions::default()
            },
        );
        assert_eq!(
            sqp.convergence.status,
            SolveStatus::Converged,
            "{name}: {:?}",
            sqp.convergence
        );
        assert!(sqp.eval.reached && sqp.eval.max_abs() < 1e-3, "{name}");
        let d = sqp.eval.propellant_used_kg - nested.eval.propellant_used_kg;
        let final_mass = demo(name).vehicle.liftoff_mass_kg() - nested.eval.propellant_used_kg;
        let tol = 0.5f64.max(1e-4 * final_mass);
        assert!(
            d.abs() <= tol,
            "{name}: SQP − nested = {d:.2} kg (±{tol:.2})"
        );
        // Issue 9's goal: each demo solve within 300 trajectories.
        assert!(
            sqp.convergence.trajectories <= 300,
            "{name}: {} trajectories",
            sqp.convergence.trajectories
        );
        assert!(
            3 * sqp.convergence.trajectories < nested.convergence.trajectories,
            "{name}: {} vs {} trajectories",
            sqp.convergence.trajectories,
            nested.convergence.trajectories
        );
    }
}

/// Runs `kickturn solve FILE --json` and returns the exit code and the report.
fn solve_json(file: &str) -> (Option<i32>, serde_json::Value) {
    let out = kickturn(&["solve", file, "--json"]);
    let v = serde_json::from_slice(&out.stdout).unwrap_or_else(|e| {
        panic!(
            "{file}: stdout is not JSON ({e}); stderr: {}",
            String::from_utf8_lossy(&out.stderr)
        )
    });
    (out.status.code(), v)
}

#[test]
fn a_low_thrust_to_weight_vehicle_is_solved_not_called_infeasible() {
    // Repro (issue 9): the medium demo with its first-stage sea-level thrust lowered to 3.91 MN
    // (liftoff T/W 1.20). The nested search's kick grid started at 0.25°, every kick of it
    // crashed, and it reported "NOT SOLVED … 7019.9 m/s short"; the same file started by hand
    // from a 0.1° kick solved with a 968.1 kg margin. The start grid now reaches 0.05° and the
    // SQP variables are scaled by their sensitivity (the kick moves perigee by ~10⁴ km per
    // degree here).
    let (code, r) = solve_json("tests/data/repro/tw12.json");
    assert_eq!(code, Some(0), "{}", r["convergence"]);
    assert_eq!(r["convergence"]["status"], "converged");
    assert_eq!(r["target_deviation"]["met"], true);
    let margin = r["margin_kg"].as_f64().unwrap_or(f64::NAN);
    assert!(margin >= 968.1, "margin {margin} kg");
    // Within a fixed trajectory budget of a few hundred per start (not thousands).
    let n = r["convergence"]["trajectories"]
        .as_u64()
        .unwrap_or(u64::MAX);
    assert!(n <= 1500, "{n} trajectories");
}

#[test]
fn a_vehicle_scaled_down_ten_thousand_times_reaches_the_same_relative_margin() {
    // Repro (issue 9): the medium demo with masses, thrusts and areas ×1e-4 flies the same
    // trajectory (same accelerations; Tsiolkovsky's ΔV depends on mass ratios only), so its
    // margin must be 1e-4 of the full-scale margin (±0.1 %). It used to stop at its start and
    // say converged; later it stalled on integration noise in its 30 kg mass.
    let (code, full) = solve_json("problems/medium-2stage-leo200.json");
    assert_eq!(code, Some(0));
    let (code, small) = solve_json("tests/data/repro/scaled_medium_m4.json");
    assert_eq!(code, Some(0), "{}", small["convergence"]);
    assert_eq!(small["convergence"]["status"], "converged");
    let (a, b) = (
        full["margin_kg"].as_f64().unwrap_or(f64::NAN),
        small["margin_kg"].as_f64().unwrap_or(f64::NAN) * 1e4,
    );
    assert!(
        ((b - a) / a).abs() < 1e-3,
        "full {a} kg, scaled ×1e4 {b} kg"
    );
}

#[test]
fn a_limit_held_by_the_pitch_program_is_reported_so_and_never_beside_exceeded() {
    // Repro (issue 9): the medium demo with `min_throttle` 1 and a 35 kPa max-Q limit. It ended
    // `infeasible` with max-Q 37.1 kPa; and where a bucket cannot throttle, the report said the
    // limit was held by a bucket and wrote an inert one. Now: the limit holds, no bucket is
    // written, the report names the pitch program, and no "EXCEEDED" beside "held".
    let (code, r) = solve_json("tests/data/repro/medium_thr1_q35.json");
    let status = r["convergence"]["status"]
        .as_str()
        .unwrap_or_default()
        .to_string();
    assert!(
        matches!(status.as_str(), "converged" | "iteration_limit"),
        "{}",
        r["convergence"]
    );
    assert_eq!(code, Some(0));
    let q = r["max_dynamic_pressure_pa"].as_f64().unwrap_or(f64::NAN);
    assert!(q <= 35_000.0 * (1.0 + 1e-6), "max-Q {q} Pa");
    assert!(
        r["program"]["ascent"]["throttle_bucket"].is_null(),
        "{}",
        r["program"]
    );
    let active: Vec<String> = r["active_constraints"]
        .as_array()
        .cloned()
        .unwrap_or_default()
        .iter()
        .map(|v| v.as_str().unwrap_or_default().to_string())
        .collect();
    assert!(
        active
            .iter()
            .any(|a| a.contains("held at 35.0 kPa by a pitch program")),
        "{active:?}"
    );
    assert!(
        !active
            .iter()
            .any(|a| a.starts_with("max_dynamic_pressure_pa: EXCEEDED")),
        "{active:?}"
    );
    // With `min_throttle` 1 the first stage ends its burn at 6.07 g0 whatever the program: the
    // acceleration limit is reported exceeded, never "held by the throttle" (which it said).
    assert!(
        active
            .iter()
            .any(|a| a.starts_with("max_axial_accel_g: EXCEEDED")),
        "{active:?}"
    );
    assert!(
        !active.iter().any(|a| a.contains("the throttle holds")),
        "{active:?}"
    );
    // The held pass starts from a program under the limit (its phase 1), not from the free
    // optimum 3.6 kPa over it: from there a start a few tenths of a kilogram away decided
    // whether it converged (2 040 trajectories with a retry; 614 now).
    let n = r["convergence"]["trajectories"]
        .as_u64()
        .unwrap_or(u64::MAX);
    assert!(n <= 900, "{n} trajectories");
}

#[test]
fn a_limit_held_by_the_pitch_program_is_held_at_a_looser_integrator_tolerance() {
    // The same case flown at rtol 1e-9 (its flights differ by centimetres) ended infeasible
    // before the held pass had its phase 1: the outcome must not hang on such differences.
    let text = std::fs::read_to_string(root().join("tests/data/repro/medium_thr1_q35.json"))
        .unwrap_or_default();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
    v["model"]["rtol"] = serde_json::json!(1e-9);
    let p = Problem::from_json(&v.to_string()).unwrap_or_else(|e| panic!("{e}"));
    let s = tune(&p, &SolveOptions::default()).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        s.convergence.status,
        SolveStatus::Converged,
        "{:?}",
        s.convergence
    );
    assert!(
        s.eval.max_q_pa <= 35_000.0 * (1.0 + 1e-6),
        "{}",
        s.eval.max_q_pa
    );
    assert!(s.convergence.trajectories <= 900, "{:?}", s.convergence);
}

#[test]
fn multiplier_sensitivities_match_re_solves_with_the_input_moved() {
    // Source: envelope theorem for a regular constrained optimum, df*/dθ = ∂L/∂θ at (x*, λ*)
    // (Nocedal & Wright, Numerical Optimization, 2nd ed. 2006, §12.8; from memory): the
    // multipliers' figure must match the difference of two full solves with θ moved. A
    // finite difference of two optima carries their own tolerances and the curvature over the
    // step (5 km, 50 kg): 5 % agreement, well inside what separates the inputs' figures.
    let name = "medium-2stage-leo200.json";
    let base = solved(name, &SolveOptions::default());
    assert_eq!(base.convergence.status, SolveStatus::Converged);
    let sens = |field: &str| {
        base.sensitivities
            .iter()
            .find(|s| s.field == field)
            .unwrap_or_else(|| panic!("no sensitivity to {field}: {:?}", base.sensitivities))
            .kg_per_unit
    };
    type Move = fn(&mut Problem, f64);
    // The inclination case caught multipliers taken from the subproblem before the last step
    // (27.2 kg/deg against 30.2 re-solved, once the optimum sat on the pinned fairing/ignition
    // kink).
    let cases: [(&str, f64, Move); 3] = [
        ("target.apogee_alt_m", 5.0, |p, d| {
            if let Some(t) = p.target.as_mut() {
                t.apogee_alt_m += d * 1e3;
            }
        }),
        ("target.inclination_deg", 0.2, |p, d| {
            if let Some(i) = p.target.as_mut().and_then(|t| t.inclination_rad.as_mut()) {
                *i += d.to_radians();
            }
        }),
        ("vehicle.payload_kg", 50.0, |p, d| p.vehicle.payload_kg += d),
    ];
    for (field, step, change) in cases {
        let mut p = demo(name);
        change(&mut p, step);
        let moved = tune(&p, &SolveOptions::default()).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(moved.convergence.status, SolveStatus::Converged, "{field}");
        let fd = (moved.eval.propellant_used_kg - base.eval.propellant_used_kg) / step;
        let m = sens(field);
        assert!(
            (m - fd).abs() <= 0.05 * fd.abs(),
            "{field}: multipliers {m:.3} kg per unit, re-solve {fd:.3}"
        );
    }
    // Raising the target always costs propellant; so does payload (0.5–1.5 kg per kg on a
    // two-stage vehicle to low orbit: common practice).
    assert!(sens("target.perigee_alt_m") > 0.0);
    assert!((0.5..1.5).contains(&sens("vehicle.payload_kg")));
}

/// A flat-Earth, vacuum, uniform-gravity ascent whose mass falls (2 500 kg to about 1 950 kg:
/// the thrust acceleration rises from 3 g by a quarter), from rest to a horizontal 185 km,
/// 1627 m/s state, cut off on the target energy. (With an Isp of 450 s, where the acceleration
/// more than doubles, the shooting solve of the linear tangent law from a 60° start reports
/// the target out of reach: an open weakness of the start, noted in issue 9.)
fn flat_vacuum_ascent(steering: &str) -> Problem {
    let g = 1.61544;
    let json = format!(
        r#"{{
      "name": "flat free-attitude check",
      "site": {{ "name": "Flat test range", "latitude_deg": 0.0, "longitude_deg": 0.0 }},
      "launch": {{ "azimuth_deg": 90.0 }},
      "target": {{ "perigee_alt_km": 185.0, "apogee_alt_km": 185.0 }},
      "vehicle": {{ "name": "Test lander", "payload_kg": 0.0, "stages": [ {{
        "name": "ascent stage", "dry_mass_kg": 1000.0, "propellant_kg": 1500.0,
        "thrust_vac_n": 30000.0, "isp_vac_s": 1000.0, "exit_area_m2": 0.0,
        "aero": {{ "ref_area_m2": 1.0, "cd_mach": [[0.0, 0.0]] }} }} ] }},
      "ascent": {{ "arcs": [ {{ "burn": {{ "steering": {steering},
        "cutoff": "target_orbit" }} }} ] }}
    }}"#
    );
    let mut p = Problem::from_json(&json).unwrap_or_else(|e| panic!("{e}"));
    p.environment = Environment {
        earth: EarthModel::Flat { gravity_mps2: g },
        atmosphere: AtmosphereModel::Vacuum,
    };
    // Thrust 3 g at ignition (the file's thrust only passes the Earth pad check).
    p.vehicle.stages[0].engine.thrust_vac_n = 3.0 * g * p.vehicle.liftoff_mass_kg();
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
    p
}

#[test]
fn a_free_attitude_refinement_reproduces_the_linear_tangent_optimum() {
    // Source: Bryson & Ho, Applied Optimal Control (1975), §2.4 (from memory): over a flat
    // Earth in vacuum with uniform gravity the thrust direction that reaches a given altitude and
    // horizontal speed with the least propellant follows the linear tangent law, tan θ = tan θ0 −
    // c t, for any thrust-acceleration history. The shooting solve of that law is the optimum;
    // the refinement, started from a constant 30° pitch (far from it) with a free pitch at 20
    // nodes, must reach the same final mass to 1e-3 relative, and cannot beat it.
    let lt = flat_vacuum_ascent(
        r#"{ "linear_tangent": { "pitch0_deg": 60.0, "tan_rate_per_s": 0.005, "heading_deg": 90.0 } }"#,
    );
    let sol = tune(
        &lt,
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
    let m_lt = fly(&sol.problem, &FlyOptions::default()).y1[6];

    let start = flat_vacuum_ascent(r#"{ "pitch_table": [[0.0, 30.0]] }"#);
    let r = kickturn::optimize::refine::refine(
        &start,
        &kickturn::optimize::refine::RefineOptions::default(),
    )
    .unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        r.status,
        SolveStatus::Converged,
        "{} {:?} {:?}",
        r.reason,
        r.eval.residuals,
        r.problem.program.arcs
    );
    let f = fly(&r.problem, &FlyOptions::default());
    let m_ref = f.y1[6];
    let rel = (m_ref - m_lt) / m_lt;
    assert!(
        rel.abs() < 1e-3,
        "refined {m_ref} kg vs linear tangent {m_lt} kg"
    );
    // Not better than the optimum beyond the terminal tolerance's worth (±100 m, ±0.001°).
    assert!(rel < 2e-5, "refined {m_ref} kg beats the optimum {m_lt} kg");
}

#[test]
fn the_refinement_converges_in_the_node_count_and_never_loses_to_the_simple_program() {
    // Doubling the attitude nodes (20 → 40 per powered arc) moves the refined propellant by less
    // than 0.5 kg (the issue's convergence criterion), and the refined program, started from the
    // simple one, burns no more than it and meets the same target.
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let case = kickturn::app::Case::from_json(&text).unwrap_or_else(|e| panic!("{e}"));
    let refined = |n: usize| {
        let s = kickturn::app::solve::SolveSettings {
            refine: Some(kickturn::optimize::refine::RefineOptions {
                nodes_per_arc: n,
                ..Default::default()
            }),
            ..Default::default()
        };
        let run = kickturn::app::solve::solve(&case, &s, &kickturn::app::Silent)
            .unwrap_or_else(|e| panic!("{e}"));
        assert!(run.succeeded(), "{n} nodes: {:?}", run.report.convergence);
        run.report
            .refinement
            .unwrap_or_else(|| panic!("{n} nodes: no refinement"))
    };
    let (r20, r40) = (refined(20), refined(40));
    for r in [&r20, &r40] {
        assert_eq!(r.status, SolveStatus::Converged, "{}", r.reason);
        assert!(r.kept && r.gap_kg >= 0.0, "{r:?}");
    }
    let d = (r40.refined_propellant_used_kg - r20.refined_propellant_used_kg).abs();
    assert!(
        d < 0.5,
        "20 → 40 nodes moves the refined propellant by {d} kg"
    );
}

#[test]
fn an_equatorial_target_costs_no_more_than_the_same_ascent_stated_by_azimuth() {
    // The medium demo moved to the equator: inclination 0° as the target (azimuth and headings
    // tuned) against the same ascent stated as a due-east launch with due-east steering. Both
    // reach the same orbit; the inclination form may cost at most twice the trajectories
    // (it once took 30×: the inclination has a kink at 0°, so the plane is targeted by the
    // orbit normal's two equatorial components).
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let base: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
    let mut by_inc = base.clone();
    by_inc["site"]["latitude_deg"] = 0.0.into();
    by_inc["target"]["inclination_deg"] = 0.0.into();
    by_inc["launch"] = serde_json::json!({ "inclination_deg": 0.0 });
    let mut by_az = base;
    by_az["site"]["latitude_deg"] = 0.0.into();
    if let Some(t) = by_az["target"].as_object_mut() {
        t.remove("inclination_deg");
    }
    by_az["launch"] = serde_json::json!({ "azimuth_deg": 90.0 });
    by_az["ascent"]["arcs"][2]["burn"]["steering"]["linear_tangent"]["heading_deg"] = 90.0.into();
    let solve = |v: &serde_json::Value| {
        let p = Problem::from_json(&v.to_string()).unwrap_or_else(|e| panic!("{e}"));
        let s = tune(&p, &SolveOptions::default()).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(
            s.convergence.status,
            SolveStatus::Converged,
            "{:?}",
            s.convergence
        );
        let f = fly(&s.problem, &FlyOptions::default());
        let r = FlightReport::new(&s.problem, &f);
        assert!(
            r.target_deviation.is_some_and(|d| d.met),
            "{:?}",
            r.target_deviation
        );
        (
            s.convergence.trajectories,
            s.eval.propellant_used_kg,
            r.orbit.inclination_deg,
        )
    };
    let (n_inc, m_inc, i_inc) = solve(&by_inc);
    let (n_az, m_az, _) = solve(&by_az);
    assert!(i_inc.abs() < 1e-3, "inclination {i_inc}°");
    assert!(n_inc <= 2 * n_az, "{n_inc} trajectories against {n_az}");
    assert!((m_inc - m_az).abs() < 1.0, "{m_inc} kg against {m_az} kg");
}

#[test]
fn a_q_alpha_limit_is_reported_and_held_by_the_refinement() {
    // The simple program flies at zero angle of attack except around the pitch-over: its q·α
    // peak is small and early. A free thrust direction gains propellant by flying at an angle of
    // attack (the model's drag does not depend on it); a q·α limit must then be held along the
    // flight, and a tighter limit can only leave a smaller gain (common practice: the limit is a
    // constraint of the refinement, so its optimum is monotone in it).
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
    let refined = |v: &serde_json::Value| {
        let case = kickturn::app::Case::from_json(&v.to_string()).unwrap_or_else(|e| panic!("{e}"));
        let s = kickturn::app::solve::SolveSettings {
            refine: Some(kickturn::optimize::refine::RefineOptions {
                nodes_per_arc: 10,
                ..Default::default()
            }),
            ..Default::default()
        };
        let run = kickturn::app::solve::solve(&case, &s, &kickturn::app::Silent)
            .unwrap_or_else(|e| panic!("{e}"));
        let r = run.report;
        let gap = r.refinement.as_ref().map_or(f64::NAN, |x| x.gap_kg);
        let kept = r.refinement.as_ref().is_some_and(|x| x.kept);
        (gap, kept, r.flight.max_q_alpha_pa_deg)
    };
    let (free_gap, free_kept, free_qa) = refined(&v);
    assert!(free_kept && free_gap > 100.0, "gap {free_gap} kg");
    assert!(
        free_qa > 30_000.0,
        "unlimited refinement flies q·α {free_qa} Pa·deg"
    );
    v["limits"]["max_q_alpha_pa_deg"] = 30_000.0.into();
    let (gap, kept, qa) = refined(&v);
    assert!(kept, "the limited refinement was not kept");
    assert!(
        qa <= 30_000.0 * (1.0 + 1e-6),
        "q·α {qa} Pa·deg over the 30 kPa·deg limit"
    );
    assert!(
        gap >= 0.0 && gap < free_gap,
        "gap {gap} kg against {free_gap} kg unlimited"
    );
}

#[test]
fn a_scan_start_never_ends_below_the_file_program_in_the_payload_mode() {
    // Medium demo, payload mode, 400 km circular at 28.5° (site 28.2° N). The kick scan's best
    // start by constraint violation (a 14.6° kick) ended on a 43° kick with 6 587 kg; the file's
    // own program (6.8°) on a 2° kick with 7 489 kg. A solve with the scan must never return
    // less than the file's program alone (issue 9: "never worse than the base program").
    let written = medium_payload(400.0, 28.5, false);
    let scanned = medium_payload(400.0, 28.5, true);
    assert!(
        scanned >= written - 0.5,
        "scan {scanned} kg, file's program {written} kg"
    );
    // Regression guard on the invented demo (not a physical check value): the 43° optimum.
    assert!(scanned > 7_000.0, "{scanned} kg");
}

/// The medium demo's largest payload, kg, to a circular orbit at `alt_km` and `inc_deg`
/// (the solve must converge); `scan`: the kick scan beside the file's program.
fn medium_payload(alt_km: f64, inc_deg: f64, scan: bool) -> f64 {
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let mut v: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
    v["target"] = serde_json::json!({
        "perigee_alt_km": alt_km, "apogee_alt_km": alt_km, "inclination_deg": inc_deg
    });
    v["launch"]["inclination_deg"] = serde_json::json!(inc_deg);
    let p = Problem::from_json(&v.to_string()).unwrap_or_else(|e| panic!("{e}"));
    let o = SolveOptions {
        objective: kickturn::optimize::Objective::MaxPayload,
        scan,
        ..SolveOptions::default()
    };
    let s = tune(&p, &o).unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        s.convergence.status,
        SolveStatus::Converged,
        "{:?}",
        s.convergence
    );
    s.eval.payload_kg
}
