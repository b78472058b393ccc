//! Checks of a step's inputs and the innovation, shared by the float observers.

use crate::gate::Gate;
use crate::{ChannelMask, Matrix, Outcome, Real, Status};

#[inline(always)]
pub(crate) fn all_finite<T: Real, const K: usize>(v: &[T; K]) -> bool {
    // No early exit: one branch for the whole vector.
    v.iter().fold(true, |ok, x| ok & x.is_finite())
}

/// Whether a step can take its fast path: no gate, every channel requested,
/// and every input and reading finite. Finiteness is tested once, on the
/// sum of them all: a NaN or an infinity anywhere makes the sum non-finite,
/// and a sum that overflows although every term is finite only sends the
/// step to its full checks, which then decide as they always do.
#[inline(always)]
pub(crate) fn plain_step<T: Real, const M: usize, const P: usize>(
    gated: bool,
    u: &[T; M],
    y: &[T; P],
    requested: ChannelMask,
) -> bool {
    let all = ChannelMask::all(P);
    let sum_finite = || {
        u.iter()
            .chain(y.iter())
            .fold(T::ZERO, |s, &v| s + v)
            .is_finite()
    };
    !gated && requested.and(all) == all && sum_finite()
}

/// The status of a step that used every channel.
#[inline(always)]
pub(crate) const fn all_used<const P: usize>() -> Status {
    Status {
        outcome: Outcome::Corrected,
        used: ChannelMask::all(P),
        missing: ChannelMask::NONE,
        saturations: 0,
    }
}

/// r = y − C x − D u on every channel (the fast path's innovation: the same
/// operations, in the same order, as [`innovation`]'s with every channel
/// used).
#[inline(always)]
pub(crate) fn plain_innovation<T: Real, const N: usize, const M: usize, const P: usize>(
    c: &Matrix<T, P, N>,
    d: &Matrix<T, P, M>,
    x: &[T; N],
    u: &[T; M],
    y: &[T; P],
) -> [T; P] {
    let mut r = *y;
    c.mul_sub_from(x, &mut r);
    d.mul_sub_from(u, &mut r);
    r
}

/// The requested channels whose reading is finite (branch-free; P ≤ 32 is
/// a compile-time bound of every observer).
#[inline(always)]
pub(crate) fn usable<T: Real, const P: usize>(y: &[T; P], requested: ChannelMask) -> ChannelMask {
    let finite = y.iter().enumerate().fold(0u32, |bits, (j, yj)| {
        bits | (u32::from(yj.is_finite()) << (j & 31))
    });
    ChannelMask::from_bits(finite & requested.bits() & ChannelMask::all(P).bits())
}

/// The innovation r = y − C x − D u on the channels that correct the estimate
/// (zero on the others), and the status saying which those are.
///
/// Costs P·(N + M) multiply-adds, plus the gate's when there is one;
/// `gate` comes with the observer's counter of misses, which it updates
/// (see [`Recovery`](crate::Recovery)); without a gate there is no counter
/// to keep.
#[inline(always)]
pub(crate) fn innovation<T: Real, const N: usize, const M: usize, const P: usize>(
    c: &Matrix<T, P, N>,
    d: &Matrix<T, P, M>,
    gate: Option<(&Gate<T, P>, &mut u16)>,
    x: &[T; N],
    u: &[T; M],
    y: &[T; P],
    requested: ChannelMask,
) -> ([T; P], Status) {
    match gate {
        None => tested(c, d, None, x, u, y, requested),
        Some((g, count)) => {
            let out = tested(c, d, Some((g, *count)), x, u, y, requested);
            *count = g.recovery.count_after(*count, out.1.outcome);
            out
        }
    }
}

#[inline(always)]
fn tested<T: Real, const N: usize, const M: usize, const P: usize>(
    c: &Matrix<T, P, N>,
    d: &Matrix<T, P, M>,
    gate: Option<(&Gate<T, P>, u16)>,
    x: &[T; N],
    u: &[T; M],
    y: &[T; P],
    requested: ChannelMask,
) -> ([T; P], Status) {
    let present = usable(y, requested);
    let missing = ChannelMask::all(P).and(ChannelMask::from_bits(!present.bits()));
    let mut status = Status {
        outcome: Outcome::PredictedOnly,
        used: ChannelMask::NONE,
        missing,
        saturations: 0,
    };
    let mut r = [T::ZERO; P];
    if present.is_empty() {
        return (r, status);
    }
    r = plain_innovation(c, d, x, u, y);
    for (j, rj) in r.iter_mut().enumerate() {
        if !present.contains(j) {
            *rj = T::ZERO;
        }
    }
    status.outcome = Outcome::Corrected;
    if let Some((g, misses)) = gate {
        status.outcome = g.judge(&r, present, misses).outcome();
        if status.outcome == Outcome::Gated {
            return ([T::ZERO; P], status);
        }
    }
    status.used = present;
    (r, status)
}
