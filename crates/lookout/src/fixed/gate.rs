//! The fixed-point innovation gate: the NIS test on whitened innovations,
//! widened after consecutive misses by the same rule as the float gate
//! ([`Recovery`](crate::Recovery)).

use super::arith::{mul_acc, round_row};
use super::format::{Fixed, Wide};
use super::tables::FixedGate;
use crate::ChannelMask;
use crate::gate::Decision;

impl<Q: Fixed, const P: usize> FixedGate<Q, P> {
    /// Whether the innovation `r` (zero on channels outside `used`) passes
    /// the steady test: ν = Σ (W r)_j² ≤ `limit` with every channel used
    /// (P² + P multiply-adds), else (r_j · channel_w_j)² ≤ `channel_limit`
    /// for each used channel (2 multiplies each). Integer only; each z_j is
    /// rounded once (half up) and the squares are summed saturating, which
    /// cannot flip a decision because every term is non-negative.
    pub fn accepts(&self, r: &[Q; P], used: ChannelMask) -> bool {
        self.passes(r, used, [self.limit, self.channel_limit])
    }

    /// The decision after `misses` consecutive misses: the same test with
    /// the widened limits of `recovery`, or re-acquisition past them.
    pub(crate) fn judge(&self, r: &[Q; P], used: ChannelMask, misses: u16) -> Decision {
        let steady = [self.limit, self.channel_limit];
        self.recovery
            .decide(misses, steady, |limits| self.passes(r, used, limits))
    }

    fn passes(&self, r: &[Q; P], used: ChannelMask, [limit, channel_limit]: [Q::Acc; 2]) -> bool {
        if used == ChannelMask::all(P) {
            let mut acc = [<Q::Acc as Wide>::ZERO; P];
            mul_acc(&self.w, r, &mut acc);
            let nis =
                acc.iter()
                    .zip(self.w_exp.iter())
                    .fold(<Q::Acc as Wide>::ZERO, |sum, (&a, &e)| {
                        let z = round_row::<Q>(a, e);
                        sum.sat_add(z.sat_mul(z))
                    });
            nis <= limit
        } else {
            r.iter()
                .zip(self.channel_w.iter().zip(self.channel_exp.iter()))
                .enumerate()
                .all(|(j, (&rj, (&w, &e)))| {
                    if !used.contains(j) {
                        return true;
                    }
                    let z = round_row::<Q>(rj.mul_wide(w), e);
                    z.sat_mul(z) <= channel_limit
                })
        }
    }
}
