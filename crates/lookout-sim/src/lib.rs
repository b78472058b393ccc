//! The simulation engine of `lookout simulate`: the observer a design
//! describes, stepped by the real `lookout` runtime in every number format,
//! against a simulated true plant, and judged by the design's statistics.
//!
//! This library knows nothing of the command line: a run is described by a
//! [`RunConfig`] (plain settings) and a [`Setup`] (the formats and the
//! design's [`reference::Reference`]); [`run_once`] makes one run. The
//! `lookout` binary parses the options into these, prints, plots and runs
//! sweeps.
//!
//! One run: the true plant (the model's plant, perturbed and sampled on its
//! own, see [`plant`]) and every format's observer ([`runtime`], at a size
//! class of [`sizes`]) step in lockstep, and the errors are measured against
//! the truth and the f64 observer as they are produced ([`metrics`]): twice,
//! the plant regenerated from its seed for the second pass, so a run without
//! kept series needs memory that does not grow with its steps. The series
//! are kept only when asked for (the plot); rows go to a [`Sink`] (the CSV)
//! as they are produced.
//!
//! # Memory and time
//!
//! Without kept series a run holds the tables, one observer per format,
//! one row of the plant and per format a few n-vectors of running sums, so
//! its memory does not grow with its steps (`tests/memory.rs` checks the
//! peak heap at 1 000 and 100 000 steps; `/usr/bin/time -v lookout simulate
//! examples/conveyor.toml --steps N`, release build: 7.1, 7.2 and 7.3 MB
//! maximum resident at N = 1 000, 100 000 and 1 000 000, against 6.3, 16.5
//! and 110 MB when the series were stored). The settling rule needs the
//! band, which needs the whole run, and the last step outside it; it has no
//! exact one-pass form in constant memory, so the run is made twice from
//! its seed ([`metrics`] says what each pass keeps). Time, same commands,
//! two runs each on a shared 2-core machine: 1 000 000 steps of the demo
//! 1.05–1.26 s against 0.69–0.72 s with stored series, the Kalman demo (NIS
//! summed at every step) 1.45–1.59 s against 0.84–1.04 s, `--sweep 1000`
//! 2.62–2.88 s against 1.67–2.38 s.
//!
//! # Sizes
//!
//! The runtime's observers have const-generic sizes; [`sizes`] lists 28
//! classes (states 1–8 exact, then 12 … 512; inputs and outputs 4, 8 or 32)
//! and a model runs zero-padded in the cheapest that holds it, so every
//! model the design accepts with at most 32 outputs (the runtime's channel
//! mask) and 512 inputs runs; padding is exact ([`runtime`] gives the
//! argument, its tests check it bit for bit). Cost: a step of the padded
//! observer against the model's own sizes, measured on the 40-state,
//! 5-input, 6-output chain in class (64, 8, 8) (`cargo test --release -p
//! lookout-sim step_cost -- --ignored --nocapture`, engine overhead
//! included): 0.70–0.79 in f64 and 0.56–0.64 in f32, padding to 64 being
//! no slower here; in general the N² work grows by at most (1.5)² between
//! classes. Building: 28 classes × 3 forms × 4 formats are monomorphised;
//! a debug build of the CLI and this crate from their sources took 21 s of
//! CPU (69 s wall, load average 13) against 14 s (44 s) for the CLI with
//! the 8-state dispatch. Tables of a large class are built on a thread of
//! their own with a stack sized for them, then live on the heap.

pub mod band;
pub mod config;
mod engine;
mod error;
pub mod metrics;
pub mod plant;
pub mod predicted;
pub mod reference;
pub mod rng;
pub mod runtime;
pub mod signal;
pub mod sizes;
pub mod tables;
pub mod text;
pub mod verdict;

pub use config::{InputDisturbance, RunConfig};
pub use engine::Skipped;
use engine::{Built, Lockstep, build_formats};
pub use error::SimError;
use lookout_design::Design;
use metrics::{Judged, Metrics, Peaks, Running, Settling, Tests, raise};
use plant::{PlantStream, Row, Trajectory, TruePlant};
use reference::Reference;
use runtime::{Format, FormatRun};

/// Everything one run produced.
#[derive(Debug, Clone)]
pub struct RunResult {
    /// The plant run: its sizes and counts, and its series when kept.
    pub traj: Trajectory,
    /// Largest |input| and |reading| per channel.
    pub peaks: Peaks,
    /// Each format that ran, with its metrics (f64 first).
    pub formats: Vec<(FormatRun, Metrics)>,
    /// Formats that could not be built, with the reason.
    pub skipped: Vec<(Format, String)>,
    /// Settling band per state (the f64 observer's; each format has its
    /// own in its metrics).
    pub tolerance: Vec<f64>,
    /// Where the band comes from.
    pub tolerance_source: String,
    /// Largest relative change applied to an entry of A or B.
    pub perturbation: f64,
    /// Non-fatal findings.
    pub warnings: Vec<String>,
}

/// Receives every row of a run as it is produced (first pass only).
pub trait Sink {
    /// Before the first row: the formats that run, in the order of the
    /// estimates given to [`Sink::row`].
    fn formats(&mut self, formats: &[Format]) -> Result<(), SimError>;
    /// Row `k` (0..=steps) and every format's estimate x̂ at step k, n values per
    /// format.
    fn row(&mut self, k: usize, row: &Row, estimates: &[f64]) -> Result<(), SimError>;
    /// Step `k` of the second pass was measured: for progress or
    /// resource accounting; nothing by default.
    fn second_pass(&mut self, k: usize) {
        let _ = k;
    }
}

/// What a run keeps and where its rows go.
#[derive(Default)]
pub struct Outputs<'s> {
    /// Keep the series (truth, inputs, readings, estimates, gated steps) in
    /// the result: memory grows with the steps.
    pub series: bool,
    /// Receives each row.
    pub rows: Option<&'s mut dyn Sink>,
}

/// The formats a run uses by default: f64, f32 and the `[fixed_point]`
/// format the model was designed for (the other Q format only on request).
pub fn formats(design: &Design) -> Vec<Format> {
    let mut out = vec![Format::F64, Format::F32];
    if let Some(fx) = &design.fixed_point {
        out.push(match fx.format {
            lookout_design::model::FixedFormat::Q31 => Format::Q31,
            lookout_design::model::FixedFormat::Q15 => Format::Q15,
        });
    }
    out
}

/// What every run of one `simulate` call shares.
#[derive(Debug, Clone)]
pub struct Setup {
    /// The design's statistics the runs are judged against.
    pub reference: Reference,
    /// The formats to run, f64 first.
    pub formats: Vec<Format>,
}

/// The plant's first row and its stream, and the estimate the observers
/// start from (the truth minus the initial error).
fn start<'a>(
    design: &Design,
    plant: &'a TruePlant,
    opts: &'a RunConfig,
    seed: u64,
) -> Result<(PlantStream<'a>, Vec<f64>, Vec<String>), SimError> {
    let (mut stream, warnings) = PlantStream::new(design, plant, opts, seed)?;
    let x0 = stream
        .next_row()
        .map(|row| {
            row.truth
                .iter()
                .zip(&opts.initial_error)
                .map(|(x, e)| x - e)
                .collect()
        })
        .unwrap_or_default();
    Ok((PlantStream::new(design, plant, opts, seed)?.0, x0, warnings))
}

/// The first pass's findings.
struct FirstPass {
    traj: Trajectory,
    peaks: Peaks,
    runs: Vec<FormatRun>,
    running: Vec<Running>,
    warnings: Vec<String>,
}

/// x − x̂ of row `row` for format `f` into `e`.
fn errors_into(e: &mut [f64], truth: &[f64], estimate: &[f64]) {
    for ((o, x), xh) in e.iter_mut().zip(truth).zip(estimate) {
        *o = x - xh;
    }
}

fn first_pass(
    design: &Design,
    (plant, opts, seed): (&TruePlant, &RunConfig, u64),
    built: &Built,
    (series, mut sink): (bool, Option<&mut (dyn Sink + '_)>),
) -> Result<FirstPass, SimError> {
    let (n, steps) = (design.n(), opts.steps);
    let (mut stream, x0, warnings) = start(design, plant, opts, seed)?;
    let mut all = Lockstep::new(built, &x0, series);
    let mut traj = Trajectory::empty(design, steps);
    let mut peaks = Peaks::new(design.m(), design.p());
    let mut running = vec![Running::new(n, steps); built.len()];
    if let Some(s) = sink.as_deref_mut() {
        s.formats(&all.runs.iter().map(|r| r.format).collect::<Vec<_>>())?;
    }
    let (mut bad_truth, mut bad_reading) = (None, None);
    let mut e = vec![0.0; n];
    let mut k = 0;
    while let Some(row) = stream.next_row() {
        bad_truth = bad_truth.or(row.truth.iter().copied().find(|v| !v.is_finite()));
        bad_reading = bad_reading.or(row.y.iter().copied().find(|v| !v.is_finite()));
        raise(&mut peaks.input, &row.u);
        raise(&mut peaks.reading, &row.y);
        all.read();
        let f64_estimate = all.estimates.get(..n).unwrap_or(&[]);
        for (r, est) in running.iter_mut().zip(all.estimates.chunks(n.max(1))) {
            errors_into(&mut e, &row.truth, est);
            r.add(k, &e, est, f64_estimate);
        }
        if let Some(s) = sink.as_deref_mut() {
            s.row(k, row, &all.estimates)?;
        }
        if series {
            traj.push(row);
        }
        if k < steps {
            all.step(k, row);
        }
        k += 1;
    }
    if let Some(v) = bad_truth.or(bad_reading) {
        return Err(SimError::BadInput(format!(
            "the simulated plant reaches {v} (not a finite f64): reduce --input, --process-noise, --measurement-noise, --disturbance or --outlier-size"
        )));
    }
    traj.dropped = stream.dropped;
    traj.outliers = stream.outliers;
    Ok(FirstPass {
        traj,
        peaks,
        runs: all.runs,
        running,
        warnings,
    })
}

/// The second pass: the same run again, each format judged against its
/// band.
fn second_pass(
    design: &Design,
    (plant, opts, seed): (&TruePlant, &RunConfig, u64),
    built: &Built,
    tests: &Tests,
    mut settling: Vec<Settling>,
    mut sink: Option<&mut (dyn Sink + '_)>,
) -> Result<Vec<Settling>, SimError> {
    let n = design.n();
    let (mut stream, x0, _) = start(design, plant, opts, seed)?;
    let mut all = Lockstep::new(built, &x0, false);
    let mut e = vec![0.0; n];
    let mut k = 0;
    while let Some(row) = stream.next_row() {
        all.read();
        for (s, est) in settling.iter_mut().zip(all.estimates.chunks(n.max(1))) {
            errors_into(&mut e, &row.truth, est);
            let sample = metrics::Sample {
                k,
                e: &e,
                estimate: est,
                u: &row.u,
                y: &row.y,
            };
            s.add(design, tests, &sample);
        }
        if let Some(s) = sink.as_deref_mut() {
            s.second_pass(k);
        }
        if k < opts.steps {
            all.step(k, row);
        }
        k += 1;
    }
    Ok(settling)
}

/// One run with plant seed `seed`, judged against `setup`'s reference;
/// `out` says what is kept and where rows go.
pub fn run_once(
    design: &Design,
    opts: &RunConfig,
    setup: &Setup,
    seed: u64,
    out: Outputs,
) -> Result<RunResult, SimError> {
    let reference = &setup.reference;
    let plant = TruePlant::of(design, opts.mismatch, seed)?;
    let (built, skipped) = build_formats(design, &setup.formats)?;
    let mut sink = out.rows;
    let first = first_pass(
        design,
        (&plant, opts, seed),
        &built,
        (out.series, sink.as_deref_mut()),
    )?;
    let reference_run = first
        .runs
        .first()
        .ok_or_else(|| SimError::Failure("the f64 observer did not run".into()))?;
    let f64_dev = band::deviation(design, &first.peaks, reference_run, reference_run);
    let residual = first
        .running
        .first()
        .map(|r| r.residual.clone())
        .unwrap_or_default();
    let events = (first.traj.dropped, first.traj.outliers);
    let tested = reference.noisy && events == (0, 0);
    let forgotten = if tested {
        reference.forgotten(&opts.initial_error, opts.steps)
    } else {
        0
    };
    let mut judged = Vec::new();
    let mut settling = Vec::new();
    for run in &first.runs {
        let deviation = band::deviation(design, &first.peaks, run, reference_run);
        let band = opts
            .tolerance
            .clone()
            .unwrap_or_else(|| band::band(reference, &deviation, &f64_dev, &residual));
        settling.push(Settling::new(
            band.clone(),
            reference,
            opts.steps,
            tested,
            forgotten,
        ));
        judged.push(Judged {
            reference,
            deviation,
            band,
            events,
        });
    }
    let tests = Tests::of(reference);
    let settled = second_pass(design, (&plant, opts, seed), &built, &tests, settling, sink)?;
    let mut formats: Vec<(FormatRun, Metrics)> = first
        .runs
        .into_iter()
        .zip(judged)
        .zip(first.running.iter().zip(&settled))
        .map(|((run, j), (r, s))| {
            let m = metrics::finish(design, &tests, j, r, s);
            (run, m)
        })
        .collect();
    metrics::carry_f64_verdict(&mut formats);
    let tolerance = formats
        .first()
        .map(|(_, m)| m.band.clone())
        .unwrap_or_default();
    Ok(RunResult {
        traj: first.traj,
        peaks: first.peaks,
        formats,
        skipped,
        tolerance,
        tolerance_source: band::tolerance_source(design, opts, reference),
        perturbation: plant.perturbation,
        warnings: first.warnings,
    })
}

/// Runs each of `formats` (f64 first) over the stored run `traj` from the
/// estimate `x0`, keeping every series (for `lookout replay`). A Q format
/// the design was not made for is skipped, with the reason, when its tables
/// cannot be built.
pub fn run_formats(
    design: &Design,
    formats: &[Format],
    traj: &Trajectory,
    x0: &[f64],
) -> Result<(Vec<FormatRun>, Skipped), SimError> {
    let (built, skipped) = build_formats(design, formats)?;
    Ok((engine::over(&built, traj, x0), skipped))
}
