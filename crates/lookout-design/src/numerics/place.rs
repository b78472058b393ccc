//! Observer pole placement: `L` such that `eig(A − L C)` is a requested set.
//!
//! By duality this is state-feedback placement for `(Aᵀ, Cᵀ)`: with
//! `eig(Aᵀ − Cᵀ K) = Λ`, `L = Kᵀ`. The state-feedback problem is solved by
//! J. Kautsky, N. K. Nichols and P. Van Dooren, "Robust pole assignment in
//! linear state feedback", Int. J. Control 41(5), 1985, method 0:
//!
//! 1. `B = [U₀ U₁] [Z; 0]` (QR). `A − B K = X Λ X⁻¹` needs each closed-loop
//!    eigenvector `xⱼ` in `Sⱼ = null(U₁ᵀ (A − λⱼ I))` (dimension m).
//! 2. Choose unit `xⱼ ∈ Sⱼ` to make `X` well conditioned: sweep over `j`,
//!    replacing `xⱼ` by the projection on `Sⱼ` of the unit vector orthogonal
//!    to all other columns, until `|det X|` stops growing.
//! 3. `K = Z⁻¹ U₀ᵀ (A − X Λ X⁻¹)`.
//!
//! For one output `Sⱼ` is a line, `X` is unique and step 2 is skipped (the
//! unique gain of the single-output problem, computed from eigenvectors, not
//! from powers of A as Ackermann's formula does). Complex pairs are handled by
//! keeping `x_{j̄} = conj(xⱼ)` and assembling `X Λ X⁻¹` in real arithmetic
//! from `[Re xⱼ, Im xⱼ]` and the real 2×2 block `[[α, β], [−β, α]]`.
//!
//! Repeated poles: a pole may be requested up to `p` times (p = number of
//! outputs, the dimension of `Sⱼ`); larger multiplicity needs a
//! non-diagonalisable `A − L C`. With one output the gain is unique and is
//! then found from the characteristic polynomial instead (verified on the
//! polynomial, with a sensitivity warning); with several outputs it is
//! refused with [`NumericsError::PoleMultiplicity`].
//!
//! When every state is measured (p = n) the sweep is not needed: orthogonal
//! eigenvectors are KNV's optimum and `A − L C` is the real block form of
//! the poles (see `place_knv`, which also states the cost of each step).
//!
//! The result is always verified by recomputing `eig(A − L C)`.

use super::checks;
use super::eig::eigenvalues;
use super::error::{NumericsError, NumericsWarning, Result};
use super::observability::observability;
use nalgebra::{Complex, DMatrix};

type C64 = Complex<f64>;

/// Relative distance under which two requested poles count as the same pole
/// (and under which a pole and the conjugate of another count as a pair).
const SAME_POLE: f64 = 1.0e-12;

/// Condition of the closed-loop eigenvector matrix above which a warning is issued.
const EIGVEC_COND_WARN: f64 = 1.0e8;

/// Options of [`place_observer_poles_with`].
#[derive(Debug, Clone, PartialEq)]
pub struct PlacementOptions {
    /// Largest accepted `|achieved − requested| / max(|requested|, 1)` over
    /// all poles (relative error for poles outside the unit circle, absolute
    /// inside it; default 1e-8).
    pub tolerance: f64,
    /// Cap on KNV sweeps over the eigenvectors (default 50).
    pub max_sweeps: usize,
}

impl Default for PlacementOptions {
    fn default() -> Self {
        Self {
            tolerance: 1.0e-8,
            max_sweeps: 50,
        }
    }
}

/// A verified observer gain.
#[derive(Debug, Clone, PartialEq)]
pub struct Placement {
    /// Observer gain `L` (n × p): error dynamics `A − L C`.
    pub gain: DMatrix<f64>,
    /// `eig(A − L C)`, recomputed; `achieved[i]` is matched to requested pole `i`.
    pub achieved: Vec<C64>,
    /// Worst `|achieved − requested| / max(|requested|, 1)`.
    pub worst_relative_error: f64,
    /// `σ_max/σ_min` of the (real form of the) closed-loop eigenvector matrix:
    /// the sensitivity of the placed poles to perturbations of A, L and C.
    pub eigenvector_condition: f64,
    /// KNV sweeps used (0 for one output).
    pub sweeps: usize,
    /// Non-fatal findings (observability and conditioning).
    pub warnings: Vec<NumericsWarning>,
}

/// [`place_observer_poles_with`] with default options.
pub fn place_observer_poles(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    poles: &[C64],
) -> Result<Placement> {
    place_observer_poles_with(a, c, poles, &PlacementOptions::default())
}

/// Observer gain `L` with `eig(A − L C) = poles`; `a` n×n, `c` p×n of full row
/// rank, `(A, C)` observable, `poles` of length n closed under conjugation.
///
/// Each output (row of C) is first scaled by a power of two (exact) so that
/// its largest entry is about 1, and the gain's columns are scaled back:
/// with C' = D C, A − L' C' = A − (L' D) C. An output measured in tiny or
/// huge units (c = 1e154) thus places like any other instead of overflowing
/// inside the eigenvector solve.
pub fn place_observer_poles_with(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    poles: &[C64],
    opts: &PlacementOptions,
) -> Result<Placement> {
    let n = checks::square("A", a)?;
    checks::shape("C", c, usize::MAX, n)?;
    let row_scale: Vec<f64> = c
        .row_iter()
        .map(|r| {
            let top = r.amax();
            if top > 0.0 {
                1.0 / checks::power_of_two_near(top)
            } else {
                1.0
            }
        })
        .collect();
    let scaled_c = DMatrix::from_fn(c.nrows(), n, |i, j| c[(i, j)] * row_scale[i]);
    let mut placement = place_scaled(a, &scaled_c, poles, opts)?;
    for (j, s) in row_scale.iter().enumerate() {
        placement.gain.column_mut(j).scale_mut(*s);
    }
    checks::finite("L", &placement.gain)?;
    Ok(placement)
}

fn place_scaled(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    poles: &[C64],
    opts: &PlacementOptions,
) -> Result<Placement> {
    let n = a.nrows();
    let p = c.nrows();
    let sv = checks::singular_values("C", c)?;
    let tol = n.max(p) as f64 * f64::EPSILON * sv.first().copied().unwrap_or(0.0);
    let rank = sv.iter().filter(|&&s| s > tol).count();
    if rank < p {
        return Err(NumericsError::RankDeficient {
            matrix: "C",
            rank,
            required: p,
            sigma_min: sv.last().copied().unwrap_or(0.0),
            tolerance: tol,
        });
    }
    let requested = poles;
    let poles = match normalise_poles(requested, n, p) {
        Err(NumericsError::PoleMultiplicity {
            pole, multiplicity, ..
        }) if p == 1 => return place_by_polynomial(a, c, requested, pole, multiplicity),
        other => other?,
    };
    let report = observability(a, c)?;
    let dual = super::place_knv::knv_state_feedback(
        &a.transpose(),
        &c.transpose(),
        &poles,
        opts.max_sweeps,
    )?;
    let gain = dual.k.transpose();
    let closed = a - &gain * c;
    let achieved_raw = eigenvalues("A - L C", &closed)?;
    let (achieved, worst, worst_i) = match_poles(&poles, &achieved_raw);
    if worst.is_nan() || worst > opts.tolerance {
        let requested = poles.get(worst_i).map(|pl| pl.value).unwrap_or_default();
        let got = achieved.get(worst_i).copied().unwrap_or_default();
        return Err(NumericsError::PlacementInaccurate {
            index: worst_i,
            requested,
            achieved: got,
            relative_error: worst,
            tolerance: opts.tolerance,
        });
    }
    let mut warnings = report.warnings;
    if dual.condition > EIGVEC_COND_WARN {
        warnings.push(NumericsWarning::IllConditioned {
            what: "closed-loop eigenvector matrix",
            condition: dual.condition,
        });
    }
    Ok(Placement {
        gain,
        achieved,
        worst_relative_error: worst,
        eigenvector_condition: dual.condition,
        sweeps: dual.sweeps,
        warnings,
    })
}

/// A requested pole with its role in the real assembly.
#[derive(Debug, Clone, Copy)]
pub(super) struct Pole {
    pub(super) value: C64,
    /// For the member with positive imaginary part: index of its conjugate.
    /// For the member with negative imaginary part: index of the leader.
    pub(super) partner: Option<usize>,
    /// Occurrence number among equal poles (selects the starting basis vector).
    pub(super) occurrence: usize,
}

impl Pole {
    pub(super) fn leads(&self) -> bool {
        self.value.im >= 0.0
    }
}

pub(super) fn same(a: C64, b: C64) -> bool {
    (a - b).norm() <= SAME_POLE * a.norm().max(1.0)
}

/// Checks count, finiteness, conjugate closure and multiplicity; pairs each
/// complex pole with its conjugate (whose value is then set to the exact conjugate).
fn normalise_poles(poles: &[C64], n: usize, p: usize) -> Result<Vec<Pole>> {
    if poles.len() != n {
        return Err(NumericsError::PoleCount {
            expected: n,
            actual: poles.len(),
        });
    }
    let mut out: Vec<Pole> = Vec::with_capacity(n);
    for (i, &z) in poles.iter().enumerate() {
        if !(z.re.is_finite() && z.im.is_finite()) {
            return Err(NumericsError::PoleNonFinite { index: i });
        }
        out.push(Pole {
            value: z,
            partner: None,
            occurrence: 0,
        });
    }
    for i in 0..n {
        let Some(&pi) = out.get(i) else { continue };
        if pi.value.im <= 0.0 || pi.partner.is_some() {
            continue;
        }
        let target = pi.value.conj();
        let found = (0..n).find(|&j| {
            out.get(j).is_some_and(|pj| {
                pj.value.im < 0.0 && pj.partner.is_none() && same(pj.value, target)
            })
        });
        let Some(j) = found else {
            return Err(NumericsError::PoleWithoutConjugate {
                index: i,
                pole: pi.value,
            });
        };
        if let Some(pj) = out.get_mut(j) {
            pj.value = target;
            pj.partner = Some(i);
        }
        if let Some(pi) = out.get_mut(i) {
            pi.partner = Some(j);
        }
    }
    if let Some((i, pl)) = out
        .iter()
        .enumerate()
        .find(|(_, pl)| pl.value.im < 0.0 && pl.partner.is_none())
    {
        return Err(NumericsError::PoleWithoutConjugate {
            index: i,
            pole: pl.value,
        });
    }
    // Multiplicities, counted over leaders (a conjugate shares its leader's count).
    for i in 0..n {
        let Some(pi) = out.get(i).copied() else {
            continue;
        };
        if !pi.leads() {
            continue;
        }
        let earlier = (0..i)
            .filter(|&j| {
                out.get(j)
                    .is_some_and(|pj| pj.leads() && same(pj.value, pi.value))
            })
            .count();
        if let Some(x) = out.get_mut(i) {
            x.occurrence = earlier;
        }
        if earlier + 1 > p {
            let first = (0..i)
                .find(|&j| out.get(j).is_some_and(|pj| same(pj.value, pi.value)))
                .unwrap_or(i);
            let total = out.iter().filter(|pj| same(pj.value, pi.value)).count();
            return Err(NumericsError::PoleMultiplicity {
                index: first,
                pole: pi.value,
                multiplicity: total,
                limit: p,
            });
        }
    }
    Ok(out)
}

/// Greedy nearest matching of achieved to requested poles; returns the
/// achieved values in requested order, the worst error and its index.
fn match_poles(requested: &[Pole], achieved: &[C64]) -> (Vec<C64>, f64, usize) {
    let mut used = vec![false; achieved.len()];
    let mut out = Vec::with_capacity(requested.len());
    let mut worst = (0.0_f64, 0_usize);
    for (i, r) in requested.iter().enumerate() {
        let best = achieved
            .iter()
            .enumerate()
            .filter(|(j, _)| !used.get(*j).copied().unwrap_or(true))
            .min_by(|(_, x), (_, y)| (**x - r.value).norm().total_cmp(&(**y - r.value).norm()));
        let (j, z) = match best {
            Some((j, z)) => (j, *z),
            None => (usize::MAX, C64::new(f64::NAN, f64::NAN)),
        };
        if let Some(u) = used.get_mut(j) {
            *u = true;
        }
        let err = (z - r.value).norm() / r.value.norm().max(1.0);
        // NaN counts as worst.
        if err.is_nan() || err > worst.0 {
            worst = (err, i);
        }
        out.push(z);
    }
    (out, worst.0, worst.1)
}

/// One output and a pole repeated: the unique gain from the characteristic
/// polynomial (see `place_polynomial`), with its sensitivity reported.
fn place_by_polynomial(
    a: &DMatrix<f64>,
    c: &DMatrix<f64>,
    requested: &[C64],
    pole: C64,
    multiplicity: usize,
) -> Result<Placement> {
    let report = observability(a, c)?;
    let (gain, _residual) = super::place_polynomial::place_single_output(a, c, requested)?;
    let achieved = eigenvalues("A - L C", &(a - &gain * c))?;
    let spread = achieved
        .iter()
        .map(|z| {
            requested
                .iter()
                .map(|p| (z - p).norm())
                .fold(f64::INFINITY, f64::min)
        })
        .fold(0.0, f64::max);
    let mut warnings = report.warnings;
    warnings.push(super::place_polynomial::sensitivity_warning(
        pole,
        multiplicity,
        spread,
    ));
    Ok(Placement {
        gain,
        worst_relative_error: spread / requested.iter().map(|p| p.norm()).fold(1.0, f64::max),
        achieved,
        eigenvector_condition: f64::INFINITY,
        sweeps: 0,
        warnings,
    })
}
