//! Innovation gating: the normalised-innovation-squared test, widened after
//! consecutive misses so that it cannot lock out.

use crate::{ChannelMask, Matrix, Outcome, Real};

/// Capacity of a gate's recovery table: the most consecutive misses a gate
/// widens for before it re-acquires.
pub const GATE_STAGES: usize = 16;

/// How a gate widens after consecutive misses, and when it gives up testing.
///
/// A reading is usually missed because it was rejected, and a rejected
/// innovation was large, so the error behind it is larger than usual: given
/// the rejection its covariance is P_r = P_0 + (μ − 1) P_0 Cᵀ S_0⁻¹ C P_0,
/// μ = E\[ν | ν > limit\] / P. After k consecutive samples without a
/// correction it has grown, with no correction, as P_1 = A P_r Aᵀ + Q,
/// P_k = A P_{k−1} Aᵀ + Q, so the innovation covariance is
/// S_k = C P_k Cᵀ + R instead of the steady S = S_0. The design computes
/// g_k = λ_max(S_0⁻¹ S_k) (the largest generalised eigenvalue, ≥ 1) and
/// stores the limits widened by it: `limits[k − 1]` = \[`limit` · g_k,
/// `channel_limit` · g_k\] for k = 1 … `stages` (see the design crate's
/// `recovery::table`).
///
/// Since rᵀ S_k⁻¹ r ≤ c implies rᵀ S_0⁻¹ r ≤ g_k c (and the same for one
/// channel, r_j² / S_k,jj ≤ c implies r_j² / S_0,jj ≤ g_k c, a Rayleigh
/// quotient of the same pencil), the widened test rejects a reading whose
/// innovation has covariance S_k or less with probability at most that of
/// the steady test, 1 − p (exactly 1 − p with one output and covariance
/// S_k).
///
/// The observer keeps one counter c. A rejected reading adds `per_miss` to
/// it, a sample without any usable reading adds 1 (nothing was rejected, so
/// the error is not conditioned on a large innovation: its excess is the
/// plain A P_0 Aᵀ + Q − P_0, far below a rejection's; a stated choice), a
/// corrected sample takes 1 off, and the test uses stage
/// k = ⌈c / `per_miss`⌉. `per_miss` is the number of corrections after which
/// the excess covariance one rejection leaves has decayed (through the
/// error dynamics F) to 1 % of its size, so the gate narrows back as the
/// covariance does instead of at once.
///
/// Re-acquisition: past stage `stages` (more consecutive misses than the
/// table covers) the next reading with a usable channel is applied untested,
/// and the step reports [`Outcome::Reacquired`]; the counter stops one stage
/// past the table, so up to `per_miss` readings in a row are re-acquired
/// before the widest test applies again. `stages` = 0 turns recovery
/// off: the steady test is used after any number of misses, and a gated
/// observer can lose lock for good.
///
/// Cost: one `u16` in the observer, an add and a division per step, no
/// multiply-add; the table is `2 · GATE_STAGES` limits.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct Recovery<L> {
    /// \[every-channel limit, one-channel limit\] at stage k = 1 … `stages`,
    /// entry k − 1; entries from `stages` on are unused.
    pub limits: [[L; 2]; GATE_STAGES],
    /// K, the number of widened stages (at most [`GATE_STAGES`]; 0: no
    /// recovery).
    pub stages: u8,
    /// Corrections that take the counter down one stage (at least 1).
    pub per_miss: u8,
}

impl<L: Copy> Recovery<L> {
    /// No recovery: the steady test after any number of misses.
    pub const fn none(zero: L) -> Self {
        Self {
            limits: [[zero; 2]; GATE_STAGES],
            stages: 0,
            per_miss: 1,
        }
    }

    /// The stage ⌈count / per_miss⌉.
    fn stage(&self, count: u16) -> u16 {
        let per = u16::from(self.per_miss.max(1));
        count.div_ceil(per)
    }

    /// The limits \[every channel, one channel\] at counter `count`,
    /// `steady` at stage 0; `None` when the gate re-acquires.
    pub(crate) fn limits_after(&self, count: u16, steady: [L; 2]) -> Option<[L; 2]> {
        // The usual case first, without the division.
        if count == 0 || self.stages == 0 {
            return Some(steady);
        }
        let stage = self.stage(count);
        if stage > u16::from(self.stages) {
            return None;
        }
        self.limits.get(usize::from(stage) - 1).copied()
    }

    /// The decision after counter `count`: re-acquire past the table,
    /// else whether `passes` accepts the limits of the stage (`steady` at
    /// stage 0).
    pub(crate) fn decide(
        &self,
        count: u16,
        steady: [L; 2],
        passes: impl FnOnce([L; 2]) -> bool,
    ) -> Decision {
        match self.limits_after(count, steady) {
            None => Decision::Reacquire,
            Some(limits) if passes(limits) => Decision::Accept,
            Some(_) => Decision::Reject,
        }
    }

    /// The counter after a step with outcome `outcome` (see the type's docs;
    /// it stops one stage past the table).
    pub(crate) fn count_after(&self, count: u16, outcome: Outcome) -> u16 {
        match outcome {
            Outcome::Corrected | Outcome::Reacquired => count.saturating_sub(1),
            Outcome::Gated => self.raise(count, u16::from(self.per_miss.max(1))),
            Outcome::PredictedOnly => self.raise(count, 1),
            Outcome::InputRejected => count,
        }
    }

    /// `count + by`, stopping one stage past the table.
    fn raise(&self, count: u16, by: u16) -> u16 {
        let top = (u16::from(self.stages) + 1).saturating_mul(u16::from(self.per_miss.max(1)));
        count.saturating_add(by).min(top)
    }
}

/// The observer's counter after a step, for tables with `recovery` (the
/// counter stays 0 without a gate).
pub(crate) fn misses_after<L: Copy>(
    recovery: Option<&Recovery<L>>,
    count: u16,
    outcome: Outcome,
) -> u16 {
    recovery.map_or(0, |r| r.count_after(count, outcome))
}

/// What a gate decided about one innovation.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum Decision {
    /// Inside the (possibly widened) limit.
    Accept,
    /// Outside it.
    Reject,
    /// Untested: too many consecutive misses.
    Reacquire,
}

impl Decision {
    /// The outcome of a step whose measurement had usable channels.
    pub(crate) const fn outcome(self) -> Outcome {
        match self {
            Self::Accept => Outcome::Corrected,
            Self::Reject => Outcome::Gated,
            Self::Reacquire => Outcome::Reacquired,
        }
    }
}

/// Constant tables of the innovation gate.
///
/// With every channel present the gate computes the normalised innovation
/// squared ν = rᵀ S⁻¹ r (P² + P multiply-adds), S being the steady-state
/// innovation covariance, and accepts the measurement when ν ≤ `limit`. Under
/// the model's Gaussian assumptions ν follows a chi-square law with P degrees
/// of freedom, so `limit` is usually its quantile for a chosen probability p
/// (see [`chi_square_limit`](crate::chi_square_limit)): a consistent
/// observer then rejects a good reading with probability 1 − p per step
/// (0.1 % for p = 0.999).
///
/// When some channels are missing, S⁻¹ of the remaining channels is not a
/// block of S⁻¹, so the gate instead tests each used channel on its own,
/// r_j² / S_jj ≤ `channel_limit` (a chi-square law with one degree of
/// freedom), with 2 multiplies per channel.
///
/// A measurement that fails is not applied at all (no channel of it).
///
/// After consecutive misses the limits widen with the growth of the
/// innovation covariance, and after K of them the next reading is accepted
/// untested, so the gate cannot lock out: see [`Recovery`] for the rule, its
/// cost (one counter, no multiply-add) and its false-rejection probability
/// (at most 1 − p per step at every stage). Cost of the test itself: P² + P
/// multiply-adds with every channel, 2 multiplies per channel otherwise.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Gate<T, const P: usize> {
    /// S⁻¹, the inverse of the steady-state innovation covariance, in
    /// 1/(output unit)².
    pub s_inv: Matrix<T, P, P>,
    /// Largest accepted ν when every channel is used.
    pub limit: T,
    /// 1 / S_jj for each channel, in 1/(output unit)².
    pub channel_inv_variance: [T; P],
    /// Largest accepted r_j² / S_jj when some channels are missing.
    pub channel_limit: T,
    /// The widened limits after consecutive misses.
    pub recovery: Recovery<T>,
}

impl<T: Real, const P: usize> Gate<T, P> {
    /// Whether the innovation `r` (zero on channels outside `used`) passes
    /// the steady test (no miss before it).
    pub fn accepts(&self, r: &[T; P], used: ChannelMask) -> bool {
        self.passes(r, used, [self.limit, self.channel_limit])
    }

    /// The decision after `misses` consecutive misses.
    pub(crate) fn judge(&self, r: &[T; P], used: ChannelMask, misses: u16) -> Decision {
        let steady = [self.limit, self.channel_limit];
        self.recovery
            .decide(misses, steady, |limits| self.passes(r, used, limits))
    }

    fn passes(&self, r: &[T; P], used: ChannelMask, [limit, channel_limit]: [T; 2]) -> bool {
        if used == ChannelMask::all(P) {
            let mut s_inv_r = [T::ZERO; P];
            self.s_inv.mul_add_to(r, &mut s_inv_r);
            let nis = r
                .iter()
                .zip(s_inv_r.iter())
                .fold(T::ZERO, |acc, (&rj, &wj)| acc + rj * wj);
            // A NaN ν (impossible from finite inputs) fails as well.
            nis <= limit
        } else {
            r.iter()
                .zip(self.channel_inv_variance.iter())
                .enumerate()
                .all(|(j, (&rj, &w))| !used.contains(j) || rj * rj * w <= channel_limit)
        }
    }
}
