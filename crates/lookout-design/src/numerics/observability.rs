//! Observability of a pair (A, C), continuous or discrete (the tests are the same).
//!
//! The decision is made by the staircase reduction (`staircase.rs`,
//! Van Dooren 1981) of the dual pair (Ãᵀ, C̃ᵀ), where
//!
//! * `A` and `C` are first scaled by powers of two (exact) so that their
//!   largest entries lie in [½, 1), which rules out overflow;
//! * `Ã = (A − μI) / ‖A − μI‖_F` with `μ = trace(A)/n` and `C̃ = C / ‖C‖_F`.
//!
//! Observability is invariant under shifting and scaling A and under scaling
//! C, and the normalised pair makes the test independent of units and of the
//! sample period: `Ad = exp(A T) ≈ I + A T` at a tiny T becomes, after the
//! shift, `≈ A T / ‖A T‖`. The staircase costs O(n³) time and O(n²) memory,
//! unlike forming the (p·n) × n observability matrix (O(n⁴), and its powers of
//! A lose the small modes to rounding).
//!
//! Its findings: the observable dimension (`rank`), the pivots of its rank
//! decisions and `condition = 1/min(pivots)`. When it finds an unobservable
//! part, that part's eigenvalues are the unobservable modes; the one first in
//! the sorted spectrum of A is named, with its Popov–Belevitch–Hautus margin
//! `σ_min/σ_max([λI − Ã; C̃])`. On plants of at most
//! [`PBH_MODES_MAX_STATES`] states the PBH margin of every mode is also
//! computed and judged against [`PBH_TOLERANCE`] (a mode that is
//! observable in exact arithmetic but as good as invisible is refused too),
//! so the report is consistent with a PBH test.

use super::checks;
use super::eig::eigenvalues;
use super::error::{NumericsError, NumericsWarning, Result};
use super::staircase::{Staircase, staircase};
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

/// `condition` above which a [`NumericsWarning::IllConditioned`] is issued.
pub const CONDITION_WARN: f64 = 1.0e8;

/// Staircase pivots at or below `STAIRCASE_TOLERANCE · n · ε` (relative to the
/// normalised pair) count as zero. Why this value: each of the at most n
/// reflections perturbs the reduced pair by a few ε, so a pivot this small is
/// indistinguishable from rounding.
pub const STAIRCASE_TOLERANCE: f64 = 64.0;

/// Largest state dimension for which the per-mode PBH margins are computed
/// (n singular value decompositions of (n+p) × n complex matrices, O(n⁴)).
pub const PBH_MODES_MAX_STATES: usize = 40;

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
    /// Observable dimension found by the staircase reduction (n when observable).
    pub rank: usize,
    /// Pivot threshold of the staircase's rank decisions, relative to the
    /// normalised pair (`‖A − μI‖_F = ‖C‖_F = 1`): [`STAIRCASE_TOLERANCE`]`·n·ε`.
    pub rank_tolerance: f64,
    /// Every pivot the staircase accepted, in order, relative to the
    /// normalised pair.
    pub pivots: Vec<f64>,
    /// `1 / min(pivots)`: a relative perturbation of the normalised pair of
    /// about `√n / condition` makes it unobservable, so large values mean
    /// nearly unobservable (infinite when nothing is observable).
    pub condition: f64,
    /// PBH margin of every eigenvalue of A, on plants of at most
    /// [`PBH_MODES_MAX_STATES`] states; empty above that size (the per-mode
    /// test costs O(n⁴)) and when the staircase has already refused the pair.
    pub modes: Vec<PbhMode>,
    /// Above [`PBH_MODES_MAX_STATES`] states with at least as many outputs
    /// as states: a lower bound on every mode's PBH margin,
    /// `σ_min(C̃) / 3` (since `σ_min([λI − Ã; C̃]) ≥ σ_min(C̃)` and
    /// `σ_max ≤ |λ| + ‖Ã‖ + ‖C̃‖ ≤ 3` for the normalised pair). `None` when
    /// the margins are computed one by one, or when no such bound exists
    /// (fewer outputs than states; a warning then says the per-mode test
    /// was not made).
    pub pbh_lower_bound: Option<f64>,
    /// Non-fatal findings.
    pub warnings: Vec<NumericsWarning>,
}

impl ObservabilityReport {
    /// The smallest PBH margin over the modes when they were computed one by
    /// one, else [`ObservabilityReport::pbh_lower_bound`]; `None` when
    /// neither is known.
    pub fn smallest_pbh_margin(&self) -> Option<f64> {
        let computed = self
            .modes
            .iter()
            .map(|m| m.relative_sigma_min)
            .reduce(f64::min);
        computed.or(self.pbh_lower_bound)
    }
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
/// Returns [`NumericsError::Unobservable`] naming a mode the staircase finds
/// unobservable (the one first in the sorted spectrum), or, on plants of at
/// most [`PBH_MODES_MAX_STATES`] states, the first mode whose PBH margin is at
/// or below [`PBH_TOLERANCE`]; otherwise the report. Non-finite intermediate
/// values are reported as [`NumericsError::NonFinite`].
pub fn observability(a: &DMatrix<f64>, c: &DMatrix<f64>) -> Result<ObservabilityReport> {
    let pair = Normalised::new(a, c)?;
    let st = pair.reduce();
    let mut report = pair.report(&st);
    let eigs = pair.eigenvalues()?;
    if report.rank < pair.n() {
        return Err(pair.unobservable(&st, &eigs)?);
    }
    if pair.n() <= PBH_MODES_MAX_STATES {
        report.modes = pair.margins(&eigs)?;
    } else {
        report.pbh_lower_bound = pair.margin_bound()?;
        if report.pbh_lower_bound.is_none_or(|b| b < PBH_WARN) {
            report.warnings.push(NumericsWarning::PbhNotChecked {
                states: pair.n(),
                limit: PBH_MODES_MAX_STATES,
                condition: report.condition,
            });
        }
    }
    for (i, m) in report.modes.iter().enumerate() {
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
            report.warnings.push(NumericsWarning::WeaklyObservable {
                index: i,
                eigenvalue: m.eigenvalue,
                relative_sigma_min: m.relative_sigma_min,
            });
        }
    }
    if report.condition > CONDITION_WARN {
        report.warnings.push(NumericsWarning::IllConditioned {
            what: "observability staircase",
            condition: report.condition,
        });
    }
    Ok(report)
}

/// The staircase part of [`observability`] alone (rank, pivots, condition;
/// no PBH modes, no refusal): for reporting a pair already known to have
/// unobservable modes.
pub fn observability_staircase(a: &DMatrix<f64>, c: &DMatrix<f64>) -> Result<ObservabilityReport> {
    Ok(Normalised::new(a, c)?.staircase_report())
}

/// `m · 2⁻ᵉ` with `e` chosen so the largest entry lies in [½, 1) (exact; two
/// factors so that neither over- nor underflows), and `e`.
fn pow2_normalise(m: &DMatrix<f64>) -> (DMatrix<f64>, i32) {
    let top = m.amax();
    if !(top > 0.0 && top.is_finite()) {
        return (m.clone(), 0);
    }
    let e = top.log2().floor() as i32 + 1;
    let half = e / 2;
    let scaled = m * 2.0_f64.powi(-half) * 2.0_f64.powi(half - e);
    (scaled, e)
}

/// An eigenvalue of A, in A's units and in the normalised pair's.
#[derive(Clone, Copy)]
struct Mode {
    original: Complex<f64>,
    normalised: Complex<f64>,
}

/// (A, C) shifted and normalised as the module doc describes.
struct Normalised {
    /// `A · 2⁻ᵉ`, and `e`.
    a_pow2: (DMatrix<f64>, i32),
    /// `μ` and `‖A·2⁻ᵉ − μI‖_F` (1 when that is 0).
    shift: f64,
    norm: f64,
    a: DMatrix<f64>,
    c: DMatrix<f64>,
}

impl Normalised {
    fn new(a: &DMatrix<f64>, c: &DMatrix<f64>) -> Result<Self> {
        let n = checks::square("A", a)?;
        checks::shape("C", c, usize::MAX, n)?;
        let (a_s, e) = pow2_normalise(a);
        let shift = a_s.trace() / n as f64;
        let shifted = &a_s - DMatrix::<f64>::identity(n, n) * shift;
        let fro = shifted.norm();
        let norm = if fro > 0.0 { fro } else { 1.0 };
        let (c_s, _) = pow2_normalise(c);
        let c_fro = c_s.norm();
        let c_n = if c_fro > 0.0 { c_s / c_fro } else { c_s };
        let a_n = shifted / norm;
        checks::finite("A − μI (normalised)", &a_n)?;
        checks::finite("C (normalised)", &c_n)?;
        Ok(Normalised {
            a_pow2: (a_s, e),
            shift,
            norm,
            a: a_n,
            c: c_n,
        })
    }

    fn n(&self) -> usize {
        self.a.nrows()
    }

    fn reduce(&self) -> Staircase {
        let tol = STAIRCASE_TOLERANCE * self.n() as f64 * f64::EPSILON;
        staircase(self.a.transpose(), &self.c.transpose(), tol)
    }

    fn report(&self, st: &Staircase) -> ObservabilityReport {
        let smallest = st.pivots.iter().copied().fold(f64::INFINITY, f64::min);
        ObservabilityReport {
            rank: st.rank,
            rank_tolerance: STAIRCASE_TOLERANCE * self.n() as f64 * f64::EPSILON,
            pivots: st.pivots.clone(),
            condition: 1.0 / smallest,
            modes: Vec::new(),
            pbh_lower_bound: None,
            warnings: Vec::new(),
        }
    }

    fn staircase_report(&self) -> ObservabilityReport {
        self.report(&self.reduce())
    }

    /// Sorted eigenvalues of A (in A's units) with their normalised values.
    fn eigenvalues(&self) -> Result<Vec<Mode>> {
        let (a_s, e) = &self.a_pow2;
        let half = e / 2;
        Ok(eigenvalues("A", a_s)?
            .into_iter()
            .map(|z| Mode {
                original: z * 2.0_f64.powi(half) * 2.0_f64.powi(e - half),
                normalised: (z - self.shift) / self.norm,
            })
            .collect())
    }

    /// PBH margins of the normalised pair at every mode.
    fn margins(&self, modes: &[Mode]) -> Result<Vec<PbhMode>> {
        let values: Vec<_> = modes.iter().map(|m| m.normalised).collect();
        let mut out = pbh_margins("[λI - A; C]", &self.a, &self.c, &values)?;
        for (o, m) in out.iter_mut().zip(modes) {
            o.eigenvalue = m.original;
        }
        Ok(out)
    }

    /// `σ_min(C̃)/3` when C has at least n rows (see
    /// [`ObservabilityReport::pbh_lower_bound`]).
    fn margin_bound(&self) -> Result<Option<f64>> {
        if self.c.nrows() < self.n() {
            return Ok(None);
        }
        let sv = checks::singular_values("C (normalised)", &self.c)?;
        Ok(sv.last().map(|s| s / 3.0))
    }

    /// The error naming the unobservable mode first in the sorted spectrum.
    fn unobservable(&self, st: &Staircase, modes: &[Mode]) -> Result<NumericsError> {
        let (r, n) = (st.rank, self.n());
        let block = st.m.view((r, r), (n - r, n - r)).into_owned();
        let hidden = eigenvalues("unobservable part of A", &block)?;
        let nearest = |z: Complex<f64>| {
            modes
                .iter()
                .enumerate()
                .map(|(i, m)| (i, (m.normalised - z).norm()))
                .fold((0, f64::INFINITY), |b, c| if c.1 < b.1 { c } else { b })
                .0
        };
        let (index, value) = hidden
            .iter()
            .map(|&z| (nearest(z), z))
            .min_by_key(|&(i, _)| i)
            .unwrap_or((0, Complex::new(0.0, 0.0)));
        let margin = pbh_margins("[λI - A; C]", &self.a, &self.c, &[value])?;
        let mode = modes.get(index).map_or(value, |m| m.original);
        Ok(NumericsError::Unobservable {
            matrix: "C",
            index,
            eigenvalue: mode,
            relative_sigma_min: margin.first().map_or(0.0, |m| m.relative_sigma_min),
            tolerance: PBH_TOLERANCE,
        })
    }
}
