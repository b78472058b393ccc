//! The run-time hand-off (`lookout_design::runtime`) builds exactly the
//! tables the emitter writes. Reference: the generated source of the same
//! model files, compiled into `lookout_suite` by build.rs (an independent
//! path: text written by the emitter, read back by rustc), compared entry
//! for entry and integer for integer, gate included; and zero padding to
//! larger sizes, which must run the design bit for bit as the unpadded
//! emitted tables do (the exactness argument in `runtime`'s module docs).

use lookout::{FixedCurrentObserver, FixedPredictorObserver, Observer, PredictorObserver, Q31};
use lookout_design::design_file;
use lookout_design::runtime::{
    HandoffError, current_tables, fixed_current_tables, fixed_fused_tables, fixed_predictor_tables,
    fused_tables, predictor_tables,
};
use lookout_suite::kalman_q31::conveyor_kalman_q31 as kalman;
use lookout_suite::{conveyor_f32::conveyor as f32_tables, conveyor_f64::conveyor};
use std::path::Path;

#[test]
fn float_tables_equal_the_emitted_ones() {
    let d = design_file(Path::new("examples/conveyor.toml")).unwrap();
    assert_eq!(
        predictor_tables::<f64, 2, 1, 1>(&d).unwrap(),
        conveyor::PREDICTOR
    );
    assert_eq!(fused_tables::<f64, 2, 1, 1>(&d).unwrap(), conveyor::FUSED);
    assert_eq!(
        predictor_tables::<f32, 2, 1, 1>(&d).unwrap(),
        f32_tables::PREDICTOR
    );
    assert_eq!(fused_tables::<f32, 2, 1, 1>(&d).unwrap(), f32_tables::FUSED);
    let k = design_file(Path::new("tests/models/conveyor_kalman_q31.toml")).unwrap();
    assert_eq!(current_tables::<f64, 2, 1, 1>(&k).unwrap(), kalman::CURRENT);
}

#[test]
fn q_tables_equal_the_emitted_integers() {
    let d = design_file(Path::new("examples/conveyor.toml")).unwrap();
    assert_eq!(
        fixed_predictor_tables::<Q31, 2, 1, 1>(&d).unwrap(),
        *conveyor::PREDICTOR_Q31.tables()
    );
    assert_eq!(
        fixed_fused_tables::<Q31, 2, 1, 1>(&d).unwrap(),
        *conveyor::FUSED_Q31.tables()
    );
    // The current form with its innovation gate (W, the limits, the
    // recovery table).
    let k = design_file(Path::new("tests/models/conveyor_kalman_q31.toml")).unwrap();
    let built = fixed_current_tables::<Q31, 2, 1, 1>(&k).unwrap();
    assert!(built.gate.is_some());
    assert_eq!(built, *kalman::CURRENT_Q31.tables());
    assert_eq!(
        fixed_fused_tables::<Q31, 2, 1, 1>(&k).unwrap(),
        *kalman::FUSED_Q31.tables()
    );
}

#[test]
fn wrong_form_and_too_small_sizes_are_refused() {
    let d = design_file(Path::new("examples/conveyor.toml")).unwrap();
    assert!(matches!(
        current_tables::<f64, 2, 1, 1>(&d),
        Err(HandoffError::Form { .. })
    ));
    assert!(matches!(
        predictor_tables::<f64, 1, 1, 1>(&d),
        Err(HandoffError::Size { .. })
    ));
}

/// Padded to 4 states, 2 inputs, 2 outputs, the observers step exactly as
/// the emitted 2 × 1 × 1 tables do (f64 and Q31, predictor; Q31 current
/// with its gate), and the padded states stay exactly zero.
#[test]
fn padded_tables_run_the_design_exactly() {
    let d = design_file(Path::new("examples/conveyor.toml")).unwrap();
    let padded = predictor_tables::<f64, 4, 2, 2>(&d).unwrap();
    let mut small = PredictorObserver::new(&conveyor::PREDICTOR, [0.1, -2.0]);
    let mut big = PredictorObserver::new(&padded, [0.1, -2.0, 0.0, 0.0]);
    let fixed = fixed_predictor_tables::<Q31, 4, 2, 2>(&d).unwrap();
    let mut q_small =
        FixedPredictorObserver::new(conveyor::PREDICTOR_Q31.tables(), [Q31(1 << 20), Q31(-3)]);
    let mut q_big = FixedPredictorObserver::new(&fixed, [Q31(1 << 20), Q31(-3), Q31(0), Q31(0)]);
    let k = design_file(Path::new("tests/models/conveyor_kalman_q31.toml")).unwrap();
    let kq = fixed_current_tables::<Q31, 4, 2, 2>(&k).unwrap();
    let mut k_small = FixedCurrentObserver::new(kalman::CURRENT_Q31.tables(), [Q31(0); 2]);
    let mut k_big = FixedCurrentObserver::new(&kq, [Q31(0); 4]);
    for step in 0..500_i32 {
        let u = f64::from(step % 7) - 3.0;
        let y = 0.01 * f64::from(step);
        let (uq, yq) = (
            Q31(step.wrapping_mul(1 << 21)),
            Q31(step.wrapping_mul(1 << 19)),
        );
        small.step(&[u], &[y]);
        big.step(&[u, 0.0], &[y, 0.0]);
        q_small.step(&[uq], &[yq]);
        q_big.step(&[uq, Q31(0)], &[yq, Q31(0)]);
        k_small.step(&[uq], &[yq]);
        k_big.step(&[uq, Q31(0)], &[yq, Q31(0)]);
        assert_eq!(small.estimate()[..], big.estimate()[..2]);
        assert_eq!(big.estimate()[2..], [0.0, 0.0]);
        assert_eq!(q_small.estimate()[..], q_big.estimate()[..2]);
        assert_eq!(q_big.estimate()[2..], [Q31(0), Q31(0)]);
        assert_eq!(k_small.estimate()[..], k_big.estimate()[..2]);
    }
}
