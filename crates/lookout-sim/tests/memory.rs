//! A run that keeps no series needs memory that does not grow with its
//! steps (issue 16): the peak of live heap bytes, sampled at every step of
//! both passes through the row sink, is the same for 1 000 and 100 000
//! steps of the demo models, up to a stated slack. (With `series: true`
//! the same test fails, as it should: 173 384 bytes at 1 000 steps of the
//! conveyor, 21 501 256 at 100 000.)

use lookout_sim::plant::Row;
use lookout_sim::reference::Reference;
use lookout_sim::runtime::Format;
use lookout_sim::signal::InputSignal;
use lookout_sim::{Outputs, RunConfig, Setup, SimError, Sink, formats, run_once};
use stats_alloc::{INSTRUMENTED_SYSTEM, StatsAlloc};
use std::alloc::System;

#[global_allocator]
static GLOBAL: &StatsAlloc<System> = &INSTRUMENTED_SYSTEM;

/// Live heap bytes now.
fn live() -> i128 {
    let s = GLOBAL.stats();
    s.bytes_allocated as i128 + s.bytes_reallocated as i128 - s.bytes_deallocated as i128
}

/// Keeps the largest number of live heap bytes it saw.
struct Peak(i128);

impl Peak {
    fn sample(&mut self) {
        self.0 = self.0.max(live());
    }
}

impl Sink for Peak {
    fn formats(&mut self, _: &[Format]) -> Result<(), SimError> {
        self.sample();
        Ok(())
    }
    fn row(&mut self, _: usize, _: &Row, _: &[f64]) -> Result<(), SimError> {
        self.sample();
        Ok(())
    }
    fn second_pass(&mut self, _: usize) {
        self.sample();
    }
}

/// Peak live bytes above the start of a run of `steps` steps of `model`,
/// with noise, dropouts and outliers so that every statistic is gathered.
fn peak(model: &str, steps: usize) -> i128 {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../examples")
        .join(model);
    let design = lookout_design::design_file(&path).unwrap();
    let config = RunConfig {
        steps,
        seed: 3,
        initial_error: vec![0.5; design.n()],
        input: InputSignal::Prbs {
            amplitude: 1.0,
            hold: 10,
        },
        process_noise: None,
        measurement_noise: Some(1e-3),
        mismatch: 0.02,
        disturbance: None,
        dropout_rate: 0.01,
        outlier_rate: 0.001,
        outlier_size: 0.5,
        tolerance: None,
    };
    let setup = Setup {
        reference: Reference::of(&design, &config).unwrap(),
        formats: formats(&design),
    };
    let start = live();
    let mut sink = Peak(start);
    let out = Outputs {
        series: false,
        rows: Some(&mut sink),
    };
    let result = run_once(&design, &config, &setup, 3, out).unwrap();
    assert!(result.traj.truth.is_empty() && result.formats.len() >= 2);
    sink.sample();
    sink.0 - start
}

/// Slack between the two peaks (bytes): the runs differ only in the step
/// count, so their allocations are the same sizes in the same order; the
/// slack allows for nothing but allocator bookkeeping.
const SLACK: i128 = 256;

#[test]
fn peak_heap_does_not_grow_with_steps() {
    for model in ["conveyor.toml", "conveyor_kalman.toml"] {
        let short = peak(model, 1_000);
        let long = peak(model, 100_000);
        assert!(short > 0, "{model}: nothing measured");
        assert!(
            (long - short).abs() <= SLACK,
            "{model}: peak heap {short} bytes at 1 000 steps, {long} at 100 000"
        );
    }
}
