//! Helpers for the closed-form integration tests: small problems built from JSON, flat-Earth
//! environments, flights from a given state, and the demo problems shipped in `problems/`.

use std::path::PathBuf;

use kickturn::budget::{budget, Bookkeeping, Budget};
use kickturn::physics::atmosphere::AtmosphereState;
use kickturn::physics::environment::{AtmosphereModel, EarthModel, Environment};
use kickturn::problem::Problem;
use kickturn::sim::{fly, Flight, FlyOptions, InitialState};
use nalgebra::Vector3;
use serde_json::{json, Value};

/// Standard gravity, m/s² (exact by definition; CGPM 1901).
pub const G0_MPS2: f64 = 9.806_65;

/// One serial stage of a test vehicle.
#[derive(Debug, Clone, Copy)]
pub struct StageSpec {
    /// Dry mass, kg.
    pub dry_kg: f64,
    /// Propellant, kg.
    pub prop_kg: f64,
    /// Vacuum thrust, N.
    pub thrust_vac_n: f64,
    /// Vacuum specific impulse, s.
    pub isp_s: f64,
    /// Nozzle exit area, m².
    pub exit_area_m2: f64,
    /// Constant drag coefficient (one-point C_D table).
    pub cd: f64,
    /// Reference area, m².
    pub ref_area_m2: f64,
}

fn stage_json(i: usize, s: &StageSpec) -> Value {
    json!({
        "name": format!("test stage {}", i + 1),
        "dry_mass_kg": s.dry_kg,
        "propellant_kg": s.prop_kg,
        "thrust_vac_n": s.thrust_vac_n,
        "isp_vac_s": s.isp_s,
        "exit_area_m2": s.exit_area_m2,
        "aero": { "ref_area_m2": s.ref_area_m2, "cd_mach": [[0.0, s.cd]] }
    })
}

/// A validated problem: invented site on the equator, azimuth 90°, the given stages and arcs
/// (JSON `ascent.arcs`), and a liftoff manoeuvre when the first arc is a gravity turn (ignored
/// when flown from a non-pad state).
pub fn problem(payload_kg: f64, stages: &[StageSpec], arcs: Value) -> Problem {
    let stages: Vec<Value> = stages
        .iter()
        .enumerate()
        .map(|(i, s)| stage_json(i, s))
        .collect();
    // The liftoff manoeuvre belongs to a first-arc gravity turn only (validation rejects it
    // otherwise).
    let ascent = if arcs[0]["burn"]["steering"] == "gravity_turn" {
        json!({
            "liftoff": { "vertical_rise": { "time_s": 5.0 }, "pitch_rate_deg_s": 1.0, "kick_deg": 1.0 },
            "arcs": arcs
        })
    } else {
        json!({ "arcs": arcs })
    };
    let doc = json!({
        "name": "closed-form check",
        "site": { "name": "Test Flats", "latitude_deg": 0.0, "longitude_deg": 0.0 },
        "launch": { "azimuth_deg": 90.0 },
        "vehicle": { "name": "Test Rocket", "payload_kg": payload_kg, "stages": stages },
        "ascent": ascent
    });
    Problem::from_json(&doc.to_string()).expect("test problem must validate")
}

/// Flat Earth with uniform gravity `g_mps2` and the given atmosphere.
pub fn flat(g_mps2: f64, atmosphere: AtmosphereModel) -> Environment {
    Environment {
        earth: EarthModel::Flat {
            gravity_mps2: g_mps2,
        },
        atmosphere,
    }
}

/// The same air at every altitude.
pub fn constant_air(pressure_pa: f64, density_kg_m3: f64) -> AtmosphereModel {
    AtmosphereModel::Constant(AtmosphereState {
        temperature_k: 288.15,
        pressure_pa,
        density_kg_m3,
        speed_of_sound_mps: 340.294,
    })
}

/// Flies `p` from the pad.
pub fn fly_from_pad(p: &Problem) -> Flight {
    fly(p, &FlyOptions::default())
}

/// Flies `p` from the state (t, r, v).
pub fn fly_from(p: &Problem, t_s: f64, r_m: Vector3<f64>, v_mps: Vector3<f64>) -> Flight {
    let opts = FlyOptions {
        record_step_s: None,
        initial: Some(InitialState { t_s, r_m, v_mps }),
    };
    fly(p, &opts)
}

/// Whole-flight budget.
pub fn flight_budget(p: &Problem, f: &Flight, kind: Bookkeeping) -> Budget {
    budget(&p.environment, &f.y0, &f.y1, kind)
}

/// Final position and velocity of a flight.
pub fn final_rv(f: &Flight) -> (Vector3<f64>, Vector3<f64>) {
    (
        Vector3::new(f.y1[0], f.y1[1], f.y1[2]),
        Vector3::new(f.y1[3], f.y1[4], f.y1[5]),
    )
}

/// The demo problems `problems/*.json` of the crate, sorted, with their file names.
pub fn demo_problems() -> Vec<(String, Problem)> {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("problems");
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("problems/ must be readable")
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.extension().is_some_and(|x| x == "json"))
        .collect();
    paths.sort();
    assert!(!paths.is_empty(), "no demo problems in {}", dir.display());
    paths
        .into_iter()
        .map(|path| {
            let name = path
                .file_name()
                .map_or_else(String::new, |n| n.to_string_lossy().into_owned());
            let p = Problem::from_json(&std::fs::read_to_string(&path).unwrap_or_default())
                .unwrap_or_else(|e| panic!("demo problem {name} must validate: {e}"));
            (name, p)
        })
        .collect()
}

/// The budget terms as (label, value) pairs, for term-by-term comparisons.
pub fn terms(b: &Budget) -> [(&'static str, f64); 9] {
    [
        ("ideal", b.ideal_mps),
        ("gravity", b.gravity_loss_mps),
        ("drag", b.drag_loss_mps),
        ("steering", b.steering_loss_mps),
        ("back-pressure", b.back_pressure_loss_mps),
        ("earth rotation", b.earth_rotation_mps),
        ("rotating frame", b.rotating_frame_mps),
        ("initial speed", b.initial_speed_mps),
        ("final speed", b.final_speed_mps),
    ]
}

/// Asserts that two budgets agree term by term within `tol_mps`; returns the largest difference.
pub fn assert_budgets_agree(what: &str, a: &Budget, b: &Budget, tol_mps: f64) -> f64 {
    let mut worst: f64 = 0.0;
    for ((name, x), (_, y)) in terms(a).iter().zip(terms(b).iter()) {
        let d = (x - y).abs();
        worst = worst.max(d);
        assert!(
            d <= tol_mps,
            "{what}: {name} differs by {d:.3e} m/s ({x:.9} vs {y:.9}), tolerance {tol_mps:e}"
        );
    }
    worst
}
