//! Matrix exponential by scaling and squaring with Padé approximants.
//!
//! Method: N. J. Higham, "The scaling and squaring method for the matrix
//! exponential revisited", SIAM J. Matrix Anal. Appl. 26(4), 2005. With
//! `θ_m` the largest 1-norm for which the degree-`m` diagonal Padé approximant
//! `r_m` has backward error ≤ 2⁻⁵³, the routine picks the smallest
//! `m ∈ {3, 5, 7, 9}` with `‖A‖₁ ≤ θ_m`, and otherwise scales `A` by `2⁻ˢ`
//! so that `‖A/2ˢ‖₁ ≤ θ₁₃`, evaluates `r₁₃` and squares `s` times.
//!
//! We implement it ourselves rather than calling nalgebra's `exp()` because
//! that one unwraps the linear solve `q_m(A)⁻¹ p_m(A)` inside: this version
//! checks its input, solves through LU with a reported failure and checks the
//! result for overflow, so it is safe to call from a `build.rs`.

use super::checks;
use super::error::{NumericsError, Result};
use nalgebra::DMatrix;

/// Largest accepted `‖A‖₁`. Beyond it the exponential of a matrix with an
/// eigenvalue of positive real part overflows anyway, and the `s > 27`
/// squarings would amplify rounding in the stable case; zero-order-hold models
/// with `‖A·T‖₁` this large are mis-scaled (wrong units or sample period).
pub const EXPM_NORM_LIMIT: f64 = 1.0e9;

/// `θ_m` of Higham (2005), Table 2.3, for m = 3, 5, 7, 9, 13 (values
/// transcribed from memory of that table; the closed-form tests in
/// `tests/numerics_expm.rs` check the resulting accuracy).
const THETA: [(usize, f64); 5] = [
    (3, 1.495_585_217_958_292e-2),
    (5, 2.539_398_330_063_23e-1),
    (7, 9.504_178_996_162_932e-1),
    (9, 2.097_847_961_257_068e0),
    (13, 5.371_920_351_148_152e0),
];

/// Coefficients `c_j` of the degree-`m` diagonal Padé numerator
/// `p_m(x) = Σ c_j x^j`, `c_j = (2m−j)! m! / ((2m)! j! (m−j)!)`, by the ratio
/// `c_{j+1}/c_j = (m−j) / ((2m−j)(j+1))` (no factorials, no overflow).
fn pade_coefficients(m: usize) -> Vec<f64> {
    let mut c = Vec::with_capacity(m + 1);
    let mut cj = 1.0;
    c.push(cj);
    for j in 0..m {
        cj *= (m - j) as f64 / (((2 * m - j) * (j + 1)) as f64);
        c.push(cj);
    }
    c
}

/// `U` (odd part) and `V` (even part) of `p_m(A) = V + U`, `q_m(A) = V − U`.
fn pade_parts(a: &DMatrix<f64>, m: usize) -> (DMatrix<f64>, DMatrix<f64>) {
    let n = a.nrows();
    let c = pade_coefficients(m);
    let coef = |j: usize| c.get(j).copied().unwrap_or(0.0);
    let id = DMatrix::<f64>::identity(n, n);
    let a2 = a * a;
    if m == 13 {
        // Higham (2005) eq. (2.3): 6 products for r_13.
        let a4 = &a2 * &a2;
        let a6 = &a4 * &a2;
        let inner_u = &a6 * (&a6 * coef(13) + &a4 * coef(11) + &a2 * coef(9));
        let u = a * (inner_u + &a6 * coef(7) + &a4 * coef(5) + &a2 * coef(3) + &id * coef(1));
        let inner_v = &a6 * (&a6 * coef(12) + &a4 * coef(10) + &a2 * coef(8));
        let v = inner_v + &a6 * coef(6) + &a4 * coef(4) + &a2 * coef(2) + &id * coef(0);
        return (u, v);
    }
    // m ∈ {3, 5, 7, 9}: plain even powers up to A^(m−1).
    let mut even = vec![id];
    let mut k = 2;
    while k < m {
        let next = match even.last() {
            Some(p) => p * &a2,
            None => a2.clone(),
        };
        even.push(next);
        k += 2;
    }
    let mut u_inner = DMatrix::<f64>::zeros(n, n);
    let mut v = DMatrix::<f64>::zeros(n, n);
    for (i, p) in even.iter().enumerate() {
        u_inner += p * coef(2 * i + 1);
        v += p * coef(2 * i);
    }
    (a * u_inner, v)
}

/// `exp(M)` of a square finite matrix with `‖M‖₁ ≤ EXPM_NORM_LIMIT`.
///
/// `name` is used in errors. Fails (never panics) on a non-square, empty or
/// non-finite input, on a norm above the limit, on a singular Padé denominator
/// and on an overflowed result.
pub fn expm(name: &'static str, m: &DMatrix<f64>) -> Result<DMatrix<f64>> {
    checks::square(name, m)?;
    let norm = checks::norm1(m);
    if norm > EXPM_NORM_LIMIT {
        return Err(NumericsError::TooLarge {
            matrix: name,
            norm,
            limit: EXPM_NORM_LIMIT,
        });
    }
    let (degree, squarings) = match THETA.iter().take(4).find(|&&(_, th)| norm <= th) {
        Some(&(deg, _)) => (deg, 0_i32),
        None => {
            let theta13 = THETA[4].1;
            let s = (norm / theta13).log2().ceil().max(0.0) as i32;
            (13, s)
        }
    };
    let scaled = m * 2.0_f64.powi(-squarings);
    let (u, v) = pade_parts(&scaled, degree);
    let num = &v + &u;
    let den = &v - &u;
    let mut r = checks::lu_solve(name, &den, &num)?;
    for _ in 0..squarings {
        r = &r * &r;
    }
    checks::finite(name, &r).map_err(|e| match e {
        NumericsError::NonFinite {
            row, col, value, ..
        } => NumericsError::NonFinite {
            matrix: "exp(M) (overflow)",
            row,
            col,
            value,
        },
        other => other,
    })?;
    Ok(r)
}
