//! Criterion benchmark: one full ascent of each bundled demo problem, trajectory recording off.
//! Run with `cargo bench --bench fly`.

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use kickturn::problem::Problem;
use kickturn::sim::{fly, FlyOptions};

const DEMOS: [&str; 3] = [
    "small-3stage-sso500",
    "medium-2stage-leo200",
    "heavy-boosters-leo300",
];

fn bench_fly(c: &mut Criterion) {
    let mut group = c.benchmark_group("fly");
    for name in DEMOS {
        let path = Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("problems")
            .join(format!("{name}.json"));
        let problem = match Problem::from_json(&std::fs::read_to_string(&path).unwrap_or_default())
        {
            Ok(p) => p,
            Err(e) => panic!("demo problem {name} does not load: {e}"),
        };
        let opts = FlyOptions::default();
        group.bench_function(name, |b| b.iter(|| fly(black_box(&problem), &opts)));
    }
    group.finish();
}

// Criterion's own HTML charts need system fonts that this crate's plotters build leaves out.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = bench_fly
}
criterion_main!(benches);
