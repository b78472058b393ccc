//! Noise: process noise per sample, and how much measurement noise an
//! observer passes into its estimates.

use super::DesignError;
use super::augment::Augmented;
use crate::model::{Domain, KalmanSpec, Model, NoiseDomain};
use crate::numerics::{self, NumericsError};
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

/// For each output j: the standard deviation of (Cd x̂)_j in steady state when
/// unit-variance white noise enters on output j alone, x̂⁺ = F x̂ + H_j w.
///
/// The state covariance X = Σₖ Fᵏ H_j H_jᵀ (Fᵏ)ᵀ is summed by the doubling
/// (Smith) iteration X ← X + Aᵢ X Aᵢᵀ, Aᵢ₊₁ = Aᵢ², which converges
/// quadratically when ρ(F) < 1; it stops after 64 doublings at most, or when
/// a step adds less than ε·trace(X). The powers Aᵢ are shared by all outputs,
/// and while X has rank below n/2 it is kept as a factor Z (X = Z Zᵀ, Z ←
/// [Z, Aᵢ Z]), so the first doublings cost O(n²·rank) instead of O(n³).
pub(super) fn output_noise_gain(
    f: &DMatrix<f64>,
    h: &DMatrix<f64>,
    cd: &DMatrix<f64>,
) -> Result<Vec<f64>, NumericsError> {
    let mut powers = vec![f.clone()];
    (0..h.ncols())
        .map(|j| {
            let cj = cd.row(j);
            let variance = output_variance(&mut powers, h.column(j).into_owned(), &cj.into_owned());
            if variance.is_finite() {
                Ok(variance.max(0.0).sqrt())
            } else {
                Err(NumericsError::BadParameter {
                    name: "noise gain",
                    value: variance,
                    condition: "finite (the error dynamics must be stable)",
                })
            }
        })
        .collect()
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

/// `c X cᵀ` for `X = Σₖ Fᵏ h hᵀ (Fᵏ)ᵀ` (see [`output_noise_gain`]).
fn output_variance(
    powers: &mut Vec<DMatrix<f64>>,
    h: nalgebra::DVector<f64>,
    c: &nalgebra::RowDVector<f64>,
) -> f64 {
    let n = h.len();
    let mut z = DMatrix::from_column_slice(n, 1, h.as_slice());
    let mut dense: Option<DMatrix<f64>> = None;
    for i in 0..64 {
        let a = power(powers, i);
        match dense.as_mut() {
            None => {
                let az = a * &z;
                let done = az.norm_squared() <= f64::EPSILON * z.norm_squared();
                if 4 * z.ncols() > n {
                    dense = Some(&z * z.transpose() + &az * az.transpose());
                } else {
                    z = DMatrix::from_fn(n, 2 * z.ncols(), |r, k| {
                        if k < z.ncols() {
                            z[(r, k)]
                        } else {
                            az[(r, k - z.ncols())]
                        }
                    });
                }
                if done {
                    break;
                }
            }
            Some(x) => {
                let step = a * &*x * a.transpose();
                let done = step.trace() <= f64::EPSILON * x.trace();
                *x += step;
                if done {
                    break;
                }
            }
        }
    }
    match dense {
        Some(x) => (c * x * c.transpose())
            .get((0, 0))
            .copied()
            .unwrap_or(f64::NAN),
        None => (c * z).norm_squared(),
    }
}
