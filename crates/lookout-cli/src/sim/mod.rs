//! `lookout simulate`: the observer, stepped by the real runtime in every
//! number format, against a simulated true plant.
//!
//! One run: the true plant (the model's plant, perturbed and sampled on its
//! own, see [`plant`]) is simulated once and its readings recorded; each
//! format's observer ([`runtime`]) is driven over the same record; the
//! errors are measured against the truth and the f64 observer
//! ([`metrics`]). `--sweep N` repeats that for N random perturbations
//! ([`sweep`]).

pub mod metrics;
pub mod options;
pub mod output;
pub mod plant;
pub mod plot;
pub mod predicted;
pub mod rng;
pub mod runtime;
pub mod signal;
pub mod sweep;

use crate::cli::SimArgs;
use crate::error::CliError;
use lookout_design::Design;
use metrics::Metrics;
use options::SimOptions;
use plant::{Trajectory, TruePlant};
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
    /// Settling band per state.
    pub tolerance: Vec<f64>,
    /// Largest relative change applied to an entry of A or B.
    pub perturbation: f64,
    /// Non-fatal findings.
    pub warnings: Vec<String>,
}

/// The formats the design can run in: f64, f32, and Q31 and Q15 with a
/// `[fixed_point]` section.
pub fn formats(design: &Design) -> Vec<Format> {
    let mut out = vec![Format::F64, Format::F32];
    if design.fixed_point.is_some() {
        out.extend([Format::Q31, Format::Q15]);
    }
    out
}

/// One run with plant seed `seed`.
pub fn run_once(design: &Design, opts: &SimOptions, seed: u64) -> Result<RunResult, CliError> {
    let plant = TruePlant::of(design, opts.mismatch, seed)?;
    let (traj, warnings) = plant::record(design, &plant, opts, seed)?;
    if let Some(v) = traj.truth.iter().chain(&traj.y).find(|v| !v.is_finite()) {
        return Err(CliError::BadInput(format!(
            "the simulated plant reaches {v} (not a finite f64): reduce --input, --process-noise, --measurement-noise, --disturbance or --outlier-size"
        )));
    }
    let x0: Vec<f64> = traj
        .truth
        .iter()
        .zip(&opts.initial_error)
        .map(|(x, e)| x - e)
        .collect();
    let (runs, skipped) = run_formats(design, &traj, &x0)?;
    let reference = runs
        .first()
        .cloned()
        .ok_or_else(|| CliError::Failure("the f64 observer did not run".into()))?;
    let tolerance = opts
        .tolerance
        .clone()
        .unwrap_or_else(|| metrics::default_tolerance(&traj, &reference));
    let formats = runs
        .into_iter()
        .map(|r| {
            let m = metrics::measure(&traj, &r, &reference, &tolerance);
            (r, m)
        })
        .collect();
    Ok(RunResult {
        traj,
        formats,
        skipped,
        tolerance,
        perturbation: plant.perturbation,
        warnings,
    })
}

/// Formats that could not be built, with the reason.
pub type Skipped = Vec<(Format, String)>;

/// Runs every format of [`formats`] over `traj` from the estimate `x0`
/// (f64 first). A Q format the design was not made for is skipped, with the
/// reason, when its tables cannot be built.
pub fn run_formats(
    design: &Design,
    traj: &Trajectory,
    x0: &[f64],
) -> Result<(Vec<FormatRun>, Skipped), CliError> {
    let designed_format = design.fixed_point.as_ref().map(|f| match f.format {
        lookout_design::model::FixedFormat::Q31 => Format::Q31,
        lookout_design::model::FixedFormat::Q15 => Format::Q15,
    });
    let mut runs = Vec::new();
    let mut skipped = Vec::new();
    for format in formats(design) {
        match runtime::run(design, format, traj, x0) {
            Ok(r) => runs.push(r),
            // The other Q format was not designed for: it may not fit.
            Err(CliError::BadInput(why))
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

/// Largest memory the recorded time series of one run may take (bytes):
/// the truth, inputs, readings and every format's estimates are kept for
/// the metrics, the CSV and the plot.
pub const MAX_SERIES_BYTES: u64 = 1 << 30;

/// Checks the options of `lookout simulate` against the design, before
/// anything is printed or simulated: every refusal names the option.
pub fn prepare(design: &Design, args: &SimArgs) -> Result<SimOptions, CliError> {
    runtime::check_sizes(design)?;
    let opts = SimOptions::from_args(args, design.n(), design.m())?;
    if opts.sweep.is_some() && (args.plot.is_some() || args.csv.is_some()) {
        return Err(CliError::BadInput(
            "--plot and --csv show one run: rerun the worst case the sweep reports with its --seed"
                .into(),
        ));
    }
    if let Some(path) = &args.plot {
        plot::check_path(path, design.n())?;
    }
    check_memory(design, &opts, args.csv.is_some())?;
    Ok(opts)
}

/// Refuses a run whose time series would not fit [`MAX_SERIES_BYTES`]
/// (per run in parallel for a sweep), estimated before anything is allocated.
fn check_memory(design: &Design, opts: &SimOptions, csv: bool) -> Result<(), CliError> {
    let (n, m, p) = (design.n() as u64, design.m() as u64, design.p() as u64);
    let formats = formats(design).len() as u64;
    // f64 truth, inputs, readings and estimates, a flag per reading, and
    // for --csv about 24 characters per number of the text.
    let mut per_step = 8 * (n * (1 + formats) + m + p) + p;
    if csv {
        per_step += 24 * (n * (1 + 2 * formats) + 2 + m + p);
    }
    let parallel = if opts.sweep.is_some() {
        rayon::current_num_threads().max(1) as u64
    } else {
        1
    };
    let bytes = (opts.steps as u64 + 1)
        .saturating_mul(per_step)
        .saturating_mul(parallel);
    if bytes > MAX_SERIES_BYTES {
        let most = MAX_SERIES_BYTES / per_step.saturating_mul(parallel).max(1);
        return Err(CliError::BadInput(format!(
            "--steps {}: the run would need about {:.1} GiB for its time series (at most {} GiB); this model allows at most {} steps",
            opts.steps,
            bytes as f64 / (1u64 << 30) as f64,
            MAX_SERIES_BYTES >> 30,
            most.saturating_sub(1)
        )));
    }
    Ok(())
}

/// `lookout simulate` with options checked by [`prepare`]: returns what
/// goes to standard output.
pub fn simulate(design: &Design, args: &SimArgs, opts: &SimOptions) -> Result<String, CliError> {
    if let Some(runs) = opts.sweep {
        let summary = sweep::run(design, opts, runs)?;
        return Ok(if args.json {
            output::sweep_json(design, opts, &summary)
        } else {
            output::sweep_text(design, opts, &summary)
        });
    }
    let result = run_once(design, opts, opts.seed)?;
    if let Some(path) = &args.csv {
        output::write_csv(path, design, &result)?;
    }
    if let Some(path) = &args.plot {
        plot::write(path, args.font.as_deref(), design, &result)?;
    }
    Ok(if args.json {
        output::json(design, opts, &result)
    } else {
        output::text(design, opts, &result)
    })
}
