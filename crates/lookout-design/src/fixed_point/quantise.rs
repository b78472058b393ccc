//! Q tables at run-time sizes, by the runtime's own rules
//! (`lookout::row_exponent`, `lookout::quantise_real`), so the emitted
//! integers are exactly what the runtime's `from_float` would build.

use lookout::Fixed;
use nalgebra::DMatrix;

/// One quantised table: integers, row exponents, and what they stand for.
#[derive(Debug, Clone, PartialEq)]
pub struct QuantisedTable {
    /// The table's name (`a`, `b`, `l`, `k`, `c`, `d`, `f`, `g`, `h`).
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
    pub name: &'static str,
    pub m: &'a DMatrix<f64>,
    pub input: &'a [i8],
}

impl<'a> Block<'a> {
    pub fn new(name: &'static str, m: &'a DMatrix<f64>, input: &'a [i8]) -> Self {
        Self { name, m, input }
    }
}

/// Why a row could not be stored.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RowTooLarge {
    pub table: &'static str,
    pub row: usize,
    pub sum: f64,
}

fn pow2(k: i32) -> f64 {
    2f64.powi(k)
}

/// τ_ij = t_ij · 2^(s_j − s_i): the entry mapping normalised input to
/// normalised output (exact: a power-of-two scaling).
fn normalised(t: f64, s_in: i8, s_out: i8) -> f64 {
    t * pow2(i32::from(s_in) - i32::from(s_out))
}

/// Quantises the stacked `blocks` (which add into the same rows, whose
/// output scale exponents are `output`) with one exponent per row, chosen by
/// the runtime's row-sum rule.
pub(crate) fn stacked<Q: Fixed>(
    blocks: &[Block<'_>],
    output: &[i8],
) -> Result<Vec<QuantisedTable>, RowTooLarge> {
    if let Some(b) = blocks
        .iter()
        .find(|b| b.m.nrows() != output.len() || b.m.ncols() != b.input.len())
    {
        return Err(RowTooLarge {
            table: b.name,
            row: 0,
            sum: f64::NAN,
        });
    }
    let mut exponents = Vec::with_capacity(output.len());
    for (i, &s_out) in output.iter().enumerate() {
        let (mut sum, mut max) = (0.0, 0.0_f64);
        for b in blocks {
            for (j, &s_in) in b.input.iter().enumerate() {
                let tau = normalised(b.m[(i, j)], s_in, s_out).abs();
                sum += tau;
                max = max.max(tau);
            }
        }
        let table = blocks.first().map_or("?", |b| b.name);
        exponents.push(lookout::row_exponent::<Q>(sum, max).ok_or(RowTooLarge {
            table,
            row: i,
            sum,
        })?);
    }
    blocks
        .iter()
        .map(|b| {
            let (rows, cols) = b.m.shape();
            let mut q = DMatrix::<i64>::zeros(rows, cols);
            let mut dequantised = DMatrix::<f64>::zeros(rows, cols);
            for i in 0..rows {
                for (j, &s_in) in b.input.iter().enumerate() {
                    let (s_out, e) = (output[i], exponents[i]);
                    let tau = normalised(b.m[(i, j)], s_in, s_out);
                    let stored = lookout::quantise_real::<Q>(tau, e).ok_or(RowTooLarge {
                        table: b.name,
                        row: i,
                        sum: tau.abs(),
                    })?;
                    q[(i, j)] = stored.to_i64();
                    dequantised[(i, j)] =
                        normalised(lookout::dequantise_real(stored, e), s_out, s_in);
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
                name: b.name,
                q,
                exponents: exponents.clone(),
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
        })
        .collect()
}
