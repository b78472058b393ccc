//! The constant tables the float observers run on.
//!
//! Tables are plain data: write them as `const` or `static` items (the design
//! tool generates them) so they live in flash; an observer borrows them and
//! owns only its state.

use crate::{Gate, Matrix};

/// The sampled plant model x\[k+1\] = A x\[k\] + B u\[k\], y\[k\] = C x\[k\] + D u\[k\].
///
/// N states, M inputs, P outputs; units are the model's own.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Plant<T, const N: usize, const M: usize, const P: usize> {
    /// A, N × N: state transition over one sample period.
    pub a: Matrix<T, N, N>,
    /// B, N × M: input to state over one sample period (zero-order hold).
    pub b: Matrix<T, N, M>,
    /// C, P × N: state to output.
    pub c: Matrix<T, P, N>,
    /// D, P × M: input to output (feed-through).
    pub d: Matrix<T, P, M>,
}

/// Tables of the predictor (Luenberger) observer.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PredictorTables<T, const N: usize, const M: usize, const P: usize> {
    /// The sampled plant.
    pub plant: Plant<T, N, M, P>,
    /// L, N × P: the predictor gain, x̂\[k+1\] = A x̂\[k\] + B u\[k\] + L r\[k\].
    pub l: Matrix<T, N, P>,
    /// Optional innovation gate.
    pub gate: Option<Gate<T, P>>,
}

/// Tables of the current-form (filter-form) observer, e.g. a steady-state
/// Kalman filter.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CurrentTables<T, const N: usize, const M: usize, const P: usize> {
    /// The sampled plant.
    pub plant: Plant<T, N, M, P>,
    /// K, N × P: the measurement-update gain, x̂\[k|k\] = x̂\[k|k−1\] + K r\[k\].
    pub k: Matrix<T, N, P>,
    /// Optional innovation gate.
    pub gate: Option<Gate<T, P>>,
}

/// Tables of the fused observer x̂⁺ = F x̂ + G u + H y.
///
/// For a predictor gain L: F = A − L C, G = B − L D, H = L.
/// For a current-form gain K the recursion of the predicted estimate
/// x̂\[k+1|k\] is the same with L = A K: F = A − A K C, G = B − A K D, H = A K.
/// C and D are kept to stand in for missing channels and for the gate.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct FusedTables<T, const N: usize, const M: usize, const P: usize> {
    /// F, N × N: the error dynamics' matrix.
    pub f: Matrix<T, N, N>,
    /// G, N × M: input to next estimate.
    pub g: Matrix<T, N, M>,
    /// H, N × P: measurement to next estimate.
    pub h: Matrix<T, N, P>,
    /// C, P × N, of the sampled plant.
    pub c: Matrix<T, P, N>,
    /// D, P × M, of the sampled plant.
    pub d: Matrix<T, P, M>,
    /// Optional innovation gate.
    pub gate: Option<Gate<T, P>>,
}
