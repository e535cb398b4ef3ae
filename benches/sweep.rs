//! Criterion benchmark: a 37-point launch-azimuth sweep (0° to 180° every 5°) of the medium demo
//! vehicle, every point re-solved. Run with `cargo bench --bench sweep` (a few minutes).

use std::hint::black_box;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use kickturn::app::study::{sweep, Axis};
use kickturn::observe::Silent;
use kickturn::optimize::SolveOptions;

fn bench_sweep(c: &mut Criterion) {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("problems/medium-2stage-leo200.json");
    let text = std::fs::read_to_string(path).unwrap_or_default();
    let file = match kickturn::problem::parse(&text) {
        Ok(f) => f,
        Err(e) => panic!("demo problem does not load: {e}"),
    };
    let values: Vec<f64> = (0..37).map(|i| 5.0 * f64::from(i)).collect();
    let opts = SolveOptions::default();
    let mut group = c.benchmark_group("sweep");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(60));
    group.bench_function("azimuth_37_points_medium", |b| {
        b.iter(|| sweep(black_box(&file), Axis::Azimuth, &values, &opts, &Silent))
    });
    group.finish();
}

// Criterion's own HTML charts need system fonts that this crate's plotters build leaves out.
criterion_group! {
    name = benches;
    config = Criterion::default().without_plots();
    targets = bench_sweep
}
criterion_main!(benches);
