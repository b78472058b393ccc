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
//! The result is always verified by recomputing `eig(A − L C)`.

use super::checks;
use super::eig::eigenvalues;
use super::error::{NumericsError, NumericsWarning, Result};
use super::observability::observability;
use super::subspace::{complement, null_space};
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
    let dual = knv_state_feedback(&a.transpose(), &c.transpose(), &poles, opts.max_sweeps)?;
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
struct Pole {
    value: C64,
    /// For the member with positive imaginary part: index of its conjugate.
    /// For the member with negative imaginary part: index of the leader.
    partner: Option<usize>,
    /// Occurrence number among equal poles (selects the starting basis vector).
    occurrence: usize,
}

impl Pole {
    fn leads(&self) -> bool {
        self.value.im >= 0.0
    }
}

fn same(a: C64, b: C64) -> bool {
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

struct Feedback {
    k: DMatrix<f64>,
    condition: f64,
    sweeps: usize,
}

fn to_c(m: &DMatrix<f64>) -> DMatrix<C64> {
    m.map(|v| C64::new(v, 0.0))
}

/// Real form `T` of the eigenvector matrix: a real pole's column is `xⱼ`, a
/// pair (leader j, conjugate j̄) gives `Re xⱼ` at j and `Im xⱼ` at j̄.
fn real_form(x: &DMatrix<C64>, poles: &[Pole]) -> DMatrix<f64> {
    let n = x.nrows();
    let mut t = DMatrix::<f64>::zeros(n, poles.len());
    for (j, pl) in poles.iter().enumerate() {
        if j >= x.ncols() {
            break;
        }
        let col = x.column(j);
        if pl.value.im == 0.0 {
            t.set_column(j, &col.map(|v| v.re));
        } else if let (true, Some(jj)) = (pl.leads(), pl.partner)
            && jj < t.ncols()
        {
            t.set_column(j, &col.map(|v| v.re));
            t.set_column(jj, &col.map(|v| v.im));
        }
    }
    t
}

/// Real block-diagonal `Λ` matching [`real_form`]: `λ` for a real pole,
/// `[[α, β], [−β, α]]` on rows/columns (j, j̄) for `α ± iβ`, so that `M T = T Λ`.
fn real_lambda(poles: &[Pole]) -> DMatrix<f64> {
    let n = poles.len();
    let mut lam = DMatrix::<f64>::zeros(n, n);
    for (j, pl) in poles.iter().enumerate() {
        if pl.value.im == 0.0 {
            lam[(j, j)] = pl.value.re;
        } else if let (true, Some(jj)) = (pl.leads(), pl.partner)
            && jj < n
        {
            let (al, be) = (pl.value.re, pl.value.im);
            lam[(j, j)] = al;
            lam[(j, jj)] = be;
            lam[(jj, j)] = -be;
            lam[(jj, jj)] = al;
        }
    }
    lam
}

/// `|det|` of `t` with unit columns (KNV's measure of robustness; 1 for an
/// orthogonal `t`, 0 for a singular one).
fn normalised_det(t: &DMatrix<f64>) -> f64 {
    let mut u = t.clone();
    for mut c in u.column_iter_mut() {
        let nrm = c.norm();
        if nrm > 0.0 {
            c /= nrm;
        }
    }
    u.lu().determinant().abs()
}

/// KNV method 0 for `A − B K` (`b` n×m of full column rank).
fn knv_state_feedback(
    a: &DMatrix<f64>,
    b: &DMatrix<f64>,
    poles: &[Pole],
    max_sweeps: usize,
) -> Result<Feedback> {
    let n = a.nrows();
    let m = b.ncols();
    let qr = b.clone().qr();
    let u0 = qr.q();
    let z = qr.r();
    let u1t = complement(&u0).transpose();
    let u1t_c = to_c(&u1t);
    let a_c = to_c(a);
    // Sⱼ for every pole (conjugates share the conjugated basis of their leader).
    let mut bases: Vec<DMatrix<C64>> = Vec::with_capacity(n);
    for pl in poles {
        let basis = if pl.leads() {
            if pl.value.im == 0.0 {
                let shifted = a - DMatrix::<f64>::identity(n, n) * pl.value.re;
                to_c(&null_space(&(&u1t * shifted)))
            } else {
                let shifted = &a_c - DMatrix::<C64>::identity(n, n) * pl.value;
                null_space(&(&u1t_c * shifted))
            }
        } else {
            DMatrix::zeros(n, m)
        };
        bases.push(basis);
    }
    for j in 0..n {
        let Some(pl) = poles.get(j) else { continue };
        if let (false, Some(leader)) = (pl.leads(), pl.partner) {
            let conj = bases.get(leader).map(|s| s.map(|v| v.conj()));
            if let (Some(cb), Some(slot)) = (conj, bases.get_mut(j)) {
                *slot = cb;
            }
        }
    }
    // Starting X: basis vector `occurrence mod m` of each Sⱼ for a real pole;
    // for a complex leader, (s_a + i s_b)/√2 from two basis vectors so that
    // Re x and Im x are independent even when Sⱼ happens to be real.
    let mut x = DMatrix::<C64>::zeros(n, n);
    for (j, (pl, s)) in poles.iter().zip(&bases).enumerate() {
        let k = s.ncols();
        if k == 0 {
            continue;
        }
        if pl.value.im > 0.0 && k >= 2 {
            let a = (2 * pl.occurrence) % k;
            let b = (2 * pl.occurrence + 1) % k;
            let v =
                (s.column(a) + s.column(b) * C64::new(0.0, 1.0)) * C64::new(0.5_f64.sqrt(), 0.0);
            x.set_column(j, &v);
        } else {
            x.set_column(j, &s.column(pl.occurrence % k));
        }
        if let (true, Some(jj)) = (pl.value.im > 0.0, pl.partner) {
            let v = x.column(j).map(|v| v.conj());
            if jj < n {
                x.set_column(jj, &v);
            }
        }
    }
    let mut sweeps = 0;
    if m > 1 {
        let mut det_old = normalised_det(&real_form(&x, poles));
        while sweeps < max_sweeps {
            sweeps += 1;
            for (j, (pl, s)) in poles.iter().zip(&bases).enumerate() {
                if !pl.leads() {
                    continue;
                }
                // Real basis of the complement of all other (real-form)
                // columns: one vector for a real pole, two for a pair.
                let t = real_form(&x, poles);
                let mut drop = vec![j];
                if let (true, Some(jj)) = (pl.value.im > 0.0, pl.partner) {
                    drop.push(jj);
                }
                drop.sort_unstable();
                let q = to_c(&complement(&t.remove_columns_at(&drop)));
                let proj = |v: &DMatrix<C64>| s * (s.adjoint() * v);
                let cand = if q.ncols() >= 2 {
                    // x ∝ P_S (q₁ ± i q₂): Re x ⊥ Im x with equal norms
                    // before projection, i.e. x ⊥ conj(x).
                    let i = C64::new(0.0, 1.0);
                    let plus = proj(&(q.columns(0, 1) + q.columns(1, 1) * i));
                    let minus = proj(&(q.columns(0, 1) - q.columns(1, 1) * i));
                    if plus.norm() >= minus.norm() {
                        plus
                    } else {
                        minus
                    }
                } else if q.ncols() == 1 {
                    proj(&q.columns(0, 1).into_owned())
                } else {
                    continue;
                };
                let norm = cand.norm();
                if norm > 1.0e-12 {
                    let cand = cand / C64::new(norm, 0.0);
                    x.set_column(j, &cand.column(0));
                    if let (true, Some(jj)) = (pl.value.im > 0.0, pl.partner)
                        && jj < n
                    {
                        x.set_column(jj, &cand.column(0).map(|v| v.conj()));
                    }
                }
            }
            let det = normalised_det(&real_form(&x, poles));
            let done = (det - det_old).abs() <= 1.0e-10 * det;
            det_old = det;
            if done {
                break;
            }
        }
    }
    let t = real_form(&x, poles);
    let lam = real_lambda(poles);
    let st = checks::singular_values("eigenvector matrix X", &t)?;
    let smax = st.first().copied().unwrap_or(0.0);
    let smin = st.last().copied().unwrap_or(0.0);
    let condition = if smin > 0.0 {
        smax / smin
    } else {
        f64::INFINITY
    };
    let singular = || NumericsError::Singular {
        matrix: "eigenvector matrix X",
        estimate: if condition.is_finite() {
            1.0 / condition
        } else {
            0.0
        },
        threshold: n as f64 * f64::EPSILON,
    };
    if condition.is_nan() || 1.0 / condition <= n as f64 * f64::EPSILON {
        return Err(singular());
    }
    // M = T Λ T⁻¹ from Tᵀ Mᵀ = (T Λ)ᵀ.
    let mt = t
        .transpose()
        .lu()
        .solve(&(&t * &lam).transpose())
        .ok_or_else(singular)?;
    let rhs = u0.transpose() * (a - mt.transpose());
    let k = z
        .solve_upper_triangular(&rhs)
        .ok_or(NumericsError::Singular {
            matrix: "R factor of C",
            estimate: 0.0,
            threshold: 0.0,
        })?;
    checks::finite("L", &k)?;
    Ok(Feedback {
        k,
        condition,
        sweeps,
    })
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
