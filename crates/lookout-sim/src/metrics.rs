//! Figures of merit of one format's run against the truth, the f64 observer
//! and the design's statistics ([`Reference`]), and its [`Verdict`].

use super::config::RunConfig;
use super::plant::Trajectory;
use super::predicted;
use super::reference::{Reference, test_confidence};
use super::runtime::{Format, FormatRun};
use super::verdict::{Interval, Verdict, mean_within, normal_quantile};
use lookout_design::Design;
use lookout_design::fixed_point::accuracy::float_deviation;
use lookout_design::fixed_point::{Deviation, FloatTables};
use nalgebra::{DMatrix, DVector};

/// e_i[k] = x_i[k] − x̂_i[k] for k = 0..=steps.
fn errors<'a>(
    traj: &'a Trajectory,
    run: &'a FormatRun,
    i: usize,
) -> impl Iterator<Item = f64> + 'a {
    let n = traj.n;
    traj.truth
        .iter()
        .skip(i)
        .step_by(n)
        .zip(run.estimate.iter().skip(i).step_by(n))
        .map(|(x, xh)| x - xh)
}

/// One format's results.
#[derive(Debug, Clone)]
pub struct Metrics {
    /// RMS of the estimation error over steps 0..=steps, per state.
    pub rms_error: Vec<f64>,
    /// Estimation error x − x̂ after the last step, per state.
    pub final_error: Vec<f64>,
    /// First step from which every state's error stays within its band
    /// (`None`: never).
    pub settling_step: Option<usize>,
    /// Largest |x̂ − x̂_f64| per state.
    pub max_deviation_from_f64: Vec<f64>,
    /// Whether the error stays bounded: finite, and its peak over the last
    /// quarter of the run no larger than over the third quarter (plus the
    /// band), an empirical test.
    pub stable: bool,
    /// The verdict is [`Verdict::Converged`].
    pub converged: bool,
    /// This format's band per state.
    pub band: Vec<f64>,
    /// Bound on the deviation from the exact observer per state (see
    /// [`deviation`]).
    pub deviation: Vec<f64>,
    /// Per state: with noise the mean error over the settled samples;
    /// without, the peak |error| over the last eighth of the run.
    pub mean_error: Vec<f64>,
    /// The limit on |mean_error| per state.
    pub mean_limit: Vec<f64>,
    /// Time-averaged NEES and its interval (with noise).
    pub nees: Option<Interval>,
    /// Time-averaged NIS and its interval (with noise).
    pub nis: Option<Interval>,
    /// Why a consistency test was not made.
    pub untested: Option<String>,
    /// The verdict.
    pub verdict: Verdict,
}

/// Per state, the largest |value| of an interleaved series `width` wide.
fn peaks(values: &[f64], width: usize) -> Vec<f64> {
    let mut out = vec![0.0f64; width];
    for row in values.chunks(width.max(1)) {
        for (o, v) in out.iter_mut().zip(row) {
            *o = o.max(v.abs());
        }
    }
    out
}

/// Without `[fixed_point]` (float formats only): the design's float
/// analysis ([`lookout_design::fixed_point::accuracy::float_deviation`])
/// with this run's peaks standing in for the signal scales: the larger of
/// the format's and the f64 run's estimate per state (the exact estimate
/// differs from the f64 one by f64 rounding only), the inputs and readings.
fn run_peak_deviation(
    design: &Design,
    traj: &Trajectory,
    run: &FormatRun,
    reference_run: &FormatRun,
) -> Option<Deviation> {
    let names = design.state_names();
    let tables = FloatTables::of(design, &names);
    let x: Vec<f64> = peaks(&run.estimate, traj.n)
        .iter()
        .zip(peaks(&reference_run.estimate, traj.n))
        .map(|(a, b)| a.max(b))
        .collect();
    let (u, y) = (peaks(&traj.u, traj.m), peaks(&traj.y, traj.p));
    float_deviation(
        &tables,
        predicted::simulated_form(design),
        predicted::kind(run.format),
        (&x, &u, &y),
    )
}

/// Bound on |x̂ − x̂_exact| of `run` per state, x̂_exact the exact
/// observer's estimate: the design's proven deviation for this form and
/// format (`format_accuracy`, see [`predicted::design_deviation`]) when the
/// model has `[fixed_point]`, else [`run_peak_deviation`]. Infinite where
/// no bound exists (the analysis refuses the combination: its stored
/// error dynamics do not decay or its tables do not fit).
pub fn deviation(
    design: &Design,
    traj: &Trajectory,
    run: &FormatRun,
    reference_run: &FormatRun,
) -> Vec<f64> {
    // A float step never saturates, so the bound at this run's own signal
    // peaks is proven for the run and far tighter than the design's at the
    // full scales (which would hide a real bias in the band); a Q step is
    // bounded at its scales, which it cannot leave without saturating.
    let found = match run.format {
        Format::F64 | Format::F32 => run_peak_deviation(design, traj, run, reference_run),
        _ => predicted::design_deviation(design, run.format).cloned(),
    };
    match found {
        Some(d) if d.refused.is_none() => d.total,
        _ => vec![f64::INFINITY; traj.n],
    }
}

/// Where [`deviation`] comes from, for the report.
pub fn deviation_source(design: &Design) -> String {
    let form = predicted::simulated_form(design).name();
    let float = format!(
        "for f64 and f32 the design's float deviation bound of the {form} form (as in format_accuracy: Higham's γ per dot product through the ℓ1 impulse response of the stored error dynamics) at this run's signal peaks, proven for the run while every reading is used"
    );
    if design.fixed_point.is_some() {
        format!(
            "{float}; for Q formats the design's proven deviation of the {form} form at the scales (format_accuracy in `lookout design --json`; proven while every reading is used, no signal leaves its scale and nothing saturates)"
        )
    } else {
        float
    }
}

/// Where the bands of a run come from, for the report.
pub fn tolerance_source(design: &Design, opts: &RunConfig, reference: &Reference) -> String {
    if opts.tolerance.is_some() {
        "--tolerance".to_string()
    } else if reference.noisy {
        format!(
            "k·σ per state with k = {:.2} (a consistent error leaves it anywhere in the run with probability {}), σ from {}; plus 1 × {}",
            reference.k,
            super::reference::BAND_MISS,
            reference.source,
            deviation_source(design)
        )
    } else {
        format!(
            "the f64 run's residual over the last quarter plus 1 × the f64 run's and 1 × the format's deviation bound: {}",
            deviation_source(design)
        )
    }
}

/// The band of a format from its deviation bound `dev` and the f64 run's
/// `f64_dev`: with noise k·σ plus `dev` (σ is the exact observer's error);
/// without, the f64 run's residual (its largest error over the last
/// quarter) plus `f64_dev` (the exact observer's error is within that) plus
/// `dev`.
pub fn band(reference: &Reference, dev: &[f64], f64_dev: &[f64], residual: &[f64]) -> Vec<f64> {
    dev.iter()
        .zip(f64_dev)
        .zip(&reference.sigma)
        .zip(residual)
        .map(|(((&d, &d64), &s), &res)| {
            let b = if reference.noisy {
                reference.k * s + d
            } else {
                res + d64 + d
            };
            b.max(f64::MIN_POSITIVE)
        })
        .collect()
}

/// The f64 run's largest |error| per state over the last quarter.
pub fn residual(traj: &Trajectory, reference_run: &FormatRun) -> Vec<f64> {
    let len = traj.steps + 1;
    (0..traj.n)
        .map(|i| {
            errors(traj, reference_run, i)
                .skip(len - len / 4)
                .fold(0.0, |m: f64, v| m.max(v.abs()))
        })
        .collect()
}

/// Averages eᵀ M⁻¹ e over the sample indices `at` (`None` if M is not
/// positive definite or there are no samples).
fn normalised(m: &DMatrix<f64>, samples: &[DVector<f64>], confidence: f64) -> Option<Interval> {
    let chol = m.clone().cholesky()?;
    let total: f64 = samples.iter().map(|e| e.dot(&chol.solve(e))).sum();
    Interval::chi_square(
        total / samples.len() as f64,
        samples.len(),
        m.nrows(),
        confidence,
    )
}

/// The settled samples used by the statistics: every `spacing`-th step
/// from `start` on.
fn settled(start: usize, len: usize, spacing: usize) -> Vec<usize> {
    (start..len).step_by(spacing.max(1)).collect()
}

/// The NEES and NIS averages of a settled run (see [`super::verdict`]).
fn consistency(
    design: &Design,
    traj: &Trajectory,
    run: &FormatRun,
    reference: &Reference,
    start: usize,
) -> (Option<Interval>, Option<Interval>, Option<String>) {
    if !reference.noisy {
        return (None, None, Some("no simulated noise".into()));
    }
    if traj.dropped > 0 || traj.outliers > 0 {
        return (
            None,
            None,
            Some("dropouts and outliers change the error covariance the tests assume".into()),
        );
    }
    let (n, m, p) = (traj.n, traj.m, traj.p);
    let err = |k: usize| {
        DVector::from_iterator(
            n,
            (0..n).map(|i| traj.truth[k * n + i] - run.estimate[k * n + i]),
        )
    };
    let len = traj.steps + 1;
    let e: Vec<DVector<f64>> = settled(start, len, reference.spacing)
        .into_iter()
        .map(err)
        .collect();
    let confidence = test_confidence(n);
    let nees = normalised(&reference.cov, &e, confidence);
    let nis_spacing = if reference.white_innovation {
        1
    } else {
        reference.spacing
    };
    let r: Vec<DVector<f64>> = settled(start, traj.steps, nis_spacing)
        .into_iter()
        .map(|k| {
            let x = DVector::from_iterator(n, run.estimate[k * n..(k + 1) * n].iter().copied());
            let u = DVector::from_iterator(m, traj.u[k * m..(k + 1) * m].iter().copied());
            let y = DVector::from_iterator(p, traj.y[k * p..(k + 1) * p].iter().copied());
            y - &design.cd * x - &design.dd * u
        })
        .collect();
    let nis = normalised(&reference.innovation_cov, &r, confidence);
    let note = nees
        .is_none()
        .then(|| "the design's error covariance is singular: no NEES".to_string());
    (nees, nis, note)
}

/// Per state: the mean error over the settled, nearly independent
/// samples, its limit z·σ/√K + the deviation bound (z the two-sided normal
/// quantile at [`test_confidence`]), and the first
/// state beyond it.
fn bias_with_noise(
    traj: &Trajectory,
    run: &FormatRun,
    reference: &Reference,
    dev: &[f64],
    start: usize,
) -> (Vec<f64>, Vec<f64>, Option<usize>) {
    let n = traj.n;
    let z = normal_quantile(test_confidence(n));
    let samples = settled(start, traj.steps + 1, reference.spacing);
    let mut out = (Vec::with_capacity(n), Vec::with_capacity(n), None);
    for i in 0..n {
        let e: Vec<f64> = samples
            .iter()
            .map(|&k| traj.truth[k * n + i] - run.estimate[k * n + i])
            .collect();
        let sigma = reference.sigma.get(i).copied().unwrap_or(0.0);
        let spread = z * sigma / (e.len().max(1) as f64).sqrt();
        let limit = spread + dev.get(i).copied().unwrap_or(0.0);
        let (mean, ok) = mean_within(&e, limit.max(f64::MIN_POSITIVE));
        if !ok && out.2.is_none() {
            out.2 = Some(i);
        }
        out.0.push(mean);
        out.1.push(limit);
    }
    out
}

/// Without noise the error of an exact model obeys e[k + L] = Fᴸ e[k] up
/// to rounding, so with D = diag(d) any positive scaling,
/// max over the last eighth of |e_i| / d_i ≤ ‖D⁻¹ Fᴸ D‖∞ · max over the
/// eighth before of max_j |e_j| / d_j (L the eighth's length). With d_j the
/// peak |e_j| over the earlier eighth (at least the deviation bound) the
/// allowed peak of state i is d_i ‖D⁻¹ Fᴸ D‖∞ plus the deviation bound; an
/// error beyond it does not decay as the design says: a model mismatch or
/// an unmodelled input. Returns per state the later peak and its limit.
fn bias_without_noise(
    traj: &Trajectory,
    run: &FormatRun,
    reference: &Reference,
    dev: &[f64],
) -> (Vec<f64>, Vec<f64>, Option<usize>) {
    let n = traj.n;
    let len = traj.steps + 1;
    let window = (len / 8).max(1);
    let peak = |e: &[f64], from: usize| {
        e.get(from..(from + window).min(len))
            .unwrap_or(&[])
            .iter()
            .fold(0.0, |m: f64, v| m.max(v.abs()))
    };
    let (mut before, mut after) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for i in 0..n {
        let e: Vec<f64> = errors(traj, run, i).collect();
        before.push(peak(&e, len.saturating_sub(2 * window)));
        after.push(peak(&e, len - window));
    }
    let round = |i: usize| dev.get(i).copied().unwrap_or(0.0);
    let d: Vec<f64> = (0..n)
        .map(|i| before[i].max(round(i)).max(f64::MIN_POSITIVE))
        .collect();
    let mut power = DMatrix::<f64>::identity(n, n);
    for _ in 0..window {
        power = &reference.f * power;
    }
    let gain = (0..n)
        .map(|i| {
            (0..n)
                .map(|j| power[(i, j)].abs() * d[j] / d[i])
                .sum::<f64>()
        })
        .fold(0.0, f64::max);
    let limits: Vec<f64> = d
        .iter()
        .enumerate()
        .map(|(i, di)| di * gain + round(i))
        .collect();
    let biased = after.iter().zip(&limits).position(|(a, l)| a > l);
    (after, limits, biased)
}

/// Computes the metrics and the verdict of `run`. `tolerance` overrides
/// the band when given (`--tolerance`).
pub fn measure(
    design: &Design,
    traj: &Trajectory,
    run: &FormatRun,
    reference_run: &FormatRun,
    reference: &Reference,
    tolerance: Option<&[f64]>,
) -> Metrics {
    let n = traj.n;
    let len = traj.steps + 1;
    let dev = deviation(design, traj, run, reference_run);
    let f64_dev = deviation(design, traj, reference_run, reference_run);
    let residual = residual(traj, reference_run);
    let band = tolerance.map_or_else(
        || band(reference, &dev, &f64_dev, &residual),
        <[f64]>::to_vec,
    );
    let mut rms_error = Vec::with_capacity(n);
    let mut final_error = Vec::with_capacity(n);
    let mut stable = true;
    let mut finite = true;
    let mut last_outside: Option<usize> = None;
    for (i, &tol) in band.iter().enumerate().take(n) {
        let e: Vec<f64> = errors(traj, run, i).collect();
        let sum_sq: f64 = e.iter().map(|v| v * v).sum();
        rms_error.push((sum_sq / len as f64).sqrt());
        final_error.push(e.last().copied().unwrap_or(f64::NAN));
        // A band that is not finite (the f64 reference's error overflowed)
        // cannot be settled in: never within it.
        let outside = if tol.is_finite() {
            e.iter().rposition(|v| v.is_nan() || v.abs() > tol)
        } else {
            len.checked_sub(1)
        };
        if let Some(k) = outside {
            last_outside = Some(last_outside.map_or(k, |l| l.max(k)));
        }
        let quarter = |q: usize| {
            e.get(q * len / 4..(q + 1) * len / 4)
                .unwrap_or(&[])
                .iter()
                .fold(0.0, |m: f64, v| m.max(v.abs()))
        };
        finite &= e.iter().all(|v| v.is_finite());
        if !finite || quarter(3) > quarter(2) + tol {
            stable = false;
        }
    }
    let settling_step = match last_outside {
        None => Some(0),
        Some(k) if k + 1 < len => Some(k + 1),
        Some(_) => None,
    };
    // Unsettled runs are tested for a bias over their last quarter: an
    // error that stays outside its band by a steady amount is a bias.
    let start = settling_step.unwrap_or(len - len / 4);
    let (mean_error, mean_limit, biased) = if reference.noisy {
        bias_with_noise(traj, run, reference, &dev, start)
    } else {
        bias_without_noise(traj, run, reference, &dev)
    };
    let (nees, nis, untested) = if settling_step.is_some() && finite {
        consistency(design, traj, run, reference, start)
    } else {
        (None, None, None)
    };
    let verdict = if !finite {
        Verdict::NotFinite
    } else if let Some(state) = biased {
        Verdict::Biased { state }
    } else if settling_step.is_none() {
        Verdict::NotSettled
    } else if nees.is_some_and(|i| !i.holds()) {
        Verdict::Inconsistent { test: "NEES" }
    } else if nis.is_some_and(|i| !i.holds()) {
        Verdict::Inconsistent { test: "NIS" }
    } else {
        Verdict::Converged
    };
    let max_deviation_from_f64 = (0..n)
        .map(|i| {
            run.estimate
                .iter()
                .skip(i)
                .step_by(n)
                .zip(reference_run.estimate.iter().skip(i).step_by(n))
                .fold(0.0, |m: f64, (a, b)| {
                    let d = (a - b).abs();
                    if d.is_nan() { f64::INFINITY } else { m.max(d) }
                })
        })
        .collect();
    Metrics {
        rms_error,
        final_error,
        settling_step,
        max_deviation_from_f64,
        stable,
        converged: verdict.converged(),
        band,
        deviation: dev,
        mean_error,
        mean_limit,
        nees,
        nis,
        untested,
        verdict,
    }
}

/// Carries the f64 observer's failure to the other formats of a run: when
/// f64 diverged the design fails and no format is called converged; when
/// f64 is biased, a format that otherwise passed follows that biased
/// estimate within its own rounding and is biased too.
pub fn carry_f64_verdict(formats: &mut [(FormatRun, Metrics)]) {
    let Some(first) = formats.first().map(|(_, m)| m.verdict.clone()) else {
        return;
    };
    for (_, m) in formats.iter_mut().skip(1) {
        match (&first, &m.verdict) {
            (Verdict::NotFinite, v) if *v != Verdict::NotFinite => {
                m.verdict = Verdict::DesignFailed;
            }
            (Verdict::Biased { state }, Verdict::Converged) => {
                m.verdict = Verdict::Biased { state: *state };
            }
            _ => {}
        }
        m.converged = m.verdict.converged();
    }
}
