//! The Q15 and Q31 types and their word-level arithmetic. The number format
//! is documented once, on [`Fixed`].

use core::fmt::Debug;
use core::ops::Add;
use num_traits::{ConstZero, Zero};

mod sealed {
    pub trait Sealed {}
}

/// A wide accumulator: `i32` (for Q15) or `i64` (for Q31).
///
/// Sealed; its operations saturate, never wrap.
pub trait Wide: Copy + Ord + Debug + core::hash::Hash + sealed::Sealed {
    /// Zero.
    const ZERO: Self;
    /// The largest value.
    const MAX: Self;
    /// `self + other`, saturating.
    fn sat_add(self, other: Self) -> Self;
    /// One.
    const ONE: Self;
    /// Half the width in bits: 16 or 32.
    const HALF_BITS: u32;
    /// `self >> shift`, arithmetic, for `shift` below the width.
    fn shr(self, shift: u32) -> Self;
    /// `self >> shift`, arithmetic, for `shift` below half the width
    /// (larger shifts are taken modulo half the width).
    fn shr_below_half(self, shift: u32) -> Self;
    /// `self + other`, wrapping: only for sums proven in range (tables
    /// with [headroom](crate::Proven)), where it equals the saturating add.
    fn add_exact(self, other: Self) -> Self;
    /// `self − other`, saturating.
    fn sat_sub(self, other: Self) -> Self;
    /// `self · other`, saturating.
    fn sat_mul(self, other: Self) -> Self;
    /// `self / 2^shift` rounded half up: (self + 2^(shift−1)) >> shift, the
    /// add saturating; `shift` is clamped to the width minus one.
    fn round_shr(self, shift: u32) -> Self;
    /// The `i64` value clamped into the accumulator type.
    fn from_i64_saturating(value: i64) -> Self;
    /// The value as an `i64`.
    fn to_i64(self) -> i64;
}

/// A fixed-point word format: [`Q15`] or [`Q31`] (sealed). This is the one
/// place the number format of the fixed-point observers is documented.
///
/// # Values
///
/// A Q15 value is an `i16` q standing for the normalised value q · 2⁻¹⁵, a
/// Q31 value an `i32` q standing for q · 2⁻³¹ (common practice). With F the
/// number of fraction bits (15 or 31) the normalised range is
/// [−1, 1 − 2⁻ᶠ] in steps of 2⁻ᶠ, one LSB.
///
/// # Signal scales
///
/// Every signal (each state, input and output) has a power-of-two scale: an
/// exponent s (an `i8` in [`Scales`](crate::Scales)) chosen so that its
/// physical value v satisfies |v| < 2ˢ. The stored value is
/// q = round(v · 2^(F − s)); one LSB of that signal is 2^(s − F) of its unit.
///
/// # Table entries
///
/// A table maps signals to signals. Its entry t_ij (input j to output i, in
/// the model's units) is first normalised, τ_ij = t_ij · 2^(s_j − s_i), so
/// that it maps normalised input to normalised output, and then stored as
/// q_ij = round(τ_ij · 2^(F − e_i)) with one exponent e_i per output row.
/// The tables that add into the same output (for the predictor A, B and L
/// feeding x̂⁺) share that row exponent, so each output element is one dot
/// product in one accumulator, shifted right by F − e_i at the end: no
/// per-term alignment, one rounding per output element.
///
/// The row exponent is the smallest e_i ∈ [−F, F] with
/// Σ_j |τ_ij| ≤ 2^(e_i) over the whole stacked row (and every q_ij inside the
/// word). This rule is what makes the accumulator safe: with |v_j| ≤ 1 the
/// exact sum Σ_j q_ij v_j is at most (2ᶠ + n/2) · 2ᶠ in magnitude for n terms,
/// which fits i32 for Q15 (2³⁰ + n·2¹⁴ < 2³¹ for n < 2¹⁵) and i64 for Q31
/// (2⁶² + n·2³⁰ < 2⁶³ for n < 2³²), so a valid table can never overflow its
/// accumulator, whatever the inputs. Tables that break the rule (written by
/// hand) still never wrap: the accumulator adds saturate, and the saturated
/// result is clamped and counted on its store.
///
/// # Arithmetic and rounding
///
/// * Products are exact in the wide accumulator: i16 × i16 in i32, i32 × i32
///   in i64 (|q · v| ≤ 2²ᶠ).
/// * Rounding: round half up, once per output element: add 2^(k − 1), then
///   shift right arithmetically by k = F − e_i. The stored value q then
///   satisfies exact − ½ ≤ q < exact + ½ (in LSB of the output).
/// * Saturation: every store (state, innovation, a stand-in predicted
///   reading) clamps to [−2ᶠ, 2ᶠ − 1] instead of wrapping, and each clamp
///   adds one to [`Status::saturations`](crate::Status) (which saturates at
///   `u16::MAX` itself).
///
/// # Worked example
///
/// A motor with shaft angle θ (rad, |θ| < 4, so s_θ = 2), speed ω (rad/s,
/// |ω| < 64, s_ω = 6), sampled every T = 1 ms, and a predictor gain
/// l_θ = 0.5 on the angle measurement (s_y = 2). The θ row of [A B L] holds
/// A_θθ = 1, A_θω = T = 0.001 and L_θ = 0.5 (no input term). Normalised:
/// τ = 1 · 2^(2−2) = 1, τ = 0.001 · 2^(6−2) = 0.016, τ = 0.5 · 2^(2−2) = 0.5;
/// the row sum 1.516 ≤ 2¹ gives e_θ = 1, so in Q31 the row is stored as
/// round(τ · 2³⁰): 1 073 741 824, 17 179 869 and 536 870 912, and each
/// step θ̂⁺ is the i64 sum of those times the Q31 values of θ̂, ω̂ and r,
/// rounded and shifted right by 31 − 1 = 30. An angle of 1 rad is stored as
/// 1 · 2^(31−2) = 536 870 912.
///
/// ```
/// use lookout::{Q15, Q31};
/// assert_eq!(Q31::from_real(0.016, 1), Some(Q31(17_179_869)));
/// assert_eq!(Q31::from_real(1.0, 2), Some(Q31(536_870_912)));
/// assert_eq!(Q31::from_real(4.0, 2), None); // |θ| < 4 by the chosen scale
/// assert_eq!(Q15::from_real(-1.0, 0), Some(Q15(i16::MIN)));
/// ```
///
/// # Integer sensor readings
///
/// A reading from an ADC needs no float: give the model's output in counts
/// (divide the output's rows of C and D by the physical size of one count on
/// the host) and choose the output exponent s_y so that every offset
/// reading fits, −2^(s_y) ≤ count − offset < 2^(s_y). The Q input is then
/// (count − offset) · 2^(F − s_y): a subtraction and a left shift. For a
/// 12-bit converter centred at 2048, s_y = 11 and in Q15 the shift is 4: the
/// count 3000 becomes (3000 − 2048) << 4 = 15 232, i.e. 952/2048 of full
/// scale. [`Q15::from_counts`] and [`Q31::from_counts`] do this, saturating
/// (the count 0 with offset 2048 is exactly −2¹¹ and still fits).
///
/// ```
/// use lookout::{Q15, Q31};
/// assert_eq!(Q15::from_counts(3000, 2048, 11), Q15(15_232));
/// assert_eq!(Q15::from_counts(0, 2048, 11), Q15(i16::MIN));
/// assert_eq!(Q31::from_counts(3000, 2048, 11), Q31(952 << 20));
/// ```
pub trait Fixed: Copy + Ord + Debug + Default + ConstZero + sealed::Sealed {
    /// The accumulator of a dot product: `i32` for Q15, `i64` for Q31.
    type Acc: Wide;
    /// Fraction bits F: 15 or 31.
    const FRAC: u32;
    /// The most negative value, −1 normalised.
    const MIN: Self;
    /// The largest value, 1 − 2⁻ᶠ normalised.
    const MAX: Self;
    /// The exact product in the accumulator.
    fn mul_wide(self, other: Self) -> Self::Acc;
    /// The value in the accumulator type.
    fn widen(self) -> Self::Acc;
    /// The accumulator value clamped into the word, and whether it had to be.
    fn saturate(wide: Self::Acc) -> (Self, bool);
    /// The word as an `i64`.
    fn to_i64(self) -> i64;
    /// The `i64` value clamped into the word.
    fn from_i64_saturating(value: i64) -> Self;

    /// `value` (in a unit whose scale exponent is `exponent`) as a Q value,
    /// round(value · 2^(F − exponent)) half up; `None` when not finite or
    /// outside [−2^exponent, 2^exponent). The one rounding of a float to a
    /// Q value: signals on the target (the generated `state_to_q`, …) and,
    /// in lookout-design, every table entry. Uses floats (core only, no
    /// float library): keep it out of the step path.
    #[allow(clippy::float_arithmetic)] // a conversion outside the steps
    fn from_real(value: f64, exponent: i8) -> Option<Self> {
        let frac = i32::try_from(Self::FRAC).unwrap_or(31);
        // Exact (a power-of-two scaling) unless the result is subnormal,
        // which rounds to zero below either way.
        let x = value * pow2(frac.saturating_sub(i32::from(exponent)));
        let limit = pow2(frac);
        // round(x) half up is in [−2ᶠ, 2ᶠ) exactly when x is in
        // [−2ᶠ − ½, 2ᶠ − ½) (both bounds exact in f64); false for NaN.
        if !(x >= -limit - 0.5 && x < limit - 0.5) {
            return None;
        }
        // |x| < 2³² + 1: the cast truncates toward zero exactly, one less
        // for a negative x with a fraction gives floor(x), and x − floor(x)
        // is exact (it keeps x's own fraction bits). Comparing that fraction
        // with ½ rounds half up exactly, where floor(x + ½) would round the
        // sum first (x = ½ − 2⁻⁵⁴ would give 1).
        let t = x as i64;
        let floor = if (t as f64) > x {
            t.saturating_sub(1)
        } else {
            t
        };
        let up = x - floor as f64 >= 0.5;
        Some(Self::from_i64_saturating(
            floor.saturating_add(i64::from(up)),
        ))
    }

    /// The value this Q value stands for at scale exponent `exponent`,
    /// q · 2^(exponent − F), exact in `f64`. Uses floats.
    #[allow(clippy::float_arithmetic)] // a conversion outside the steps
    fn to_real(self, exponent: i8) -> f64 {
        let frac = i32::try_from(Self::FRAC).unwrap_or(31);
        // |q| ≤ 2³¹ and 2^(e − F) ≥ 2⁻¹⁵⁹ is normal: the product is exact.
        self.to_i64() as f64 * pow2(i32::from(exponent).saturating_sub(frac))
    }
}

/// 2^k in `f64` for |k| ≤ 1022 (built from its bits, exact; clamped to the
/// normal range beyond, which the callers' exponents, within ±160, never
/// reach).
fn pow2(k: i32) -> f64 {
    let biased = u64::try_from(k.saturating_add(1023).clamp(1, 2046)).unwrap_or(1023);
    f64::from_bits(biased.wrapping_shl(52))
}

/// `value >> shift` for shift < 16 (taken modulo 16).
#[inline(always)]
fn shr_below_half_i32(value: i32, shift: u32) -> i32 {
    value.wrapping_shr(shift & 15)
}

/// `value >> shift` for shift < 32 (taken modulo 32), written on the two
/// 32-bit halves, which a 32-bit core shifts in five instructions (the
/// compiler's general 64-bit shift also handles shifts of 32 and more,
/// with a conditional block). The high half's bits enter the low half as
/// (high << 1) << (31 − shift), which stays defined at shift 0.
#[inline(always)]
fn shr_below_half_i64(value: i64, shift: u32) -> i64 {
    let k = shift & 31;
    let (lo, hi) = (value as u32, value.wrapping_shr(32) as i32);
    let low = lo.wrapping_shr(k)
        | (hi as u32)
            .wrapping_shl(1)
            .wrapping_shl(31_u32.wrapping_sub(k));
    (i64::from(hi.wrapping_shr(k)) << 32) | i64::from(low)
}

macro_rules! wide {
    ($w:ty, $shr_below_half:ident) => {
        impl sealed::Sealed for $w {}
        impl Wide for $w {
            const ZERO: Self = 0;
            const MAX: Self = <$w>::MAX;
            const ONE: Self = 1;
            const HALF_BITS: u32 = <$w>::BITS / 2;
            #[inline(always)]
            fn shr(self, shift: u32) -> Self {
                self.wrapping_shr(shift)
            }
            #[inline(always)]
            fn shr_below_half(self, shift: u32) -> Self {
                $shr_below_half(self, shift)
            }
            #[inline(always)]
            fn sat_add(self, other: Self) -> Self {
                self.saturating_add(other)
            }
            #[inline(always)]
            fn add_exact(self, other: Self) -> Self {
                self.wrapping_add(other)
            }
            #[inline(always)]
            fn sat_sub(self, other: Self) -> Self {
                self.saturating_sub(other)
            }
            #[inline(always)]
            fn sat_mul(self, other: Self) -> Self {
                self.saturating_mul(other)
            }
            #[inline(always)]
            fn round_shr(self, shift: u32) -> Self {
                let k = shift.min(<$w>::BITS.saturating_sub(1));
                if k == 0 {
                    return self;
                }
                // 1 ≤ k ≤ BITS − 1: the half and the shift are exact (the
                // wrapping forms only drop the never-taken overflow check).
                let half: $w = (1 as $w).wrapping_shl(k.saturating_sub(1));
                self.saturating_add(half).wrapping_shr(k)
            }
            fn from_i64_saturating(value: i64) -> Self {
                match <$w>::try_from(value) {
                    Ok(v) => v,
                    Err(_) if value < 0 => <$w>::MIN,
                    Err(_) => <$w>::MAX,
                }
            }
            fn to_i64(self) -> i64 {
                i64::from(self)
            }
        }
    };
}

wide!(i32, shr_below_half_i32);
wide!(i64, shr_below_half_i64);

/// The exact product of two Q15 words: |a · b| ≤ 2³⁰, so it never wraps.
#[inline(always)]
fn mul_i16(a: i16, b: i16) -> i32 {
    i32::from(a).wrapping_mul(i32::from(b))
}

/// The exact product of two Q31 words: |a · b| ≤ 2⁶², so it never wraps.
/// Where the core has a 32 × 32 → 64 multiply (`smull`, `smlal`; RISC-V
/// `mul` + `mulh`) the compiler emits it for this.
#[cfg(not(lookout_no_long_multiply))]
#[inline(always)]
fn mul_i32(a: i32, b: i32) -> i64 {
    i64::from(a).wrapping_mul(i64::from(b))
}

/// The exact product of two Q31 words on Armv6-M (Cortex-M0/M0+), whose
/// only multiply is 32 × 32 → 32 (`muls`): from four 16 × 16 products
/// instead of the general 64 × 64 multiply helper (`__aeabi_lmul`), which
/// the plain i64 product would call. With a = aₕ·2¹⁶ + aₗ (aₕ signed, aₗ in
/// [0, 2¹⁶)), a·b = aₕbₕ·2³² + (aₕbₗ + aₗbₕ)·2¹⁶ + aₗbₗ; each partial
/// product fits 32 bits (|aₕbₕ| ≤ 2³⁰, |aₕbₗ| < 2³¹, aₗbₗ < 2³² unsigned)
/// and the sum is exact in i64 (|a·b| ≤ 2⁶²), so the wrapping forms never
/// wrap.
#[cfg(lookout_no_long_multiply)]
#[inline(always)]
fn mul_i32(a: i32, b: i32) -> i64 {
    let (ah, al) = (a >> 16, a & 0xffff);
    let (bh, bl) = (b >> 16, b & 0xffff);
    let high = i64::from(ah.wrapping_mul(bh));
    let mid = i64::from(ah.wrapping_mul(bl)).wrapping_add(i64::from(al.wrapping_mul(bh)));
    let low = i64::from(al.cast_unsigned().wrapping_mul(bl.cast_unsigned()));
    (high << 32).wrapping_add(mid << 16).wrapping_add(low)
}

macro_rules! q_format {
    ($(#[$doc:meta])* $name:ident, $word:ty, $acc:ty, $frac:literal, $mul:ident) => {
        $(#[$doc])*
        #[derive(Clone, Copy, Debug, Default, PartialEq, Eq, PartialOrd, Ord, Hash)]
        pub struct $name(pub $word);

        impl sealed::Sealed for $name {}

        impl Fixed for $name {
            type Acc = $acc;
            const FRAC: u32 = $frac;
            const MIN: Self = Self(<$word>::MIN);
            const MAX: Self = Self(<$word>::MAX);
            #[inline(always)]
            fn mul_wide(self, other: Self) -> $acc {
                $mul(self.0, other.0)
            }
            #[inline(always)]
            fn widen(self) -> $acc {
                <$acc>::from(self.0)
            }
            #[inline(always)]
            fn saturate(wide: $acc) -> (Self, bool) {
                match <$word>::try_from(wide) {
                    Ok(v) => (Self(v), false),
                    Err(_) if wide < 0 => (Self::MIN, true),
                    Err(_) => (Self::MAX, true),
                }
            }
            fn to_i64(self) -> i64 {
                i64::from(self.0)
            }
            fn from_i64_saturating(value: i64) -> Self {
                match <$word>::try_from(value) {
                    Ok(v) => Self(v),
                    Err(_) if value < 0 => Self::MIN,
                    Err(_) => Self::MAX,
                }
            }
        }

        impl $name {
            /// The Q value of the sensor reading `count` taken relative to
            /// `offset`, for an output whose exponent is `exponent` (in
            /// counts): (count − offset) · 2^(F − exponent), saturated; for an
            /// exponent above F the division rounds half up. Integer only.
            pub fn from_counts(count: i32, offset: i32, exponent: u32) -> Self {
                let diff = i64::from(count).saturating_sub(i64::from(offset));
                let value = match <Self as Fixed>::FRAC.checked_sub(exponent) {
                    // k ≤ F ≤ 31: 2^k fits an i64, so the shift is exact.
                    Some(k) => diff.saturating_mul(1i64.wrapping_shl(k)),
                    None => diff.round_shr(exponent.saturating_sub(<Self as Fixed>::FRAC)),
                };
                Self::from_i64_saturating(value)
            }

            /// `value` (in a unit whose scale exponent is `exponent`) as a Q
            /// value, rounded half up; `None` when not finite or outside
            /// [−2^exponent, 2^exponent) (see [`Fixed::from_real`]). Uses
            /// floats: keep it out of the step path.
            pub fn from_real(value: f64, exponent: i8) -> Option<Self> {
                <Self as Fixed>::from_real(value, exponent)
            }

            /// The value this Q value stands for at scale exponent
            /// `exponent` (exact in `f64`). Uses floats.
            pub fn to_real(self, exponent: i8) -> f64 {
                <Self as Fixed>::to_real(self, exponent)
            }
        }

        impl Add for $name {
            type Output = Self;
            /// Saturating addition.
            fn add(self, other: Self) -> Self {
                Self(self.0.saturating_add(other.0))
            }
        }

        impl Zero for $name {
            fn zero() -> Self {
                Self(0)
            }
            fn is_zero(&self) -> bool {
                self.0 == 0
            }
        }

        impl ConstZero for $name {
            const ZERO: Self = Self(0);
        }
    };
}

q_format!(
    /// A Q15 value: the `i16` q stands for q · 2⁻¹⁵ of its signal's scale
    /// (see the [number format](Fixed)).
    Q15, i16, i32, 15, mul_i16
);
q_format!(
    /// A Q31 value: the `i32` q stands for q · 2⁻³¹ of its signal's scale
    /// (see the [number format](Fixed)).
    Q31, i32, i64, 31, mul_i32
);
