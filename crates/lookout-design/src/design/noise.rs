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
/// unit-variance white noise enters on output j alone, x̂⁺ = F x̂ + H_j w
/// (the state covariance by [`steady_covariance`]).
pub(super) fn output_noise_gain(
    f: &DMatrix<f64>,
    h: &DMatrix<f64>,
    cd: &DMatrix<f64>,
) -> Result<Vec<f64>, NumericsError> {
    (0..h.ncols())
        .map(|j| {
            let hj = h.column(j);
            let x = steady_covariance(f, &(hj * hj.transpose()))?;
            let cj = cd.row(j);
            let variance = (cj * &x * cj.transpose())
                .get((0, 0))
                .copied()
                .unwrap_or(f64::NAN);
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
