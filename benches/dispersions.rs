//! Criterion benchmark: 1,000 dispersed guided flights of the medium guided demo (the whole
//! study: draws, flights in parallel, statistics). Issue 13 asks ≤ 10 s on 2 cores.
//! Run with `cargo bench --bench dispersions`.

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use kickturn::app::dispersions::{run, DispersionOptions};
use kickturn::app::{Case, Silent};

fn bench_dispersions(c: &mut Criterion) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("problems/guided/medium-2stage-leo200-guided.json");
    let case = match Case::from_json(&std::fs::read_to_string(&path).unwrap_or_default()) {
        Ok(c) => c,
        Err(e) => panic!("guided demo does not load: {e}"),
    };
    let o = DispersionOptions {
        samples: 1000,
        seed: 1,
        ..DispersionOptions::default()
    };
    let mut group = c.benchmark_group("dispersions");
    group.sample_size(10);
    group.bench_function("medium-guided-1000", |b| {
        b.iter(|| run(black_box(&case), &o, &Silent))
    });
    group.finish();
}

// Criterion's own HTML charts need system fonts that this crate's plotters build leaves out.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = bench_dispersions
}
criterion_main!(benches);
