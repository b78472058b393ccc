//! Orthonormal bases of complements and null spaces by Householder QR.
//!
//! The Householder QR of `[M | I]` (no pivoting) yields a full orthogonal
//! (unitary) `Q` whose first `r` columns span a space containing `range(M)`
//! (n × r), so its remaining columns are an orthonormal basis of a subspace
//! of `range(M)^⊥`, of dimension exactly `n − r` (all of it when M has full
//! column rank). A finite sequence of reflections: no iteration, no failure.

use nalgebra::{ComplexField, DMatrix};

/// Orthonormal `n × (n − r)` basis orthogonal to the columns of the `n × r`
/// matrix `m` (`r ≤ n`; for `r ≥ n` the result has no columns).
pub(crate) fn complement<T: ComplexField + Copy>(m: &DMatrix<T>) -> DMatrix<T> {
    let (n, r) = m.shape();
    if r >= n {
        return DMatrix::zeros(n, 0);
    }
    let mut aug = DMatrix::<T>::zeros(n, r + n);
    aug.view_mut((0, 0), (n, r)).copy_from(m);
    aug.view_mut((0, r), (n, n)).fill_with_identity();
    let q = aug.qr().q();
    q.columns(r, n - r).into_owned()
}

/// Orthonormal basis (as columns) of a subspace of the null space of the
/// `k × n` matrix `m`, of dimension `n − k` (the whole null space when `m` has
/// full row rank).
pub(crate) fn null_space<T: ComplexField + Copy>(m: &DMatrix<T>) -> DMatrix<T> {
    complement(&m.adjoint())
}
