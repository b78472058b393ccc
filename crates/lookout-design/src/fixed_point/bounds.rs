//! Guaranteed peaks of a linear recursion driven by bounded inputs.
//!
//! For x⁺ = F x + E w with |w_j| ≤ W_j, every component of x obeys
//! |x_i\[k\]| ≤ Σ_{t≥0} (|F^t E| W)_i + sup_t (|F^t| |x\[0\]|)_i, the ℓ1 norm of
//! the impulse response applied to the ranges, plus the initial-state term;
//! a sign pattern w\[k\] = W ∘ sign((F^{K−1−k} E)_i) reaches the first sum.
//!
//! # Summing slow responses quickly: digits of t
//!
//! A spectral radius of 1 − 10⁻⁷ needs some 10⁸ terms; they are never
//! formed one by one. Write every step count in mixed radix,
//! t = t₀ + K₀ (t₁ + K t₂ + K² t₃ + …) with t₀ < K₀ and t_l < K, and let
//! P_l = F^(K₀ K^(l−1)) (each power from the previous one by repeated
//! multiplication, like repeated squaring). Then F^t = P_L^(t_L) ⋯ P_1^(t₁) F^(t₀),
//! and since |A B| ≤ |A| |B| entrywise,
//!
//! ```text
//! Σ_t |F^t E| W ≤ (Σ_{r≥0} |P_L^r|) ⋯ (Σ_{r<K} |P_1^r|) (Σ_{t₀<K₀} |F^(t₀) E| W),
//! sup_t |F^t| X ≤ sup_r |P_L^r| ⋯ max_{r<K} |P_1^r| (max_{t₀<K₀} |F^(t₀)| X),
//! ```
//!
//! applied right to left to non-negative vectors (so each level is K
//! matrix powers, never a matrix of sums). The last level is the first whose
//! power has c = ‖P_L‖∞ ≤ 10⁻¹²: its infinite sum adds at most
//! c/(1 − c) ‖v‖∞ to every component. A slow pole needs about
//! log(1/(1 − ρ))/log K levels (5 for 1 − 10⁻⁷), each of K = 64 products.
//! The bound is exact for non-negative F^t E (a single real pole, chains of
//! integrators with positive gains); sign changes between levels can make it
//! loose by a small factor per level (the property tests state the factor).
//! The method is the triangle inequality on a radix decomposition of the
//! step count; no published result is needed beyond that.

use nalgebra::{DMatrix, DVector};

/// Relative allowance added to every bound for the rounding of the sum
/// itself: far above its size (operations · ε ≈ 1e-10).
const ROUNDING_ALLOWANCE: f64 = 1e-6;
/// Most terms of the first window K₀ (fewer when ‖F^t‖∞ is already below
/// [`NEGLIGIBLE`]).
const FIRST_WINDOW: usize = 512;
/// Powers per later level, K.
const WINDOW: usize = 64;
/// Most levels after the first window: strides up to 512 · 64⁹ ≈ 10¹⁹.
const MAX_LEVELS: usize = 9;
/// A power with ∞-norm at most this ends the sum.
const NEGLIGIBLE: f64 = 1e-12;

/// A proven componentwise peak and how it was proven.
#[derive(Debug, Clone, PartialEq)]
pub struct PeakBound {
    /// The bound on |x_i| for every k, per component.
    pub peak: Vec<f64>,
    /// The input part Σ_t |F^t E| W, per component.
    pub driven: Vec<f64>,
    /// The initial-state part sup_t |F^t| |x\[0\]|, per component.
    pub initial: Vec<f64>,
    /// Terms summed one by one (the first window K₀).
    pub terms: usize,
    /// The step count of one power at each later level (K₀, K₀ K, …).
    pub strides: Vec<f64>,
    /// ‖P_L‖∞ of the last power, which ends the sum (≤ 1e-12).
    pub final_norm: f64,
    /// The largest ‖F^t‖∞ seen among the powers formed (every t < K₀, then
    /// multiples of each stride): the transient growth of the recursion.
    pub transient_peak: f64,
    /// The step t of that largest power.
    pub transient_step: f64,
}

/// Why no bound could be proven.
#[derive(Debug, Clone, PartialEq)]
pub enum BoundError {
    /// No power F^t with t up to about 10¹⁹ has ∞-norm ≤ 1e-12: the
    /// recursion is unstable, or its spectral radius is within about 1e-17
    /// of 1. The smallest norm seen.
    NoContraction {
        /// Smallest ‖P_l‖∞ found.
        best: f64,
    },
    /// A sum overflowed.
    NotFinite,
}

/// ‖M‖∞, the largest absolute row sum.
pub(crate) fn norm_inf(m: &DMatrix<f64>) -> f64 {
    m.row_iter()
        .map(|r| r.iter().map(|v| v.abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

/// |M| W: the ℓ1 response of each row to inputs bounded by `w`.
pub(crate) fn abs_apply(m: &DMatrix<f64>, w: &DVector<f64>) -> DVector<f64> {
    DVector::from_iterator(
        m.nrows(),
        m.row_iter()
            .map(|r| r.iter().zip(w.iter()).map(|(a, b)| a.abs() * b).sum()),
    )
}

/// Running state of the bound while levels are added.
struct Sums {
    driven: DVector<f64>,
    initial: DVector<f64>,
    peak_norm: f64,
    peak_step: f64,
}

impl Sums {
    fn saw(&mut self, norm: f64, step: f64) {
        if norm > self.peak_norm {
            self.peak_norm = norm;
            self.peak_step = step;
        }
    }
}

/// The first window: explicit terms t < K₀; returns F^(K₀) and K₀.
fn first_window(
    f: &DMatrix<f64>,
    e: &DMatrix<f64>,
    w: &DVector<f64>,
    x0: &DVector<f64>,
    sums: &mut Sums,
) -> (DMatrix<f64>, usize) {
    let n = f.nrows();
    let mut response = e.clone(); // F^t E
    let mut power = DMatrix::identity(n, n); // F^t
    for t in 0..FIRST_WINDOW {
        sums.driven += abs_apply(&response, w);
        sums.initial = sums.initial.sup(&abs_apply(&power, x0));
        sums.saw(norm_inf(&power), t as f64);
        response = f * &response;
        power = f * &power;
        if norm_inf(&power) <= NEGLIGIBLE {
            return (power, t + 1);
        }
    }
    (power, FIRST_WINDOW)
}

/// One later level: v ← Σ_{r<K} |P^r| v, s ← max_r |P^r| s; returns P^K.
fn level(p: &DMatrix<f64>, stride: f64, sums: &mut Sums) -> DMatrix<f64> {
    let n = p.nrows();
    let mut power = DMatrix::identity(n, n);
    let (mut driven, mut initial) = (DVector::zeros(n), DVector::zeros(n));
    for r in 0..WINDOW {
        driven += abs_apply(&power, &sums.driven);
        initial = abs_apply(&power, &sums.initial).sup(&initial);
        sums.saw(norm_inf(&power), r as f64 * stride);
        power = p * &power;
    }
    sums.driven = driven;
    sums.initial = initial;
    power
}

/// Proves the peak of x⁺ = F x + E w with |w| ≤ `w` and |x\[0\]| ≤ `x0`
/// (see the module docs for the method).
pub fn peak(
    f: &DMatrix<f64>,
    e: &DMatrix<f64>,
    w: &DVector<f64>,
    x0: &DVector<f64>,
) -> Result<PeakBound, BoundError> {
    let n = f.nrows();
    let mut sums = Sums {
        driven: DVector::zeros(n),
        initial: x0.clone(),
        peak_norm: 0.0,
        peak_step: 0.0,
    };
    let (mut p, terms) = first_window(f, e, w, x0, &mut sums);
    let mut stride = terms as f64;
    let mut strides = Vec::new();
    let mut best = f64::INFINITY;
    loop {
        let c = norm_inf(&p);
        if !(c.is_finite()
            && sums
                .driven
                .iter()
                .chain(&sums.initial)
                .all(|v| v.is_finite()))
        {
            return Err(BoundError::NotFinite);
        }
        best = best.min(c);
        if c <= NEGLIGIBLE {
            // Σ_{r≥1} |P^r| v ≤ c/(1 − c) ‖v‖∞ and sup_{r≥1} ≤ c ‖s‖∞, on every component.
            let add = c / (1.0 - c) * sums.driven.max();
            let floor = c * sums.initial.max();
            let allow = 1.0 + ROUNDING_ALLOWANCE;
            let driven: Vec<f64> = sums.driven.iter().map(|d| (d + add) * allow).collect();
            let initial: Vec<f64> = sums.initial.iter().map(|s| s.max(floor) * allow).collect();
            return Ok(PeakBound {
                peak: driven.iter().zip(&initial).map(|(d, i)| d + i).collect(),
                driven,
                initial,
                terms,
                strides,
                final_norm: c,
                transient_peak: sums.peak_norm,
                transient_step: sums.peak_step,
            });
        }
        if strides.len() >= MAX_LEVELS {
            return Err(BoundError::NoContraction { best });
        }
        strides.push(stride);
        p = level(&p, stride, &mut sums);
        stride *= WINDOW as f64;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Closed form (geometric series): x⁺ = f x + w, |w| ≤ 1 peaks at
    /// 1/(1 − f) for 0 < f < 1; the bound is exact for one positive pole.
    #[test]
    fn scalar_pole_gives_the_geometric_series() {
        for f in [0.5, 0.999, 0.99998, 1.0 - 1e-7] {
            let b = peak(
                &DMatrix::from_element(1, 1, f),
                &DMatrix::from_element(1, 1, 1.0),
                &DVector::from_element(1, 1.0),
                &DVector::zeros(1),
            )
            .unwrap();
            let exact = 1.0 / (1.0 - f);
            assert!(b.driven[0] >= exact, "{f}: {} below {exact}", b.driven[0]);
            assert!(
                b.driven[0] <= exact * (1.0 + 2e-6),
                "{f}: {} above {exact}",
                b.driven[0]
            );
        }
    }
}
