//! Innovation gating: the normalised-innovation-squared test.

use crate::{ChannelMask, Matrix, Real};

/// Constant tables of the innovation gate.
///
/// With every channel present the gate computes the normalised innovation
/// squared ν = rᵀ S⁻¹ r (P² + P multiply-adds), S being the steady-state
/// innovation covariance, and accepts the measurement when ν ≤ `limit`. Under
/// the model's Gaussian assumptions ν follows a chi-square law with P degrees
/// of freedom, so `limit` is usually its quantile for a chosen probability:
/// see [`chi_square_limit`](crate::chi_square_limit).
///
/// When some channels are missing, S⁻¹ of the remaining channels is not a
/// block of S⁻¹, so the gate instead tests each used channel on its own,
/// r_j² / S_jj ≤ `channel_limit` (a chi-square law with one degree of
/// freedom), with 2 multiplies per channel.
///
/// A measurement that fails is not applied at all (no channel of it).
///
/// Caution: the limit assumes the estimate is already consistent. From a
/// poor initial estimate (start-up, after a fault) every reading can fail
/// and the observer never converges; start gated observers from a good
/// estimate ([`set_state`](crate::PredictorObserver::set_state)), or run
/// ungated tables until the innovation has settled.
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
}

impl<T: Real, const P: usize> Gate<T, P> {
    /// Whether the innovation `r` (zero on channels outside `used`) passes.
    pub fn accepts(&self, r: &[T; P], used: ChannelMask) -> bool {
        if used == ChannelMask::all(P) {
            let mut s_inv_r = [T::ZERO; P];
            self.s_inv.mul_add_to(r, &mut s_inv_r);
            let nis = r
                .iter()
                .zip(s_inv_r.iter())
                .fold(T::ZERO, |acc, (&rj, &wj)| acc + rj * wj);
            // A NaN ν (impossible from finite inputs) fails as well.
            nis <= self.limit
        } else {
            r.iter()
                .zip(self.channel_inv_variance.iter())
                .enumerate()
                .all(|(j, (&rj, &w))| !used.contains(j) || rj * rj * w <= self.channel_limit)
        }
    }
}
