//! Closed-loop upper-stage guidance (`"steering": {"guidance": {}}`): the linear tangent optimum in
//! a flat-Earth vacuum, the demos' targets met with guidance on their insertion burn, and
//! convergence from thrust and Isp errors.

use kickturn::app::outcome::FlightReport;
use kickturn::problem::Problem;
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

#[test]
fn explore() {
    for name in [
        "medium-2stage-leo200.json",
        "heavy-boosters-leo300.json",
        "small-3stage-sso500.json",
    ] {
        let (fo, _ro) = report(&problem(&demo_json(name)));
        let (f, r) = report(&problem(&guided(name)));
        println!(
            "{name}: {:?} end {:?} prop {:.2} (open loop {:.2}) t {:.2}",
            r.target_deviation, f.end, f.propellant_remaining_kg, fo.propellant_remaining_kg, f.t1_s
        );
    }
}
