//! Property test over mutated demo problems (fixed seed, bounded cases so CI stays fast): any
//! numeric field replaced by an extreme or nonsensical value must give either a clean validation
//! error naming a field, or a flight whose report has finite numbers — never a panic or a hang.
//! Longer runs: `PROPTEST_CASES=20000 cargo test --release --test fuzz_inputs`.

use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use serde_json::Value;

use kickturn::app::outcome::FlightReport;
use kickturn::problem::Problem;
use kickturn::sim::{fly, FlyOptions};

fn demos() -> Vec<Value> {
    [
        "small-3stage-sso500",
        "medium-2stage-leo200",
        "heavy-boosters-leo300",
    ]
    .iter()
    .map(|n| {
        let p = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join(format!("problems/{n}.json"));
        serde_json::from_str(&std::fs::read_to_string(p).unwrap_or_default()).unwrap_or(Value::Null)
    })
    .collect()
}

/// Paths (as pointer strings) of every number in a JSON tree.
fn number_paths(v: &Value, at: String, out: &mut Vec<String>) {
    match v {
        Value::Number(_) => out.push(at),
        Value::Array(a) => a
            .iter()
            .enumerate()
            .for_each(|(i, x)| number_paths(x, format!("{at}/{i}"), out)),
        Value::Object(o) => o
            .iter()
            .for_each(|(k, x)| number_paths(x, format!("{at}/{k}"), out)),
        _ => {}
    }
}

fn nasty() -> impl Strategy<Value = f64> {
    prop_oneof![
        Just(0.0),
        Just(-1.0),
        Just(1e308),
        Just(-1e308),
        Just(1e-300),
        Just(1e9),
        -1e6..1e6f64,
        0.5..2.0f64,
    ]
}

fn check_report(r: &FlightReport) {
    for b in [&r.budget, &r.budget_inertial] {
        for x in [
            b.ideal_mps,
            b.gravity_loss_mps,
            b.drag_loss_mps,
            b.steering_loss_mps,
            b.back_pressure_loss_mps,
            b.earth_rotation_mps,
            b.final_speed_mps,
        ] {
            assert!(x.is_finite(), "non-finite budget term in {b:?}");
        }
    }
    assert!(r.orbit.perigee_alt_km.is_finite() && r.orbit.inclination_deg.is_finite());
    assert!(r.propellant_remaining_kg.is_finite() && r.max_axial_accel_g.is_finite());
}

fn run_case(doc: &Value, path: &str, factor_or_value: f64, scale: bool) {
    let mut d = doc.clone();
    if let Some(slot) = d.pointer_mut(path) {
        let old = slot.as_f64().unwrap_or(1.0);
        let new = if scale {
            old * factor_or_value
        } else {
            factor_or_value
        };
        if let Some(n) = serde_json::Number::from_f64(new) {
            *slot = Value::Number(n);
        }
    }
    let text = d.to_string();
    match Problem::from_json(&text) {
        Err(e) => {
            let msg = e.to_string();
            assert!(!msg.is_empty());
        }
        Ok(mut p) => {
            // Keep every case short whatever it asks for.
            p.integrator.max_flight_time_s = p.integrator.max_flight_time_s.min(3000.0);
            let f = fly(&p, &FlyOptions::default());
            check_report(&FlightReport::new(&p, &f));
        }
    }
}

#[test]
fn mutated_problems_never_panic_and_reports_stay_finite() {
    let docs = demos();
    let cases: u32 = std::env::var("PROPTEST_CASES")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(96);
    let mut runner = TestRunner::new_with_rng(
        Config {
            cases,
            failure_persistence: None,
            ..Config::default()
        },
        TestRng::from_seed(RngAlgorithm::ChaCha, &[7u8; 32]),
    );
    let strategy = (
        0..docs.len(),
        any::<prop::sample::Index>(),
        nasty(),
        any::<bool>(),
    );
    let result = runner.run(&strategy, |(k, idx, x, scale)| {
        let mut paths = Vec::new();
        number_paths(&docs[k], String::new(), &mut paths);
        let path = idx.get(&paths).clone();
        run_case(&docs[k], &path, x, scale);
        Ok(())
    });
    assert!(result.is_ok(), "{result:?}");
}

#[test]
fn arbitrary_bytes_are_rejected_cleanly() {
    let mut runner = TestRunner::new_with_rng(
        Config {
            cases: 256,
            failure_persistence: None,
            ..Config::default()
        },
        TestRng::from_seed(RngAlgorithm::ChaCha, &[9u8; 32]),
    );
    let result = runner.run(&proptest::collection::vec(any::<u8>(), 0..400), |bytes| {
        let text = String::from_utf8_lossy(&bytes);
        assert!(Problem::from_json(&text).is_err());
        Ok(())
    });
    assert!(result.is_ok(), "{result:?}");
}

#[test]
fn mutated_problems_solve_within_their_budget() {
    // A bounded solve on mutated problems: it must end (budget respected), never panic, and
    // report finite numbers.
    let docs = demos();
    let cases: u32 = std::env::var("PROPTEST_SOLVE_CASES")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(12);
    let mut runner = TestRunner::new_with_rng(
        Config {
            cases,
            failure_persistence: None,
            ..Config::default()
        },
        TestRng::from_seed(RngAlgorithm::ChaCha, &[11u8; 32]),
    );
    let strategy = (0..docs.len(), any::<prop::sample::Index>(), 0.5..2.0f64);
    let result = runner.run(&strategy, |(k, idx, factor)| {
        let mut paths = Vec::new();
        number_paths(&docs[k], String::new(), &mut paths);
        let path = idx.get(&paths).clone();
        let mut d = docs[k].clone();
        if let Some(slot) = d.pointer_mut(&path) {
            let new = slot.as_f64().unwrap_or(1.0) * factor;
            if let Some(n) = serde_json::Number::from_f64(new) {
                *slot = Value::Number(n);
            }
        }
        if let Ok(p) = Problem::from_json(&d.to_string()) {
            let opts = kickturn::optimize::SolveOptions {
                max_trajectories: 300,
                scan: false,
                ..kickturn::optimize::SolveOptions::default()
            };
            // The trajectory budget bounds the work; no wall-clock assertion (results and tests
            // must not depend on the machine's speed).
            if let Ok(s) = kickturn::optimize::tune(&p, &opts) {
                assert!(
                    s.convergence.trajectories <= 300 + 64,
                    "budget: {}",
                    s.convergence.trajectories
                );
                assert!(s.eval.propellant_used_kg.is_finite());
            }
        }
        Ok(())
    });
    assert!(result.is_ok(), "{result:?}");
}
