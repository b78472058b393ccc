//! The verdict of one format's run and the consistency tests behind it.
//!
//! Consistency of an estimator (Bar-Shalom, Li and Kirubarajan, *Estimation
//! with Applications to Tracking and Navigation*, 2001, ch. 5): the
//! normalised estimation error squared ε = eᵀ Σ⁻¹ e (NEES) and the
//! normalised innovation squared ν = rᵀ S⁻¹ r (NIS) of a consistent
//! estimator follow chi-square laws with n and p degrees of freedom, so the
//! average of K independent ones, times K, follows a chi-square law with K·n
//! (K·p) degrees; the test accepts when the average lies in the two-sided
//! interval of that law at the stated confidence.

/// The chi-square interval of a time average: one implementation, in the
/// host library (also used by `lookout replay`).
pub use lookout_design::replay::Interval;

/// What a format's run amounts to.
#[derive(Debug, Clone, PartialEq)]
pub enum Verdict {
    /// Settled inside its band, no bias, and (with noise) consistent.
    Converged,
    /// Settled with a consistent spread but a mean error beyond its
    /// interval, in state `state`.
    Biased {
        /// Index of the first biased state.
        state: usize,
    },
    /// Settled, but the NEES or NIS average lies outside its interval.
    Inconsistent {
        /// Which test failed ("NEES" or "NIS").
        test: &'static str,
    },
    /// The error never stays inside its band.
    NotSettled,
    /// The error is not finite: the observer diverged.
    NotFinite,
    /// The f64 observer diverged: the design itself fails, whatever this
    /// format did.
    DesignFailed,
    /// Settled inside its band, but the run ends before the initial error
    /// is forgotten: no samples to test the mean error, NEES and NIS on,
    /// so nothing is claimed.
    TooShort {
        /// The first step the tests could use.
        from: usize,
    },
}

impl Verdict {
    /// Whether this is [`Verdict::Converged`].
    pub fn converged(&self) -> bool {
        matches!(self, Verdict::Converged)
    }

    /// Short label for reports and JSON.
    pub fn label(&self) -> &'static str {
        match self {
            Verdict::Converged => "converged",
            Verdict::Biased { .. } => "biased",
            Verdict::Inconsistent { .. } => "inconsistent",
            Verdict::NotSettled => "not settled",
            Verdict::NotFinite => "diverged",
            Verdict::DesignFailed => "design failed",
            Verdict::TooShort { .. } => "too short",
        }
    }
}

/// The mean of `values` and whether it lies within ± `limit`.
pub fn mean_within(values: &[f64], limit: f64) -> (f64, bool) {
    if values.is_empty() {
        return (0.0, true);
    }
    let mean = values.iter().sum::<f64>() / values.len() as f64;
    (mean, mean.abs() <= limit)
}

/// z with P(|z| ≤ z) = `confidence` for a standard normal z.
pub fn normal_quantile(confidence: f64) -> f64 {
    lookout_design::replay::normal_quantile(confidence).unwrap_or(10.83f64.sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Intervals against the chi-square table of the NIST/SEMATECH
    /// e-Handbook of Statistical Methods, §1.3.6.7.4 (lower and upper
    /// critical values; from memory of that table, three decimals): with
    /// 10 degrees of freedom χ²(0.005) = 2.156 and χ²(0.995) = 25.188; with
    /// 20, 7.434 and 39.997.
    #[test]
    fn intervals_match_the_published_table() {
        let one = Interval::chi_square(1.0, 10, 1, 0.99).unwrap();
        assert!((one.low * 10.0 - 2.156).abs() < 5e-4, "{one:?}");
        assert!((one.high * 10.0 - 25.188).abs() < 5e-4, "{one:?}");
        let two = Interval::chi_square(2.0, 10, 2, 0.99).unwrap();
        assert!((two.low * 10.0 - 7.434).abs() < 5e-4, "{two:?}");
        assert!((two.high * 10.0 - 39.997).abs() < 5e-4, "{two:?}");
    }

    /// A synthetic white sequence (our seeded generator's normal deviates)
    /// gives NEES averages inside the interval at about the stated rate:
    /// of 200 independent tests at 99 %, the binomial count of failures has
    /// mean 2 and P(count ≥ 9) < 1e-4 (Poisson tail with mean 2, common
    /// practice).
    #[test]
    fn white_sequences_pass_at_the_stated_rate() {
        let mut rng = super::super::rng::Rng::new(7, 99);
        let mut failures = 0;
        for _ in 0..200 {
            let k = 100;
            let dof = 3;
            let sum: f64 = (0..k * dof).map(|_| rng.normal().powi(2)).sum();
            let interval = Interval::chi_square(sum / k as f64, k, dof, 0.99).unwrap();
            failures += usize::from(!interval.holds());
        }
        assert!(failures < 9, "{failures} of 200 failed");
    }
}
