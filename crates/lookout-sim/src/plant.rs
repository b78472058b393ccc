//! The true plant and the recorded run every format is driven with.
//!
//! The true plant is the model's own plant (without disturbance states),
//! each entry of A and B perturbed by a relative `mismatch`, sampled by its
//! own zero-order hold (`lookout_design::numerics::zoh`) for held inputs;
//! nothing of the observer's tables is reused. It is simulated once per run
//! and the measurements recorded, so every number format sees the same data.

use super::config::RunConfig;
use super::rng::Rng;
use super::signal::InputStream;
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

impl Trajectory {
    /// A run of `steps` steps of `design`'s sizes with nothing stored yet.
    pub fn empty(design: &Design, steps: usize) -> Self {
        Self {
            steps,
            n: design.n(),
            m: design.m(),
            p: design.p(),
            truth: Vec::new(),
            u: Vec::new(),
            y: Vec::new(),
            valid: Vec::new(),
            dropped: 0,
            outliers: 0,
            outlier: Vec::new(),
        }
    }

    /// Appends one row.
    pub fn push(&mut self, row: &Row) {
        self.truth.extend(&row.truth);
        self.u.extend(&row.u);
        self.y.extend(&row.y);
        self.valid.extend(&row.valid);
        self.outlier.extend(&row.outlier);
    }

    /// Row k into `row` (the stored counterpart of [`PlantStream::next_row`]).
    pub fn row_into(&self, k: usize, row: &mut Row) {
        let (n, m, p) = (self.n, self.m, self.p);
        let part = |v: &[f64], w: usize| v.get(k * w..(k + 1) * w).unwrap_or(&[]).to_vec();
        row.truth = part(&self.truth, n);
        let last = k >= self.steps;
        row.u = if last { Vec::new() } else { part(&self.u, m) };
        row.y = if last { Vec::new() } else { part(&self.y, p) };
        let flags = |v: &[bool]| {
            if last {
                Vec::new()
            } else {
                v.get(k * p..(k + 1) * p).unwrap_or(&[]).to_vec()
            }
        };
        row.valid = flags(&self.valid);
        row.outlier = flags(&self.outlier);
    }
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

/// One step of a run: the truth at step k and what the observers are given
/// for step k (inputs, readings and flags are empty at the last row, the
/// state after the last step).
#[derive(Debug, Clone, Default)]
pub struct Row {
    /// True value of each estimated state (n; empty in a replayed log).
    pub truth: Vec<f64>,
    /// Commanded input (m, without the disturbance).
    pub u: Vec<f64>,
    /// Readings (p, noisy, with outliers).
    pub y: Vec<f64>,
    /// Whether each reading is offered (false: dropped out).
    pub valid: Vec<bool>,
    /// Whether each reading is an outlier.
    pub outlier: Vec<bool>,
}

/// The true plant simulated step by step, in constant memory: the same
/// values, drawn in the same order from the same seeded streams, whether a
/// run is stored ([`record`]) or not.
pub struct PlantStream<'a> {
    plant: &'a TruePlant,
    opts: &'a RunConfig,
    input: InputStream<'a>,
    process: Option<DMatrix<f64>>,
    measurement: Option<DMatrix<f64>>,
    noise: Rng,
    readings: Rng,
    dist_truth: Vec<f64>,
    x: DVector<f64>,
    k: usize,
    row: Row,
    /// Readings dropped so far.
    pub dropped: usize,
    /// Readings made outliers so far.
    pub outliers: usize,
}

impl<'a> PlantStream<'a> {
    /// The stream of `plant` for `opts`. The plant starts at x = 0 (its
    /// estimate at −initial error). Also returns a warning when a
    /// disturbance state has no exact truth.
    pub fn new(
        design: &Design,
        plant: &'a TruePlant,
        opts: &'a RunConfig,
        seed: u64,
    ) -> Result<(Self, Vec<String>), SimError> {
        let (n, m) = (design.n(), design.m());
        let n_plant = design.model.plant.n();
        let (process, measurement) = noise_factors(design, opts, n_plant)?;
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
        let stream = Self {
            plant,
            opts,
            input: InputStream::new(&opts.input, m, design.model.sample_period),
            process,
            measurement,
            noise: Rng::new(seed, STREAM_NOISE),
            readings: Rng::new(seed, STREAM_READINGS),
            dist_truth,
            x: DVector::zeros(n_plant),
            k: 0,
            row: Row::default(),
            dropped: 0,
            outliers: 0,
        };
        Ok((stream, warnings))
    }

    /// Row k (k = 0..=steps, then `None`), advancing the plant by one step.
    pub fn next_row(&mut self) -> Option<&Row> {
        let opts = self.opts;
        let k = self.k;
        if k > opts.steps {
            return None;
        }
        self.k += 1;
        let acting = opts.disturbance.filter(|d| k >= d.start);
        let row = &mut self.row;
        row.truth.clear();
        row.truth.extend(self.x.iter());
        let on = acting.is_some();
        row.truth
            .extend(self.dist_truth.iter().map(|&v| if on { v } else { 0.0 }));
        row.u.clear();
        row.y.clear();
        row.valid.clear();
        row.outlier.clear();
        if k == opts.steps {
            return Some(&self.row);
        }
        let m = self.plant.bd.ncols();
        row.u.resize(m, 0.0);
        self.input.next_row(&mut row.u);
        let mut u_true = DVector::from_column_slice(&row.u);
        if let Some(d) = acting
            && let Some(slot) = u_true.get_mut(d.input)
        {
            *slot += d.size;
        }
        let (plant, x) = (self.plant, &self.x);
        let mut y = &plant.c * x + &plant.d * &u_true;
        if let Some(s) = &self.measurement {
            let noise = &mut self.noise;
            y += s * DVector::from_fn(y.len(), |_, _| noise.normal());
        }
        for yj in y.iter_mut() {
            let readings = &mut self.readings;
            let valid = !readings.chance(opts.dropout_rate);
            let outlier = readings.chance(opts.outlier_rate);
            if outlier {
                let sign = if readings.chance(0.5) { 1.0 } else { -1.0 };
                *yj += sign * opts.outlier_size;
                self.outliers += 1;
            }
            row.outlier.push(outlier);
            self.dropped += usize::from(!valid);
            row.valid.push(valid);
            row.y.push(*yj);
        }
        let mut next = &plant.ad * x + &plant.bd * &u_true;
        if let Some(s) = &self.process {
            let noise = &mut self.noise;
            next += s * DVector::from_fn(next.len(), |_, _| noise.normal());
        }
        self.x = next;
        Some(&self.row)
    }
}

/// Simulates `plant` for `opts` and stores the whole run (for the plot and
/// tests; [`PlantStream`] gives it a step at a time). Also returns a
/// warning when a disturbance state has no exact truth.
pub fn record(
    design: &Design,
    plant: &TruePlant,
    opts: &RunConfig,
    seed: u64,
) -> Result<(Trajectory, Vec<String>), SimError> {
    let (mut stream, warnings) = PlantStream::new(design, plant, opts, seed)?;
    let mut tr = Trajectory::empty(design, opts.steps);
    while let Some(row) = stream.next_row() {
        tr.push(row);
    }
    tr.dropped = stream.dropped;
    tr.outliers = stream.outliers;
    Ok((tr, warnings))
}
