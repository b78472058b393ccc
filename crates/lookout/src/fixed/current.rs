//! The fixed-point current-form (filter-form) observer.

use super::arith::{Accumulation, Exact, Kernels, Saturating, Saturations};
use super::format::{Fixed, Wide};
use super::headroom::Proven;
use super::measurement::{initial_status, innovation};
use super::tables::FixedCurrentTables;
use crate::gate::misses_after;
use crate::{ChannelMask, Outcome, Status};
use core::marker::PhantomData;

/// Discrete current-form observer (e.g. steady-state Kalman filter) in Q15
/// or Q31, integer only.
///
/// The same two updates as [`CurrentObserver`](crate::CurrentObserver), on
/// Q values of the normalised signals (see [`Fixed`] for the format):
///
/// ```text
/// r[k]       = y[k] − round(C x̂[k|k−1] + D u[k])       saturated
/// x̂[k|k]    = x̂[k|k−1] + round(K r[k])                 saturated
/// x̂[k+1|k]  = round(A x̂[k|k] + B u[k])                 saturated
/// ```
///
/// The correction is added to the prediction in the wide accumulator, so
/// each element is still rounded once. Cost as the float observer.
///
/// Error against exact arithmetic on the same Q values: ½ LSB per innovation
/// element, ½ + ½ Σ_j |K̄_ij| LSB in x̂[k|k]_i and ½ LSB more in the time
/// update; with Φ = Ā (I − K̄ C̄) (normalised) of ∞-norm ρ < 1 the deviation of
/// x̂[k+1|k] stays below (‖Ā‖∞ (½ + ½ ‖K̄‖∞) + ½) / (1 − ρ) LSB.
///
/// Dropouts are channels outside the mask; saturated stores are counted in
/// [`Status::saturations`] (a split [`correct`](Self::correct) and
/// [`predict`](Self::predict) each report their own).
///
/// `K` says how products are added: built with [`new`](Self::new) on any
/// tables, saturating; built with [`proven`](Self::proven) on tables that
/// carry the proof of headroom ([`Proven`]), plainly, with the same results.
#[derive(Clone, Debug)]
pub struct FixedCurrentObserver<
    't,
    Q: Fixed,
    const N: usize,
    const M: usize,
    const P: usize,
    K: Accumulation = Saturating,
> {
    kernel: PhantomData<K>,
    tables: &'t FixedCurrentTables<Q, N, M, P>,
    predicted: [Q; N],
    filtered: [Q; N],
    initial: [Q; N],
    r: [Q; P],
    /// The status of a `correct` not yet followed by `predict`.
    pending: Option<Status>,
    /// Consecutive samples without a correction (the gate's recovery stage).
    misses: u16,
}

constructors!(
    FixedCurrentObserver,
    FixedCurrentTables,
    /// An observer on `tables` whose prediction x̂[0|−1] is `x0`.
);

impl<'t, Q: Fixed, const N: usize, const M: usize, const P: usize, K: Accumulation>
    FixedCurrentObserver<'t, Q, N, M, P, K>
{
    const fn with_kernel(tables: &'t FixedCurrentTables<Q, N, M, P>, x0: [Q; N]) -> Self {
        const { assert!(P <= 32, "an observer has at most 32 outputs") };
        Self {
            kernel: PhantomData,
            tables,
            predicted: x0,
            filtered: x0,
            initial: x0,
            r: [Q::ZERO; P],
            pending: None,
            misses: 0,
        }
    }

    /// Correct then predict, with every channel of `y` offered.
    pub fn step(&mut self, u: &[Q; M], y: &[Q; P]) -> Status {
        self.step_masked(u, y, ChannelMask::all(P))
    }

    /// Correct then predict, using only the channels in `valid`; the status
    /// counts the saturations of both updates.
    pub fn step_masked(&mut self, u: &[Q; M], y: &[Q; P], valid: ChannelMask) -> Status {
        let mut status = self.correct(u, y, valid);
        let mut sat = Saturations(status.saturations);
        self.advance(u, &mut sat);
        status.saturations = sat.0;
        status
    }

    /// Measurement update: x̂\[k|k\] = x̂\[k|k−1\] + K r\[k\].
    pub fn correct(&mut self, u: &[Q; M], y: &[Q; P], valid: ChannelMask) -> Status {
        let t = self.tables;
        let mut sat = Saturations::default();
        let (r, mut status) = innovation::<K, Q, N, M, P>(
            &t.output,
            t.gate.as_ref().map(|g| (g, &mut self.misses)),
            &self.predicted,
            u,
            y,
            valid,
            &mut sat,
        );
        self.filtered = self.predicted;
        if status.corrected() {
            let mut acc = [<Q::Acc as Wide>::ZERO; N];
            K::mul_acc(&t.k, &r, &mut acc);
            for ((f, &a), &e) in self.filtered.iter_mut().zip(acc.iter()).zip(t.k_exp.iter()) {
                *f = sat.store(f.widen().sat_add(K::round::<Q>(a, e)));
            }
        }
        self.r = r;
        status.saturations = sat.0;
        self.pending = Some(status);
        status
    }

    /// Time update x̂\[k+1|k\] = A x̂\[k|k\] + B u\[k\].
    ///
    /// Returns the status of the [`correct`](Self::correct) since the last
    /// prediction, its saturations replaced by this update's; without one the
    /// sample counts as having no measurement (x̂[k|k] = x̂[k|k−1]).
    pub fn predict(&mut self, u: &[Q; M]) -> Status {
        let mut status = match self.pending {
            Some(status) => status,
            None => {
                self.filtered = self.predicted;
                self.r = [Q::ZERO; P];
                self.misses = misses_after(
                    self.tables.gate.as_ref().map(|g| &g.recovery),
                    self.misses,
                    Outcome::PredictedOnly,
                );
                initial_status::<P>(ChannelMask::NONE).1
            }
        };
        let mut sat = Saturations::default();
        self.advance(u, &mut sat);
        status.saturations = sat.0;
        status
    }

    fn advance(&mut self, u: &[Q; M], sat: &mut Saturations) {
        let t = self.tables;
        let mut acc = [<Q::Acc as Wide>::ZERO; N];
        K::mul_acc(&t.a, &self.filtered, &mut acc);
        K::mul_acc(&t.b, u, &mut acc);
        self.predicted = sat.store_rows::<K, Q, N>(&acc, &t.exp);
        self.pending = None;
    }

    /// x̂[k|k], the estimate of the current sample after the last correction.
    pub const fn filtered(&self) -> &[Q; N] {
        &self.filtered
    }

    /// x̂[k+1|k], the prediction for the next sample.
    pub const fn predicted(&self) -> &[Q; N] {
        &self.predicted
    }

    /// The innovation of the last correction (zero on channels it did not use).
    pub const fn innovation(&self) -> &[Q; P] {
        &self.r
    }

    /// Replaces both estimates with `x` (taken as the prediction for the
    /// coming sample).
    pub fn set_state(&mut self, x: [Q; N]) {
        self.predicted = x;
        self.filtered = x;
        self.pending = None;
        self.misses = 0;
    }

    /// Returns to the estimate given to [`new`](Self::new) and clears the
    /// innovation.
    pub fn reset(&mut self) {
        self.set_state(self.initial);
        self.r = [Q::ZERO; P];
    }

    /// The tables the observer runs on.
    pub const fn tables(&self) -> &'t FixedCurrentTables<Q, N, M, P> {
        self.tables
    }
}
