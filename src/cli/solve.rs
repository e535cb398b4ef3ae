//! `kickturn solve`: reads the problem, calls `app::solve`, writes the outputs.

use kickturn::app::solve::{solve, SolveSettings};
use kickturn::optimize::{Method, Objective, SolveOptions};
use kickturn::render;

use super::io::{load_case, write_atomic, Progress};
use super::{app_error, exit_code, record_step, write_flight_outputs, SolveArgs};

/// Runs `kickturn solve`.
pub fn run(a: &SolveArgs) -> anyhow::Result<u8> {
    let record_step_s = record_step(&a.out)?;
    let settings = SolveSettings {
        solver: SolveOptions {
            max_wall_s: a.max_wall_s,
            max_trajectories: a.max_trajectories,
            free: a.free.clone(),
            fix: a.fix.clone(),
            scan: !a.no_scan,
            perturb_seed: a.perturb_seed,
            polish: true,
            method: if a.nested {
                Method::Nested
            } else {
                Method::Sqp
            },
            objective: if a.max_payload {
                Objective::MaxPayload
            } else {
                Objective::LeastPropellant
            },
        },
        explore: a.explore,
        record_step_s,
        refine: a.refine.then(|| kickturn::optimize::refine::RefineOptions {
            nodes_per_arc: a.refine_nodes,
            ..Default::default()
        }),
    };
    if let Err(e) = settings.check() {
        match e {
            kickturn::app::Error::Option { option, reason } => {
                anyhow::bail!("--{}: {reason}", option.replace('_', "-"))
            }
            other => return Err(other.into()),
        }
    }
    super::check_flight_outputs(&a.out, &a.problem, a.write_program.as_deref())?;
    super::io::check_json_stdout(a.out.json)?;
    let case = load_case(&a.problem)?;
    let run = match solve(&case, &settings, &Progress::new()) {
        Ok(r) => r,
        Err(e) => return app_error(&a.problem, e, a.out.json),
    };
    if let Some(path) = &a.write_program {
        let json = serde_json::to_string_pretty(&run.tuned_file)? + "\n";
        write_atomic(path, &a.problem, json.as_bytes())?;
    }
    let r = &run.report;
    let outputs = super::FlightOutputs {
        vehicle: Some(&case.problem.vehicle),
        solve: Some(r),
    };
    write_flight_outputs(&a.out, &a.problem, &r.flight, &run.flight, &outputs)?;
    if a.out.json {
        super::io::emit_report(&format!("{}\n", serde_json::to_string_pretty(r)?))?;
    } else {
        super::io::emit_report(&render::solve::render(r))?;
    }
    Ok(exit_code(run.succeeded()))
}
