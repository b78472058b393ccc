//! `Fixed::from_real` against an exact reference: the value's exact binary
//! form m · 2^k (IEEE 754 decomposition, common practice), scaled by
//! 2^(F − exponent) and rounded half up in 128-bit integers, so no float
//! rounding enters the reference. Covers halves, values a hair below a
//! half, both ends of the word, subnormals, ±1e±300 and non-finite values.

mod common;

use common::fixed_seed;
use lookout::{Q15, Q31};
use proptest::prelude::*;

/// (mantissa, binary exponent, sign) with value = sign · m · 2^k exactly.
fn decode(v: f64) -> (i128, i32, i128) {
    let bits = v.to_bits();
    let sign = if bits >> 63 == 0 { 1 } else { -1 };
    let exp = ((bits >> 52) & 0x7ff) as i32;
    let frac = (bits & ((1 << 52) - 1)) as i128;
    if exp == 0 {
        (frac, -1074, sign)
    } else {
        (frac | (1 << 52), exp - 1075, sign)
    }
}

/// round(v · 2^(frac − exponent)) half up, exactly; `None` outside the word.
fn reference(v: f64, exponent: i8, frac: i32) -> Option<i64> {
    if !v.is_finite() {
        return None;
    }
    let (m, k, sign) = decode(v);
    let shift = k + frac - i32::from(exponent);
    let q: i128 = if m == 0 {
        0
    } else if shift >= 0 {
        if shift > 70 {
            return None;
        }
        sign * (m << shift)
    } else if -shift > 120 {
        0 // |x| < 2⁵³ · 2⁻¹²¹ < ½
    } else {
        // floor(x + ½) = floor((2·n + 2^s) / 2^(s+1)) for x = n / 2^s.
        let s = -shift;
        (2 * sign * m + (1_i128 << s)).div_euclid(1_i128 << (s + 1))
    };
    let limit = 1_i128 << frac;
    (-limit..limit).contains(&q).then_some(q as i64)
}

fn check(v: f64, e: i8) {
    assert_eq!(
        Q15::from_real(v, e).map(|q| i64::from(q.0)),
        reference(v, e, 15),
        "Q15 {v:e} at {e}"
    );
    assert_eq!(
        Q31::from_real(v, e).map(|q| i64::from(q.0)),
        reference(v, e, 31),
        "Q31 {v:e} at {e}"
    );
}

#[test]
fn hard_values_round_half_up_exactly() {
    let half_below = 0.5 - 2f64.powi(-54);
    for v in [
        0.0,
        -0.0,
        0.5,
        -0.5,
        half_below,
        -half_below,
        1.5,
        -1.5,
        2.5,
        -2.5,
        f64::MIN_POSITIVE,
        5e-324,
        -5e-324,
        1e300,
        -1e300,
        1e-300,
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::NAN,
    ] {
        for e in [-128, -31, -15, 0, 15, 31, 127] {
            check(v, e);
        }
    }
    // The ends of the word: ±2^F LSB at exponent 0 in units of one LSB.
    for lsb in [
        -32768.5, -32768.0, -32767.5, 32766.5, 32767.0, 32767.49, 32767.5,
    ] {
        check(lsb * 2f64.powi(-15), 0);
    }
    // x = ½ − 2⁻⁵⁴ LSB rounds to 0 (floor(x + ½) in f64 would give 1).
    assert_eq!(Q31::from_real(half_below * 2f64.powi(-31), 0), Some(Q31(0)));
}

proptest! {
    #![proptest_config(fixed_seed(4096))]

    #[test]
    fn any_value_rounds_as_the_exact_reference(bits in any::<u64>(), e in any::<i8>()) {
        check(f64::from_bits(bits), e);
    }

    #[test]
    fn values_near_the_word_round_as_the_exact_reference(
        lsb in -2.2e9_f64..2.2e9,
        twist in 0u32..4,
        e in -40_i8..40,
    ) {
        // Whole and half LSB counts and their neighbours, scaled to `e`.
        let base = (lsb * 2.0).round() / 2.0;
        let v = match twist {
            0 => base,
            1 => f64::from_bits(base.to_bits().wrapping_add(1)),
            2 => f64::from_bits(base.to_bits().wrapping_sub(1)),
            _ => lsb,
        };
        check(v * 2f64.powi(i32::from(e) - 31), e);
        check(v * 2f64.powi(i32::from(e) - 15), e);
    }
}
