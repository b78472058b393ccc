//! Symmetry and definiteness checks for the noise matrices.

use nalgebra::DMatrix;
use nalgebra::linalg::SymmetricEigen;

use super::error::{ModelError, ModelErrorKind};
use super::reader::Node;

/// Allowed asymmetry, relative to the largest entry: `|M_ij − M_ji| <= 1e-9 max|M|`.
///
/// Values typed by hand are symmetric exactly; the slack admits matrices
/// exported by other tools with about ten significant digits.
pub(crate) const SYMMETRY_TOLERANCE: f64 = 1e-9;

/// Slack factor k of the eigenvalue test `λ_min ≥ −k n ε ‖M‖₂` (semidefinite)
/// or `λ_min > k n ε ‖M‖₂` (definite). The symmetric QR iteration is backward
/// stable, so the computed eigenvalues are exact for `M + E` with
/// `‖E‖₂ <= c n ε ‖M‖₂` for a modest constant c (Weyl's inequality then bounds
/// each eigenvalue's error by ‖E‖₂); k = 16 covers c with room.
const EIGEN_SLACK: f64 = 16.0;

/// Which property a noise matrix must have.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Need {
    /// Symmetric positive semidefinite (process noise).
    SemiDefinite,
    /// Symmetric positive definite (measurement noise).
    Definite,
}

/// Checks `m` (square, read from `node`) and returns its symmetric part
/// `(M + Mᵀ)/2`, which differs from `m` by at most the symmetry tolerance.
pub(crate) fn check_definite(
    node: &Node<'_, '_>,
    m: &DMatrix<f64>,
    need: Need,
) -> Result<DMatrix<f64>, ModelError> {
    if !m.is_square() {
        return Err(node.fail(
            ModelErrorKind::WrongSize,
            format!("must be square, found {} x {}", m.nrows(), m.ncols()),
        ));
    }
    let n = m.nrows();
    let scale = m.amax();
    for i in 0..n {
        for j in (i + 1)..n {
            let (upper, lower) = (m[(i, j)], m[(j, i)]);
            if (upper - lower).abs() > SYMMETRY_TOLERANCE * scale {
                return Err(node.fail(
                    ModelErrorKind::NotDefinite,
                    format!(
                        "not symmetric: [{i}][{j}] = {upper} but [{j}][{i}] = {lower} \
                         (allowed difference {SYMMETRY_TOLERANCE:e} x max|entry|)"
                    ),
                ));
            }
        }
    }
    let symmetric = (m + m.transpose()) * 0.5;

    // Iteration cap so that the check always terminates; nalgebra's symmetric
    // QR (implicit Wilkinson shifts) needs a few sweeps per eigenvalue.
    let max_iterations = 1000 + 100 * n;
    let eigen = SymmetricEigen::try_new(symmetric.clone(), f64::EPSILON, max_iterations)
        .ok_or_else(|| {
            node.fail(
                ModelErrorKind::NotDefinite,
                format!(
                    "cannot confirm definiteness: the symmetric eigenvalue iteration \
                     did not converge in {max_iterations} steps"
                ),
            )
        })?;
    let lambda_min = eigen.eigenvalues.min();
    let norm = eigen.eigenvalues.amax();
    let slack = EIGEN_SLACK * n as f64 * f64::EPSILON * norm;
    match need {
        Need::SemiDefinite if lambda_min < -slack => Err(node.fail(
            ModelErrorKind::NotDefinite,
            format!(
                "not positive semidefinite: smallest eigenvalue {lambda_min:.4e} \
                 (needs >= -{slack:.2e} = -16 n eps max|eigenvalue|); \
                 a noise intensity cannot be negative in any direction"
            ),
        )),
        Need::Definite if lambda_min <= slack => Err(node.fail(
            ModelErrorKind::NotDefinite,
            format!(
                "not positive definite: smallest eigenvalue {lambda_min:.4e} \
                 (needs > {slack:.2e} = 16 n eps max|eigenvalue|); \
                 every measurement needs some noise, or the Kalman gain trusts it without limit"
            ),
        )),
        _ => Ok(symmetric),
    }
}
