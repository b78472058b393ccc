//! The innovation of the fixed-point observers.

use super::arith::{Accumulation, Kernels, Saturations};
use super::format::{Fixed, Wide};
use super::tables::{FixedGate, FixedOutputMap};
use crate::{ChannelMask, Outcome, Status};

/// ŷ = C x + D u per output, rounded to the output's LSB but not yet
/// clamped (P·(N + M) multiply-adds).
pub(crate) fn predicted_outputs<
    K: Accumulation,
    Q: Fixed,
    const N: usize,
    const M: usize,
    const P: usize,
>(
    out: &FixedOutputMap<Q, N, M, P>,
    x: &[Q; N],
    u: &[Q; M],
) -> [Q::Acc; P] {
    let mut acc = [<Q::Acc as Wide>::ZERO; P];
    K::mul_acc(&out.c, x, &mut acc);
    K::mul_acc(&out.d, u, &mut acc);
    for (a, &e) in acc.iter_mut().zip(out.exp.iter()) {
        *a = K::round::<Q>(*a, e);
    }
    acc
}

/// The status of a step before the measurement is judged: channels outside
/// `requested` (or beyond P) are missing.
pub(crate) fn initial_status<const P: usize>(requested: ChannelMask) -> (ChannelMask, Status) {
    let present = requested.and(ChannelMask::all(P));
    let missing = ChannelMask::all(P).and(ChannelMask::from_bits(!present.bits()));
    let status = Status {
        outcome: Outcome::PredictedOnly,
        used: ChannelMask::NONE,
        missing,
        saturations: 0,
    };
    (present, status)
}

/// The innovation r = y − ŷ on the channels that correct the estimate (zero
/// on the others), each element rounded once and stored saturating, and the
/// status saying which channels those are; `gate` comes with the observer's
/// counter of misses, which it updates (see [`Recovery`](crate::Recovery)).
pub(crate) fn innovation<
    K: Accumulation,
    Q: Fixed,
    const N: usize,
    const M: usize,
    const P: usize,
>(
    out: &FixedOutputMap<Q, N, M, P>,
    gate: Option<(&FixedGate<Q, P>, &mut u16)>,
    x: &[Q; N],
    u: &[Q; M],
    y: &[Q; P],
    requested: ChannelMask,
    sat: &mut Saturations,
) -> ([Q; P], Status) {
    let judged = gate.as_ref().map(|(g, count)| (*g, **count));
    let result = tested::<K, Q, N, M, P>(out, judged, x, u, y, requested, sat);
    if let Some((g, count)) = gate {
        *count = g.recovery.count_after(*count, result.1.outcome);
    }
    result
}

#[inline(always)]
fn tested<K: Accumulation, Q: Fixed, const N: usize, const M: usize, const P: usize>(
    out: &FixedOutputMap<Q, N, M, P>,
    gate: Option<(&FixedGate<Q, P>, u16)>,
    x: &[Q; N],
    u: &[Q; M],
    y: &[Q; P],
    requested: ChannelMask,
    sat: &mut Saturations,
) -> ([Q; P], Status) {
    let (present, mut status) = initial_status::<P>(requested);
    let mut r = [Q::ZERO; P];
    if present.is_empty() {
        return (r, status);
    }
    let predicted = predicted_outputs::<K, Q, N, M, P>(out, x, u);
    for (j, (rj, (&yj, &pj))) in r.iter_mut().zip(y.iter().zip(predicted.iter())).enumerate() {
        if present.contains(j) {
            *rj = sat.store(yj.widen().sat_sub(pj));
        }
    }
    status.outcome = Outcome::Corrected;
    if let Some((g, misses)) = gate {
        status.outcome = g.judge(&r, present, misses).outcome();
        if status.outcome == Outcome::Gated {
            return ([Q::ZERO; P], status);
        }
    }
    status.used = present;
    (r, status)
}
