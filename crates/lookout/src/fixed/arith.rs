//! The kernels every fixed-point step is built from: exact dot products in
//! the wide accumulator, one rounding per output row, saturating stores that
//! count their clamps. See [`Fixed`] for the number format.

use super::format::{Fixed, Wide};
use crate::Matrix;

mod sealed {
    pub trait Sealed {}
}

/// The two constructors of a fixed-point observer type: `new` on any
/// tables (saturating adds) and `proven` on tables with the headroom proof
/// (plain adds); both hand over to the type's own `with_kernel`.
macro_rules! constructors {
    ($observer:ident, $tables:ident, $(#[$new_doc:meta])*) => {
        impl<'t, Q: Fixed, const N: usize, const M: usize, const P: usize>
            $observer<'t, Q, N, M, P>
        {
            $(#[$new_doc])*
            pub const fn new(tables: &'t $tables<Q, N, M, P>, x0: [Q; N]) -> Self {
                Self::with_kernel(tables, x0)
            }
        }

        impl<'t, Q: Fixed, const N: usize, const M: usize, const P: usize>
            $observer<'t, Q, N, M, P, Exact>
        {
            /// An observer on tables proven to have headroom (`x0` as for
            /// [`new`](Self::new)): plain multiply-accumulate, one rounding
            /// and one saturating store per output, the same results.
            pub const fn proven(tables: &'t Proven<$tables<Q, N, M, P>>, x0: [Q; N]) -> Self {
                Self::with_kernel(tables.tables(), x0)
            }
        }
    };
}

/// How an observer adds the products of its dot products: the type
/// parameter `K` of the fixed-point observers, [`Saturating`] or [`Exact`].
///
/// Sealed. Both give the same result on tables with
/// [headroom](crate::Proven); they differ in what they cost and in what
/// they assume.
pub trait Accumulation: Copy + core::fmt::Debug + sealed::Sealed {
    /// `acc + product`.
    fn add<W: Wide>(acc: W, product: W) -> W;
}

/// Every product is added saturating: safe for any table, including ones
/// written by hand that break the headroom rule (a saturated sum is then
/// clamped and counted on its store). The default.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub struct Saturating;

/// Products are added plainly (`smlal` on Armv7E-M): only for tables that
/// carry the proof that no partial sum can leave the accumulator
/// ([`Proven`](crate::Proven)), where the result is the same as
/// [`Saturating`]'s, bit for bit. Each output is still rounded once and
/// stored saturating.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub struct Exact;

impl sealed::Sealed for Saturating {}
impl sealed::Sealed for Exact {}

impl Accumulation for Saturating {
    #[inline(always)]
    fn add<W: Wide>(acc: W, product: W) -> W {
        acc.sat_add(product)
    }
}

impl Accumulation for Exact {
    #[inline(always)]
    fn add<W: Wide>(acc: W, product: W) -> W {
        acc.add_exact(product)
    }
}

/// The dot-product kernels, for either way of adding.
pub(crate) trait Kernels: Accumulation {
    /// `acc += m · v` in the wide accumulator: R·C exact products.
    #[inline(always)]
    fn mul_acc<Q: Fixed, const R: usize, const C: usize>(
        m: &Matrix<Q, R, C>,
        v: &[Q; C],
        acc: &mut [Q::Acc; R],
    ) {
        for (col, &vj) in m.as_cols().iter().zip(v.iter()) {
            for (a, &mij) in acc.iter_mut().zip(col.iter()) {
                *a = Self::add(*a, mij.mul_wide(vj));
            }
        }
    }

    /// Row `i` of `m · v` in the wide accumulator (C products); zero when
    /// `i` is outside.
    #[inline(always)]
    fn row_acc<Q: Fixed, const R: usize, const C: usize>(
        m: &Matrix<Q, R, C>,
        i: usize,
        v: &[Q; C],
    ) -> Q::Acc {
        let mut sum = <Q::Acc as Wide>::ZERO;
        for (col, &vj) in m.as_cols().iter().zip(v.iter()) {
            if let Some(&mij) = col.get(i) {
                sum = Self::add(sum, mij.mul_wide(vj));
            }
        }
        sum
    }

    /// An accumulated row with exponent `exp`, rounded half up to the
    /// output's LSB, for a store that clamps to the word next: the same
    /// stored value (and clamp) as [`round_row`], cheaper for the usual
    /// shifts k = F − exp from 1 to half the accumulator width − 1.
    ///
    /// There it computes ((acc >> (k − 1)) + 1) >> 1, which equals
    /// ⌊(acc + 2^(k−1)) / 2^k⌋ (nested floor divisions) and needs no wide
    /// shift of the half. Where [`round_row`]'s saturating add of the half
    /// clamps (acc near the top), both results exceed the word's range
    /// (k is below half the width), so the store clamps both alike. The
    /// `+ 1` is this kernel's add: it cannot overflow for sums within the
    /// headroom ([`Exact`]) and saturates otherwise.
    #[inline(always)]
    fn round<Q: Fixed>(acc: Q::Acc, exp: i8) -> Q::Acc {
        let half = <Q::Acc as Wide>::HALF_BITS;
        // k − 1 = F − exp − 1, in i32 (exp is an i8, F at most 31: exact).
        let k_less_one = i32::try_from(Q::FRAC)
            .unwrap_or(0)
            .wrapping_sub(i32::from(exp))
            .wrapping_sub(1);
        match u32::try_from(k_less_one) {
            Ok(k) if k < half.wrapping_sub(1) => {
                Self::add(acc.shr_below_half(k), <Q::Acc as Wide>::ONE).shr(1)
            }
            _ => acc.round_shr(row_shift::<Q>(exp)),
        }
    }
}

impl<K: Accumulation> Kernels for K {}

/// The right shift F − exp that takes a row with exponent `exp` to the
/// output's LSB (exponents above F count as F, so it is never negative).
#[inline(always)]
fn row_shift<Q: Fixed>(exp: i8) -> u32 {
    let shift = i32::try_from(Q::FRAC)
        .unwrap_or(0)
        .saturating_sub(i32::from(exp));
    u32::try_from(shift).unwrap_or(0)
}

/// `acc += m · v` with saturating adds (which never saturate for tables
/// that follow the row-sum rule): [`Saturating::mul_acc`].
#[inline(always)]
pub(crate) fn mul_acc<Q: Fixed, const R: usize, const C: usize>(
    m: &Matrix<Q, R, C>,
    v: &[Q; C],
    acc: &mut [Q::Acc; R],
) {
    Saturating::mul_acc(m, v, acc);
}

/// An accumulated row with exponent `exp`, rounded half up to the output's
/// LSB: a right shift by F − exp (exponents above F count as F, so the shift
/// is never negative).
#[inline(always)]
pub(crate) fn round_row<Q: Fixed>(acc: Q::Acc, exp: i8) -> Q::Acc {
    acc.round_shr(row_shift::<Q>(exp))
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
    pub(crate) fn store_rows<K: Accumulation, Q: Fixed, const R: usize>(
        &mut self,
        acc: &[Q::Acc; R],
        exp: &[i8; R],
    ) -> [Q; R] {
        let mut out = [Q::ZERO; R];
        for ((o, &a), &e) in out.iter_mut().zip(acc.iter()).zip(exp.iter()) {
            *o = self.store(K::round::<Q>(a, e));
        }
        out
    }
}

#[cfg(test)]
#[allow(clippy::arithmetic_side_effects, clippy::unwrap_used, clippy::panic)] // test arithmetic on chosen values
mod tests {
    use super::*;
    use crate::{Q15, Q31};

    /// Accumulator values that stress the rounding: the extremes, values
    /// just below the point where adding the half saturates, and a
    /// deterministic spread (xorshift64, Marsaglia 2003).
    fn accs() -> impl Iterator<Item = i64> {
        let edges = (0..63).flat_map(|k: u32| {
            let half = 1i64 << k;
            [
                i64::MAX - half,
                i64::MAX - half + 1,
                i64::MIN + half,
                -half,
                half - 1,
            ]
        });
        let mut x = 0x9E37_79B9_7F4A_7C15_u64;
        let spread = (0..2000).map(move |_| {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            (x as i64) >> (x % 40)
        });
        [i64::MAX, i64::MIN, 0, 1, -1]
            .into_iter()
            .chain(edges)
            .chain(spread)
    }

    /// Both kernels' `round` store the same word, and count the same clamp,
    /// as the reference `round_row` (a saturating add of the half, then a
    /// shift), for every exponent: the identity in `Kernels::round`'s docs.
    #[test]
    fn cheap_rounding_stores_what_the_reference_stores() {
        for exp in i8::MIN..=i8::MAX {
            for a in accs() {
                let reference = Q31::saturate(round_row::<Q31>(a, exp));
                assert_eq!(
                    Q31::saturate(Saturating::round::<Q31>(a, exp)),
                    reference,
                    "{a} {exp}"
                );
                // Exact's `+ 1` may wrap only at i64::MAX with a shift of
                // one, which no sum within the headroom reaches.
                if a < i64::MAX - (1 << 32) {
                    assert_eq!(
                        Q31::saturate(Exact::round::<Q31>(a, exp)),
                        reference,
                        "{a} {exp}"
                    );
                }
                let a = (a >> 32) as i32;
                let reference = Q15::saturate(round_row::<Q15>(a, exp));
                assert_eq!(
                    Q15::saturate(Saturating::round::<Q15>(a, exp)),
                    reference,
                    "{a} {exp}"
                );
                if a < i32::MAX - (1 << 16) {
                    assert_eq!(
                        Q15::saturate(Exact::round::<Q15>(a, exp)),
                        reference,
                        "{a} {exp}"
                    );
                }
            }
        }
    }
}
