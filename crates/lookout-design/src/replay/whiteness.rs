//! Sample autocovariances of an innovation sequence, their normalised
//! autocorrelation and the whiteness test of Mehra ("On the identification
//! of variances and adaptive Kalman filtering", IEEE Transactions on
//! Automatic Control 15(2), 1970).
//!
//! Ĉ_j = (1/N_j) Σ e\[k+j\] e\[k\]ᵀ over the N_j pairs (k, k+j) whose samples are
//! both present (no mean removed: a right observer's innovations have zero
//! mean, and the fit of [`super::als`] uses the same Ĉ_j). The normalised
//! entries ρ_j(a, b) = Ĉ_j(a, b) / √(Ĉ_0(a, a) Ĉ_0(b, b)) of a white sequence
//! are, for large N, independent normal with standard deviation 1/√N (Mehra
//! 1970), so each lies in ±z/√N with probability `level`.
//!
//! The verdict counts the entries of lags 1..=L outside that band. For a
//! white sequence the count is binomial (M = L·p² trials, probability
//! 1 − level); the sequence is called coloured when the count exceeds the
//! smallest c with P(count > c) ≤ 1 − level, so the test's false-alarm rate
//! is P(count > c), computed exactly from the binomial and reported.

use super::innovation::Innovations;
use nalgebra::DMatrix;

/// Ĉ_0..=Ĉ_lags, and the number of pairs behind each.
pub fn autocovariances(e: &Innovations, lags: usize) -> (Vec<DMatrix<f64>>, Vec<usize>) {
    let p = e.p;
    let mut out = Vec::with_capacity(lags + 1);
    let mut pairs = Vec::with_capacity(lags + 1);
    for j in 0..=lags {
        let mut c = DMatrix::zeros(p, p);
        let mut count = 0usize;
        for k in 0..e.len().saturating_sub(j) {
            if let (Some(later), Some(now)) = (e.get(k + j), e.get(k)) {
                for (a, x) in later.iter().enumerate() {
                    for (b, y) in now.iter().enumerate() {
                        c[(a, b)] += x * y;
                    }
                }
                count += 1;
            }
        }
        if count > 0 {
            c /= count as f64;
        }
        out.push(c);
        pairs.push(count);
    }
    (out, pairs)
}

/// The whiteness test's result.
#[derive(Debug, Clone, PartialEq)]
pub struct Whiteness {
    /// Lags tested (1..=lags).
    pub lags: usize,
    /// ρ_j for j = 1..=lags (p × p each).
    pub correlation: Vec<DMatrix<f64>>,
    /// Half width of the band each entry of a white sequence lies in.
    pub band: f64,
    /// Entries outside the band.
    pub outside: usize,
    /// Entries tested (lags · p²).
    pub tested: usize,
    /// Largest count still called white.
    pub allowed: usize,
    /// The test's false-alarm rate: P(count > allowed) for a white sequence.
    pub false_alarm: f64,
    /// Whether the count exceeds `allowed`.
    pub coloured: bool,
}

/// Tests `e` for whiteness over lags 1..=`lags` at confidence `level`.
/// `None` with no present sample, a zero-variance channel, no lag, or a
/// level not in (0, 1).
pub fn whiteness(e: &Innovations, lags: usize, level: f64) -> Option<Whiteness> {
    if lags == 0 {
        return None;
    }
    let (c, pairs) = autocovariances(e, lags);
    let n = *pairs.first()?;
    let c0 = c.first()?;
    let p = e.p;
    if n == 0 || (0..p).any(|a| c0[(a, a)].partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater)) {
        return None;
    }
    let band = super::normal_quantile(level)? / (n as f64).sqrt();
    let correlation: Vec<DMatrix<f64>> = c
        .iter()
        .skip(1)
        .map(|cj| DMatrix::from_fn(p, p, |a, b| cj[(a, b)] / (c0[(a, a)] * c0[(b, b)]).sqrt()))
        .collect();
    let outside = correlation
        .iter()
        .flat_map(|r| r.iter())
        .filter(|v| v.abs() > band)
        .count();
    let tested = lags * p * p;
    let (allowed, false_alarm) = binomial_threshold(tested, 1.0 - level, 1.0 - level);
    Some(Whiteness {
        lags,
        correlation,
        band,
        outside,
        tested,
        allowed,
        false_alarm,
        coloured: outside > allowed,
    })
}

/// The smallest c with P(X > c) ≤ `alpha` for X ~ Binomial(m, q), and that
/// tail probability. The terms are formed in logarithms (ln Γ through
/// `ln_choose`) so large m neither overflows nor underflows early.
pub fn binomial_threshold(m: usize, q: f64, alpha: f64) -> (usize, f64) {
    let mf = m as f64;
    let pmf = |k: usize| {
        let kf = k as f64;
        (ln_choose(m, k) + kf * q.ln() + (mf - kf) * (1.0 - q).ln()).exp()
    };
    let mut cdf = 0.0;
    for c in 0..=m {
        cdf += pmf(c);
        let tail = (1.0 - cdf).max(0.0);
        if tail <= alpha {
            return (c, tail);
        }
    }
    (m, 0.0)
}

/// ln (m choose k), as a sum of logarithms (exact to rounding; m is the
/// number of tested entries, at most a few thousand).
fn ln_choose(m: usize, k: usize) -> f64 {
    let k = k.min(m - k.min(m));
    (0..k)
        .map(|i| ((m - i) as f64).ln() - ((i + 1) as f64).ln())
        .sum()
}
