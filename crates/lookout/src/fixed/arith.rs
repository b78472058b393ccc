//! The kernels every fixed-point step is built from: exact dot products in
//! the wide accumulator, one rounding per output row, saturating stores that
//! count their clamps. See [`Fixed`] for the number format.

use super::format::{Fixed, Wide};
use crate::Matrix;

/// `acc += m · v` in the wide accumulator: R·C exact products, saturating
/// adds (which never saturate for tables that follow the row-sum rule).
#[inline(always)]
pub(crate) fn mul_acc<Q: Fixed, const R: usize, const C: usize>(
    m: &Matrix<Q, R, C>,
    v: &[Q; C],
    acc: &mut [Q::Acc; R],
) {
    for (col, &vj) in m.as_cols().iter().zip(v.iter()) {
        for (a, &mij) in acc.iter_mut().zip(col.iter()) {
            *a = a.sat_add(mij.mul_wide(vj));
        }
    }
}

/// Row `i` of `m · v` in the wide accumulator (C products); zero when `i` is
/// outside.
#[inline(always)]
pub(crate) fn row_acc<Q: Fixed, const R: usize, const C: usize>(
    m: &Matrix<Q, R, C>,
    i: usize,
    v: &[Q; C],
) -> Q::Acc {
    let mut sum = <Q::Acc as Wide>::ZERO;
    for (col, &vj) in m.as_cols().iter().zip(v.iter()) {
        if let Some(&mij) = col.get(i) {
            sum = sum.sat_add(mij.mul_wide(vj));
        }
    }
    sum
}

/// An accumulated row with exponent `exp`, rounded half up to the output's
/// LSB: a right shift by F − exp (exponents above F count as F, so the shift
/// is never negative).
#[inline(always)]
pub(crate) fn round_row<Q: Fixed>(acc: Q::Acc, exp: i8) -> Q::Acc {
    let shift = i32::try_from(Q::FRAC)
        .unwrap_or(0)
        .saturating_sub(i32::from(exp));
    acc.round_shr(u32::try_from(shift).unwrap_or(0))
}

/// Counts the stores of one step that had to clamp.
#[derive(Clone, Copy, Debug, Default)]
pub(crate) struct Saturations(pub(crate) u16);

impl Saturations {
    /// `wide` stored into a word, clamped, counting the clamp.
    #[inline(always)]
    pub(crate) fn store<Q: Fixed>(&mut self, wide: Q::Acc) -> Q {
        let (q, clamped) = Q::saturate(wide);
        if clamped {
            self.0 = self.0.saturating_add(1);
        }
        q
    }

    /// Every row of `acc`, rounded with its exponent and stored.
    #[inline(always)]
    pub(crate) fn store_rows<Q: Fixed, const R: usize>(
        &mut self,
        acc: &[Q::Acc; R],
        exp: &[i8; R],
    ) -> [Q; R] {
        let mut out = [Q::ZERO; R];
        for ((o, &a), &e) in out.iter_mut().zip(acc.iter()).zip(exp.iter()) {
            *o = self.store(round_row::<Q>(a, e));
        }
        out
    }
}
