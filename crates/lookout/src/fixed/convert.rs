//! Host-side conversions between float values and Q values, for table
//! generation and tests. These use floats and are never called by a step.
//! Every conversion is exact except the one rounding (half up, as in the
//! steps) from a float to its Q value.
// Host-side helpers: the no-float rule of the fixed-point steps does not
// apply here (nothing in this file is reachable from a step).
#![allow(clippy::float_arithmetic)]

use super::format::{Fixed, Wide};
use crate::Matrix;
use core::fmt;

/// 2^k in `f64`; exact for the exponents used here (|k| < 1000).
pub(crate) fn pow2(k: i32) -> f64 {
    libm::scalbn(1.0, k)
}

/// The sum of a few exponents (each far inside i32, so saturation never
/// happens; it only keeps the arithmetic lint's promise).
pub(crate) fn exponent_sum(plus: &[i32], minus: &[i32]) -> i32 {
    let p = plus.iter().fold(0i32, |acc, &t| acc.saturating_add(t));
    minus.iter().fold(p, |acc, &t| acc.saturating_sub(t))
}

pub(crate) fn frac<Q: Fixed>() -> i32 {
    i32::try_from(Q::FRAC).unwrap_or(31)
}

/// round(x) half up as an integer-valued float (`None` when not finite).
fn round_half_up(x: f64) -> Option<f64> {
    x.is_finite().then(|| libm::floor(x + 0.5))
}

/// `value` at scale exponent `exponent` as a Q value, rounded half up:
/// round(value · 2^(F − exponent)). `None` when not finite or outside the
/// word.
pub(crate) fn quantise<Q: Fixed>(value: f64, exponent: i8) -> Option<Q> {
    quantise_scaled(value, frac::<Q>().saturating_sub(i32::from(exponent)))
}

/// round(value · 2^shift) as a Q word, `None` outside.
fn quantise_scaled<Q: Fixed>(value: f64, shift: i32) -> Option<Q> {
    let q = round_half_up(libm::scalbn(value, shift))?;
    let limit = pow2(frac::<Q>());
    // The cast is exact: q is an integer in [−2^F, 2^F).
    (q >= -limit && q < limit).then(|| Q::from_i64_saturating(q as i64))
}

/// The value of `q` at scale exponent `exponent`: q · 2^(exponent − F).
pub(crate) fn dequantise<Q: Fixed>(q: Q, exponent: i8) -> f64 {
    libm::scalbn(
        q.to_i64() as f64,
        i32::from(exponent).saturating_sub(frac::<Q>()),
    )
}

/// floor(value · 2^shift) as an accumulator value: the integer limits of the
/// gate (ν_int ≤ floor(limit · 2^shift) ⇔ ν ≤ limit for an integer ν_int).
pub(crate) fn wide_floor<W: Wide>(value: f64, shift: i32) -> Option<W> {
    let v = libm::floor(libm::scalbn(value, shift));
    (v.is_finite() && v >= 0.0 && v < pow2(62)).then(|| W::from_i64_saturating(v as i64))
}

/// Which table a conversion error is about.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum TableName {
    /// A.
    A,
    /// B.
    B,
    /// C.
    C,
    /// D.
    D,
    /// L, the predictor gain.
    L,
    /// K, the current-form gain.
    K,
    /// F of the fused tables.
    F,
    /// G of the fused tables.
    G,
    /// H of the fused tables.
    H,
    /// S⁻¹ of the gate.
    SInv,
    /// The gate's per-channel 1/S_jj.
    ChannelInvVariance,
    /// The gate's limits.
    Limit,
}

/// Why float tables could not be converted to Q tables.
#[derive(Clone, Copy, Debug, PartialEq)]
#[non_exhaustive]
pub enum ConvertError {
    /// Entry (`row`, `col`) of `table` is not finite.
    NotFinite {
        /// The table.
        table: TableName,
        /// Row of the entry.
        row: usize,
        /// Column of the entry.
        col: usize,
    },
    /// Row `row` of the stacked tables starting with `table` has a
    /// normalised absolute sum `sum` above 2^F: no row exponent can hold it
    /// (the signal scales are far off).
    RowTooLarge {
        /// The first table of the stacked row.
        table: TableName,
        /// The row.
        row: usize,
        /// Σ_j |τ_ij| of the normalised row.
        sum: f64,
    },
    /// The Cholesky factorisation of the normalised S⁻¹ met the pivot
    /// `pivot` ≤ 0 (or not finite) at `index`: S⁻¹ is not positive definite.
    NotPositiveDefinite {
        /// The pivot's index.
        index: usize,
        /// The pivot that failed.
        pivot: f64,
    },
    /// A gate value (`index` into 1/S_jj, or 0 for `limit` and 1 for
    /// `channel_limit` with [`TableName::Limit`]) is negative, not finite or
    /// too large for the z scale.
    BadGateValue {
        /// `ChannelInvVariance` or `Limit`.
        table: TableName,
        /// Which value.
        index: usize,
        /// The value.
        value: f64,
    },
}

impl fmt::Display for ConvertError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Self::NotFinite { table, row, col } => {
                write!(f, "{table:?}[{row}, {col}] is not finite")
            }
            Self::RowTooLarge { table, row, sum } => write!(
                f,
                "row {row} of the tables from {table:?} has normalised absolute sum {sum:e}, beyond any row exponent"
            ),
            Self::NotPositiveDefinite { index, pivot } => write!(
                f,
                "the gate's S⁻¹ is not positive definite: Cholesky pivot {index} is {pivot:e}"
            ),
            Self::BadGateValue {
                table,
                index,
                value,
            } => {
                write!(
                    f,
                    "gate value {table:?}[{index}] = {value:e} is negative, not finite or too large"
                )
            }
        }
    }
}

/// A float table with the scales of its inputs, one block of a stacked row.
pub(crate) struct Block<'a, const R: usize, const C: usize> {
    pub(crate) m: &'a Matrix<f64, R, C>,
    pub(crate) input: &'a [i8; C],
    pub(crate) name: TableName,
}

/// What a row exponent is chosen from: Σ|τ| and max|τ| of a normalised row.
pub(crate) trait RowStats {
    /// (Σ_j |τ_ij|, max_j |τ_ij|) of row `i` normalised to `output` scale.
    fn stats(&self, i: usize, output: i8) -> Result<(f64, f64), ConvertError>;
    /// The table's name.
    fn name(&self) -> TableName;
}

impl<const R: usize, const C: usize> RowStats for Block<'_, R, C> {
    fn stats(&self, i: usize, output: i8) -> Result<(f64, f64), ConvertError> {
        let mut sum = 0.0;
        let mut max: f64 = 0.0;
        for (j, (col, &s_in)) in self.m.as_cols().iter().zip(self.input.iter()).enumerate() {
            let t = col.get(i).copied().unwrap_or(0.0);
            if !t.is_finite() {
                return Err(ConvertError::NotFinite {
                    table: self.name,
                    row: i,
                    col: j,
                });
            }
            let tau = libm::fabs(libm::scalbn(
                t,
                i32::from(s_in).saturating_sub(i32::from(output)),
            ));
            sum += tau;
            max = max.max(tau);
        }
        Ok((sum, max))
    }
    fn name(&self) -> TableName {
        self.name
    }
}

/// The row exponent of each row of the stacked `blocks`: the smallest
/// e ∈ [−F, F] with Σ|τ| ≤ 2^e whose largest entry still fits the word (the
/// row-sum rule of [`Fixed`]); 0 for an all-zero row.
pub(crate) fn row_exponents<Q: Fixed, const R: usize>(
    blocks: &[&dyn RowStats],
    output: &[i8; R],
) -> Result<[i8; R], ConvertError> {
    let mut exp = [0i8; R];
    for (i, (e, &s_out)) in exp.iter_mut().zip(output.iter()).enumerate() {
        let (mut sum, mut max) = (0.0, 0.0f64);
        for block in blocks {
            let (s, m) = block.stats(i, s_out)?;
            sum += s;
            max = max.max(m);
        }
        let first = blocks.first().map_or(TableName::A, |b| b.name());
        *e = row_exponent::<Q>(sum, max).ok_or(ConvertError::RowTooLarge {
            table: first,
            row: i,
            sum,
        })?;
    }
    Ok(exp)
}

/// Host side: the row exponent of the row-sum rule of [`Fixed`] for one
/// stacked row whose normalised entries τ have Σ|τ| = `abs_sum` and
/// max |τ| = `abs_max`: the smallest e ∈ [−F, F] with Σ|τ| ≤ 2^e whose
/// largest entry still fits the word; 0 for an all-zero row, `None` when no
/// exponent fits (or the sums are not finite).
///
/// This is the rule every `from_float` applies; tools that work with
/// run-time sizes call it to choose the same exponents.
///
/// ```
/// // The θ row of the worked example on `Fixed`: Σ|τ| = 1.516 → e = 1.
/// assert_eq!(lookout::row_exponent::<lookout::Q31>(1.516, 1.0), Some(1));
/// assert_eq!(lookout::row_exponent::<lookout::Q15>(0.0, 0.0), Some(0));
/// ```
pub fn row_exponent<Q: Fixed>(abs_sum: f64, abs_max: f64) -> Option<i8> {
    if abs_sum == 0.0 {
        return Some(0);
    }
    if !(abs_sum.is_finite() && abs_max.is_finite()) {
        return None;
    }
    let f = frac::<Q>();
    let fits =
        |k: i32| abs_sum <= pow2(k) && quantise_scaled::<Q>(abs_max, f.saturating_sub(k)).is_some();
    (f.saturating_neg()..=f)
        .find(|&k| fits(k))
        .and_then(|k| i8::try_from(k).ok())
}

/// Host side: `value` at scale exponent `exponent` as a Q value,
/// round(value · 2^(F − exponent)) half up, as the `from_float` builders
/// round; `None` when not finite or outside the word. Generic twin of
/// [`Q31::from_real`](crate::Q31::from_real).
pub fn quantise_real<Q: Fixed>(value: f64, exponent: i8) -> Option<Q> {
    quantise(value, exponent)
}

/// Host side: the value `q` stands for at scale exponent `exponent`,
/// q · 2^(exponent − F), exactly. Generic twin of
/// [`Q31::to_real`](crate::Q31::to_real).
pub fn dequantise_real<Q: Fixed>(q: Q, exponent: i8) -> f64 {
    dequantise(q, exponent)
}

/// The block's entries as Q values with the row exponents `exp`:
/// q_ij = round(t_ij · 2^(s_j − s_i + F − e_i)).
pub(crate) fn quantise_block<Q: Fixed, const R: usize, const C: usize>(
    block: &Block<'_, R, C>,
    output: &[i8; R],
    exp: &[i8; R],
) -> Result<Matrix<Q, R, C>, ConvertError> {
    let f = frac::<Q>();
    let mut cols = [[Q::ZERO; R]; C];
    let pairs = cols.iter_mut().zip(block.m.as_cols().iter());
    for (j, ((qcol, col), &s_in)) in pairs.zip(block.input.iter()).enumerate() {
        for (i, ((q, &t), (&s_out, &e))) in qcol
            .iter_mut()
            .zip(col.iter())
            .zip(output.iter().zip(exp.iter()))
            .enumerate()
        {
            let shift = exponent_sum(&[i32::from(s_in), f], &[i32::from(s_out), i32::from(e)]);
            *q = quantise_scaled(t, shift).ok_or(if t.is_finite() {
                ConvertError::RowTooLarge {
                    table: block.name,
                    row: i,
                    sum: libm::fabs(t),
                }
            } else {
                ConvertError::NotFinite {
                    table: block.name,
                    row: i,
                    col: j,
                }
            })?;
        }
    }
    Ok(Matrix::from_cols(cols))
}

/// The float table a Q block stands for: t_ij = q_ij · 2^(e_i − F + s_i − s_j),
/// exact.
pub(crate) fn dequantise_block<Q: Fixed, const R: usize, const C: usize>(
    m: &Matrix<Q, R, C>,
    input: &[i8; C],
    output: &[i8; R],
    exp: &[i8; R],
) -> Matrix<f64, R, C> {
    let f = frac::<Q>();
    let mut cols = [[0.0; R]; C];
    for ((tcol, qcol), &s_in) in cols.iter_mut().zip(m.as_cols().iter()).zip(input.iter()) {
        for ((t, &q), (&s_out, &e)) in tcol
            .iter_mut()
            .zip(qcol.iter())
            .zip(output.iter().zip(exp.iter()))
        {
            let shift = exponent_sum(&[i32::from(e), i32::from(s_out)], &[f, i32::from(s_in)]);
            *t = libm::scalbn(q.to_i64() as f64, shift);
        }
    }
    Matrix::from_cols(cols)
}
