//! Criterion benchmark: one ascent of each bundled demo with the settings that are candidates for
//! new defaults (issue 11; docs/method.md §7), measured beside `benches/fly.rs`: integrator
//! `model.rtol` 1e-9 instead of 1e-11 (`rtol9`), `aero.cd_interpolation: "monotone_cubic"` on
//! every drag table instead of linear (`cubic`), both (`both`); Dormand–Prince 8(5,3)
//! (`model.integrator: "dop853"`) at rtol 1e-11, 1e-10, 1e-9 (`dp853`, `dp853_10`, `dp853_9`);
//! DP5 at 1e-10 (`rtol10`); and the corner-ending steps with carried step sizes
//! (`model.end_steps_at_corners`, `model.carry_step_size`) with DP5 (`dp5_fast`, `dp5_fast10`,
//! `dp5_fast9`) and with DP853 (`dp853_fast`, `dp853_fast10`, `dp853_fast9`). Run with
//! `cargo bench --bench fly_candidates` (about six minutes); `-- dp853_fast/` and the like pick
//! one variant.

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use kickturn::problem::Problem;
use kickturn::sim::{fly, FlyOptions};
use serde_json::{json, Value};

const DEMOS: [&str; 3] = [
    "small-3stage-sso500",
    "medium-2stage-leo200",
    "heavy-boosters-leo300",
];

/// Sets the integrator's relative tolerance to 1e-9.
fn rtol9(doc: &mut Value) {
    if !doc["model"].is_object() {
        doc["model"] = json!({});
    }
    doc["model"]["rtol"] = json!(1e-9);
}

/// Interpolates every drag table (stages and boosters) by the monotone cubic.
fn cubic(doc: &mut Value) {
    let vehicle = &mut doc["vehicle"];
    if let Some(stages) = vehicle["stages"].as_array_mut() {
        for s in stages.iter_mut().filter(|s| s["aero"].is_object()) {
            s["aero"]["cd_interpolation"] = json!("monotone_cubic");
        }
    }
    if vehicle["boosters"]["aero"].is_object() {
        vehicle["boosters"]["aero"]["cd_interpolation"] = json!("monotone_cubic");
    }
}

/// Both of the above.
fn both(doc: &mut Value) {
    rtol9(doc);
    cubic(doc);
}

/// Sets a `model` key.
fn model(doc: &mut Value, key: &str, value: Value) {
    if !doc["model"].is_object() {
        doc["model"] = json!({});
    }
    doc["model"][key] = value;
}

/// Dormand–Prince 8(5,3).
fn dp853(doc: &mut Value) {
    model(doc, "integrator", json!("dop853"));
}

/// Steps ending on corners, step sizes carried from segment to segment.
fn corners_carry(doc: &mut Value) {
    model(doc, "end_steps_at_corners", json!(true));
    model(doc, "carry_step_size", json!(true));
}

/// DP5 at rtol 1e-10.
fn rtol10(doc: &mut Value) {
    model(doc, "rtol", json!(1e-10));
}

/// [`dp853`] at rtol 1e-10.
fn dp853_10(doc: &mut Value) {
    dp853(doc);
    rtol10(doc);
}

/// [`dp853`] at rtol 1e-9.
fn dp853_9(doc: &mut Value) {
    dp853(doc);
    rtol9(doc);
}

/// DP5 with [`corners_carry`].
fn dp5_fast(doc: &mut Value) {
    corners_carry(doc);
}

/// [`dp5_fast`] at rtol 1e-10.
fn dp5_fast10(doc: &mut Value) {
    corners_carry(doc);
    rtol10(doc);
}

/// [`dp5_fast`] at rtol 1e-9.
fn dp5_fast9(doc: &mut Value) {
    corners_carry(doc);
    rtol9(doc);
}

/// DP853 with [`corners_carry`].
fn dp853_fast(doc: &mut Value) {
    dp853(doc);
    corners_carry(doc);
}

/// [`dp853_fast`] at rtol 1e-10.
fn dp853_fast10(doc: &mut Value) {
    dp853_fast(doc);
    rtol10(doc);
}

/// [`dp853_fast`] at rtol 1e-9.
fn dp853_fast9(doc: &mut Value) {
    dp853_fast(doc);
    rtol9(doc);
}

/// A named change of a problem document.
type Variant = (&'static str, fn(&mut Value));

fn bench_candidates(c: &mut Criterion) {
    let variants: [Variant; 13] = [
        ("rtol9", rtol9),
        ("cubic", cubic),
        ("both", both),
        ("rtol10", rtol10),
        ("dp853", dp853),
        ("dp853_10", dp853_10),
        ("dp853_9", dp853_9),
        ("dp5_fast", dp5_fast),
        ("dp5_fast10", dp5_fast10),
        ("dp5_fast9", dp5_fast9),
        ("dp853_fast", dp853_fast),
        ("dp853_fast10", dp853_fast10),
        ("dp853_fast9", dp853_fast9),
    ];
    let mut group = c.benchmark_group("fly_candidates");
    for (tag, change) in variants {
        for name in DEMOS {
            let path = Path::new(env!("CARGO_MANIFEST_DIR"))
                .join("problems")
                .join(format!("{name}.json"));
            let text = std::fs::read_to_string(&path).unwrap_or_default();
            let mut doc: Value = match serde_json::from_str(&text) {
                Ok(d) => d,
                Err(e) => panic!("demo problem {name} is not JSON: {e}"),
            };
            change(&mut doc);
            let problem = match Problem::from_json(&doc.to_string()) {
                Ok(p) => p,
                Err(e) => panic!("demo problem {name} ({tag}) does not load: {e}"),
            };
            let opts = FlyOptions::default();
            group.bench_function(format!("{tag}/{name}"), |b| {
                b.iter(|| fly(black_box(&problem), &opts))
            });
        }
    }
    group.finish();
}

// Criterion's own HTML charts need system fonts that this crate's plotters build leaves out.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = bench_candidates
}
criterion_main!(benches);
