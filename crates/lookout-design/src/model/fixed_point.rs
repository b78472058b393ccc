//! The optional `[fixed_point]` section: word format and signal ranges for
//! the integer tables.

use super::error::{ModelError, ModelErrorKind, ModelWarning};
use super::plant::Plant;
use super::reader::{Dim, Node, Table};

/// A list of finite numbers of the given length, each ≥ 0 (a bound).
fn non_negative(node: &Node<'_, '_>, len: Dim<'_>) -> Result<Vec<f64>, ModelError> {
    let items = node.elements()?;
    node.check_len(&items, len)?;
    items
        .iter()
        .map(|item| {
            let v = item.number()?;
            if v >= 0.0 {
                Ok(v)
            } else {
                Err(item.fail(
                    ModelErrorKind::OutOfRange,
                    format!("{v} is negative; a bound is a magnitude, ≥ 0"),
                ))
            }
        })
        .collect()
}

/// Keys allowed in `[fixed_point]`.
pub(crate) const KEYS: &[&str] = &[
    "format",
    "input_range",
    "output_range",
    "state_range",
    "margin_bits",
    "stability_margin",
    "scales_from",
    "initial_error",
    "output_noise",
    "model_error",
    "deviation_limit",
];

/// Headroom bits when `margin_bits` is not given.
pub const DEFAULT_MARGIN_BITS: u32 = 1;

/// Allowed growth of the error spectral radius when `stability_margin` is not given.
pub const DEFAULT_STABILITY_MARGIN: f64 = 0.01;

/// Signed fractional word format of the fixed-point tables.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FixedFormat {
    /// 32-bit word, 31 fraction bits.
    Q31,
    /// 16-bit word, 15 fraction bits.
    Q15,
}

impl FixedFormat {
    /// Number of fraction bits (31 or 15).
    pub fn fraction_bits(self) -> u32 {
        match self {
            FixedFormat::Q31 => 31,
            FixedFormat::Q15 => 15,
        }
    }
}

/// What the signal scales are proven from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ScaleSource {
    /// Every reading arbitrary within `output_range`: the estimate's peak
    /// is the ℓ1 response of the observer to its input and output ranges.
    Readings,
    /// The plant stays inside `state_range`: the estimate is the true state
    /// minus the estimation error, bounded through the error dynamics.
    Plant,
}

/// Fixed-point request: format, ranges and safety margins.
#[derive(Debug, Clone, PartialEq)]
pub struct FixedPointSpec {
    /// Word format.
    pub format: FixedFormat,
    /// Largest |u_i| the firmware will pass, one per input, in input units.
    pub input_range: Vec<f64>,
    /// Largest |y_i| the firmware will pass, one per output, in output units.
    pub output_range: Vec<f64>,
    /// Largest |x_i| to provide for, one per state; `None` lets the design
    /// derive state ranges from the input and output ranges.
    pub state_range: Option<Vec<f64>>,
    /// Extra headroom bits above every range (each bit doubles the range).
    pub margin_bits: u32,
    /// How much the spectral radius of the quantised error dynamics may exceed
    /// that of the exact design before the fixed-point design is refused
    /// (absolute, e.g. 0.01 allows 0.95 → 0.96); a spectral radius ≥ 1 is
    /// always refused.
    pub stability_margin: f64,
    /// The proof the scales rest on (`scales_from`; the plant's when
    /// `state_range` is given, the readings' otherwise).
    pub scales_from: ScaleSource,
    /// Largest |x_i − x̂_i| at start, one per state (`initial_error`; for
    /// the plant proof, default `state_range`: a start anywhere in range).
    pub initial_error: Option<Vec<f64>>,
    /// Largest |v_j| of the measurement noise, one per output
    /// (`output_noise`, default 0).
    pub output_noise: Option<Vec<f64>>,
    /// Largest |w_i| of the model's error per step, one per state
    /// (`model_error`, default 0): x⁺ = A x + B u + w.
    pub model_error: Option<Vec<f64>>,
    /// Largest acceptable deviation of the run observer from the exact one,
    /// one per state in state units (`deviation_limit`); `None` warns above
    /// 1 % of each state's scale instead.
    pub deviation_limit: Option<Vec<f64>>,
}

/// Reads and checks `[fixed_point]` for `plant`.
pub(crate) fn read(
    table: &Table<'_, '_>,
    plant: &Plant,
    warnings: &mut Vec<ModelWarning>,
) -> Result<FixedPointSpec, ModelError> {
    let format = table
        .require("format", "\"q31\" or \"q15\"")?
        .choice(&[("q31", FixedFormat::Q31), ("q15", FixedFormat::Q15)])?;
    let input_range = table
        .require("input_range", "max |u_i|, one per input")?
        .positive_numbers(Dim {
            count: plant.m(),
            per: "input",
            symbol: "m",
            from: "plant.b",
        })?;
    let output_range = table
        .require("output_range", "max |y_i|, one per output")?
        .positive_numbers(Dim {
            count: plant.p(),
            per: "output",
            symbol: "p",
            from: "plant.c",
        })?;
    let states = Dim {
        count: plant.n(),
        per: "state",
        symbol: "n",
        from: "plant.a",
    };
    let state_range = table
        .get("state_range")
        .map(|node| node.positive_numbers(states))
        .transpose()?;

    let margin_bits = match table.get("margin_bits") {
        Some(node) => {
            let bits = node.count()?;
            if bits >= format.fraction_bits() {
                return Err(node.fail(
                    ModelErrorKind::OutOfRange,
                    format!(
                        "{bits} headroom bits leave no fraction bits in a {}-bit fraction",
                        format.fraction_bits()
                    ),
                ));
            }
            if bits == 0 {
                warnings.push(ModelWarning {
                    path: node.path().to_string(),
                    message: "no headroom: a signal at its stated range saturates".to_string(),
                });
            }
            bits
        }
        None => DEFAULT_MARGIN_BITS,
    };

    let stability_margin = match table.get("stability_margin") {
        Some(node) => {
            let margin = node.number()?;
            if !(0.0..1.0).contains(&margin) {
                return Err(node.fail(
                    ModelErrorKind::OutOfRange,
                    format!(
                        "{margin} is outside [0, 1): it is the allowed growth of the error \
                         spectral radius, which must stay below 1 anyway"
                    ),
                ));
            }
            margin
        }
        None => DEFAULT_STABILITY_MARGIN,
    };

    let outputs = Dim {
        count: plant.p(),
        per: "output",
        symbol: "p",
        from: "plant.c",
    };
    let bounds = |key: &str, dim: Dim<'_>| {
        table
            .get(key)
            .map(|node| non_negative(&node, dim))
            .transpose()
    };
    let initial_error = bounds("initial_error", states)?;
    let model_error = bounds("model_error", states)?;
    let output_noise = bounds("output_noise", outputs)?;
    let deviation_limit = table
        .get("deviation_limit")
        .map(|node| node.positive_numbers(states))
        .transpose()?;
    let scales_from = match table.get("scales_from") {
        Some(node) => {
            let source = node.choice(&[
                ("plant", ScaleSource::Plant),
                ("readings", ScaleSource::Readings),
            ])?;
            if source == ScaleSource::Plant && state_range.is_none() {
                return Err(node.fail(
                    ModelErrorKind::OutOfRange,
                    "\"plant\" needs state_range, the physical range of each state".to_string(),
                ));
            }
            source
        }
        None if state_range.is_some() => ScaleSource::Plant,
        None => ScaleSource::Readings,
    };

    Ok(FixedPointSpec {
        scales_from,
        initial_error,
        output_noise,
        model_error,
        deviation_limit,
        format,
        input_range,
        output_range,
        state_range,
        margin_bits,
        stability_margin,
    })
}
