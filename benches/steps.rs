//! Criterion benchmarks of every observer step (predictor, current form,
//! fused; f32, f64, Q31, Q15; sizes (2,1,1), (4,1,2), (8,2,3), (12,3,4)),
//! each group holding lookout's step and the same update written by hand:
//! heap-allocated `DMatrix`, a plain loop, fixed-size `SMatrix` by reference
//! and with `gemv`. Every baseline is checked against lookout before it is
//! timed (see `workload`). `cargo bench --bench steps -- q31/fused` runs a
//! subset; the one-run comparison with ratios is the `step_rate` example.

#[allow(dead_code)]
mod workload;

use criterion::{Criterion, criterion_group, criterion_main};
use std::time::{Duration, Instant};

fn steps(c: &mut Criterion) {
    for mut g in workload::all_groups() {
        let (n, m, p) = g.size;
        let mut group = c.benchmark_group(format!("{}/{}/({n},{m},{p})", g.scalar, g.form));
        for e in &mut g.entries {
            group.bench_function(e.code, |b| {
                b.iter_custom(|iters| {
                    let start = Instant::now();
                    (e.run)(iters);
                    start.elapsed()
                })
            });
        }
        group.finish();
    }
}

criterion_group! {
    name = benches;
    // Short runs: 240 benchmarks on a shared machine.
    config = Criterion::default()
        .warm_up_time(Duration::from_millis(100))
        .measurement_time(Duration::from_millis(300))
        .sample_size(20)
        .nresamples(10_000);
    targets = steps
}
criterion_main!(benches);
