//! Zero-order-hold discretisation and discrete process noise.
//!
//! For `ẋ = A x + B u + G w` with `u` held constant over each sample period
//! `T` and `w` white with spectral density `Q_c`:
//!
//! * `A_d = e^{A T}`, `B_d = ∫₀ᵀ e^{A s} ds · B`, both read off
//!   `exp([[A, B], [0, 0]]·T) = [[A_d, B_d], [0, I]]`;
//! * `Q_d = ∫₀ᵀ e^{A s} G Q_c Gᵀ e^{Aᵀ s} ds` by C. F. Van Loan, "Computing
//!   integrals involving the matrix exponential", IEEE TAC 23(3), 1978:
//!   `exp([[−A, G Q_c Gᵀ], [0, Aᵀ]]·T) = [[·, F₁₂], [0, F₂₂]]` gives
//!   `A_d = F₂₂ᵀ` and `Q_d = F₂₂ᵀ F₁₂`.

use super::checks;
use super::error::{NumericsError, Result};
use super::expm::{expm, expm_with_estimate};
use nalgebra::DMatrix;

fn check_period(t: f64) -> Result<()> {
    if !(t.is_finite() && t > 0.0) {
        return Err(NumericsError::BadParameter {
            name: "T",
            value: t,
            condition: "finite and > 0",
        });
    }
    Ok(())
}

/// Zero-order-hold discretisation: returns `(A_d, B_d)` for sample period `t` (s).
///
/// `a` is n×n, `b` is n×m (m ≥ 1). Errors on shape, non-finite input, `t ≤ 0`,
/// on `‖[[A, B], [0, 0]]·T‖₁` above [`super::EXPM_NORM_LIMIT`] and when the
/// exponential fails its accuracy check ([`super::EXPM_TOLERANCE`]).
pub fn zoh(a: &DMatrix<f64>, b: &DMatrix<f64>, t: f64) -> Result<(DMatrix<f64>, DMatrix<f64>)> {
    zoh_with_estimate(a, b, t).map(|(ad, bd, _)| (ad, bd))
}

/// [`zoh`], also returning the relative error estimate (1-norm) of the block
/// exponential `[[A_d, B_d], [0, I]]` (see [`super::expm`]).
pub fn zoh_with_estimate(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    t: f64,
) -> Result<(DMatrix<f64>, DMatrix<f64>, f64)> {
    let n = checks::square("A", a)?;
    checks::shape("B", b, n, usize::MAX)?;
    check_period(t)?;
    let m = b.ncols();
    let mut blk = DMatrix::<f64>::zeros(n + m, n + m);
    blk.view_mut((0, 0), (n, n)).copy_from(&(a * t));
    blk.view_mut((0, n), (n, m)).copy_from(&(b * t));
    let e = expm_with_estimate("[[A, B], [0, 0]]·T", &blk)?;
    let ad = e.value.view((0, 0), (n, n)).into_owned();
    let bd = e.value.view((0, n), (n, m)).into_owned();
    Ok((ad, bd, e.relative_error_estimate))
}

/// Discrete process-noise covariance `Q_d` by Van Loan's (1978) block exponential.
///
/// `a` n×n, `g` n×q noise input matrix, `qc` q×q continuous spectral density
/// (symmetric positive semidefinite, units of w² · s), `t` the sample period (s).
/// The result is symmetrised (`(Q_d + Q_dᵀ)/2`).
pub fn van_loan_process_noise(
    a: &DMatrix<f64>,
    g: &DMatrix<f64>,
    qc: &DMatrix<f64>,
    t: f64,
) -> Result<DMatrix<f64>> {
    let n = checks::square("A", a)?;
    checks::shape("G", g, n, usize::MAX)?;
    checks::shape("Qc", qc, g.ncols(), g.ncols())?;
    checks::positive_semidefinite("Qc", qc)?;
    check_period(t)?;
    let w = g * qc * g.transpose();
    let mut blk = DMatrix::<f64>::zeros(2 * n, 2 * n);
    blk.view_mut((0, 0), (n, n)).copy_from(&(-a * t));
    blk.view_mut((0, n), (n, n)).copy_from(&(&w * t));
    blk.view_mut((n, n), (n, n)).copy_from(&(a.transpose() * t));
    let e = expm("[[-A, G Qc Gᵀ], [0, Aᵀ]]·T", &blk)?;
    let f12 = e.view((0, n), (n, n)).into_owned();
    let ad = e.view((n, n), (n, n)).transpose();
    let qd = ad * f12;
    Ok((&qd + qd.transpose()) * 0.5)
}
