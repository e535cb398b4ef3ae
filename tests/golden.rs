//! Pins the `fly --json` and `solve --json` documents of every bundled demo to the documents the
//! tool produced before the application-layer restructuring (issue 8): same keys in the same
//! order, same strings, same counts, and every number equal to within 1e-9 relative (so that a
//! harmless reordering of floating-point operations does not fail the test, while any change of
//! physics, optimizer path or report content does).
//!
//! To re-pin after a deliberate change of output, regenerate `tests/data/golden/` with the
//! release binary (`kickturn fly|solve problems/NAME.json --json`) and say why in the commit.

use std::path::PathBuf;
use std::process::Command;

use serde_json::Value;

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Relative tolerance on numbers (absolute near zero).
const REL_TOL: f64 = 1e-9;

fn numbers_match(a: f64, b: f64) -> bool {
    let scale = a.abs().max(b.abs()).max(1e-6);
    (a - b).abs() <= REL_TOL * scale
}

/// Walks both documents; returns the JSON paths where they differ.
fn diff(path: &str, got: &Value, want: &Value, out: &mut Vec<String>) {
    match (got, want) {
        (Value::Number(a), Value::Number(b)) => {
            let (a, b) = (
                a.as_f64().unwrap_or(f64::NAN),
                b.as_f64().unwrap_or(f64::NAN),
            );
            if !numbers_match(a, b) {
                out.push(format!("{path}: {a} != {b}"));
            }
        }
        (Value::Object(a), Value::Object(b)) => {
            let ka: Vec<&String> = a.keys().collect();
            let kb: Vec<&String> = b.keys().collect();
            if ka != kb {
                out.push(format!("{path}: keys {ka:?} != {kb:?}"));
                return;
            }
            for (k, v) in a {
                diff(&format!("{path}.{k}"), v, &b[k], out);
            }
        }
        (Value::Array(a), Value::Array(b)) => {
            if a.len() != b.len() {
                out.push(format!("{path}: length {} != {}", a.len(), b.len()));
                return;
            }
            for (i, (x, y)) in a.iter().zip(b).enumerate() {
                diff(&format!("{path}[{i}]"), x, y, out);
            }
        }
        (a, b) if a == b => {}
        (a, b) => out.push(format!("{path}: {a} != {b}")),
    }
}

fn check(command: &str, demo: &str) {
    let out = Command::new(env!("CARGO_BIN_EXE_kickturn"))
        .args([command, &format!("problems/{demo}.json"), "--json"])
        .current_dir(root())
        .output()
        .expect("run kickturn");
    assert!(
        out.status.success(),
        "{command} {demo}: exit {:?}",
        out.status
    );
    let got: Value = serde_json::from_slice(&out.stdout).expect("stdout is JSON");
    let pinned = root().join(format!("tests/data/golden/{command}-{demo}.json"));
    let want: Value =
        serde_json::from_str(&std::fs::read_to_string(&pinned).expect("golden file")).unwrap();
    let mut d = Vec::new();
    diff("$", &got, &want, &mut d);
    assert!(
        d.is_empty(),
        "{command} {demo} differs from {}:\n{}",
        pinned.display(),
        d.join("\n")
    );
}

const DEMOS: [&str; 3] = [
    "heavy-boosters-leo300",
    "medium-2stage-leo200",
    "small-3stage-sso500",
];

#[test]
fn fly_json_of_every_demo_is_pinned() {
    for d in DEMOS {
        check("fly", d);
    }
}

#[test]
fn solve_json_of_every_demo_is_pinned() {
    for d in DEMOS {
        check("solve", d);
    }
}

#[test]
fn the_comparison_catches_a_changed_number_key_or_length() {
    let a: Value = serde_json::json!({"x": 1.0, "y": [1, 2], "s": "a"});
    let mut d = Vec::new();
    diff(
        "$",
        &a,
        &serde_json::json!({"x": 1.0 + 1e-12, "y": [1, 2], "s": "a"}),
        &mut d,
    );
    assert!(d.is_empty(), "{d:?}");
    diff(
        "$",
        &a,
        &serde_json::json!({"x": 1.001, "y": [1, 2], "s": "a"}),
        &mut d,
    );
    diff(
        "$",
        &a,
        &serde_json::json!({"x": 1.0, "y": [1], "s": "a"}),
        &mut d,
    );
    diff(
        "$",
        &a,
        &serde_json::json!({"x": 1.0, "z": [1, 2], "s": "a"}),
        &mut d,
    );
    diff(
        "$",
        &a,
        &serde_json::json!({"x": 1.0, "y": [1, 2], "s": "b"}),
        &mut d,
    );
    assert_eq!(d.len(), 4, "{d:?}");
}
