//! The float steps' fast path tests the finiteness of its inputs once, on
//! their sum. These pin the cases where that sum is not finite although the
//! step must still use every input (finite values whose sum overflows), and
//! where one input is not finite (the contract: a non-finite input is
//! refused, a non-finite reading counts as missing). Expected values are
//! closed forms: the tables are powers of two, so every product and sum
//! below is exact in IEEE 754 binary32 (common practice).

use lookout::{
    ChannelMask, CurrentObserver, CurrentTables, FusedObserver, FusedTables, Matrix, Outcome,
    Plant, PredictorObserver, PredictorTables,
};

const BIG: f32 = f32::MAX;

/// x⁺ = ½ u + ¼ y₁ + ¼ y₂ (F = 0): with u = y₁ = y₂ = f32::MAX the inputs
/// sum to infinity, yet x⁺ = f32::MAX exactly.
#[test]
fn fused_step_uses_finite_inputs_whose_sum_overflows() {
    let t = FusedTables {
        f: Matrix::from_rows([[0.0f32]]),
        g: Matrix::from_rows([[0.5]]),
        h: Matrix::from_rows([[0.25, 0.25]]),
        c: Matrix::from_rows([[1.0], [1.0]]),
        d: Matrix::ZERO,
        gate: None,
    };
    let mut o = FusedObserver::new(&t, [0.0]);
    let s = o.step(&[BIG], &[BIG, BIG]);
    assert_eq!(s.outcome, Outcome::Corrected);
    assert_eq!(s.used, ChannelMask::all(2));
    assert_eq!(o.estimate(), &[BIG]);

    // A NaN reading is missing (its prediction C x = f32::MAX stands in).
    let s = o.step(&[0.0], &[f32::NAN, 0.0]);
    assert_eq!(
        (s.used, s.missing),
        (ChannelMask::from_bits(0b10), ChannelMask::from_bits(0b01))
    );
    assert_eq!(o.estimate(), &[0.25 * BIG]);
    // An infinite input is refused, the estimate untouched.
    let s = o.step(&[f32::INFINITY], &[0.0, 0.0]);
    assert_eq!(s.outcome, Outcome::InputRejected);
    assert_eq!(o.estimate(), &[0.25 * BIG]);
}

fn plant() -> Plant<f32, 1, 1, 2> {
    // x⁺ = ½ u, y = (0, 0) whatever x: r = y.
    Plant {
        a: Matrix::from_rows([[0.0]]),
        b: Matrix::from_rows([[0.5]]),
        c: Matrix::ZERO,
        d: Matrix::ZERO,
    }
}

/// Predictor x⁺ = ½ u + ¼ r₁ + ¼ r₂ with r = y: the same closed form.
#[test]
fn predictor_step_uses_finite_inputs_whose_sum_overflows() {
    let t = PredictorTables {
        plant: plant(),
        l: Matrix::from_rows([[0.25, 0.25]]),
        gate: None,
    };
    let mut o = PredictorObserver::new(&t, [0.0]);
    let s = o.step(&[BIG], &[BIG, BIG]);
    assert_eq!(
        (s.outcome, s.used),
        (Outcome::Corrected, ChannelMask::all(2))
    );
    assert_eq!(o.estimate(), &[BIG]);
    assert_eq!(o.innovation(), &[BIG, BIG]);
}

/// Current form: x̂[k|k] = x̂ + ¼ r₁ + ¼ r₂ = ½ f32::MAX, then x̂⁺ = ½ u.
#[test]
fn current_step_uses_finite_inputs_whose_sum_overflows() {
    let t = CurrentTables {
        plant: plant(),
        k: Matrix::from_rows([[0.25, 0.25]]),
        gate: None,
    };
    let mut o = CurrentObserver::new(&t, [0.0]);
    let s = o.step(&[BIG], &[BIG, BIG]);
    assert_eq!(
        (s.outcome, s.used),
        (Outcome::Corrected, ChannelMask::all(2))
    );
    assert_eq!(o.filtered(), &[0.5 * BIG]);
    assert_eq!(o.predicted(), &[0.5 * BIG]);
}
