//! The workload shared by the step benchmarks (`benches/steps.rs`), the
//! `step_rate` example and the allocation test: invented demo tables for
//! each benchmark size ([`scenario`]), the updates a user would write by hand
//! ([`float_hand`], [`fixed_hand`]), and groups that put every lookout step
//! beside the baselines computing the same update on the same tables, each
//! checked against lookout before it is timed.

pub mod fixed_hand;
pub mod float_hand;
pub mod scenario;

use fixed_hand::{FixedDynamic, FixedLoop, FixedStatic, FixedTables, Word};
use float_hand::{FloatDynamic, FloatLoop, FloatStatic, FloatTables};
use lookout::{
    CurrentObserver, FixedCurrentObserver, FixedFusedObserver, FixedPredictorObserver,
    FusedObserver, Matrix, PredictorObserver, Q15, Q31, Real,
};
use nalgebra::RealField;
use scenario::{Scenario, macs_full, macs_fused};
use std::hint::black_box;

/// The predictor form (Luenberger): x̂⁺ = A x̂ + B u + L (y − C x̂ − D u).
pub const PREDICTOR: u8 = 0;
/// The current form: correct with K, then predict with A, B.
pub const CURRENT: u8 = 1;
/// The fused form: x̂⁺ = F x̂ + G u + H y.
pub const FUSED: u8 = 2;

/// The name of a form.
pub const fn form_name(form: u8) -> &'static str {
    match form {
        PREDICTOR => "predictor",
        CURRENT => "current",
        _ => "fused",
    }
}

/// One observer update, stepped on its own state.
pub trait Stepper<W, const N: usize, const M: usize, const P: usize> {
    /// One step with input `u` and reading `y`, every channel present.
    fn step(&mut self, u: &[W; M], y: &[W; P]);
    /// The state the next step starts from (for the current form x̂\[k+1|k\]).
    fn state(&self) -> [W; N];
    /// Replaces that state.
    fn set_state(&mut self, x: [W; N]);
}

macro_rules! lookout_stepper {
    ($ty:ident, $bound:path, $state:ident $(, $k:ident)?) => {
        impl<W: $bound, const N: usize, const M: usize, const P: usize $(, $k: lookout::Accumulation)?>
            Stepper<W, N, M, P> for $ty<'_, W, N, M, P $(, $k)?>
        {
            #[inline]
            fn step(&mut self, u: &[W; M], y: &[W; P]) {
                // The status is part of the step's work: keep it.
                black_box(self.step(u, y));
            }
            fn state(&self) -> [W; N] {
                *self.$state()
            }
            fn set_state(&mut self, x: [W; N]) {
                self.set_state(x);
            }
        }
    };
}
lookout_stepper!(PredictorObserver, Real, estimate);
lookout_stepper!(CurrentObserver, Real, predicted);
lookout_stepper!(FusedObserver, Real, estimate);
lookout_stepper!(FixedPredictorObserver, lookout::Fixed, estimate, K);
lookout_stepper!(FixedCurrentObserver, lookout::Fixed, predicted, K);
lookout_stepper!(FixedFusedObserver, lookout::Fixed, estimate, K);

/// `k` steps of `s`. The state is passed through `black_box` before every
/// step, so it lives in memory as an observer in a `static` does in
/// firmware, and nothing is carried in registers or folded across steps.
#[inline(never)]
pub fn run<W, S: Stepper<W, N, M, P>, const N: usize, const M: usize, const P: usize>(
    s: &mut S,
    u: &[W; M],
    y: &[W; P],
    k: u64,
) {
    for _ in 0..k {
        black_box(&mut *s).step(black_box(u), black_box(y));
    }
}

/// One implementation in a group: `run(k)` performs `k` steps.
pub struct Entry {
    /// "lookout", "dmatrix", "loop", "smatrix_ref" or "smatrix_gemv".
    pub code: &'static str,
    /// Performs k steps.
    pub run: Box<dyn FnMut(u64)>,
}

/// Every implementation of one update at one scalar and size.
pub struct Group {
    /// "predictor", "current" or "fused".
    pub form: &'static str,
    /// "f32", "f64", "q31" or "q15".
    pub scalar: &'static str,
    /// States, inputs, outputs.
    pub size: (usize, usize, usize),
    /// Multiply-adds per step.
    pub macs: usize,
    /// lookout first, then the baselines.
    pub entries: Vec<Entry>,
}

/// The names of the baselines, in the order of [`Group::entries`] after
/// "lookout".
pub const BASELINES: [&str; 4] = ["dmatrix", "loop", "smatrix_ref", "smatrix_gemv"];

/// A scalar the checks can compare: its value as f64 and the unit roundoff
/// the comparison of float orderings allows (zero for integers: exact).
pub trait Value: Copy + PartialEq + std::fmt::Debug + 'static {
    /// The value (raw word for Q formats).
    fn value(self) -> f64;
    /// Unit roundoff, 0 for integer formats.
    const EPS: f64;
}
impl Value for f32 {
    fn value(self) -> f64 {
        f64::from(self)
    }
    const EPS: f64 = f32::EPSILON as f64 / 2.0;
}
impl Value for f64 {
    fn value(self) -> f64 {
        self
    }
    const EPS: f64 = f64::EPSILON / 2.0;
}
impl Value for Q15 {
    fn value(self) -> f64 {
        f64::from(self.0)
    }
    const EPS: f64 = 0.0;
}
impl Value for Q31 {
    fn value(self) -> f64 {
        f64::from(self.0)
    }
    const EPS: f64 = 0.0;
}

/// Σ of the absolute values of the terms that make up each element of one
/// step from `x` (f64 tables of `form`): the scale of its rounding error.
fn term_sums<const N: usize, const M: usize, const P: usize>(
    t: &FloatTables<f64, N, M, P>,
    form: u8,
    x: &[f64; N],
    u: &[f64; M],
    y: &[f64; P],
) -> [f64; N] {
    fn abs_mul<const R: usize, const C: usize>(m: &Matrix<f64, R, C>, v: &[f64; C]) -> [f64; R] {
        core::array::from_fn(|i| {
            (0..C)
                .map(|j| (m.get(i, j).unwrap_or(0.0) * v[j]).abs())
                .sum()
        })
    }
    let add = |a: [f64; N], b: [f64; N]| -> [f64; N] { core::array::from_fn(|i| a[i] + b[i]) };
    let (cx, du) = (abs_mul(&t.c, x), abs_mul(&t.d, u));
    let r: [f64; P] = core::array::from_fn(|j| y[j].abs() + cx[j] + du[j]);
    match form {
        PREDICTOR => add(
            add(abs_mul(&t.a, &x.map(f64::abs)), abs_mul(&t.b, u)),
            abs_mul(&t.gain, &r),
        ),
        CURRENT => {
            let filtered = add(x.map(f64::abs), abs_mul(&t.gain, &r));
            add(abs_mul(&t.a, &filtered), abs_mul(&t.b, u))
        }
        _ => add(add(abs_mul(&t.a, x), abs_mul(&t.b, u)), abs_mul(&t.gain, y)),
    }
}

/// Checks every baseline against lookout over `steps` steps, each from
/// lookout's state, then leaves all of them on that state. The loop must
/// agree bit for bit (same order of operations; integers exact); nalgebra's
/// float orderings within 4·n·ε·Σ|terms| per element, n = 2(N + M) + P
/// terms on the longest chain: the dot-product rounding bound γ_n·Σ|terms|
/// (Higham 2002, §3.1) for each of the two orderings, doubled for the
/// tables being rounded to T and the bound being first order.
#[allow(clippy::too_many_arguments)]
fn check<W: Value, const N: usize, const M: usize, const P: usize>(
    name: &str,
    form: u8,
    reference: &FloatTables<f64, N, M, P>,
    lookout: &mut dyn Stepper<W, N, M, P>,
    baselines: &mut [(&str, &mut dyn Stepper<W, N, M, P>)],
    u: &[W; M],
    y: &[W; P],
) {
    let n = (2 * (N + M) + P) as f64;
    let (uf, yf) = (u.map(W::value), y.map(W::value));
    for step in 0..20 {
        let x = lookout.state();
        lookout.step(u, y);
        let want = lookout.state();
        let sums = term_sums(reference, form, &x.map(W::value), &uf, &yf);
        for (code, b) in baselines.iter_mut() {
            b.set_state(x);
            b.step(u, y);
            let got = b.state();
            for i in 0..N {
                let exact = *code == "loop" || W::EPS == 0.0;
                let tol = if exact {
                    0.0
                } else {
                    4.0 * n * W::EPS * sums[i]
                };
                let diff = (got[i].value() - want[i].value()).abs();
                assert!(
                    diff <= tol,
                    "{name}: {code} differs from lookout at step {step}, state {i}: \
                     {:?} against {:?} (|diff| {diff:e} > {tol:e})",
                    got[i],
                    want[i]
                );
            }
        }
    }
    let x = lookout.state();
    for (_, b) in baselines.iter_mut() {
        b.set_state(x);
    }
}

fn boxed<
    W: 'static,
    S: Stepper<W, N, M, P> + 'static,
    const N: usize,
    const M: usize,
    const P: usize,
>(
    code: &'static str,
    mut s: S,
    u: [W; M],
    y: [W; P],
) -> Entry {
    Entry {
        code,
        run: Box::new(move |k| run(&mut s, &u, &y, k)),
    }
}

/// A group: lookout and the four baselines of one form, checked, boxed.
#[allow(clippy::too_many_arguments)]
fn group<W: Value, const N: usize, const M: usize, const P: usize>(
    scalar: &'static str,
    form: u8,
    reference: &FloatTables<f64, N, M, P>,
    u: [W; M],
    y: [W; P],
    mut lookout: impl Stepper<W, N, M, P> + 'static,
    mut dynamic: impl Stepper<W, N, M, P> + 'static,
    mut looped: impl Stepper<W, N, M, P> + 'static,
    mut by_ref: impl Stepper<W, N, M, P> + 'static,
    mut gemv: impl Stepper<W, N, M, P> + 'static,
) -> Group {
    let name = format!("{scalar} {} ({N},{M},{P})", form_name(form));
    check(
        &name,
        form,
        reference,
        &mut lookout,
        &mut [
            (BASELINES[0], &mut dynamic),
            (BASELINES[1], &mut looped),
            (BASELINES[2], &mut by_ref),
            (BASELINES[3], &mut gemv),
        ],
        &u,
        &y,
    );
    Group {
        form: form_name(form),
        scalar,
        size: (N, M, P),
        macs: if form == FUSED {
            macs_fused(N, M, P)
        } else {
            macs_full(N, M, P)
        },
        entries: vec![
            boxed("lookout", lookout, u, y),
            boxed(BASELINES[0], dynamic, u, y),
            boxed(BASELINES[1], looped, u, y),
            boxed(BASELINES[2], by_ref, u, y),
            boxed(BASELINES[3], gemv, u, y),
        ],
    }
}

fn leak<T>(t: T) -> &'static T {
    Box::leak(Box::new(t))
}

fn map<A: Copy, B: Copy, const R: usize, const C: usize>(
    m: &Matrix<A, R, C>,
    f: impl Fn(A) -> B,
) -> Matrix<B, R, C> {
    Matrix::from_cols(m.as_cols().map(|c| c.map(&f)))
}

/// The f64 tables of `form` in the one-struct layout of the baselines.
fn reference<const N: usize, const M: usize, const P: usize>(
    sc: &Scenario<N, M, P>,
    form: u8,
) -> FloatTables<f64, N, M, P> {
    let p = &sc.predictor.plant;
    match form {
        PREDICTOR => FloatTables {
            a: p.a,
            b: p.b,
            c: p.c,
            d: p.d,
            gain: sc.predictor.l,
        },
        CURRENT => FloatTables {
            a: p.a,
            b: p.b,
            c: p.c,
            d: p.d,
            gain: sc.current.k,
        },
        _ => FloatTables {
            a: sc.fused.f,
            b: sc.fused.g,
            c: sc.fused.c,
            d: sc.fused.d,
            gain: sc.fused.h,
        },
    }
}

/// The three float groups of one size, in `T`.
pub fn float_groups<T, const N: usize, const M: usize, const P: usize>(
    scalar: &'static str,
) -> Vec<Group>
where
    T: Real + RealField + Copy + Value,
{
    let sc = Scenario::<N, M, P>::new();
    let cv = |v: f64| -> T { nalgebra::convert(v) };
    let (x0, u, y) = (sc.x0.map(cv), sc.u.map(cv), sc.y.map(cv));
    let plant = |p: &lookout::Plant<f64, N, M, P>| lookout::Plant {
        a: map(&p.a, cv),
        b: map(&p.b, cv),
        c: map(&p.c, cv),
        d: map(&p.d, cv),
    };
    let pt = leak(lookout::PredictorTables {
        plant: plant(&sc.predictor.plant),
        l: map(&sc.predictor.l, cv),
        gate: None,
    });
    let ct = leak(lookout::CurrentTables {
        plant: plant(&sc.current.plant),
        k: map(&sc.current.k, cv),
        gate: None,
    });
    let ft = leak(lookout::FusedTables {
        f: map(&sc.fused.f, cv),
        g: map(&sc.fused.g, cv),
        h: map(&sc.fused.h, cv),
        c: map(&sc.fused.c, cv),
        d: map(&sc.fused.d, cv),
        gate: None,
    });
    let tables = |form: u8| {
        let r = reference(&sc, form);
        FloatTables {
            a: map(&r.a, cv),
            b: map(&r.b, cv),
            c: map(&r.c, cv),
            d: map(&r.d, cv),
            gain: map(&r.gain, cv),
        }
    };
    macro_rules! float_group {
        ($form:expr, $observer:expr) => {{
            let t = tables($form);
            group(
                scalar,
                $form,
                &reference(&sc, $form),
                u,
                y,
                $observer,
                FloatDynamic::<T, { $form }>::new(&t, x0),
                FloatLoop::<T, N, M, P, { $form }>::new(&t, x0),
                FloatStatic::<T, N, M, P, { $form }, false>::new(&t, x0),
                FloatStatic::<T, N, M, P, { $form }, true>::new(&t, x0),
            )
        }};
    }
    vec![
        float_group!(PREDICTOR, PredictorObserver::new(pt, x0)),
        float_group!(CURRENT, CurrentObserver::new(ct, x0)),
        float_group!(FUSED, FusedObserver::new(ft, x0)),
    ]
}

/// The three fixed-point groups of one size, in `Q` with tables from
/// `from_float`.
pub fn fixed_groups<Q, const N: usize, const M: usize, const P: usize>(
    scalar: &'static str,
) -> Vec<Group>
where
    Q: Word + Value,
{
    let sc = Scenario::<N, M, P>::new();
    let s = sc.scales;
    let q = |v: f64, e: i8| Q::from_f64(v, e).unwrap_or(Q::ZERO);
    let x0: [Q; N] = core::array::from_fn(|i| q(sc.x0[i], s.state[i]));
    let u: [Q; M] = core::array::from_fn(|k| q(sc.u[k], s.input[k]));
    let y: [Q; P] = core::array::from_fn(|j| q(sc.y[j], s.output[j]));
    let (pt, ct, ft) = sc.fixed::<Q>();
    let (pt, ct, ft) = (leak(pt), leak(ct), leak(ft));
    // lookout's rows run on the tables with their proof of headroom, as a
    // firmware running generated tables does (plain multiply-accumulate).
    let proven = |e: lookout::HeadroomError| -> ! {
        eprintln!("scenario ({N},{M},{P}): {e}");
        std::process::exit(1)
    };
    let ptp = leak(pt.check().unwrap_or_else(|e| proven(e)));
    let ctp = leak(ct.check().unwrap_or_else(|e| proven(e)));
    let ftp = leak(ft.check().unwrap_or_else(|e| proven(e)));
    let predictor = FixedTables {
        a: pt.a,
        b: pt.b,
        c: pt.output.c,
        d: pt.output.d,
        gain: pt.l,
        exp: pt.exp,
        gain_exp: pt.exp,
        out_exp: pt.output.exp,
    };
    let current = FixedTables {
        a: ct.a,
        b: ct.b,
        c: ct.output.c,
        d: ct.output.d,
        gain: ct.k,
        exp: ct.exp,
        gain_exp: ct.k_exp,
        out_exp: ct.output.exp,
    };
    let fused = FixedTables {
        a: ft.f,
        b: ft.g,
        c: ft.output.c,
        d: ft.output.d,
        gain: ft.h,
        exp: ft.exp,
        gain_exp: ft.exp,
        out_exp: ft.output.exp,
    };
    macro_rules! fixed_group {
        ($form:expr, $t:expr, $observer:expr) => {{
            let t = $t;
            group(
                scalar,
                $form,
                &reference(&sc, $form),
                u,
                y,
                $observer,
                FixedDynamic::<Q, { $form }>::new(&t, x0),
                FixedLoop::<Q, N, M, P, { $form }>::new(&t, x0),
                FixedStatic::<Q, N, M, P, { $form }, false>::new(&t, x0),
                FixedStatic::<Q, N, M, P, { $form }, true>::new(&t, x0),
            )
        }};
    }
    vec![
        fixed_group!(
            PREDICTOR,
            predictor,
            FixedPredictorObserver::proven(ptp, x0)
        ),
        fixed_group!(CURRENT, current, FixedCurrentObserver::proven(ctp, x0)),
        fixed_group!(FUSED, fused, FixedFusedObserver::proven(ftp, x0)),
    ]
}

/// The sizes (N, M, P) every form is measured at.
pub const SIZES: [(usize, usize, usize); 4] = [(2, 1, 1), (4, 1, 2), (8, 2, 3), (12, 3, 4)];

/// The three groups of one scalar ("f32", "f64", "q31", "q15") and size
/// (one of [`SIZES`]); `None` for any other.
pub fn groups(scalar: &str, size: (usize, usize, usize)) -> Option<Vec<Group>> {
    macro_rules! sizes {
        ($(($n:literal, $m:literal, $p:literal)),*) => {
            match (scalar, size) {
                $(
                    ("f32", ($n, $m, $p)) => Some(float_groups::<f32, $n, $m, $p>("f32")),
                    ("f64", ($n, $m, $p)) => Some(float_groups::<f64, $n, $m, $p>("f64")),
                    ("q31", ($n, $m, $p)) => Some(fixed_groups::<Q31, $n, $m, $p>("q31")),
                    ("q15", ($n, $m, $p)) => Some(fixed_groups::<Q15, $n, $m, $p>("q15")),
                )*
                _ => None,
            }
        };
    }
    sizes!((2, 1, 1), (4, 1, 2), (8, 2, 3), (12, 3, 4))
}

/// The scalars every form is measured in.
pub const SCALARS: [&str; 4] = ["f32", "f64", "q31", "q15"];

/// Every group: 4 sizes × 4 scalars × 3 forms.
pub fn all_groups() -> Vec<Group> {
    SIZES
        .iter()
        .flat_map(|&size| {
            SCALARS
                .iter()
                .flat_map(move |s| groups(s, size).unwrap_or_default())
        })
        .collect()
}
