//! Noise: process noise per sample, and how much measurement noise an
//! observer passes into its estimates.

use super::DesignError;
use super::augment::Augmented;
use crate::model::{Domain, KalmanSpec, Model, NoiseDomain};
use crate::numerics;
use crate::numerics::NumericsError;
use nalgebra::DMatrix;

/// Qd, the process noise covariance per sample: Van Loan's (1978) block
/// exponential for a continuous spectral density, G Q Gᵀ for a per-sample one,
/// with G and Q those of the augmented system `sys` (the plant's noise plus
/// each disturbance's, see [`Augmented::process_noise`]).
pub(super) fn process_noise_per_sample(
    origin: &str,
    model: &Model,
    sys: &Augmented,
    spec: &KalmanSpec,
) -> Result<DMatrix<f64>, DesignError> {
    let (g, q) = sys.process_noise(origin, spec)?;
    match spec.noise_domain {
        NoiseDomain::Discrete => Ok(&g * &q * g.transpose()),
        NoiseDomain::Continuous => {
            if model.plant.domain == Domain::Discrete {
                return Err(DesignError::Unsupported {
                    origin: origin.to_string(),
                    key: "observer.kalman.noise_domain",
                    message: "a continuous noise density needs a continuous plant; with plant.domain = \"discrete\" set noise_domain = \"discrete\"".into(),
                });
            }
            numerics::van_loan_process_noise(&sys.a, &g, &q, model.sample_period).map_err(
                |source| DesignError::Numerics {
                    origin: origin.to_string(),
                    stage: "process noise per sample (Van Loan)",
                    source,
                },
            )
        }
    }
}

/// X = Σₖ Fᵏ W (Fᵏ)ᵀ, the solution of the discrete Lyapunov equation
/// X = F X Fᵀ + W: the steady covariance of x⁺ = F x + w with cov(w) = W.
///
/// Summed by Smith's doubling iteration (R. A. Smith, "Matrix equation
/// XA + BX = C", SIAM J. Appl. Math. 16, 1968): X ← X + Aᵢ X Aᵢᵀ,
/// Aᵢ₊₁ = Aᵢ², which converges quadratically when ρ(F) < 1; it stops after
/// 64 doublings at most. Not finite (an error) when F is not stable.
pub fn steady_covariance(
    f: &DMatrix<f64>,
    w: &DMatrix<f64>,
) -> Result<DMatrix<f64>, NumericsError> {
    let mut x = w.clone();
    let mut a = f.clone();
    for _ in 0..64 {
        let step = &a * &x * a.transpose();
        let done = step.norm() <= f64::EPSILON * x.norm();
        x += step;
        if done {
            break;
        }
        a = &a * &a;
    }
    if x.iter().all(|v| v.is_finite()) {
        Ok(x)
    } else {
        Err(NumericsError::BadParameter {
            name: "steady covariance",
            value: f64::INFINITY,
            condition: "finite (the error dynamics must be stable)",
        })
    }
}

/// For each output j: the standard deviation of (Cd x̂)_j in steady state when
/// unit-variance white noise enters on output j alone, x̂⁺ = F x̂ + H_j w.
///
/// The variance is `Σₖ (c_j Fᵏ h_j)²` (c_j the row of Cd, h_j the column of
/// H), summed over k < 2^L by doubling, which converges when ρ(F) < 1. With
/// `Z = [Fⁱ h_j]` for i < 2^a and `Y = [c_j F^(m·2^a)]` for m < 2^b, the terms
/// k < 2^(a+b) are the entries of `Y Z`; each doubling appends `Y·F^(2^(a+b))`
/// to Y, with the powers `F^(2^i)` (repeated squaring) shared by all outputs.
/// Once Y has more rows than states it is replaced by `G = YᵀY` and the
/// doubling continues as the Smith iteration `G ← G + Aᵀ G A`. It stops when
/// the appended rows (or the step of G) are below ε times what is already
/// there, after 64 doublings at most. Cost per output: O(n²·2^a) plus
/// O(n²·rows of Y) until the dense phase, instead of O(n³) per doubling.
///
/// h_j and c_j are normalised to unit length first (the result is
/// |c_j| |h_j| times that of the unit vectors), so tiny or huge units do not
/// underflow or overflow inside the sum. An entry is NaN when the sum cannot
/// be formed in f64 (the transient growth of a strongly non-normal F
/// overflows it); the caller reports it as not computable. F is stable
/// whenever this is called: its spectral radius has been checked to be
/// below 1.
pub(super) fn output_noise_gain(f: &DMatrix<f64>, h: &DMatrix<f64>, cd: &DMatrix<f64>) -> Vec<f64> {
    let mut powers = vec![f.clone()];
    (0..h.ncols())
        .map(|j| {
            let (h_norm, c_norm) = (h.column(j).norm(), cd.row(j).norm());
            if h_norm == 0.0 || c_norm == 0.0 {
                return 0.0;
            }
            let hj = (h.column(j) / h_norm).into_owned();
            let cj = (cd.row(j) / c_norm).into_owned();
            let variance = output_variance(&mut powers, &hj, &cj);
            // NaN when not finite: not computable.
            let gain = variance.max(0.0).sqrt() * h_norm * c_norm;
            if gain.is_finite() { gain } else { f64::NAN }
        })
        .collect()
}

/// log₂ of the number of right-hand terms `Fⁱ h` kept as columns of Z.
const RIGHT_BITS: usize = 5;

/// Most doublings of [`output_variance`]; only a termination guarantee.
const MAX_DOUBLINGS: usize = 64;

fn hstack(a: &DMatrix<f64>, b: &DMatrix<f64>) -> DMatrix<f64> {
    let k = a.ncols();
    DMatrix::from_fn(a.nrows(), k + b.ncols(), |r, c| {
        if c < k { a[(r, c)] } else { b[(r, c - k)] }
    })
}

fn vstack(a: &DMatrix<f64>, b: &DMatrix<f64>) -> DMatrix<f64> {
    let k = a.nrows();
    DMatrix::from_fn(k + b.nrows(), a.ncols(), |r, c| {
        if r < k { a[(r, c)] } else { b[(r - k, c)] }
    })
}

/// `Σₖ (c Fᵏ h)²` (see [`output_noise_gain`]).
fn output_variance(
    powers: &mut Vec<DMatrix<f64>>,
    h: &nalgebra::DVector<f64>,
    c: &nalgebra::RowDVector<f64>,
) -> f64 {
    let n = h.len();
    let mut z = DMatrix::from_column_slice(n, 1, h.as_slice());
    for i in 0..RIGHT_BITS {
        let az = power(powers, i) * &z;
        z = hstack(&z, &az);
    }
    let mut y = DMatrix::from_row_slice(1, n, c.as_slice());
    let mut gram: Option<DMatrix<f64>> = None;
    for level in RIGHT_BITS..RIGHT_BITS + MAX_DOUBLINGS {
        let a = power(powers, level);
        let done = match gram.as_mut() {
            None => {
                let ya = &y * a;
                let done = ya.norm_squared() <= f64::EPSILON * y.norm_squared();
                y = vstack(&y, &ya);
                if y.nrows() > n {
                    gram = Some(y.transpose() * &y);
                }
                done
            }
            Some(g) => {
                let step = a.transpose() * &*g * a;
                let done = step.norm() <= f64::EPSILON * g.norm();
                *g += step;
                done
            }
        };
        if done {
            break;
        }
    }
    match gram {
        Some(g) => (z.transpose() * g * &z).trace(),
        None => (y * z).norm_squared(),
    }
}

/// `F^(2^i)`, squaring the last one computed when needed.
fn power(powers: &mut Vec<DMatrix<f64>>, i: usize) -> &DMatrix<f64> {
    while powers.len() <= i {
        let next = powers.last().map(|a| a * a);
        match next {
            Some(p) => powers.push(p),
            None => break,
        }
    }
    let last = powers.len().saturating_sub(1);
    &powers[i.min(last)]
}
