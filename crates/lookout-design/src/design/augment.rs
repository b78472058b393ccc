//! State augmentation: the plant with its disturbance states appended, in
//! the plant's own time domain (so a continuous plant is augmented before the
//! zero-order hold, and the hold samples the disturbances exactly).
//!
//! With x the plant state and z the disturbance states (layout in
//! [`crate::model::Disturbances`]):
//!
//! ```text
//! continuous:  ẋ = A x + B u + E z,   ż = J z,    y = C x + D u + F z
//! discrete:    x⁺ = A x + B u + E z,  z⁺ = J z
//! ```
//!
//! E holds each input disturbance's column at its value state; F has a 1 at
//! (output, state) of each bias; J is 0 for a constant (1 in discrete time)
//! and `[[0, 1], [0, 0]]` for a ramp (`[[1, T], [0, 1]]` in discrete time).

use super::DesignError;
use crate::model::{Disturbances, Domain, Entry, KalmanSpec, Model, Shape};
use nalgebra::DMatrix;

/// The system the observer is designed for: the plant, plus any disturbance states.
pub(super) struct Augmented {
    /// State matrix, (n + n_d) × (n + n_d), in the plant's domain.
    pub a: DMatrix<f64>,
    /// Input matrix, (n + n_d) × m.
    pub b: DMatrix<f64>,
    /// Output matrix, p × (n + n_d).
    pub c: DMatrix<f64>,
    /// Feed-through matrix, p × m.
    pub d: DMatrix<f64>,
    /// Number of plant states n.
    pub plant_states: usize,
    /// Per augmented state: its name ([`Model::state_names`]).
    pub names: Vec<String>,
    /// Per augmented state: what it is, for messages (`plant state `angle``,
    /// `input disturbance `load_torque``).
    pub labels: Vec<String>,
    /// Noise input of the disturbances, (n + n_d) × (number of disturbances):
    /// each one's noise drives its last state.
    noise_input: DMatrix<f64>,
    /// Each disturbance's label and noise level (`None` where the model gives none).
    noise_levels: Vec<(String, Option<f64>)>,
}

fn internal(origin: &str, message: String) -> DesignError {
    DesignError::Unsupported {
        origin: origin.to_string(),
        key: "disturbances",
        message,
    }
}

/// Sets `m[(i, j)] = v`, refusing an index outside `m` (the model reader
/// rules it out; this keeps a hand-built model from panicking).
fn put(origin: &str, m: &mut DMatrix<f64>, i: usize, j: usize, v: f64) -> Result<(), DesignError> {
    let shape = m.shape();
    let entry = m.get_mut((i, j)).ok_or_else(|| {
        internal(
            origin,
            format!(
                "augmented matrix entry ({i}, {j}) lies outside its {} × {} shape: \
                 a disturbance names an input, output or state the plant does not have",
                shape.0, shape.1
            ),
        )
    })?;
    *entry = v;
    Ok(())
}

impl Augmented {
    /// The augmented system of `model` (the plant itself without disturbances).
    pub fn of(model: &Model, origin: &str) -> Result<Augmented, DesignError> {
        let plant = &model.plant;
        let (n, m, p) = (plant.n(), plant.m(), plant.p());
        let none = Disturbances::default();
        let dist = model.disturbances.as_ref().unwrap_or(&none);
        let total = n + dist.state_count();
        let noises = dist.input.len() + dist.output_bias.len();
        let continuous = plant.domain == Domain::Continuous;
        // Diagonal of J and the rate coupling of a ramp, in the plant's domain.
        let (hold, rate) = if continuous {
            (0.0, 1.0)
        } else {
            (1.0, model.sample_period)
        };

        let mut a = DMatrix::zeros(total, total);
        a.view_mut((0, 0), (n, n)).copy_from(&plant.a);
        let mut b = DMatrix::zeros(total, m);
        b.view_mut((0, 0), (n, m)).copy_from(&plant.b);
        let mut c = DMatrix::zeros(p, total);
        c.view_mut((0, 0), (p, n)).copy_from(&plant.c);
        let mut noise_input = DMatrix::zeros(total, noises);
        let mut noise_levels = Vec::with_capacity(noises);
        let mut labels: Vec<String> = model
            .state_names()
            .iter()
            .take(n)
            .map(|name| format!("plant state `{name}`"))
            .collect();

        let mut k = n;
        for (j, d) in dist.input.iter().enumerate() {
            let column: Vec<f64> = match &d.entry {
                Entry::Input(i) if *i < m => plant.b.column(*i).iter().copied().collect(),
                Entry::Input(i) => {
                    return Err(internal(
                        origin,
                        format!("disturbance `{}` adds to input {i}, but m = {m}", d.name),
                    ));
                }
                Entry::Column(column) => column.clone(),
            };
            if column.len() != n {
                return Err(internal(
                    origin,
                    format!(
                        "disturbance `{}` has a column of {} entries, but n = {n}",
                        d.name,
                        column.len()
                    ),
                ));
            }
            for (i, v) in column.iter().enumerate() {
                put(origin, &mut a, i, k, *v)?;
            }
            put(origin, &mut a, k, k, hold)?;
            let label = format!("input disturbance `{}`", d.name);
            labels.push(label.clone());
            noise_levels.push((label.clone(), d.noise));
            let last = match d.shape {
                Shape::Constant => k,
                Shape::Ramp => {
                    put(origin, &mut a, k, k + 1, rate)?;
                    put(origin, &mut a, k + 1, k + 1, hold)?;
                    labels.push(label);
                    k + 1
                }
            };
            put(origin, &mut noise_input, last, j, 1.0)?;
            k = last + 1;
        }
        for (j, bias) in dist.output_bias.iter().enumerate() {
            put(origin, &mut c, bias.output, k, 1.0)?;
            put(origin, &mut a, k, k, hold)?;
            put(origin, &mut noise_input, k, dist.input.len() + j, 1.0)?;
            let label = format!("output bias `{}`", bias.name);
            noise_levels.push((label.clone(), bias.noise));
            labels.push(label);
            k += 1;
        }

        Ok(Augmented {
            a,
            b,
            c,
            d: plant.d.clone(),
            plant_states: n,
            names: model.state_names(),
            labels,
            noise_input,
            noise_levels,
        })
    }

    /// Whether any disturbance state was added.
    pub fn has_disturbances(&self) -> bool {
        self.a.nrows() > self.plant_states
    }

    /// The augmented noise input and process-noise matrix of a Kalman
    /// design: `[[G, 0], [0, G_d]]` and `diag(Q, q_1, …)`, where G, Q are the
    /// plant's (`noise_input`, default I) and q_j the disturbances' `noise`.
    pub fn process_noise(
        &self,
        origin: &str,
        spec: &KalmanSpec,
    ) -> Result<(DMatrix<f64>, DMatrix<f64>), DesignError> {
        let n = self.plant_states;
        let total = self.a.nrows();
        let g_plant = spec
            .noise_input
            .clone()
            .unwrap_or_else(|| DMatrix::identity(n, n));
        let q_plant = &spec.process_noise;
        let (qn, dn) = (q_plant.nrows(), self.noise_levels.len());
        if g_plant.shape() != (n, qn) || !q_plant.is_square() {
            return Err(internal(
                origin,
                format!(
                    "noise_input is {} × {} and process_noise {} × {}, but n = {n}",
                    g_plant.nrows(),
                    g_plant.ncols(),
                    q_plant.nrows(),
                    q_plant.ncols()
                ),
            ));
        }
        let mut g = DMatrix::zeros(total, qn + dn);
        g.view_mut((0, 0), (n, qn)).copy_from(&g_plant);
        g.view_mut((0, qn), (total, dn))
            .copy_from(&self.noise_input);
        let mut q = DMatrix::zeros(qn + dn, qn + dn);
        q.view_mut((0, 0), (qn, qn)).copy_from(q_plant);
        for (j, (label, level)) in self.noise_levels.iter().enumerate() {
            let level = level.ok_or_else(|| {
                internal(
                    origin,
                    format!("{label} has no `noise`, which a Kalman design needs"),
                )
            })?;
            put(origin, &mut q, qn + j, qn + j, level)?;
        }
        Ok((g, q))
    }
}
