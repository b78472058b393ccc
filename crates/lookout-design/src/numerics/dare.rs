//! Steady-state Kalman filter: the filter discrete algebraic Riccati equation
//!
//! `P = A P Aᵀ − A P Cᵀ (C P Cᵀ + R)⁻¹ C P Aᵀ + Q`
//!
//! for `x[k+1] = A x[k] + w[k]`, `y[k] = C x[k] + v[k]`, `cov w = Q`,
//! `cov v = R`. `P` is the a-priori (predicted) error covariance; with
//! `S = C P Cᵀ + R` the filter (current-form) gain is `K = P Cᵀ S⁻¹`
//! (`x̂[k|k] = x̂[k|k−1] + K (y[k] − C x̂[k|k−1])`) and the predictor gain is
//! `L = A K` (`x̂[k+1|k] = A x̂[k|k−1] + L (y[k] − C x̂[k|k−1])`).
//!
//! Method: the structure-preserving doubling algorithm (SDA) of E. K.-W. Chu,
//! H.-Y. Fan, W.-W. Lin and C.-S. Wang, "Structure-preserving algorithms for
//! periodic discrete-time algebraic Riccati equations", Int. J. Control 77(8),
//! 2004 (for the control form `X = ÂᵀX(I + ĜX)⁻¹Â + Ĥ`; here `Â = Aᵀ`,
//! `Ĝ = Cᵀ R⁻¹ C`, `Ĥ = Q`):
//!
//! `W = I + G_k H_k`, `A_{k+1} = A_k W⁻¹ A_k`,
//! `G_{k+1} = G_k + A_k W⁻¹ G_k A_kᵀ`, `H_{k+1} = H_k + A_kᵀ H_k W⁻¹ A_k`,
//!
//! `H_k → P` quadratically when `A − L C` is strictly stable, linearly (still
//! doubling the horizon each step) with modes near the unit circle. It works
//! on the 2n-dimensional symplectic structure without eigenvectors, which is
//! what keeps it robust near the stability boundary.

use super::checks;
use super::eig::{eigenvalues, spectral_radius};
use super::error::{NumericsError, NumericsWarning, Result};
use super::observability::pbh_margins;
use nalgebra::DMatrix;

/// Doubling steps allowed (each doubles the horizon of the underlying
/// Riccati recursion: 2⁶⁰ steps is past any physical convergence).
pub const MAX_DOUBLINGS: usize = 60;

/// Relative PBH margin at or below which a mode with `|λ| ≥ 1` counts as
/// undetectable / unstabilisable (same reasoning as
/// [`super::observability::PBH_TOLERANCE`]).
pub const DARE_PBH_TOLERANCE: f64 = 1.0e-9;

/// Accepted relative residual `‖P − F(P)‖_F / (‖A P Aᵀ‖_F + ‖Q‖_F)`. A
/// backward-stable solution has `~n·ε·cond`; 1e-9 leaves room for condition
/// numbers near 10⁵ while catching wrong solutions.
pub const RESIDUAL_TOLERANCE: f64 = 1.0e-9;

/// Doubling steps above which a [`NumericsWarning::SlowConvergence`] is issued.
const SLOW: usize = 30;

/// The steady-state filter.
#[derive(Debug, Clone, PartialEq)]
pub struct KalmanGains {
    /// A-priori error covariance `P` (n × n, symmetric positive semidefinite).
    pub p: DMatrix<f64>,
    /// Innovation covariance `S = C P Cᵀ + R` (p × p).
    pub s: DMatrix<f64>,
    /// Filter (current-form) gain `K = P Cᵀ S⁻¹` (n × p).
    pub k: DMatrix<f64>,
    /// Predictor gain `L = A K` (n × p).
    pub l: DMatrix<f64>,
    /// Doubling steps used.
    pub iterations: usize,
    /// Relative residual of the DARE (see [`RESIDUAL_TOLERANCE`]).
    pub residual: f64,
    /// Spectral radius of `A − L C` (< 1).
    pub spectral_radius: f64,
    /// Non-fatal findings.
    pub warnings: Vec<NumericsWarning>,
}

fn solve(name: &'static str, m: &DMatrix<f64>, rhs: &DMatrix<f64>) -> Result<DMatrix<f64>> {
    checks::lu_solve(name, m, rhs)
}

/// Relative residual of the filter DARE at `p`.
fn residual(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    q: &DMatrix<f64>,
    r: &DMatrix<f64>,
    p: &DMatrix<f64>,
) -> Result<f64> {
    let apa = a * p * a.transpose();
    let pct = p * c.transpose();
    let s = c * &pct + r;
    let k = solve("S = C P Cᵀ + R", &s, &pct.transpose())?.transpose();
    let rhs = &apa - a * &k * pct.transpose() * a.transpose() + q;
    let den = apa.norm() + q.norm();
    Ok((p - rhs).norm() / if den > 0.0 { den } else { 1.0 })
}

/// Solves the filter DARE for `a` n×n, `c` p×n, `q` n×n symmetric positive
/// semidefinite, `r` p×p symmetric positive definite.
///
/// Refuses: (A, C) not detectable ([`NumericsError::Undetectable`]), (A, Q^½)
/// not stabilisable ([`NumericsError::Unstabilisable`]), asymmetric or
/// indefinite Q, R not positive definite, no convergence within
/// [`MAX_DOUBLINGS`], a residual above [`RESIDUAL_TOLERANCE`] and
/// `ρ(A − L C) ≥ 1`.
pub fn solve_filter_dare(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    q: &DMatrix<f64>,
    r: &DMatrix<f64>,
) -> Result<KalmanGains> {
    let n = checks::square("A", a)?;
    checks::shape("C", c, usize::MAX, n)?;
    let pdim = c.nrows();
    checks::shape("Q", q, n, n)?;
    checks::shape("R", r, pdim, pdim)?;
    checks::positive_semidefinite("Q", q)?;
    checks::positive_definite("R", r)?;

    // Detectability of (A, C) and stabilisability of (A, Q^½) by PBH on the
    // modes with |λ| ≥ 1 (a margin of 1e-9 on the unit circle counts as on it).
    // rank [λI − A, Q^½] = rank [λ̄I − Aᵀ; Q] since range(Q^½) = range(Q) and
    // the spectrum is closed under conjugation.
    let eigs = eigenvalues("A", a)?;
    let unstable: Vec<_> = eigs
        .iter()
        .enumerate()
        .filter(|(_, z)| z.norm() >= 1.0 - 1.0e-9)
        .collect();
    let values: Vec<_> = unstable.iter().map(|(_, z)| **z).collect();
    let det = pbh_margins("[λI - A; C]", a, c, &values)?;
    for ((i, _), m) in unstable.iter().zip(&det) {
        if m.relative_sigma_min <= DARE_PBH_TOLERANCE {
            return Err(NumericsError::Undetectable {
                matrix: "C",
                index: *i,
                eigenvalue: m.eigenvalue,
                relative_sigma_min: m.relative_sigma_min,
                tolerance: DARE_PBH_TOLERANCE,
            });
        }
    }
    let stab = pbh_margins("[λI - Aᵀ; Q]", &a.transpose(), q, &values)?;
    for ((i, _), m) in unstable.iter().zip(&stab) {
        if m.relative_sigma_min <= DARE_PBH_TOLERANCE {
            return Err(NumericsError::Unstabilisable {
                matrix: "Q",
                index: *i,
                eigenvalue: m.eigenvalue,
                relative_sigma_min: m.relative_sigma_min,
                tolerance: DARE_PBH_TOLERANCE,
            });
        }
    }

    // SDA on the control-form data.
    let id = DMatrix::<f64>::identity(n, n);
    let rinv_c = solve("R", r, c)?;
    let mut ak = a.transpose();
    let mut gk = c.transpose() * rinv_c;
    gk = (&gk + gk.transpose()) * 0.5;
    let mut hk = q.clone();
    let mut iterations = 0;
    let mut change = f64::INFINITY;
    let mut converged = false;
    while iterations < MAX_DOUBLINGS {
        iterations += 1;
        let w = &id + &gk * &hk;
        // W⁻¹ A_k and W⁻¹ G_k in one solve.
        let mut rhs = DMatrix::<f64>::zeros(n, 2 * n);
        rhs.view_mut((0, 0), (n, n)).copy_from(&ak);
        rhs.view_mut((0, n), (n, n)).copy_from(&gk);
        let sol = solve("I + G_k H_k", &w, &rhs)?;
        let winv_a = sol.view((0, 0), (n, n)).into_owned();
        let winv_g = sol.view((0, n), (n, n)).into_owned();
        let h_next = &hk + ak.transpose() * &hk * &winv_a;
        let g_next = &gk + &ak * winv_g * ak.transpose();
        let a_next = &ak * winv_a;
        change = (&h_next - &hk).norm() / h_next.norm().max(f64::MIN_POSITIVE);
        hk = (&h_next + h_next.transpose()) * 0.5;
        gk = (&g_next + g_next.transpose()) * 0.5;
        ak = a_next;
        checks::finite("P (doubling iterate)", &hk)?;
        if change <= 4.0 * n as f64 * f64::EPSILON || ak.norm() <= f64::EPSILON * 1e-3 {
            converged = true;
            break;
        }
    }
    if !converged {
        return Err(NumericsError::NoConvergence {
            routine: "structured doubling (filter DARE)",
            matrix: "P",
            index: 0,
            iterations,
            estimate: change,
        });
    }
    let p = hk;
    let pct = &p * c.transpose();
    let s = c * &pct + r;
    let s = (&s + s.transpose()) * 0.5;
    let k = solve("S = C P Cᵀ + R", &s, &pct.transpose())?.transpose();
    let l = a * &k;
    let res = residual(a, c, q, r, &p)?;
    if res.is_nan() || res > RESIDUAL_TOLERANCE {
        return Err(NumericsError::ResidualTooLarge {
            equation: "filter DARE",
            residual: res,
            tolerance: RESIDUAL_TOLERANCE,
        });
    }
    let rho = spectral_radius("A - L C", &(a - &l * c))?;
    if rho.is_nan() || rho >= 1.0 {
        return Err(NumericsError::NotStabilising {
            matrix: "A - L C",
            spectral_radius: rho,
        });
    }
    checks::positive_semidefinite("P", &p)?;
    let mut warnings = Vec::new();
    if iterations > SLOW {
        warnings.push(NumericsWarning::SlowConvergence { iterations });
    }
    Ok(KalmanGains {
        p,
        s,
        k,
        l,
        iterations,
        residual: res,
        spectral_radius: rho,
        warnings,
    })
}
