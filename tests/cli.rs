//! End-to-end tests of the `kickturn` binary: demo problems, JSON schema, CSV, exit codes and
//! bad-input messages.

use std::path::{Path, PathBuf};
use std::process::Command;

mod bin_support;
use bin_support::{json_of, kickturn, root};

fn demos() -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(root().join("problems"))
        .map(|d| {
            d.filter_map(Result::ok)
                .map(|e| format!("problems/{}", e.file_name().to_string_lossy()))
                .filter(|n| n.ends_with(".json"))
                .collect()
        })
        .unwrap_or_default();
    v.sort();
    v
}

#[test]
fn every_demo_reaches_orbit_and_both_budgets_close() {
    let demos = demos();
    assert_eq!(demos.len(), 3, "three demo problems are bundled");
    for d in demos {
        let out = kickturn(&["fly", &d, "--json"]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{d}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
        let r = json_of(&out);
        assert_eq!(r["status"], "orbit", "{d}");
        for key in ["budget", "budget_inertial"] {
            let b = &r[key];
            let closure = b["closure_error_mps"].as_f64().unwrap_or(f64::NAN);
            assert!(closure.abs() < 1e-3, "{d} {key} closure {closure}");
            for term in [
                "ideal_mps",
                "gravity_loss_mps",
                "drag_loss_mps",
                "steering_loss_mps",
                "back_pressure_loss_mps",
                "earth_rotation_mps",
                "rotating_frame_mps",
            ] {
                assert!(
                    b[term].as_f64().is_some_and(f64::is_finite),
                    "{d} {key}.{term}"
                );
            }
        }
        // Plausible losses for an ascent to low orbit (common practice; handbook tables
        // of historical launchers, from memory): gravity 0.6–2.5 km/s, drag under 0.5 km/s, ideal 8.5–12 km/s.
        let b = &r["budget"];
        let g = b["gravity_loss_mps"].as_f64().unwrap_or(0.0);
        let dr = b["drag_loss_mps"].as_f64().unwrap_or(-1.0);
        let ideal = b["ideal_mps"].as_f64().unwrap_or(0.0);
        assert!((600.0..2500.0).contains(&g), "{d} gravity loss {g}");
        assert!((0.0..500.0).contains(&dr), "{d} drag loss {dr}");
        assert!((8500.0..12000.0).contains(&ideal), "{d} ideal {ideal}");
        for k in [
            "perigee_alt_km",
            "apogee_alt_km",
            "inclination_deg",
            "insertion_alt_km",
            "insertion_speed_mps",
            "flight_path_angle_deg",
        ] {
            assert!(r["orbit"][k].is_number(), "{d} orbit.{k}");
        }
        for k in [
            "propellant_remaining_kg",
            "max_dynamic_pressure_pa",
            "max_axial_accel_g",
        ] {
            assert!(
                r[k].as_f64().is_some_and(|x| x.is_finite() && x > 0.0),
                "{d} {k}"
            );
        }
        assert!(
            r["events"].as_array().is_some_and(|e| e.len() >= 6),
            "{d} events"
        );
        assert!(
            r["phases"].as_array().is_some_and(|p| p.len() >= 3),
            "{d} phases"
        );
        assert!(r["caution"]
            .as_str()
            .is_some_and(|c| c.contains("Preliminary design")));
    }
}

#[test]
fn demos_hit_their_target_inclination_and_altitudes_closely() {
    for d in demos() {
        let r = json_of(&kickturn(&["fly", &d, "--json"]));
        let o = &r["orbit"];
        let t = &r["target"];
        let di = o["inclination_deg"].as_f64().unwrap_or(0.0)
            - t["inclination_deg"].as_f64().unwrap_or(1e9);
        assert!(di.abs() < 0.01, "{d}: inclination off by {di}°");
        let dp = o["perigee_alt_km"].as_f64().unwrap_or(0.0)
            - t["perigee_alt_km"].as_f64().unwrap_or(1e9);
        assert!(dp.abs() < 10.0, "{d}: perigee off by {dp} km");
    }
}

#[test]
fn text_report_starts_with_the_verdict_and_names_the_bookkeeping() {
    let out = kickturn(&["fly", "problems/medium-2stage-leo200.json"]);
    assert_eq!(out.status.code(), Some(0));
    let text = String::from_utf8_lossy(&out.stdout);
    let second = text.lines().nth(1).unwrap_or("");
    assert!(second.starts_with("ORBIT REACHED"), "{second}");
    assert!(text.contains("Earth-relative bookkeeping"));
    assert!(text.contains("inertial bookkeeping"));
    assert!(text.contains("max-Q"));
    assert!(text.contains("CAUTION"));
}

#[test]
fn csv_history_has_units_in_columns_and_is_written_atomically() {
    let dir = std::env::temp_dir().join(format!("kickturn-csv-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let path = dir.join("h.csv");
    let p = path.to_string_lossy().to_string();
    let out = kickturn(&[
        "fly",
        "problems/medium-2stage-leo200.json",
        "--csv",
        &p,
        "--csv-step-s",
        "2",
    ]);
    assert_eq!(out.status.code(), Some(0));
    let text = std::fs::read_to_string(&path).unwrap_or_default();
    let mut lines = text.lines();
    let header = lines.next().unwrap_or("");
    for col in [
        "t_s",
        "altitude_m",
        "downrange_m",
        "speed_rel_mps",
        "dynamic_pressure_pa",
        "mass_kg",
        "gravity_loss_rel_mps",
    ] {
        assert!(header.split(',').any(|c| c == col), "missing column {col}");
    }
    let rows = lines.count();
    assert!(rows > 150, "history rows {rows}");
    let leftovers: Vec<_> = std::fs::read_dir(&dir)
        .map(|d| {
            d.filter_map(Result::ok)
                .filter(|e| e.file_name().to_string_lossy().contains(".tmp"))
                .collect()
        })
        .unwrap_or_default();
    assert!(leftovers.is_empty(), "temporary files left behind");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn refuses_to_write_the_csv_over_the_input() {
    let dir = std::env::temp_dir().join(format!("kickturn-over-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let input = dir.join("p.json");
    let original = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let _ = std::fs::write(&input, &original);
    let i = input.to_string_lossy().to_string();
    let out = kickturn(&["fly", &i, "--csv", &i]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(
        std::fs::read_to_string(&input).unwrap_or_default(),
        original
    );
    let _ = std::fs::remove_dir_all(&dir);
}

/// Each bad file in tests/data/bad has its expected message fragment on the first line
/// of a sibling `.expect` file.
#[test]
fn bad_inputs_exit_2_with_the_field_path_and_nothing_on_stdout() {
    let dir = root().join("tests/data/bad");
    let mut n = 0;
    let mut entries: Vec<_> = std::fs::read_dir(&dir)
        .map(|d| d.filter_map(Result::ok).map(|e| e.path()).collect())
        .unwrap_or_default();
    entries.sort();
    for path in entries
        .iter()
        .filter(|p| p.extension().is_some_and(|e| e == "json"))
    {
        let expect_path = path.with_extension("expect");
        let expected = std::fs::read_to_string(&expect_path).unwrap_or_default();
        let expected = expected.lines().next().unwrap_or("").trim();
        assert!(!expected.is_empty(), "{} has no .expect", path.display());
        let p = path.to_string_lossy().to_string();
        for args in [vec!["fly", p.as_str()], vec!["fly", p.as_str(), "--json"]] {
            let out = kickturn(&args);
            let err = String::from_utf8_lossy(&out.stderr);
            assert_eq!(out.status.code(), Some(2), "{}: {err}", path.display());
            assert!(err.starts_with("error: "), "{}: {err}", path.display());
            if args.len() == 3 {
                // Under --json the same error as a JSON object on stdout (issue 12).
                let r = json_of(&out);
                assert_eq!(r["status"], "bad_input", "{}", path.display());
                assert!(
                    r["error"]["kind"] == "format" || r["error"]["kind"] == "invalid",
                    "{}: {r}",
                    path.display()
                );
                assert!(r["error"]["field"].is_string(), "{}: {r}", path.display());
                assert!(
                    r["error"]["message"]
                        .as_str()
                        .is_some_and(|m| m.contains(expected)),
                    "{}: {r}",
                    path.display()
                );
                continue;
            }
            assert!(
                out.stdout.is_empty(),
                "{}: stdout not empty",
                path.display()
            );
            assert!(
                err.contains(expected),
                "{}: expected `{expected}` in `{err}`",
                path.display()
            );
        }
        n += 1;
    }
    assert!(n >= 12, "only {n} bad-input cases");
}

#[test]
fn usage_errors_exit_2() {
    assert_eq!(kickturn(&["fly"]).status.code(), Some(2));
    assert_eq!(kickturn(&["soar", "x.json"]).status.code(), Some(2));
    let missing = kickturn(&["fly", "no/such/file.json"]);
    assert_eq!(missing.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&missing.stderr).contains("no/such/file.json"));
    assert!(Path::new(env!("CARGO_BIN_EXE_kickturn")).exists());
}

#[test]
fn fly_writes_figures_and_a_self_contained_html_report() {
    let dir = std::env::temp_dir().join(format!("kickturn-figs-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    let figs = dir.join("figs");
    let html = dir.join("report.html");
    let _ = std::fs::create_dir_all(&dir);
    let (f, h) = (
        figs.to_string_lossy().to_string(),
        html.to_string_lossy().to_string(),
    );
    let out = kickturn(&[
        "fly",
        "problems/heavy-boosters-leo300.json",
        "--plot",
        &f,
        "--report",
        &h,
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    for stem in [
        "altitude_speed",
        "angles",
        "loads",
        "profile",
        "budget_arcs",
        "budget",
        "losses",
        "mass_throttle",
        "mach",
        "ground_track",
    ] {
        let png = std::fs::metadata(figs.join(format!("{stem}.png")))
            .map(|m| m.len())
            .unwrap_or(0);
        assert!(png > 10_000, "{stem}.png is {png} bytes");
        let svg = std::fs::read_to_string(figs.join(format!("{stem}.svg"))).unwrap_or_default();
        assert!(
            svg.contains("<svg") && svg.contains("Corvane Heavy"),
            "{stem}.svg"
        );
    }
    let page = std::fs::read_to_string(&html).unwrap_or_default();
    assert!(page.starts_with("<!DOCTYPE html>"));
    assert_eq!(page.matches("<svg").count(), 10, "ten inline figures");
    assert!(page.contains("Preliminary design only"));
    assert!(
        !page.contains("http://") || page.contains("http://www.w3.org"),
        "no network resources"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn sweep_keeps_every_point_in_json_and_csv() {
    let dir = std::env::temp_dir().join(format!("kickturn-sweep-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let csv = dir.join("s.csv");
    let c = csv.to_string_lossy().to_string();
    let out = kickturn(&[
        "sweep",
        "problems/heavy-boosters-leo300.json",
        "--altitude",
        "250:350:50",
        "--json",
        "--csv",
        &c,
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let r = json_of(&out);
    let pts = r["points"].as_array().cloned().unwrap_or_default();
    assert_eq!(pts.len(), 3);
    let used: Vec<f64> = pts
        .iter()
        .map(|p| {
            p["report"]["propellant_used_kg"]
                .as_f64()
                .unwrap_or(f64::NAN)
        })
        .collect();
    // A higher circular orbit costs more propellant (common practice).
    assert!(used[0] < used[1] && used[1] < used[2], "{used:?}");
    let text = std::fs::read_to_string(&csv).unwrap_or_default();
    assert_eq!(text.lines().count(), 4, "header and three rows");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn solve_json_is_byte_identical_across_runs_and_thread_counts() {
    let run = |threads: &str| match Command::new(env!("CARGO_BIN_EXE_kickturn"))
        .args(["solve", "problems/heavy-boosters-leo300.json", "--json"])
        .env("RAYON_NUM_THREADS", threads)
        .current_dir(root())
        .output()
    {
        Ok(o) => o.stdout,
        Err(e) => panic!("{e}"),
    };
    let one = run("1");
    assert!(!one.is_empty());
    assert_eq!(one, run("2"), "1 vs 2 threads");
    assert_eq!(one, run("2"), "second run");
}

#[test]
fn a_byte_order_mark_is_accepted_and_an_endless_input_refused_at_once() {
    // Issue 10: a UTF-8 BOM before the JSON is accepted; /dev/zero is read no further than the
    // size cap (16 MiB) and refused with exit 2.
    let dir = std::env::temp_dir().join(format!("kickturn-bom-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let demo = std::fs::read(root().join("problems/medium-2stage-leo200.json")).expect("demo");
    let bom = dir.join("bom.json");
    std::fs::write(&bom, [b"\xef\xbb\xbf".as_slice(), &demo].concat()).expect("written");
    let out = kickturn(&["fly", &bom.to_string_lossy(), "--json"]);
    assert_eq!(out.status.code(), Some(0));
    assert_eq!(json_of(&out)["status"], "orbit");
    if Path::new("/dev/zero").exists() {
        let out = kickturn(&["fly", "/dev/zero"]);
        assert_eq!(out.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&out.stderr).contains("larger than 16 MiB"));
    }
    std::fs::remove_dir_all(&dir).expect("cleanup");
}

#[test]
fn numeric_options_outside_their_range_exit_2_with_the_range() {
    // Issue 10: `--csv-step-s 1e-300` looped forever, `--max-wall-s 1e20` panicked (exit 101).
    let demo = "problems/medium-2stage-leo200.json";
    for (args, expect) in [
        (
            vec!["fly", demo, "--csv", "x.csv", "--csv-step-s", "1e-300"],
            "--csv-step-s: must lie in [0.001, 100000] s, got 1e-300",
        ),
        (
            vec!["solve", demo, "--max-wall-s", "1e20"],
            "--max-wall-s: must lie in [0.001, 1000000], got 1e20",
        ),
        (
            vec!["sweep", demo, "--azimuth", "0:10:10", "--max-wall-s", "0"],
            "--max-wall-s: must lie in [0.001, 1000000], got 0",
        ),
        (
            vec!["solve", demo, "--max-trajectories", "0"],
            "--max-trajectories: must lie in [1, 100000000], got 0",
        ),
    ] {
        let out = kickturn(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(expect), "{args:?}: {err}");
        assert!(out.stdout.is_empty());
    }
    assert!(!root().join("x.csv").exists());
}

#[test]
fn an_escape_trajectory_is_not_an_orbit() {
    // Issue 10: a hyperbolic escape was reported "ORBIT REACHED" with exit 0. Now status
    // `escape`, exit 1, and the hyperbolic excess speed v∞ = √(v² − 2μ/r) (vis-viva; any
    // orbital mechanics text, e.g. Curtis ch. 2).
    let dir = std::env::temp_dir().join(format!("kickturn-escape-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let mut v: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json")).expect("demo"),
    )
    .expect("json");
    // A payload of 100 kg and the upper stage burned to depletion: far past escape speed.
    v["vehicle"]["payload_kg"] = 100.0.into();
    v["ascent"]["arcs"][2]["burn"]["cutoff"] = "depletion".into();
    v["ascent"]["arcs"][2]["burn"]["steering"]["linear_tangent"]["pitch0_deg"] = 5.0.into();
    v["ascent"]["arcs"][2]["burn"]["steering"]["linear_tangent"]["tan_rate_per_s"] = 0.0.into();
    let path = dir.join("escape.json");
    std::fs::write(&path, v.to_string()).expect("written");
    let out = kickturn(&["fly", &path.to_string_lossy(), "--json"]);
    assert_eq!(out.status.code(), Some(1));
    let r = json_of(&out);
    assert_eq!(r["status"], "escape", "{}", r["orbit"]);
    assert!(r["orbit"]["eccentricity"].as_f64().unwrap_or(0.0) >= 1.0);
    let vinf = r["orbit"]["v_infinity_mps"].as_f64().unwrap_or(f64::NAN);
    let rr = 6_378_137.0 + 1e3 * r["orbit"]["insertion_alt_km"].as_f64().unwrap_or(f64::NAN);
    let vv = r["orbit"]["insertion_speed_mps"]
        .as_f64()
        .unwrap_or(f64::NAN);
    let want = (vv * vv - 2.0 * 3.986_004_418e14 / rr).sqrt();
    assert!((vinf - want).abs() < 1e-6 * want, "v∞ {vinf} vs {want}");
    std::fs::remove_dir_all(&dir).expect("cleanup");
}

#[test]
fn a_solve_on_a_spherical_earth_measures_the_orbit_above_the_sphere() {
    // The medium demo with `"earth": {"sphere": ...}` of the mean Earth radius 6371 km (a
    // textbook value; any radius serves) and the WGS-84 GM. A 200 km circular target is then
    // met at r = R + 200 km with the circular speed v = √(μ/r) (vis-viva with a = r; Bate,
    // Mueller & White 1971, ch. 1): 7788.49 m/s, where apsides measured above the WGS-84
    // equatorial radius (7.137 km higher) would give 4.2 m/s less.
    let dir = std::env::temp_dir().join(format!("kickturn-sphere-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let mut v: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json")).expect("demo"),
    )
    .expect("json");
    let (radius, mu) = (6_371_000.0, 3.986_004_418e14);
    v["model"] =
        serde_json::json!({ "earth": { "sphere": { "radius_m": radius, "gm_m3_s2": mu } } });
    let path = dir.join("sphere.json");
    std::fs::write(&path, v.to_string()).expect("written");
    let out = kickturn(&["solve", &path.to_string_lossy(), "--json"]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let r = json_of(&out);
    assert_eq!(r["status"], "orbit");
    assert_eq!(r["earth"]["model"], "sphere");
    assert_eq!(r["earth"]["radius_m"], radius);
    assert_eq!(r["earth"]["j2"], false);
    let num = |x: &serde_json::Value| x.as_f64().unwrap_or(f64::NAN);
    let o = &r["orbit"];
    for key in ["perigee_alt_km", "apogee_alt_km", "insertion_alt_km"] {
        assert!((num(&o[key]) - 200.0).abs() < 0.1, "{key}: {}", o[key]);
    }
    let r_c = radius + 1e3 * num(&o["insertion_alt_km"]);
    let v_c = (mu / r_c).sqrt();
    assert!((v_c - 7788.49).abs() < 0.1, "{v_c}");
    assert!(
        (num(&o["insertion_speed_mps"]) - v_c).abs() < 0.05,
        "{}",
        o["insertion_speed_mps"]
    );
    assert!(r["conventions"][0]
        .as_str()
        .unwrap_or("")
        .contains("6371.000 km"));
    // The text report names the model at the top and measures the events above the sphere.
    let out = kickturn(&["fly", &path.to_string_lossy()]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.lines()
            .nth(1)
            .unwrap_or("")
            .starts_with("Earth model: spherical Earth: radius 6371.000 km"),
        "{text}"
    );
    assert!(text.contains("Events (altitude above the sphere;"));
    std::fs::remove_dir_all(&dir).expect("cleanup");
}

#[test]
fn names_with_markup_and_control_characters_give_well_formed_figures_and_pages() {
    // Issue 10: a vehicle name with markup and control characters made every SVG invalid XML.
    // XML 1.0 (5th ed.) §2.2 allows no control characters but tab, CR and LF.
    let dir = std::env::temp_dir().join(format!("kickturn-xml-{}", std::process::id()));
    let plot = dir.join("figs");
    let page = dir.join("r.html");
    std::fs::create_dir_all(&dir).expect("temp dir");
    let out = kickturn(&[
        "fly",
        "tests/data/markup-and-control-names.json",
        "--plot",
        &plot.to_string_lossy(),
        "--report",
        &page.to_string_lossy(),
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut files: Vec<PathBuf> = std::fs::read_dir(&plot)
        .map(|d| d.filter_map(Result::ok).map(|e| e.path()).collect())
        .unwrap_or_default();
    files.retain(|p| p.extension().is_some_and(|e| e == "svg"));
    files.push(page);
    assert!(files.len() >= 8);
    for f in files {
        let text = std::fs::read_to_string(&f).expect("utf-8 text");
        let bad = text
            .chars()
            .find(|c| c.is_control() && !matches!(c, '\t' | '\n' | '\r'));
        assert!(bad.is_none(), "{}: control character {bad:?}", f.display());
        assert!(
            text.contains("V&lt;b&gt;"),
            "{}: markup not escaped",
            f.display()
        );
        assert!(!text.contains("V<b>"), "{}: raw markup", f.display());
    }
    std::fs::remove_dir_all(&dir).expect("cleanup");
}

#[test]
fn outputs_are_checked_before_any_work_and_never_destroy_data() {
    // Issue 10: an output over any input, two outputs on one path, a missing folder, a symbolic
    // link or a device: exit 2 before anything is computed, nothing on stdout, nothing written.
    let dir = std::env::temp_dir().join(format!("kickturn-outputs-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("temp dir");
    let a = dir.join("a.json");
    let b = dir.join("b.json");
    std::fs::copy(root().join("problems/medium-2stage-leo200.json"), &a).expect("copy");
    std::fs::copy(root().join("problems/heavy-boosters-leo300.json"), &b).expect("copy");
    let b_before = std::fs::read(&b).expect("read");
    let s = |p: &Path| p.to_string_lossy().to_string();
    let y = s(&dir.join("y.json"));
    let cases: Vec<(Vec<String>, &str)> = vec![
        (
            vec!["compare".into(), s(&a), s(&b), "--csv".into(), s(&b)],
            "is an input file",
        ),
        (
            vec![
                "solve".into(),
                s(&a),
                "--write-program".into(),
                y.clone(),
                "--csv".into(),
                y,
            ],
            "the same path as",
        ),
        (
            vec![
                "solve".into(),
                s(&a),
                "--csv".into(),
                s(&dir.join("nodir/x.csv")),
            ],
            "does not exist",
        ),
    ];
    for (args, expect) in &cases {
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let out = kickturn(&args);
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(expect), "{args:?}: {err}");
        assert!(out.stdout.is_empty(), "{args:?}: the work ran");
    }
    assert_eq!(
        std::fs::read(&b).expect("read"),
        b_before,
        "an input was replaced"
    );
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        // A symbolic link is refused, its target untouched.
        let target = dir.join("target.csv");
        std::fs::write(&target, "keep").expect("written");
        let link = dir.join("link.csv");
        std::os::unix::fs::symlink(&target, &link).expect("symlink");
        let out = kickturn(&["fly", &s(&a), "--csv", &s(&link)]);
        assert_eq!(out.status.code(), Some(2));
        assert!(String::from_utf8_lossy(&out.stderr).contains("is a symbolic link"));
        assert_eq!(std::fs::read_to_string(&target).expect("read"), "keep");
        // A replaced file keeps its mode.
        let m = dir.join("m.csv");
        std::fs::write(&m, "old").expect("written");
        std::fs::set_permissions(&m, std::fs::Permissions::from_mode(0o600)).expect("chmod");
        let out = kickturn(&["fly", &s(&a), "--csv", &s(&m)]);
        assert_eq!(out.status.code(), Some(0));
        let mode = std::fs::metadata(&m).expect("meta").permissions().mode() & 0o777;
        assert_eq!(mode, 0o600);
        assert!(std::fs::read_to_string(&m)
            .expect("read")
            .starts_with("t_s,"));
    }
    // No temporary file is left behind.
    let leftovers: Vec<_> = std::fs::read_dir(&dir)
        .map(|d| d.filter_map(Result::ok).map(|e| e.file_name()).collect())
        .unwrap_or_default();
    assert!(
        !leftovers
            .iter()
            .any(|n| n.to_string_lossy().contains(".tmp")),
        "{leftovers:?}"
    );
    std::fs::remove_dir_all(&dir).expect("cleanup");
}

#[test]
fn an_unreachable_target_inclination_with_a_given_azimuth_is_refused_at_once() {
    // Repro (optimizer issue): the medium demo from its 28.2° N site with `launch.azimuth_deg`
    // given and a 20° target inclination ran 22–39 s and reported "1048.7 m/s short". A direct
    // ascent reaches only |φ′| ≤ i ≤ 180° − |φ′| (geocentric latitude φ′; Curtis, Orbital
    // Mechanics for Engineering Students, §4.7, cos i = cos φ sin A, from memory).
    let out = kickturn(&["solve", "tests/data/repro/inc20_az90.json"]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.starts_with("error: "), "{err}");
    assert!(err.contains("target.inclination_deg: 20.000°"), "{err}");
    assert!(err.contains("launch.allow_dog_leg"), "{err}");
    assert!(out.stdout.is_empty());
    let out = kickturn(&["solve", "tests/data/repro/inc20_az90.json", "--json"]);
    assert_eq!(out.status.code(), Some(1));
    let r = json_of(&out);
    assert_eq!(r["status"], "unreachable_inclination");
    assert_eq!(r["field"], "target.inclination_deg");
    // The same `error` object as bad input (issue 12).
    assert_eq!(r["error"]["kind"], "unreachable_inclination");
    assert_eq!(r["error"]["field"], "target.inclination_deg");
    assert!(r["error"]["message"]
        .as_str()
        .is_some_and(|m| m.contains("launch.allow_dog_leg")));
    // Plane change 2·v·sin(Δi/2) at 200 km (v ≈ 7784 m/s): about 1091 m/s for Δi ≈ 8.04°.
    let dv = r["plane_change_mps"].as_f64().unwrap_or(f64::NAN);
    assert!((dv - 1091.4).abs() < 1.0, "{dv}");
}

#[test]
fn a_tuned_variable_on_its_bound_is_flagged() {
    // Issue 9: a solve that ends on a variable's bound must say so. The small demo's staging
    // coasts stay at their written lengths (the shortest allowed): flagged `lower`; the kick and
    // the steering are free optima: not flagged.
    let out = kickturn(&["solve", "problems/small-3stage-sso500.json", "--json"]);
    assert_eq!(out.status.code(), Some(0));
    let r = json_of(&out);
    let tuned = r["tuned"].as_array().cloned().unwrap_or_default();
    let flag = |field: &str| {
        tuned
            .iter()
            .find(|t| t["field"] == field)
            .map(|t| t["at_bound"].clone())
            .unwrap_or_else(|| panic!("{field} not tuned: {tuned:?}"))
    };
    assert_eq!(flag("ascent.arcs[1].coast.duration_s"), "lower");
    assert_eq!(flag("ascent.arcs[3].coast.duration_s"), "lower");
    assert!(flag("ascent.liftoff.kick_deg").is_null());
    let text = kickturn(&["solve", "problems/small-3stage-sso500.json"]);
    let text = String::from_utf8_lossy(&text.stdout);
    assert!(
        text.lines()
            .any(|l| l.contains("arcs[1].coast.duration_s") && l.ends_with("(at its lower bound)")),
        "{text}"
    );
}

#[test]
fn explore_never_reports_a_negative_gain() {
    // Repro (issue 9): `--explore` on a two-stage vehicle reported "would gain −3110.2 kg": the
    // richer search (free pitch-over rate and vertical rise) ended below the base program,
    // which lies inside its space. It now starts from the base optimum, and a search that ends
    // above it counts as no gain.
    let out = kickturn(&[
        "solve",
        "problems/medium-2stage-leo200.json",
        "--explore",
        "--json",
    ]);
    assert_eq!(out.status.code(), Some(0));
    let r = json_of(&out);
    let richer = r["richer_programs"].as_array().cloned().unwrap_or_default();
    assert!(!richer.is_empty());
    for x in richer {
        let saves = x["saves_kg"].as_f64().unwrap_or(f64::NAN);
        assert!(saves >= 0.0, "{x}");
        // A gain is a real one: under 1 % of the propellant (a pitch-over rate is not worth
        // tonnes on a vehicle whose kick is already tuned).
        assert!(saves < 3000.0, "{x}");
    }
}

#[test]
fn a_dash_reads_the_problem_from_stdin_and_sends_one_output_to_stdout() {
    use std::io::Write;
    use std::process::Stdio;
    // Issue 12: `fly -` failed with "-: No such file or directory"; `--csv -` wrote a file
    // named `-`.
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let mut child = Command::new(env!("CARGO_BIN_EXE_kickturn"))
        .args(["fly", "-", "--json"])
        .current_dir(root())
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("spawn kickturn");
    if let Some(mut stdin) = child.stdin.take() {
        stdin.write_all(text.as_bytes()).expect("write stdin");
    }
    let piped = child.wait_with_output().expect("kickturn output");
    assert_eq!(
        piped.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&piped.stderr)
    );
    let from_file = kickturn(&["fly", "problems/medium-2stage-leo200.json", "--json"]);
    // The same bytes in give the same report (input hash included).
    assert_eq!(json_of(&piped), json_of(&from_file));

    let csv = kickturn(&["fly", "problems/medium-2stage-leo200.json", "--csv", "-"]);
    assert_eq!(csv.status.code(), Some(0));
    let out = String::from_utf8_lossy(&csv.stdout);
    assert!(
        out.starts_with("t_s,altitude_m,"),
        "{}",
        &out[..out.len().min(200)]
    );
    assert!(
        !out.contains("ORBIT REACHED"),
        "the report gives way to the output"
    );
    assert!(!root().join("-").exists(), "no file named `-`");

    for args in [
        &[
            "fly",
            "problems/medium-2stage-leo200.json",
            "--csv",
            "-",
            "--json",
        ][..],
        &[
            "fly",
            "problems/medium-2stage-leo200.json",
            "--csv",
            "-",
            "--report",
            "-",
        ][..],
        &["fly", "problems/medium-2stage-leo200.json", "--plot", "-"][..],
    ] {
        let out = kickturn(args);
        assert_eq!(out.status.code(), Some(2), "{args:?}");
        if args.contains(&"--json") {
            assert_eq!(json_of(&out)["error"]["kind"], "usage", "{args:?}");
        } else {
            assert!(out.stdout.is_empty(), "{args:?}");
        }
        assert!(
            String::from_utf8_lossy(&out.stderr).starts_with("error: "),
            "{args:?}"
        );
    }
}

#[test]
fn compare_shows_each_problem_by_its_full_name() {
    // Issue 12: compare cut names at 24 characters, so two variants both read
    // "… to 400 km circ". Every column now is as wide as its full name.
    let dir = std::env::temp_dir().join(format!("kickturn-compare-{}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let text = std::fs::read_to_string(root().join("problems/medium-2stage-leo200.json"))
        .unwrap_or_default();
    let mut paths = Vec::new();
    for v in ["A", "B"] {
        let name = format!("Brannock M2 to 200 km circular, variant {v}");
        let t = text.replacen(
            "\"name\": \"Brannock M2 to 200 km circular\"",
            &format!("\"name\": \"{name}\""),
            1,
        );
        assert_ne!(t, text, "the demo's name line moved");
        let p = dir.join(format!("variant-{v}.json"));
        std::fs::write(&p, t).expect("write variant");
        paths.push(p.to_string_lossy().to_string());
    }
    let out = kickturn(&[
        "compare",
        &paths[0],
        &paths[1],
        "--max-trajectories",
        "2000",
    ]);
    let table = String::from_utf8_lossy(&out.stdout);
    for v in ["A", "B"] {
        assert!(
            table.contains(&format!("Brannock M2 to 200 km circular, variant {v}")),
            "{table}"
        );
    }
    let _ = std::fs::remove_dir_all(&dir);
}
