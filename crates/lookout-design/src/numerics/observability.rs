//! Observability of a pair (A, C), continuous or discrete (the tests are the same).
//!
//! Two views are computed:
//!
//! * the observability matrix `O = [C; CA; …; CA^{n−1}]` (pn × n): numerical
//!   rank = number of singular values above `max(n, p·n)·ε·σ_max`, and the
//!   condition estimate `σ_max/σ_min` (how strongly noise on y is amplified
//!   into the reconstructed state, up to the time scale);
//! * the Popov–Belevitch–Hautus (PBH) test per eigenvalue λ of A:
//!   `rank [λI − A; C] = n`, judged by the relative margin
//!   `σ_min/σ_max` of that (n+p) × n complex matrix against [`PBH_TOLERANCE`].
//!
//! The PBH test decides (it names the failing mode and is far better
//! conditioned than powers of A); a rank-deficient O with all modes passing is
//! reported as a warning.

use super::checks;
use super::eig::eigenvalues;
use super::error::{NumericsError, NumericsWarning, Result};
use nalgebra::{Complex, DMatrix};

/// Relative PBH margin at or below which a mode counts as unobservable.
///
/// Why this value: an exactly unobservable mode gives a margin of the size of
/// the error in the computed eigenvalue, about `ε·κ(λ)·‖A‖`; `1e-9` accepts
/// eigenvalue condition numbers `κ` up to ~10⁶ while still flagging modes that
/// are, for an observer, as good as invisible.
pub const PBH_TOLERANCE: f64 = 1.0e-9;

/// Relative PBH margin below which an observable mode draws a
/// [`NumericsWarning::WeaklyObservable`].
pub const PBH_WARN: f64 = 1.0e-6;

/// Condition estimate of O above which a [`NumericsWarning::IllConditioned`] is issued.
pub const CONDITION_WARN: f64 = 1.0e8;

/// PBH margin of one eigenvalue of A.
#[derive(Debug, Clone, PartialEq)]
pub struct PbhMode {
    /// The eigenvalue λ (in the sorted order of [`super::eigenvalues`]).
    pub eigenvalue: Complex<f64>,
    /// `σ_min([λI − A; C]) / σ_max([λI − A; C])`.
    pub relative_sigma_min: f64,
}

/// Findings of [`observability`].
#[derive(Debug, Clone, PartialEq)]
pub struct ObservabilityReport {
    /// Numerical rank of the observability matrix.
    pub rank: usize,
    /// Singular-value threshold used for that rank, `max(n, p·n)·ε·σ_max`.
    pub rank_tolerance: f64,
    /// Singular values of the observability matrix, descending (n of them).
    pub singular_values: Vec<f64>,
    /// `σ_max/σ_min` of the observability matrix (infinite if σ_min = 0).
    pub condition: f64,
    /// PBH margin of every eigenvalue of A.
    pub modes: Vec<PbhMode>,
    /// Non-fatal findings.
    pub warnings: Vec<NumericsWarning>,
}

/// The observability matrix `[C; CA; …; CA^{n−1}]`.
pub fn observability_matrix(a: &DMatrix<f64>, c: &DMatrix<f64>) -> Result<DMatrix<f64>> {
    let n = checks::square("A", a)?;
    checks::shape("C", c, usize::MAX, n)?;
    let p = c.nrows();
    let mut o = DMatrix::<f64>::zeros(p * n, n);
    let mut block = c.clone();
    for k in 0..n {
        o.view_mut((k * p, 0), (p, n)).copy_from(&block);
        block = &block * a;
    }
    Ok(o)
}

/// PBH margins `σ_min/σ_max` of `[λI − A; C·‖A‖_F/‖C‖_F]` for the given eigenvalues of A.
/// Shapes must have been checked by the caller.
pub(crate) fn pbh_margins(
    c_name: &'static str,
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    eigs: &[Complex<f64>],
) -> Result<Vec<PbhMode>> {
    let n = a.nrows();
    let p = c.nrows();
    // PBH rank is invariant under scaling C; scale it to the size of A so the
    // relative margin does not depend on the units of y (or of the noise).
    let cn = c.norm();
    let an = a.norm();
    let scale = if cn > 0.0 && an > 0.0 { an / cn } else { 1.0 };
    let c = c * scale;
    let mut out = Vec::with_capacity(eigs.len());
    for &lambda in eigs {
        let m = DMatrix::<Complex<f64>>::from_fn(n + p, n, |i, j| {
            if i < n {
                let d = if i == j {
                    lambda
                } else {
                    Complex::new(0.0, 0.0)
                };
                d - Complex::new(a[(i, j)], 0.0)
            } else {
                Complex::new(c[(i - n, j)], 0.0)
            }
        });
        let s = checks::singular_values(c_name, &checks::realify(&m))?;
        let top = s.first().copied().unwrap_or(0.0);
        let bottom = s.last().copied().unwrap_or(0.0);
        let rel = if top > 0.0 { bottom / top } else { 0.0 };
        out.push(PbhMode {
            eigenvalue: lambda,
            relative_sigma_min: rel,
        });
    }
    Ok(out)
}

/// Observability analysis of (A, C): `a` n×n, `c` p×n.
///
/// Returns [`NumericsError::Unobservable`] naming the first mode (eigenvalue)
/// whose PBH margin is at or below [`PBH_TOLERANCE`]; otherwise the report.
pub fn observability(a: &DMatrix<f64>, c: &DMatrix<f64>) -> Result<ObservabilityReport> {
    let o = observability_matrix(a, c)?;
    let n = a.nrows();
    let p = c.nrows();
    let sv = checks::singular_values("observability matrix", &o)?;
    let sigma_max = sv.first().copied().unwrap_or(0.0);
    let rank_tolerance = n.max(p * n) as f64 * f64::EPSILON * sigma_max;
    let rank = sv.iter().filter(|&&s| s > rank_tolerance).count();
    let sigma_min = sv.last().copied().unwrap_or(0.0);
    let condition = if sigma_min > 0.0 {
        sigma_max / sigma_min
    } else {
        f64::INFINITY
    };
    let eigs = eigenvalues("A", a)?;
    let modes = pbh_margins("[λI - A; C]", a, c, &eigs)?;
    let mut warnings = Vec::new();
    for (i, m) in modes.iter().enumerate() {
        if m.relative_sigma_min <= PBH_TOLERANCE {
            return Err(NumericsError::Unobservable {
                matrix: "C",
                index: i,
                eigenvalue: m.eigenvalue,
                relative_sigma_min: m.relative_sigma_min,
                tolerance: PBH_TOLERANCE,
            });
        }
        if m.relative_sigma_min < PBH_WARN {
            warnings.push(NumericsWarning::WeaklyObservable {
                index: i,
                eigenvalue: m.eigenvalue,
                relative_sigma_min: m.relative_sigma_min,
            });
        }
    }
    if rank < n {
        warnings.push(NumericsWarning::ObservabilityMatrixRankDeficient { rank, required: n });
    }
    if condition > CONDITION_WARN {
        warnings.push(NumericsWarning::IllConditioned {
            what: "observability matrix",
            condition,
        });
    }
    Ok(ObservabilityReport {
        rank,
        rank_tolerance,
        singular_values: sv,
        condition,
        modes,
        warnings,
    })
}
