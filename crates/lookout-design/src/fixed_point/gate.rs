//! The innovation gate in Q form, at run-time sizes: the one place its
//! integers are built (for the emitted source and the const-size hand-off).
//!
//! The runtime's fixed gate (`lookout::FixedGate`) tests
//! ‖W r‖² ≤ limit with WᵀW = S⁻¹: W is the upper Cholesky factor of S⁻¹
//! (Cholesky's method, common practice), stored like any table with the
//! outputs' scales as inputs and the common z scale as outputs; the z scale
//! is the smallest exponent with every limit ≤ 2^(2·z_exp); the limits are
//! rounded down to integers of that scale squared, so that for an integer
//! sum ν_int ≤ floor(limit · 2^shift) ⇔ ν ≤ limit.

use super::quantise::{Block, ConvertError, stacked};
use crate::design::GateDesign;
use crate::model::FixedFormat;
use lookout::{Fixed, TableName};
use nalgebra::DMatrix;

/// The float values of a gate, at run-time size.
#[derive(Debug, Clone, PartialEq)]
pub struct FloatGate {
    /// S⁻¹ (P × P, symmetric positive definite).
    pub s_inv: DMatrix<f64>,
    /// Limit on the normalised innovation squared with every channel.
    pub limit: f64,
    /// 1 / S_jj.
    pub channel_inv_variance: Vec<f64>,
    /// Limit on r_j² / S_jj when channels are missing.
    pub channel_limit: f64,
    /// The widened limits \[every channel, one channel\] after 1, 2, …
    /// consecutive misses.
    pub recovery: Vec<[f64; 2]>,
    /// Corrections that undo one miss.
    pub per_miss: u8,
}

impl From<&GateDesign> for FloatGate {
    fn from(g: &GateDesign) -> Self {
        Self {
            s_inv: g.s_inv.clone(),
            limit: g.limit,
            channel_inv_variance: g.channel_inv_variance.clone(),
            channel_limit: g.channel_limit,
            recovery: g.recovery_limits(),
            per_miss: g.per_miss,
        }
    }
}

/// The gate in Q form at run-time size: the fields of `lookout::FixedGate`
/// as integers.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct QuantisedGate {
    /// W, upper triangular with WᵀW = S⁻¹.
    pub w: DMatrix<i64>,
    /// Row exponents of W.
    pub w_exp: Vec<i8>,
    /// √(1/S_jj) per channel.
    pub channel_w: Vec<i64>,
    /// Their exponents.
    pub channel_exp: Vec<i8>,
    /// The z scale exponent.
    pub z_exp: i8,
    /// The limit, in the accumulator's integers.
    pub limit: i64,
    /// The one-channel limit, likewise.
    pub channel_limit: i64,
    /// The widened limit pairs, likewise.
    pub recovery: Vec<[i64; 2]>,
    /// Corrections that undo one miss.
    pub per_miss: u8,
}

/// Upper-triangular W with WᵀW = `a` (Cholesky), `a` read from its upper
/// triangle.
fn cholesky_upper(a: &DMatrix<f64>) -> Result<DMatrix<f64>, ConvertError> {
    let p = a.nrows();
    let mut w = DMatrix::<f64>::zeros(p, p);
    for j in 0..p {
        let pivot = a[(j, j)] - (0..j).map(|k| w[(k, j)] * w[(k, j)]).sum::<f64>();
        if !(pivot > 0.0 && pivot.is_finite()) {
            return Err(ConvertError::NotPositiveDefinite { index: j, pivot });
        }
        let wjj = pivot.sqrt();
        w[(j, j)] = wjj;
        for i in j + 1..p {
            w[(j, i)] = (a[(j, i)] - (0..j).map(|k| w[(k, j)] * w[(k, i)]).sum::<f64>()) / wjj;
        }
    }
    Ok(w)
}

/// floor(value · 2^shift) as an accumulator integer, `None` unless finite,
/// ≥ 0 and below 2^62.
fn wide_floor(value: f64, shift: i32) -> Option<i64> {
    let v = (value * 2f64.powi(shift)).floor();
    (v.is_finite() && (0.0..2f64.powi(62)).contains(&v)).then_some(v as i64)
}

/// The gate `g` in `Q` for outputs with scale exponents `output`.
pub fn quantise<Q: Fixed>(g: &FloatGate, output: &[i8]) -> Result<QuantisedGate, ConvertError> {
    let p = output.len();
    if g.s_inv.shape() != (p, p) || g.channel_inv_variance.len() != p {
        return Err(ConvertError::Shape {
            table: TableName::SInv,
        });
    }
    let bad = |index, value| ConvertError::BadGateValue {
        table: TableName::Limit,
        index,
        value,
    };
    let widened = g.recovery.iter().flatten().copied();
    let mut largest = 0.0_f64;
    for (index, value) in [g.limit, g.channel_limit]
        .into_iter()
        .chain(widened)
        .enumerate()
    {
        if !(value.is_finite() && value >= 0.0) {
            return Err(bad(index, value));
        }
        largest = largest.max(value);
    }
    let z = (-31i8..=31)
        .find(|&z| largest <= 2f64.powi(2 * i32::from(z)))
        .ok_or(bad(0, largest))?;
    let w = cholesky_upper(&g.s_inv)?;
    let z_scale = vec![z; p];
    let [wq] = <[_; 1]>::try_from(stacked::<Q>(
        &[Block::new(TableName::SInv, &w, output)],
        &z_scale,
    )?)
    .map_err(|_| ConvertError::Shape {
        table: TableName::SInv,
    })?;
    let (mut channel_w, mut channel_exp) = (Vec::with_capacity(p), Vec::with_capacity(p));
    for (index, (&v, &s)) in g.channel_inv_variance.iter().zip(output).enumerate() {
        let table = TableName::ChannelInvVariance;
        if !(v.is_finite() && v >= 0.0) {
            return Err(ConvertError::BadGateValue {
                table,
                index,
                value: v,
            });
        }
        let c = DMatrix::from_element(1, 1, v.sqrt());
        let q = stacked::<Q>(&[Block::new(table, &c, &[s])], &[z])?;
        let one = q.first().ok_or(ConvertError::Shape { table })?;
        channel_w.push(one.q[(0, 0)]);
        channel_exp.push(one.exponents[0]);
    }
    let f = i32::try_from(Q::FRAC).unwrap_or(31);
    let unit = 2 * f - 2 * i32::from(z);
    let recovery = g
        .recovery
        .iter()
        .map(|&[a, b]| {
            Ok([
                wide_floor(a, unit).ok_or(bad(2, a))?,
                wide_floor(b, unit).ok_or(bad(2, b))?,
            ])
        })
        .collect::<Result<Vec<_>, ConvertError>>()?;
    Ok(QuantisedGate {
        w: wq.q,
        w_exp: wq.exponents,
        channel_w,
        channel_exp,
        z_exp: z,
        limit: wide_floor(g.limit, unit).ok_or(bad(0, g.limit))?,
        channel_limit: wide_floor(g.channel_limit, unit).ok_or(bad(1, g.channel_limit))?,
        recovery,
        per_miss: g.per_miss,
    })
}

/// [`quantise`] in `format`.
pub fn quantise_in(
    format: FixedFormat,
    g: &FloatGate,
    output: &[i8],
) -> Result<QuantisedGate, ConvertError> {
    match format {
        FixedFormat::Q15 => quantise::<lookout::Q15>(g, output),
        FixedFormat::Q31 => quantise::<lookout::Q31>(g, output),
    }
}
