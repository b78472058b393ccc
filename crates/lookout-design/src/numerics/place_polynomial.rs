//! Single-output observer placement by the characteristic polynomial, for
//! pole sets the eigenvector method cannot take (a pole repeated more often
//! than there are outputs, e.g. a deadbeat observer of one sensor).
//!
//! With one output c the gain is unique, and by the matrix determinant lemma
//! det(zI − A + L c) = det(zI − A) · (1 + c (zI − A)⁻¹ L) for every z that
//! is not an eigenvalue of A. Requiring this to equal q(z) = Π (z − λᵢ) at
//! sample points z_k on a circle outside the spectrum gives the linear
//! equations c (z_k I − A)⁻¹ L = q(z_k) / det(z_k I − A) − 1 for the real L:
//! ⌊n/2⌋ points in the upper half plane give two real equations each (real
//! and imaginary parts), a real point one more when n is odd, and the n × n
//! system is solved by LU. Unlike Ackermann's formula no power of A and no
//! inverse of the observability matrix is formed.
//!
//! A repeated pole is ill-conditioned by nature (perturbations of size ε
//! move a k-fold pole by about ε^(1/k)), so the result is verified on the
//! characteristic polynomial itself, at points other than those solved for,
//! and the achieved eigenvalues are reported with a warning.

use super::error::{NumericsError, NumericsWarning, Result};
use nalgebra::{Complex, DMatrix, DVector};

type C64 = Complex<f64>;

/// Largest accepted relative residual of the characteristic polynomial.
const POLYNOMIAL_TOLERANCE: f64 = 1e-9;

fn det_and_row(a: &DMatrix<f64>, c: &DMatrix<f64>, z: C64) -> Option<(C64, DMatrix<C64>)> {
    let n = a.nrows();
    let m = DMatrix::<C64>::from_fn(n, n, |i, j| {
        let diag = if i == j { z } else { C64::new(0.0, 0.0) };
        diag - C64::new(a[(i, j)], 0.0)
    });
    let lu = m.lu();
    let det = lu.determinant();
    // Row vector c (zI − A)⁻¹ = ((zI − A)ᵀ)⁻¹ cᵀ, transposed.
    let ct = DMatrix::<C64>::from_fn(n, 1, |i, _| C64::new(c[(0, i)], 0.0));
    let mt = DMatrix::<C64>::from_fn(n, n, |i, j| {
        let diag = if i == j { z } else { C64::new(0.0, 0.0) };
        diag - C64::new(a[(j, i)], 0.0)
    });
    let row = mt.lu().solve(&ct)?.transpose();
    (det.norm() > 0.0 && det.re.is_finite()).then_some((det, row))
}

fn poly(poles: &[C64], z: C64) -> C64 {
    poles
        .iter()
        .fold(C64::new(1.0, 0.0), |acc, p| acc * (z - p))
}

/// Sample points: n angles in (0, π) on a circle of radius `r`, rotated by
/// `turn` (their conjugates carry the same equations).
fn points(n: usize, r: f64, turn: f64) -> Vec<C64> {
    (0..n)
        .map(|k| C64::from_polar(r, std::f64::consts::PI * (k as f64 + turn) / n as f64))
        .collect()
}

/// The gain L (n × 1) with det(zI − A + L c) = Π (z − poles_i), `c` 1 × n.
/// Returns the gain and the relative residual of the polynomial at fresh
/// points; refuses when that residual exceeds 1e-9.
pub(crate) fn place_single_output(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    poles: &[C64],
) -> Result<(DMatrix<f64>, f64)> {
    let n = a.nrows();
    let spread = poles.iter().map(|p| p.norm()).fold(0.0, f64::max);
    let size = a.norm().max(spread).max(1.0);
    let r = 1.5 * size;
    // ⌊n/2⌋ points in the upper half plane give two real equations each,
    // and for odd n the real point z = r gives one (its imaginary part is
    // zero): n equations for n unknowns. |z| = r exceeds the spectral radius
    // of A, so zI − A is invertible at every point.
    let mut sample = points(n / 2, r, 0.5);
    if n % 2 == 1 {
        sample.push(C64::new(r, 0.0));
    }
    let mut rows = DMatrix::<f64>::zeros(n, n);
    let mut rhs = DVector::<f64>::zeros(n);
    let mut next = 0;
    for z in sample {
        let (det, g) = det_and_row(a, c, z).ok_or(NumericsError::Singular {
            matrix: "zI − A at a sample point",
            estimate: 0.0,
            threshold: 0.0,
        })?;
        let b = poly(poles, z) / det - C64::new(1.0, 0.0);
        for j in 0..n {
            rows[(next, j)] = g[(0, j)].re;
        }
        rhs[next] = b.re;
        next += 1;
        if z.im != 0.0 {
            for j in 0..n {
                rows[(next, j)] = g[(0, j)].im;
            }
            rhs[next] = b.im;
            next += 1;
        }
    }
    let l = rows.lu().solve(&rhs).ok_or(NumericsError::Singular {
        matrix: "placement equations",
        estimate: 0.0,
        threshold: 0.0,
    })?;
    let gain = DMatrix::from_column_slice(n, 1, l.as_slice());
    // Verify det(zI − A + L c) = q(z) at points not solved for.
    let closed = a - &gain * c;
    let mut residual = 0.0_f64;
    for z in points(n + 1, 0.8 * r, 0.25) {
        let m = DMatrix::<C64>::from_fn(n, n, |i, j| {
            let diag = if i == j { z } else { C64::new(0.0, 0.0) };
            diag - C64::new(closed[(i, j)], 0.0)
        });
        let got = m.lu().determinant();
        let want = poly(poles, z);
        residual = residual.max((got - want).norm() / want.norm().max(f64::MIN_POSITIVE));
    }
    if residual.is_nan() || residual > POLYNOMIAL_TOLERANCE {
        return Err(NumericsError::PlacementInaccurate {
            index: 0,
            requested: poles.first().copied().unwrap_or_default(),
            achieved: C64::new(f64::NAN, f64::NAN),
            relative_error: residual,
            tolerance: POLYNOMIAL_TOLERANCE,
        });
    }
    Ok((gain, residual))
}

/// The warning that goes with a polynomial placement.
pub(crate) fn sensitivity_warning(pole: C64, multiplicity: usize, spread: f64) -> NumericsWarning {
    NumericsWarning::RepeatedPoleSpread {
        pole,
        multiplicity,
        spread,
    }
}
