//! What a run is judged against, computed once from the design and the
//! simulated noise (never from the run itself): the steady error covariance,
//! the innovation covariance and the sample spacing that makes errors nearly
//! independent.

use super::config::RunConfig;
use super::plant;
use crate::SimError;
use lookout_design::Design;
use nalgebra::{Cholesky, DMatrix, DVector, Dyn};

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
    /// Σ's Cholesky factor, when Σ is positive definite (factored once
    /// here for the NEES, the sample spacing and the forgotten start).
    pub cov_factor: Option<Cholesky<f64, Dyn>>,
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
    /// Spacing d of nearly independent samples (see [`spacing`]).
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
        let cov_factor = cov.clone().cholesky();
        let spacing = spacing(
            &design.f,
            cov_factor.as_ref(),
            design.spectral_radius,
            opts.steps,
        );
        Ok(Self {
            cov,
            cov_factor,
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

    /// The first step from which the initial error `e0` (x − x̂ at step
    /// 0) is forgotten for the statistics: its expected remainder
    /// d_k = F^k e0 adds at most 1 % of n to the NEES (d_kᵀ Σ⁻¹ d_k ≤
    /// 0.01 n), so samples from there on measure the noise the design
    /// predicts, not the start. 0 without a positive definite Σ (then
    /// nothing is tested); `steps + 1` when it is not forgotten within the
    /// run. Costs n² per step, as one observer does.
    pub fn forgotten(&self, e0: &[f64], steps: usize) -> usize {
        let n = self.f.nrows();
        let Some(chol) = &self.cov_factor else {
            return 0;
        };
        if e0.len() != n {
            return 0;
        }
        let limit = 0.01 * n as f64;
        let mut d = DVector::from_column_slice(e0);
        for k in 0..=steps {
            let q = d.dot(&chol.solve(&d));
            if !q.is_finite() {
                break;
            }
            if q <= limit {
                return k;
            }
            d = &self.f * d;
        }
        steps + 1
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

/// Spacing d of nearly independent samples of the error: the correlation
/// between e_k and e_{k+d} in coordinates where Σ = L Lᵀ is the identity is
/// G^d with G = L⁻¹ F L, so d is the first power of two with
/// ‖G^d‖_F ≤ 0.01 (the Frobenius norm bounds the spectral norm; samples 2d
/// apart are then correlated by at most 1e-4). Whitening matters for
/// strongly non-normal F, whose errors stay correlated far longer than
/// ρ(F)^d suggests. Found by repeated squaring: log₂ d products of n × n
/// matrices. Without a positive definite Σ (no noise: nothing is tested)
/// the rule ρ(F)^d ≤ 0.01. At most `steps + 1` (a single sample).
pub fn spacing(
    f: &DMatrix<f64>,
    cov_factor: Option<&Cholesky<f64, Dyn>>,
    rho: f64,
    steps: usize,
) -> usize {
    let cap = steps.saturating_add(1);
    let Some(chol) = cov_factor else {
        return if rho > 0.0 && rho < 1.0 {
            (((0.01f64).ln() / rho.ln()).ceil().max(1.0) as usize).min(cap)
        } else {
            1
        };
    };
    let l = chol.l();
    let Some(g) = l.clone().solve_lower_triangular(&(f * &l)) else {
        return cap;
    };
    let mut power = g;
    let mut d = 1usize;
    while d < cap {
        let norm = power.norm();
        if !norm.is_finite() {
            return cap;
        }
        if norm <= 0.01 {
            return d;
        }
        power = &power * &power;
        d = d.saturating_mul(2);
    }
    cap
}

#[cfg(test)]
mod tests {
    use super::*;

    fn reference(f: DMatrix<f64>, cov: DMatrix<f64>) -> Reference {
        let n = f.nrows();
        Reference {
            cov_factor: cov.clone().cholesky(),
            sigma: cov.diagonal().iter().map(|v| v.sqrt()).collect(),
            innovation_cov: DMatrix::identity(1, 1),
            cov,
            noisy: true,
            white_innovation: false,
            source: "test",
            spacing: 1,
            k: band_multiple(n, 100),
            f,
        }
    }

    /// Scalar closed form: F = 0.9, Σ = 1, so G^d = 0.9^d ≤ 0.01 from
    /// d = 44 (ln 0.01 / ln 0.9 = 43.7); the first power of two is 64.
    #[test]
    fn spacing_of_a_scalar_is_the_power_of_two_past_the_closed_form() {
        let f = DMatrix::from_element(1, 1, 0.9);
        let cov = DMatrix::identity(1, 1);
        assert_eq!(
            spacing(&f, cov.clone().cholesky().as_ref(), 0.9, 10_000),
            64
        );
        // Capped at one sample for a short run.
        assert_eq!(spacing(&f, cov.clone().cholesky().as_ref(), 0.9, 20), 21);
    }

    /// A Jordan block F = [[0.5, 10], [0, 0.5]] (Σ = I, so G = F) has
    /// F^d = [[0.5^d, 10 d 0.5^(d−1)], [0, 0.5^d]] (closed form, common
    /// practice). ρ(F)^d ≤ 0.01 from d = 7, but ‖F^8‖_F ≈ 10·8·0.5^7 =
    /// 0.63: samples 8 apart are still strongly correlated. ‖F^16‖_F ≈
    /// 10·16·0.5^15 = 4.9e-3 ≤ 0.01, so d = 16.
    #[test]
    fn spacing_of_a_non_normal_block_follows_its_transient() {
        let f = DMatrix::from_row_slice(2, 2, &[0.5, 10.0, 0.0, 0.5]);
        let cov = DMatrix::identity(2, 2);
        assert_eq!(
            spacing(&f, cov.clone().cholesky().as_ref(), 0.5, 10_000),
            16
        );
        // Without a positive definite Σ: the spectral-radius rule.
        let zero = DMatrix::zeros(2, 2);
        assert_eq!(spacing(&f, zero.cholesky().as_ref(), 0.5, 10_000), 7);
    }

    /// Scalar closed form: F = 0.5, Σ = 1, e₀ = 10: (10·0.5^k)² ≤ 0.01·1
    /// from 0.5^k ≤ 0.01, k = 7 (0.5^7 = 0.0078, 0.5^6 = 0.0156).
    #[test]
    fn the_initial_error_is_forgotten_at_the_closed_form_step() {
        let r = reference(DMatrix::from_element(1, 1, 0.5), DMatrix::identity(1, 1));
        assert_eq!(r.forgotten(&[10.0], 100), 7);
        assert_eq!(r.forgotten(&[0.05], 100), 0);
        // Not forgotten within a 5-step run.
        assert_eq!(r.forgotten(&[10.0], 5), 6);
    }
}
