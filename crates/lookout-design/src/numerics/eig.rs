//! Eigenvalues of general real matrices.
//!
//! Pipeline: Parlett–Reinsch balancing (`balance.rs`), Householder
//! reduction to upper Hessenberg form (nalgebra's `Hessenberg`, a finite
//! sequence of reflections), then the Francis implicit double-shift QR
//! iteration (J. G. F. Francis, "The QR transformation", Comput. J. 4, 1961/62)
//! in the form of the EISPACK routine `hqr` (Martin, Peters, Wilkinson 1970),
//! with Wilkinson's exceptional shifts every 10 iterations and a hard cap on
//! iterations per eigenvalue, so every call terminates.
//!
//! We do not call nalgebra's `schur()`/`eigenvalues()`: measured on nalgebra
//! 0.35, they have no iteration cap and loop forever on matrices such as the
//! transposed chain of integrators or cyclic permutations, and they do not
//! balance. Those matrices are regression tests in `tests/numerics_eig.rs`.

use super::balance::balance;
use super::checks;
use super::error::{NumericsError, Result};
use nalgebra::{Complex, DMatrix, Hessenberg};

/// Iterations allowed per deflation (per eigenvalue or pair found) are
/// `30·max(10, n)`, the budget LAPACK's `dlahqr` uses. EISPACK's 30 proved too
/// tight: on 20 000 stress matrices (n ≤ 30, sparse 0/1, integer, graded,
/// cyclic, Jordan) two sparse 0/1 matrices with clustered defective
/// eigenvalues needed more (linear convergence). The cap is a termination
/// guarantee, not a tuning knob.
fn iteration_cap(n: usize) -> usize {
    30 * n.max(10)
}

/// All `n` eigenvalues of the square real matrix `a`, complex conjugate pairs
/// included (a pair is returned with exactly opposite imaginary parts).
///
/// Sorted by real part ascending, then imaginary part ascending (IEEE total
/// order), so the output is deterministic. `name` is used in errors.
pub fn eigenvalues(name: &'static str, a: &DMatrix<f64>) -> Result<Vec<Complex<f64>>> {
    let n = checks::square(name, a)?;
    if n == 1 {
        return Ok(vec![Complex::new(a[(0, 0)], 0.0)]);
    }
    let balanced = balance(a);
    let start = if checks::finite(name, &balanced).is_ok() {
        balanced
    } else {
        a.clone()
    };
    let mut h = Hessenberg::new(start).unpack_h();
    let mut ev = francis_double_shift(name, &mut h)?;
    ev.sort_by(|x, y| x.re.total_cmp(&y.re).then(x.im.total_cmp(&y.im)));
    Ok(ev)
}

/// Largest eigenvalue modulus `max |λᵢ|` of the square real matrix `a`.
pub fn spectral_radius(name: &'static str, a: &DMatrix<f64>) -> Result<f64> {
    Ok(eigenvalues(name, a)?
        .iter()
        .map(|z| z.norm())
        .fold(0.0, f64::max))
}

/// Eigenvalues of the upper Hessenberg matrix `h` (n ≥ 2), destroyed on exit.
#[allow(clippy::many_single_char_names)] // the published algorithm's names
fn francis_double_shift(name: &'static str, h: &mut DMatrix<f64>) -> Result<Vec<Complex<f64>>> {
    let n = h.nrows();
    let mut wr = vec![0.0; n];
    let mut wi = vec![0.0; n];
    let mut anorm = 0.0;
    for i in 0..n {
        for j in i.saturating_sub(1)..n {
            anorm += h[(i, j)].abs();
        }
    }
    // Accumulated exceptional shift.
    let mut t = 0.0;
    // `hi + 1` = number of eigenvalues still to find; the active block ends at `hi`.
    let mut remaining = n;
    while remaining > 0 {
        let hi = remaining - 1;
        let mut its = 0;
        loop {
            // Find the top `l` of the unreduced block ending at `hi`.
            let mut l = hi;
            while l >= 1 {
                let mut s = h[(l - 1, l - 1)].abs() + h[(l, l)].abs();
                if s == 0.0 {
                    s = anorm;
                }
                if h[(l, l - 1)].abs() <= f64::EPSILON * s {
                    h[(l, l - 1)] = 0.0;
                    break;
                }
                l -= 1;
            }
            let mut x = h[(hi, hi)];
            if l == hi {
                // One real root.
                wr[hi] = x + t;
                wi[hi] = 0.0;
                remaining -= 1;
                break;
            }
            let mut y = h[(hi - 1, hi - 1)];
            let mut w = h[(hi, hi - 1)] * h[(hi - 1, hi)];
            if l + 1 == hi {
                // A 2×2 block: two real roots or a conjugate pair.
                let p = 0.5 * (y - x);
                let q = p * p + w;
                let z = q.abs().sqrt();
                x += t;
                if q >= 0.0 {
                    let z = p + z.copysign(p);
                    wr[hi - 1] = x + z;
                    wr[hi] = if z != 0.0 { x - w / z } else { x + z };
                    wi[hi - 1] = 0.0;
                    wi[hi] = 0.0;
                } else {
                    wr[hi - 1] = x + p;
                    wr[hi] = x + p;
                    wi[hi - 1] = -z;
                    wi[hi] = z;
                }
                remaining -= 2;
                break;
            }
            if its >= iteration_cap(n) {
                return Err(NumericsError::NoConvergence {
                    routine: "Francis double-shift QR",
                    matrix: name,
                    index: hi,
                    iterations: its,
                    estimate: h[(hi, hi - 1)].abs(),
                });
            }
            if its > 0 && its % 10 == 0 {
                // Exceptional shift (EISPACK hqr): breaks cycles of the
                // standard shift, e.g. on permutation-like matrices.
                t += x;
                for i in 0..=hi {
                    h[(i, i)] -= x;
                }
                let s = h[(hi, hi - 1)].abs() + h[(hi - 1, hi - 2)].abs();
                x = 0.75 * s;
                y = x;
                w = -0.4375 * s * s;
            }
            its += 1;
            // Look for two consecutive small subdiagonal elements, and form
            // the first column of the double-shift polynomial (p, q, r).
            let mut m = hi - 2;
            let (mut p, mut q, mut r);
            loop {
                let z = h[(m, m)];
                let r0 = x - z;
                let s0 = y - z;
                p = (r0 * s0 - w) / h[(m + 1, m)] + h[(m, m + 1)];
                q = h[(m + 1, m + 1)] - z - r0 - s0;
                r = h[(m + 2, m + 1)];
                let s = p.abs() + q.abs() + r.abs();
                p /= s;
                q /= s;
                r /= s;
                if m == l {
                    break;
                }
                let u = h[(m, m - 1)].abs() * (q.abs() + r.abs());
                let v = p.abs() * (h[(m - 1, m - 1)].abs() + z.abs() + h[(m + 1, m + 1)].abs());
                if u <= f64::EPSILON * v {
                    break;
                }
                m -= 1;
            }
            for i in (m + 2)..=hi {
                h[(i, i - 2)] = 0.0;
                if i != m + 2 {
                    h[(i, i - 3)] = 0.0;
                }
            }
            // Double QR step: chase the bulge with 3×3 Householder reflections.
            for k in m..hi {
                if k != m {
                    p = h[(k, k - 1)];
                    q = h[(k + 1, k - 1)];
                    r = if k + 1 != hi { h[(k + 2, k - 1)] } else { 0.0 };
                    x = p.abs() + q.abs() + r.abs();
                    if x != 0.0 {
                        p /= x;
                        q /= x;
                        r /= x;
                    }
                }
                let s = (p * p + q * q + r * r).sqrt().copysign(p);
                if s == 0.0 {
                    continue;
                }
                if k == m {
                    if l != m {
                        h[(k, k - 1)] = -h[(k, k - 1)];
                    }
                } else {
                    h[(k, k - 1)] = -s * x;
                }
                p += s;
                x = p / s;
                y = q / s;
                let z = r / s;
                q /= p;
                r /= p;
                for j in k..=hi {
                    let mut pp = h[(k, j)] + q * h[(k + 1, j)];
                    if k + 1 != hi {
                        pp += r * h[(k + 2, j)];
                        h[(k + 2, j)] -= pp * z;
                    }
                    h[(k + 1, j)] -= pp * y;
                    h[(k, j)] -= pp * x;
                }
                let mmin = hi.min(k + 3);
                for i in l..=mmin {
                    let mut pp = x * h[(i, k)] + y * h[(i, k + 1)];
                    if k + 1 != hi {
                        pp += z * h[(i, k + 2)];
                        h[(i, k + 2)] -= pp * r;
                    }
                    h[(i, k + 1)] -= pp * q;
                    h[(i, k)] -= pp;
                }
            }
        }
    }
    Ok(wr
        .into_iter()
        .zip(wi)
        .map(|(re, im)| Complex::new(re, im))
        .collect())
}
