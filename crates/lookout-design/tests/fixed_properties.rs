//! Property tests of the fixed-point observers against an f64 reference.
//!
//! The reference is the crate's f64 observer of the same form running the
//! *same* tables: the Q tables' exact float values (`to_float`), fed the
//! exact values of the same Q inputs. So the comparison measures only the
//! fixed-point step's arithmetic (rounding), never the tables' quantisation.
//!
//! Bound (derived in the observers' docs): every step adds at most w LSB
//! (½ LSB per rounded element, carried through the gain that uses it), and
//! on an exact model the deviation obeys the normalised error dynamics Φ;
//! with ‖Φ‖∞ = ρ < 1 it stays below w / (1 − ρ) LSB at every step. ρ and w
//! are computed here from the dequantised tables in normalised coordinates
//! (an ∞-norm ≤ 0.95 also bounds the spectral radius by 0.95). A margin of
//! 2^(F − 40) LSB covers the f64 reference's own rounding (about
//! 16 · 2⁻⁵³ of full scale per step, over 1/(1 − ρ) ≤ 20 steps: 2^(F − 44)).

#[path = "../../lookout/tests/fixed_common/mod.rs"]
mod fixed_common;
use fixed_common::*;
use lookout::{
    CurrentObserver, CurrentTables, Fixed, FixedCurrentObserver, FixedCurrentTables,
    FixedFusedObserver, FixedFusedTables, FixedPredictorObserver, FixedPredictorTables,
    FusedObserver, FusedTables, Matrix, Observer, Plant, PredictorObserver, PredictorTables, Q15,
    Q31, Scales,
};
use lookout_design::fixed_point::QuantiseTables as _;
use proptest::prelude::*;

const N: usize = 3;
const M: usize = 2;
const P: usize = 2;
const STEPS: usize = 10_000;

fn scales(rng: &mut Xorshift) -> Scales<N, M, P> {
    Scales {
        state: rng.exponents(-4, 6),
        input: rng.exponents(-4, 6),
        output: rng.exponents(-4, 6),
    }
}

/// The largest amplitude (fraction of full scale, halving from 0.9) for
/// which `peaks(a)` keeps every signal within 0.9 of full scale.
fn amplitude(peaks: impl Fn(f64) -> f64) -> f64 {
    let mut a = 0.9;
    while peaks(a) > 0.9 && a > 1e-6 {
        a /= 2.0;
    }
    a
}

fn margin<Q: Fixed>() -> f64 {
    2f64.powi(Q::FRAC as i32 - 40)
}

struct Deviation {
    worst: f64,
    bound: f64,
}

fn predictor_case<Q: Fixed>(seed: u64) -> Result<Deviation, TestCaseError> {
    let mut rng = Xorshift::new(seed);
    let s = scales(&mut rng);
    let rho_target = rng.uniform(0.5, 0.9);
    let f: Rows<N, N> = with_norm(&rng.rows(1.0), rho_target);
    let (b, c, d, l): (Rows<N, M>, Rows<P, N>, Rows<P, M>, Rows<N, P>) =
        (rng.rows(0.5), rng.rows(0.25), rng.rows(0.2), rng.rows(0.5));
    let a = add(&f, &mat_mul(&l, &c), 1.0);
    let float = PredictorTables {
        plant: Plant {
            a: Matrix::from_rows(physical(&a, &s.state, &s.state)),
            b: Matrix::from_rows(physical(&b, &s.input, &s.state)),
            c: Matrix::from_rows(physical(&c, &s.state, &s.output)),
            d: Matrix::from_rows(physical(&d, &s.input, &s.output)),
        },
        l: Matrix::from_rows(physical(&l, &s.output, &s.state)),
        gate: None,
    };
    let fixed = FixedPredictorTables::<Q, N, M, P>::from_float(&float, s)
        .map_err(|e| TestCaseError::fail(e.to_string()))?;
    let reference = fixed.to_float();
    // The dequantised tables, normalised again, for ρ and w.
    let p = &reference.plant;
    let an = normalised(&p.a.to_rows(), &s.state, &s.state);
    let bn = normalised(&p.b.to_rows(), &s.input, &s.state);
    let cn = normalised(&p.c.to_rows(), &s.state, &s.output);
    let dn = normalised(&p.d.to_rows(), &s.input, &s.output);
    let ln = normalised(&reference.l.to_rows(), &s.output, &s.state);
    let phi = add(&an, &mat_mul(&ln, &cn), -1.0);
    let rho = norm(&phi);
    prop_assert!(rho <= 0.95, "quantised error dynamics ‖Φ‖∞ = {rho}");
    let bound = (0.5 + 0.5 * norm(&ln)) / (1.0 - rho) + margin::<Q>();
    let drive = norm(&add(&bn, &mat_mul(&ln, &dn), -1.0)) + norm(&ln);
    let amp = amplitude(|a| {
        let x = a * drive / (1.0 - rho);
        x.max(a * (1.0 + norm(&dn)) + norm(&cn) * x)
    });

    let mut observer = FixedPredictorObserver::new(&fixed, [Q::default(); N]);
    let mut exact = PredictorObserver::new(&reference, [0.0; N]);
    let mut worst: f64 = 0.0;
    for _ in 0..STEPS {
        let u = rng.q_vec::<Q, M>(amp);
        let y = rng.q_vec::<Q, P>(amp);
        let status = observer.step(&u, &y);
        exact.step(&values(&u, &s.input), &values(&y, &s.output));
        prop_assert_eq!(status.saturations, 0);
        worst = worst.max(lsb_error(observer.estimate(), exact.estimate(), &s.state));
        prop_assert!(
            worst <= bound,
            "deviation {worst} LSB above the bound {bound}"
        );
    }
    Ok(Deviation { worst, bound })
}

fn current_case<Q: Fixed>(seed: u64) -> Result<Deviation, TestCaseError> {
    let mut rng = Xorshift::new(seed);
    let s = scales(&mut rng);
    let rho_target = rng.uniform(0.5, 0.9);
    let (b, c, d, k): (Rows<N, M>, Rows<P, N>, Rows<P, M>, Rows<N, P>) =
        (rng.rows(0.5), rng.rows(0.25), rng.rows(0.2), rng.rows(0.25));
    let i_kc = add(&identity::<N>(), &mat_mul(&k, &c), -1.0);
    let a: Rows<N, N> = with_norm(&rng.rows(1.0), rho_target / norm(&i_kc));
    let float = CurrentTables {
        plant: Plant {
            a: Matrix::from_rows(physical(&a, &s.state, &s.state)),
            b: Matrix::from_rows(physical(&b, &s.input, &s.state)),
            c: Matrix::from_rows(physical(&c, &s.state, &s.output)),
            d: Matrix::from_rows(physical(&d, &s.input, &s.output)),
        },
        k: Matrix::from_rows(physical(&k, &s.output, &s.state)),
        gate: None,
    };
    let fixed = FixedCurrentTables::<Q, N, M, P>::from_float(&float, s)
        .map_err(|e| TestCaseError::fail(e.to_string()))?;
    let reference = fixed.to_float();
    let p = &reference.plant;
    let an = normalised(&p.a.to_rows(), &s.state, &s.state);
    let bn = normalised(&p.b.to_rows(), &s.input, &s.state);
    let cn = normalised(&p.c.to_rows(), &s.state, &s.output);
    let dn = normalised(&p.d.to_rows(), &s.input, &s.output);
    let kn = normalised(&reference.k.to_rows(), &s.output, &s.state);
    let phi = mat_mul(&an, &add(&identity::<N>(), &mat_mul(&kn, &cn), -1.0));
    let rho = norm(&phi);
    prop_assert!(rho <= 0.95, "quantised error dynamics ‖Φ‖∞ = {rho}");
    let bound = (norm(&an) * (0.5 + 0.5 * norm(&kn)) + 0.5) / (1.0 - rho) + margin::<Q>();
    let ak = mat_mul(&an, &kn);
    let drive = norm(&ak) + norm(&add(&bn, &mat_mul(&ak, &dn), -1.0));
    let amp = amplitude(|a| {
        let x = a * drive / (1.0 - rho);
        let r = a * (1.0 + norm(&dn)) + norm(&cn) * x;
        x.max(r).max(x + norm(&kn) * r)
    });

    let mut observer = FixedCurrentObserver::new(&fixed, [Q::default(); N]);
    let mut exact = CurrentObserver::new(&reference, [0.0; N]);
    let mut worst: f64 = 0.0;
    for _ in 0..STEPS {
        let u = rng.q_vec::<Q, M>(amp);
        let y = rng.q_vec::<Q, P>(amp);
        let status = observer.step(&u, &y);
        exact.step(&values(&u, &s.input), &values(&y, &s.output));
        prop_assert_eq!(status.saturations, 0);
        worst = worst.max(lsb_error(observer.predicted(), exact.predicted(), &s.state));
        prop_assert!(
            worst <= bound,
            "deviation {worst} LSB above the bound {bound}"
        );
    }
    Ok(Deviation { worst, bound })
}

fn fused_case<Q: Fixed>(seed: u64) -> Result<Deviation, TestCaseError> {
    let mut rng = Xorshift::new(seed);
    let s = scales(&mut rng);
    let rho_target = rng.uniform(0.5, 0.9);
    let f: Rows<N, N> = with_norm(&rng.rows(1.0), rho_target);
    let (g, h, c, d): (Rows<N, M>, Rows<N, P>, Rows<P, N>, Rows<P, M>) =
        (rng.rows(0.5), rng.rows(0.5), rng.rows(0.25), rng.rows(0.2));
    let float = FusedTables {
        f: Matrix::from_rows(physical(&f, &s.state, &s.state)),
        g: Matrix::from_rows(physical(&g, &s.input, &s.state)),
        h: Matrix::from_rows(physical(&h, &s.output, &s.state)),
        c: Matrix::from_rows(physical(&c, &s.state, &s.output)),
        d: Matrix::from_rows(physical(&d, &s.input, &s.output)),
        gate: None,
    };
    let fixed = FixedFusedTables::<Q, N, M, P>::from_float(&float, s)
        .map_err(|e| TestCaseError::fail(e.to_string()))?;
    let reference = fixed.to_float();
    let fn_ = normalised(&reference.f.to_rows(), &s.state, &s.state);
    let gn = normalised(&reference.g.to_rows(), &s.input, &s.state);
    let hn = normalised(&reference.h.to_rows(), &s.output, &s.state);
    let rho = norm(&fn_);
    prop_assert!(rho <= 0.95, "quantised error dynamics ‖F̄‖∞ = {rho}");
    // Every channel present: one rounding per state, nothing else.
    let bound = 0.5 / (1.0 - rho) + margin::<Q>();
    let amp = amplitude(|a| a * (norm(&gn) + norm(&hn)) / (1.0 - rho));

    let mut observer = FixedFusedObserver::new(&fixed, [Q::default(); N]);
    let mut exact = FusedObserver::new(&reference, [0.0; N]);
    let mut worst: f64 = 0.0;
    for _ in 0..STEPS {
        let u = rng.q_vec::<Q, M>(amp);
        let y = rng.q_vec::<Q, P>(amp);
        let status = observer.step(&u, &y);
        exact.step(&values(&u, &s.input), &values(&y, &s.output));
        prop_assert_eq!(status.saturations, 0);
        worst = worst.max(lsb_error(observer.estimate(), exact.estimate(), &s.state));
        prop_assert!(
            worst <= bound,
            "deviation {worst} LSB above the bound {bound}"
        );
    }
    Ok(Deviation { worst, bound })
}

/// The largest observed deviation, as a share of the bound, over all cases
/// (printed with `--nocapture`, to show the bound is not vacuous).
fn report(name: &str, outcomes: &[Deviation]) {
    let share = outcomes
        .iter()
        .map(|o| o.worst / o.bound)
        .fold(0.0, f64::max);
    let worst = outcomes.iter().map(|o| o.worst).fold(0.0, f64::max);
    println!(
        "{name}: worst deviation {worst:.3} LSB, at most {:.0} % of its bound",
        100.0 * share
    );
}

macro_rules! long_run {
    ($name:ident, $case:ident, $q:ty, $cases:expr) => {
        #[test]
        fn $name() {
            let outcomes = std::cell::RefCell::new(Vec::new());
            let mut runner = proptest::test_runner::TestRunner::new(fixed_seed($cases));
            runner
                .run(&any::<u64>(), |seed| {
                    let outcome = $case::<$q>(seed)?;
                    outcomes.borrow_mut().push(outcome);
                    Ok(())
                })
                .unwrap();
            report(stringify!($name), &outcomes.borrow());
        }
    };
}

long_run!(
    q31_predictor_tracks_f64_for_10000_steps,
    predictor_case,
    Q31,
    12
);
long_run!(
    q15_predictor_tracks_f64_for_10000_steps,
    predictor_case,
    Q15,
    12
);
long_run!(
    q31_current_tracks_f64_for_10000_steps,
    current_case,
    Q31,
    12
);
long_run!(
    q15_current_tracks_f64_for_10000_steps,
    current_case,
    Q15,
    12
);
long_run!(q31_fused_tracks_f64_for_10000_steps, fused_case, Q31, 12);
long_run!(q15_fused_tracks_f64_for_10000_steps, fused_case, Q15, 12);
