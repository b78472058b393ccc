//! The Q tables of a design in one format at one set of signal scales, as
//! one typed value ([`QTables`]): built once by the one quantiser
//! ([`QTables::build`]), read by the stability check, the accuracy analysis,
//! the emitter, the reports and the const-size hand-off, never looked up by
//! name.

use super::deviation::{FormKind, Stored};
use super::gate::{self, FloatGate, QuantisedGate};
use super::quantise::{Block, ConvertError, QuantisedTable, stacked};
use super::{FloatTables, format_name};
use crate::design::ObserverForm;
use crate::model::FixedFormat;
use lookout::TableName;

/// The power-of-two scale exponent of every signal: |v| < 2^s.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct QScales {
    /// One per state.
    pub state: Vec<i8>,
    /// One per input.
    pub input: Vec<i8>,
    /// One per output (and its innovation).
    pub output: Vec<i8>,
}

/// The form's own tables in Q form.
#[derive(Debug, Clone, PartialEq)]
pub enum QForm {
    /// [A B L] with shared row exponents.
    Predictor {
        /// A.
        a: QuantisedTable,
        /// B.
        b: QuantisedTable,
        /// L.
        l: QuantisedTable,
    },
    /// [A B] with shared row exponents, K with its own.
    Current {
        /// A.
        a: QuantisedTable,
        /// B.
        b: QuantisedTable,
        /// K.
        k: QuantisedTable,
    },
    /// A held observer: only the fused tables exist.
    Held,
}

/// The Q tables of a design in one format at one set of scales.
#[derive(Debug, Clone, PartialEq)]
pub struct QTables {
    /// Q15 or Q31.
    pub format: FixedFormat,
    /// The signal scales the entries were normalised with.
    pub scales: QScales,
    /// The form's tables.
    pub form: QForm,
    /// Fused F, G, H with shared row exponents.
    pub fused: [QuantisedTable; 3],
    /// C and D with shared row exponents.
    pub output: [QuantisedTable; 2],
    /// The innovation gate, when the design has one.
    pub gate: Option<QuantisedGate>,
}

/// Why Q tables could not be built: the format, what, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct QTablesError {
    /// Q15 or Q31.
    pub format: FixedFormat,
    /// The quantiser's reason.
    pub error: ConvertError,
}

impl std::fmt::Display for QTablesError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self.error {
            ConvertError::RowTooLarge { table, row, sum } => write!(
                f,
                "table {} row {row} cannot be stored in {}: normalised row sum {sum:.4e}",
                super::quantise::label(table),
                format_name(self.format),
            ),
            ref other => write!(
                f,
                "the {} tables cannot be built: {other}",
                format_name(self.format)
            ),
        }
    }
}

fn three(v: Vec<QuantisedTable>) -> Result<[QuantisedTable; 3], ConvertError> {
    <[QuantisedTable; 3]>::try_from(v).map_err(|_| ConvertError::Shape {
        table: TableName::A,
    })
}

fn two(v: Vec<QuantisedTable>) -> Result<[QuantisedTable; 2], ConvertError> {
    <[QuantisedTable; 2]>::try_from(v).map_err(|_| ConvertError::Shape {
        table: TableName::C,
    })
}

impl QTables {
    /// The tables of `t` quantised in `format` at `scales`, with the gate
    /// `gate` (the design's, if any).
    pub fn build(
        t: &FloatTables<'_>,
        gate: Option<&FloatGate>,
        format: FixedFormat,
        scales: QScales,
    ) -> Result<Self, QTablesError> {
        let q = match format {
            FixedFormat::Q15 => build_in::<lookout::Q15>(t, gate, &scales),
            FixedFormat::Q31 => build_in::<lookout::Q31>(t, gate, &scales),
        };
        let (form, fused, output, gate) = q.map_err(|error| QTablesError { format, error })?;
        Ok(Self {
            format,
            scales,
            form,
            fused,
            output,
            gate,
        })
    }

    /// Which form the tables are of (fused for a held observer).
    pub fn kind(&self) -> FormKind {
        match self.form {
            QForm::Predictor { .. } => FormKind::Predictor,
            QForm::Current { .. } => FormKind::Current,
            QForm::Held => FormKind::Fused,
        }
    }

    /// Every table: the form's, then the fused ones, then C and D.
    pub fn all(&self) -> Vec<&QuantisedTable> {
        let own: Vec<&QuantisedTable> = match &self.form {
            QForm::Predictor { a, b, l } => vec![a, b, l],
            QForm::Current { a, b, k } => vec![a, b, k],
            QForm::Held => Vec::new(),
        };
        own.into_iter()
            .chain(&self.fused)
            .chain(&self.output)
            .collect()
    }

    /// The form's tables then C, D, and the fused ones then C, D (empty
    /// form list for a held observer): the layout of
    /// `FixedDesign::form_tables` and `fused_tables`.
    pub fn lists(&self) -> (Vec<QuantisedTable>, Vec<QuantisedTable>) {
        let all: Vec<QuantisedTable> = self.all().into_iter().cloned().collect();
        let own = all.len() - 5;
        let (c, d) = (self.output[0].clone(), self.output[1].clone());
        let mut form: Vec<QuantisedTable> = all[..own].to_vec();
        if !form.is_empty() {
            form.extend([c, d]);
        }
        (form, all[own..].to_vec())
    }

    /// The dequantised tables of `kind` (`None` for the predictor or
    /// current form of a held observer, or a form these tables are not of).
    pub(crate) fn stored(&self, kind: FormKind) -> Option<Stored> {
        let [c, d] = self.output.each_ref().map(|t| t.dequantised.clone());
        Some(match (kind, &self.form) {
            (FormKind::Fused, _) => {
                Stored::Fused(self.fused.each_ref().map(|t| t.dequantised.clone()))
            }
            (FormKind::Predictor, QForm::Predictor { a, b, l }) => Stored::Predictor([
                a.dequantised.clone(),
                b.dequantised.clone(),
                l.dequantised.clone(),
                c,
                d,
            ]),
            (FormKind::Current, QForm::Current { a, b, k }) => Stored::Current([
                a.dequantised.clone(),
                b.dequantised.clone(),
                k.dequantised.clone(),
                c,
                d,
            ]),
            _ => return None,
        })
    }
}

type Parts = (
    QForm,
    [QuantisedTable; 3],
    [QuantisedTable; 2],
    Option<QuantisedGate>,
);

fn build_in<Q: lookout::Fixed>(
    t: &FloatTables<'_>,
    gate: Option<&FloatGate>,
    s: &QScales,
) -> Result<Parts, ConvertError> {
    let (sx, su, sy) = (&s.state[..], &s.input[..], &s.output[..]);
    let output = two(stacked::<Q>(
        &[
            Block::new(TableName::C, t.cd, sx),
            Block::new(TableName::D, t.dd, su),
        ],
        sy,
    )?)?;
    let fused = three(stacked::<Q>(
        &[
            Block::new(TableName::F, t.f, sx),
            Block::new(TableName::G, t.g, su),
            Block::new(TableName::H, t.h, sy),
        ],
        sx,
    )?)?;
    let form = match t.form {
        ObserverForm::Fused => QForm::Held,
        ObserverForm::Predictor { l } => {
            let [a, b, l] = three(stacked::<Q>(
                &[
                    Block::new(TableName::A, t.ad, sx),
                    Block::new(TableName::B, t.bd, su),
                    Block::new(TableName::L, l, sy),
                ],
                sx,
            )?)?;
            QForm::Predictor { a, b, l }
        }
        ObserverForm::Current { k } => {
            let [a, b] = two(stacked::<Q>(
                &[
                    Block::new(TableName::A, t.ad, sx),
                    Block::new(TableName::B, t.bd, su),
                ],
                sx,
            )?)?;
            let k = stacked::<Q>(&[Block::new(TableName::K, k, sy)], sx)?
                .pop()
                .ok_or(ConvertError::Shape {
                    table: TableName::K,
                })?;
            QForm::Current { a, b, k }
        }
    };
    let gate = gate.map(|g| gate::quantise::<Q>(g, sy)).transpose()?;
    Ok((form, fused, output, gate))
}
