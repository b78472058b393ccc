//! `lookout replay`: the designed observer run over a logged bench record in
//! every number format (the same runtime stepping as `simulate`, see
//! [`crate::sim::run_formats`]), and its innovations tested and used to fit
//! the noise covariances (the statistics live in
//! [`lookout_design::replay`]).

pub mod log;
pub mod output;
pub mod plot;

use crate::error::CliError;
use crate::sim::plant::Trajectory;
use crate::sim::runtime::{Format, FormatRun};
use crate::sim::{predicted, run_formats};
use lookout_design::Design;
use lookout_design::replay::{
    AlsEstimate, AlsProblem, InnovationSummary, Innovations, NoiseMap, Whiteness, estimate_noise,
    noise_map, summarise, whiteness,
};
use nalgebra::{DMatrix, DVector};

/// Confidence level of every interval and test the command prints.
pub const LEVEL: f64 = 0.95;

/// What the user asked for beyond the files.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ReplayOptions {
    /// Lags of the autocorrelation (1..=lags) and of the fit (0..lags).
    pub lags: usize,
    /// Samples left out of the statistics at the start; `None`: until the
    /// error dynamics have decayed by 10⁶.
    pub skip: Option<usize>,
}

/// One format's replay.
#[derive(Debug, Clone)]
pub struct FormatReplay {
    /// The run.
    pub run: FormatRun,
    /// Innovations y − Cd x̂[k|k−1] − Dd u at every sample.
    pub innovations: Innovations,
    /// Mean, covariance, NIS after the skipped start.
    pub summary: Option<InnovationSummary>,
    /// Whiteness after the skipped start.
    pub whiteness: Option<Whiteness>,
    /// The noise fit, or why it cannot be made.
    pub noise: Result<AlsEstimate, String>,
    /// Largest |x̂ − x̂_f64| per state.
    pub max_deviation: Vec<f64>,
    /// The design's bound on it, when it has one.
    pub bound: Option<Vec<f64>>,
    /// Why the bound does not cover this log, if so.
    pub not_covered: Option<String>,
}

/// Everything `replay` found.
#[derive(Debug, Clone)]
pub struct Replay {
    /// The log.
    pub traj: Trajectory,
    /// Samples skipped at the start.
    pub skip: usize,
    /// Lags used.
    pub lags: usize,
    /// Per format (f64 first).
    pub formats: Vec<FormatReplay>,
    /// Formats not run, with the reason.
    pub skipped: Vec<(Format, String)>,
    /// The design's predicted innovation covariance (Kalman designs).
    pub predicted: Option<DMatrix<f64>>,
    /// The noise map of the fit, or why there is none.
    pub noise_map: Result<NoiseMap, String>,
}

/// `lookout replay`: checks the options, reads the log, replays it, writes
/// the files asked for and returns what goes to standard output.
pub fn command(design: &Design, args: &crate::cli::ReplayArgs) -> Result<String, CliError> {
    lookout_sim::sizes::check_sizes(design)?;
    let lags = usize::try_from(args.lags)
        .ok()
        .filter(|&l| (1..=1000).contains(&l))
        .ok_or_else(|| CliError::BadInput(format!("--lags {}: expected 1 to 1000", args.lags)))?;
    let skip = match args.skip {
        None => None,
        Some(s) => Some(usize::try_from(s).map_err(|_| {
            CliError::BadInput(format!(
                "--skip {s}: expected a count of samples (0 or more)"
            ))
        })?),
    };
    if let Some(path) = &args.plot {
        crate::sim::plot::check_path(path, design.p())?;
    }
    let traj = log::read(&args.log, design, args.ignore_other_columns)?;
    let r = replay(design, traj, &ReplayOptions { lags, skip })?;
    if let Some(path) = &args.csv {
        output::write_csv(path, design, &r)?;
    }
    if let Some(path) = &args.plot {
        plot::write(path, args.font.as_deref(), design, &r)?;
    }
    Ok(if args.json {
        output::json(design, &r)
    } else {
        output::text(design, &args.log, &r)
    })
}

/// The predictor-form gain L (L = Ad K for the current form).
fn predictor_gain(design: &Design) -> Option<DMatrix<f64>> {
    design.observer().form.predictor_gain(&design.ad)
}

/// Innovations of `run` over `traj`.
fn innovations(design: &Design, traj: &Trajectory, run: &FormatRun) -> Innovations {
    let (n, m, p) = (traj.n, traj.m, traj.p);
    let mut values = Vec::with_capacity(traj.steps * p);
    let mut present = Vec::with_capacity(traj.steps);
    for k in 0..traj.steps {
        let x = DVector::from_iterator(n, run.estimate.iter().skip(k * n).take(n).copied());
        let u = DVector::from_iterator(m, traj.u.iter().skip(k * m).take(m).copied());
        let y = DVector::from_iterator(p, traj.y.iter().skip(k * p).take(p).copied());
        let e = y - &design.cd * x - &design.dd * u;
        values.extend(e.iter());
        present.push(traj.valid.iter().skip(k * p).take(p).all(|&v| v));
    }
    Innovations { p, values, present }
}

/// Samples until ρ(F)^k ≤ 10⁻⁶, at most half the log.
fn default_skip(design: &Design, steps: usize) -> usize {
    let rho = design.spectral_radius;
    let k = if rho <= 0.0 {
        1.0
    } else if rho >= 1.0 {
        f64::INFINITY
    } else {
        ((1e-6f64).ln() / rho.ln()).ceil()
    };
    if k.is_finite() {
        (k as usize).min(steps / 2)
    } else {
        steps / 2
    }
}

fn max_deviation(n: usize, run: &FormatRun, reference: &FormatRun) -> Vec<f64> {
    let mut out = vec![0.0f64; n];
    for (i, (a, b)) in run.estimate.iter().zip(&reference.estimate).enumerate() {
        if let Some(slot) = out.get_mut(i % n.max(1)) {
            *slot = slot.max((a - b).abs());
        }
    }
    out
}

/// Replays `traj` through `design`.
pub fn replay(design: &Design, traj: Trajectory, opts: &ReplayOptions) -> Result<Replay, CliError> {
    lookout_sim::sizes::check_sizes(design)?;
    check_memory(design, traj.steps)?;
    let x0 = vec![0.0; design.n()];
    let (runs, skipped) = run_formats(design, &crate::sim::formats(design), &traj, &x0)?;
    let signals = crate::sim::metrics::Peaks::of(&traj);
    let reference = runs
        .first()
        .cloned()
        .ok_or_else(|| CliError::Failure("the f64 observer did not run".into()))?;
    let skip = opts
        .skip
        .unwrap_or_else(|| default_skip(design, traj.steps));
    if skip + 2 * opts.lags >= traj.steps {
        return Err(CliError::BadInput(format!(
            "the log has {} samples: too few for --skip {skip} and --lags {} (at least {} needed)",
            traj.steps,
            opts.lags,
            skip + 2 * opts.lags + 1
        )));
    }
    let predicted = design
        .kalman
        .as_ref()
        .map(|k| k.innovation_covariance.clone());
    let map = noise_map(design);
    let gain = predictor_gain(design);
    let formats = runs
        .into_iter()
        .map(|run| {
            let innovations = innovations(design, &traj, &run);
            let tail = innovations.skip(skip);
            let noise = fit(design, &map, gain.as_ref(), &traj, &run, &tail, opts.lags);
            FormatReplay {
                summary: summarise(&tail, predicted.as_ref(), LEVEL),
                whiteness: whiteness(&tail, opts.lags, LEVEL),
                noise,
                max_deviation: max_deviation(traj.n, &run, &reference),
                bound: predicted::bound(design, run.format),
                not_covered: predicted::not_covered(
                    design,
                    traj.dropped,
                    &signals,
                    &run,
                    Some(&reference),
                ),
                innovations,
                run,
            }
        })
        .collect();
    Ok(Replay {
        traj,
        skip,
        lags: opts.lags,
        formats,
        skipped,
        predicted,
        noise_map: map,
    })
}

/// Refuses a log whose series (every format's estimates and innovations)
/// would not fit [`crate::sim::MAX_SERIES_BYTES`].
fn check_memory(design: &Design, steps: usize) -> Result<(), CliError> {
    let formats = crate::sim::formats(design).len() as u64;
    let (n, m, p) = (design.n() as u64, design.m() as u64, design.p() as u64);
    let per_step = 8 * (formats * (n + p) + m + p) + p + formats;
    let bytes = (steps as u64 + 1).saturating_mul(per_step);
    if bytes > crate::sim::MAX_SERIES_BYTES {
        return Err(CliError::BadInput(format!(
            "the log has {steps} samples: replaying them would need about {:.1} GiB (at most {} GiB); this model allows at most {} samples",
            bytes as f64 / (1u64 << 30) as f64,
            crate::sim::MAX_SERIES_BYTES >> 30,
            crate::sim::MAX_SERIES_BYTES / per_step.max(1) - 1
        )));
    }
    Ok(())
}

/// The noise fit of one format's innovations, or why it cannot be made.
fn fit(
    design: &Design,
    map: &Result<NoiseMap, String>,
    gain: Option<&DMatrix<f64>>,
    traj: &Trajectory,
    run: &FormatRun,
    tail: &Innovations,
    lags: usize,
) -> Result<AlsEstimate, String> {
    let map = map.as_ref().map_err(Clone::clone)?;
    let l = gain.ok_or("gain_method = \"hold\" has no innovation gain: the fit is not covered")?;
    if traj.dropped > 0 || run.gated > 0 {
        return Err(format!(
            "{} readings missing and {} gated: the fit assumes the observer used every reading",
            traj.dropped, run.gated
        ));
    }
    let problem = AlsProblem {
        ad: &design.ad,
        cd: &design.cd,
        l,
        noise: map,
        lags,
    };
    estimate_noise(&problem, tail)
        .ok_or_else(|| "the least-squares problem could not be formed or solved".to_string())
}
