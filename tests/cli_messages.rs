//! Issue 12 (what a new user meets): plausibility warnings, errors in plain words and as JSON,
//! the schema and shell completions, study labels with units, tables sized to their content.

mod bin_support;
use bin_support::{json_of, kickturn, root};

use kickturn::app::Case;
use kickturn::problem::WarningKind;

fn demo_json(name: &str) -> serde_json::Value {
    let text = std::fs::read_to_string(root().join("problems").join(name)).unwrap_or_default();
    serde_json::from_str(&text).unwrap_or(serde_json::Value::Null)
}

fn write_temp(tag: &str, v: &serde_json::Value) -> String {
    let dir = std::env::temp_dir().join(format!("kickturn-msg-{}-{tag}", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let p = dir.join("p.json");
    std::fs::write(&p, serde_json::to_string_pretty(v).unwrap_or_default()).expect("write");
    p.to_string_lossy().to_string()
}

#[test]
fn the_demos_raise_no_warning() {
    for d in [
        "heavy-boosters-leo300.json",
        "medium-2stage-leo200.json",
        "small-3stage-sso500.json",
    ] {
        let text = std::fs::read_to_string(root().join("problems").join(d)).unwrap_or_default();
        let case = Case::from_json(&text).expect("demo validates");
        assert!(case.warnings.is_empty(), "{d}: {:?}", case.warnings);
    }
}

#[test]
fn a_value_that_could_be_meant_warns_on_stderr_and_the_run_goes_on() {
    // An exhaust velocity written as Isp (3400 "s" = 3400 m/s = 346.7 s) and a q limit of
    // 4.5 kPa: both validate (an electric stage, a deliberate limit), both look like slips.
    let mut v = demo_json("medium-2stage-leo200.json");
    v["vehicle"]["stages"][1]["isp_vac_s"] = 3400.0.into();
    v["limits"]["max_dynamic_pressure_pa"] = 4500.0.into();
    let text = serde_json::to_string(&v).unwrap_or_default();
    let case = Case::from_json(&text).expect("validates");
    let fields: Vec<(&str, WarningKind)> = case
        .warnings
        .iter()
        .map(|w| (w.field.as_str(), w.kind))
        .collect();
    assert_eq!(
        fields,
        [
            ("vehicle.stages[1].isp_vac_s", WarningKind::LikelyUnitSlip),
            ("limits.max_dynamic_pressure_pa", WarningKind::Implausible)
        ]
    );
    // 3400 / 9.80665 = 346.7 s.
    assert!(
        case.warnings[0].message.contains("346.7 s"),
        "{:?}",
        case.warnings
    );

    let p = write_temp("warn", &v);
    let out = kickturn(&["fly", &p, "--json"]);
    let err = String::from_utf8_lossy(&out.stderr);
    let lines: Vec<&str> = err.lines().collect();
    assert_eq!(lines.len(), 2, "{err}");
    assert!(lines[0].starts_with(&format!("warning: {p}: vehicle.stages[1].isp_vac_s: ")));
    assert!(lines[0].contains("exhaust velocity in m/s"), "{err}");
    assert!(lines[1].starts_with(&format!("warning: {p}: limits.max_dynamic_pressure_pa: ")));
    // The run went on: a report on stdout.
    assert!(json_of(&out)["status"].is_string());
}

#[test]
fn an_upper_stage_thrust_in_kn_warns() {
    // 900 "N" for a 900 kN upper stage: T/W at ignition 900 / (m g0) ≪ 0.05.
    let mut v = demo_json("medium-2stage-leo200.json");
    v["vehicle"]["stages"][1]["thrust_vac_n"] = 900.0.into();
    let case = Case::from_json(&v.to_string()).expect("validates");
    assert!(
        case.warnings
            .iter()
            .any(|w| w.field == "vehicle.stages[1].thrust_vac_n" && w.message.contains("kN")),
        "{:?}",
        case.warnings
    );
}

#[test]
fn parser_messages_are_in_plain_words_with_the_field_path() {
    let mut v = demo_json("medium-2stage-leo200.json");
    v["site"]["name"] = serde_json::json!({"a": 1});
    let p = write_temp("plain", &v);
    let out = kickturn(&["fly", &p]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.starts_with(&format!(
            "error: {p}: site.name: expected text in double quotes here, found an object {{ }} (line "
        )),
        "{err}"
    );
    assert!(!err.contains("invalid type"), "{err}");
}

#[test]
fn every_error_under_json_is_a_json_object_on_stdout() {
    // A usage error names its option.
    let out = kickturn(&[
        "fly",
        "problems/medium-2stage-leo200.json",
        "--json",
        "--csv-step-s",
        "0",
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).starts_with("error: --csv-step-s"));
    let r = json_of(&out);
    assert_eq!(r["status"], "bad_input");
    assert_eq!(r["error"]["kind"], "usage");
    assert_eq!(r["error"]["field"], "--csv-step-s");
    // A value the command line itself cannot read.
    let out = kickturn(&[
        "fly",
        "problems/medium-2stage-leo200.json",
        "--json",
        "--csv-step-s",
        "abc",
    ]);
    assert_eq!(out.status.code(), Some(2));
    let r = json_of(&out);
    assert_eq!(r["error"]["kind"], "usage");
    assert_eq!(r["error"]["field"], "--csv-step-s");
    assert!(String::from_utf8_lossy(&out.stderr).starts_with("error: "));
    // A missing file.
    let out = kickturn(&["solve", "no/such.json", "--json"]);
    assert_eq!(out.status.code(), Some(2));
    assert_eq!(json_of(&out)["error"]["kind"], "usage");
    // A refused value in a study.
    let out = kickturn(&["trade", "tests/data/bad/negative-isp.json", "--json"]);
    assert_eq!(out.status.code(), Some(2));
    let r = json_of(&out);
    assert_eq!(r["error"]["kind"], "invalid");
    assert_eq!(r["error"]["field"], "vehicle.stages[1].isp_vac_s");
}

#[test]
fn every_bundled_problem_validates_against_the_printed_schema() {
    let out = kickturn(&["schema"]);
    assert_eq!(out.status.code(), Some(0));
    let schema = json_of(&out);
    assert_eq!(
        schema["$schema"],
        "https://json-schema.org/draft/2020-12/schema"
    );
    let validator = jsonschema::validator_for(&schema).expect("the schema compiles");
    let mut files: Vec<std::path::PathBuf> = Vec::new();
    for dir in ["problems", "tests/data/repro"] {
        if let Ok(d) = std::fs::read_dir(root().join(dir)) {
            files.extend(
                d.filter_map(Result::ok)
                    .map(|e| e.path())
                    .filter(|p| p.extension().is_some_and(|x| x == "json")),
            );
        }
    }
    assert!(files.len() >= 3, "{files:?}");
    for f in &files {
        let text = std::fs::read_to_string(f).unwrap_or_default();
        let v: serde_json::Value = serde_json::from_str(&text).expect("JSON");
        let errors: Vec<String> = validator.iter_errors(&v).map(|e| e.to_string()).collect();
        assert!(errors.is_empty(), "{}: {errors:?}", f.display());
    }
    // The copy in docs/ (for editors) is the printed schema.
    let committed =
        std::fs::read_to_string(root().join("docs/problem-format.schema.json")).unwrap_or_default();
    assert_eq!(
        committed,
        String::from_utf8_lossy(&out.stdout),
        "docs/problem-format.schema.json is stale: regenerate it with `kickturn schema`"
    );
    // A file may name its schema for an editor; kickturn accepts and ignores the key.
    let mut v = demo_json("medium-2stage-leo200.json");
    v["$schema"] = "../docs/problem-format.schema.json".into();
    assert!(validator.is_valid(&v));
    assert!(Case::from_json(&v.to_string()).is_ok());
    // The schema is strict where the parser is: a misspelled key and a wrong type fail.
    let mut v = demo_json("medium-2stage-leo200.json");
    assert!(validator.is_valid(&v));
    v["site"]["latitude"] = 28.0.into();
    assert!(!validator.is_valid(&v));
    let mut v = demo_json("medium-2stage-leo200.json");
    v["vehicle"]["stages"][0]["isp_vac_s"] = "300".into();
    assert!(!validator.is_valid(&v));
}

#[test]
fn completions_are_printed_for_each_shell() {
    for shell in ["bash", "zsh", "fish"] {
        let out = kickturn(&["completions", shell]);
        assert_eq!(out.status.code(), Some(0), "{shell}");
        let text = String::from_utf8_lossy(&out.stdout);
        for word in ["kickturn", "solve", "compare", "max-trajectories"] {
            assert!(text.contains(word), "{shell}: {word}");
        }
    }
    assert_eq!(kickturn(&["completions", "tcsh"]).status.code(), Some(2));
}

#[test]
fn trade_has_booster_fairing_and_reserve_rows_with_units_in_words() {
    let dir = std::env::temp_dir().join(format!("kickturn-msg-{}-trade", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let csv = dir.join("t.csv");
    let c = csv.to_string_lossy().to_string();
    let out = kickturn(&[
        "trade",
        "problems/heavy-boosters-leo300.json",
        "--max-trajectories",
        "3000",
        "--csv",
        &c,
    ]);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    let row = |name: &str| {
        text.lines()
            .find(|l| l.trim_start().starts_with(name))
            .unwrap_or_else(|| panic!("no row {name}: {text}"))
            .to_string()
    };
    let dry = row("Corvane solid booster dry mass (each booster)");
    assert!(
        dry.contains("kg per kg") && dry.ends_with("±150 kg"),
        "{dry}"
    );
    assert!(row("Corvane solid booster vacuum Isp").contains("kg per 1 s of Isp"));
    assert!(row("Corvane solid booster vacuum thrust").contains("kg per 1 kN of thrust"));
    assert!(row("payload fairing mass (jettisoned)").contains("kg per kg"));
    assert!(row("drag coefficient").ends_with("±5 % of C_D"));
    assert!(!text.contains("kg/s") && !text.contains("kg/kg"), "{text}");
    // A reserve changes no trajectory: the margin after reserves falls by exactly what is set
    // aside (−1 kg per kg, by construction of the margin).
    let table = std::fs::read_to_string(&csv).unwrap_or_default();
    assert!(table.starts_with("parameter,step,factor,unit,ok,step_unit\n"));
    let reserve: Vec<&str> = table
        .lines()
        .find(|l| l.starts_with("last-stage reserve"))
        .map(|l| l.split(',').collect())
        .unwrap_or_default();
    let f: f64 = reserve
        .get(2)
        .and_then(|x| x.parse().ok())
        .unwrap_or(f64::NAN);
    assert!((f + 1.0).abs() < 1e-6, "{reserve:?}");
    // A booster's dry mass costs margin (it is carried to booster separation).
    let booster: f64 = table
        .lines()
        .find(|l| l.starts_with("Corvane solid booster dry mass"))
        .and_then(|l| l.split(',').nth(2))
        .and_then(|x| x.parse().ok())
        .unwrap_or(f64::NAN);
    assert!(booster < 0.0 && booster > -1.0, "{booster}");
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn compare_names_every_csv_row_and_tells_equal_names_apart_by_file() {
    let dir = std::env::temp_dir().join(format!("kickturn-msg-{}-compare", std::process::id()));
    let _ = std::fs::create_dir_all(&dir);
    let copy = dir.join("variant.json");
    std::fs::copy(root().join("problems/medium-2stage-leo200.json"), &copy).expect("copy");
    let v = copy.to_string_lossy().to_string();
    let out = kickturn(&[
        "compare",
        "problems/medium-2stage-leo200.json",
        &v,
        "--max-trajectories",
        "2000",
        "--csv",
        "-",
    ]);
    assert_eq!(out.status.code(), Some(0));
    let csv = String::from_utf8_lossy(&out.stdout);
    let lines: Vec<&str> = csv.lines().collect();
    assert!(
        lines[0].starts_with("problem,swept_index,status,payload_kg,"),
        "{csv}"
    );
    assert!(
        lines[1].starts_with("Brannock M2 to 200 km circular [medium-2stage-leo200],0,"),
        "{csv}"
    );
    assert!(
        lines[2].starts_with("Brannock M2 to 200 km circular [variant],1,"),
        "{csv}"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn tables_fit_long_names_and_the_tuned_list_reads_in_flight_order() {
    // A 40-character stage name: every line of the per-arc table keeps the same width.
    let mut v = demo_json("medium-2stage-leo200.json");
    v["vehicle"]["stages"][0]["name"] = "Brannock core with a very long stage name".into();
    let p = write_temp("long", &v);
    let out = kickturn(&["fly", &p]);
    let text = String::from_utf8_lossy(&out.stdout);
    let arcs: Vec<&str> = text
        .lines()
        .skip_while(|l| !l.starts_with("Per-arc budget"))
        .skip(1)
        .take_while(|l| !l.is_empty())
        .collect();
    assert_eq!(arcs.len(), 4, "{text}");
    let w = arcs[0].chars().count();
    assert!(arcs.iter().all(|l| l.chars().count() == w), "{arcs:#?}");

    // The small demo's written heading −9.13° shows as 350.87°, beside an azimuth of ~356°;
    // the list runs launch, liftoff, then the arcs in order, each with written → tuned.
    let out = kickturn(&["solve", "problems/small-3stage-sso500.json"]);
    let text = String::from_utf8_lossy(&out.stdout);
    let tuned: Vec<&str> = text
        .lines()
        .skip_while(|l| !l.starts_with("tuned program"))
        .skip(2)
        .take_while(|l| l.starts_with("  "))
        .collect();
    let fields: Vec<&str> = tuned
        .iter()
        .filter_map(|l| l.split_whitespace().next())
        .collect();
    assert_eq!(fields[0], "launch.azimuth_deg", "{tuned:#?}");
    assert_eq!(fields[1], "ascent.liftoff.kick_deg");
    assert_eq!(fields[2], "ascent.arcs[1].coast.duration_s");
    assert!(fields
        .last()
        .is_some_and(|f| f.starts_with("ascent.arcs[6]")));
    let heading = tuned
        .iter()
        .find(|l| l.contains("heading_deg"))
        .copied()
        .unwrap_or("");
    assert!(heading.contains("350.870000  →  3"), "{heading}");
    assert!(tuned.iter().all(|l| l.contains("  →  ")), "{tuned:#?}");
    assert!(!text.contains("°, -") && !text.contains(" -9.13"), "{text}");

    // JSON: the file's value beside the tuned one, and max-Q with its unit beside `value`.
    let r = json_of(&kickturn(&[
        "solve",
        "problems/small-3stage-sso500.json",
        "--json",
    ]));
    let t = &r["tuned"];
    let h = t
        .as_array()
        .and_then(|a| {
            a.iter().find(|x| {
                x["field"]
                    .as_str()
                    .is_some_and(|f| f.ends_with("heading_deg"))
            })
        })
        .cloned()
        .unwrap_or_default();
    assert_eq!(
        h["written"].as_f64().map(|w| (w * 100.0).round()),
        Some(-913.0)
    );
    assert_eq!(r["max_q"]["value_pa"], r["max_q"]["value"]);
    assert_eq!(r["max_q"]["value_pa"], r["max_dynamic_pressure_pa"]);
}

#[test]
fn the_liftoff_event_shows_the_throttle_and_acceleration_of_the_history() {
    // Issue 12: the liftoff row read throttle 0.0 and 0.0 g while the CSV's first row read 1.0
    // and 1.38 g (the event was taken before the first burn lit its engines).
    let r = json_of(&kickturn(&[
        "fly",
        "problems/medium-2stage-leo200.json",
        "--json",
    ]));
    let e = &r["events"][0];
    assert_eq!(e["kind"], "liftoff");
    let csv = kickturn(&["fly", "problems/medium-2stage-leo200.json", "--csv", "-"]);
    let text = String::from_utf8_lossy(&csv.stdout);
    let mut lines = text.lines();
    let head: Vec<&str> = lines.next().unwrap_or("").split(',').collect();
    let first: Vec<&str> = lines.next().unwrap_or("").split(',').collect();
    let col = |name: &str| -> f64 {
        head.iter()
            .position(|h| *h == name)
            .and_then(|i| first.get(i))
            .and_then(|x| x.parse().ok())
            .unwrap_or(f64::NAN)
    };
    let ev = |k: &str| {
        e[k].as_f64()
            .or_else(|| e["at"][k].as_f64())
            .unwrap_or(f64::NAN)
    };
    assert_eq!(ev("throttle"), 1.0);
    assert!(
        (ev("axial_accel_g") - col("axial_accel_g")).abs() < 1e-5,
        "{e}"
    );
    assert!(col("axial_accel_g") > 1.0);
}
