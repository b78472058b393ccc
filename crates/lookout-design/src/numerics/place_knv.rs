//! The state-feedback core of observer placement: J. Kautsky, N. K. Nichols
//! and P. Van Dooren, "Robust pole assignment in linear state feedback",
//! Int. J. Control 41(5), 1985, method 0, for `A − B K` (the dual pair).
//!
//! Cost. The bases `Sⱼ` come from one Hessenberg reduction (see
//! `place_bases`): O(n³) once and O(n² m) per pole, O(n³ m) in all, O(n² m)
//! memory (one n × m basis per real pole or pair, complex for pairs). A
//! sweep is O(n³) whatever m: the vectors orthogonal to all columns of the
//! real eigenvector matrix `T` but the ones being replaced are the matching
//! rows of `T⁻¹` (common practice: `T⁻¹ T = I`), and `T⁻¹` follows each
//! column replacement by the Sherman–Morrison–Woodbury formula (M. A.
//! Woodbury, "Inverting modified matrices", Memorandum Report 42, Princeton,
//! 1950; J. Sherman and W. J. Morrison, Ann. Math. Statist. 21, 1950; from
//! memory), O(n² m) per pole instead of a QR of the other n − 1 columns
//! (O(n³) per pole). `T⁻¹` is refactored at the start of every sweep so
//! rounding does not accumulate; while `T` is too ill-conditioned for its
//! inverse to give directions (1-norm condition above 1e8) the sweep takes
//! KNV's QR of the other columns (O(n⁴) per sweep). Sweeps stop on KNV's test
//! or when the measure stalls (see [`improve`]), at most `max_sweeps`.
//!
//! With as many inputs as states (`m = n`, the dual of measuring every
//! state) every `Sⱼ` is the whole space and KNV's optimum is reached without
//! a sweep: unit orthogonal eigenvectors (`T = I` in real form) have
//! `|det T| = 1`, the largest any unit-column matrix has (Hadamard's
//! inequality), so `A − B K = Λ` (real block form) and
//! `K = Z⁻¹ U₀ᵀ (A − Λ)`, O(n³) in all.

use super::checks;
use super::error::{NumericsError, Result};
use super::place::Pole;
use super::place_bases;
use super::subspace::complement;
use nalgebra::{Complex, DMatrix};

type C64 = Complex<f64>;

/// A gain with the conditioning of its closed-loop eigenvectors.
pub(super) struct Feedback {
    pub(super) k: DMatrix<f64>,
    pub(super) condition: f64,
    pub(super) sweeps: usize,
}

fn to_c(m: &DMatrix<f64>) -> DMatrix<C64> {
    m.map(|v| C64::new(v, 0.0))
}

/// The columns a pole owns in the real form: `[j]` for a real pole,
/// `[j, j̄]` for the leader of a pair, none for the conjugate member.
fn owned_columns(j: usize, pl: &Pole, n: usize) -> Vec<usize> {
    if !pl.leads() {
        return Vec::new();
    }
    match pl.partner {
        Some(jj) if pl.value.im > 0.0 && jj < n => vec![j, jj],
        _ => vec![j],
    }
}

/// Writes `x` (the eigenvector of pole j) into the real form `t`: `xⱼ` for a
/// real pole, `Re xⱼ` at j and `Im xⱼ` at j̄ for a pair.
fn set_real_columns(t: &mut DMatrix<f64>, cols: &[usize], x: &DMatrix<C64>) {
    if let Some(&j) = cols.first() {
        t.set_column(j, &x.column(0).map(|v| v.re));
    }
    if let Some(&jj) = cols.get(1) {
        t.set_column(jj, &x.column(0).map(|v| v.im));
    }
}

/// Real block-diagonal `Λ` matching the real form: `λ` for a real pole,
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

/// Starting real form. The poles take the basis vectors of their `Sⱼ` in
/// turn (a real pole one, a pair two, `(s_a + i s_b)/√2` so that Re x and
/// Im x are independent even when Sⱼ happens to be real), counting on from
/// one pole to the next, so that distinct poles start from different
/// directions rather than all from the first; a repeated pole counts on
/// from its first occurrence, so equal poles take distinct vectors of the
/// same space (at most m of them, as `normalise_poles` guarantees).
fn start(n: usize, poles: &[Pole], bases: &[DMatrix<C64>]) -> DMatrix<f64> {
    let mut t = DMatrix::<f64>::zeros(n, n);
    let mut firsts: Vec<(C64, usize)> = Vec::new();
    let mut slot = 0;
    for (j, (pl, s)) in poles.iter().zip(bases).enumerate() {
        let k = s.ncols();
        if k == 0 || !pl.leads() {
            continue;
        }
        let width = if pl.value.im > 0.0 && k >= 2 { 2 } else { 1 };
        let base = if pl.occurrence == 0 {
            firsts.push((pl.value, slot));
            slot
        } else {
            firsts
                .iter()
                .find(|(v, _)| super::place::same(*v, pl.value))
                .map_or(0, |(_, b)| *b)
        };
        let first = base + width * pl.occurrence;
        slot += width;
        let x = if width == 2 {
            let a = first % k;
            let b = (first + 1) % k;
            (s.columns(a, 1) + s.columns(b, 1) * C64::new(0.0, 1.0)) * C64::new(0.5_f64.sqrt(), 0.0)
        } else {
            s.columns(first % k, 1).into_owned()
        };
        set_real_columns(&mut t, &owned_columns(j, pl, n), &x);
    }
    t
}

/// Logarithm of KNV's robustness measure `|det T| / Π ‖tⱼ‖` (0 for
/// orthogonal columns, −∞ for a singular `T`), summed from the LU pivots so
/// that it does not underflow for large n.
fn log_measure(t: &DMatrix<f64>) -> f64 {
    let norms: f64 = t.column_iter().map(|c| c.norm().ln()).sum();
    let lu = t.clone().lu();
    let det: f64 = lu.u().diagonal().iter().map(|v| v.abs().ln()).sum();
    let m = det - norms;
    if m.is_nan() { f64::NEG_INFINITY } else { m }
}

/// The new eigenvector of pole j: the projection on `Sⱼ` of a unit vector of
/// `q` (an orthonormal real basis of the complement of all other columns);
/// for a pair, `P_S (q₁ ± i q₂)`, the larger of the two (Re x ⊥ Im x with
/// equal norms before projection, i.e. x ⊥ conj(x)).
fn candidate(q: &DMatrix<f64>, s: &DMatrix<C64>) -> Option<DMatrix<C64>> {
    if q.ncols() == 0 {
        return None;
    }
    let q = to_c(q);
    let proj = |v: &DMatrix<C64>| s * (s.adjoint() * v);
    let cand = if q.ncols() >= 2 {
        let i = C64::new(0.0, 1.0);
        let plus = proj(&(q.columns(0, 1) + q.columns(1, 1) * i));
        let minus = proj(&(q.columns(0, 1) - q.columns(1, 1) * i));
        if plus.norm() >= minus.norm() {
            plus
        } else {
            minus
        }
    } else {
        proj(&q.columns(0, 1).into_owned())
    };
    let norm = cand.norm();
    (norm > 1.0e-12).then(|| cand / C64::new(norm, 0.0))
}

/// Replaces columns `cols` of `t` by those of `new` and updates `tinv` by
/// Woodbury: `T'⁻¹ = T⁻¹ − T⁻¹ (V' − V) W⁻¹ Eᵀ T⁻¹` with `W = Eᵀ T⁻¹ V'`.
/// Leaves both unchanged (returns false) when `W` is near singular, i.e. the
/// replacement would make `T` near singular.
fn replace_columns(
    t: &mut DMatrix<f64>,
    tinv: &mut DMatrix<f64>,
    cols: &[usize],
    new: &DMatrix<f64>,
) -> bool {
    let old = t.select_columns(cols);
    let rows = tinv.select_rows(cols);
    let w = &rows * new;
    let scale = rows.norm() * new.norm();
    let Some(w_inv) = w.clone().try_inverse() else {
        return false;
    };
    let floor = 1.0e-8 * scale.powi(cols.len() as i32);
    if w.determinant().abs().partial_cmp(&floor) != Some(std::cmp::Ordering::Greater) {
        return false;
    }
    let left = &*tinv * (new - old);
    *tinv -= left * (w_inv * rows);
    for (k, &c) in cols.iter().enumerate() {
        t.set_column(c, &new.column(k));
    }
    true
}

/// Largest 1-norm condition of `T` for which a sweep works on the rows of
/// `T⁻¹` (their directions are then good to about κ·ε, ample for a search
/// direction: the placed poles depend on `xⱼ ∈ Sⱼ`, which the projection
/// keeps exact). Above it the sweep takes KNV's QR of the other columns.
const INVERSE_SWEEP_COND: f64 = 1.0e8;

/// Largest column sum of absolute values (NaN when any entry is NaN).
fn one_norm(m: &DMatrix<f64>) -> f64 {
    m.column_iter()
        .map(|c| c.iter().map(|v| v.abs()).sum::<f64>())
        .fold(
            0.0,
            |acc: f64, v| if v.is_nan() { f64::NAN } else { acc.max(v) },
        )
}

/// One KNV sweep over the leading poles: with `T⁻¹` updated by Woodbury when
/// `T` is well conditioned (O(n³) per sweep), else with a QR of the other
/// columns per pole (O(n⁴) per sweep, robust for a near-singular `T`).
fn sweep(t: &mut DMatrix<f64>, poles: &[Pole], bases: &[DMatrix<C64>]) {
    let n = t.nrows();
    let mut tinv = t
        .clone()
        .try_inverse()
        .filter(|inv| one_norm(t) * one_norm(inv) <= INVERSE_SWEEP_COND);
    for (j, (pl, s)) in poles.iter().zip(bases).enumerate() {
        let cols = owned_columns(j, pl, n);
        if cols.is_empty() || s.ncols() == 0 {
            continue;
        }
        let q = match &tinv {
            Some(inv) => inv.select_rows(&cols).transpose().qr().q(),
            None => {
                let mut drop = cols.clone();
                drop.sort_unstable();
                complement(&t.clone().remove_columns_at(&drop))
            }
        };
        let Some(x) = candidate(&q, s) else {
            continue;
        };
        let mut new = DMatrix::<f64>::zeros(n, cols.len());
        new.set_column(0, &x.column(0).map(|v| v.re));
        if cols.len() > 1 {
            new.set_column(1, &x.column(0).map(|v| v.im));
        }
        match &mut tinv {
            Some(inv) => {
                replace_columns(t, inv, &cols, &new);
            }
            None => {
                for (k, &c) in cols.iter().enumerate() {
                    t.set_column(c, &new.column(k));
                }
            }
        }
    }
}

/// Sweeps that stop once the measure settles (relative change of `|det|`
/// ≤ 1e-10 over a sweep, KNV's test) or, since method 0 does not increase it
/// monotonically, once the best measure seen has not grown by 0.1 % in
/// [`STALL_SWEEPS`] sweeps; returns the best `T` seen and the sweeps made.
fn improve(
    mut t: DMatrix<f64>,
    poles: &[Pole],
    bases: &[DMatrix<C64>],
    max_sweeps: usize,
) -> (DMatrix<f64>, usize) {
    let mut old = log_measure(&t);
    let mut best = (old, t.clone(), 0_usize);
    let mut sweeps = 0;
    while sweeps < max_sweeps {
        sweeps += 1;
        sweep(&mut t, poles, bases);
        let now = log_measure(&t);
        if now > best.0 + 1.0e-3 {
            best = (now, t.clone(), sweeps);
        } else if now > best.0 {
            best.0 = now;
            best.1 = t.clone();
        }
        let settled = (now - old).abs() <= 1.0e-10;
        old = now;
        if settled || sweeps - best.2 >= STALL_SWEEPS {
            break;
        }
    }
    (best.1, sweeps)
}

/// Sweeps without a 0.1 % gain of the measure after which [`improve`] stops.
const STALL_SWEEPS: usize = 5;

/// KNV method 0 for `A − B K` (`b` n×m of full column rank).
pub(super) fn knv_state_feedback(
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
    if m >= n {
        let t = DMatrix::<f64>::identity(n, n);
        return gain_from_eigenvectors(a, &u0, &z, &t, poles, 0);
    }
    let mut u = DMatrix::<f64>::zeros(n, n);
    u.columns_mut(0, m).copy_from(&u0);
    u.columns_mut(m, n - m).copy_from(&complement(&u0));
    let coords = place_bases::coordinates(a, &u, m);
    let bases = place_bases::bases(&coords.a_hat, m, poles);
    let t = start(n, poles, &bases);
    let (t, sweeps) = if m > 1 {
        improve(t, poles, &bases, max_sweeps)
    } else {
        (t, 0)
    };
    // In the new coordinates U₀ = [I; 0]; K = K̂ Qᵀ.
    let e = DMatrix::<f64>::identity(n, m);
    let mut fb = gain_from_eigenvectors(&coords.a_hat, &e, &z, &t, poles, sweeps)?;
    fb.k = &fb.k * coords.q.transpose();
    checks::finite("L", &fb.k)?;
    Ok(fb)
}

/// `K = Z⁻¹ U₀ᵀ (A − T Λ T⁻¹)` with the condition of `T`.
fn gain_from_eigenvectors(
    a: &DMatrix<f64>,
    u0: &DMatrix<f64>,
    z: &DMatrix<f64>,
    t: &DMatrix<f64>,
    poles: &[Pole],
    sweeps: usize,
) -> Result<Feedback> {
    let n = a.nrows();
    let lam = real_lambda(poles);
    let st = checks::singular_values("eigenvector matrix X", t)?;
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
        .solve(&(t * &lam).transpose())
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
