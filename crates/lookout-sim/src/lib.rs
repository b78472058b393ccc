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
//! own, see [`plant`]) is simulated once and its readings recorded; each
//! format's observer ([`runtime`]) is driven over the same record; the
//! errors are measured against the truth and the f64 observer
//! ([`metrics`]).

pub mod config;
mod error;
pub mod metrics;
pub mod plant;
pub mod predicted;
pub mod reference;
pub mod rng;
pub mod runtime;
pub mod signal;
pub mod verdict;

pub use config::{InputDisturbance, RunConfig};
pub use error::SimError;
use lookout_design::Design;
use metrics::Metrics;
use plant::{Trajectory, TruePlant};
use reference::Reference;
use runtime::{Format, FormatRun};

/// Everything one run produced.
#[derive(Debug, Clone)]
pub struct RunResult {
    /// The recorded plant run.
    pub traj: Trajectory,
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

/// The formats a run uses by default: f64, f32 and the `[fixed_point]`
/// format the model was designed for (the other Q format only on request,
/// `--formats`).
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

/// One run with plant seed `seed`, judged against `reference`.
pub fn run_once(
    design: &Design,
    opts: &RunConfig,
    setup: &Setup,
    seed: u64,
) -> Result<RunResult, SimError> {
    let reference = &setup.reference;
    let plant = TruePlant::of(design, opts.mismatch, seed)?;
    let (traj, warnings) = plant::record(design, &plant, opts, seed)?;
    if let Some(v) = traj.truth.iter().chain(&traj.y).find(|v| !v.is_finite()) {
        return Err(SimError::BadInput(format!(
            "the simulated plant reaches {v} (not a finite f64): reduce --input, --process-noise, --measurement-noise, --disturbance or --outlier-size"
        )));
    }
    let x0: Vec<f64> = traj
        .truth
        .iter()
        .zip(&opts.initial_error)
        .map(|(x, e)| x - e)
        .collect();
    let (runs, skipped) = run_formats(design, &setup.formats, &traj, &x0)?;
    let reference_run = runs
        .first()
        .cloned()
        .ok_or_else(|| SimError::Failure("the f64 observer did not run".into()))?;
    let mut formats: Vec<(FormatRun, Metrics)> = runs
        .into_iter()
        .map(|r| {
            let m = metrics::measure(
                design,
                &traj,
                &r,
                &reference_run,
                reference,
                opts.tolerance.as_deref(),
            );
            (r, m)
        })
        .collect();
    metrics::carry_f64_verdict(&mut formats);
    let tolerance = formats
        .first()
        .map(|(_, m)| m.band.clone())
        .unwrap_or_default();
    let tolerance_source = metrics::tolerance_source(design, opts, reference);
    Ok(RunResult {
        traj,
        formats,
        skipped,
        tolerance,
        tolerance_source,
        perturbation: plant.perturbation,
        warnings,
    })
}

/// Formats that could not be built, with the reason.
pub type Skipped = Vec<(Format, String)>;

/// Runs each of `formats` (f64 first) over `traj` from the estimate `x0`.
/// A Q format the design was not made for is skipped, with the reason, when
/// its tables cannot be built.
pub fn run_formats(
    design: &Design,
    formats: &[Format],
    traj: &Trajectory,
    x0: &[f64],
) -> Result<(Vec<FormatRun>, Skipped), SimError> {
    let designed_format = design.fixed_point.as_ref().map(|f| match f.format {
        lookout_design::model::FixedFormat::Q31 => Format::Q31,
        lookout_design::model::FixedFormat::Q15 => Format::Q15,
    });
    let mut runs = Vec::new();
    let mut skipped = Vec::new();
    for &format in formats {
        match runtime::run(design, format, traj, x0) {
            Ok(r) => runs.push(r),
            // The other Q format was not designed for: it may not fit.
            Err(SimError::BadInput(why))
                if matches!(format, Format::Q31 | Format::Q15)
                    && Some(format) != designed_format =>
            {
                skipped.push((format, why));
            }
            Err(e) => return Err(e),
        }
    }
    Ok((runs, skipped))
}
