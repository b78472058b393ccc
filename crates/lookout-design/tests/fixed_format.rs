//! The number format. Q-format facts used as check values (ranges,
//! resolution 2⁻¹⁵ and 2⁻³¹, saturation limits) are common practice.

use lookout::{
    Fixed, FixedPredictorObserver, FixedPredictorTables, Gate, Matrix, Observer, Plant,
    PredictorTables, Q15, Q31, Scales, TableName, Wide,
};
use lookout_design::fixed_point::{ConvertError, QuantiseTables as _};

#[test]
fn ranges_and_resolution_are_the_usual_q_formats() {
    // Common practice: Q15 spans [−1, 1 − 2⁻¹⁵], Q31 [−1, 1 − 2⁻³¹].
    assert_eq!(Q15::MIN.to_real(0), -1.0);
    assert_eq!(Q15::MAX.to_real(0), 1.0 - 2f64.powi(-15));
    assert_eq!(Q31::MIN.to_real(0), -1.0);
    assert_eq!(Q31::MAX.to_real(0), 1.0 - 2f64.powi(-31));
    assert_eq!(Q15(1).to_real(0), 2f64.powi(-15));
    assert_eq!(Q31(1).to_real(0), 2f64.powi(-31));
    assert_eq!(Q15::from_real(1.0, 0), None);
    assert_eq!(Q31::from_real(f64::NAN, 0), None);
    assert_eq!(Q31::from_real(3.0, 2), Some(Q31(3 << 29)));
}

#[test]
fn rounding_is_half_up() {
    // (s + 2^(k−1)) >> k: ties go up, also for negative values.
    assert_eq!(5i32.round_shr(1), 3); // 2.5 → 3
    assert_eq!((-5i32).round_shr(1), -2); // −2.5 → −2
    assert_eq!((-7i64).round_shr(2), -2); // −1.75 → −2
    assert_eq!(i64::MAX.round_shr(1), i64::MAX >> 1); // the add saturates
    assert_eq!(Q15::from_real(2.5 * 2f64.powi(-15), 0), Some(Q15(3)));
    assert_eq!(Q15::from_real(-2.5 * 2f64.powi(-15), 0), Some(Q15(-2)));
}

#[test]
fn adc_counts_map_by_offset_and_shift() {
    // 12-bit converter, mid-scale offset, output in counts (s_y = 11).
    assert_eq!(Q15::from_counts(4095, 2048, 11), Q15(2047 << 4));
    assert_eq!(Q31::from_counts(0, 2048, 11), Q31::MIN);
    // Unipolar 16-bit counts (s_y = 16) into Q15 lose one bit, rounded.
    assert_eq!(Q15::from_counts(3, 0, 16), Q15(2));
    // Beyond the declared range: saturated.
    assert_eq!(Q15::from_counts(5000, 0, 11), Q15::MAX);
}

fn plant(a: f64) -> Plant<f64, 1, 1, 1> {
    Plant {
        a: Matrix::from_rows([[a]]),
        b: Matrix::from_rows([[0.0]]),
        c: Matrix::from_rows([[1.0]]),
        d: Matrix::from_rows([[0.0]]),
    }
}

const ZERO_SCALES: Scales<1, 1, 1> = Scales {
    state: [0],
    input: [0],
    output: [0],
};

#[test]
fn conversion_errors_name_table_index_and_condition() {
    let bad = PredictorTables {
        plant: plant(f64::NAN),
        l: Matrix::from_rows([[0.5]]),
        gate: None,
    };
    assert_eq!(
        FixedPredictorTables::<Q31, 1, 1, 1>::from_float(&bad, ZERO_SCALES),
        Err(ConvertError::NotFinite {
            table: TableName::A,
            row: 0,
            col: 0
        })
    );
    let huge = PredictorTables {
        plant: plant(1e12),
        l: Matrix::from_rows([[0.5]]),
        gate: None,
    };
    assert!(matches!(
        FixedPredictorTables::<Q15, 1, 1, 1>::from_float(&huge, ZERO_SCALES),
        Err(ConvertError::RowTooLarge {
            table: TableName::A,
            row: 0,
            ..
        })
    ));
    let gate = Gate {
        s_inv: Matrix::from_rows([[-1.0]]),
        limit: 4.0,
        channel_inv_variance: [1.0],
        channel_limit: 4.0,
        recovery: lookout::Recovery::none(0.0),
    };
    let gated = PredictorTables {
        plant: plant(0.5),
        l: Matrix::from_rows([[0.5]]),
        gate: Some(gate),
    };
    assert!(matches!(
        FixedPredictorTables::<Q31, 1, 1, 1>::from_float(&gated, ZERO_SCALES),
        Err(ConvertError::NotPositiveDefinite { index: 0, .. })
    ));
}

/// The row-sum rule keeps the accumulator exact in the worst case: a row
/// whose entries all have the largest magnitude and sign opposite to
/// full-scale inputs. Checked against exact i128 arithmetic.
#[test]
fn worst_case_row_does_not_overflow_the_accumulator() {
    const N: usize = 8;
    let a = [[-1.0 / N as f64; N]; N];
    let t = PredictorTables {
        plant: Plant {
            a: Matrix::from_rows(a),
            b: Matrix::from_rows([[0.0]; N]),
            c: Matrix::from_rows([[0.0; N]]),
            d: Matrix::from_rows([[0.0]]),
        },
        l: Matrix::from_rows([[0.0]; N]),
        gate: None,
    };
    let s = Scales {
        state: [0; N],
        input: [0],
        output: [0],
    };
    let q = FixedPredictorTables::<Q31, N, 1, 1>::from_float(&t, s).unwrap();
    let mut o = FixedPredictorObserver::new(&q, [Q31::MIN; N]);
    let status = o.predict(&[Q31::MIN]);
    let row = q.a.to_rows()[0];
    let exact: i128 = row
        .iter()
        .map(|e| i128::from(e.0) * i128::from(i32::MIN))
        .sum();
    let k = 31 - i32::from(q.exp[0]);
    let expected = (exact + (1i128 << (k - 1)))
        .div_euclid(1i128 << k)
        .min(i128::from(i32::MAX));
    assert_eq!(i128::from(o.estimate()[0].0), expected);
    // The exact result is +1 of full scale, one LSB beyond MAX: one clamp
    // per state, nothing wrapped.
    assert_eq!((o.estimate()[0], status.saturations), (Q31::MAX, N as u16));
}
