//! Rust literals for table entries: exact, so generated tables round-trip.

use nalgebra::DMatrix;

/// The float type of emitted tables.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Scalar {
    /// `f32`, the usual choice on a Cortex-M4F (single-precision FPU).
    #[default]
    F32,
    /// `f64`.
    F64,
}

impl Scalar {
    /// The Rust type name.
    pub fn rust_type(self) -> &'static str {
        match self {
            Scalar::F32 => "f32",
            Scalar::F64 => "f64",
        }
    }

    /// `value` rounded to this type and printed as the shortest literal that
    /// reads back to exactly that value (Rust's float `Debug` output), or
    /// `None` if it does not fit the type.
    pub fn literal(self, value: f64) -> Option<String> {
        match self {
            Scalar::F64 => value.is_finite().then(|| format!("{value:?}")),
            Scalar::F32 => {
                #[allow(clippy::cast_possible_truncation)] // rounding to f32 is the point
                let narrow = value as f32;
                narrow.is_finite().then(|| format!("{narrow:?}"))
            }
        }
    }
}

/// `[[a, b], [c, d]]`, row by row; `None` if an entry does not fit.
pub(super) fn rows(scalar: Scalar, m: &DMatrix<f64>) -> Option<String> {
    let rows: Option<Vec<String>> = m
        .row_iter()
        .map(|row| list(scalar, row.iter().copied()))
        .collect();
    Some(format!("[{}]", rows?.join(", ")))
}

/// `[a, b, c]`; `None` if an entry does not fit.
pub(super) fn list(scalar: Scalar, values: impl Iterator<Item = f64>) -> Option<String> {
    let items: Option<Vec<String>> = values.map(|v| scalar.literal(v)).collect();
    Some(format!("[{}]", items?.join(", ")))
}
