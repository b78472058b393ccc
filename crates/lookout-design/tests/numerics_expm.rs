//! Matrix exponential, zero-order hold and Van Loan process noise against
//! published values, closed forms and SciPy fixtures.

#[macro_use]
mod numerics_common;

use lookout_design::numerics::{EXPM_NORM_LIMIT, NumericsError, expm, van_loan_process_noise, zoh};
use nalgebra::{DMatrix, DVector};
use numerics_common::{fixture, m, rel};

const EPS: f64 = f64::EPSILON;

/// Source: C. Moler and C. Van Loan, "Nineteen dubious ways to compute the
/// exponential of a matrix" (SIAM Review 1978; twenty-five years later, 2003),
/// example A = [[-49, 24], [-64, 31]], exp(A) printed there to 6 significant
/// digits.
#[test]
fn moler_van_loan_example_published_digits() {
    let a = mat![-49.0, 24.0; -64.0, 31.0];
    let e = expm("A", &a).unwrap();
    let published = mat![-0.735759, 0.551819; -1.471518, 1.103638];
    // 6 significant digits printed: half a unit in the last place.
    for (x, y) in e.iter().zip(published.iter()) {
        assert!((x - y).abs() <= 5e-7, "{x} vs {y}");
    }
}

/// Same example, exact closed form: A = V diag(−1, −17) V⁻¹ with V = [[1, 3], [2, 4]]
/// (eigenvectors from (A + I)v = 0 and (A + 17 I)v = 0), so
/// exp(A) = [[−2e⁻¹ + 3e⁻¹⁷, 1.5e⁻¹ − 1.5e⁻¹⁷], [−4e⁻¹ + 4e⁻¹⁷, 3e⁻¹ − 2e⁻¹⁷]].
/// The problem is moderately ill-conditioned (‖A‖ ≈ 100, eigenvector condition
/// ≈ 15); scaling and squaring is accurate to a modest multiple of
/// ε·cond, we require 1e-13 relative.
#[test]
fn moler_van_loan_example_closed_form() {
    let a = mat![-49.0, 24.0; -64.0, 31.0];
    let e = expm("A", &a).unwrap();
    let (e1, e17) = ((-1.0f64).exp(), (-17.0f64).exp());
    let exact = mat![
        -2.0 * e1 + 3.0 * e17, 1.5 * e1 - 1.5 * e17;
        -4.0 * e1 + 4.0 * e17, 3.0 * e1 - 2.0 * e17
    ];
    let r = rel(&e, &exact);
    assert!(r <= 1e-13, "relative error {r:e}");
}

/// exp of a nilpotent matrix is a finite series (closed form), and exp of a
/// diagonal matrix is the diagonal of exponentials: both exercised across the
/// Padé degrees 3..13 by the norm of the input.
#[test]
fn closed_forms_across_pade_degrees() {
    for &s in &[1e-3_f64, 0.1, 0.5, 1.5, 4.0, 30.0, 300.0] {
        let n = mat![0.0, s, 0.0; 0.0, 0.0, s; 0.0, 0.0, 0.0];
        let exact = mat![1.0, s, s * s / 2.0; 0.0, 1.0, s; 0.0, 0.0, 1.0];
        let r = rel(&expm("N", &n).unwrap(), &exact);
        // Squaring amplifies rounding by about the number of squarings.
        assert!(
            r <= 64.0 * 3.0 * EPS * (1.0 + s.log2().max(0.0)),
            "s={s}: {r:e}"
        );
        let d = DMatrix::from_diagonal(&DVector::from_vec(vec![-s, 0.3 * s, -2.0 * s]));
        let exact = DMatrix::from_diagonal(&DVector::from_vec(vec![
            (-s).exp(),
            (0.3 * s).exp(),
            (-2.0 * s).exp(),
        ]));
        let r = rel(&expm("D", &d).unwrap(), &exact);
        assert!(r <= 64.0 * 3.0 * EPS * (1.0 + s), "s={s}: {r:e}");
    }
}

/// Double integrator: Ad = [[1, T], [0, 1]], Bd = [[T²/2], [T]] exactly.
#[test]
fn zoh_double_integrator() {
    for &t in &[1e-4, 0.01, 0.1, 1.0, 10.0] {
        let (ad, bd) = zoh(&mat![0.0, 1.0; 0.0, 0.0], &mat![0.0; 1.0], t).unwrap();
        assert!(rel(&ad, &mat![1.0, t; 0.0, 1.0]) <= 8.0 * EPS, "T={t}");
        assert!(rel(&bd, &mat![t * t / 2.0; t]) <= 8.0 * EPS, "T={t}");
    }
}

/// First-order lag ẋ = −x/τ + b u: Ad = e^{−T/τ}, Bd = τ(1 − e^{−T/τ}) b.
#[test]
fn zoh_first_order_lag() {
    for &(tau, t, b) in &[
        (0.5, 0.01, 2.0),
        (0.02, 0.001, 1.0),
        (3.0, 0.5, -0.7),
        (1e-3, 0.1, 1.0),
    ] {
        let (ad, bd) = zoh(&mat![-1.0 / tau], &mat![b], t).unwrap();
        let e = (-t / tau).exp();
        let bd_exact = tau * (-(-t / tau).exp_m1()) * b;
        // Backward error of scaling and squaring is ε-relative to ‖A T‖, so the
        // forward relative error of e^{aT} is about ε·|aT| (condition of exp).
        let bound = 16.0 * EPS * (t / tau).max(1.0);
        let got = (ad[(0, 0)] - e).abs() / e;
        assert!(got <= bound, "τ={tau}: {got:e} > {bound:e}");
        assert!(
            (bd[(0, 0)] - bd_exact).abs() <= 16.0 * EPS * bd_exact.abs(),
            "τ={tau}"
        );
    }
}

/// Scalar Van Loan: ẋ = a x + w, spectral density q: Qd = q (e^{2aT} − 1) / (2a).
#[test]
fn van_loan_scalar_closed_form() {
    for &(a, q, t) in &[(-1.0, 2.0, 0.1), (-50.0, 1.0, 0.01), (0.3, 0.5, 1.0)] {
        let qd = van_loan_process_noise(&mat![a], &mat![1.0], &mat![q], t).unwrap();
        let exact = q * (2.0 * a * t).exp_m1() / (2.0 * a);
        assert!(
            (qd[(0, 0)] - exact).abs() <= 64.0 * EPS * exact.abs(),
            "a={a}: {} vs {exact}",
            qd[(0, 0)]
        );
    }
}

/// Double integrator driven by white acceleration of density q:
/// Qd = q [[T³/3, T²/2], [T²/2, T]] (closed form of the Van Loan integral).
#[test]
fn van_loan_double_integrator_closed_form() {
    let (q, t) = (0.7, 0.05);
    let qd =
        van_loan_process_noise(&mat![0.0, 1.0; 0.0, 0.0], &mat![0.0; 1.0], &mat![q], t).unwrap();
    let exact = mat![t.powi(3) / 3.0, t * t / 2.0; t * t / 2.0, t] * q;
    assert!(rel(&qd, &exact) <= 64.0 * EPS, "{qd} vs {exact}");
}

/// SciPy fixtures: scipy.linalg.expm(A T), scipy.signal.cont2discrete(zoh),
/// Van Loan Qd by scipy.linalg.expm of the block matrix. All plants are well
/// conditioned for the exponential (‖A T‖ ≤ 1.3): 1e-10 relative.
#[test]
fn scipy_fixtures_expm_zoh_van_loan() {
    let fx = fixture();
    assert!(fx.cases.len() >= 10);
    assert!(!fx.scipy_version.is_empty() && !fx.numpy_version.is_empty());
    let mut worst = (0.0_f64, String::new());
    for case in &fx.cases {
        let (a, b, g, qc) = (m(&case.A), m(&case.B), m(&case.G), m(&case.Qc));
        let e = expm("A T", &(&a * case.T)).unwrap();
        let r1 = rel(&e, &m(&case.expm_AT));
        let (ad, bd) = zoh(&a, &b, case.T).unwrap();
        let r2 = rel(&ad, &m(&case.Ad));
        let r3 = rel(&bd, &m(&case.Bd));
        let qd = van_loan_process_noise(&a, &g, &qc, case.T).unwrap();
        let r4 = rel(&qd, &m(&case.Qd));
        for (what, r) in [("expm", r1), ("Ad", r2), ("Bd", r3), ("Qd", r4)] {
            assert!(
                r <= 1e-10,
                "{}: {what} relative difference {r:e}",
                case.name
            );
            if r > worst.0 {
                worst = (r, format!("{} {what}", case.name));
            }
        }
    }
    eprintln!(
        "worst relative difference to SciPy: {:e} ({})",
        worst.0, worst.1
    );
}

#[test]
fn refuses_bad_input_without_panicking() {
    let nan = mat![0.0, f64::NAN; 0.0, 0.0];
    assert!(matches!(
        expm("A", &nan),
        Err(NumericsError::NonFinite { row: 0, col: 1, .. })
    ));
    let big = mat![0.0, 2.0 * EXPM_NORM_LIMIT; 0.0, 0.0];
    assert!(matches!(
        expm("A", &big),
        Err(NumericsError::TooLarge { .. })
    ));
    let ns = DMatrix::<f64>::zeros(2, 3);
    assert!(matches!(
        expm("A", &ns),
        Err(NumericsError::NotSquare {
            rows: 2,
            cols: 3,
            ..
        })
    ));
    assert!(matches!(
        expm("A", &DMatrix::zeros(0, 0)),
        Err(NumericsError::Empty { .. })
    ));
    // exp(800) overflows: reported, not returned as inf.
    assert!(matches!(
        expm("A", &mat![800.0]),
        Err(NumericsError::NonFinite { .. })
    ));
    let a = mat![0.0, 1.0; 0.0, 0.0];
    assert!(matches!(
        zoh(&a, &mat![1.0], 0.1),
        Err(NumericsError::DimensionMismatch { .. })
    ));
    assert!(matches!(
        zoh(&a, &mat![0.0; 1.0], -0.1),
        Err(NumericsError::BadParameter { name: "T", .. })
    ));
    assert!(matches!(
        zoh(&a, &mat![0.0; 1.0], f64::NAN),
        Err(NumericsError::BadParameter { .. })
    ));
    let g = mat![0.0; 1.0];
    assert!(matches!(
        van_loan_process_noise(&a, &g, &mat![-1.0], 0.1),
        Err(NumericsError::NotDefinite { matrix: "Qc", .. })
    ));
    let g2 = DMatrix::<f64>::identity(2, 2);
    assert!(matches!(
        van_loan_process_noise(&a, &g2, &mat![1.0, 0.5; 0.0, 1.0], 0.1),
        Err(NumericsError::NotSymmetric { matrix: "Qc", .. })
    ));
}
