//! Input checks and small dense helpers shared by the numerical stages.
//!
//! Everything here is panic-free on any input: shapes are checked before use,
//! iterative nalgebra routines are only called through their capped
//! `try_new` forms.

use super::error::{NumericsError, Result};
use nalgebra::{Complex, DMatrix, SVD, SymmetricEigen};

/// Iteration cap handed to nalgebra's bidiagonal SVD and symmetric QR
/// iterations (both converge in a handful of sweeps per singular value; the
/// cap only guarantees termination).
const SVD_MAX_ITER: usize = 10_000;

/// Error unless every entry of `m` is finite.
pub(crate) fn finite(matrix: &'static str, m: &DMatrix<f64>) -> Result<()> {
    for c in 0..m.ncols() {
        for r in 0..m.nrows() {
            let v = m[(r, c)];
            if !v.is_finite() {
                return Err(NumericsError::NonFinite {
                    matrix,
                    row: r,
                    col: c,
                    value: v,
                });
            }
        }
    }
    Ok(())
}

/// Error unless `m` is square, non-empty and finite; returns its order.
pub(crate) fn square(matrix: &'static str, m: &DMatrix<f64>) -> Result<usize> {
    if m.nrows() != m.ncols() {
        return Err(NumericsError::NotSquare {
            matrix,
            rows: m.nrows(),
            cols: m.ncols(),
        });
    }
    if m.nrows() == 0 {
        return Err(NumericsError::Empty { matrix });
    }
    finite(matrix, m)?;
    Ok(m.nrows())
}

/// Error unless `m` has the given shape (`usize::MAX` = any), is non-empty and finite.
pub(crate) fn shape(
    matrix: &'static str,
    m: &DMatrix<f64>,
    rows: usize,
    cols: usize,
) -> Result<()> {
    let ok_r = rows == usize::MAX || m.nrows() == rows;
    let ok_c = cols == usize::MAX || m.ncols() == cols;
    if !(ok_r && ok_c) {
        return Err(NumericsError::DimensionMismatch {
            matrix,
            expected: (rows, cols),
            actual: (m.nrows(), m.ncols()),
        });
    }
    if m.nrows() == 0 || m.ncols() == 0 {
        return Err(NumericsError::Empty { matrix });
    }
    finite(matrix, m)
}

/// Error unless `m` is symmetric to `n·64·ε·max|m|` (asymmetry a few
/// roundings of the largest entry, as left by forming `G Q Gᵀ` or similar).
pub(crate) fn symmetric(matrix: &'static str, m: &DMatrix<f64>) -> Result<()> {
    let n = square(matrix, m)?;
    let scale = m.amax();
    let tol = 64.0 * n as f64 * f64::EPSILON * scale;
    let mut worst = (0.0, 0, 0);
    for c in 0..n {
        for r in (c + 1)..n {
            let d = (m[(r, c)] - m[(c, r)]).abs();
            if d > worst.0 {
                worst = (d, r, c);
            }
        }
    }
    if worst.0 > tol {
        return Err(NumericsError::NotSymmetric {
            matrix,
            row: worst.1,
            col: worst.2,
            asymmetry: worst.0,
            tolerance: tol,
        });
    }
    Ok(())
}

/// Ascending eigenvalues of the symmetric part of `m` (capped iteration).
pub(crate) fn symmetric_eigenvalues(matrix: &'static str, m: &DMatrix<f64>) -> Result<Vec<f64>> {
    let sym = (m + m.transpose()) * 0.5;
    let eig = SymmetricEigen::try_new(sym, f64::EPSILON, SVD_MAX_ITER).ok_or(
        NumericsError::NoConvergence {
            routine: "symmetric QR iteration",
            matrix,
            index: 0,
            iterations: SVD_MAX_ITER,
            estimate: f64::NAN,
        },
    )?;
    let mut v: Vec<f64> = eig.eigenvalues.iter().copied().collect();
    v.sort_by(f64::total_cmp);
    Ok(v)
}

/// Error unless `m` is symmetric positive semidefinite: every eigenvalue must be
/// `≥ −n·64·ε·λ_max` (roundoff of a PSD matrix built from products).
pub(crate) fn positive_semidefinite(matrix: &'static str, m: &DMatrix<f64>) -> Result<()> {
    symmetric(matrix, m)?;
    let ev = symmetric_eigenvalues(matrix, m)?;
    let n = ev.len() as f64;
    let top = ev.iter().fold(0.0_f64, |a, &b| a.max(b.abs()));
    let threshold = -64.0 * n * f64::EPSILON * top;
    if let Some((i, &l)) = ev.iter().enumerate().find(|&(_, &l)| l < threshold) {
        return Err(NumericsError::NotDefinite {
            matrix,
            index: i,
            eigenvalue: l,
            threshold,
        });
    }
    Ok(())
}

/// Error unless `m` is symmetric positive definite with every eigenvalue
/// above `n·64·ε·λ_max` (so its Cholesky factor and inverse are meaningful).
pub(crate) fn positive_definite(matrix: &'static str, m: &DMatrix<f64>) -> Result<()> {
    symmetric(matrix, m)?;
    let ev = symmetric_eigenvalues(matrix, m)?;
    let n = ev.len() as f64;
    let top = ev.iter().fold(0.0_f64, |a, &b| a.max(b.abs()));
    let threshold = 64.0 * n * f64::EPSILON * top;
    if let Some((i, &l)) = ev.iter().enumerate().find(|&(_, &l)| l <= threshold) {
        return Err(NumericsError::NotDefinite {
            matrix,
            index: i,
            eigenvalue: l,
            threshold,
        });
    }
    Ok(())
}

/// Singular values of `m` in descending order (capped Golub–Kahan iteration;
/// nalgebra's values-only path, which we trust, unlike its vectors).
///
/// Panic-free on any input: non-finite entries are refused first; the matrix
/// is scaled by a power of two (exact) so that its largest entry is about 1
/// before the decomposition, so finite entries near the ends of the f64 range
/// cannot overflow inside it; nalgebra's own sorting (which panics on a NaN)
/// is avoided; and singular values that would not be finite once the scale
/// is undone are refused as `NonFinite`.
pub(crate) fn singular_values(matrix: &'static str, m: &DMatrix<f64>) -> Result<Vec<f64>> {
    if m.nrows() == 0 || m.ncols() == 0 {
        return Err(NumericsError::Empty { matrix });
    }
    finite(matrix, m)?;
    let top = m.amax();
    if top == 0.0 {
        return Ok(vec![0.0; m.nrows().min(m.ncols())]);
    }
    let scale = power_of_two_near(top);
    let no_convergence = |estimate| NumericsError::NoConvergence {
        routine: "singular value decomposition",
        matrix,
        index: 0,
        iterations: SVD_MAX_ITER,
        estimate,
    };
    let svd = SVD::try_new_unordered(m / scale, false, false, f64::EPSILON, SVD_MAX_ITER)
        .ok_or(no_convergence(f64::NAN))?;
    let mut s = Vec::with_capacity(svd.singular_values.len());
    for (i, &v) in svd.singular_values.iter().enumerate() {
        if !v.is_finite() {
            return Err(no_convergence(v));
        }
        let back = v * scale;
        if !back.is_finite() {
            return Err(NumericsError::NonFinite {
                matrix,
                row: i,
                col: i,
                value: back,
            });
        }
        s.push(back);
    }
    s.sort_by(|a, b| b.total_cmp(a));
    Ok(s)
}

/// The power of two nearest above `x` (finite, > 0), clamped to the normal
/// range, so that dividing by it is exact and brings `x` into (0.5, 1].
pub(crate) fn power_of_two_near(x: f64) -> f64 {
    let e = x.log2().ceil().clamp(-1020.0, 1020.0);
    2.0_f64.powi(e as i32)
}

/// Real `2r × 2c` matrix `[[Re, −Im], [Im, Re]]` of a complex `r × c` matrix:
/// its singular values are those of the complex matrix, each twice.
pub(crate) fn realify(m: &DMatrix<Complex<f64>>) -> DMatrix<f64> {
    let (r, c) = m.shape();
    DMatrix::from_fn(2 * r, 2 * c, |i, j| {
        let z = m[(i % r, j % c)];
        match (i < r, j < c) {
            (true, true) | (false, false) => z.re,
            (true, false) => -z.im,
            (false, true) => z.im,
        }
    })
}

/// 1-norm (largest absolute column sum).
pub(crate) fn norm1(m: &DMatrix<f64>) -> f64 {
    m.column_iter()
        .map(|c| c.iter().map(|v| v.abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

/// `m⁻¹ rhs` by LU with partial pivoting. On failure (an exactly zero pivot)
/// the error carries the pivot growth estimate `min|uᵢᵢ| / max|uᵢᵢ|`.
pub(crate) fn lu_solve(
    matrix: &'static str,
    m: &DMatrix<f64>,
    rhs: &DMatrix<f64>,
) -> Result<DMatrix<f64>> {
    let lu = m.clone().lu();
    lu.solve(rhs).ok_or_else(|| {
        let u = lu.u();
        let d = u.diagonal();
        let top = d.iter().fold(0.0_f64, |a, v| a.max(v.abs()));
        let bottom = d.iter().fold(f64::INFINITY, |a, v| a.min(v.abs()));
        NumericsError::Singular {
            matrix,
            estimate: if top > 0.0 { bottom / top } else { 0.0 },
            threshold: 0.0,
        }
    })
}
