//! Innovation gating (the chi-square limits a user would pick are tested in
//! lookout-design's `tests/chi_square.rs`).

use lookout::{
    ChannelMask, FusedObserver, FusedTables, Gate, Matrix, Observer, Outcome, Plant,
    PredictorObserver, PredictorTables, Recovery,
};

// Two outputs of one state (invented): S = diag(4, 1), so S⁻¹ = diag(1/4, 1).
const GATE: Gate<f64, 2> = Gate {
    s_inv: Matrix::from_rows([[0.25, 0.0], [0.0, 1.0]]),
    limit: 5.991, // χ²₂ at 0.95 (table above)
    channel_inv_variance: [0.25, 1.0],
    channel_limit: 3.841, // χ²₁ at 0.95
    recovery: Recovery::none(0.0),
};
const PLANT: Plant<f64, 1, 1, 2> = Plant {
    a: Matrix::from_rows([[0.9]]),
    b: Matrix::from_rows([[0.1]]),
    c: Matrix::from_rows([[1.0], [1.0]]),
    d: Matrix::from_rows([[0.0], [0.0]]),
};
static TABLES: PredictorTables<f64, 1, 1, 2> = PredictorTables {
    plant: PLANT,
    l: Matrix::from_rows([[0.3, 0.2]]),
    gate: Some(GATE),
};

#[test]
fn gate_applies_consistent_and_refuses_outlying_measurements() {
    // ν = 4²/4 + 1²/1 = 5 ≤ 5.991: applied.
    let mut obs = PredictorObserver::new(&TABLES, [0.0]);
    let s = obs.step(&[0.0], &[4.0, 1.0]);
    assert_eq!(s.outcome, Outcome::Corrected);
    assert_eq!(obs.innovation(), Some(&[4.0, 1.0]));
    assert!((obs.estimate()[0] - (0.3 * 4.0 + 0.2 * 1.0)).abs() < 1e-15);

    // ν = 4²/4 + 2²/1 = 8 > 5.991: gated, prediction only.
    let mut obs = PredictorObserver::new(&TABLES, [1.0]);
    let s = obs.step(&[0.0], &[5.0, 3.0]);
    assert_eq!(s.outcome, Outcome::Gated);
    assert!(s.used.is_empty());
    assert_eq!(obs.estimate(), &[0.9]);

    // Second channel missing: the first alone, r² / S₁₁ = 3²/4 = 2.25 ≤ 3.841.
    let mut obs = PredictorObserver::new(&TABLES, [0.0]);
    let s = obs.step(&[0.0], &[3.0, f64::NAN]);
    assert_eq!(s.outcome, Outcome::Corrected);
    assert_eq!(s.used, ChannelMask::NONE.with(0));
    assert_eq!(s.missing, ChannelMask::NONE.with(1));
    // … and 4.5²/4 = 5.06 > 3.841 is gated.
    let s = obs.step_masked(
        &[0.0],
        &[4.5 + 0.9 * obs.estimate()[0], 0.0],
        ChannelMask::NONE.with(0),
    );
    assert_eq!(s.outcome, Outcome::Gated);
}

#[test]
fn fused_gate_agrees_with_the_predictor() {
    static FUSED: FusedTables<f64, 1, 1, 2> = FusedTables {
        f: Matrix::from_rows([[0.9 - 0.3 - 0.2]]),
        g: Matrix::from_rows([[0.1]]),
        h: Matrix::from_rows([[0.3, 0.2]]),
        c: Matrix::from_rows([[1.0], [1.0]]),
        d: Matrix::from_rows([[0.0], [0.0]]),
        gate: Some(GATE),
    };
    let mut pred = PredictorObserver::new(&TABLES, [0.5]);
    let mut fused = FusedObserver::new(&FUSED, [0.5]);
    let readings = [
        [4.0, 1.0],
        [9.0, 0.5],
        [1.0, f64::NAN],
        [0.2, 0.1],
        [6.0, -3.0],
    ];
    for y in readings {
        let (a, b) = (pred.step(&[1.0], &y), fused.step(&[1.0], &y));
        assert_eq!(a, b, "reading {y:?}");
        let (r, rf) = (pred.innovation().unwrap(), fused.innovation().unwrap());
        assert!(r.iter().zip(rf).all(|(a, b)| (a - b).abs() < 1e-14));
        assert!((pred.estimate()[0] - fused.estimate()[0]).abs() < 1e-14);
    }
}
