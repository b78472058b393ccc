//! The eigenvector spaces `Sⱼ = null(U₁ᵀ (A − λⱼ I))` of KNV's method (see
//! `place_knv`) for many poles at O(n² m) each instead of one QR of an
//! n × (n − m) matrix per pole.
//!
//! One orthogonal change of coordinates, `Q = [U₀ U₁ V]` with `V` the
//! Hessenberg reduction of the (2, 2) block (common practice, as in A. J.
//! Laub, "Efficient multivariable frequency response computations", IEEE TAC
//! 26(2), 1981, from memory), makes `Â = Qᵀ A Q` have `Â₂₂ = H` upper
//! Hessenberg and `U₁ᵀ` the last n − m coordinates. Then `Sⱼ` in the new
//! coordinates is the span of `[I; −(H − λⱼ I)⁻¹ Â₂₁]`: one Hessenberg LU
//! with partial pivoting (O((n − m)²), growth at most n − m, J. H.
//! Wilkinson, "The Algebraic Eigenvalue Problem", 1965) and m triangular
//! solves per pole, then a QR of the n × m result. The residual
//! `‖[Â₂₁, H − λ I] s‖` of every unit `s` in the computed span is then of the
//! order of ε ‖Â‖ (backward stability of the solve), which is what the
//! placement needs. When λⱼ is (numerically) an eigenvalue of `H`, a pivot
//! falls below n·ε·‖H − λ I‖ and that pole takes the QR null space instead.

use super::subspace::null_space;
use nalgebra::{Complex, ComplexField, DMatrix};

type C64 = Complex<f64>;

/// The coordinates of the placement: `q` orthogonal with `qᵀ b = [Z; 0]`
/// and `â = qᵀ a q` whose (2, 2) block (from row/column m) is upper Hessenberg.
pub(super) struct Coordinates {
    pub(super) q: DMatrix<f64>,
    pub(super) a_hat: DMatrix<f64>,
}

/// `Q = [U₀, U₁ V]` from `[U₀ U₁]` (orthogonal, `U₀` spanning range(B)).
pub(super) fn coordinates(a: &DMatrix<f64>, u: &DMatrix<f64>, m: usize) -> Coordinates {
    let n = a.nrows();
    let a1 = u.transpose() * a * u;
    let a22 = a1.view((m, m), (n - m, n - m)).into_owned();
    let (v, _) = a22.hessenberg().unpack();
    let mut q = u.clone();
    let tail = u.columns(m, n - m) * v;
    q.columns_mut(m, n - m).copy_from(&tail);
    let mut a_hat = q.transpose() * a * &q;
    // Exact zeros below the subdiagonal of the Hessenberg block.
    for j in m..n {
        for i in (j + 2)..n {
            a_hat[(i, j)] = 0.0;
        }
    }
    Coordinates { q, a_hat }
}

/// Solves `(H − shift I) Y = rhs` in place for upper Hessenberg `h` by
/// Gaussian elimination with partial pivoting between neighbouring rows;
/// false when a pivot is below `k·ε·‖H − shift I‖_F` (near-singular shift).
fn hessenberg_solve<T: ComplexField<RealField = f64> + Copy>(
    h: &DMatrix<T>,
    shift: T,
    rhs: &mut DMatrix<T>,
) -> bool {
    let k = h.nrows();
    let mut u = h.clone();
    for i in 0..k {
        u[(i, i)] -= shift;
    }
    let tiny = k as f64 * f64::EPSILON * u.norm();
    for i in 0..k.saturating_sub(1) {
        if u[(i + 1, i)].modulus() > u[(i, i)].modulus() {
            u.swap_rows(i, i + 1);
            rhs.swap_rows(i, i + 1);
        }
        let piv = u[(i, i)];
        if piv.modulus().partial_cmp(&tiny) != Some(std::cmp::Ordering::Greater) {
            return false;
        }
        let f = u[(i + 1, i)] / piv;
        for c in i..k {
            let v = u[(i, c)];
            u[(i + 1, c)] -= f * v;
        }
        u[(i + 1, i)] = T::zero();
        for c in 0..rhs.ncols() {
            let v = rhs[(i, c)];
            rhs[(i + 1, c)] -= f * v;
        }
    }
    let last_ok = k == 0 || u[(k - 1, k - 1)].modulus() > tiny;
    last_ok && u.solve_upper_triangular_mut(rhs)
}

/// Orthonormal basis of `Sⱼ` (n × m, in the coordinates of `â`) for the shift λ.
fn basis<T: ComplexField<RealField = f64> + Copy>(
    a_hat: &DMatrix<T>,
    m: usize,
    shift: T,
) -> DMatrix<T> {
    let n = a_hat.nrows();
    let h = a_hat.view((m, m), (n - m, n - m)).into_owned();
    let mut y = a_hat.view((m, 0), (n - m, m)).into_owned();
    if hessenberg_solve(&h, shift, &mut y) && y.iter().all(|v| v.is_finite()) {
        let mut full = DMatrix::<T>::zeros(n, m);
        full.view_mut((0, 0), (m, m)).fill_with_identity();
        full.view_mut((m, 0), (n - m, m)).copy_from(&(-y));
        return full.qr().q();
    }
    let mut rows = a_hat.rows(m, n - m).into_owned();
    for i in 0..(n - m) {
        rows[(i, m + i)] -= shift;
    }
    null_space(&rows)
}

/// `Sⱼ` for every leading pole, in the coordinates of `â` (none stored for a
/// conjugate member, which uses the conjugate of its leader's basis).
pub(super) fn bases(
    a_hat: &DMatrix<f64>,
    m: usize,
    poles: &[super::place::Pole],
) -> Vec<DMatrix<C64>> {
    let a_c = a_hat.map(|v| C64::new(v, 0.0));
    poles
        .iter()
        .map(|pl| {
            if !pl.leads() {
                DMatrix::zeros(0, 0)
            } else if pl.value.im == 0.0 {
                basis(a_hat, m, pl.value.re).map(|v| C64::new(v, 0.0))
            } else {
                basis(&a_c, m, pl.value)
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Definition check: every basis is orthonormal and annihilated by the
    /// last n − m rows of `Â − λ I`, both on the Hessenberg path (λ = 7) and
    /// on the QR fallback (λ = 2 is an eigenvalue of the (2, 2) block
    /// diag(2, 5), a zero pivot). Tolerance 8·ε·n·‖Â‖ (k = 8).
    #[test]
    fn bases_span_the_null_space_on_both_paths() {
        let a_hat = DMatrix::from_row_slice(3, 3, &[1.0, 2.0, 3.0, 1.0, 2.0, 0.0, 4.0, 0.0, 5.0]);
        for shift in [7.0, 2.0] {
            let s = basis(&a_hat, 1, shift);
            assert_eq!(s.shape(), (3, 1));
            let mut rows = a_hat.rows(1, 2).into_owned();
            rows[(0, 1)] -= shift;
            rows[(1, 2)] -= shift;
            let tol = 8.0 * f64::EPSILON * 3.0 * a_hat.norm();
            assert!((&rows * &s).amax() <= tol, "shift {shift}: {}", &rows * &s);
            assert!(((s.transpose() * &s)[(0, 0)] - 1.0).abs() <= tol);
        }
    }
}
