//! Eigenvalues of general real matrices: regression tests for the matrices on
//! which an uncapped QR iteration loops, badly scaled matrices, closed forms,
//! NumPy fixtures and invariants (trace, determinant).

#[macro_use]
mod numerics_common;

use lookout_design::numerics::{eigenvalues, spectral_radius};
use nalgebra::{Complex, DMatrix};
use numerics_common::{c, eig_dist, eigs, fixture, m, match_dist};
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use std::f64::consts::PI;

const EPS: f64 = f64::EPSILON;

/// Regression: transposed chain of integrators (nilpotent, one Jordan block of
/// size 3). Exact eigenvalues 0; a perturbation of size ε moves a size-k Jordan
/// block's eigenvalues by ε^{1/k} (common practice bound), so |λ| ≤ 4·ε^{1/3}.
#[test]
fn regression_transposed_integrator_chain_terminates() {
    let a = mat![0.0, 0.0, 0.0; 1.0, 0.0, 0.0; 0.0, 1.0, 0.0];
    let ev = eigenvalues("A", &a).unwrap();
    assert_eq!(ev.len(), 3);
    for z in &ev {
        assert!(z.norm() <= 4.0 * EPS.cbrt(), "{z}");
    }
    // Longer chains, both orientations.
    for n in [2, 4, 6, 8] {
        let low = DMatrix::from_fn(n, n, |i, j| if i == j + 1 { 1.0 } else { 0.0 });
        for a in [low.clone(), low.transpose()] {
            let ev = eigenvalues("A", &a).unwrap();
            assert_eq!(ev.len(), n);
            let bound = 4.0 * EPS.powf(1.0 / n as f64);
            assert!(ev.iter().all(|z| z.norm() <= bound), "n={n}: {ev:?}");
        }
    }
}

/// Regression: [[0,1,0],[1,0,1],[0,1,0]], eigenvalues 0 and ±√2 (closed form:
/// characteristic polynomial −λ³ + 2λ). Symmetric, so errors are ≤ k·ε·‖A‖.
#[test]
fn regression_symmetric_tridiagonal_terminates() {
    let a = mat![0.0, 1.0, 0.0; 1.0, 0.0, 1.0; 0.0, 1.0, 0.0];
    let ev = eigenvalues("A", &a).unwrap();
    let want = [c(-2f64.sqrt(), 0.0), c(0.0, 0.0), c(2f64.sqrt(), 0.0)];
    assert!(eig_dist(&ev, &want, 1.0) <= 16.0 * 3.0 * EPS, "{ev:?}");
}

/// Regression: cyclic permutation matrices of order 2..12; eigenvalues are the
/// n-th roots of unity (closed form), all of modulus 1, well conditioned
/// (normal matrix): errors ≤ k·n·ε.
#[test]
fn regression_cyclic_permutations_terminate() {
    for n in 2..=12usize {
        for shift in [1, n - 1] {
            let a = DMatrix::from_fn(n, n, |i, j| if (i + shift) % n == j { 1.0 } else { 0.0 });
            let ev = eigenvalues("P", &a).unwrap();
            let mut want: Vec<Complex<f64>> = (0..n)
                .map(|k| Complex::from_polar(1.0, 2.0 * PI * k as f64 / n as f64))
                .collect();
            want.iter_mut().for_each(|z| {
                if z.im.abs() < 1e-15 {
                    z.im = 0.0;
                }
            });
            let d = match_dist(&ev, &want);
            assert!(d <= 64.0 * n as f64 * EPS, "n={n}: {d:e}");
            let rho = spectral_radius("P", &a).unwrap();
            assert!((rho - 1.0).abs() <= 64.0 * n as f64 * EPS);
        }
    }
}

/// A few more matrices that defeat unshifted or naively shifted QR: the zero
/// matrix, the identity, a 2×2 rotation (pure imaginary pair), the exchange matrix.
#[test]
fn regression_trivial_and_rotation_cases() {
    let z = eigenvalues("0", &DMatrix::zeros(4, 4)).unwrap();
    assert!(z.iter().all(|v| *v == c(0.0, 0.0)));
    let i = eigenvalues("I", &DMatrix::identity(5, 5)).unwrap();
    assert!(i.iter().all(|v| (*v - c(1.0, 0.0)).norm() <= 4.0 * EPS));
    let r = eigenvalues("R", &mat![0.0, -3.0; 3.0, 0.0]).unwrap();
    assert!(
        eig_dist(&r, &[c(0.0, -3.0), c(0.0, 3.0)], 3.0) <= 8.0 * EPS,
        "{r:?}"
    );
    let j = DMatrix::from_fn(5, 5, |i, k| if i + k == 4 { 1.0 } else { 0.0 });
    let ev = eigenvalues("J", &j).unwrap();
    let want = [
        c(-1.0, 0.0),
        c(-1.0, 0.0),
        c(1.0, 0.0),
        c(1.0, 0.0),
        c(1.0, 0.0),
    ];
    assert!(eig_dist(&ev, &want, 1.0) <= 64.0 * EPS, "{ev:?}");
    assert_eq!(eigenvalues("a", &mat![-2.5]).unwrap(), vec![c(-2.5, 0.0)]);
}

/// Badly scaled: D K D⁻¹ with D = diag(10^-6 … 10^6) and K = Q T Qᵀ, T block
/// upper triangular with known spectrum {−1, −2, 0.5, ±2i, 3}, Q a product of
/// plane rotations. Balancing undoes D (powers of two up to rounding of D), so
/// the error is that of K: ≤ 1e-12·‖K‖ instead of ε·‖D K D⁻¹‖ ≈ 1e-4 unbalanced.
#[test]
fn badly_scaled_similarity_recovers_known_eigenvalues() {
    let n = 6;
    let mut t = DMatrix::<f64>::zeros(n, n);
    let diag = [-1.0, -2.0, 0.5, 0.0, 0.0, 3.0];
    for i in 0..n {
        t[(i, i)] = diag[i];
        for j in (i + 1)..n {
            t[(i, j)] = 0.5 + 0.1 * (i + 2 * j) as f64;
        }
    }
    // 2×2 block [[0, 2], [−2, 0]] at rows 3..5: eigenvalues ±2i.
    t[(3, 4)] = 2.0;
    t[(4, 3)] = -2.0;
    let mut q = DMatrix::<f64>::identity(n, n);
    for k in 0..n - 1 {
        let th = 0.3 + 0.4 * k as f64;
        let mut g = DMatrix::<f64>::identity(n, n);
        g[(k, k)] = th.cos();
        g[(k + 1, k + 1)] = th.cos();
        g[(k, k + 1)] = -th.sin();
        g[(k + 1, k)] = th.sin();
        q *= g;
    }
    let k = &q * &t * q.transpose();
    let d: Vec<f64> = (0..n)
        .map(|i| 10f64.powf(-6.0 + 12.0 * i as f64 / (n - 1) as f64))
        .collect();
    let a = DMatrix::from_fn(n, n, |i, j| d[i] * k[(i, j)] / d[j]);
    assert!(
        a.norm() > 1e10 * k.norm(),
        "the similarity must be badly scaled"
    );
    let ev = eigenvalues("A", &a).unwrap();
    let want = [
        c(-2.0, 0.0),
        c(-1.0, 0.0),
        c(0.0, -2.0),
        c(0.0, 2.0),
        c(0.5, 0.0),
        c(3.0, 0.0),
    ];
    let err = eig_dist(&ev, &want, k.norm());
    assert!(err <= 1e-12, "relative error {err:e}: {ev:?}");
}

/// NumPy fixtures: numpy.linalg.eigvals of A and of Ad for every plant.
/// Distance relative to ‖A‖_F ≤ 1e-10, except the plant with a Jordan block
/// (damped_integrator_chain_3), which is triangular, so both sides are exact.
#[test]
fn numpy_fixture_eigenvalues() {
    for case in &fixture().cases {
        for (name, mat, want) in [
            ("A", m(&case.A), &case.eig_A),
            ("Ad", m(&case.Ad), &case.eig_Ad),
        ] {
            let ev = eigenvalues("A", &mat).unwrap();
            let want = eigs(want);
            // Absolute distance of the greedy match, relative to ‖A‖_F (the
            // scale of the backward error of both computations).
            let d_abs =
                match_dist(&ev, &want) * want.iter().map(|z| z.norm().max(1.0)).fold(1.0, f64::max);
            let d_rel = d_abs / mat.norm().max(1.0);
            assert!(d_rel <= 1e-10, "{} {name}: {d_rel:e}", case.name);
        }
    }
}

fn sorted_ok(ev: &[Complex<f64>]) -> bool {
    ev.windows(2)
        .all(|w| (w[0].re, w[0].im) <= (w[1].re, w[1].im))
}

/// Invariants on seeded random matrices: Σλ = trace and Πλ = det (closed
/// forms), output sorted, pairs exactly conjugate. Bounds: trace error
/// ≤ 64·n·ε·‖A‖_F; determinant relative error ≤ 1e-9 (products of n
/// eigenvalues with condition up to ~1e4 on random matrices).
#[test]
fn invariants_on_random_matrices() {
    let mut runner = TestRunner::new_with_rng(
        Config {
            cases: 64,
            ..Config::default()
        },
        TestRng::from_seed(RngAlgorithm::ChaCha, &[7u8; 32]),
    );
    let strat = (2usize..=8).prop_flat_map(|n| {
        proptest::collection::vec(-3.0f64..3.0, n * n).prop_map(move |v| (n, v))
    });
    runner
        .run(&strat, |(n, v)| {
            let a = DMatrix::from_row_slice(n, n, &v);
            let ev = eigenvalues("A", &a).unwrap();
            prop_assert_eq!(ev.len(), n);
            prop_assert!(sorted_ok(&ev));
            let tr: Complex<f64> = ev.iter().sum();
            prop_assert!((tr.re - a.trace()).abs() <= 64.0 * n as f64 * EPS * a.norm());
            prop_assert!(tr.im.abs() <= 64.0 * n as f64 * EPS * a.norm());
            let det: Complex<f64> = ev.iter().product();
            let want = a.clone().lu().determinant();
            let scale = ev.iter().map(|z| z.norm()).product::<f64>().max(EPS);
            prop_assert!(
                (det.re - want).abs() <= 1e-9 * scale,
                "det {} vs {}",
                det,
                want
            );
            for z in ev.iter().filter(|z| z.im > 0.0) {
                prop_assert!(ev.contains(&z.conj()));
            }
            Ok(())
        })
        .unwrap();
}

#[test]
fn refuses_bad_input() {
    use lookout_design::numerics::NumericsError as E;
    assert!(matches!(
        eigenvalues("A", &DMatrix::zeros(2, 3)),
        Err(E::NotSquare { .. })
    ));
    assert!(matches!(
        eigenvalues("A", &mat![1.0, f64::INFINITY; 0.0, 1.0]),
        Err(E::NonFinite { row: 0, col: 1, .. })
    ));
    assert!(matches!(
        eigenvalues("A", &DMatrix::zeros(0, 0)),
        Err(E::Empty { .. })
    ));
}

/// Regression: two sparse 0/1 matrices (n = 16) from our own stress run that
/// exhausted an EISPACK-sized budget of 60 iterations per eigenvalue
/// (clustered defective eigenvalues converge linearly). They must now succeed;
/// checked by the invariants Σλ = trace (≤ 64·n·ε·‖A‖_F) and the count.
#[test]
fn regression_sparse_zero_one_matrices_need_lapack_budget() {
    let cases: [&[(usize, usize)]; 2] = [
        &[
            (0, 2),
            (0, 4),
            (0, 10),
            (2, 6),
            (2, 9),
            (2, 15),
            (3, 0),
            (4, 1),
            (5, 3),
            (6, 1),
            (6, 13),
            (6, 15),
            (8, 7),
            (10, 0),
            (10, 1),
            (10, 3),
            (10, 7),
            (10, 9),
            (10, 13),
            (11, 8),
            (11, 11),
            (12, 1),
            (13, 6),
            (13, 7),
            (13, 14),
            (14, 3),
            (14, 9),
            (15, 6),
            (15, 10),
            (15, 11),
        ],
        &[
            (0, 0),
            (0, 7),
            (0, 14),
            (1, 0),
            (1, 11),
            (2, 6),
            (2, 9),
            (2, 12),
            (2, 14),
            (3, 5),
            (4, 3),
            (4, 5),
            (4, 6),
            (4, 11),
            (5, 0),
            (5, 11),
            (6, 2),
            (6, 15),
            (7, 12),
            (7, 14),
            (7, 15),
            (8, 2),
            (8, 14),
            (9, 11),
            (11, 9),
            (12, 5),
            (13, 1),
            (15, 14),
            (15, 15),
        ],
    ];
    for nz in cases {
        let mut a = DMatrix::<f64>::zeros(16, 16);
        for &(i, j) in nz {
            a[(i, j)] = 1.0;
        }
        let ev = eigenvalues("A", &a).unwrap();
        assert_eq!(ev.len(), 16);
        let tr: Complex<f64> = ev.iter().sum();
        assert!(
            (tr.re - a.trace()).abs() <= 64.0 * 16.0 * EPS * a.norm(),
            "{tr}"
        );
        assert!(tr.im.abs() <= 64.0 * 16.0 * EPS * a.norm());
    }
}
