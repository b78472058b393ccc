//! The settings of a run, independent of how they were given.

use crate::signal::InputSignal;

/// A constant or step disturbance added to one input channel of the true
/// plant (the observers never see it).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InputDisturbance {
    /// The input channel it adds to.
    pub input: usize,
    /// Its size, in that input's unit.
    pub size: f64,
    /// The first step it acts on (0: from the start).
    pub start: usize,
}

/// The settings of one run: plain data, checked by whoever builds it (the
/// `lookout` command checks each against its option and names it).
#[derive(Debug, Clone)]
pub struct RunConfig {
    /// Steps simulated.
    pub steps: usize,
    /// Seed of every random stream.
    pub seed: u64,
    /// Initial estimation error x − x̂ of each estimated state.
    pub initial_error: Vec<f64>,
    /// The commanded input.
    pub input: InputSignal,
    /// Standard deviation per sample of the noise on each plant state
    /// (`None`: the model's Kalman noise, or none).
    pub process_noise: Option<f64>,
    /// Standard deviation per sample of the noise on each output (`None`:
    /// the model's Kalman measurement noise, or none).
    pub measurement_noise: Option<f64>,
    /// Relative perturbation of A and B: each entry times 1 + δ·ξ, ξ
    /// uniform in [−1, 1].
    pub mismatch: f64,
    /// A disturbance on one input of the true plant.
    pub disturbance: Option<InputDisturbance>,
    /// Probability that a reading is missing (per step and output).
    pub dropout_rate: f64,
    /// Probability that a reading is an outlier.
    pub outlier_rate: f64,
    /// Size of an outlier, in the output's unit (sign random).
    pub outlier_size: f64,
    /// Settling band of each estimated state (`None`: 2 % of the f64
    /// observer's largest error of that state).
    pub tolerance: Option<Vec<f64>>,
}
