//! The Q31 tables `lookout emit` generated for the demo model (build.rs):
//! they are exactly what the runtime's own builder makes from the float
//! tables and scales, and the integer step reproduces the f64 observer on
//! the same (dequantised) tables within the per-step rounding bound of the
//! fixed-point runtime, accumulated through the quantised error dynamics.
#![allow(clippy::needless_range_loop)] // i indexes states across several arrays

use lookout::{
    FixedFusedTables, FixedPredictorObserver, FixedPredictorTables, Observer, PredictorObserver,
    Q31,
};
use lookout_design::fixed_point::{QuantiseTables as _, bounds};
use lookout_suite::conveyor_f64::conveyor;
use nalgebra::{DMatrix, DVector};

#[test]
fn emitted_q31_tables_equal_the_runtime_builder() {
    let built =
        FixedPredictorTables::<Q31, 2, 1, 1>::from_float(&conveyor::PREDICTOR, conveyor::SCALES)
            .unwrap();
    assert_eq!(&built, conveyor::PREDICTOR_Q31.tables());
    let built =
        FixedFusedTables::<Q31, 2, 1, 1>::from_float(&conveyor::FUSED, conveyor::SCALES).unwrap();
    assert_eq!(&built, conveyor::FUSED_Q31.tables());
}

#[test]
fn q31_step_reproduces_the_f64_observer_within_its_rounding_bound() {
    let q = conveyor::PREDICTOR_Q31.tables();
    let s = q.scales;
    let exact = q.to_float();
    let mut reference = PredictorObserver::new(&exact, [0.0; 2]);
    let mut fixed = FixedPredictorObserver::new(q, [Q31(0); 2]);

    // Per-step rounding (fixed-point runtime docs): ½ LSB on each state,
    // plus ½ LSB of the innovation passed through |L|, in state units.
    let lsb = |e: i8| 2f64.powi(i32::from(e) - 31);
    let l = |i: usize| exact.l.get(i, 0).unwrap();
    let per_step = DVector::from_fn(2, |i, _| {
        0.5 * lsb(s.state[i]) + 0.5 * l(i).abs() * lsb(s.output[0])
    });
    // Accumulated through the quantised error matrix F = A − L C.
    let (a_rows, c_rows) = (exact.plant.a.to_rows(), exact.plant.c.to_rows());
    let f = DMatrix::from_fn(2, 2, |i, j| a_rows[i][j] - l(i) * c_rows[0][j]);
    let bound = bounds::peak(&f, &DMatrix::identity(2, 2), &per_step, &DVector::zeros(2)).unwrap();

    // The demo plant from an unknown state, driven by an oscillating
    // current so the angle stays inside output_range (64 rad).
    let (a, b) = (exact.plant.a.to_rows(), exact.plant.b.to_rows());
    let mut x = [0.5, 3.0];
    let mut worst = [0.0_f64; 2];
    for k in 0..10_000 {
        let u = 2.0 * (k as f64 * std::f64::consts::TAU / 500.0).sin();
        let (uq, yq) = (
            Q31::from_real(u, s.input[0]).unwrap(),
            Q31::from_real(x[0], s.output[0]).unwrap(),
        );
        // The reference sees exactly the values the integers stand for.
        let (u_seen, y_seen) = (uq.to_real(s.input[0]), yq.to_real(s.output[0]));
        reference.step(&[u_seen], &[y_seen]);
        let status = fixed.step(&[uq], &[yq]);
        assert_eq!(status.saturations, 0, "step {k}");
        for i in 0..2 {
            let got = fixed.estimate()[i].to_real(s.state[i]);
            let dev = (got - reference.estimate()[i]).abs();
            worst[i] = worst[i].max(dev / bound.peak[i]);
            // The f64 reference rounds too: allow 1e-12 of the state.
            assert!(
                dev <= bound.peak[i] + 1e-12 * reference.estimate()[i].abs(),
                "step {k} state {i}: {dev:e} > {:e}",
                bound.peak[i]
            );
        }
        x = [
            a[0][0] * x[0] + a[0][1] * x[1] + b[0][0] * u_seen,
            a[1][0] * x[0] + a[1][1] * x[1] + b[1][0] * u_seen,
        ];
    }
    // The bound is not vacuous: the deviation uses a visible part of it.
    eprintln!("worst deviation / bound per state: {worst:?}");
    assert!(
        worst.iter().any(|&w| w > 0.01),
        "worst deviation / bound {worst:?}"
    );
}

/// The generated conversions: a physical value goes to Q31 and back within
/// half an LSB of its scale, 2^(e − 31) / 2 (round to nearest, the Q31
/// format's definition); beyond full scale it saturates, NaN gives 0.
#[test]
fn generated_conversions_round_trip_within_half_an_lsb() {
    let s = conveyor::SCALES;
    let x = [
        0.3 * f64::powi(2.0, s.state[0].into()),
        -0.7 * f64::powi(2.0, s.state[1].into()),
    ];
    let back = conveyor::state_from_q(&conveyor::state_to_q(&x));
    for i in 0..2 {
        let half_lsb = f64::powi(2.0, i32::from(s.state[i]) - 31) / 2.0;
        assert!(
            (back[i] - x[i]).abs() <= half_lsb,
            "state {i}: {} vs {}",
            back[i],
            x[i]
        );
    }
    let y = [0.5 * f64::powi(2.0, s.output[0].into())];
    let y_back = conveyor::output_from_q(&conveyor::output_to_q(&y));
    assert!((y_back[0] - y[0]).abs() <= f64::powi(2.0, i32::from(s.output[0]) - 32));
    let far = f64::powi(2.0, i32::from(s.input[0]) + 1);
    assert_eq!(conveyor::input_to_q(&[far]), [Q31(i32::MAX)]);
    assert_eq!(conveyor::input_to_q(&[-far]), [Q31(i32::MIN)]);
    assert_eq!(conveyor::input_to_q(&[f64::NAN]), [Q31(0)]);
}
