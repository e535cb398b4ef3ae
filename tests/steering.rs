//! The steering-law seam: a law supplied by a program (`Steering::Custom`) flies exactly like
//! the built-in law it wraps, a closed-loop law is updated at every guidance cycle of its arc with
//! the current state, and the optimizer asks laws for their parameters instead of knowing them.

use std::sync::{Arc as Shared, Mutex};

use kickturn::physics::environment::Local;
use kickturn::problem::Problem;
use kickturn::sim::{fly, Flight, FlyOptions};
use kickturn::steering::{
    ActiveLaw, Arc, ArcStart, Control, GuidanceInput, LawParam, LinearTangent, SharedLaw, Steering,
    SteeringLaw,
};
use nalgebra::Vector3;

fn demo(name: &str) -> Problem {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("problems")
        .join(name);
    match Problem::from_json(&std::fs::read_to_string(&path).unwrap_or_default()) {
        Ok(p) => p,
        Err(e) => panic!("{name}: {e}"),
    }
}

/// Wraps a linear tangent law; records the time of every guidance update it receives.
#[derive(Debug)]
struct Recording {
    inner: LinearTangent,
    period_s: Option<f64>,
    updates: Shared<Mutex<Vec<GuidanceInput>>>,
}

#[derive(Debug)]
struct RecordingActive {
    inner: Box<dyn ActiveLaw>,
    period_s: Option<f64>,
    updates: Shared<Mutex<Vec<GuidanceInput>>>,
}

impl SteeringLaw for Recording {
    fn file_key(&self) -> &'static str {
        "recording"
    }
    fn start(&self, s: &ArcStart) -> Box<dyn ActiveLaw> {
        Box::new(RecordingActive {
            inner: self.inner.start(s),
            period_s: self.period_s,
            updates: self.updates.clone(),
        })
    }
    fn shape_params(&self) -> &'static [LawParam] {
        self.inner.shape_params()
    }
    fn controls(&self) -> &'static [Control] {
        self.inner.controls()
    }
}

impl ActiveLaw for RecordingActive {
    fn direction(&self, t_s: f64, loc: &Local) -> Vector3<f64> {
        self.inner.direction(t_s, loc)
    }
    fn guidance_period_s(&self) -> Option<f64> {
        self.period_s
    }
    fn update(&mut self, now: &GuidanceInput) {
        if let Ok(mut u) = self.updates.lock() {
            u.push(*now);
        }
    }
}

/// The medium demo with its upper-stage law (arc 2) wrapped; returns the flight and the updates.
fn fly_wrapped(period_s: Option<f64>) -> (Problem, Flight, Vec<GuidanceInput>) {
    let mut p = demo("medium-2stage-leo200.json");
    let updates = Shared::new(Mutex::new(Vec::new()));
    let Some(Arc::Burn { steering, .. }) = p.program.arcs.get_mut(2) else {
        panic!("the medium demo's arc 2 is the upper-stage burn");
    };
    let Steering::LinearTangent(lt) = steering.clone() else {
        panic!("the medium demo's upper stage flies a linear tangent law");
    };
    *steering = Steering::Custom(SharedLaw(Shared::new(Recording {
        inner: lt,
        period_s,
        updates: updates.clone(),
    })));
    let f = fly(&p, &FlyOptions::default());
    let u = updates.lock().map(|u| u.clone()).unwrap_or_default();
    (p, f, u)
}

#[test]
fn a_program_supplied_law_flies_exactly_like_the_law_it_wraps() {
    let plain = fly(&demo("medium-2stage-leo200.json"), &FlyOptions::default());
    let (_, wrapped, updates) = fly_wrapped(None);
    assert!(
        updates.is_empty(),
        "an open-loop law gets no guidance cycle"
    );
    // Same arithmetic through the seam: the same bits.
    assert_eq!(plain.y1.as_slice(), wrapped.y1.as_slice());
    assert_eq!(plain.stats.rhs_evals, wrapped.stats.rhs_evals);
}

#[test]
fn a_closed_loop_law_is_updated_every_guidance_cycle_of_its_arc() {
    let period_s = 10.0;
    let (_, f, updates) = fly_wrapped(Some(period_s));
    let arc = &f.arcs[2];
    let expected = ((arc.t1_s - arc.t0_s) / period_s).floor() as usize;
    assert!(
        expected >= 10,
        "the upper burn lasts {} s",
        arc.t1_s - arc.t0_s
    );
    assert_eq!(updates.len(), expected);
    for (k, u) in updates.iter().enumerate() {
        let want = arc.t0_s + period_s * (k + 1) as f64;
        assert!((u.t_s - want).abs() < 1e-6, "update {k} at {} s", u.t_s);
        // The state handed over is the flight's: the mass falls, the radius is physical.
        assert!(u.mass_kg > 0.0 && u.propellant_kg >= 0.0);
        assert!(u.r_m.norm() > 6.3e6 && u.v_mps.norm() > 1e3);
        assert!(u.thrust_vac_n > 0.0 && u.exhaust_velocity_mps > 2000.0);
    }
    assert!(updates.windows(2).all(|w| w[1].mass_kg < w[0].mass_kg));
    // The cycles stop and restart the integration without changing the flight: the same orbit
    // to integrator precision (Dopri5 at the problem's tolerances).
    let plain = fly(&demo("medium-2stage-leo200.json"), &FlyOptions::default());
    let dr = (Vector3::from_column_slice(&f.y1.as_slice()[0..3])
        - Vector3::from_column_slice(&plain.y1.as_slice()[0..3]))
    .norm();
    assert!(dr < 0.01, "cutoff position moved {dr} m");
    assert!((f.y1[6] - plain.y1[6]).abs() < 1e-3);
}

#[test]
fn laws_declare_their_tunable_parameters_and_controls() {
    let lt = Steering::LinearTangent(LinearTangent {
        pitch0_rad: 0.3,
        tan_rate_per_s: 0.002,
        yaw_rate_per_s: 0.0,
        heading_rad: None,
    });
    let law = lt.law();
    assert_eq!(law.shape_params(), &[LawParam::Pitch0, LawParam::TanRate]);
    assert_eq!(law.plane_params(), &[LawParam::Heading, LawParam::YawRate]);
    assert!(law.controls().contains(&Control::InPlane));
    assert_eq!(law.get(LawParam::Pitch0), Some(0.3));
    assert_eq!(law.get(LawParam::Heading), None);
    let gt = Steering::GravityTurn;
    assert!(gt.law().shape_params().is_empty() && gt.law().controls().is_empty());
    assert!(gt.law().starts_with_liftoff());
    assert!(Steering::LinearTangentContinued.law().continues_previous());
}

#[test]
fn the_optimizer_refuses_a_last_burn_whose_law_cannot_steer_to_the_insertion() {
    let mut p = demo("medium-2stage-leo200.json");
    if let Some(Arc::Burn { steering, .. }) = p.program.arcs.get_mut(2) {
        *steering = Steering::GravityTurn;
    }
    match kickturn::optimize::tune(&p, &kickturn::optimize::SolveOptions::default()) {
        Err(e) => assert!(
            e.to_string()
                .starts_with("ascent.arcs[2].burn.steering: the last burn must use a law"),
            "{e}"
        ),
        Ok(_) => panic!("solved with a gravity-turn upper stage"),
    }
}
