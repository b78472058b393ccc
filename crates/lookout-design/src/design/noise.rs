//! Noise: process noise per sample, and how much measurement noise an
//! observer passes into its estimates.

use super::DesignError;
use super::augment::Augmented;
use crate::model::{Domain, KalmanSpec, Model, NoiseDomain};
use crate::numerics;
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
/// quadratically when ρ(F) < 1; it stops after 64 doublings at most. H_j and
/// the row of Cd are normalised to unit length first (the result is
/// |c_j| |h_j| times that of the unit vectors), so tiny or huge units do not
/// underflow or overflow inside the sum.
///
/// An entry is NaN when the sum cannot be formed in f64 (the transient growth
/// of a strongly non-normal F overflows it); the caller reports it as not
/// computable. F is stable whenever this is called: its spectral radius has
/// been checked to be below 1.
pub(super) fn output_noise_gain(f: &DMatrix<f64>, h: &DMatrix<f64>, cd: &DMatrix<f64>) -> Vec<f64> {
    (0..h.ncols())
        .map(|j| {
            let (h_norm, c_norm) = (h.column(j).norm(), cd.row(j).norm());
            if h_norm == 0.0 || c_norm == 0.0 {
                return 0.0;
            }
            let hj = h.column(j) / h_norm;
            let cj = cd.row(j) / c_norm;
            let mut x = &hj * hj.transpose();
            let mut a = f.clone();
            for _ in 0..64 {
                let step = &a * &x * a.transpose();
                let done = step.norm() <= f64::EPSILON * x.norm();
                x += step;
                if done || !x.iter().all(|v| v.is_finite()) {
                    break;
                }
                a = &a * &a;
            }
            let variance = (&cj * &x * cj.transpose())
                .get((0, 0))
                .copied()
                .unwrap_or(f64::NAN);
            // NaN when not finite: not computable.
            let gain = variance.max(0.0).sqrt() * h_norm * c_norm;
            if gain.is_finite() { gain } else { f64::NAN }
        })
        .collect()
}
