//! Controllability staircase form by orthogonal similarity.
//!
//! Method: P. Van Dooren, "The generalized eigenstructure problem in linear
//! system theory", IEEE Trans. Automat. Control 26(1), 1981 (the staircase
//! algorithm), as described by A. Varga, "Computation of irreducible
//! generalized state-space realizations", Kybernetika 26(2), 1990, with each
//! rank decision made by Householder QR with column pivoting
//! (P. Businger and G. H. Golub, "Linear least squares solutions by
//! Householder transformations", Numer. Math. 7, 1965).
//!
//! For a pair (M, Z), M n×n and Z n×q, step j compresses the current block
//! `Z_j` (rows `k..n`) to `[R_j; 0]` with `r_j` rows by reflections applied as
//! a similarity to M (rows and columns `k..n`), then continues with the block
//! of M below the new rows: `Z_{j+1} = M[k+r_j.., k..k+r_j]`. It stops when a
//! block has rank 0 (the trailing `n − k` states are not reached) or all `n`
//! states are reached. Every reflection costs O(n²) and there are at most n
//! of them, so the whole reduction is O(n³) with O(n²) memory; no iteration,
//! so no convergence failure.

use nalgebra::{DMatrix, DVector};

/// Result of [`staircase`].
pub(crate) struct Staircase {
    /// Number of states reached: the controllable dimension.
    pub rank: usize,
    /// Every pivot `|r_ii|` the QR steps accepted (each above the tolerance).
    pub pivots: Vec<f64>,
    /// The transformed M; its trailing `(n − rank)` diagonal block carries the
    /// unreached modes.
    pub m: DMatrix<f64>,
}

/// Householder vector `v` (with `v₀ = 1`), `τ` and `β` such that
/// `(I − τ v vᵀ) x = β e₁` (LAPACK `dlarfg` convention; `τ = 0` when `x` is
/// already a multiple of `e₁`).
fn reflector(x: &DVector<f64>) -> (DVector<f64>, f64, f64) {
    let alpha = x.get(0).copied().unwrap_or(0.0);
    let tail = if x.len() > 1 {
        x.rows(1, x.len() - 1).norm()
    } else {
        0.0
    };
    let mut v = DVector::<f64>::zeros(x.len());
    if let Some(v0) = v.get_mut(0) {
        *v0 = 1.0;
    }
    if tail == 0.0 {
        return (v, 0.0, alpha);
    }
    let beta = -alpha.signum() * alpha.hypot(tail);
    let tau = (beta - alpha) / beta;
    let d = alpha - beta;
    for i in 1..x.len() {
        v[i] = x[i] / d;
    }
    (v, tau, beta)
}

/// `M ← H M H` for `H = I − τ v vᵀ` acting on indices `k..k+len(v)`.
fn similarity(m: &mut DMatrix<f64>, k: usize, v: &DVector<f64>, tau: f64) {
    if tau == 0.0 {
        return;
    }
    let len = v.len();
    let mut rows = m.rows_mut(k, len);
    let w = rows.tr_mul(v);
    rows.ger(-tau, v, &w, 1.0);
    let mut cols = m.columns_mut(k, len);
    let w = &cols * v;
    cols.ger(-tau, &w, v, 1.0);
}

/// One staircase step: QR with column pivoting of `z` (the rows `k..n` of the
/// current block), each reflection applied to `m` as a similarity. Returns the
/// accepted pivots (their count is the block's numerical rank).
fn compress(m: &mut DMatrix<f64>, k: usize, mut z: DMatrix<f64>, tol: f64) -> Vec<f64> {
    let (rows, cols) = z.shape();
    let mut pivots = Vec::new();
    for j in 0..rows.min(cols) {
        let (best, norm) = (j..cols)
            .map(|c| (c, z.view((j, c), (rows - j, 1)).norm()))
            .fold((j, -1.0), |acc, cur| if cur.1 > acc.1 { cur } else { acc });
        if norm.is_nan() || norm <= tol {
            break;
        }
        z.swap_columns(j, best);
        let x = z.view((j, j), (rows - j, 1)).column(0).into_owned();
        let (v, tau, _) = reflector(&x);
        if tau != 0.0 {
            let mut rest = z.view_mut((j, j), (rows - j, cols - j));
            let w = rest.tr_mul(&v);
            rest.ger(-tau, &v, &w, 1.0);
        }
        similarity(m, k + j, &v, tau);
        pivots.push(norm);
    }
    pivots
}

/// Staircase reduction of (m, z): `m` n×n, `z` n×q, finite, with pivots at or
/// below `tol` (absolute) counted as zero.
pub(crate) fn staircase(mut m: DMatrix<f64>, z: &DMatrix<f64>, tol: f64) -> Staircase {
    let n = m.nrows();
    let mut k = 0;
    let mut block = z.clone();
    let mut pivots = Vec::new();
    while k < n {
        let accepted = compress(&mut m, k, block, tol);
        let r = accepted.len();
        pivots.extend(accepted);
        if r == 0 {
            break;
        }
        let start = k;
        k += r;
        block = m.view((k, start), (n - k, r)).into_owned();
    }
    Staircase { rank: k, pivots, m }
}
