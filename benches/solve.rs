//! Criterion benchmark: `solve` of each bundled demo problem from the automatic guess, and
//! the free-attitude refinement of each solved demo. Run with `cargo bench --bench solve`
//! (a few minutes).

use std::hint::black_box;
use std::path::Path;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use kickturn::optimize::{tune, SolveOptions};
use kickturn::problem::Problem;

const DEMOS: [&str; 3] = [
    "small-3stage-sso500",
    "medium-2stage-leo200",
    "heavy-boosters-leo300",
];

fn bench_solve(c: &mut Criterion) {
    let mut group = c.benchmark_group("solve");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(15));
    for name in DEMOS {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("problems")
            .join(format!("{name}.json"));
        let problem = match Problem::from_json(&std::fs::read_to_string(&path).unwrap_or_default())
        {
            Ok(p) => p,
            Err(e) => panic!("demo problem {name} does not load: {e}"),
        };
        let opts = SolveOptions::default();
        group.bench_function(name, |b| b.iter(|| tune(black_box(&problem), &opts)));
    }
    group.finish();
}

/// `solve --refine`'s refinement alone (20 nodes per powered arc), from each demo's solved
/// program.
fn bench_refine(c: &mut Criterion) {
    let mut group = c.benchmark_group("refine");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(20));
    for name in DEMOS {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("problems")
            .join(format!("{name}.json"));
        let problem = match Problem::from_json(&std::fs::read_to_string(&path).unwrap_or_default())
        {
            Ok(p) => p,
            Err(e) => panic!("demo problem {name} does not load: {e}"),
        };
        let solved = match tune(&problem, &SolveOptions::default()) {
            Ok(s) => s.problem,
            Err(e) => panic!("{name}: {e}"),
        };
        let o = kickturn::optimize::refine::RefineOptions::default();
        group.bench_function(name, |b| {
            b.iter(|| kickturn::optimize::refine::refine(black_box(&solved), &o))
        });
    }
    group.finish();
}

// Criterion's own HTML charts need system fonts that this crate's plotters build leaves out.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = bench_solve, bench_refine
}
criterion_main!(benches);
