//! The fused observer: one matrix–vector pass per table.

use crate::gate::Decision;
use crate::measurement::{all_finite, plain_step, usable};
use crate::{ChannelMask, FusedTables, Outcome, Real, Status};

/// Discrete observer on fused tables: x̂\[k+1\] = F x̂\[k\] + G u\[k\] + H y\[k\].
///
/// With every channel present and no gate, one step costs exactly
/// N·N + N·M + N·P multiply-adds: the least any linear observer of this size
/// can do. See [`FusedTables`] for F, G, H of both observer forms; the state
/// is x̂\[k\] (for a current-form design, the prediction x̂\[k|k−1\]).
///
/// A missing channel j (masked or not finite) is replaced by its prediction
/// ŷ_j = C_j x̂ + D_j u (N + M more multiply-adds), which removes exactly its
/// correction, since F = A − H C and G = B − H D: with every channel missing
/// the step is the prediction A x̂ + B u, up to rounding.
///
/// With a gate the innovation r = y − C x̂ − D u is formed (P·(N + M) more
/// multiply-adds, then P·P + P for the test) and can be read with
/// [`innovation`](Self::innovation); a gated measurement is replaced by its
/// prediction on every channel. A non-finite input refuses the step and leaves
/// the state as it was.
#[derive(Clone, Debug)]
pub struct FusedObserver<'t, T, const N: usize, const M: usize, const P: usize> {
    tables: &'t FusedTables<T, N, M, P>,
    x: [T; N],
    initial: [T; N],
    r: [T; P],
    /// Consecutive samples without a correction (the gate's recovery stage).
    misses: u16,
}

impl<'t, T: Real, const N: usize, const M: usize, const P: usize> FusedObserver<'t, T, N, M, P> {
    /// An observer on `tables` starting from the estimate `x0`.
    pub const fn new(tables: &'t FusedTables<T, N, M, P>, x0: [T; N]) -> Self {
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
        if !plain_step(self.tables.gate.is_some(), u, y, valid) {
            return self.step_checked(u, y, valid);
        }
        // The fast path: N·N + N·M + N·P multiply-adds and one finiteness
        // test.
        self.advance(u, y);
        Status {
            outcome: Outcome::Corrected,
            used: ChannelMask::all(P),
            missing: ChannelMask::NONE,
            saturations: 0,
        }
    }

    /// The step with its inputs checked one by one: a non-finite input is
    /// refused, a non-finite reading counts as missing; then predicted
    /// readings stand in for missing (or gated) ones (with none missing and
    /// no gate that is the fast path's update, reached when only the sum of
    /// the inputs overflowed). Kept out of line so the fast path keeps its
    /// registers.
    #[inline(never)]
    fn step_checked(&mut self, u: &[T; M], y: &[T; P], valid: ChannelMask) -> Status {
        if !all_finite(u) {
            return Status::rejected_input(P);
        }
        let present = usable(y, valid);
        self.step_standing_in(u, y, present)
    }

    /// x̂ ← F x̂ + G u + H y.
    #[inline(always)]
    fn advance(&mut self, u: &[T; M], y: &[T; P]) {
        let t = self.tables;
        let mut next = t.f.mul(&self.x);
        t.g.mul_add_to(u, &mut next);
        t.h.mul_add_to(y, &mut next);
        self.x = next;
    }

    /// The step on the `present` channels: predicted readings stand in for
    /// missing (or gated) ones.
    #[inline(always)]
    fn step_standing_in(&mut self, u: &[T; M], y: &[T; P], present: ChannelMask) -> Status {
        let t = self.tables;
        let mut status = Status {
            outcome: Outcome::Corrected,
            used: present,
            missing: ChannelMask::all(P).and(ChannelMask::from_bits(!present.bits())),
            saturations: 0,
        };
        let mut y_used = *y;
        if let Some(gate) = &t.gate {
            let mut predicted = [T::ZERO; P];
            t.c.mul_add_to(&self.x, &mut predicted);
            t.d.mul_add_to(u, &mut predicted);
            let mut r = [T::ZERO; P];
            for (j, (rj, (&yj, &pj))) in
                r.iter_mut().zip(y.iter().zip(predicted.iter())).enumerate()
            {
                if present.contains(j) {
                    *rj = yj - pj;
                }
            }
            let decision = if present.is_empty() {
                None
            } else {
                Some(gate.judge(&r, present, self.misses))
            };
            status.outcome = decision.map_or(Outcome::PredictedOnly, Decision::outcome);
            self.misses = gate.recovery.count_after(self.misses, status.outcome);
            if !status.corrected() {
                status.used = ChannelMask::NONE;
                y_used = predicted;
                r = [T::ZERO; P];
            } else {
                for (j, (yu, &pj)) in y_used.iter_mut().zip(predicted.iter()).enumerate() {
                    if !present.contains(j) {
                        *yu = pj;
                    }
                }
            }
            self.r = r;
        } else {
            if present.is_empty() {
                status.outcome = Outcome::PredictedOnly;
            }
            for (j, yu) in y_used.iter_mut().enumerate() {
                if !present.contains(j) {
                    *yu = t.c.row_dot(j, &self.x) + t.d.row_dot(j, u);
                }
            }
        }
        self.advance(u, &y_used);
        status
    }

    /// One step without a measurement: every channel stands in by its
    /// prediction, so x̂ ← A x̂ + B u up to rounding.
    pub fn predict(&mut self, u: &[T; M]) -> Status {
        self.step_masked(u, &[T::ZERO; P], ChannelMask::NONE)
    }

    /// The estimate x̂\[k\].
    pub const fn estimate(&self) -> &[T; N] {
        &self.x
    }

    /// The innovation of the last step, when the tables have a gate (the
    /// step only forms it then); `None` otherwise.
    pub fn innovation(&self) -> Option<&[T; P]> {
        self.tables.gate.as_ref().map(|_| &self.r)
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
    pub const fn tables(&self) -> &'t FusedTables<T, N, M, P> {
        self.tables
    }
}
