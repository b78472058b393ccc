//! Stepping the real `lookout` runtime with sizes known only at run time.
//!
//! The runtime's observers have const-generic sizes. The state count N is
//! dispatched exactly (1 ≤ N ≤ [`MAX_N`], one instance per N and observer
//! type); inputs and outputs are zero-padded to [`MAX_M`] and [`MAX_P`].
//!
//! Why padding is exact. Padded inputs get zero columns in B (G) and D and
//! a zero value; padded outputs get zero rows in C and D, zero columns in the
//! gain (L, K or H), zero rows and columns in the gate's S⁻¹, a zero
//! 1/S_jj, and a zero reading that is always *offered* as valid. Then:
//!
//! * every product with a padded column is 0·0 = 0 and the runtime adds the
//!   columns in order, so the real columns' sum is formed exactly as
//!   unpadded and then has +0 added, which changes no value (only, at most,
//!   the sign of an exact zero); in fixed point 0·0 = 0 in the integer
//!   accumulator, and the row exponents depend only on row sums, which the
//!   zeros do not change;
//! * a padded innovation is 0 − 0 = 0, so it adds nothing through its zero
//!   gain column;
//! * the runtime chooses between its "every channel" and "some missing"
//!   branches (the joint gate test, the fused stand-in readings) by whether
//!   all P channels are present. Offering the padded channels keeps that
//!   choice the same as unpadded: all present exactly when every real
//!   channel is. Masking them as missing instead would switch a gated
//!   observer to its per-channel test on every step. A padded channel passes
//!   the per-channel test (0 ≤ limit), and the joint test's extra terms are 0.
//!
//! With every real reading dropped the padded channels are masked too, so
//! the padded step also reports `PredictedOnly` (it would otherwise
//! "correct" through zero innovations, and the gate's count of consecutive
//! misses, which widens its test, would differ). A unit test checks that a
//! padded run equals an unpadded one bit for bit.

use super::plant::Trajectory;
use crate::error::CliError;
use lookout::{
    ChannelMask, CurrentObserver, CurrentTables, Fixed, FixedCurrentObserver, FixedCurrentTables,
    FixedFusedObserver, FixedFusedTables, FixedPredictorObserver, FixedPredictorTables,
    FusedObserver, FusedTables, Gate, Matrix, Observer, Outcome, Plant, PredictorObserver,
    PredictorTables, Q15, Q31, Real, Recovery, Scales, Status,
};
use lookout_design::Design;
use lookout_design::fixed_point::{
    ConvertError, QuantiseTables as _, QuantisedTable, dequantise_real, quantise_real,
};
use lookout_design::model::{FixedFormat, Form};
use nalgebra::DMatrix;

/// Largest state count the command steps (estimated states, disturbance
/// states included).
pub const MAX_N: usize = 8;
/// Largest input count (inputs are padded to it).
pub const MAX_M: usize = 4;
/// Largest output count (outputs are padded to it).
pub const MAX_P: usize = 4;

/// A number format of the observer.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// `f64` tables and arithmetic: the reference.
    F64,
    /// `f32`.
    F32,
    /// Q31 tables from `from_float` with the design's scales.
    Q31,
    /// Q15.
    Q15,
}

impl Format {
    /// The name used in reports and JSON.
    pub fn name(self) -> &'static str {
        match self {
            Format::F64 => "f64",
            Format::F32 => "f32",
            Format::Q31 => "q31",
            Format::Q15 => "q15",
        }
    }
}

/// What one format's observer did over a run.
#[derive(Debug, Clone)]
pub struct FormatRun {
    /// The format.
    pub format: Format,
    /// Estimate of every state at steps 0..=steps (the prediction x̂[k|k−1]
    /// for the current form, whose error obeys e⁺ = F e), n per row.
    pub estimate: Vec<f64>,
    /// Saturated stores plus inputs and readings clamped to their scale.
    pub saturations: u64,
    /// Steps whose measurement failed the innovation gate.
    pub gated: usize,
    /// Which steps those were (for the plot).
    pub gated_steps: Vec<usize>,
    /// Steps whose reading the gate applied untested after too many misses.
    pub reacquired: usize,
}

/// Refuses models the dispatch does not cover.
pub fn check_sizes(design: &Design) -> Result<(), CliError> {
    let (n, m, p) = (design.n(), design.m(), design.p());
    if n == 0 || n > MAX_N || m > MAX_M || p == 0 || p > MAX_P {
        return Err(CliError::BadInput(format!(
            "{}: simulate supports 1 to {MAX_N} states (disturbance states included), up to {MAX_M} inputs and 1 to {MAX_P} outputs; this model has n = {n}, m = {m}, p = {p}",
            design.origin
        )));
    }
    Ok(())
}

/// Runs `format` over `traj` from the estimate `x0`.
pub fn run(
    design: &Design,
    format: Format,
    traj: &Trajectory,
    x0: &[f64],
) -> Result<FormatRun, CliError> {
    macro_rules! dispatch {
        ($($n:literal)*) => {
            match design.n() {
                $($n => run_sized::<$n, MAX_M, MAX_P>(design, format, traj, x0),)*
                _ => check_sizes(design).and(Err(CliError::Failure("size dispatch".into()))),
            }
        };
    }
    dispatch!(1 2 3 4 5 6 7 8)
}

/// The float type of a float observer.
trait Scalar: Real {
    fn of(v: f64) -> Option<Self>;
    fn to(self) -> f64;
}

impl Scalar for f64 {
    fn of(v: f64) -> Option<Self> {
        Some(v)
    }
    fn to(self) -> f64 {
        self
    }
}

impl Scalar for f32 {
    fn of(v: f64) -> Option<Self> {
        #[allow(clippy::cast_possible_truncation)] // rounding to f32 is the point
        let narrow = v as f32;
        (narrow.is_finite() || !v.is_finite()).then_some(narrow)
    }
    fn to(self) -> f64 {
        f64::from(self)
    }
}

/// `m` (r × c, r ≤ R, c ≤ C) zero-padded to R × C in type T.
fn padded<T: Scalar, const R: usize, const C: usize>(
    name: &str,
    m: &DMatrix<f64>,
) -> Result<Matrix<T, R, C>, CliError> {
    let zero = T::of(0.0).ok_or_else(|| CliError::Failure("zero".into()))?;
    let mut rows = [[zero; C]; R];
    for (i, row) in rows.iter_mut().enumerate().take(m.nrows()) {
        for (j, slot) in row.iter_mut().enumerate().take(m.ncols()) {
            let v = m.get((i, j)).copied().unwrap_or(0.0);
            *slot = T::of(v).ok_or_else(|| {
                CliError::BadInput(format!(
                    "table {name}: entry ({i}, {j}) = {v:e} does not fit the number format"
                ))
            })?;
        }
    }
    Ok(Matrix::from_rows(rows))
}

fn padded_vec<T: Scalar, const K: usize>(v: &[f64]) -> [T; K] {
    let mut out = [T::of(0.0).unwrap_or_else(T::nan); K];
    for (o, &x) in out.iter_mut().zip(v) {
        *o = T::of(x).unwrap_or_else(T::nan);
    }
    out
}

/// The design's float tables for its form, padded, in type T.
enum FloatTables<T, const N: usize, const M: usize, const P: usize> {
    Predictor(PredictorTables<T, N, M, P>),
    Current(CurrentTables<T, N, M, P>),
    Fused(FusedTables<T, N, M, P>),
}

/// The gate's widened limits in `T` (a limit beyond `T`'s range is
/// infinite: that stage accepts every finite reading).
fn recovery<T: Scalar>(g: &lookout_design::design::GateDesign) -> Recovery<T> {
    let of = |v: f64| T::of(v).unwrap_or_else(T::infinity);
    let mut r = Recovery::none(of(0.0));
    let pairs = g.recovery_limits();
    r.stages = u8::try_from(pairs.len()).unwrap_or(u8::MAX);
    r.per_miss = g.per_miss;
    for (slot, [a, b]) in r.limits.iter_mut().zip(pairs) {
        *slot = [of(a), of(b)];
    }
    r
}

fn float_tables<T: Scalar, const N: usize, const M: usize, const P: usize>(
    d: &Design,
) -> Result<FloatTables<T, N, M, P>, CliError> {
    let gate = match &d.gate {
        None => None,
        Some(g) => Some(Gate {
            s_inv: padded("S⁻¹", &g.s_inv)?,
            limit: T::of(g.limit).unwrap_or_else(T::infinity),
            channel_inv_variance: padded_vec(&g.channel_inv_variance),
            channel_limit: T::of(g.channel_limit).unwrap_or_else(T::infinity),
            recovery: recovery(g),
        }),
    };
    let plant = || -> Result<Plant<T, N, M, P>, CliError> {
        Ok(Plant {
            a: padded("ad", &d.ad)?,
            b: padded("bd", &d.bd)?,
            c: padded("cd", &d.cd)?,
            d: padded("dd", &d.dd)?,
        })
    };
    Ok(match (&d.gain, d.model.observer.form) {
        (Some(l), Form::Predictor) => FloatTables::Predictor(PredictorTables {
            plant: plant()?,
            l: padded("l", l)?,
            gate,
        }),
        (Some(k), Form::Current) => FloatTables::Current(CurrentTables {
            plant: plant()?,
            k: padded("k", k)?,
            gate,
        }),
        (None, _) => FloatTables::Fused(FusedTables {
            f: padded("f", &d.f)?,
            g: padded("g", &d.g)?,
            h: padded("h", &d.h)?,
            c: padded("cd", &d.cd)?,
            d: padded("dd", &d.dd)?,
            gate,
        }),
    })
}

/// One observer step on the real-size data of a run.
trait Stepper {
    /// Steps with input `u` (m values), readings `y` (p) and their validity;
    /// returns the status and the number of values clamped on the way in.
    fn step(&mut self, u: &[f64], y: &[f64], valid: &[bool]) -> (Status, u32);
    /// Appends the first `n` entries of the estimate x̂[k|k−1].
    fn push_estimate(&self, n: usize, out: &mut Vec<f64>);
}

fn mask<const P: usize>(valid: &[bool]) -> ChannelMask {
    if !valid.iter().any(|&ok| ok) {
        return ChannelMask::NONE;
    }
    valid.iter().enumerate().fold(
        ChannelMask::all(P),
        |m, (j, &ok)| if ok { m } else { m.without(j) },
    )
}

/// `v` as a Q value at scale exponent `e`, clamped to the word when it is
/// outside (second value: whether it was).
fn to_q<Q: Fixed>(v: f64, e: i8) -> (Q, bool) {
    match quantise_real::<Q>(v, e) {
        Some(q) => (q, false),
        None if v > 0.0 => (Q::MAX, true),
        None => (Q::MIN, true),
    }
}

fn q_vec<Q: Fixed, const K: usize>(v: &[f64], exps: &[i8; K], clamped: &mut u32) -> [Q; K] {
    let mut out = [Q::ZERO; K];
    for ((o, &x), &e) in out.iter_mut().zip(v).zip(exps) {
        let (q, c) = to_q(x, e);
        *o = q;
        *clamped += u32::from(c);
    }
    out
}

/// A scalar the simulator's f64 signals convert to and from, at a scale
/// exponent (which floats ignore).
trait Signal: Copy {
    /// `v` in this scalar; second value: whether it was clamped into range.
    fn from_f64(v: f64, e: i8) -> (Self, bool);
    /// Back to f64.
    fn to_f64(self, e: i8) -> f64;
}

impl<T: Scalar> Signal for T {
    fn from_f64(v: f64, _: i8) -> (Self, bool) {
        (T::of(v).unwrap_or_else(T::nan), false)
    }
    fn to_f64(self, _: i8) -> f64 {
        self.to()
    }
}

macro_rules! q_signal {
    ($($q:ty),*) => {$(
        impl Signal for $q {
            fn from_f64(v: f64, e: i8) -> (Self, bool) {
                to_q(v, e)
            }
            fn to_f64(self, e: i8) -> f64 {
                dequantise_real(self, e)
            }
        }
    )*};
}
q_signal!(Q15, Q31);

/// A runtime observer at sizes N, M, P, stepped on run-size f64 data.
struct Sized<O, const N: usize, const M: usize, const P: usize>(O);

/// The signals `v` (run size) in the observer's scalar at the exponents
/// `exps` (none for a float observer), padded with zeros; counts clamps.
fn signals<S: Signal, const K: usize>(
    v: &[f64],
    exps: Option<&[i8; K]>,
    clamped: &mut u32,
) -> [S; K] {
    core::array::from_fn(|i| {
        let e = exps.and_then(|e| e.get(i)).copied().unwrap_or(0);
        let (q, c) = S::from_f64(v.get(i).copied().unwrap_or(0.0), e);
        *clamped += u32::from(c);
        q
    })
}

impl<O, const N: usize, const M: usize, const P: usize> Stepper for Sized<O, N, M, P>
where
    O: Observer<N, M, P>,
    O::Scalar: Signal,
{
    fn step(&mut self, u: &[f64], y: &[f64], valid: &[bool]) -> (Status, u32) {
        let s = self.0.scales();
        let mut clamped = 0;
        let u = signals(u, s.map(|s| &s.input), &mut clamped);
        let y = signals(y, s.map(|s| &s.output), &mut clamped);
        (self.0.step_masked(&u, &y, mask::<P>(valid)), clamped)
    }
    fn push_estimate(&self, n: usize, out: &mut Vec<f64>) {
        let s = self.0.scales().map(|s| &s.state);
        out.extend(
            self.0
                .estimate()
                .iter()
                .enumerate()
                .take(n)
                .map(|(i, &v)| v.to_f64(s.and_then(|s| s.get(i)).copied().unwrap_or(0))),
        );
    }
}

/// Drives `obs` over the run. Not generic: one copy serves every size.
fn drive(obs: &mut dyn Stepper, format: Format, traj: &Trajectory) -> FormatRun {
    let (n, m, p) = (traj.n, traj.m, traj.p);
    let mut run = FormatRun {
        format,
        estimate: Vec::with_capacity((traj.steps + 1) * n),
        saturations: 0,
        gated: 0,
        gated_steps: Vec::new(),
        reacquired: 0,
    };
    obs.push_estimate(n, &mut run.estimate);
    for k in 0..traj.steps {
        let u = traj.u.get(k * m..(k + 1) * m).unwrap_or(&[]);
        let y = traj.y.get(k * p..(k + 1) * p).unwrap_or(&[]);
        let valid = traj.valid.get(k * p..(k + 1) * p).unwrap_or(&[]);
        let (status, clamped) = obs.step(u, y, valid);
        run.saturations += u64::from(status.saturations) + u64::from(clamped);
        if status.outcome == Outcome::Gated {
            run.gated += 1;
            run.gated_steps.push(k);
        }
        run.reacquired += usize::from(status.outcome == Outcome::Reacquired);
        obs.push_estimate(n, &mut run.estimate);
    }
    run
}

/// Runs `format` at sizes N, M, P (M ≥ m, P ≥ p: the rest is padding).
pub(crate) fn run_sized<const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
    traj: &Trajectory,
    x0: &[f64],
) -> Result<FormatRun, CliError> {
    match format {
        Format::F64 => run_float::<f64, N, M, P>(design, format, traj, x0),
        Format::F32 => run_float::<f32, N, M, P>(design, format, traj, x0),
        Format::Q31 => run_fixed::<Q31, N, M, P>(design, format, traj, x0),
        Format::Q15 => run_fixed::<Q15, N, M, P>(design, format, traj, x0),
    }
}

fn run_float<T: Scalar, const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
    traj: &Trajectory,
    x0: &[f64],
) -> Result<FormatRun, CliError> {
    let x0 = padded_vec::<T, N>(x0);
    Ok(match float_tables::<T, N, M, P>(design)? {
        FloatTables::Predictor(t) => {
            drive(&mut Sized(PredictorObserver::new(&t, x0)), format, traj)
        }
        FloatTables::Current(t) => drive(&mut Sized(CurrentObserver::new(&t, x0)), format, traj),
        FloatTables::Fused(t) => drive(&mut Sized(FusedObserver::new(&t, x0)), format, traj),
    })
}

fn pad_exponents<const K: usize>(e: &[i8]) -> [i8; K] {
    let mut out = [0; K];
    for (o, &v) in out.iter_mut().zip(e) {
        *o = v;
    }
    out
}

fn run_fixed<Q: Fixed + Signal, const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
    traj: &Trajectory,
    x0: &[f64],
) -> Result<FormatRun, CliError> {
    let fixed = design
        .fixed_point
        .as_ref()
        .ok_or_else(|| CliError::Failure(format!("{}: no [fixed_point] section", format.name())))?;
    let scales = Scales::<N, M, P> {
        state: pad_exponents(&fixed.state_exponents),
        input: pad_exponents(&fixed.input_exponents),
        output: pad_exponents(&fixed.output_exponents),
    };
    let designed = match fixed.format {
        FixedFormat::Q31 => format == Format::Q31,
        FixedFormat::Q15 => format == Format::Q15,
    };
    let convert = |e: ConvertError| {
        CliError::BadInput(format!(
            "{}: {} tables cannot be built with the design's scales: {e:?}",
            design.origin,
            format.name()
        ))
    };
    let mut clamped = 0;
    let x0 = q_vec::<Q, N>(x0, &scales.state, &mut clamped);
    let mut run = match float_tables::<f64, N, M, P>(design)? {
        FloatTables::Predictor(t) => {
            let q = FixedPredictorTables::<Q, N, M, P>::from_float(&t, scales).map_err(convert)?;
            if designed {
                let o = &q.output;
                check_tables(
                    &fixed.form_tables,
                    &[
                        (&as_i64(&q.a), &q.exp),
                        (&as_i64(&q.b), &q.exp),
                        (&as_i64(&q.l), &q.exp),
                    ],
                    &[(&as_i64(&o.c), &o.exp), (&as_i64(&o.d), &o.exp)],
                )?;
            }
            drive(
                &mut Sized(FixedPredictorObserver::new(&q, x0)),
                format,
                traj,
            )
        }
        FloatTables::Current(t) => {
            let q = FixedCurrentTables::<Q, N, M, P>::from_float(&t, scales).map_err(convert)?;
            if designed {
                let o = &q.output;
                check_tables(
                    &fixed.form_tables,
                    &[
                        (&as_i64(&q.a), &q.exp),
                        (&as_i64(&q.b), &q.exp),
                        (&as_i64(&q.k), &q.k_exp),
                    ],
                    &[(&as_i64(&o.c), &o.exp), (&as_i64(&o.d), &o.exp)],
                )?;
            }
            drive(&mut Sized(FixedCurrentObserver::new(&q, x0)), format, traj)
        }
        FloatTables::Fused(t) => {
            let q = FixedFusedTables::<Q, N, M, P>::from_float(&t, scales).map_err(convert)?;
            if designed {
                let o = &q.output;
                check_tables(
                    &fixed.fused_tables,
                    &[
                        (&as_i64(&q.f), &q.exp),
                        (&as_i64(&q.g), &q.exp),
                        (&as_i64(&q.h), &q.exp),
                    ],
                    &[(&as_i64(&o.c), &o.exp), (&as_i64(&o.d), &o.exp)],
                )?;
            }
            drive(&mut Sized(FixedFusedObserver::new(&q, x0)), format, traj)
        }
    };
    run.saturations += u64::from(clamped);
    Ok(run)
}

/// The stored integers of a padded Q table, row-major.
fn as_i64<Q: Fixed, const R: usize, const C: usize>(m: &Matrix<Q, R, C>) -> Vec<Vec<i64>> {
    m.to_rows()
        .iter()
        .map(|row| row.iter().map(|q| q.to_i64()).collect())
        .collect()
}

/// Checks that the runtime's `from_float` made the integers and row
/// exponents the design emits (`tables` in the design's order: the three
/// state-row tables, then c and d).
fn check_tables(
    designed: &[QuantisedTable],
    state_rows: &[(&Vec<Vec<i64>>, &[i8])],
    output_rows: &[(&Vec<Vec<i64>>, &[i8])],
) -> Result<(), CliError> {
    let ours = state_rows.iter().chain(output_rows);
    if designed.len() != state_rows.len() + output_rows.len() {
        return Err(CliError::Failure(format!(
            "the design lists {} Q tables, the runtime builds {}",
            designed.len(),
            state_rows.len() + output_rows.len()
        )));
    }
    for (table, (ints, exps)) in designed.iter().zip(ours) {
        for i in 0..table.q.nrows() {
            let exp = exps.get(i).copied();
            if exp != table.exponents.get(i).copied() {
                return Err(CliError::Failure(format!(
                    "Q table {}: row {i} exponent {:?} from the runtime, {:?} from the design",
                    table.name,
                    exp,
                    table.exponents.get(i)
                )));
            }
            for j in 0..table.q.ncols() {
                let ours = ints.get(i).and_then(|r| r.get(j)).copied();
                let theirs = table.q.get((i, j)).copied();
                if ours != theirs {
                    return Err(CliError::Failure(format!(
                        "Q table {}: entry ({i}, {j}) is {ours:?} from the runtime's from_float, {theirs:?} in the design",
                        table.name
                    )));
                }
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cli::SimArgs;
    use crate::sim::options::SimOptions;
    use crate::sim::plant::{TruePlant, record};

    fn args(model: &str) -> SimArgs {
        SimArgs {
            model: model.into(),
            steps: Some(400),
            seed: 11,
            initial_error: Some("0.05,2".into()),
            input: "prbs:1:7".into(),
            process_noise: None,
            measurement_noise: Some(1e-3),
            mismatch: Some(0.05),
            disturbance: Some("0:0.2@100".into()),
            dropout_rate: 0.2,
            outlier_rate: 0.05,
            outlier_size: 0.5,
            tolerance: None,
            json: false,
            plot: None,
            font: None,
            csv: None,
            sweep: None,
            formats: None,
        }
    }

    /// The padding argument of the module docs, checked: the demo models
    /// (predictor with Q tables; current form with a gate) run padded to
    /// M = P = 4 give the same estimates, bit for bit, as at their own
    /// sizes, with dropouts, outliers, noise and mismatch exercising the
    /// missing-channel and gate branches. Zero is compared by value (a
    /// padded sum may turn −0 into +0, see the module docs).
    #[test]
    fn padded_run_equals_unpadded_bit_for_bit() {
        for model in [
            "../../examples/conveyor.toml",
            "../../examples/conveyor_kalman.toml",
        ] {
            let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join(model);
            let design = lookout_design::design_file(&path).unwrap();
            let a = args(model);
            let opts = SimOptions::from_args(&a, design.n(), design.m()).unwrap();
            let plant = TruePlant::of(&design, opts.mismatch, a.seed).unwrap();
            let (traj, _) = record(&design, &plant, &opts, a.seed).unwrap();
            assert!(traj.dropped > 0 && traj.outliers > 0);
            let x0 = [0.05, -2.0];
            let mut gated = 0;
            for format in crate::sim::formats(&design) {
                let padded = run(&design, format, &traj, &x0).unwrap();
                let exact = run_sized::<2, 1, 1>(&design, format, &traj, &x0).unwrap();
                assert_eq!(padded.estimate.len(), exact.estimate.len());
                for (k, (p, e)) in padded.estimate.iter().zip(&exact.estimate).enumerate() {
                    assert!(
                        p.to_bits() == e.to_bits() || (*p == 0.0 && *e == 0.0),
                        "{model} {}: entry {k}: padded {p:e}, unpadded {e:e}",
                        format.name()
                    );
                }
                assert_eq!(padded.gated, exact.gated);
                assert_eq!(padded.saturations, exact.saturations);
                gated += padded.gated;
            }
            if design.gate.is_some() {
                assert!(gated > 0, "{model}: the gate branch was not exercised");
            }
        }
    }
}
