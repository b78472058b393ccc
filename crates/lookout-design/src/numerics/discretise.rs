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
/// exponential `[[A_d, B_d], [0, I]]` (see [`super::expm`](mod@super::expm)).
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

/// Largest `‖A·h‖₁` for which the Van Loan block is exponentiated directly.
/// Its `exp(−A h)` block grows like `e^{‖A h‖}` while `Q_d` does not, so a
/// stiff plant at a long period loses digits to cancellation in
/// `F₂₂ᵀ F₁₂` (at `‖A T‖₁ = 100` about 6 of them) or overflows (beyond ~700);
/// below 1 the growth is at most `e`.
const VAN_LOAN_DIRECT_NORM: f64 = 1.0;

/// Discrete process-noise covariance `Q_d` by Van Loan's (1978) block exponential.
///
/// `a` n×n, `g` n×q noise input matrix, `qc` q×q continuous spectral density
/// (symmetric positive semidefinite, units of w² · s), `t` the sample period (s).
/// When `‖A T‖₁ > 1` the block is evaluated at `h = T/2ᵏ` with `‖A h‖₁ ≤ 1`
/// and the period is doubled k times by the exact identity
/// `Q_d(2h) = Q_d(h) + A_d(h) Q_d(h) A_d(h)ᵀ`, `A_d(2h) = A_d(h)²` (the
/// integral over `[0, 2h]` split at `h`). The result is symmetrised
/// (`(Q_d + Q_dᵀ)/2`). The doublings cost accuracy in the slow modes of a
/// stiff plant: `A_d(h) ≈ I − A h` holds them to ε absolute, so after the
/// 2ᵏ ≈ `‖A T‖₁` doublings their relative error is up to about
/// `‖A T‖₁·ε` (5e-9 measured at a stiffness ratio of 10⁸ over `T`, against
/// overflow without them). Errors as [`zoh`], with `‖A T‖₁` in place of the
/// block norm.
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
    let norm = checks::norm1(a) * t;
    if norm.is_nan() || norm > super::EXPM_NORM_LIMIT {
        return Err(NumericsError::TooLarge {
            matrix: "A·T",
            norm,
            limit: super::EXPM_NORM_LIMIT,
        });
    }
    let halvings = if norm > VAN_LOAN_DIRECT_NORM {
        (norm / VAN_LOAN_DIRECT_NORM).log2().ceil() as i32
    } else {
        0
    };
    let h = t * 2.0_f64.powi(-halvings);
    let w = g * qc * g.transpose();
    // F₁₂ is linear in the W block, so W is scaled by an exact power of two
    // σ to the size of the diagonal blocks (otherwise F₁₂ ≈ W h is tiny
    // beside F₁₁ ≈ F₂₂ ≈ I and keeps only the digits ε·‖F‖ allows), and
    // F₁₂/σ is used.
    let sigma_exp = match checks::norm1(&w) * h {
        wn if wn > 0.0 => ((norm * 2.0_f64.powi(-halvings)).max(1.0) / wn)
            .log2()
            .round()
            .clamp(-900.0, 900.0) as i32,
        _ => 0,
    };
    let mut blk = DMatrix::<f64>::zeros(2 * n, 2 * n);
    blk.view_mut((0, 0), (n, n)).copy_from(&(-a * h));
    blk.view_mut((0, n), (n, n))
        .copy_from(&(&w * h * 2.0_f64.powi(sigma_exp)));
    blk.view_mut((n, n), (n, n)).copy_from(&(a.transpose() * h));
    let e = expm("[[-A, G Qc Gᵀ], [0, Aᵀ]]·h", &blk)?;
    let f12 = e.view((0, n), (n, n)) * 2.0_f64.powi(-sigma_exp);
    let mut ad = e.view((n, n), (n, n)).transpose();
    let mut qd = &ad * f12;
    for _ in 0..halvings {
        qd = &qd + &ad * &qd * ad.transpose();
        ad = &ad * &ad;
    }
    checks::finite("Q_d", &qd)?;
    Ok((&qd + qd.transpose()) * 0.5)
}
