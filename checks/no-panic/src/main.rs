//! Every public step of the runtime, wrapped in `#[no_panic]`, at two sizes,
//! both float types and both fixed-point formats. If any of them could
//! panic, this does not link.

use lookout::{
    Accumulation, ChannelMask, CurrentObserver, CurrentTables, Fixed, FixedCurrentObserver, FixedCurrentTables,
    FixedFusedObserver, FixedFusedTables, FixedGate, FixedOutputMap, FixedPredictorObserver,
    FixedPredictorTables, FusedObserver, FusedTables, Matrix, Plant, PredictorObserver,
    PredictorTables, Q15, Q31, Real, Scales, Status,
};
use no_panic::no_panic;
use std::hint::black_box;

macro_rules! checks {
    ($module:ident, $t:ty, $n:literal, $m:literal, $p:literal) => {
        mod $module {
            use super::*;
            type T = $t;
            const N: usize = $n;
            const M: usize = $m;
            const P: usize = $p;

            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn predictor_step(o: &mut PredictorObserver<'_, T, N, M, P>, u: &[T; M], y: &[T; P], v: ChannelMask) -> Status {
                o.step_masked(u, y, v)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn predictor_predict(o: &mut PredictorObserver<'_, T, N, M, P>, u: &[T; M]) -> Status {
                o.predict(u)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn current_step(o: &mut CurrentObserver<'_, T, N, M, P>, u: &[T; M], y: &[T; P], v: ChannelMask) -> Status {
                o.step_masked(u, y, v)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn current_split(o: &mut CurrentObserver<'_, T, N, M, P>, u: &[T; M], y: &[T; P], v: ChannelMask) -> Status {
                o.correct(u, y, v);
                o.predict(u)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn fused_step(o: &mut FusedObserver<'_, T, N, M, P>, u: &[T; M], y: &[T; P], v: ChannelMask) -> Status {
                o.step_masked(u, y, v)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn fused_predict(o: &mut FusedObserver<'_, T, N, M, P>, u: &[T; M]) -> Status {
                o.predict(u)
            }

            pub fn run(seed: T) {
                let plant = Plant {
                    a: Matrix::from_rows([[seed; N]; N]),
                    b: Matrix::from_rows([[seed; M]; N]),
                    c: Matrix::from_rows([[seed; N]; P]),
                    d: Matrix::from_rows([[seed; M]; P]),
                };
                let gate = black_box(Some(lookout::Gate {
                    s_inv: Matrix::from_rows([[seed; P]; P]),
                    limit: seed,
                    channel_inv_variance: [seed; P],
                    channel_limit: seed,
                    recovery: lookout::Recovery { limits: [[seed; 2]; lookout::GATE_STAGES], stages: black_box(3), per_miss: black_box(2) },
                }));
                let pt = black_box(PredictorTables { plant, l: Matrix::from_rows([[seed; P]; N]), gate });
                let ct = black_box(CurrentTables { plant, k: Matrix::from_rows([[seed; P]; N]), gate });
                let ft = black_box(FusedTables {
                    f: plant.a,
                    g: plant.b,
                    h: Matrix::from_rows([[seed; P]; N]),
                    c: plant.c,
                    d: plant.d,
                    gate,
                });
                let (u, y, v) = (black_box([seed; M]), black_box([seed; P]), black_box(ChannelMask::all(P)));
                let mut po = PredictorObserver::new(&pt, [seed; N]);
                let mut co = CurrentObserver::new(&ct, [seed; N]);
                let mut fo = FusedObserver::new(&ft, [seed; N]);
                black_box(predictor_step(&mut po, &u, &y, v));
                black_box(predictor_predict(&mut po, &u));
                black_box(current_step(&mut co, &u, &y, v));
                black_box(current_split(&mut co, &u, &y, v));
                black_box(fused_step(&mut fo, &u, &y, v));
                black_box(fused_predict(&mut fo, &u));
                black_box((po.estimate(), co.filtered(), fo.estimate()));
            }
        }
    };
}

/// The fixed-point steps, on tables whose every entry and exponent comes
/// through `black_box` (so nothing is known at compile time, including
/// out-of-range exponents).
macro_rules! fixed_checks {
    ($module:ident, $q:ty, $n:literal, $m:literal, $p:literal) => {
        mod $module {
            use super::*;
            type Q = $q;
            type A = <Q as Fixed>::Acc;
            const N: usize = $n;
            const M: usize = $m;
            const P: usize = $p;

            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn predictor_step<K: Accumulation>(o: &mut FixedPredictorObserver<'_, Q, N, M, P, K>, u: &[Q; M], y: &[Q; P], v: ChannelMask) -> Status {
                o.step_masked(u, y, v)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn predictor_predict<K: Accumulation>(o: &mut FixedPredictorObserver<'_, Q, N, M, P, K>, u: &[Q; M]) -> Status {
                o.predict(u)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn current_step<K: Accumulation>(o: &mut FixedCurrentObserver<'_, Q, N, M, P, K>, u: &[Q; M], y: &[Q; P], v: ChannelMask) -> Status {
                o.step_masked(u, y, v)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn current_split<K: Accumulation>(o: &mut FixedCurrentObserver<'_, Q, N, M, P, K>, u: &[Q; M], y: &[Q; P], v: ChannelMask) -> Status {
                o.correct(u, y, v);
                o.predict(u)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn fused_step<K: Accumulation>(o: &mut FixedFusedObserver<'_, Q, N, M, P, K>, u: &[Q; M], y: &[Q; P], v: ChannelMask) -> Status {
                o.step_masked(u, y, v)
            }
            #[cfg_attr(not(feature = "probe"), no_panic)]
            pub fn fused_predict<K: Accumulation>(o: &mut FixedFusedObserver<'_, Q, N, M, P, K>, u: &[Q; M]) -> Status {
                o.predict(u)
            }

            /// Every checked step of the three observers, with either kernel.
            fn exercise<K: Accumulation>(
                mut po: FixedPredictorObserver<'_, Q, N, M, P, K>,
                mut co: FixedCurrentObserver<'_, Q, N, M, P, K>,
                mut fo: FixedFusedObserver<'_, Q, N, M, P, K>,
                (u, y, v): (&[Q; M], &[Q; P], ChannelMask),
            ) {
                black_box(predictor_step(&mut po, u, y, v));
                black_box(predictor_predict(&mut po, u));
                black_box(current_step(&mut co, u, y, v));
                black_box(current_split(&mut co, u, y, v));
                black_box(fused_step(&mut fo, u, y, v));
                black_box(fused_predict(&mut fo, u));
                black_box((po.estimate(), co.filtered(), fo.estimate()));
            }

            pub fn run(seed: Q, exp: i8, wide: A) {
                let scales = black_box(Scales { state: [exp; N], input: [exp; M], output: [exp; P] });
                let output = black_box(FixedOutputMap {
                    c: Matrix::from_rows([[seed; N]; P]),
                    d: Matrix::from_rows([[seed; M]; P]),
                    exp: [exp; P],
                });
                let gate = black_box(Some(FixedGate {
                    w: Matrix::from_rows([[seed; P]; P]),
                    w_exp: [exp; P],
                    channel_w: [seed; P],
                    channel_exp: [exp; P],
                    z_exp: exp,
                    limit: wide,
                    channel_limit: wide,
                    recovery: lookout::Recovery { limits: [[wide; 2]; lookout::GATE_STAGES], stages: black_box(3), per_miss: black_box(2) },
                }));
                let (a, b, l) = (Matrix::from_rows([[seed; N]; N]), Matrix::from_rows([[seed; M]; N]), Matrix::from_rows([[seed; P]; N]));
                let pt = black_box(FixedPredictorTables { scales, a, b, l, exp: [exp; N], output, gate });
                let ct = black_box(FixedCurrentTables { scales, a, b, exp: [exp; N], k: l, k_exp: [exp; N], output, gate });
                let ft = black_box(FixedFusedTables { scales, f: a, g: b, h: l, exp: [exp; N], output, gate });
                let (u, y, v) = (black_box([seed; M]), black_box([seed; P]), black_box(ChannelMask::all(P)));
                exercise(
                    FixedPredictorObserver::new(&pt, [seed; N]),
                    FixedCurrentObserver::new(&ct, [seed; N]),
                    FixedFusedObserver::new(&ft, [seed; N]),
                    (&u, &y, v),
                );
                // The plain multiply-accumulate kernels, on the same tables
                // when they pass the headroom check.
                if let (Ok(pt), Ok(ct), Ok(ft)) = (black_box(pt).check(), black_box(ct).check(), black_box(ft).check()) {
                    exercise(
                        FixedPredictorObserver::proven(&pt, [seed; N]),
                        FixedCurrentObserver::proven(&ct, [seed; N]),
                        FixedFusedObserver::proven(&ft, [seed; N]),
                        (&u, &y, v),
                    );
                }
            }
        }
    };
}

checks!(f32_4_1_2, f32, 4, 1, 2);
checks!(f64_4_1_2, f64, 4, 1, 2);
checks!(f32_12_3_4, f32, 12, 3, 4);
checks!(f64_2_1_1, f64, 2, 1, 1);
fixed_checks!(q15_4_1_2, Q15, 4, 1, 2);
fixed_checks!(q31_4_1_2, Q31, 4, 1, 2);
fixed_checks!(q31_12_3_4, Q31, 12, 3, 4);
fixed_checks!(q15_2_1_1, Q15, 2, 1, 1);

fn seed<T: Real>() -> T {
    black_box(T::one())
}

fn main() {
    f32_4_1_2::run(seed());
    f64_4_1_2::run(seed());
    f32_12_3_4::run(seed());
    f64_2_1_1::run(seed());
    q15_4_1_2::run(black_box(Q15(1)), black_box(3), black_box(7));
    q31_4_1_2::run(black_box(Q31(1)), black_box(3), black_box(7));
    q31_12_3_4::run(black_box(Q31(1)), black_box(3), black_box(7));
    q15_2_1_1::run(black_box(Q15(1)), black_box(3), black_box(7));
    println!("no step function of the runtime can reach a panic (checked at link time)");
}
