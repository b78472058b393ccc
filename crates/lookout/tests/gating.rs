//! Innovation gating and the chi-square limits a user would pick.

use lookout::{
    ChannelMask, FusedObserver, FusedTables, Gate, Matrix, Outcome, Plant, PredictorObserver,
    PredictorTables, Recovery, chi_square_limit,
};

/// Upper critical values of the chi-square distribution, as printed in the
/// NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4
/// ("Critical Values of the Chi-Square Distribution"), rounded to three
/// decimals there. Transcribed from memory of that table; rows are degrees of
/// freedom 1 to 10, columns the probabilities below the limit 0.90, 0.95,
/// 0.99 and 0.999. (Our memory first had 26.125 for 8 degrees at 0.999; the
/// even-degree closed form below gives 26.12448, so the table's entry is
/// 26.124.)
const TABLE: [[f64; 4]; 10] = [
    [2.706, 3.841, 6.635, 10.828],
    [4.605, 5.991, 9.210, 13.816],
    [6.251, 7.815, 11.345, 16.266],
    [7.779, 9.488, 13.277, 18.467],
    [9.236, 11.070, 15.086, 20.515],
    [10.645, 12.592, 16.812, 22.458],
    [12.017, 14.067, 18.475, 24.322],
    [13.362, 15.507, 20.090, 26.124],
    [14.684, 16.919, 21.666, 27.877],
    [15.987, 18.307, 23.209, 29.588],
];

#[test]
fn chi_square_limits_match_the_published_table() {
    for (row, dof) in TABLE.iter().zip(1u32..) {
        for (&expected, probability) in row.iter().zip([0.90, 0.95, 0.99, 0.999]) {
            let limit = chi_square_limit(dof, probability).unwrap();
            // The table rounds to 3 decimals: half a unit in the last place.
            assert!(
                (limit - expected).abs() <= 5e-4 + 1e-9,
                "dof {dof}, p {probability}: {limit} vs {expected}"
            );
        }
    }
}

/// Closed forms (common practice): with 2 degrees of freedom the quantile is
/// −2 ln(1 − p); with 1 it is the square of the standard normal quantile
/// (1.959963984540054 for p = 0.95, known to many digits).
#[test]
fn chi_square_limits_match_closed_forms() {
    for p in [0.5, 0.9, 0.99, 0.999_999] {
        let exact = -2.0 * (1.0f64 - p).ln();
        let limit = chi_square_limit(2, p).unwrap();
        assert!(
            (limit - exact).abs() <= 1e-9 * exact,
            "p {p}: {limit} vs {exact}"
        );
    }
    // Even degrees 2k: P(χ² ≤ x) = 1 − e^{−x/2} Σ_{i<k} (x/2)^i / i!.
    for dof in [4u32, 6, 8, 10] {
        for p in [0.9, 0.99, 0.999] {
            let x = chi_square_limit(dof, p).unwrap();
            let h = x / 2.0;
            let mut term = 1.0;
            let mut sum = 0.0;
            for i in 0..dof / 2 {
                if i > 0 {
                    term *= h / f64::from(i);
                }
                sum += term;
            }
            let cdf = 1.0 - (-h).exp() * sum;
            assert!((cdf - p).abs() < 1e-12, "dof {dof}, p {p}: cdf {cdf}");
        }
    }
    let z = 1.959_963_984_540_054_f64;
    assert!((chi_square_limit(1, 0.95).unwrap() - z * z).abs() < 1e-9);
}

#[test]
fn chi_square_limit_refuses_nonsense() {
    assert_eq!(chi_square_limit(0, 0.9), None);
    assert_eq!(chi_square_limit(3, 0.0), None);
    assert_eq!(chi_square_limit(3, 1.0), None);
    assert_eq!(chi_square_limit(3, f64::NAN), None);
}

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
    assert_eq!(obs.innovation(), &[4.0, 1.0]);
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
        let (r, rf) = (pred.innovation(), fused.innovation().unwrap());
        assert!(r.iter().zip(rf).all(|(a, b)| (a - b).abs() < 1e-14));
        assert!((pred.estimate()[0] - fused.estimate()[0]).abs() < 1e-14);
    }
}
