//! Diagonal balancing of a general real matrix before eigenvalue computation.
//!
//! Method: B. N. Parlett and C. Reinsch, "Balancing a matrix for calculation
//! of eigenvalues and eigenvectors", Numer. Math. 13, 1969 (the scaling part,
//! without permutations). A similarity `D⁻¹ A D` with `D` a diagonal of powers
//! of two (exact in binary floating point) makes each row and column norm
//! pair comparable, which bounds the eigenvalue error by `ε·‖D⁻¹AD‖` instead
//! of `ε·‖A‖` for badly scaled matrices.

use nalgebra::DMatrix;

/// Sweep cap; each sweep changes a scale factor by at least one power of two
/// and Parlett–Reinsch report convergence in a few sweeps, so the cap is only
/// a termination guarantee.
const MAX_SWEEPS: usize = 200;

/// Returns `D⁻¹ A D` (same eigenvalues as `a`). `a` must be square and finite
/// (checked by the caller).
pub(crate) fn balance(a: &DMatrix<f64>) -> DMatrix<f64> {
    balance_with_scaling(a).0
}

/// Returns `(D⁻¹ A D, d)` with `d` the diagonal of `D` (powers of two, so
/// `A = D (D⁻¹ A D) D⁻¹` is recovered exactly barring under/overflow).
pub(crate) fn balance_with_scaling(a: &DMatrix<f64>) -> (DMatrix<f64>, Vec<f64>) {
    const RADIX: f64 = 2.0;
    const SQRDX: f64 = RADIX * RADIX;
    let n = a.nrows();
    let mut m = a.clone();
    let mut d = vec![1.0; n];
    for _ in 0..MAX_SWEEPS {
        let mut done = true;
        for i in 0..n {
            let mut c = 0.0;
            let mut r = 0.0;
            for j in 0..n {
                if j != i {
                    c += m[(j, i)].abs();
                    r += m[(i, j)].abs();
                }
            }
            if c == 0.0 || r == 0.0 {
                continue;
            }
            let s = c + r;
            let mut f = 1.0;
            // Both loops end: c and r are finite and positive, each step moves
            // c by a factor 4 towards r (at most ~1100 steps across the range
            // of f64).
            let mut g = r / RADIX;
            while c < g {
                f *= RADIX;
                c *= SQRDX;
            }
            g = r * RADIX;
            while c > g {
                f /= RADIX;
                c /= SQRDX;
            }
            if (c + r) / f < 0.95 * s {
                done = false;
                let inv = 1.0 / f;
                for j in 0..n {
                    m[(i, j)] *= inv;
                }
                for j in 0..n {
                    m[(j, i)] *= f;
                }
                if let Some(di) = d.get_mut(i) {
                    *di *= f;
                }
            }
        }
        if done {
            break;
        }
    }
    (m, d)
}
