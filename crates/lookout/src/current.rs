//! The current-form (filter-form) observer, e.g. a steady-state Kalman filter.

use crate::gate::misses_after;
use crate::measurement::{all_finite, all_used, innovation, plain_innovation, plain_step};
use crate::{ChannelMask, CurrentTables, Outcome, Real, Status};

/// Discrete current-form observer: measurement update, then time update.
///
/// ```text
/// r[k]       = y[k] − C x̂[k|k−1] − D u[k]
/// x̂[k|k]    = x̂[k|k−1] + K r[k]          (correct)
/// x̂[k+1|k]  = A x̂[k|k] + B u[k]          (predict)
/// ```
///
/// With K the steady-state Kalman gain this is the steady-state Kalman
/// filter. On an exact model the errors obey e\[k+1|k\] = A (I − K C) e\[k|k−1\]
/// and e\[k|k\] = (I − K C) A e\[k−1|k−1\].
///
/// Both estimates are readable: [`filtered`](Self::filtered) is x̂\[k|k\],
/// [`predicted`](Self::predicted) is x̂\[k+1|k\] after a full step.
///
/// A control loop that computes u\[k\] from x̂\[k|k\] calls
/// [`correct`](Self::correct) with the measurement, computes u\[k\], then calls
/// [`predict`](Self::predict) with it (`correct` then uses its input only for
/// the D term, so with D ≠ 0 pass the input that will be applied).
/// [`step`](Self::step) does both with one input.
///
/// Cost: `correct` P·N + P·M + N·P multiply-adds (plus P·P + P with a gate),
/// `predict` N·N + N·M. Missing channels, non-finite readings and inputs are
/// treated as in [`PredictorObserver`](crate::PredictorObserver).
#[derive(Clone, Debug)]
pub struct CurrentObserver<'t, T, const N: usize, const M: usize, const P: usize> {
    tables: &'t CurrentTables<T, N, M, P>,
    predicted: [T; N],
    filtered: [T; N],
    initial: [T; N],
    r: [T; P],
    /// The status of a `correct` not yet followed by `predict`: `Some` means
    /// `filtered` belongs to the current sample.
    pending: Option<Status>,
    /// Consecutive samples without a correction (the gate's recovery stage).
    misses: u16,
}

impl<'t, T: Real, const N: usize, const M: usize, const P: usize> CurrentObserver<'t, T, N, M, P> {
    /// An observer on `tables` whose prediction x̂\[0|−1\] is `x0`.
    pub const fn new(tables: &'t CurrentTables<T, N, M, P>, x0: [T; N]) -> Self {
        const { assert!(P <= 32, "an observer has at most 32 outputs") };
        Self {
            tables,
            predicted: x0,
            filtered: x0,
            initial: x0,
            r: [T::ZERO; P],
            pending: None,
            misses: 0,
        }
    }

    /// Correct then predict, with every channel of `y` offered.
    pub fn step(&mut self, u: &[T; M], y: &[T; P]) -> Status {
        self.step_masked(u, y, ChannelMask::all(P))
    }

    /// Correct then predict, using only the channels in `valid`.
    pub fn step_masked(&mut self, u: &[T; M], y: &[T; P], valid: ChannelMask) -> Status {
        let status = self.correct(u, y, valid);
        if status.outcome != Outcome::InputRejected {
            self.advance(u);
        }
        status
    }

    /// Measurement update: x̂\[k|k\] = x̂\[k|k−1\] + K r\[k\].
    ///
    /// Each call counts as one sample for the gate's counter of misses
    /// (see [`Recovery`](crate::Recovery)).
    pub fn correct(&mut self, u: &[T; M], y: &[T; P], valid: ChannelMask) -> Status {
        let plant = &self.tables.plant;
        let (c, d, x) = (&plant.c, &plant.d, &self.predicted);
        let (r, status) = match &self.tables.gate {
            None if plain_step(false, u, y, valid) => {
                (plain_innovation(c, d, x, u, y), all_used::<P>())
            }
            _ if !all_finite(u) => return Status::rejected_input(P),
            None => innovation(c, d, None, x, u, y, valid),
            Some(g) => innovation(c, d, Some((g, &mut self.misses)), x, u, y, valid),
        };
        self.filtered = self.predicted;
        if status.corrected() {
            self.tables.k.mul_add_to(&r, &mut self.filtered);
        }
        self.r = r;
        self.pending = Some(status);
        status
    }

    /// Time update x̂\[k+1|k\] = A x̂\[k|k\] + B u\[k\].
    ///
    /// Returns the status of the [`correct`](Self::correct) since the last
    /// prediction; without one the sample counts as having no measurement
    /// (x̂\[k|k\] = x̂\[k|k−1\]). A non-finite input is refused, state untouched.
    pub fn predict(&mut self, u: &[T; M]) -> Status {
        if !all_finite(u) {
            return Status::rejected_input(P);
        }
        let status = match self.pending {
            Some(status) => status,
            None => {
                self.filtered = self.predicted;
                self.r = [T::ZERO; P];
                self.misses = misses_after(
                    self.tables.gate.as_ref().map(|g| &g.recovery),
                    self.misses,
                    Outcome::PredictedOnly,
                );
                Status::predicted_only(P)
            }
        };
        self.advance(u);
        status
    }

    fn advance(&mut self, u: &[T; M]) {
        let plant = &self.tables.plant;
        let mut next = plant.a.mul(&self.filtered);
        plant.b.mul_add_to(u, &mut next);
        self.predicted = next;
        self.pending = None;
    }

    /// x̂\[k|k\], the estimate of the current sample after the last correction.
    pub const fn filtered(&self) -> &[T; N] {
        &self.filtered
    }

    /// x̂\[k+1|k\], the prediction for the next sample.
    pub const fn predicted(&self) -> &[T; N] {
        &self.predicted
    }

    /// The innovation of the last correction (zero on channels it did not use).
    pub const fn innovation(&self) -> &[T; P] {
        &self.r
    }

    /// Replaces both estimates with `x` (taken as the prediction for the
    /// coming sample).
    pub fn set_state(&mut self, x: [T; N]) {
        self.predicted = x;
        self.filtered = x;
        self.pending = None;
        self.misses = 0;
    }

    /// Returns to the estimate given to [`new`](Self::new) and clears the
    /// innovation.
    pub fn reset(&mut self) {
        self.set_state(self.initial);
        self.r = [T::ZERO; P];
    }

    /// The tables the observer runs on.
    pub const fn tables(&self) -> &'t CurrentTables<T, N, M, P> {
        self.tables
    }
}
