//! `lookout simulate`: the observer, stepped by the real runtime in every
//! number format, against a simulated true plant.
//!
//! The engine is the library `lookout_sim` (one run: [`run_once`]); this
//! module turns the options into its settings ([`options`]), prints
//! ([`output`]), plots ([`plot`]) and runs `--sweep N`, N runs over random
//! perturbations ([`sweep`]).

pub mod options;
pub mod output;
pub mod plot;
pub mod sweep;

pub use lookout_sim::{
    RunResult, Setup, formats, metrics, plant, predicted, reference, run_formats, runtime, verdict,
};

use crate::cli::SimArgs;
use crate::error::CliError;
use lookout_design::Design;
use options::SimOptions;
use reference::Reference;
use runtime::Format;

/// One run of the engine with the options' settings and plant seed `seed`,
/// keeping nothing but its figures (constant memory).
pub fn run_once(
    design: &Design,
    opts: &SimOptions,
    setup: &Setup,
    seed: u64,
) -> Result<RunResult, CliError> {
    let out = lookout_sim::Outputs::default();
    Ok(lookout_sim::run_once(design, opts, setup, seed, out)?)
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

/// Largest memory the time series of one run may take (bytes): the truth,
/// inputs, readings and every format's estimates are kept for the plot (a
/// run without `--plot` keeps none; `--csv` writes them as they come).
pub const MAX_SERIES_BYTES: u64 = 1 << 30;

/// Most steps of one run: its memory does not grow with them (without
/// `--plot`), its time does.
pub const MAX_STEPS: usize = 10_000_000;

/// Checks the options of `lookout simulate` against the design, before
/// anything is printed or simulated: every refusal names the option.
pub fn prepare(design: &Design, args: &SimArgs) -> Result<(SimOptions, Setup), CliError> {
    lookout_sim::sizes::check_sizes(design)?;
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
        opts.run.initial_error = setup.reference.initial_error();
    }
    if opts.steps > MAX_STEPS {
        return Err(CliError::BadInput(format!(
            "--steps {}: at most {MAX_STEPS} steps per run (its time grows with the steps)",
            opts.steps
        )));
    }
    if args.plot.is_some() {
        check_memory(design, &opts, setup.formats.len())?;
    }
    Ok((opts, setup))
}

/// Refuses a plotted run whose time series would not fit
/// [`MAX_SERIES_BYTES`], estimated before anything is allocated.
fn check_memory(design: &Design, opts: &SimOptions, formats: usize) -> Result<(), CliError> {
    let (n, m, p) = (design.n() as u64, design.m() as u64, design.p() as u64);
    let formats = formats as u64;
    // f64 truth, inputs, readings and estimates, two flags per reading.
    let per_step = 8 * (n * (1 + formats) + m + p) + 2 * p;
    let bytes = (opts.steps as u64 + 1).saturating_mul(per_step);
    if bytes > MAX_SERIES_BYTES {
        let most = MAX_SERIES_BYTES / per_step.max(1);
        return Err(CliError::BadInput(format!(
            "--steps {}: the plot would need about {:.1} GiB for its time series (at most {} GiB); this model allows at most {} steps with --plot",
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
    let series = args.plot.is_some();
    let result = match &args.csv {
        Some(path) => output::run_with_csv(path, design, opts, setup, series)?,
        None => {
            let out = lookout_sim::Outputs { series, rows: None };
            lookout_sim::run_once(design, opts, setup, opts.seed, out)?
        }
    };
    if let Some(path) = &args.plot {
        plot::write(path, args.font.as_deref(), design, &result)?;
    }
    Ok(if args.json {
        output::json(design, opts, &result)
    } else {
        output::text(design, opts, &result)
    })
}
