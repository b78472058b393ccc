//! Guaranteed peaks of a linear recursion driven by bounded inputs.
//!
//! For x⁺ = F x + E w with |w_j| ≤ W_j, every component of x obeys
//! |x_i[k]| ≤ Σ_{t≥0} (|F^t E| W)_i + sup_t (|F^t| |x[0]|)_i, the ℓ1 norm of
//! the impulse response applied to the ranges, plus the initial-state term;
//! a sign pattern w[k] = W ∘ sign((F^{K−1−k} E)_i) reaches the first sum.

use nalgebra::{DMatrix, DVector};

/// Relative allowance added to every bound for the rounding of the sum
/// itself: far above its size (terms · n · ε ≈ 1e-10 at the term cap).
const ROUNDING_ALLOWANCE: f64 = 1e-6;
/// Most powers tried when looking for an m with ‖F^m‖∞ < 1.
const MAX_CONTRACTION_POWER: usize = 4096;
/// Most terms summed explicitly; the tail bound covers the rest (for slow
/// dynamics it is then a visible part of the bound, still rigorous: for a
/// scalar recursion it is exact).
const MAX_TERMS: usize = 20_000;

/// A proven componentwise peak and how it was proven.
#[derive(Debug, Clone, PartialEq)]
pub struct PeakBound {
    /// The bound on |x_i| for every k, per component.
    pub peak: Vec<f64>,
    /// The input part Σ_t |F^t E| W (tail included).
    pub driven: Vec<f64>,
    /// The initial-state part sup_t |F^t| |x[0]|.
    pub initial: Vec<f64>,
    /// The m with ‖F^m‖∞ = `contraction` < 1 used for the tail.
    pub power: usize,
    /// ‖F^m‖∞.
    pub contraction: f64,
    /// Terms summed explicitly before the tail bound.
    pub terms: usize,
    /// The tail bound added to every component.
    pub tail: f64,
}

/// Why no bound could be proven.
#[derive(Debug, Clone, PartialEq)]
pub enum BoundError {
    /// No power m ≤ [`MAX_CONTRACTION_POWER`] has ‖F^m‖∞ < 1 (the recursion
    /// is unstable or extremely non-normal); the smallest norm seen.
    NoContraction {
        /// Smallest ‖F^m‖∞ found.
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
fn abs_apply(m: &DMatrix<f64>, w: &DVector<f64>) -> DVector<f64> {
    DVector::from_iterator(
        m.nrows(),
        m.row_iter()
            .map(|r| r.iter().zip(w.iter()).map(|(a, b)| a.abs() * b).sum()),
    )
}

/// The smallest m ≥ 1 with ‖F^m‖∞ < 1, and that norm.
fn contraction(f: &DMatrix<f64>) -> Result<(usize, f64), BoundError> {
    let mut power = f.clone();
    let mut best = f64::INFINITY;
    for m in 1..=MAX_CONTRACTION_POWER {
        let c = norm_inf(&power);
        if !c.is_finite() {
            return Err(BoundError::NotFinite);
        }
        if c < 1.0 {
            return Ok((m, c));
        }
        best = best.min(c);
        power = f * &power;
    }
    Err(BoundError::NoContraction { best })
}

/// Proves the peak of x⁺ = F x + E w with |w| ≤ `w` and |x[0]| ≤ `x0`.
///
/// The sum Σ_t |F^t E| W is formed term by term until the tail is below
/// 1e-9 of the bound (or [`MAX_TERMS`]); the tail after K terms is bounded
/// by the ∞-norm contraction of a power of F: with c = ‖F^m‖∞ < 1,
/// Σ_{t≥K} ‖|F^t E| W‖∞ ≤ (Σ_{r<m} ‖|F^{K+r} E| W‖∞) / (1 − c), added to every
/// component. The initial term uses the same contraction: terms t ≥ K are
/// at most the largest ∞-norm of the window t ∈ [K, K + m).
pub fn peak(
    f: &DMatrix<f64>,
    e: &DMatrix<f64>,
    w: &DVector<f64>,
    x0: &DVector<f64>,
) -> Result<PeakBound, BoundError> {
    let n = f.nrows();
    let (m, c) = contraction(f)?;
    let mut driven = DVector::<f64>::zeros(n);
    let mut initial = x0.clone();
    let mut response = e.clone(); // F^t E
    let mut state = DMatrix::identity(n, n); // F^t
    let mut terms = 0;
    let tail = loop {
        // Every 64 terms: the next m terms' ∞-norms bound the tail from here.
        if terms % 64 == 0 {
            let mut look = response.clone();
            let mut look_state = state.clone();
            let (mut window, mut window_initial) = (0.0, 0.0_f64);
            for _ in 0..m {
                window += abs_apply(&look, w).max();
                window_initial = window_initial.max(abs_apply(&look_state, x0).max());
                look = f * &look;
                look_state = f * &look_state;
            }
            let tail = window / (1.0 - c);
            if !(tail.is_finite() && window_initial.is_finite()) {
                return Err(BoundError::NotFinite);
            }
            let scale = driven.max().max(f64::MIN_POSITIVE);
            if tail <= 1e-9 * scale || terms >= MAX_TERMS {
                // Later initial-state terms are at most c^j times one of the
                // window's, in ∞-norm, so the window's largest entry bounds
                // every component from here on.
                initial.iter_mut().for_each(|v| *v = v.max(window_initial));
                break tail;
            }
        }
        driven += abs_apply(&response, w);
        initial = initial.sup(&abs_apply(&state, x0));
        response = f * &response;
        state = f * &state;
        terms += 1;
    };
    let allow = 1.0 + ROUNDING_ALLOWANCE;
    let driven: Vec<f64> = driven.iter().map(|d| (d + tail) * allow).collect();
    let initial: Vec<f64> = initial.iter().map(|v| v * allow).collect();
    Ok(PeakBound {
        peak: driven.iter().zip(&initial).map(|(d, i)| d + i).collect(),
        driven,
        initial,
        power: m,
        contraction: c,
        terms,
        tail,
    })
}
