//! Every public step of the runtime, wrapped in `#[no_panic]`, at two sizes
//! and both float types. If any of them could panic, this does not link.

use lookout::{
    ChannelMask, CurrentObserver, CurrentTables, FusedObserver, FusedTables, Matrix, Plant,
    PredictorObserver, PredictorTables, Real, Status,
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

checks!(f32_4_1_2, f32, 4, 1, 2);
checks!(f64_4_1_2, f64, 4, 1, 2);
checks!(f32_12_3_4, f32, 12, 3, 4);
checks!(f64_2_1_1, f64, 2, 1, 1);

fn seed<T: Real>() -> T {
    black_box(T::one())
}

fn main() {
    f32_4_1_2::run(seed());
    f64_4_1_2::run(seed());
    f32_12_3_4::run(seed());
    f64_2_1_1::run(seed());
    println!("no step function of the runtime can reach a panic (checked at link time)");
}
