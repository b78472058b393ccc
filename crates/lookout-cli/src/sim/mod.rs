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
pub mod reference;
pub mod rng;
pub mod runtime;
pub mod signal;
pub mod sweep;
pub mod verdict;

use crate::cli::SimArgs;
use crate::error::CliError;
use lookout_design::Design;
use metrics::Metrics;
use options::SimOptions;
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

/// `--formats`: a comma-separated list; f64 always runs first (every
/// format is measured against it). Q formats need a `[fixed_point]`
/// section.
pub fn requested_formats(design: &Design, text: Option<&str>) -> Result<Vec<Format>, CliError> {
    let Some(text) = text else {
        return Ok(formats(design));
    };
    let mut out = vec![Format::F64];
    for name in text.split(',').map(str::trim) {
        let f = [Format::F64, Format::F32, Format::Q31, Format::Q15]
            .into_iter()
            .find(|f| f.name() == name.to_ascii_lowercase())
            .ok_or_else(|| {
                CliError::BadInput(format!(
                    "--formats: `{name}` is not one of f64, f32, q31, q15"
                ))
            })?;
        if matches!(f, Format::Q31 | Format::Q15) && design.fixed_point.is_none() {
            return Err(CliError::BadInput(format!(
                "--formats {name}: the model has no [fixed_point] section to scale the Q tables"
            )));
        }
        if !out.contains(&f) {
            out.push(f);
        }
    }
    Ok(out)
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
    opts: &SimOptions,
    setup: &Setup,
    seed: u64,
) -> Result<RunResult, CliError> {
    let reference = &setup.reference;
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
    let (runs, skipped) = run_formats(design, &setup.formats, &traj, &x0)?;
    let reference_run = runs
        .first()
        .cloned()
        .ok_or_else(|| CliError::Failure("the f64 observer did not run".into()))?;
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
) -> Result<(Vec<FormatRun>, Skipped), CliError> {
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
pub fn prepare(design: &Design, args: &SimArgs) -> Result<(SimOptions, Setup), CliError> {
    runtime::check_sizes(design)?;
    let mut opts = SimOptions::from_args(args, design.n(), design.m())?;
    if opts.sweep.is_some() && (args.plot.is_some() || args.csv.is_some()) {
        return Err(CliError::BadInput(
            "--plot and --csv show one run: rerun the worst case the sweep reports with its --seed"
                .into(),
        ));
    }
    if let Some(path) = &args.plot {
        plot::check_path(path, design.n())?;
    }
    let setup = Setup {
        reference: Reference::of(design, &opts)?,
        formats: requested_formats(design, args.formats.as_deref())?,
    };
    if args.initial_error.is_none() {
        opts.initial_error = setup.reference.initial_error();
    }
    check_memory(design, &opts, setup.formats.len(), args.csv.is_some())?;
    Ok((opts, setup))
}

/// Refuses a run whose time series would not fit [`MAX_SERIES_BYTES`]
/// (per run in parallel for a sweep), estimated before anything is allocated.
fn check_memory(
    design: &Design,
    opts: &SimOptions,
    formats: usize,
    csv: bool,
) -> Result<(), CliError> {
    let (n, m, p) = (design.n() as u64, design.m() as u64, design.p() as u64);
    let formats = formats as u64;
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
pub fn simulate(
    design: &Design,
    args: &SimArgs,
    (opts, setup): &(SimOptions, Setup),
) -> Result<String, CliError> {
    if let Some(runs) = opts.sweep {
        let summary = sweep::run(design, opts, setup, runs)?;
        return Ok(if args.json {
            output::sweep_json(design, opts, &summary)
        } else {
            output::sweep_text(design, opts, &summary)
        });
    }
    let result = run_once(design, opts, setup, opts.seed)?;
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
