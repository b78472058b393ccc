//! Observability: rank and condition of the observability matrix, PBH test
//! naming the unobservable mode. Closed forms and fixture plants.

#[macro_use]
mod numerics_common;

use lookout_design::numerics::{NumericsError, NumericsWarning, observability};
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

/// A badly scaled but observable chain: O is numerically rank deficient
/// (entries spanning 10⁰..10⁻³⁰), which is a warning, not an error, since PBH passes.
#[test]
fn badly_scaled_chain_warns_instead_of_failing() {
    let s = 1e-10;
    let a = mat![0.0, s, 0.0, 0.0; 0.0, 0.0, s, 0.0; 0.0, 0.0, 0.0, s; 0.0, 0.0, 0.0, 0.0];
    // PBH with C scaled to ‖A‖ (see `pbh_margins`) sees a well-conditioned
    // problem at λ = 0 (all couplings equal), so only the O-rank warning fires.
    let r = observability(&a, &mat![1.0, 0.0, 0.0, 0.0]).unwrap();
    assert!(r.rank < 4, "rank {}", r.rank);
    assert!(
        r.warnings
            .iter()
            .any(|w| matches!(w, NumericsWarning::ObservabilityMatrixRankDeficient { .. }))
    );
    assert!(r.modes.iter().all(|md| md.relative_sigma_min > 1e-3));
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
