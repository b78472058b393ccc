//! Property tests of the float observers on random systems (fixed seed).

mod common;
use common::*;
use lookout::{
    ChannelMask, CurrentObserver, CurrentTables, FusedObserver, FusedTables, Matrix, Observer,
    Outcome, Plant, PredictorObserver, PredictorTables,
};
use proptest::prelude::*;

const N: usize = 3;
const M: usize = 2;
const P: usize = 2;

/// A random system whose predictor error matrix F = A − L C has induced
/// ∞-norm at most `contraction` (so ‖e[k]‖∞ ≤ contraction^k ‖e[0]‖∞).
#[derive(Clone, Debug)]
struct System {
    a: Rows<N, N>,
    b: Rows<N, M>,
    c: Rows<P, N>,
    d: Rows<P, M>,
    l: Rows<N, P>,
}

fn entries<const R: usize, const C: usize>(bound: f64) -> impl Strategy<Value = Rows<R, C>> {
    proptest::array::uniform::<_, R>(proptest::array::uniform::<_, C>(-bound..bound))
}

fn system(contraction: f64) -> impl Strategy<Value = System> {
    (
        entries::<N, N>(1.0),
        entries::<N, M>(1.0),
        entries::<P, N>(1.0),
        entries::<P, M>(0.5),
        entries::<N, P>(1.0),
    )
        .prop_map(move |(f_raw, b, c, d, l)| {
            let mut f = f_raw;
            for row in f.iter_mut() {
                let sum: f64 = row.iter().map(|x| x.abs()).sum();
                if sum > 0.0 {
                    for x in row.iter_mut() {
                        *x *= contraction / sum;
                    }
                }
            }
            let lc = mat_mul(&l, &c);
            let mut a = f;
            for i in 0..N {
                for j in 0..N {
                    a[i][j] += lc[i][j];
                }
            }
            System { a, b, c, d, l }
        })
}

impl System {
    fn plant(&self) -> Plant<f64, N, M, P> {
        Plant {
            a: Matrix::from_rows(self.a),
            b: Matrix::from_rows(self.b),
            c: Matrix::from_rows(self.c),
            d: Matrix::from_rows(self.d),
        }
    }
    fn predictor(&self) -> PredictorTables<f64, N, M, P> {
        PredictorTables {
            plant: self.plant(),
            l: Matrix::from_rows(self.l),
            gate: None,
        }
    }
    /// The current form with K = L (any gain will do for these checks).
    fn current(&self) -> CurrentTables<f64, N, M, P> {
        CurrentTables {
            plant: self.plant(),
            k: Matrix::from_rows(self.l),
            gate: None,
        }
    }
    /// Fused tables for predictor gain `l`: F = A − L C, G = B − L D, H = L.
    fn fused_for(&self, l: &Rows<N, P>) -> FusedTables<f64, N, M, P> {
        FusedTables {
            f: Matrix::from_rows(sub(&self.a, &mat_mul(l, &self.c))),
            g: Matrix::from_rows(sub(&self.b, &mat_mul(l, &self.d))),
            h: Matrix::from_rows(*l),
            c: Matrix::from_rows(self.c),
            d: Matrix::from_rows(self.d),
            gate: None,
        }
    }
    fn true_plant(&self, x0: [f64; N]) -> TruePlant<N, M, P> {
        TruePlant {
            a: self.a,
            b: self.b,
            c: self.c,
            d: self.d,
            x: x0,
        }
    }
}

fn inputs(steps: usize) -> impl Strategy<Value = Vec<[f64; M]>> {
    proptest::collection::vec(proptest::array::uniform::<_, M>(-10.0..10.0), steps)
}

/// A reading that is sometimes NaN or infinite.
fn maybe_bad() -> impl Strategy<Value = f64> {
    prop_oneof![
        6 => -100.0..100.0f64,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(f64::NEG_INFINITY),
    ]
}

proptest! {
    #![proptest_config(fixed_seed(96))]

    /// With ‖A − L C‖∞ ≤ 0.95 the error of the predictor on an exact model
    /// shrinks at least that fast at every step, whatever the inputs.
    #[test]
    fn predictor_error_decays(sys in system(0.95), x0 in proptest::array::uniform::<_, N>(-50.0..50.0f64), us in inputs(60)) {
        let tables = sys.predictor();
        let mut observer = PredictorObserver::new(&tables, [0.0; N]);
        let mut plant = sys.true_plant(x0);
        let mut bound = norm_inf(&x0);
        for u in &us {
            observer.step(u, &plant.output(u));
            plant.advance(u);
            bound *= 0.95;
            let scale = norm_inf(&plant.x).max(norm_inf(&x0)).max(1.0);
            let error = norm_inf(&vec_sub(&plant.x, observer.estimate()));
            prop_assert!(error <= bound + 1e-12 * scale, "error {error} above {bound}");
        }
    }

    /// NaN or infinity anywhere in u or y never makes any observer's state
    /// non-finite; a bad input is refused and leaves the state untouched.
    #[test]
    fn bad_numbers_never_reach_the_state(
        sys in system(0.9),
        us in proptest::collection::vec(proptest::array::uniform::<_, M>(maybe_bad()), 40),
        ys in proptest::collection::vec(proptest::array::uniform::<_, P>(maybe_bad()), 40),
    ) {
        let (pt, ct) = (sys.predictor(), sys.current());
        let ft = sys.fused_for(&sys.l);
        let mut pred = PredictorObserver::new(&pt, [1.0; N]);
        let mut curr = CurrentObserver::new(&ct, [1.0; N]);
        let mut fused = FusedObserver::new(&ft, [1.0; N]);
        for (u, y) in us.iter().zip(&ys) {
            let u_ok = u.iter().all(|v| v.is_finite());
            let before = (*pred.estimate(), *curr.predicted(), *fused.estimate());
            let statuses = [pred.step(u, y), curr.step(u, y), fused.step(u, y)];
            for s in statuses {
                prop_assert_eq!(s.outcome == Outcome::InputRejected, !u_ok);
                for (j, yj) in y.iter().enumerate() {
                    if !yj.is_finite() {
                        prop_assert!(s.missing.contains(j) && !s.used.contains(j));
                    }
                }
            }
            if !u_ok {
                prop_assert_eq!(before, (*pred.estimate(), *curr.predicted(), *fused.estimate()));
            }
            let all = pred.estimate().iter().chain(curr.predicted()).chain(curr.filtered()).chain(fused.estimate());
            for v in all {
                prop_assert!(v.is_finite());
            }
            prop_assert!(pred.innovation().unwrap().iter().all(|r| r.is_finite()));
        }
    }

    /// Offering no channel equals a prediction only: exactly for the
    /// predictor and current form (same code path), to rounding for the fused
    /// form (which stands in predicted readings).
    #[test]
    fn no_channel_is_a_prediction(sys in system(0.9), x in proptest::array::uniform::<_, N>(-20.0..20.0f64), u in proptest::array::uniform::<_, M>(-10.0..10.0f64), y in proptest::array::uniform::<_, P>(-50.0..50.0f64)) {
        let expected = vec_add(&mat_vec(&sys.a, &x), &mat_vec(&sys.b, &u));
        let (pt, ct) = (sys.predictor(), sys.current());
        let ft = sys.fused_for(&sys.l);

        let mut masked = PredictorObserver::new(&pt, x);
        let mut plain = masked.clone();
        prop_assert_eq!(masked.step_masked(&u, &y, ChannelMask::NONE).outcome, Outcome::PredictedOnly);
        plain.predict(&u);
        prop_assert_eq!(masked.estimate(), plain.estimate());
        let tol = 1e-12 * (norm_inf(&x) + norm_inf(&u) + norm_inf(&y) + 1.0) * 16.0;
        prop_assert!(norm_inf(&vec_sub(masked.estimate(), &expected)) <= tol);

        let mut curr = CurrentObserver::new(&ct, x);
        curr.step_masked(&u, &y, ChannelMask::NONE);
        prop_assert_eq!(curr.filtered(), &x);
        prop_assert!(norm_inf(&vec_sub(curr.predicted(), &expected)) <= tol);

        let mut fused = FusedObserver::new(&ft, x);
        prop_assert_eq!(fused.step_masked(&u, &y, ChannelMask::NONE).outcome, Outcome::PredictedOnly);
        prop_assert!(norm_inf(&vec_sub(fused.estimate(), &expected)) <= tol, "{:?} vs {:?}", fused.estimate(), expected);
    }

    /// The fused tables give the same estimates as the unfused forms, to
    /// rounding, for random readings and random channel masks: predictor
    /// (H = L) and current form (H = A K, state x̂[k|k−1]).
    #[test]
    fn fused_matches_unfused(
        sys in system(0.9),
        us in inputs(50),
        ys in proptest::collection::vec(proptest::array::uniform::<_, P>(-50.0..50.0f64), 50),
        masks in proptest::collection::vec(0u32..4, 50),
    ) {
        let (pt, ct) = (sys.predictor(), sys.current());
        let fp = sys.fused_for(&sys.l);
        let fc = sys.fused_for(&mat_mul(&sys.a, &sys.l));
        let mut pred = PredictorObserver::new(&pt, [0.0; N]);
        let mut curr = CurrentObserver::new(&ct, [0.0; N]);
        let mut fused_p = FusedObserver::new(&fp, [0.0; N]);
        let mut fused_c = FusedObserver::new(&fc, [0.0; N]);
        for ((u, y), &bits) in us.iter().zip(&ys).zip(&masks) {
            let mask = ChannelMask::from_bits(bits);
            let statuses = [pred.step_masked(u, y, mask), curr.step_masked(u, y, mask), fused_p.step_masked(u, y, mask), fused_c.step_masked(u, y, mask)];
            prop_assert!(statuses.iter().all(|s| *s == statuses[0]));
            // The two paths round differently; relative to the size of the
            // estimate (A (I − K C) need not contract for a random K) the
            // difference stays within ~1e5 ε over 50 steps.
            let tol = |x: &[f64; N]| 2e-11 * norm_inf(x).max(1.0);
            prop_assert!(norm_inf(&vec_sub(pred.estimate(), fused_p.estimate())) <= tol(pred.estimate()));
            prop_assert!(norm_inf(&vec_sub(curr.predicted(), fused_c.estimate())) <= tol(curr.predicted()));
        }
    }
}
