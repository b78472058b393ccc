//! On an exact model without noise, the estimation error of each observer
//! form follows its closed-form error recursion (common practice: the error
//! equations of the Luenberger observer and of the current-form filter).

mod common;
use common::*;
use lookout::{
    CurrentObserver, CurrentTables, Matrix, Observer, Plant, PredictorObserver, PredictorTables,
};

// A 3-state scenario of our own (a heater plate: element, plate and sensor
// temperatures above ambient, sampled at 1 s), two inputs (heater power and
// a fan), one output (the sensor) with a small feed-through from the fan
// (invented data).
const A: Rows<3, 3> = [[0.90, 0.08, 0.0], [0.05, 0.93, 0.02], [0.0, 0.10, 0.88]];
const B: Rows<3, 2> = [[0.50, -0.02], [0.0, -0.05], [0.0, 0.0]];
const C: Rows<1, 3> = [[0.0, 0.0, 1.0]];
const D: Rows<1, 2> = [[0.0, 0.01]];
const L: Rows<3, 1> = [[0.9], [0.7], [0.6]];

const PLANT: Plant<f64, 3, 2, 1> = Plant {
    a: Matrix::from_rows(A),
    b: Matrix::from_rows(B),
    c: Matrix::from_rows(C),
    d: Matrix::from_rows(D),
};

fn true_plant(x0: [f64; 3]) -> TruePlant<3, 2, 1> {
    TruePlant {
        a: A,
        b: B,
        c: C,
        d: D,
        x: x0,
    }
}

fn input(k: usize) -> [f64; 2] {
    [
        1.0 + (k as f64 * 0.3).sin(),
        if k % 7 < 3 { 1.0 } else { 0.0 },
    ]
}

/// Error after k steps against (A − L C)^k e0, for 40 steps.
#[test]
fn predictor_error_is_powers_of_a_minus_lc() {
    static TABLES: PredictorTables<f64, 3, 2, 1> = PredictorTables {
        plant: PLANT,
        l: Matrix::from_rows(L),
        gate: None,
    };
    let x0 = [12.0, 8.0, 5.0];
    let mut plant = true_plant(x0);
    let mut observer = PredictorObserver::new(&TABLES, [0.0; 3]);
    let f = sub(&A, &mat_mul(&L, &C));
    let mut expected = x0; // e0 = x0 − 0
    for k in 0..40 {
        let u = input(k);
        let status = observer.step(&u, &plant.output(&u));
        assert!(status.corrected());
        plant.advance(&u);
        expected = mat_vec(&f, &expected);
        let error = vec_sub(&plant.x, observer.estimate());
        // Both sides are rounded sums of terms of size ≤ |x|: 64 ε |x| is ample.
        let tol = 64.0 * f64::EPSILON * norm_inf(&plant.x).max(1.0);
        assert!(
            norm_inf(&vec_sub(&error, &expected)) <= tol,
            "step {k}: {error:?} vs {expected:?}"
        );
    }
}

/// Predicted error after k steps against (A (I − K C))^k e0 and filtered
/// error against (I − K C) of the predicted one.
#[test]
fn current_form_errors_follow_their_recursions() {
    const K: Rows<3, 1> = [[0.5], [0.4], [0.7]];
    static TABLES: CurrentTables<f64, 3, 2, 1> = CurrentTables {
        plant: PLANT,
        k: Matrix::from_rows(K),
        gate: None,
    };
    let x0 = [3.0, -2.0, 6.0];
    let mut plant = true_plant(x0);
    let mut observer = CurrentObserver::new(&TABLES, [0.0; 3]);
    let i_kc = sub(&identity::<3>(), &mat_mul(&K, &C));
    let f = mat_mul(&A, &i_kc);
    let mut predicted_error = x0;
    for k in 0..40 {
        let u = input(k);
        let status = observer.step(&u, &plant.output(&u));
        assert!(status.corrected());
        let filtered_error = vec_sub(&plant.x, observer.filtered());
        let tol = 64.0 * f64::EPSILON * norm_inf(&plant.x).max(1.0);
        assert!(norm_inf(&vec_sub(&filtered_error, &mat_vec(&i_kc, &predicted_error))) <= tol);
        plant.advance(&u);
        predicted_error = mat_vec(&f, &predicted_error);
        let error = vec_sub(&plant.x, observer.predicted());
        assert!(
            norm_inf(&vec_sub(&error, &predicted_error)) <= tol,
            "step {k}"
        );
    }
}

/// The split `correct` / `predict` calls equal `step`, and `predict` without
/// `correct` is a prediction only.
#[test]
fn current_form_split_calls_match_step() {
    static TABLES: CurrentTables<f64, 3, 2, 1> = CurrentTables {
        plant: PLANT,
        k: Matrix::from_rows([[0.5], [0.4], [0.7]]),
        gate: None,
    };
    let mut whole = CurrentObserver::new(&TABLES, [1.0, 2.0, 3.0]);
    let mut split = whole.clone();
    let u = [0.7, 1.0];
    let y = [2.5];
    let a = whole.step(&u, &y);
    let b = split.correct(&u, &y, lookout::ChannelMask::all(1));
    assert_eq!(split.predict(&u), b);
    assert_eq!(a, b);
    assert_eq!(whole.filtered(), split.filtered());
    assert_eq!(whole.predicted(), split.predicted());

    let before = *split.predicted();
    let status = split.predict(&u);
    assert_eq!(status.outcome, lookout::Outcome::PredictedOnly);
    let expected = vec_add(&mat_vec(&A, &before), &mat_vec(&B, &u));
    assert!(norm_inf(&vec_sub(split.predicted(), &expected)) < 1e-12);
}
