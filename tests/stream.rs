//! Issue 10 item 3, long runs keep what they finished: a study streams each finished point to
//! `--jsonl` (JSON Lines) and `--csv` (rows), an interrupted run leaves whole lines and says how
//! many points it kept, and a complete run's files equal its `--json` report.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};

use serde_json::Value;

mod bin_support;
use bin_support::{json_of, kickturn, root};

const MEDIUM: &str = "problems/medium-2stage-leo200.json";
const HEAVY: &str = "problems/heavy-boosters-leo300.json";

/// A fresh folder for one test's outputs.
fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("kickturn-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap_or_else(|e| panic!("{}: {e}", dir.display()));
    dir
}

fn text(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// Every line of a JSON Lines file, parsed; the file must end in a newline (whole lines only).
fn lines(path: &Path) -> Vec<Value> {
    let t = text(path);
    assert!(t.ends_with('\n'), "{}: a cut last line", path.display());
    t.lines()
        .map(|l| serde_json::from_str(l).unwrap_or_else(|e| panic!("not JSON ({e}): {l}")))
        .collect()
}

/// A point line without the stream's own keys: the fields of the `--json` point.
fn point_fields(line: &Value) -> Value {
    let mut v = line.clone();
    if let Some(m) = v.as_object_mut() {
        for k in ["record", "index", "problem", "parameter", "name"] {
            m.remove(k);
        }
    }
    v
}

fn index_of(line: &Value) -> usize {
    line["index"]
        .as_u64()
        .map_or(usize::MAX, |i| usize::try_from(i).unwrap_or(usize::MAX))
}

/// Checks the header, the completion line and that the point lines are exactly `points`, one
/// each, matched by index. Returns the point lines.
fn check_complete_stream(
    path: &Path,
    study: &str,
    points: &[Value],
    succeeded: bool,
) -> Vec<Value> {
    let all = lines(path);
    assert!(all.len() >= 2, "{all:?}");
    let head = &all[0];
    assert_eq!(head["record"], "header");
    assert_eq!(head["format"], "kickturn-points");
    assert_eq!(head["format_version"], 1);
    assert_eq!(
        head["tool"].as_str(),
        Some(format!("kickturn {}", env!("CARGO_PKG_VERSION")).as_str())
    );
    assert_eq!(head["study"], study);
    assert_eq!(head["planned_points"].as_u64(), Some(points.len() as u64));
    let last = &all[all.len() - 1];
    assert_eq!(last["record"], "complete");
    assert_eq!(last["complete"], true);
    assert_eq!(last["points"].as_u64(), Some(points.len() as u64));
    assert_eq!(last["succeeded"], succeeded);
    let body = all[1..all.len() - 1].to_vec();
    assert_eq!(body.len(), points.len());
    let mut seen = vec![false; points.len()];
    for l in &body {
        assert_eq!(l["record"], "point");
        let i = index_of(l);
        assert!(i < points.len() && !seen[i], "index {i} once: {body:?}");
        seen[i] = true;
        assert_eq!(point_fields(l), points[i], "point {i}");
    }
    body
}

#[test]
fn a_sweep_streams_each_point_as_its_json_report_has_it() {
    let dir = scratch("stream-sweep");
    let (jl, csv) = (dir.join("s.jsonl"), dir.join("s.csv"));
    let (j, c) = (jl.to_string_lossy(), csv.to_string_lossy());
    let args = ["sweep", MEDIUM, "--azimuth", "80:100:10", "--json"];
    let out = kickturn(&[&args[..], &["--jsonl", &j, "--csv", &c]].concat());
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report = json_of(&out);
    let points = report["points"].as_array().cloned().unwrap_or_default();
    assert_eq!(points.len(), 3);
    let body = check_complete_stream(&jl, "sweep", &points, true);
    let head = &lines(&jl)[0];
    assert_eq!(head["value"], "azimuth_deg");
    assert_eq!(head["input_sha256"][0], report["input_sha256"]);
    for l in &body {
        // The varied value travels with each point: 80, 90, 100 by index.
        assert_eq!(l["value"].as_f64(), Some(80.0 + 10.0 * index_of(l) as f64));
        assert_eq!(l["status"], "converged");
    }
    // At the end the CSV is the table in input order, the same bytes as a run without streams.
    let plain = dir.join("plain.csv");
    let p = plain.to_string_lossy();
    let again = kickturn(&[&args[..], &["--csv", &p]].concat());
    assert_eq!(again.status.code(), Some(0));
    assert_eq!(
        again.stdout, out.stdout,
        "the report does not depend on the streams"
    );
    assert_eq!(text(&csv), text(&plain));
    assert!(text(&csv).starts_with("swept_azimuth_deg,status,"));
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn compare_and_trade_stream_their_points_with_what_each_stands_for() {
    let dir = scratch("stream-compare");
    let jl = dir.join("c.jsonl");
    let j = jl.to_string_lossy();
    let out = kickturn(&["compare", MEDIUM, HEAVY, "--json", "--jsonl", &j]);
    assert_eq!(out.status.code(), Some(0));
    let report = json_of(&out);
    let pairs = report["problems"].as_array().cloned().unwrap_or_default();
    let points: Vec<Value> = pairs.iter().map(|p| p[1].clone()).collect();
    for l in check_complete_stream(&jl, "compare", &points, true) {
        assert_eq!(l["problem"], pairs[index_of(&l)][0]);
    }

    // A trade of 11 parameters (two stages, drag, the fairing and the reserve) is 22 points; a
    // small trajectory budget keeps it short (the factors need not converge for the stream to
    // be checked).
    let (jl, csv) = (dir.join("t.jsonl"), dir.join("t.csv"));
    let (j, c) = (jl.to_string_lossy(), csv.to_string_lossy());
    let out = kickturn(&[
        "trade",
        MEDIUM,
        "--max-trajectories",
        "300",
        "--json",
        "--jsonl",
        &j,
        "--csv",
        &c,
    ]);
    assert!(
        matches!(out.status.code(), Some(0 | 1)),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report = json_of(&out);
    let factors = report["factors"].as_array().cloned().unwrap_or_default();
    assert_eq!(factors.len(), 11);
    let all = lines(&jl);
    assert_eq!(all.len(), 22 + 2);
    assert_eq!(all[0]["planned_points"], 22);
    assert_eq!(all[0]["value"], "signed_step");
    assert_eq!(all[23]["complete"], true);
    assert_eq!(
        all[23]["succeeded"],
        report["factors"]
            .as_array()
            .is_some_and(|f| f.iter().all(|f| f["ok"] == true))
    );
    for l in &all[1..23] {
        let i = index_of(l);
        let f = &factors[i / 2];
        assert_eq!(l["parameter"], f["param"]);
        assert_eq!(l["name"], f["name"]);
        // Point 2k is +step and 2k + 1 is −step of factor k.
        let sign = if i % 2 == 0 { 1.0 } else { -1.0 };
        assert_eq!(l["value"].as_f64(), f["step"].as_f64().map(|s| sign * s));
    }
    let table = text(&csv);
    assert_eq!(table.lines().count(), 12, "header and eleven factors");
    assert!(table.starts_with("parameter,step,factor,unit,ok,step_unit\n"));
    let _ = std::fs::remove_dir_all(&dir);
}

/// Runs a long sweep on one thread, waits until the stream holds its first point (polling the
/// file), then sends `signal` and returns the exit status and stderr.
fn interrupt_after_first_point(args: &[&str], jsonl: &Path, signal: &str) -> (Option<i32>, String) {
    let mut child = Command::new(env!("CARGO_BIN_EXE_kickturn"))
        .args(args)
        .env("RAYON_NUM_THREADS", "1")
        .current_dir(root())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap_or_else(|e| panic!("cannot run kickturn: {e}"));
    loop {
        // Header and one point: two whole lines.
        let n = std::fs::read_to_string(jsonl).map_or(0, |t| t.matches('\n').count());
        if n >= 2 {
            break;
        }
        if let Ok(Some(status)) = child.try_wait() {
            panic!("kickturn ended before its first point: {status}");
        }
        std::thread::sleep(std::time::Duration::from_millis(5));
    }
    let pid = child.id().to_string();
    let sent = Command::new("kill").args([signal, &pid]).status();
    assert!(sent.is_ok_and(|s| s.success()), "kill {signal} {pid}");
    let status = child.wait().unwrap_or_else(|e| panic!("{e}"));
    let mut err = String::new();
    if let Some(mut e) = child.stderr.take() {
        let _ = e.read_to_string(&mut err);
    }
    (status.code(), err)
}

#[test]
fn an_interrupted_sweep_keeps_whole_lines_says_so_and_exits_130() {
    // 91 points on one thread: the interrupt comes after the first point and long before the
    // last (each point is a full solve).
    let dir = scratch("stream-interrupt");
    let (jl, csv) = (dir.join("i.jsonl"), dir.join("i.csv"));
    let (j, c) = (jl.to_string_lossy(), csv.to_string_lossy());
    let args = [
        "sweep",
        MEDIUM,
        "--azimuth",
        "0:180:2",
        "--jsonl",
        &j,
        "--csv",
        &c,
        "--json",
    ];
    let (code, err) = interrupt_after_first_point(&args, &jl, "-INT");
    assert_eq!(code, Some(130), "{err}");
    let all = lines(&jl);
    assert_eq!(all[0]["record"], "header");
    assert_eq!(all[0]["planned_points"], 91);
    let body = &all[1..];
    assert!(!body.is_empty() && body.len() < 91, "{} points", body.len());
    assert!(body
        .iter()
        .all(|l| l["record"] == "point" && l.get("complete").is_none()));
    let kept = body.len();
    assert!(
        err.contains(&format!(
            "interrupted: {kept} of 91 points kept in {j} (--jsonl)"
        )),
        "{err}"
    );
    // The CSV keeps the same points as rows with their index (whole rows, header first).
    let rows = text(&csv);
    assert!(rows.ends_with('\n'));
    let mut csv_lines = rows.lines();
    assert_eq!(
        csv_lines
            .next()
            .map(|h| h.starts_with("index,swept_azimuth_deg,status,payload_kg")),
        Some(true)
    );
    let mut csv_index: Vec<usize> = csv_lines
        .map(|l| {
            l.split(',')
                .next()
                .and_then(|i| i.parse().ok())
                .unwrap_or(usize::MAX)
        })
        .collect();
    let mut json_index: Vec<usize> = body.iter().map(index_of).collect();
    csv_index.sort_unstable();
    json_index.sort_unstable();
    assert_eq!(csv_index, json_index);
    assert!(
        err.contains(&format!("points kept in {c} (--csv)")),
        "{err}"
    );
    // No temporary file is left beside the outputs.
    let names: Vec<String> = std::fs::read_dir(&dir)
        .map(|d| {
            d.filter_map(Result::ok)
                .map(|e| e.file_name().to_string_lossy().into_owned())
                .collect()
        })
        .unwrap_or_default();
    assert_eq!(names.len(), 2, "{names:?}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_terminated_trade_keeps_its_finished_points() {
    // SIGTERM is handled as SIGINT is.
    let dir = scratch("stream-term");
    let jl = dir.join("t.jsonl");
    let j = jl.to_string_lossy();
    let (code, err) = interrupt_after_first_point(&["trade", HEAVY, "--jsonl", &j], &jl, "-TERM");
    assert_eq!(code, Some(130), "{err}");
    let all = lines(&jl);
    let planned = all[0]["planned_points"].as_u64().unwrap_or(0);
    assert!(planned > 2);
    let kept = all.len() - 1;
    assert!(all.last().is_some_and(|l| l["record"] == "point"));
    assert!(
        err.contains(&format!(
            "interrupted: {kept} of {planned} points kept in {j}"
        )),
        "{err}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn a_stream_output_is_checked_like_every_output() {
    let dir = scratch("stream-check");
    let same = dir.join("same.out");
    let s = same.to_string_lossy();
    for (args, expect) in [
        (
            vec![
                "sweep",
                MEDIUM,
                "--azimuth",
                "80:90:10",
                "--csv",
                &s,
                "--jsonl",
                &s,
            ],
            "--jsonl",
        ),
        (
            vec!["compare", MEDIUM, HEAVY, "--jsonl", MEDIUM],
            "is an input file",
        ),
        (
            vec!["trade", MEDIUM, "--jsonl", "no-such-folder/t.jsonl"],
            "does not exist",
        ),
    ] {
        let out = kickturn(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(expect), "{args:?}: {err}");
    }
    assert!(
        !same.exists(),
        "nothing is written before the outputs are checked"
    );
    let _ = std::fs::remove_dir_all(&dir);
}
