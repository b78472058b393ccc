//! Stepping the real `lookout` runtime with sizes known only at run time.
//!
//! The runtime's observers have const-generic sizes. A design runs in a
//! size class ([`crate::sizes`]: a finite set of N, M, P, chosen so that
//! every model the design accepts has one): its states, inputs and outputs
//! are zero-padded up to the class. Tables are built once per run, owned on
//! the heap ([`TableSet`]), and observers borrow them ([`Stepper`]).
//!
//! Why padding is exact. Padded states get zero rows and columns in every
//! table (A, B, the gain, F, G, H, and zero columns in C), start at 0 and
//! stay 0: each of their updates is a sum of products with zero table
//! entries, and a real state's update adds their zero columns times their
//! zero value. In fixed point a padded row's exponent is 0 (the design's
//! hand-off pads with 0); it only shifts that row's zero sum, and the real
//! rows keep the integers and exponents the design emits; a padded state's
//! scale exponent is 0, at which 0 is exact and never saturates. Padded inputs get zero columns in B (G) and D and
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

use crate::SimError;
use crate::tables::{FixedTables, FloatTables, Scalar, fixed_tables, float_tables};
use lookout::{ChannelMask, Fixed, Observer, Q15, Q31, Status};
use lookout_design::Design;
use lookout_design::fixed_point::{dequantise_real, quantise_real};

/// A number format of the observer.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// `f64` tables and arithmetic: the reference.
    F64,
    /// `f32`.
    F32,
    /// The design's Q31 tables (its scales), as emitted.
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
    /// for the current form, whose error obeys e⁺ = F e), n per row; empty
    /// unless the run was asked to keep its series.
    pub estimate: Vec<f64>,
    /// Largest |x̂_i| over the run per state.
    pub estimate_peak: Vec<f64>,
    /// Saturated stores plus inputs and readings clamped to their scale.
    pub saturations: u64,
    /// Steps whose measurement failed the innovation gate.
    pub gated: usize,
    /// Which steps those were (for the plot; kept with the series only).
    pub gated_steps: Vec<usize>,
    /// Steps whose reading the gate applied untested after too many misses.
    pub reacquired: usize,
}

/// One observer step on the real-size data of a run.
pub trait Stepper {
    /// Steps with input `u` (m values), readings `y` (p) and their validity;
    /// returns the status and the number of values clamped on the way in.
    fn step(&mut self, u: &[f64], y: &[f64], valid: &[bool]) -> (Status, u32);
    /// Writes the first `out.len()` entries of the estimate x̂[k|k−1].
    fn estimate_into(&self, out: &mut [f64]);
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
    fn estimate_into(&self, out: &mut [f64]) {
        let s = self.0.scales().map(|s| &s.state);
        for (i, (o, &v)) in out.iter_mut().zip(self.0.estimate()).enumerate() {
            *o = v.to_f64(s.and_then(|s| s.get(i)).copied().unwrap_or(0));
        }
    }
}

/// One format's tables at a size class, owned (on the heap); observers
/// borrow them.
pub trait TableSet: Send {
    /// A new observer started from the estimate `x0` (run size), and how
    /// many of `x0`'s values were clamped into the format's range.
    fn observer<'a>(&'a self, x0: &[f64]) -> (Box<dyn Stepper + 'a>, u32);
}

/// Tables and the state exponents their observer's start is converted at
/// (zero for floats, which ignore them).
struct Owned<Tab, const N: usize> {
    tables: Tab,
    exps: [i8; N],
}

macro_rules! table_set {
    ($tab:ident => $obs:ident where $($bounds:tt)*) => {
        impl<S, const N: usize, const M: usize, const P: usize> TableSet
            for Owned<lookout::$tab<S, N, M, P>, N>
        where
            $($bounds)*
        {
            fn observer<'a>(&'a self, x0: &[f64]) -> (Box<dyn Stepper + 'a>, u32) {
                let mut clamped = 0;
                let x = signals::<S, N>(x0, Some(&self.exps), &mut clamped);
                let observer = lookout::$obs::new(&self.tables, x);
                (Box::new(Sized::<_, N, M, P>(observer)), clamped)
            }
        }
    };
}
table_set!(PredictorTables => PredictorObserver where S: Scalar + Signal);
table_set!(CurrentTables => CurrentObserver where S: Scalar + Signal);
table_set!(FusedTables => FusedObserver where S: Scalar + Signal);
table_set!(FixedPredictorTables => FixedPredictorObserver where S: Fixed + Signal + Send, S::Acc: Send);
table_set!(FixedCurrentTables => FixedCurrentObserver where S: Fixed + Signal + Send, S::Acc: Send);
table_set!(FixedFusedTables => FixedFusedObserver where S: Fixed + Signal + Send, S::Acc: Send);

fn owned<Tab: 'static, const N: usize>(tables: Tab, exps: [i8; N]) -> Box<Owned<Tab, N>> {
    Box::new(Owned { tables, exps })
}

fn float_set<T: Scalar + Signal + 'static, const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
) -> Result<Box<dyn TableSet>, SimError> {
    Ok(match float_tables::<T, N, M, P>(design, format)? {
        FloatTables::Predictor(t) => owned(t, [0; N]),
        FloatTables::Current(t) => owned(t, [0; N]),
        FloatTables::Fused(t) => owned(t, [0; N]),
    })
}

fn fixed_set<
    Q: Fixed<Acc: Send> + Signal + Send + Sync + 'static,
    const N: usize,
    const M: usize,
    const P: usize,
>(
    design: &Design,
    format: Format,
) -> Result<Box<dyn TableSet>, SimError> {
    Ok(match fixed_tables::<Q, N, M, P>(design, format)? {
        FixedTables::Predictor(t) => {
            let e = t.scales.state;
            owned(t, e)
        }
        FixedTables::Current(t) => {
            let e = t.scales.state;
            owned(t, e)
        }
        FixedTables::Fused(t) => {
            let e = t.scales.state;
            owned(t, e)
        }
    })
}

/// `format`'s tables at sizes N, M, P (N ≥ n, M ≥ m, P ≥ p: the rest is
/// padding).
pub(crate) fn build_sized<const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
) -> Result<Box<dyn TableSet>, SimError> {
    match format {
        Format::F64 => float_set::<f64, N, M, P>(design, format),
        Format::F32 => float_set::<f32, N, M, P>(design, format),
        Format::Q31 => fixed_set::<Q31, N, M, P>(design, format),
        Format::Q15 => fixed_set::<Q15, N, M, P>(design, format),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::config::{InputDisturbance, RunConfig};
    use crate::engine::over;
    use crate::plant::{TruePlant, record};
    use crate::signal::InputSignal;
    use lookout_design::Design;

    const SEED: u64 = 11;

    fn config() -> RunConfig {
        RunConfig {
            steps: 400,
            seed: SEED,
            initial_error: vec![0.05, 2.0],
            input: InputSignal::Prbs {
                amplitude: 1.0,
                hold: 7,
            },
            process_noise: None,
            measurement_noise: Some(1e-3),
            mismatch: 0.05,
            disturbance: Some(InputDisturbance {
                input: 0,
                size: 0.2,
                start: 100,
            }),
            dropout_rate: 0.2,
            outlier_rate: 0.05,
            outlier_size: 0.5,
            tolerance: None,
        }
    }

    /// The padding argument of the module docs, checked: the demo models
    /// (predictor with Q tables; current form with a gate) run in their
    /// size class (N = 2, M = P = 4), with states padded too (N = 5 and
    /// N = 12, M = P = 8) give the same estimates, bit for bit, as at their
    /// own sizes, with dropouts, outliers, noise and mismatch exercising the
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
            let opts = config();
            let plant = TruePlant::of(&design, opts.mismatch, SEED).unwrap();
            let (traj, _) = record(&design, &plant, &opts, SEED).unwrap();
            assert!(traj.dropped > 0 && traj.outliers > 0);
            let x0 = [0.05, -2.0];
            let mut gated = 0;
            for format in crate::formats(&design) {
                let at = |t: Box<dyn TableSet>| over(&vec![(format, t)], &traj, &x0).remove(0);
                let exact = at(build_sized::<2, 1, 1>(&design, format).unwrap());
                for padded in [
                    at(crate::sizes::build(&design, format).unwrap()),
                    at(build_sized::<5, 4, 4>(&design, format).unwrap()),
                    at(build_sized::<12, 8, 8>(&design, format).unwrap()),
                ] {
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
                }
                gated += exact.gated;
            }
            if design.gate.is_some() {
                assert!(gated > 0, "{model}: the gate branch was not exercised");
            }
        }
    }

    fn chain40() -> (Design, crate::plant::Trajectory) {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("../lookout-cli/tests/fixtures/sizes/chain40_5_inputs_6_outputs.toml");
        let design = lookout_design::design_file(&path).unwrap();
        let mut opts = config();
        opts.disturbance = None;
        opts.steps = 300;
        let plant = TruePlant::of(&design, opts.mismatch, SEED).unwrap();
        (
            design.clone(),
            record(&design, &plant, &opts, SEED).unwrap().0,
        )
    }

    /// At size: the 40-state, 5-input, 6-output chain runs in class
    /// (64, 8, 8), its tables built on a thread of their own, and gives the
    /// same estimates bit for bit as at (40, 5, 6).
    #[test]
    fn forty_states_padded_to_their_class_equal_unpadded() {
        let (design, traj) = chain40();
        assert_eq!(crate::sizes::check_sizes(&design).unwrap(), (64, 8, 8));
        let x0 = vec![0.1; 40];
        for format in [Format::F64, Format::F32] {
            let at = |t: Box<dyn TableSet>| over(&vec![(format, t)], &traj, &x0).remove(0);
            let exact = at(build_sized::<40, 5, 6>(&design, format).unwrap());
            let padded = at(crate::sizes::build(&design, format).unwrap());
            assert!(traj.dropped > 0 && exact.estimate.len() == 301 * 40);
            for (p, e) in padded.estimate.iter().zip(&exact.estimate) {
                assert!(p.to_bits() == e.to_bits() || (*p == 0.0 && *e == 0.0));
            }
        }
    }

    /// Not a check: prints the cost of a step padded to the class against
    /// one at the model's own sizes (`cargo test --release -p lookout-sim
    /// step_cost -- --ignored --nocapture`).
    #[test]
    #[ignore = "a measurement, not a check"]
    fn step_cost_padded_against_unpadded() {
        let (design, traj) = chain40();
        let x0 = vec![0.1; 40];
        for format in [Format::F64, Format::F32] {
            let time = |t: Box<dyn TableSet>| {
                let built = vec![(format, t)];
                over(&built, &traj, &x0);
                let start = std::time::Instant::now();
                for _ in 0..200 {
                    over(&built, &traj, &x0);
                }
                start.elapsed().as_secs_f64() / (200.0 * 300.0)
            };
            let exact = time(build_sized::<40, 5, 6>(&design, format).unwrap());
            let padded = time(crate::sizes::build(&design, format).unwrap());
            println!(
                "{}: {:.2} µs a step unpadded, {:.2} µs padded to (64, 8, 8): ratio {:.2}",
                format.name(),
                exact * 1e6,
                padded * 1e6,
                padded / exact
            );
        }
    }
}
