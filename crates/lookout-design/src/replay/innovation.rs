//! Innovation mean, covariance and normalised innovation squared (NIS)
//! against the design's predicted innovation covariance S.
//!
//! With a right model and noise levels, the steady-state innovations are
//! zero-mean, white, with covariance S (common practice; e.g. Mehra, "On the
//! identification of variances and adaptive Kalman filtering", IEEE TAC
//! 15(2), 1970). Over N present samples:
//!
//! * each channel's sample mean lies within ±z·√(s_jj²/N) of zero, with
//!   s_jj² the sample variance (so a wrong predicted S does not also fail the
//!   mean; the interval assumes white innovations, which the whiteness test
//!   checks);
//! * (N − 1)·s_jj² / S_jj is χ²(N − 1) for each channel's sample variance
//!   s_jj², so S_jj lies in [(N−1)s²/χ²_hi, (N−1)s²/χ²_lo];
//! * N times the time-averaged NIS eᵀ S⁻¹ e is χ²(N·p).

use super::interval::Interval;
use nalgebra::{DMatrix, DVector};

/// An innovation sequence: p values per sample, row-major, and whether each
/// sample had every reading.
#[derive(Debug, Clone, PartialEq)]
pub struct Innovations {
    /// Values per sample (outputs).
    pub p: usize,
    /// e\[k\], p per row.
    pub values: Vec<f64>,
    /// Whether sample k had every reading (its row is then used).
    pub present: Vec<bool>,
}

impl Innovations {
    /// Samples (present or not).
    pub fn len(&self) -> usize {
        self.present.len()
    }

    /// Whether there are no samples.
    pub fn is_empty(&self) -> bool {
        self.present.is_empty()
    }

    /// e\[k\] when sample k is present.
    pub fn get(&self, k: usize) -> Option<&[f64]> {
        if !*self.present.get(k)? {
            return None;
        }
        self.values.get(k * self.p..(k + 1) * self.p)
    }

    /// The same sequence from sample `start` on.
    pub fn skip(&self, start: usize) -> Self {
        let start = start.min(self.len());
        Self {
            p: self.p,
            values: self.values.get(start * self.p..).unwrap_or(&[]).to_vec(),
            present: self.present.get(start..).unwrap_or(&[]).to_vec(),
        }
    }
}

/// Mean, covariance and NIS of an innovation sequence.
#[derive(Debug, Clone, PartialEq)]
pub struct InnovationSummary {
    /// Present samples used.
    pub samples: usize,
    /// Confidence level of every interval.
    pub level: f64,
    /// Sample mean per channel.
    pub mean: Vec<f64>,
    /// Half width of the interval a zero-mean channel's sample mean lies in
    /// (z·√(s_jj²/N), s_jj² the sample variance).
    pub mean_half_width: Vec<f64>,
    /// Sample covariance (about the sample mean, divided by N − 1).
    pub covariance: DMatrix<f64>,
    /// Interval per channel that contains the true variance at `level`,
    /// from the sample variance.
    pub variance_interval: Vec<(f64, f64)>,
    /// Time-averaged NIS with the predicted S and the interval a consistent
    /// observer's lies in; `None` without S.
    pub nis: Option<Interval>,
}

impl InnovationSummary {
    /// Channels whose mean lies outside its interval.
    pub fn biased(&self) -> Vec<usize> {
        (0..self.mean.len())
            .filter(|&j| self.mean[j].abs() > self.mean_half_width[j])
            .collect()
    }

    /// Channels whose predicted variance lies outside the data's interval.
    pub fn variance_mismatch(&self, predicted: &DMatrix<f64>) -> Vec<usize> {
        (0..self.variance_interval.len())
            .filter(|&j| {
                let (lo, hi) = self.variance_interval[j];
                let s = predicted[(j, j)];
                s < lo || s > hi
            })
            .collect()
    }

    /// Whether the NIS lies inside its interval (`None` without S).
    pub fn nis_consistent(&self) -> Option<bool> {
        self.nis.map(|i| i.holds())
    }
}

/// Summarises `e` against the predicted innovation covariance `predicted`
/// (p × p, positive definite) at confidence `level`. `None` with fewer than
/// two present samples, a level not in (0, 1) or a singular S.
pub fn summarise(
    e: &Innovations,
    predicted: Option<&DMatrix<f64>>,
    level: f64,
) -> Option<InnovationSummary> {
    let p = e.p;
    let rows: Vec<DVector<f64>> = (0..e.len())
        .filter_map(|k| e.get(k).map(DVector::from_column_slice))
        .collect();
    let n = rows.len();
    if n < 2 || p == 0 {
        return None;
    }
    let nf = n as f64;
    let mean = rows.iter().fold(DVector::zeros(p), |acc, r| acc + r) / nf;
    let covariance = rows.iter().fold(DMatrix::zeros(p, p), |acc, r| {
        let d = r - &mean;
        acc + &d * d.transpose()
    }) / (nf - 1.0);
    let dof = u32::try_from(n - 1).ok()?;
    let (lo, hi) = super::chi_square_interval(dof, level)?;
    let variance_interval = (0..p)
        .map(|j| {
            let s = covariance[(j, j)] * (nf - 1.0);
            (s / hi, s / lo)
        })
        .collect();
    let z = super::normal_quantile(level)?;
    let mean_half_width = (0..p)
        .map(|j| z * (covariance[(j, j)] / nf).sqrt())
        .collect();
    let nis = match predicted {
        None => None,
        Some(s) => {
            let s_inv = s.clone().try_inverse()?;
            let mean = rows
                .iter()
                .map(|r| (r.transpose() * &s_inv * r)[(0, 0)])
                .sum::<f64>()
                / nf;
            Some(Interval::chi_square(mean, n, p, level)?)
        }
    };
    Some(InnovationSummary {
        samples: n,
        level,
        mean: mean.iter().copied().collect(),
        mean_half_width,
        covariance,
        variance_interval,
        nis,
    })
}
