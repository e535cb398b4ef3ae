//! The registry of variable parameters (`kickturn::problem::params::Param`): each parameter's
//! JSON path names a field of the problem file, a value written into the file form reads back
//! from the validated problem, and setting it on the validated problem gives the same problem.

use kickturn::app::Case;
use kickturn::problem::params::Param;
use kickturn::problem::validate::validate;
use kickturn::problem::ProblemFile;
use kickturn::steering::LawParam;
use serde_json::Value;

fn medium() -> Case {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("problems/medium-2stage-leo200.json");
    let text = std::fs::read_to_string(path).unwrap_or_default();
    match Case::from_json(&text) {
        Ok(c) => c,
        Err(e) => panic!("{e}"),
    }
}

/// The stored parameters of the medium demo (two stages; arc 1 a timed coast, arc 2 a linear
/// tangent burn).
fn stored() -> Vec<Param> {
    let law = |param| Param::Law {
        arc: 2,
        law: "linear_tangent",
        param,
    };
    vec![
        Param::DryMass(0),
        Param::Propellant(1),
        Param::IspVac(1),
        Param::ThrustVac(0),
        Param::Payload,
        Param::TargetInclination,
        Param::CircularAltitude,
        Param::Kick,
        Param::PitchRate,
        Param::RiseTime,
        Param::Coast(1),
        law(LawParam::Pitch0),
        law(LawParam::TanRate),
        law(LawParam::Heading),
    ]
}

/// `a.b[2].c` → the value at that path of the JSON document, if any.
fn at<'a>(doc: &'a Value, path: &str) -> Option<&'a Value> {
    path.split('.')
        .try_fold(doc, |v, part| match part.split_once('[') {
            Some((key, idx)) => v
                .get(key)?
                .get(idx.trim_end_matches(']').parse::<usize>().ok()?),
            None => v.get(part),
        })
}

#[test]
fn every_path_names_a_field_of_the_problem_file() {
    let case = medium();
    let doc = serde_json::to_value(&case.file).unwrap_or(Value::Null);
    for p in stored() {
        let name = p.name();
        let v = at(&doc, &name).and_then(Value::as_f64);
        let read = p.read_file(&case.file);
        assert!(v.is_some(), "{name} is not a number in the file");
        if let Some(r) = read {
            assert_eq!(Some(r), v, "{name}: read_file disagrees with the file");
        }
    }
}

#[test]
fn a_value_written_into_the_file_reads_back_from_the_validated_problem() {
    let case = medium();
    for p in stored() {
        let Some(now) = p.get(&case.problem) else {
            panic!("{}: no value in the demo", p.name());
        };
        // A 1 % change (0.01 rad for angles near zero).
        let new = if now.abs() > 1e-3 {
            now * 1.01
        } else {
            now + 0.01
        };
        let mut f: ProblemFile = case.file.clone();
        p.write(&mut f, new);
        let back = match validate(&f) {
            Ok(q) => q,
            Err(e) => panic!("{}: the written file does not validate: {e}", p.name()),
        };
        let got = p.get(&back).unwrap_or(f64::NAN);
        assert!(
            (got - new).abs() <= 1e-12 * new.abs().max(1.0),
            "{}: wrote {new}, read {got}",
            p.name()
        );
        // The same change made on the validated problem gives the same parameter value.
        let mut q = case.problem.clone();
        p.set(&mut q, new);
        assert!((p.get(&q).unwrap_or(f64::NAN) - got).abs() <= 1e-12 * got.abs().max(1.0));
    }
}

#[test]
fn the_drag_scale_multiplies_every_drag_coefficient() {
    let case = medium();
    let mut f = case.file.clone();
    Param::DragScale.write_file_unit(&mut f, 1.1);
    let from_file = match validate(&f) {
        Ok(q) => q,
        Err(e) => panic!("{e}"),
    };
    let mut set = case.problem.clone();
    Param::DragScale.set(&mut set, 1.1);
    for mach in [0.3, 1.0, 1.2, 4.0] {
        for (i, s) in case.problem.vehicle.stages.iter().enumerate() {
            let want = 1.1 * s.aero.cd(mach);
            let a = from_file.vehicle.stages[i].aero.cd(mach);
            let b = set.vehicle.stages[i].aero.cd(mach);
            assert!((a - want).abs() < 1e-12 && (b - want).abs() < 1e-12);
        }
    }
    assert_eq!(Param::DragScale.get(&set), Some(1.1));
    assert_eq!(Param::DragScale.get(&case.problem), Some(1.0));
}

#[test]
fn a_vacuum_thrust_change_scales_the_sea_level_thrust_and_exit_area_with_it() {
    let case = medium();
    let before = &case.problem.vehicle.stages[0].engine;
    let mut f = case.file.clone();
    Param::ThrustVac(0).write(&mut f, 1.05 * before.thrust_vac_n);
    let after = match validate(&f) {
        Ok(q) => q.vehicle.stages[0].engine.clone(),
        Err(e) => panic!("{e}"),
    };
    // Same nozzle, more engines: the exit area (and so the sea-level thrust) scales too.
    assert!((after.exit_area_m2 / before.exit_area_m2 - 1.05).abs() < 1e-12);
    assert!((after.isp_vac_s - before.isp_vac_s).abs() < 1e-12);
}
