//! The one quantiser of Q tables, at run-time sizes: the row exponents of
//! the row-sum rule documented on `lookout::Fixed`, the entries rounded by
//! `lookout::Fixed::from_real` (the rounding the target uses for signals).
//! The design's tables, the emitted source, the gate
//! ([`gate`](super::gate)) and the const-size hand-off
//! ([`QuantiseTables`](super::QuantiseTables)) are all built here.

use lookout::{Fixed, TableName};
use nalgebra::DMatrix;
use std::fmt;

/// The row exponent of the row-sum rule of `lookout::Fixed` for one stacked
/// row whose normalised entries τ have Σ|τ| = `abs_sum` and
/// max |τ| = `abs_max`: the smallest e ∈ [−F, F] with Σ|τ| ≤ 2^e whose
/// largest entry still fits the word; 0 for an all-zero row, `None` when no
/// exponent fits (or the sums are not finite).
///
/// ```
/// // The θ row of the worked example on `lookout::Fixed`: Σ|τ| = 1.516 → e = 1.
/// use lookout_design::fixed_point::row_exponent;
/// assert_eq!(row_exponent::<lookout::Q31>(1.516, 1.0), Some(1));
/// assert_eq!(row_exponent::<lookout::Q15>(0.0, 0.0), Some(0));
/// ```
pub fn row_exponent<Q: Fixed>(abs_sum: f64, abs_max: f64) -> Option<i8> {
    if abs_sum == 0.0 {
        return Some(0);
    }
    if !(abs_sum.is_finite() && abs_max.is_finite()) {
        return None;
    }
    let f = i32::try_from(Q::FRAC).unwrap_or(31);
    let fits = |k: i32| {
        abs_sum <= pow2(k) && Q::from_real(abs_max, i8::try_from(k).unwrap_or(i8::MAX)).is_some()
    };
    (-f..=f)
        .find(|&k| fits(k))
        .and_then(|k| i8::try_from(k).ok())
}

/// `value` at scale exponent `exponent` as a Q value (`Q::from_real`,
/// rounded half up), `None` when not finite or outside the word.
pub fn quantise_real<Q: Fixed>(value: f64, exponent: i8) -> Option<Q> {
    Q::from_real(value, exponent)
}

/// The value `q` stands for at scale exponent `exponent`, exactly
/// (`Q::to_real`).
pub fn dequantise_real<Q: Fixed>(q: Q, exponent: i8) -> f64 {
    q.to_real(exponent)
}

/// Why float tables could not be quantised.
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
    /// A table's shape does not match the scales it is stored with.
    Shape {
        /// The table.
        table: TableName,
    },
    /// The Cholesky factorisation of S⁻¹ met the pivot `pivot` ≤ 0 (or
    /// not finite) at `index`: S⁻¹ is not positive definite.
    NotPositiveDefinite {
        /// The pivot's index.
        index: usize,
        /// The pivot that failed.
        pivot: f64,
    },
    /// A gate value (`index` into 1/S_jj for
    /// [`TableName::ChannelInvVariance`]; for [`TableName::Limit`] 0 the
    /// limit, 1 the one-channel limit, 2 a widened limit) is negative, not
    /// finite or too large for the z scale.
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
                write!(f, "{}[{row}, {col}] is not finite", label(table))
            }
            Self::RowTooLarge { table, row, sum } => write!(
                f,
                "row {row} of the tables from {} has normalised absolute sum {sum:e}, beyond any row exponent",
                label(table)
            ),
            Self::Shape { table } => write!(
                f,
                "table {} does not have the shape of its scales",
                label(table)
            ),
            Self::NotPositiveDefinite { index, pivot } => write!(
                f,
                "the gate's S⁻¹ is not positive definite: Cholesky pivot {index} is {pivot:e}"
            ),
            Self::BadGateValue {
                table,
                index,
                value,
            } => write!(
                f,
                "gate value {}[{index}] = {value:e} is negative, not finite or too large",
                label(table)
            ),
        }
    }
}

impl std::error::Error for ConvertError {}

/// The table's name as the design and its reports print it (`a`, `s_inv`, …).
pub fn label(table: TableName) -> &'static str {
    match table {
        TableName::A => "a",
        TableName::B => "b",
        TableName::C => "c",
        TableName::D => "d",
        TableName::L => "l",
        TableName::K => "k",
        TableName::F => "f",
        TableName::G => "g",
        TableName::H => "h",
        TableName::SInv => "s_inv",
        TableName::ChannelInvVariance => "channel_inv_variance",
        TableName::Limit => "limit",
        _ => "?",
    }
}

/// One quantised table: integers, row exponents, and what they stand for.
#[derive(Debug, Clone, PartialEq)]
pub struct QuantisedTable {
    /// The table's name (`a`, `b`, `l`, `k`, `c`, `d`, `f`, `g`, `h`,
    /// `s_inv`, `channel_inv_variance`: [`label`]).
    pub name: &'static str,
    /// The stored integers q_ij.
    pub q: DMatrix<i64>,
    /// The row exponents it was stored with (shared with the tables that
    /// add into the same rows).
    pub exponents: Vec<i8>,
    /// The table the integers stand for, in the model's units (exact).
    pub dequantised: DMatrix<f64>,
    /// The largest |entry| of the exact table.
    pub largest: f64,
    /// The largest |exact − dequantised| entry.
    pub max_abs_error: f64,
    /// `max_abs_error` relative to `largest` (0 for an all-zero table).
    pub max_rel_error: f64,
    /// The entry that lost the largest share of its own value to rounding:
    /// row, column, |exact − stored| / |exact| (`None` for an all-zero table).
    pub worst_loss: Option<(usize, usize, f64)>,
}

/// A table to quantise: its name, its entries, and the scale exponents of
/// the signals its columns read.
pub(crate) struct Block<'a> {
    pub name: TableName,
    pub m: &'a DMatrix<f64>,
    pub input: &'a [i8],
}

impl<'a> Block<'a> {
    pub fn new(name: TableName, m: &'a DMatrix<f64>, input: &'a [i8]) -> Self {
        Self { name, m, input }
    }
}

fn pow2(k: i32) -> f64 {
    2f64.powi(k)
}

/// τ_ij = t_ij · 2^(s_j − s_i): the entry mapping normalised input to
/// normalised output (exact: a power-of-two scaling).
fn normalised(t: f64, s_in: i8, s_out: i8) -> f64 {
    t * pow2(i32::from(s_in) - i32::from(s_out))
}

/// The row exponents of the stacked `blocks` (which add into the same
/// rows, whose output scale exponents are `output`), by [`row_exponent`].
fn exponents<Q: Fixed>(blocks: &[Block<'_>], output: &[i8]) -> Result<Vec<i8>, ConvertError> {
    if let Some(b) = blocks
        .iter()
        .find(|b| b.m.nrows() != output.len() || b.m.ncols() != b.input.len())
    {
        return Err(ConvertError::Shape { table: b.name });
    }
    let mut exponents = Vec::with_capacity(output.len());
    for (i, &s_out) in output.iter().enumerate() {
        let (mut sum, mut max) = (0.0, 0.0_f64);
        for b in blocks {
            for (j, &s_in) in b.input.iter().enumerate() {
                let t = b.m[(i, j)];
                if !t.is_finite() {
                    return Err(ConvertError::NotFinite {
                        table: b.name,
                        row: i,
                        col: j,
                    });
                }
                let tau = normalised(t, s_in, s_out).abs();
                sum += tau;
                max = max.max(tau);
            }
        }
        let table = blocks.first().map_or(TableName::A, |b| b.name);
        exponents.push(
            row_exponent::<Q>(sum, max).ok_or(ConvertError::RowTooLarge { table, row: i, sum })?,
        );
    }
    Ok(exponents)
}

/// Quantises the stacked `blocks` (which add into the same rows, whose
/// output scale exponents are `output`) with one exponent per row, chosen by
/// the row-sum rule ([`row_exponent`]).
pub(crate) fn stacked<Q: Fixed>(
    blocks: &[Block<'_>],
    output: &[i8],
) -> Result<Vec<QuantisedTable>, ConvertError> {
    let exponents = exponents::<Q>(blocks, output)?;
    blocks
        .iter()
        .map(|b| one::<Q>(b, output, &exponents))
        .collect()
}

/// One block of a stacked row, stored with the shared `exponents`.
fn one<Q: Fixed>(
    b: &Block<'_>,
    output: &[i8],
    exponents: &[i8],
) -> Result<QuantisedTable, ConvertError> {
    let (rows, cols) = b.m.shape();
    let mut q = DMatrix::<i64>::zeros(rows, cols);
    let mut dequantised = DMatrix::<f64>::zeros(rows, cols);
    for i in 0..rows {
        for (j, &s_in) in b.input.iter().enumerate() {
            let (s_out, e) = (output[i], exponents[i]);
            let tau = normalised(b.m[(i, j)], s_in, s_out);
            let stored = Q::from_real(tau, e).ok_or(ConvertError::RowTooLarge {
                table: b.name,
                row: i,
                sum: tau.abs(),
            })?;
            q[(i, j)] = stored.to_i64();
            dequantised[(i, j)] = normalised(stored.to_real(e), s_out, s_in);
        }
    }
    let mut worst_loss: Option<(usize, usize, f64)> = None;
    for ((i, j), &v) in
        b.m.iter()
            .enumerate()
            .map(|(k, v)| ((k % rows, k / rows), v))
    {
        if v != 0.0 {
            let loss = (v - dequantised[(i, j)]).abs() / v.abs();
            if worst_loss.is_none_or(|(_, _, w)| loss > w) {
                worst_loss = Some((i, j, loss));
            }
        }
    }
    let largest = b.m.amax();
    let max_abs_error = (b.m - &dequantised).amax();
    Ok(QuantisedTable {
        name: label(b.name),
        q,
        exponents: exponents.to_vec(),
        dequantised,
        largest,
        max_abs_error,
        max_rel_error: if largest > 0.0 {
            max_abs_error / largest
        } else {
            0.0
        },
        worst_loss,
    })
}
