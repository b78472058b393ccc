//! Statistics of an observer replayed over logged data: the innovation
//! sequence's mean, covariance and normalised innovation squared against the
//! design's prediction ([`innovation`]), its normalised autocorrelation and a
//! whiteness test ([`whiteness`](mod@whiteness)), and the process and measurement noise
//! covariances fitted to its autocovariances ([`als`]).
//!
//! Pure numerics: nothing here reads files or runs an observer. The caller
//! hands in the innovation sequence e\[k\] = y\[k\] − Cd x̂\[k|k−1\] − Dd u\[k\],
//! row-major with p values per sample, and a flag per sample telling whether
//! every reading of that sample was present.
//!
//! Confidence levels are two-sided and stated by the caller (0.95 in the
//! command); the normal quantile is taken as the square root of the
//! 1-degree-of-freedom chi-square quantile (`crate::chi_square_limit`).

pub mod als;
pub mod innovation;
pub mod interval;
pub mod noise_map;
pub mod whiteness;

pub use als::{AlsEstimate, AlsProblem, Determined, estimate_noise};
pub use innovation::{InnovationSummary, Innovations, summarise};
pub use interval::Interval;
pub use noise_map::{NoiseMap, noise_map};
pub use whiteness::{Whiteness, autocovariances, whiteness};

/// The two-sided normal quantile z with P(|Z| ≤ z) = `level`.
pub fn normal_quantile(level: f64) -> Option<f64> {
    crate::chi_square_limit(1, level).map(f64::sqrt)
}

/// The chi-square interval [lo, hi] holding a χ²(dof) variable with
/// probability `level` (equal tails).
pub fn chi_square_interval(dof: u32, level: f64) -> Option<(f64, f64)> {
    let tail = 0.5 * (1.0 - level);
    Some((
        crate::chi_square_limit(dof, tail)?,
        crate::chi_square_limit(dof, 1.0 - tail)?,
    ))
}
