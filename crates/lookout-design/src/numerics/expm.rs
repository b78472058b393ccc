//! Matrix exponential by scaling and squaring with Padé approximants, with an
//! a-posteriori accuracy estimate.
//!
//! Method: A. H. Al-Mohy and N. J. Higham, "A new scaling and squaring
//! algorithm for the matrix exponential", SIAM J. Matrix Anal. Appl. 31(3),
//! 2009 (their Algorithm 5.1). The Padé degree `m ∈ {3, 5, 7, 9, 13}` and the
//! number of squarings `s` are chosen from `η = max(‖A^k‖₁^{1/k}, …)` instead
//! of `‖A‖₁` (which overscales strongly non-normal matrices), and the
//! correction `ℓ(A, m)` adds squarings only when the leading backward-error
//! term `|c_{2m+1}| ‖|A|^{2m+1}‖₁ / ‖A‖₁` exceeds the unit roundoff. Where
//! their algorithm estimates `‖A^k‖₁` (Higham–Tisseur block estimator), we
//! compute the norms of the powers exactly: the powers `A², A⁴, A⁶` are needed
//! for the Padé evaluation anyway, and `‖|A|^k‖₁` of a non-negative matrix is
//! `max(1ᵀ|A|^k)`, k vector–matrix products. At our sizes (n ≤ a few hundred)
//! this costs at most two extra matrix products.
//!
//! Before that the input is balanced (Parlett–Reinsch diagonal similarity
//! with powers of two, `balance.rs`) when balancing lowers `‖A‖₁`, as
//! Higham's published `expm` does; the scaling is undone exactly afterwards,
//! `exp(A) = D exp(D⁻¹AD) D⁻¹`.
//!
//! Accuracy estimate: the exponential is evaluated a second time with one
//! more squaring and degree 13. The two results follow different rounding
//! paths (and a different truncation), so `‖X₁ − X₂‖₁ / ‖X₁‖₁` estimates the
//! relative error of `X₁` — an estimate, not a bound. A result whose estimate
//! exceeds [`EXPM_TOLERANCE`] is refused with
//! [`NumericsError::ExpmInaccurate`].
//!
//! We implement it ourselves rather than calling nalgebra's `exp()` because
//! that one unwraps the linear solve `q_m(A)⁻¹ p_m(A)` inside: this version
//! checks its input, solves through LU with a reported failure and checks the
//! result for overflow, so it is safe to call from a `build.rs`.

use super::balance::balance_with_scaling;
use super::checks;
use super::error::{NumericsError, Result};
use nalgebra::DMatrix;

/// Largest accepted `‖A‖₁`. Beyond it the exponential of a matrix with an
/// eigenvalue of positive real part overflows anyway, and the `s > 27`
/// squarings would amplify rounding in the stable case; zero-order-hold models
/// with `‖A·T‖₁` this large are mis-scaled (wrong units or sample period).
pub const EXPM_NORM_LIMIT: f64 = 1.0e9;

/// Largest accepted relative accuracy estimate `‖X₁ − X₂‖₁ / ‖X₁‖₁` of the
/// exponential (see the module doc). Why this value: a sampled model that
/// is right to 10 digits is far more accurate than any model of a physical
/// plant and than the f32/Q31 arithmetic that runs the observer, while a
/// failing algorithm shows differences many orders of magnitude larger.
pub const EXPM_TOLERANCE: f64 = 1.0e-10;

/// `θ_m` of Al-Mohy and Higham (2009), Table 3.1 (the same values as in
/// Higham 2005, Table 2.3), for m = 3, 5, 7, 9, 13 (transcribed from memory of
/// that table; the closed-form and SciPy tests check the resulting accuracy).
const THETA: [(usize, f64); 5] = [
    (3, 1.495_585_217_958_292e-2),
    (5, 2.539_398_330_063_23e-1),
    (7, 9.504_178_996_162_932e-1),
    (9, 2.097_847_961_257_068e0),
    (13, 5.371_920_351_148_152e0),
];

/// Cap on the number of squarings (`‖A‖₁ ≤ 10⁹` needs at most ~28 plus the
/// `ℓ` correction); only a termination guarantee.
const MAX_SQUARINGS: i32 = 64;

/// An exponential and the estimate of its relative error.
#[derive(Debug, Clone, PartialEq)]
pub struct Exponential {
    /// `exp(M)`.
    pub value: DMatrix<f64>,
    /// `‖X₁ − X₂‖₁ / ‖X₁‖₁` of two evaluations (see the module doc).
    pub relative_error_estimate: f64,
    /// Padé degree used for `X₁`.
    pub degree: usize,
    /// Squarings used for `X₁`.
    pub squarings: i32,
    /// Whether the input was balanced first.
    pub balanced: bool,
}

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

/// `A` and its even powers `A², A⁴, A⁶` (built once, scaled exactly by powers
/// of two when the scaling changes).
struct Powers {
    a: DMatrix<f64>,
    a2: DMatrix<f64>,
    a4: DMatrix<f64>,
    a6: DMatrix<f64>,
}

impl Powers {
    fn new(a: DMatrix<f64>) -> Self {
        let a2 = &a * &a;
        let a4 = &a2 * &a2;
        let a6 = &a4 * &a2;
        Powers { a, a2, a4, a6 }
    }
    /// The powers of `2⁻ˢ A`.
    fn scaled(&self, s: i32) -> Self {
        let f = 2.0_f64.powi(-s);
        Powers {
            a: &self.a * f,
            a2: &self.a2 * f.powi(2),
            a4: &self.a4 * f.powi(4),
            a6: &self.a6 * f.powi(6),
        }
    }
}

/// `U` (odd part) and `V` (even part) of `p_m(A) = V + U`, `q_m(A) = V − U`.
fn pade_parts(p: &Powers, m: usize) -> (DMatrix<f64>, DMatrix<f64>) {
    let n = p.a.nrows();
    let c = pade_coefficients(m);
    let coef = |j: usize| c.get(j).copied().unwrap_or(0.0);
    let id = DMatrix::<f64>::identity(n, n);
    let (a2, a4, a6) = (&p.a2, &p.a4, &p.a6);
    if m == 13 {
        // Higham (2005) eq. (2.3): 6 products for r_13.
        let inner_u = a6 * (a6 * coef(13) + a4 * coef(11) + a2 * coef(9));
        let u = &p.a * (inner_u + a6 * coef(7) + a4 * coef(5) + a2 * coef(3) + &id * coef(1));
        let inner_v = a6 * (a6 * coef(12) + a4 * coef(10) + a2 * coef(8));
        let v = inner_v + a6 * coef(6) + a4 * coef(4) + a2 * coef(2) + &id * coef(0);
        return (u, v);
    }
    // m ∈ {3, 5, 7, 9}: even powers up to A^(m−1) (A⁸ = A⁴A⁴ for m = 9).
    let a8 = (m == 9).then(|| a4 * a4);
    let mut u_inner = &id * coef(1);
    let mut v = &id * coef(0);
    let evens = [Some(a2), Some(a4), Some(a6), a8.as_ref()];
    for (i, pw) in evens.iter().enumerate().take((m - 1) / 2) {
        if let Some(pw) = pw {
            u_inner += *pw * coef(2 * i + 3);
            v += *pw * coef(2 * i + 2);
        }
    }
    (&p.a * u_inner, v)
}

/// `r_m(2⁻ˢA)^(2^s)` from the unscaled powers.
fn evaluate(name: &'static str, p: &Powers, m: usize, s: i32) -> Result<DMatrix<f64>> {
    let scaled = p.scaled(s);
    let (u, v) = pade_parts(&scaled, m);
    let mut r = checks::lu_solve(name, &(&v - &u), &(&v + &u))?;
    for _ in 0..s {
        r = &r * &r;
    }
    Ok(r)
}

/// `‖|A|^k‖₁` exactly, as `max(1ᵀ|A|^k)` (k vector–matrix products).
fn abs_power_norm(a: &DMatrix<f64>, k: usize) -> f64 {
    let abs = a.abs();
    let mut v = nalgebra::RowDVector::<f64>::repeat(a.ncols(), 1.0);
    for _ in 0..k {
        v = &v * &abs;
    }
    v.iter().copied().fold(0.0, f64::max)
}

/// `ℓ(A, m)` of Al-Mohy and Higham (2009), eq. (5.1): extra squarings needed
/// so that the leading backward-error term stays below `u = 2⁻⁵³`.
fn ell(a: &DMatrix<f64>, m: usize) -> i32 {
    let norm = checks::norm1(a);
    if norm == 0.0 {
        return 0;
    }
    // |c_{2m+1}| = (m!)² / ((2m)! (2m+1)!), built as a product of ratios.
    let mut c = 1.0_f64;
    for j in 1..=m {
        c *= j as f64 / ((m + j) as f64);
    }
    for j in 1..=(2 * m + 1) {
        c /= j as f64;
    }
    let alpha = c * abs_power_norm(a, 2 * m + 1) / norm;
    let u = f64::EPSILON / 2.0;
    let value = ((alpha / u).log2() / (2 * m) as f64).ceil();
    if value.is_finite() {
        value.clamp(0.0, f64::from(MAX_SQUARINGS)) as i32
    } else if value > 0.0 {
        MAX_SQUARINGS
    } else {
        0
    }
}

/// Degree and squarings by Al-Mohy and Higham (2009), Algorithm 5.1, with
/// exact norms of the powers.
fn choose(p: &Powers) -> (usize, i32) {
    let root = |m: &DMatrix<f64>, k: i32| checks::norm1(m).powf(1.0 / f64::from(k));
    let d4 = root(&p.a4, 4);
    let d6 = root(&p.a6, 6);
    let eta1 = d4.max(d6);
    for &(m, theta) in THETA.iter().take(2) {
        if eta1 <= theta && ell(&p.a, m) == 0 {
            return (m, 0);
        }
    }
    let a8 = &p.a4 * &p.a4;
    let d8 = root(&a8, 8);
    let eta3 = d6.max(d8);
    for &(m, theta) in THETA.iter().skip(2).take(2) {
        if eta3 <= theta && ell(&p.a, m) == 0 {
            return (m, 0);
        }
    }
    let d10 = root(&(&p.a4 * &p.a6), 10);
    let eta5 = eta3.min(d8.max(d10));
    let theta13 = THETA[4].1;
    let s = (eta5 / theta13).log2().ceil();
    let s = if s.is_finite() && s > 0.0 {
        (s as i32).min(MAX_SQUARINGS)
    } else {
        0
    };
    let extra = ell(&(&p.a * 2.0_f64.powi(-s)), 13);
    (13, (s + extra).min(MAX_SQUARINGS))
}

fn overflow_error(e: NumericsError) -> NumericsError {
    match e {
        NumericsError::NonFinite {
            row, col, value, ..
        } => NumericsError::NonFinite {
            matrix: "exp(M) (overflow)",
            row,
            col,
            value,
        },
        other => other,
    }
}

/// `exp(M)` with its accuracy estimate, for a square finite matrix with
/// `‖M‖₁ ≤ EXPM_NORM_LIMIT`.
///
/// `name` is used in errors. Fails (never panics) on a non-square, empty or
/// non-finite input, on a norm above the limit, on a singular Padé
/// denominator, on an overflowed result and on an accuracy estimate above
/// [`EXPM_TOLERANCE`].
pub fn expm_with_estimate(name: &'static str, m: &DMatrix<f64>) -> Result<Exponential> {
    checks::square(name, m)?;
    let norm = checks::norm1(m);
    if norm > EXPM_NORM_LIMIT {
        return Err(NumericsError::TooLarge {
            matrix: name,
            norm,
            limit: EXPM_NORM_LIMIT,
        });
    }
    let (b, d) = balance_with_scaling(m);
    let balanced = checks::finite(name, &b).is_ok() && checks::norm1(&b) < norm;
    let powers = Powers::new(if balanced { b } else { m.clone() });
    checks::finite(name, &powers.a6).map_err(overflow_error)?;
    let (degree, squarings) = choose(&powers);
    let undo = |x: DMatrix<f64>| {
        if !balanced {
            return x;
        }
        DMatrix::from_fn(x.nrows(), x.ncols(), |i, j| {
            let di = d.get(i).copied().unwrap_or(1.0);
            let dj = d.get(j).copied().unwrap_or(1.0);
            x[(i, j)] * di / dj
        })
    };
    let value = undo(evaluate(name, &powers, degree, squarings)?);
    let second = undo(evaluate(name, &powers, 13, squarings + 1)?);
    checks::finite(name, &second).map_err(overflow_error)?;
    checks::finite(name, &value).map_err(overflow_error)?;
    let top = checks::norm1(&value);
    let estimate = if top > 0.0 {
        checks::norm1(&(&value - &second)) / top
    } else {
        0.0
    };
    if estimate.is_nan() || estimate > EXPM_TOLERANCE {
        return Err(NumericsError::ExpmInaccurate {
            matrix: name,
            estimate,
            tolerance: EXPM_TOLERANCE,
        });
    }
    Ok(Exponential {
        value,
        relative_error_estimate: estimate,
        degree,
        squarings,
        balanced,
    })
}

/// `exp(M)`; see [`expm_with_estimate`] for the method, the accuracy check
/// and the errors.
pub fn expm(name: &'static str, m: &DMatrix<f64>) -> Result<DMatrix<f64>> {
    expm_with_estimate(name, m).map(|e| e.value)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The estimate catches the failure issue 18 found: Higham's 2005 choice
    /// (no balancing, `s` from `‖A‖₁`, degree 13) on Moler's badly scaled
    /// example (C. Moler, "A balancing act for the matrix exponential", 2012;
    /// the matrix of SciPy's test_burkardt_14) at `‖A·T‖₁ = 10⁹` is wrong, and
    /// two such evaluations one squaring apart disagree by far more than
    /// [`EXPM_TOLERANCE`], so a result computed that way would be refused.
    #[test]
    fn estimate_flags_overscaled_evaluation_issue_18() {
        let a = DMatrix::from_row_slice(
            3,
            3,
            &[
                0.0,
                1e-8,
                0.0,
                -(2e10 + 4e8 / 6.0),
                -3.0,
                2e10,
                200.0 / 3.0,
                0.0,
                -200.0 / 3.0,
            ],
        );
        let m = &a * (1e9 / checks::norm1(&a));
        let p = Powers::new(m.clone());
        let s = (checks::norm1(&m) / THETA[4].1).log2().ceil() as i32;
        let x1 = evaluate("M", &p, 13, s).unwrap();
        let x2 = evaluate("M", &p, 13, s + 1).unwrap();
        let est = checks::norm1(&(&x1 - &x2)) / checks::norm1(&x1);
        println!("overscaled evaluation: estimate {est:.2e}");
        assert!(est > 1e3 * EXPM_TOLERANCE, "{est:e}");
        // The algorithm itself balances, needs no squaring here, and passes.
        let good = expm_with_estimate("M", &m).unwrap();
        assert!(good.balanced && good.relative_error_estimate <= EXPM_TOLERANCE);
    }
}
