//! Figures of merit of one format's run against the truth and the f64
//! observer.

use super::plant::Trajectory;
use super::runtime::FormatRun;

/// Settling band used when none is given: 2 % of the largest error of each
/// state in the f64 run (the common practice 2 % settling band); 1e-9 in
/// the state's unit for a state whose error is exactly zero throughout.
pub fn default_tolerance(traj: &Trajectory, reference: &FormatRun) -> Vec<f64> {
    let n = traj.n;
    (0..n)
        .map(|i| {
            let peak = errors(traj, reference, i).fold(0.0, |m: f64, e| m.max(e.abs()));
            if peak > 0.0 { 0.02 * peak } else { 1e-9 }
        })
        .collect()
}

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
    /// Settled, and stable.
    pub converged: bool,
}

/// Computes the metrics of `run` with settling bands `tolerance`.
pub fn measure(
    traj: &Trajectory,
    run: &FormatRun,
    reference: &FormatRun,
    tolerance: &[f64],
) -> Metrics {
    let n = traj.n;
    let len = traj.steps + 1;
    let mut rms_error = Vec::with_capacity(n);
    let mut final_error = Vec::with_capacity(n);
    let mut stable = true;
    // Last step outside the band, over all states.
    let mut last_outside: Option<usize> = None;
    for (i, &tol) in tolerance.iter().enumerate().take(n) {
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
        let finite = e.iter().all(|v| v.is_finite());
        if !finite || quarter(3) > quarter(2) + tol {
            stable = false;
        }
    }
    let settling_step = match last_outside {
        None => Some(0),
        Some(k) if k + 1 < len => Some(k + 1),
        Some(_) => None,
    };
    let max_deviation_from_f64 = (0..n)
        .map(|i| {
            run.estimate
                .iter()
                .skip(i)
                .step_by(n)
                .zip(reference.estimate.iter().skip(i).step_by(n))
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
        converged: stable && settling_step.is_some(),
    }
}
