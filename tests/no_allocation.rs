//! No observer step allocates: every step of every variant (float and fixed
//! point, predictor, current form and fused, with and without a gate, with
//! all, some and no channels, non-finite readings, split correct/predict)
//! runs many times under a counting global allocator, which must see no
//! allocation, reallocation or free while they run.

#[allow(dead_code)]
#[path = "../benches/workload/scenario.rs"]
mod scenario;

use lookout::{
    ChannelMask, CurrentObserver, CurrentTables, Fixed, FixedCurrentObserver, FixedCurrentTables,
    FixedFusedObserver, FixedFusedTables, FixedGate, FixedPredictorObserver, FixedPredictorTables,
    FusedObserver, FusedTables, Gate, Matrix, Observer, Plant, PredictorObserver, PredictorTables,
    Q15, Q31, Real,
};
use lookout_design::fixed_point::{ConvertError, QuantiseTables as _};
use scenario::Scenario;
use stats_alloc::{INSTRUMENTED_SYSTEM, Region, StatsAlloc};
use std::alloc::System;
use std::hint::black_box;

#[global_allocator]
static GLOBAL: &StatsAlloc<System> = &INSTRUMENTED_SYSTEM;

const STEPS: usize = 2_000;

/// A gate on S = 0.01·I that accepts the scenario's readings and rejects a
/// reading offset by 10 (ν = 10⁴ per channel).
fn gate<const P: usize>() -> Gate<f64, P> {
    let mut s_inv = [[0.0; P]; P];
    for (j, row) in s_inv.iter_mut().enumerate() {
        row[j] = 100.0;
    }
    Gate {
        s_inv: Matrix::from_rows(s_inv),
        limit: 1.0e3,
        channel_inv_variance: [100.0; P],
        channel_limit: 1.0e3,
        recovery: lookout::Recovery {
            limits: [[1.0e3; 2]; lookout::GATE_STAGES],
            stages: 4,
            per_miss: 2,
        },
    }
}

fn cast<T: Real, const R: usize, const C: usize>(m: &Matrix<f64, R, C>) -> Matrix<T, R, C> {
    Matrix::from_cols(
        m.as_cols()
            .map(|c| c.map(|v| T::from(v).unwrap_or(T::ZERO))),
    )
}

fn cast_gate<T: Real, const P: usize>(g: &Gate<f64, P>) -> Gate<T, P> {
    let t = |v: f64| T::from(v).unwrap_or(T::ZERO);
    Gate {
        s_inv: cast(&g.s_inv),
        limit: t(g.limit),
        channel_inv_variance: g.channel_inv_variance.map(t),
        channel_limit: t(g.channel_limit),
        recovery: lookout::Recovery {
            limits: g.recovery.limits.map(|p| p.map(t)),
            stages: g.recovery.stages,
            per_miss: g.recovery.per_miss,
        },
    }
}

/// The masks each step is offered, in turn: all, all but channel 0, none.
fn masks<const P: usize>() -> [ChannelMask; 3] {
    [
        ChannelMask::all(P),
        ChannelMask::all(P).without(0),
        ChannelMask::NONE,
    ]
}

/// Allocations, reallocations and frees counted while `f` runs, the fewest
/// of three runs. The counter is process-wide, so the test harness's own
/// threads can add a few at start-up; a step that allocated would add at
/// least one per step to every run.
fn counted(mut f: impl FnMut()) -> (usize, usize, usize) {
    (0..3)
        .map(|_| {
            let region = Region::new(GLOBAL);
            f();
            let stats = region.change();
            (stats.allocations, stats.reallocations, stats.deallocations)
        })
        .min()
        .unwrap_or_default()
}

fn float_steps<T: Real, const N: usize, const M: usize, const P: usize>(gated: bool) {
    let sc = Scenario::<N, M, P>::new();
    let t = |v: f64| T::from(v).unwrap_or(T::ZERO);
    let g = gated.then(|| cast_gate::<T, P>(&gate::<P>()));
    let plant = Plant {
        a: cast(&sc.predictor.plant.a),
        b: cast(&sc.predictor.plant.b),
        c: cast(&sc.predictor.plant.c),
        d: cast(&sc.predictor.plant.d),
    };
    let pt = PredictorTables {
        plant,
        l: cast(&sc.predictor.l),
        gate: g,
    };
    let ct = CurrentTables {
        plant,
        k: cast(&sc.current.k),
        gate: g,
    };
    let ft = FusedTables {
        f: cast(&sc.fused.f),
        g: cast(&sc.fused.g),
        h: cast(&sc.fused.h),
        c: plant.c,
        d: plant.d,
        gate: g,
    };
    let x0 = sc.x0.map(t);
    let u = sc.u.map(t);
    let y = sc.y.map(t);
    let far = sc.y.map(|v| t(v + 10.0));
    let mut not_finite = y;
    not_finite[0] = T::nan();
    let readings = [y, far, not_finite];
    let mut p = PredictorObserver::new(&pt, x0);
    let mut c = CurrentObserver::new(&ct, x0);
    let mut f = FusedObserver::new(&ft, x0);
    let counts = counted(|| {
        for k in 0..STEPS {
            let y = black_box(&readings[k % 3]);
            let v = masks::<P>()[(k / 3) % 3];
            let u = black_box(&u);
            black_box(p.step_masked(u, y, v));
            black_box(p.step(u, y));
            black_box(p.predict(u));
            black_box(c.step_masked(u, y, v));
            black_box(c.correct(u, y, v));
            black_box(c.predict(u));
            black_box(f.step_masked(u, y, v));
            black_box(f.predict(u));
            black_box((p.estimate(), c.filtered(), f.innovation()));
        }
    });
    assert_eq!(
        counts,
        (0, 0, 0),
        "float ({N},{M},{P}) gated {gated}: (allocations, reallocations, frees) while stepping"
    );
}

fn fixed_steps<Q: Fixed + FromReal, const N: usize, const M: usize, const P: usize>(gated: bool) {
    let mut sc = Scenario::<N, M, P>::new();
    if gated {
        sc.predictor.gate = Some(gate::<P>());
        sc.current.gate = Some(gate::<P>());
        sc.fused.gate = Some(gate::<P>());
    }
    let s = sc.scales;
    let fail = |e: ConvertError| -> ! { panic!("scenario tables do not convert: {e}") };
    let pt = FixedPredictorTables::<Q, N, M, P>::from_float(&sc.predictor, s)
        .unwrap_or_else(|e| fail(e));
    let ct =
        FixedCurrentTables::<Q, N, M, P>::from_float(&sc.current, s).unwrap_or_else(|e| fail(e));
    let ft = FixedFusedTables::<Q, N, M, P>::from_float(&sc.fused, s).unwrap_or_else(|e| fail(e));
    if gated {
        // The Q gate is the one from_float built: check it is there.
        let _: &FixedGate<Q, P> = pt.gate.as_ref().unwrap_or_else(|| panic!("no Q gate"));
    }
    let q = |v: f64, e: i8| Q::from_real_value(v, e);
    let x0: [Q; N] = core::array::from_fn(|i| q(sc.x0[i], s.state[i]));
    let u: [Q; M] = core::array::from_fn(|k| q(sc.u[k], s.input[k]));
    let y: [Q; P] = core::array::from_fn(|j| q(sc.y[j], s.output[j]));
    // Full scale, far outside the gate (and saturating the innovation).
    let far = [Q::MAX; P];
    let readings = [y, far, [Q::MIN; P]];
    let mut p = FixedPredictorObserver::new(&pt, x0);
    let mut c = FixedCurrentObserver::new(&ct, x0);
    let mut f = FixedFusedObserver::new(&ft, x0);
    let counts = counted(|| {
        for k in 0..STEPS {
            let y = black_box(&readings[k % 3]);
            let v = masks::<P>()[(k / 3) % 3];
            let u = black_box(&u);
            black_box(p.step_masked(u, y, v));
            black_box(p.step(u, y));
            black_box(p.predict(u));
            black_box(c.step_masked(u, y, v));
            black_box(c.correct(u, y, v));
            black_box(c.predict(u));
            black_box(f.step_masked(u, y, v));
            black_box(f.predict(u));
            black_box((p.estimate(), c.filtered(), f.innovation()));
        }
    });
    assert_eq!(
        counts,
        (0, 0, 0),
        "fixed ({N},{M},{P}) gated {gated}: (allocations, reallocations, frees) while stepping"
    );
}

/// `from_real` of both Q formats, saturating out-of-range values.
trait FromReal: Sized {
    fn from_real_value(v: f64, exponent: i8) -> Self;
}
impl FromReal for Q15 {
    fn from_real_value(v: f64, exponent: i8) -> Self {
        Q15::from_real(v, exponent).unwrap_or(Q15(if v < 0.0 { i16::MIN } else { i16::MAX }))
    }
}
impl FromReal for Q31 {
    fn from_real_value(v: f64, exponent: i8) -> Self {
        Q31::from_real(v, exponent).unwrap_or(Q31(if v < 0.0 { i32::MIN } else { i32::MAX }))
    }
}

/// One test, so no other test thread allocates while the region counts.
#[test]
fn no_step_allocates() {
    // The counter must see an allocation when there is one.
    let (allocations, _, _) = counted(|| {
        black_box(vec![1u8; 64]);
    });
    assert!(allocations >= 1, "the counting allocator saw no allocation");
    for gated in [false, true] {
        float_steps::<f32, 2, 1, 1>(gated);
        float_steps::<f64, 4, 1, 2>(gated);
        float_steps::<f32, 12, 3, 4>(gated);
        fixed_steps::<Q31, 4, 1, 2>(gated);
        fixed_steps::<Q15, 8, 2, 3>(gated);
        fixed_steps::<Q31, 12, 3, 4>(gated);
    }
}
