//! Matrix exponential on published hard cases: SciPy's own expm test
//! matrices (scipy/sparse/linalg/tests/test_matfuncs.py, SciPy 1.17, which
//! collects John Burkardt's set) and Moler's badly scaled 3×3 example
//! (C. Moler, "A balancing act for the matrix exponential", 2012) scaled to
//! ‖M‖₁ = 1e6 … 1e9. References in `tests/fixtures/expm_hard_cases.json`,
//! written by `tools/fixtures/make_expm_fixtures.py`: scipy.linalg.expm and
//! mpmath.expm at 60 digits, rounded to f64. Errors are relative in the
//! 1-norm, ‖X − X_ref‖₁ / ‖X_ref‖₁.

#[macro_use]
mod numerics_common;

use lookout_design::numerics::{EXPM_TOLERANCE, NumericsError, expm_with_estimate, zoh};
use nalgebra::DMatrix;
use numerics_common::m;
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use serde::Deserialize;

#[derive(Debug, Deserialize)]
#[allow(non_snake_case)]
struct Case {
    name: String,
    source: String,
    M: Vec<Vec<f64>>,
    scipy: Vec<Vec<f64>>,
    reference: Vec<Vec<f64>>,
}

#[derive(Debug, Deserialize)]
struct Fixture {
    cases: Vec<Case>,
}

fn cases() -> Vec<Case> {
    let text = include_str!("fixtures/expm_hard_cases.json");
    let f: Fixture = serde_json::from_str(text).expect("fixture parses");
    f.cases
}

fn norm1(x: &DMatrix<f64>) -> f64 {
    x.column_iter()
        .map(|c| c.iter().map(|v| v.abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

fn rel1(x: &DMatrix<f64>, y: &DMatrix<f64>) -> f64 {
    norm1(&(x - y)) / norm1(y)
}

/// Every case is either accurate to 1e-12 against the high-precision value
/// and within its own estimate (times 100, since the estimate is not a bound)
/// or refused with a reason; none is silently wrong.
#[test]
fn published_hard_cases_are_right_or_refused() {
    for case in cases() {
        let mm = m(&case.M);
        let reference = m(&case.reference);
        match expm_with_estimate("M", &mm) {
            Ok(e) => {
                let err = rel1(&e.value, &reference);
                println!(
                    "{:40} err {err:.2e} vs mpmath, {:.2e} vs scipy, estimate {:.2e}, m={} s={} balanced={}",
                    case.name,
                    rel1(&e.value, &m(&case.scipy)),
                    e.relative_error_estimate,
                    e.degree,
                    e.squarings,
                    e.balanced
                );
                assert!(
                    err <= 1e-12,
                    "{} ({}): error {err:e}",
                    case.name,
                    case.source
                );
                assert!(e.relative_error_estimate <= EXPM_TOLERANCE);
            }
            Err(e) => {
                println!("{:40} refused: {e}", case.name);
                assert!(
                    matches!(
                        e,
                        NumericsError::TooLarge { .. } | NumericsError::ExpmInaccurate { .. }
                    ),
                    "{}: {e}",
                    case.name
                );
            }
        }
    }
}

/// Issue 18's done-when: Moler's example at ‖A·T‖₁ = 1e6 … 1e9 gives `Ad`
/// within 1e-12 (relative, 1-norm) of SciPy's expm, through the zero-order
/// hold itself (B = first unit column; Ad is read off the block exponential).
#[test]
fn moler_example_sampled_matches_scipy() {
    let all = cases();
    let moler = all
        .iter()
        .find(|c| c.name == "burkardt_14_moler")
        .expect("Moler's matrix in the fixture");
    let a = m(&moler.M);
    let b = DMatrix::from_fn(3, 1, |i, _| if i == 0 { 1.0 } else { 0.0 });
    let mut checked = 0;
    for case in all.iter().filter(|c| c.name.starts_with("moler_norm_")) {
        let mt = m(&case.M);
        // The fixture stores M = A·T rounded; recover T from one entry.
        let t = mt[(1, 2)] / a[(1, 2)];
        assert!(rel1(&(&a * t), &mt) <= 1e-15, "{}", case.name);
        let (ad, _) = zoh(&a, &b, t).unwrap_or_else(|e| panic!("{}: {e}", case.name));
        let vs_scipy = rel1(&ad, &m(&case.scipy));
        let vs_ref = rel1(&ad, &m(&case.reference));
        println!(
            "{}: Ad rel. error {vs_scipy:.2e} vs scipy, {vs_ref:.2e} vs mpmath",
            case.name
        );
        assert!(vs_scipy <= 1e-12 && vs_ref <= 1e-12, "{}", case.name);
        checked += 1;
    }
    assert_eq!(checked, 4);
}

fn random_matrix(rng: &mut TestRng, n: usize, scale: f64) -> DMatrix<f64> {
    DMatrix::from_fn(n, n, |_, _| (rng.random::<f64>() * 2.0 - 1.0) * scale)
}

/// Balancing and the choice of scaling leave the result unchanged to
/// rounding on well-scaled random matrices: exp(D⁻¹AD) = D⁻¹exp(A)D for a
/// power-of-two diagonal D (exact), and exp(A) = exp(A/2)² (closed forms).
/// Tolerance 64·n·ε·‖A‖₁-relative (k = 64 stated; squaring and the Padé
/// solve each lose a few multiples of n·ε·‖A‖₁).
#[test]
fn balancing_and_scaling_do_not_change_the_result() {
    let mut runner = TestRunner::new_with_rng(
        Config {
            cases: 64,
            ..Config::default()
        },
        TestRng::from_seed(RngAlgorithm::ChaCha, &[18; 32]),
    );
    runner
        .run(
            &(2usize..9, 0.05f64..3.0, any::<u64>()),
            |(n, scale, seed)| {
                let mut rng = TestRng::from_seed(RngAlgorithm::ChaCha, &seed_bytes(seed));
                let a = random_matrix(&mut rng, n, scale);
                let d: Vec<f64> = (0..n).map(|i| 2.0_f64.powi((i as i32 % 5) - 2)).collect();
                let da = DMatrix::from_fn(n, n, |i, j| a[(i, j)] * d[j] / d[i]);
                let e = expm_with_estimate("A", &a).unwrap().value;
                let ed = expm_with_estimate("D⁻¹AD", &da).unwrap().value;
                let back = DMatrix::from_fn(n, n, |i, j| ed[(i, j)] * d[i] / d[j]);
                let half = expm_with_estimate("A/2", &(&a * 0.5)).unwrap().value;
                let tol = 64.0 * n as f64 * f64::EPSILON * (1.0 + norm1(&a));
                prop_assert!(rel1(&back, &e) <= tol, "balanced: {}", rel1(&back, &e));
                prop_assert!(rel1(&(&half * &half), &e) <= tol, "halved");
                Ok(())
            },
        )
        .unwrap();
}

fn seed_bytes(seed: u64) -> [u8; 32] {
    let mut out = [0u8; 32];
    for (i, b) in out.iter_mut().enumerate() {
        *b = (seed >> ((i % 8) * 8)) as u8;
    }
    out
}

/// Van Loan's block for a stiff plant at a long period (issue 18): exp(−A T)
/// grows like e^{‖A T‖} while Q_d does not, which cost digits (2e-6 relative
/// at ‖A T‖ = 100) or overflowed (‖A T‖ ≳ 700). Closed form for
/// A = diag(−λ₁, −λ₂), G = I, Q_c = I: Q_d = diag((1 − e^{−2λᵢT}) / (2λᵢ)).
/// Tolerance 64·ε·‖A T‖₁ relative (k = 64): the 2ᵏ ≈ ‖A T‖₁ period
/// doublings multiply A_d(h) ≈ I − A h, whose slow modes are stored to ε
/// absolute, so their relative error grows like 2ᵏ·ε (the same loss as in the
/// squaring phase of any scaling-and-squaring exponential).
#[test]
fn van_loan_stiff_closed_form_issue_18() {
    use lookout_design::numerics::van_loan_process_noise;
    for &(fast, t) in &[
        (1e4_f64, 0.01_f64),
        (1e5, 0.01),
        (1e6, 0.001),
        (1e3, 1.0),
        (1e8, 1.0),
    ] {
        let a = DMatrix::from_row_slice(2, 2, &[-fast, 0.0, 0.0, -1.0]);
        let id = DMatrix::<f64>::identity(2, 2);
        let qd = van_loan_process_noise(&a, &id, &id, t).unwrap();
        let exact = |l: f64| -(-2.0 * l * t).exp_m1() / (2.0 * l);
        let tol = 64.0 * f64::EPSILON * fast * t;
        for (i, l) in [(0, fast), (1, 1.0)] {
            let r = (qd[(i, i)] - exact(l)).abs() / exact(l);
            println!("λ={l:e} T={t}: Qd relative error {r:.2e}");
            assert!(r <= tol, "λ={l} T={t}: {r:e}");
        }
        assert!(qd[(0, 1)].abs() <= tol * exact(fast));
    }
}
