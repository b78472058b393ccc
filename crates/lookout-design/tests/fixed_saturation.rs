//! Saturation: beyond the declared ranges every store clamps (never wraps)
//! and the status counts it. The Q-format limits used as check values
//! (i16 and i32 ranges, full scale −1 … 1 − 2⁻ᶠ) are common practice.

use lookout::{
    Fixed, FixedCurrentObserver, FixedCurrentTables, FixedGate, FixedOutputMap,
    FixedPredictorObserver, FixedPredictorTables, Matrix, Observer, Outcome, Plant,
    PredictorTables, Q15, Q31, Scales,
};
use lookout_design::fixed_point::QuantiseTables as _;

/// An integrator x⁺ = x + ½ u, y = x, with gain `l`; every scale 2⁰.
fn integrator<Q: Fixed>(l: f64) -> FixedPredictorTables<Q, 1, 1, 1> {
    let float = PredictorTables {
        plant: Plant {
            a: Matrix::from_rows([[1.0]]),
            b: Matrix::from_rows([[0.5]]),
            c: Matrix::from_rows([[1.0]]),
            d: Matrix::from_rows([[0.0]]),
        },
        l: Matrix::from_rows([[l]]),
        gate: None,
    };
    FixedPredictorTables::from_float(
        &float,
        Scales {
            state: [0],
            input: [0],
            output: [0],
        },
    )
    .unwrap()
}

/// Full-scale input steps up then down: the state rises monotonically to
/// MAX and stays there, then falls to MIN and stays there; each clamped
/// store counts one saturation.
fn ramps_clamp<Q: Fixed>() {
    let t = integrator::<Q>(0.0);
    let mut o = FixedPredictorObserver::new(&t, [Q::default()]);
    let mut previous = Q::default();
    let mut clamped = 0;
    for _ in 0..8 {
        let status = o.predict(&[Q::MAX]);
        let x = o.estimate()[0];
        assert!(x >= previous, "wrapped: {x:?} after {previous:?}");
        clamped += u32::from(status.saturations);
        previous = x;
    }
    assert_eq!(previous, Q::MAX);
    assert!(clamped >= 5, "{clamped}");
    for _ in 0..8 {
        let status = o.predict(&[Q::MIN]);
        let x = o.estimate()[0];
        assert!(x <= previous, "wrapped: {x:?} after {previous:?}");
        if x == Q::MIN {
            assert_eq!(status.saturations, 1);
        }
        previous = x;
    }
    assert_eq!(previous, Q::MIN);
}

#[test]
fn q15_full_scale_steps_clamp_and_count() {
    ramps_clamp::<Q15>();
    assert_eq!((Q15::MIN, Q15::MAX), (Q15(i16::MIN), Q15(i16::MAX)));
}

#[test]
fn q31_full_scale_steps_clamp_and_count() {
    ramps_clamp::<Q31>();
    assert_eq!((Q31::MIN, Q31::MAX), (Q31(i32::MIN), Q31(i32::MAX)));
}

/// y = MIN against ŷ = MAX: the innovation y − ŷ ≈ −2 saturates at −1,
/// counts, and the state (pulled down by ½ · (−1) from MAX) stays in range.
fn innovation_clamps<Q: Fixed>() {
    let t = integrator::<Q>(0.5);
    let mut o = FixedPredictorObserver::new(&t, [Q::MAX]);
    let status = o.step(&[Q::default()], &[Q::MIN]);
    assert_eq!(status.outcome, Outcome::Corrected);
    assert_eq!(status.saturations, 1);
    assert_eq!(o.innovation(), Some(&[Q::MIN]));
    let x = o.estimate()[0].to_i64();
    // MAX − 2^(F−1) = 2^(F−1) − 1, exactly (one rounding, exact products).
    assert_eq!(x, (1i64 << (Q::FRAC - 1)) - 1);
}

#[test]
fn q15_innovation_from_i16_min_clamps() {
    innovation_clamps::<Q15>();
}

#[test]
fn q31_innovation_from_i32_min_clamps() {
    innovation_clamps::<Q31>();
}

/// A hand-written table that breaks the row-sum rule (four entries of
/// 1 − 2⁻ᶠ with row exponent F, so no shift): the accumulator itself
/// saturates instead of wrapping and the stores clamp with the right sign.
fn accumulator_never_wraps<Q: Fixed>() {
    let e = Q::FRAC as i8;
    let output = FixedOutputMap {
        c: Matrix::from_rows([[Q::MAX; 4]]),
        d: Matrix::from_rows([[Q::MAX]]),
        exp: [e],
    };
    let t = FixedCurrentTables {
        scales: Scales {
            state: [0; 4],
            input: [0],
            output: [0],
        },
        a: Matrix::from_rows([[Q::MAX; 4]; 4]),
        b: Matrix::from_rows([[Q::MAX]; 4]),
        exp: [e; 4],
        k: Matrix::from_rows([[Q::MAX]; 4]),
        k_exp: [e; 4],
        output,
        gate: None::<FixedGate<Q, 1>>,
    };
    for (x0, u, expect) in [
        (Q::MAX, Q::MAX, Q::MAX),
        (Q::MIN, Q::MIN, Q::MIN),
        (Q::MIN, Q::MAX, Q::MIN),
    ] {
        let mut o = FixedCurrentObserver::new(&t, [x0; 4]);
        let status = o.predict(&[u]);
        assert_eq!(status.saturations, 4, "{status:?}");
        // A x + B u with every entry MAX: the sign of 4 x0 + u.
        assert_eq!(o.predicted(), &[expect; 4], "x0 {x0:?}, u {u:?}");
        // With the reading MIN: r = MIN − ŷ clamps to the sign opposite to
        // ŷ's, x + K r clamps to the sign of r, and so does A x + B u.
        let opposite = if expect == Q::MAX { Q::MIN } else { Q::MAX };
        let mut o = FixedCurrentObserver::new(&t, [x0; 4]);
        let status = o.step(&[u], &[Q::MIN]);
        assert!(status.saturations >= 5, "{status:?}");
        assert_eq!(
            (o.innovation().unwrap(), o.filtered(), o.predicted()),
            (&[opposite], &[opposite; 4], &[opposite; 4])
        );
    }
}

#[test]
fn q15_accumulator_saturates_not_wraps() {
    accumulator_never_wraps::<Q15>();
}

#[test]
fn q31_accumulator_saturates_not_wraps() {
    accumulator_never_wraps::<Q31>();
}
