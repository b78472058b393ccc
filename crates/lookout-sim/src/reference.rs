//! What a run is judged against, computed once from the design and the
//! simulated noise (never from the run itself): the steady error covariance,
//! the innovation covariance and the sample spacing that makes errors nearly
//! independent.

use super::config::RunConfig;
use super::plant;
use crate::SimError;
use lookout_design::Design;
use nalgebra::DMatrix;

/// Confidence of a run's verdict: a consistent, unbiased run is called
/// biased or inconsistent with probability at most 1 − CONFIDENCE, the
/// n + 2 tests (mean error per state, NEES, NIS) sharing it (Bonferroni).
pub const CONFIDENCE: f64 = 0.999;

/// The two-sided confidence of each of the n + 2 tests of a run with `n`
/// states.
pub fn test_confidence(n: usize) -> f64 {
    1.0 - (1.0 - CONFIDENCE) / (n + 2) as f64
}

/// Probability that a consistent run leaves its k·σ band anywhere, at any
/// state (split over states and steps: Bonferroni).
pub const BAND_MISS: f64 = 1e-3;

/// The design's statistics for one set of simulation options.
#[derive(Debug, Clone)]
pub struct Reference {
    /// Σ, the steady covariance of the recorded estimate's error under the
    /// simulated noise (zero without noise).
    pub cov: DMatrix<f64>,
    /// √Σ_ii per state.
    pub sigma: Vec<f64>,
    /// C Σ Cᵀ + R, the innovation covariance.
    pub innovation_cov: DMatrix<f64>,
    /// Whether any noise is simulated.
    pub noisy: bool,
    /// Whether the innovations are white (a Kalman design run on its own
    /// noise), so every step counts in the NIS average.
    pub white_innovation: bool,
    /// Where Σ comes from, for the report.
    pub source: &'static str,
    /// Spacing d of nearly independent samples: ρ(F)^d ≤ 0.01.
    pub spacing: usize,
    /// k of the k·σ band (see [`band_multiple`]).
    pub k: f64,
    /// F, the error dynamics.
    pub f: DMatrix<f64>,
}

/// k with P(|z| > k) = BAND_MISS / (n · steps) for a standard normal z:
/// the square root of the chi-square quantile with one degree of freedom.
pub fn band_multiple(n: usize, steps: usize) -> f64 {
    let cells = (n.max(1) * steps.max(1)) as f64;
    lookout_design::chi_square_limit(1, 1.0 - BAND_MISS / cells)
        .unwrap_or(25.0)
        .sqrt()
}

impl Reference {
    /// The statistics of `design` under the noise `opts` simulates.
    pub fn of(design: &Design, opts: &RunConfig) -> Result<Self, SimError> {
        let n = design.n();
        let n_plant = design.model.plant.n();
        let (process, measurement) = plant::noise_factors(design, opts, n_plant)?;
        let mut q = DMatrix::<f64>::zeros(n, n);
        if let Some(s) = &process {
            q.view_mut((0, 0), (n_plant, n_plant))
                .copy_from(&(s * s.transpose()));
        }
        let r = measurement.as_ref().map_or_else(
            || DMatrix::zeros(design.p(), design.p()),
            |s| s * s.transpose(),
        );
        let noisy = process.is_some() || measurement.is_some();
        let model_noise = opts.process_noise.is_none() && opts.measurement_noise.is_none();
        let (cov, source, white) = match (&design.kalman, model_noise) {
            (Some(k), true) if design.model.disturbances.is_none() => (
                k.p.clone(),
                "the Kalman design's a-priori covariance P",
                true,
            ),
            _ => {
                let w = &q + &design.h * &r * design.h.transpose();
                let cov = lookout_design::design::steady_covariance(&design.f, &w)
                    .map_err(|_| {
                        // F is stable (the design checked its spectral
                        // radius), so only the noise can overflow the sum.
                        SimError::BadInput(
                            "--process-noise / --measurement-noise: the steady error covariance under this noise is not finite in f64; reduce the noise".into(),
                        )
                    })?;
                (
                    cov,
                    "steady error covariance of e⁺ = F e + w − H v under the simulated noise (discrete Lyapunov equation, Smith's doubling)",
                    false,
                )
            }
        };
        let innovation_cov = &design.cd * &cov * design.cd.transpose() + r;
        let sigma = cov.diagonal().iter().map(|v| v.max(0.0).sqrt()).collect();
        let rho = design.spectral_radius;
        let spacing = if rho > 0.0 && rho < 1.0 {
            ((0.01f64).ln() / rho.ln()).ceil().max(1.0) as usize
        } else {
            1
        };
        Ok(Self {
            cov,
            sigma,
            innovation_cov,
            noisy,
            white_innovation: white,
            source: if noisy {
                source
            } else {
                "no simulated noise: the deviation bound plus the f64 run's residual"
            },
            spacing,
            k: band_multiple(n, opts.steps),
            f: design.f.clone(),
        })
    }

    /// The default initial error: 3 σ per state with noise (1 in the
    /// state's unit where σ is zero).
    pub fn initial_error(&self) -> Vec<f64> {
        self.sigma
            .iter()
            .map(|&s| if self.noisy && s > 0.0 { 3.0 * s } else { 1.0 })
            .collect()
    }
}
