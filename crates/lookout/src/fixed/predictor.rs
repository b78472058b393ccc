//! The fixed-point predictor (Luenberger) observer.

use super::arith::{Accumulation, Exact, Kernels, Saturating, Saturations};
use super::format::{Fixed, Wide};
use super::headroom::Proven;
use super::measurement::innovation;
use super::tables::FixedPredictorTables;
use crate::{ChannelMask, Status};
use core::marker::PhantomData;

/// Discrete predictor (Luenberger) observer in Q15 or Q31, integer only.
///
/// The same update as [`PredictorObserver`](crate::PredictorObserver), on
/// Q values of the normalised signals (see [`Fixed`] for the format):
///
/// ```text
/// r[k]    = y[k] − round(C x̂[k] + D u[k])          saturated to Q
/// x̂[k+1] = round(A x̂[k] + B u[k] + L r[k])        saturated to Q
/// ```
///
/// Each element is one dot product in the wide accumulator and one rounding
/// (half up). Cost as the float observer: N·N + N·M + 2·N·P + P·M
/// multiply-adds, plus P·P + P with a gate.
///
/// Error of one step, against exact arithmetic on the same Q state, input
/// and reading: at most ½ LSB in each innovation element, and at most
/// ½ + ½ Σ_j |L̄_ij| LSB in state i, where L̄_ij = L_ij · 2^(s_yj − s_xi) is
/// the normalised gain (LSB of x_i per LSB of r_j). On an exact model these
/// errors pass through the normalised error dynamics Ā − L̄ C̄; if that
/// matrix has ∞-norm ρ < 1, the deviation from the exact recursion stays
/// below (½ + ½ ‖L̄‖∞) / (1 − ρ) LSB for ever (tested in `fixed_properties`).
///
/// Integers have no NaN: a dropout is a channel outside the `valid` mask.
/// Saturated stores are counted in [`Status::saturations`]; no input is ever
/// refused.
///
/// `K` says how products are added: built with [`new`](Self::new) on any
/// tables, saturating; built with [`proven`](Self::proven) on tables that
/// carry the proof of headroom ([`Proven`]), plainly, with the same results.
#[derive(Clone, Debug)]
pub struct FixedPredictorObserver<
    't,
    Q: Fixed,
    const N: usize,
    const M: usize,
    const P: usize,
    K: Accumulation = Saturating,
> {
    kernel: PhantomData<K>,
    tables: &'t FixedPredictorTables<Q, N, M, P>,
    x: [Q; N],
    initial: [Q; N],
    r: [Q; P],
    /// Consecutive samples without a correction (the gate's recovery stage).
    misses: u16,
}

constructors!(
    FixedPredictorObserver,
    FixedPredictorTables,
    /// An observer on `tables` starting from the estimate `x0`; more than 32
    /// outputs is a compile error.
);

impl<'t, Q: Fixed, const N: usize, const M: usize, const P: usize, K: Accumulation>
    FixedPredictorObserver<'t, Q, N, M, P, K>
{
    const fn with_kernel(tables: &'t FixedPredictorTables<Q, N, M, P>, x0: [Q; N]) -> Self {
        const { assert!(P <= 32, "an observer has at most 32 outputs") };
        Self {
            kernel: PhantomData,
            tables,
            x: x0,
            initial: x0,
            r: [Q::ZERO; P],
            misses: 0,
        }
    }

    /// One step with every channel of `y` offered.
    pub fn step(&mut self, u: &[Q; M], y: &[Q; P]) -> Status {
        self.step_masked(u, y, ChannelMask::all(P))
    }

    /// One step using only the channels in `valid`.
    pub fn step_masked(&mut self, u: &[Q; M], y: &[Q; P], valid: ChannelMask) -> Status {
        let t = self.tables;
        let mut sat = Saturations::default();
        let (r, mut status) = innovation::<K, Q, N, M, P>(
            &t.output,
            t.gate.as_ref().map(|g| (g, &mut self.misses)),
            &self.x,
            u,
            y,
            valid,
            &mut sat,
        );
        let mut acc = [<Q::Acc as Wide>::ZERO; N];
        K::mul_acc(&t.a, &self.x, &mut acc);
        K::mul_acc(&t.b, u, &mut acc);
        if status.corrected() {
            K::mul_acc(&t.l, &r, &mut acc);
        }
        self.x = sat.store_rows::<K, Q, N>(&acc, &t.exp);
        self.r = r;
        status.saturations = sat.0;
        status
    }

    /// One step without a measurement: x̂ ← round(A x̂ + B u).
    pub fn predict(&mut self, u: &[Q; M]) -> Status {
        self.step_masked(u, &[Q::ZERO; P], ChannelMask::NONE)
    }

    /// The estimate x̂\[k\] (the state after the last step).
    pub const fn estimate(&self) -> &[Q; N] {
        &self.x
    }

    /// The innovation of the last step (zero on channels it did not use).
    pub const fn innovation(&self) -> &[Q; P] {
        &self.r
    }

    /// Replaces the estimate.
    pub fn set_state(&mut self, x: [Q; N]) {
        self.x = x;
        self.misses = 0;
    }

    /// Returns to the estimate given to [`new`](Self::new) and clears the
    /// innovation.
    pub fn reset(&mut self) {
        self.x = self.initial;
        self.r = [Q::ZERO; P];
        self.misses = 0;
    }

    /// The tables the observer runs on.
    pub const fn tables(&self) -> &'t FixedPredictorTables<Q, N, M, P> {
        self.tables
    }
}
