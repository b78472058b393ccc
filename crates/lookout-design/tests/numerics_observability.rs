//! Observability: rank and condition of the observability matrix, PBH test
//! naming the unobservable mode. Closed forms and fixture plants.

#[macro_use]
mod numerics_common;

use lookout_design::numerics::{NumericsError, NumericsWarning, observability};
use nalgebra::DMatrix;
use numerics_common::{fixture, m};

/// Double integrator with position measured: O = [[1, 0], [0, 1]] exactly
/// (closed form), so rank 2 and condition 1.
#[test]
fn double_integrator_position_closed_form() {
    let r = observability(&mat![0.0, 1.0; 0.0, 0.0], &mat![1.0, 0.0]).unwrap();
    assert_eq!(r.rank, 2);
    assert!((r.condition - 1.0).abs() <= 4.0 * f64::EPSILON);
    assert!(r.warnings.is_empty());
    assert_eq!(r.modes.len(), 2);
}

/// Velocity only: position is unobservable; the PBH test names the mode λ = 0.
#[test]
fn double_integrator_velocity_only_names_mode_zero() {
    let e = observability(&mat![0.0, 1.0; 0.0, 0.0], &mat![0.0, 1.0]).unwrap_err();
    match e {
        NumericsError::Unobservable {
            eigenvalue,
            relative_sigma_min,
            ..
        } => {
            assert_eq!(eigenvalue.norm(), 0.0);
            assert!(relative_sigma_min <= 1e-15);
        }
        other => panic!("{other}"),
    }
}

/// Two decoupled first-order modes, only the first measured: mode −2 is
/// unobservable (closed form: [−2I − A; C] has a zero column).
#[test]
fn decoupled_modes_name_the_hidden_one() {
    let e = observability(&mat![-1.0, 0.0; 0.0, -2.0], &mat![1.0, 0.0]).unwrap_err();
    let msg = e.to_string();
    match e {
        NumericsError::Unobservable {
            eigenvalue, index, ..
        } => {
            assert_eq!(eigenvalue.re, -2.0);
            assert_eq!(index, 0, "sorted spectrum: −2 first");
        }
        other => panic!("{other}"),
    }
    assert!(msg.contains("-2") && msg.contains("unobservable"), "{msg}");
}

/// An oscillator that the output does not see: the complex pair ±i is named.
#[test]
fn hidden_oscillator_is_named_as_complex_mode() {
    let a = mat![0.0, 1.0, 0.0; -1.0, 0.0, 0.0; 0.0, 0.0, -0.5];
    let e = observability(&a, &mat![0.0, 0.0, 1.0]).unwrap_err();
    match e {
        NumericsError::Unobservable { eigenvalue, .. } => {
            assert!(
                (eigenvalue.im.abs() - 1.0).abs() <= 1e-14 && eigenvalue.re.abs() <= 1e-14,
                "{eigenvalue}"
            );
        }
        other => panic!("{other}"),
    }
    // Seen through the oscillator's position: observable.
    assert!(observability(&a, &mat![1.0, 0.0, 1.0]).is_ok());
}

/// Discrete and continuous pairs of every fixture plant are observable from
/// the first output row (the plants were built that way).
#[test]
fn fixture_plants_observable_continuous_and_discrete() {
    for case in &fixture().cases {
        let c1 = m(&case.C).rows(0, 1).into_owned();
        for (what, a) in [("A", m(&case.A)), ("Ad", m(&case.Ad))] {
            let r = observability(&a, &c1).unwrap_or_else(|e| panic!("{} {what}: {e}", case.name));
            assert_eq!(r.modes.len(), a.nrows());
            assert!(r.condition >= 1.0);
            let _ = r.warnings;
        }
        // With all outputs the observability matrix has full numerical rank.
        let r = observability(&m(&case.Ad), &m(&case.C)).unwrap();
        assert_eq!(r.rank, case.A.len(), "{}", case.name);
    }
}

/// A badly scaled but observable chain (couplings 1e-10): the observability
/// matrix's entries span 10⁰..10⁻³⁰ and its numerical rank was 1 (issue 18);
/// the staircase on the normalised pair sees couplings of equal size, so the
/// rank is 4 and the PBH margins are large (closed form at λ = 0: the
/// normalised [−Ã; C̃] has σ_min = 1/√3, σ_max = 1).
#[test]
fn badly_scaled_chain_has_full_rank_issue_18() {
    let s = 1e-10;
    let a = mat![0.0, s, 0.0, 0.0; 0.0, 0.0, s, 0.0; 0.0, 0.0, 0.0, s; 0.0, 0.0, 0.0, 0.0];
    let r = observability(&a, &mat![1.0, 0.0, 0.0, 0.0]).unwrap();
    assert_eq!(r.rank, 4);
    assert!(r.warnings.is_empty(), "{:?}", r.warnings);
    for md in &r.modes {
        assert!((md.relative_sigma_min - 1.0 / 3f64.sqrt()).abs() <= 1e-12);
    }
}

/// Issue 18: C = I gives rank n for any A (closed form: C alone has rank n),
/// at n = 79 and 120 with a random dense A of norm ~1e3, and condition 1/pivot
/// of C̃ = I/√n, i.e. √n, to rounding.
#[test]
fn full_measurement_gives_full_rank_issue_18() {
    for n in [79usize, 120] {
        let a = DMatrix::from_fn(n, n, |i, j| ((i * 31 + j * 17) % 23) as f64 * 50.0 - 500.0);
        let r = observability(&a, &DMatrix::identity(n, n)).unwrap();
        assert_eq!(r.rank, n);
        assert!((r.condition - (n as f64).sqrt()).abs() <= 1e-12 * n as f64);
        assert!(r.modes.is_empty(), "above PBH_MODES_MAX_STATES");
        // σ_min(I/√n)/3, closed form.
        let bound = r.pbh_lower_bound.unwrap();
        assert!((bound - 1.0 / (3.0 * (n as f64).sqrt())).abs() <= 1e-14);
        assert!(r.warnings.is_empty(), "{:?}", r.warnings);
    }
    // One output on 50 states: no bound, and the report says the per-mode
    // test was not made.
    let n = 50;
    let a = DMatrix::from_fn(n, n, |i, j| if j == i + 1 { 1.0 } else { 0.0 });
    let c = DMatrix::from_fn(1, n, |_, j| if j == 0 { 1.0 } else { 0.0 });
    let r = observability(&a, &c).unwrap();
    assert_eq!(r.rank, n);
    assert_eq!(r.smallest_pbh_margin(), None);
    assert!(
        r.warnings
            .iter()
            .any(|w| matches!(w, NumericsWarning::PbhNotChecked { states: 50, .. }))
    );
}

/// Issue 18: the chain of integrators sampled at T from 1e-9 to 1 is
/// observable from its first state (closed form: Ad = exp(N T) is upper
/// triangular with superdiagonal T), and the rank does not depend on T.
#[test]
fn sampled_chain_rank_is_independent_of_the_period_issue_18() {
    let n = 6;
    let c = DMatrix::from_fn(1, n, |_, j| if j == 0 { 1.0 } else { 0.0 });
    for t in [1e-9_f64, 1e-6, 1e-3, 1.0] {
        // exp(N T) = Σ (N T)^k / k!: entry (i, j) = T^(j−i)/(j−i)!.
        let ad = DMatrix::from_fn(n, n, |i, j| {
            if j < i {
                0.0
            } else {
                let k = (j - i) as i32;
                t.powi(k) / (1..=k).map(f64::from).product::<f64>()
            }
        });
        let r = observability(&ad, &c).unwrap_or_else(|e| panic!("T={t}: {e}"));
        assert_eq!(r.rank, n, "T={t}");
        assert!(r.condition < 1e3, "T={t}: {}", r.condition);
    }
}

/// Finite inputs whose intermediates overflow in the observability matrix
/// (issue 18: c = [[1, 1e308]], a = [[-1e308]]) give a report, not a panic.
#[test]
fn extreme_finite_inputs_do_not_panic_issue_18() {
    let r = observability(&mat![-1e308], &mat![1.0; 1e308]).unwrap();
    assert_eq!(r.rank, 1);
    let r = observability(&mat![1e308, 1e308; -1e308, 1e-300], &mat![1e308, 1.0]).unwrap();
    assert_eq!(r.rank, 2);
    let tiny = f64::MIN_POSITIVE / 8.0;
    let r = observability(&mat![tiny, tiny; 0.0, tiny], &mat![tiny, 0.0]).unwrap();
    assert_eq!(r.rank, 2);
    assert!(matches!(
        observability(&mat![1e-300, 0.0; 0.0, 1e300], &mat![1.0, 0.0]),
        Err(NumericsError::Unobservable { .. })
    ));
}

/// Random pairs (fixed-seed xorshift) with a planted unobservable mode are
/// refused and those without are accepted (closed form: with A = [[A11, 0],
/// [A21, a22]] and C = [C1, 0], e_n is an eigenvector of A with C e_n = 0).
#[test]
fn planted_unobservable_modes_are_found() {
    let mut state = 0x1234_5678_9abc_def0_u64;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    };
    for trial in 0..40 {
        let n = 2 + trial % 7;
        let hide = trial % 2 == 1;
        let k = if hide { n - 1 } else { n };
        let a = DMatrix::from_fn(n, n, |i, j| if j >= k && i < k { 0.0 } else { next() });
        let c = DMatrix::from_fn(2, n, |_, j| if j >= k { 0.0 } else { next() });
        let r = observability(&a, &c);
        assert_eq!(r.is_err(), hide, "trial {trial}: {r:?}");
    }
}

#[test]
fn refuses_bad_shapes() {
    let a = mat![0.0, 1.0; 0.0, 0.0];
    assert!(matches!(
        observability(&a, &mat![1.0, 0.0, 0.0]),
        Err(NumericsError::DimensionMismatch { matrix: "C", .. })
    ));
    assert!(matches!(
        observability(&mat![0.0, 1.0], &mat![1.0, 0.0]),
        Err(NumericsError::NotSquare { matrix: "A", .. })
    ));
}
