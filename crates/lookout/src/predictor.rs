//! The predictor (Luenberger) observer.

use crate::measurement::{all_finite, all_used, innovation, plain_innovation, plain_step};
use crate::{ChannelMask, PredictorTables, Real, Status};

/// Discrete predictor (Luenberger) observer.
///
/// Update, with r\[k\] the innovation:
///
/// ```text
/// r[k]    = y[k] − C x̂[k] − D u[k]
/// x̂[k+1] = A x̂[k] + B u[k] + L r[k]
/// ```
///
/// so the estimation error e = x − x̂ obeys e\[k+1\] = (A − L C) e\[k\] on an
/// exact model. The state is x̂\[k\], the estimate of x\[k\] from measurements up
/// to k − 1; after [`step`](Self::step) it holds x̂\[k+1\].
///
/// Cost per step: N·N + N·M + 2·N·P + P·M multiply-adds, plus P·P + P when
/// the tables have a gate; [`predict`](Self::predict) costs N·N + N·M. The
/// [`FusedObserver`](crate::FusedObserver) does the same update in
/// N·N + N·M + N·P.
///
/// Missing and bad data: channels outside the mask or not finite are left out
/// of the innovation (their r_j is 0); with no channel left the step only
/// predicts. A non-finite input refuses the step and leaves the state as it
/// was. Every step returns a [`Status`].
#[derive(Clone, Debug)]
pub struct PredictorObserver<'t, T, const N: usize, const M: usize, const P: usize> {
    tables: &'t PredictorTables<T, N, M, P>,
    x: [T; N],
    initial: [T; N],
    r: [T; P],
    /// Consecutive samples without a correction (the gate's recovery stage).
    misses: u16,
}

impl<'t, T: Real, const N: usize, const M: usize, const P: usize>
    PredictorObserver<'t, T, N, M, P>
{
    /// An observer on `tables` starting from the estimate `x0`. Costs nothing
    /// beyond copying `x0`; more than 32 outputs is a compile error.
    pub const fn new(tables: &'t PredictorTables<T, N, M, P>, x0: [T; N]) -> Self {
        const { assert!(P <= 32, "an observer has at most 32 outputs") };
        Self {
            tables,
            x: x0,
            initial: x0,
            r: [T::ZERO; P],
            misses: 0,
        }
    }

    /// One step with every channel of `y` offered.
    pub fn step(&mut self, u: &[T; M], y: &[T; P]) -> Status {
        self.step_masked(u, y, ChannelMask::all(P))
    }

    /// One step using only the channels in `valid` (and of those only the
    /// finite ones).
    pub fn step_masked(&mut self, u: &[T; M], y: &[T; P], valid: ChannelMask) -> Status {
        let plant = &self.tables.plant;
        let (c, d, x) = (&plant.c, &plant.d, &self.x);
        // The ungated fast path tests finiteness once; the gated calls carry
        // the counter of misses, the ungated one is specialised without it.
        let (r, status) = match &self.tables.gate {
            None if plain_step(false, u, y, valid) => {
                (plain_innovation(c, d, x, u, y), all_used::<P>())
            }
            _ if !all_finite(u) => return Status::rejected_input(P),
            None => innovation(c, d, None, x, u, y, valid),
            Some(g) => innovation(c, d, Some((g, &mut self.misses)), x, u, y, valid),
        };
        let mut next = plant.a.mul(&self.x);
        plant.b.mul_add_to(u, &mut next);
        if status.corrected() {
            self.tables.l.mul_add_to(&r, &mut next);
        }
        self.x = next;
        self.r = r;
        status
    }

    /// One step without a measurement: x̂ ← A x̂ + B u.
    pub fn predict(&mut self, u: &[T; M]) -> Status {
        self.step_masked(u, &[T::ZERO; P], ChannelMask::NONE)
    }

    /// The estimate x̂\[k\] (the state after the last step).
    pub const fn estimate(&self) -> &[T; N] {
        &self.x
    }

    /// The innovation of the last step (zero on channels it did not use).
    pub const fn innovation(&self) -> &[T; P] {
        &self.r
    }

    /// Replaces the estimate.
    pub fn set_state(&mut self, x: [T; N]) {
        self.x = x;
        self.misses = 0;
    }

    /// Returns to the estimate given to [`new`](Self::new) and clears the
    /// innovation.
    pub fn reset(&mut self) {
        self.x = self.initial;
        self.r = [T::ZERO; P];
        self.misses = 0;
    }

    /// The tables the observer runs on.
    pub const fn tables(&self) -> &'t PredictorTables<T, N, M, P> {
        self.tables
    }
}
