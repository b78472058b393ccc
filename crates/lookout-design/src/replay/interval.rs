//! The two-sided chi-square interval of a time average of normalised
//! squares (NIS, NEES).
//!
//! Consistency of an estimator (Bar-Shalom, Li and Kirubarajan, *Estimation
//! with Applications to Tracking and Navigation*, 2001, ch. 5): the
//! normalised estimation error squared (NEES) and the normalised innovation
//! squared (NIS) of a consistent estimator follow chi-square laws with n and p
//! degrees of freedom, so the average of K independent ones, times K,
//! follows a chi-square law with K·n (K·p) degrees; the test accepts when the
//! average lies in the two-sided interval of that law at the stated
//! confidence.

/// A time average and its two-sided chi-square acceptance interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    /// The average of the samples.
    pub value: f64,
    /// Lower end of the interval.
    pub low: f64,
    /// Upper end.
    pub high: f64,
    /// Samples averaged (K).
    pub samples: usize,
    /// Degrees of freedom of each sample.
    pub dof: usize,
}

impl Interval {
    /// The two-sided `confidence` interval of the average of `samples`
    /// chi-square values with `dof` degrees each: χ²_{K·dof}((1 ∓ c)/2) / K;
    /// `None` without samples.
    pub fn chi_square(value: f64, samples: usize, dof: usize, confidence: f64) -> Option<Self> {
        let total = u32::try_from(samples.checked_mul(dof)?).ok()?;
        let (low, high) = super::chi_square_interval(total, confidence)?;
        let k = samples as f64;
        Some(Self {
            value,
            low: low / k,
            high: high / k,
            samples,
            dof,
        })
    }

    /// Whether the average lies inside.
    pub fn holds(&self) -> bool {
        self.value >= self.low && self.value <= self.high
    }
}
