//! The true plant and the recorded run every format is driven with.
//!
//! The true plant is the model's own plant (without disturbance states),
//! each entry of A and B perturbed by a relative `mismatch`, sampled by its
//! own zero-order hold (`lookout_design::numerics::zoh`) for held inputs;
//! nothing of the observer's tables is reused. It is simulated once per run
//! and the measurements recorded, so every number format sees the same data.

use super::config::RunConfig;
use super::rng::Rng;
use crate::SimError;
use lookout_design::Design;
use lookout_design::model::{Domain, Entry, GainSource, Shape};
use nalgebra::{DMatrix, DVector};

/// Random stream tags (see [`Rng::new`]).
const STREAM_PLANT: u64 = 1;
const STREAM_NOISE: u64 = 2;
const STREAM_READINGS: u64 = 3;

/// Sampled true plant x⁺ = Ad x + Bd u, y = C x + D u.
#[derive(Debug, Clone)]
pub struct TruePlant {
    /// Sampled state matrix.
    pub ad: DMatrix<f64>,
    /// Sampled input matrix.
    pub bd: DMatrix<f64>,
    /// Output matrix.
    pub c: DMatrix<f64>,
    /// Feed-through.
    pub d: DMatrix<f64>,
    /// Largest relative change of any entry of A or B.
    pub perturbation: f64,
}

impl TruePlant {
    /// The model's plant with A and B perturbed entry by entry by
    /// 1 + mismatch·ξ, ξ uniform in [−1, 1] (zero entries stay zero, so the
    /// structure of the model is kept), drawn from `seed`.
    pub fn of(design: &Design, mismatch: f64, seed: u64) -> Result<Self, SimError> {
        let plant = &design.model.plant;
        let mut rng = Rng::new(seed, STREAM_PLANT);
        let mut largest: f64 = 0.0;
        let mut perturb = |m: &DMatrix<f64>| {
            m.map(|v| {
                if mismatch == 0.0 {
                    return v;
                }
                let xi = mismatch * rng.symmetric();
                largest = largest.max(xi.abs());
                v * (1.0 + xi)
            })
        };
        let a = perturb(&plant.a);
        let b = perturb(&plant.b);
        let (ad, bd) = match plant.domain {
            Domain::Continuous => lookout_design::numerics::zoh(&a, &b, design.model.sample_period)
                .map_err(|e| {
                    SimError::BadInput(format!(
                        "--mismatch {mismatch}: the perturbed true plant cannot be sampled: {e}"
                    ))
                })?,
            Domain::Discrete => (a, b),
        };
        Ok(Self {
            ad,
            bd,
            c: plant.c.clone(),
            d: plant.d.clone(),
            perturbation: largest,
        })
    }
}

/// One recorded run: the truth of every estimated state and what the
/// observers are given. Row-major series, one row per step.
#[derive(Debug, Clone)]
pub struct Trajectory {
    /// Steps.
    pub steps: usize,
    /// Estimated states (plant and disturbance states).
    pub n: usize,
    /// Inputs.
    pub m: usize,
    /// Outputs.
    pub p: usize,
    /// True value of each estimated state at steps 0..=steps, n per row.
    pub truth: Vec<f64>,
    /// Commanded input per step (without the disturbance), m per row.
    pub u: Vec<f64>,
    /// Readings per step (noisy, with outliers), p per row.
    pub y: Vec<f64>,
    /// Whether each reading is offered (false: dropped out), p per row.
    pub valid: Vec<bool>,
    /// Readings dropped.
    pub dropped: usize,
    /// Readings made outliers.
    pub outliers: usize,
    /// Whether each reading is an outlier, p per row.
    pub outlier: Vec<bool>,
}

/// Square root factor S (S Sᵀ = cov) of a covariance, through its
/// symmetric eigen-decomposition (negative rounding eigenvalues clipped to
/// zero); the eigen solver's iteration cap makes failure an error.
fn covariance_factor(name: &str, cov: &DMatrix<f64>) -> Result<DMatrix<f64>, SimError> {
    let n = cov.nrows();
    let sym = (cov + cov.transpose()) * 0.5;
    let eig = sym
        .try_symmetric_eigen(f64::EPSILON, 100 * n.max(1))
        .ok_or_else(|| {
            SimError::Failure(format!(
                "{name}: symmetric eigenvalues did not converge in {} iterations",
                100 * n.max(1)
            ))
        })?;
    let root = DMatrix::from_diagonal(&eig.eigenvalues.map(|l| l.max(0.0).sqrt()));
    Ok(&eig.eigenvectors * root)
}

/// Square-root factors of the process noise (on the plant states) and of
/// the measurement noise (on the outputs); `None` where there is none.
pub(crate) type NoiseFactors = (Option<DMatrix<f64>>, Option<DMatrix<f64>>);

/// Noise factors (process on the plant states, measurement on the outputs).
pub(crate) fn noise_factors(
    design: &Design,
    opts: &RunConfig,
    n_plant: usize,
) -> Result<NoiseFactors, SimError> {
    let p = design.p();
    let kalman_spec = match &design.model.observer.gain_source {
        GainSource::Kalman(spec) => Some(spec),
        _ => None,
    };
    let process = match (opts.process_noise, &design.kalman) {
        (Some(s), _) => (s > 0.0).then(|| DMatrix::identity(n_plant, n_plant) * s),
        // The model's per-sample process noise (its plant block: the
        // disturbance states' noise belongs to the observer's model only).
        (None, Some(k)) => Some(covariance_factor(
            "process noise",
            &k.process_noise
                .view((0, 0), (n_plant, n_plant))
                .into_owned(),
        )?),
        (None, None) => None,
    };
    let measurement = match (opts.measurement_noise, kalman_spec) {
        (Some(s), _) => (s > 0.0).then(|| DMatrix::identity(p, p) * s),
        (None, Some(spec)) => Some(covariance_factor(
            "measurement noise",
            &spec.measurement_noise,
        )?),
        (None, None) => None,
    };
    Ok((process, measurement))
}

/// The true value of each disturbance state while the simulated input
/// disturbance `size` acts on input `k`: a constant disturbance with column
/// e stands for the least-squares equivalent (eᵀ b_k / eᵀ e)·size (exact
/// when e is parallel to b_k, as for the demo's load torque); ramp rates and
/// output biases are zero. Also returns whether every equivalence is exact.
fn disturbance_truth(design: &Design, k: usize, size: f64) -> (Vec<f64>, bool) {
    let plant = &design.model.plant;
    let bk: Vec<f64> = plant.b.column(k).iter().copied().collect();
    let mut out = Vec::new();
    let mut exact = true;
    let Some(dist) = &design.model.disturbances else {
        return (out, exact);
    };
    for d in &dist.input {
        let e: Vec<f64> = match &d.entry {
            Entry::Input(j) => plant.b.column(*j).iter().copied().collect(),
            Entry::Column(c) => c.clone(),
        };
        let ee: f64 = e.iter().map(|v| v * v).sum();
        let eb: f64 = e.iter().zip(&bk).map(|(a, b)| a * b).sum();
        let tau = if ee > 0.0 { eb / ee } else { 0.0 };
        let residual: f64 = e
            .iter()
            .zip(&bk)
            .map(|(ei, bi)| (bi - tau * ei).powi(2))
            .sum::<f64>()
            .sqrt();
        let scale = bk.iter().map(|v| v * v).sum::<f64>().sqrt();
        if tau != 0.0 && residual > 1e-9 * scale {
            exact = false;
        }
        out.push(tau * size);
        if d.shape == Shape::Ramp {
            out.push(0.0);
        }
    }
    out.extend(dist.output_bias.iter().map(|_| 0.0));
    (out, exact)
}

/// Simulates `plant` for `opts` and records the run. The plant starts at
/// x = 0 (its estimate at −initial error). Also returns a warning when a
/// disturbance state has no exact truth.
pub fn record(
    design: &Design,
    plant: &TruePlant,
    opts: &RunConfig,
    seed: u64,
) -> Result<(Trajectory, Vec<String>), SimError> {
    let (n, m, p) = (design.n(), design.m(), design.p());
    let n_plant = design.model.plant.n();
    let steps = opts.steps;
    let t = design.model.sample_period;
    let u_series = opts.input.series(steps, m, t);
    let (process, measurement) = noise_factors(design, opts, n_plant)?;
    let mut noise = Rng::new(seed, STREAM_NOISE);
    let mut readings = Rng::new(seed, STREAM_READINGS);
    let mut warnings = Vec::new();
    let (dist_truth, exact) = match opts.disturbance {
        Some(d) => disturbance_truth(design, d.input, d.size),
        None => (vec![0.0; n - n_plant], true),
    };
    if !exact {
        warnings.push(
            "the simulated input disturbance is not parallel to a modelled disturbance column: the disturbance states' truth is its least-squares equivalent"
                .to_string(),
        );
    }

    let mut x = DVector::<f64>::zeros(n_plant);
    let mut tr = Trajectory {
        steps,
        n,
        m,
        p,
        truth: Vec::with_capacity((steps + 1) * n),
        u: u_series,
        y: Vec::with_capacity(steps * p),
        valid: Vec::with_capacity(steps * p),
        dropped: 0,
        outliers: 0,
        outlier: Vec::with_capacity(steps * p),
    };
    let acting = |k: usize| opts.disturbance.filter(|d| k >= d.start);
    for k in 0..=steps {
        tr.truth.extend(x.iter());
        let on = acting(k).is_some();
        tr.truth
            .extend(dist_truth.iter().map(|&v| if on { v } else { 0.0 }));
        if k == steps {
            break;
        }
        let mut u_true = DVector::from_iterator(m, tr.u.iter().skip(k * m).take(m).copied());
        if let Some(d) = acting(k)
            && let Some(slot) = u_true.get_mut(d.input)
        {
            *slot += d.size;
        }
        let mut y = &plant.c * &x + &plant.d * &u_true;
        if let Some(s) = &measurement {
            y += s * DVector::from_fn(p, |_, _| noise.normal());
        }
        for yj in y.iter_mut() {
            let valid = !readings.chance(opts.dropout_rate);
            let outlier = readings.chance(opts.outlier_rate);
            if outlier {
                let sign = if readings.chance(0.5) { 1.0 } else { -1.0 };
                *yj += sign * opts.outlier_size;
                tr.outliers += 1;
            }
            tr.outlier.push(outlier);
            tr.dropped += usize::from(!valid);
            tr.valid.push(valid);
            tr.y.push(*yj);
        }
        let mut next = &plant.ad * &x + &plant.bd * &u_true;
        if let Some(s) = &process {
            next += s * DVector::from_fn(n_plant, |_, _| noise.normal());
        }
        x = next;
    }
    Ok((tr, warnings))
}
