//! Checks of a step's inputs and the innovation, shared by the float observers.

use crate::gate::Gate;
use crate::{ChannelMask, Matrix, Outcome, Real, Status};

pub(crate) fn all_finite<T: Real, const K: usize>(v: &[T; K]) -> bool {
    v.iter().all(|x| x.is_finite())
}

/// The requested channels whose reading is finite.
pub(crate) fn usable<T: Real, const P: usize>(y: &[T; P], requested: ChannelMask) -> ChannelMask {
    y.iter()
        .enumerate()
        .fold(ChannelMask::NONE, |mask, (j, yj)| {
            if requested.contains(j) && yj.is_finite() {
                mask.with(j)
            } else {
                mask
            }
        })
}

/// The innovation r = y − C x − D u on the channels that correct the estimate
/// (zero on the others), and the status saying which those are.
///
/// Costs P·(N + M) multiply-adds, plus the gate's when there is one.
pub(crate) fn innovation<T: Real, const N: usize, const M: usize, const P: usize>(
    c: &Matrix<T, P, N>,
    d: &Matrix<T, P, M>,
    gate: Option<&Gate<T, P>>,
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
    r = *y;
    c.mul_sub_from(x, &mut r);
    d.mul_sub_from(u, &mut r);
    for (j, rj) in r.iter_mut().enumerate() {
        if !present.contains(j) {
            *rj = T::ZERO;
        }
    }
    if gate.is_some_and(|g| !g.accepts(&r, present)) {
        status.outcome = Outcome::Gated;
        return ([T::ZERO; P], status);
    }
    status.outcome = Outcome::Corrected;
    status.used = present;
    (r, status)
}
