//! The gate's recovery table: how far the innovation covariance grows over
//! consecutive samples without a correction (see the runtime's
//! `lookout::Recovery` for the rule the table serves).

use crate::numerics::{NumericsError, checks};
use nalgebra::DMatrix;

/// The gate widens until the innovation covariance has grown by this factor
/// in its widest direction (the innovation's standard deviation by 10), …
pub const GROWTH_TARGET: f64 = 100.0;

/// … or for at most this many consecutive misses (the runtime's table size).
pub const MAX_STAGES: usize = lookout::GATE_STAGES;

/// One stage is undone by the corrections that shrink the excess
/// covariance of one miss to this share of itself …
pub const DECAY_TARGET: f64 = 0.01;

/// … at most this many (the runtime stores the count in a `u8`).
pub const MAX_PER_MISS: usize = 255;

/// The matrices of a steady-state Kalman design the table is built from.
pub struct Steady<'a> {
    /// Ad.
    pub ad: &'a DMatrix<f64>,
    /// F, the prediction error's dynamics.
    pub f: &'a DMatrix<f64>,
    /// Cd.
    pub cd: &'a DMatrix<f64>,
    /// Qd.
    pub qd: &'a DMatrix<f64>,
    /// P_0, the steady a-priori covariance.
    pub p0: &'a DMatrix<f64>,
    /// S_0 = Cd P_0 Cdᵀ + R.
    pub s0: &'a DMatrix<f64>,
}

/// The recovery table: g_k for k = 1 … K and the corrections per stage.
///
/// A miss is usually a rejection, and a rejected innovation r was large:
/// given ν = rᵀ S_0⁻¹ r > c, the error e has conditional mean P_0 Cᵀ S_0⁻¹ r
/// and so the conditional covariance
/// P_r = P_0 + (μ − 1) P_0 Cᵀ S_0⁻¹ C P_0, with μ = E\[ν | ν > c\] / p
/// (`tail_mean`; for a chi-square law with p degrees,
/// E\[ν | ν > c\] = p · P(χ²_{p+2} > c) / P(χ²_p > c), common practice).
/// Then P_1 = Ad P_r Adᵀ + Qd, P_k = Ad P_{k−1} Adᵀ + Qd,
/// S_k = S_0 + Cd (P_k − P_0) Cdᵀ, and g_k = λ_max(S_0⁻¹ S_k) ≥ 1; K is the
/// first k with g_k ≥ [`GROWTH_TARGET`], at most [`MAX_STAGES`].
///
/// λ_max of the pencil is the largest eigenvalue of L⁻¹ S_k L⁻ᵀ with
/// S_0 = L Lᵀ (Cholesky), common practice for a symmetric definite pencil
/// (Golub and Van Loan, *Matrix Computations*, 4th ed., 2013, §8.7).
///
/// Corrections per stage: the smallest j ≥ 1 with
/// λ_max(S_0⁻¹ Cd Fʲ Δ Fʲᵀ Cdᵀ) ≤ [`DECAY_TARGET`] · (g_1 − 1), where
/// Δ = P_1 − P_0 is the excess one miss leaves (carried by the error
/// dynamics without noise: the noise is already in P_0); at most
/// [`MAX_PER_MISS`].
pub fn table(m: &Steady<'_>, tail_mean: f64) -> Result<(Vec<f64>, u8), NumericsError> {
    let l_inv = whitener(m.s0)?;
    let largest = |d: &DMatrix<f64>| -> Result<f64, NumericsError> {
        let w = &l_inv * (m.cd * d * m.cd.transpose()) * l_inv.transpose();
        Ok(checks::symmetric_eigenvalues("S_0⁻¹ C Δ Cᵀ", &w)?
            .last()
            .copied()
            .unwrap_or(0.0))
    };
    let gain = m.p0 * m.cd.transpose() * l_inv.transpose();
    let rejected = m.p0 + &gain * gain.transpose() * (tail_mean - 1.0).max(0.0);
    let mut p = m.ad * rejected * m.ad.transpose() + m.qd;
    let first = p.clone() - m.p0;
    let mut widening = Vec::new();
    while widening.len() < MAX_STAGES {
        let g = 1.0 + largest(&(&p - m.p0))?;
        if !g.is_finite() {
            break;
        }
        widening.push(g.max(1.0));
        if g >= GROWTH_TARGET {
            break;
        }
        p = m.ad * &p * m.ad.transpose() + m.qd;
    }
    let first_excess = largest(&first)?;
    let mut delta = first;
    let mut per_miss = u8::MAX;
    for j in 1..=MAX_PER_MISS {
        delta = m.f * &delta * m.f.transpose();
        if largest(&delta)? <= DECAY_TARGET * first_excess {
            per_miss = u8::try_from(j).unwrap_or(u8::MAX);
            break;
        }
    }
    Ok((widening, per_miss))
}

/// L⁻¹ with S_0 = L Lᵀ (Cholesky).
fn whitener(s0: &DMatrix<f64>) -> Result<DMatrix<f64>, NumericsError> {
    let not_definite = || NumericsError::NotDefinite {
        matrix: "S (innovation covariance)",
        index: 0,
        eigenvalue: f64::NAN,
        threshold: 0.0,
    };
    let l = s0.clone().cholesky().ok_or_else(not_definite)?.l();
    l.try_inverse().ok_or_else(not_definite)
}
