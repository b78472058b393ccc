//! Fixed-point tables from the model's `[fixed_point]` section: signal
//! scales with a proven no-overflow bound, Q15/Q31 tables by the runtime's
//! rules, and the quantised-stability check.
//!
//! # Scales
//!
//! Every signal's scale exponent s is the smallest with
//! bound · 2^margin_bits < 2^s (declared input and output ranges get no
//! margin), where the bounds come from one of two proofs ([`scales`]): the
//! readings' (every reading arbitrary within its range, the ℓ1 impulse
//! response of the observer) or the plant's (`state_range` plus the bound
//! of the estimation error). Both sum impulse responses with
//! [`bounds::peak`], which handles spectral radii up to 1 − 1e-7 quickly.
//! The tables' row exponents follow the runtime's row-sum rule, which makes
//! the wide accumulator safe whenever every signal is inside its scale, so
//! no intermediate sum can overflow either.
//!
//! Not covered: with channels missing the estimate follows the open-loop
//! model, which need not be bounded (an integrator is not); the runtime then
//! saturates and counts, it never wraps.
//!
//! # Accuracy
//!
//! [`deviation`] predicts how far each form run in each number format can
//! drift from the exact observer; [`accuracy`] collects the form × format
//! table on the design ([`FixedDesign::accuracy`]), checks it against
//! `deviation_limit`, and warns about lost table entries and transient
//! growth.
//!
//! # Quantised stability
//!
//! The emitted integers are dequantised exactly, the error matrix is rebuilt
//! from them (A − L C, A − A K C, or F) and its eigenvalues recomputed. The
//! design is refused when the quantised spectral radius is ≥ 1 or exceeds
//! the exact one by more than `stability_margin`.

pub mod accuracy;
pub mod bounds;
pub mod deviation;
pub mod gate;
pub(crate) mod handoff;
mod quantise;
pub mod scales;
mod tables;

pub use accuracy::Accuracy;
pub use bounds::{BoundError, PeakBound};
pub use deviation::{Deviation, FormKind, NumberKind};
pub use handoff::QuantiseTables;
pub use quantise::{
    ConvertError, QuantisedTable, dequantise_real, label, quantise_real, row_exponent,
};
pub use scales::SignalBounds;
pub use tables::{QForm, QScales, QTables, QTablesError};

use crate::design::ObserverForm;
use crate::model::{FixedFormat, FixedPointSpec, ScaleSource};
use crate::numerics;
use nalgebra::{Complex, DMatrix};

/// The fixed-point part of a design.
#[derive(Debug, Clone, PartialEq)]
pub struct FixedDesign {
    /// Q15 or Q31.
    pub format: FixedFormat,
    /// Scale exponent of each state (|x̂_i| < 2^s_i).
    pub state_exponents: Vec<i8>,
    /// Scale exponent of each input.
    pub input_exponents: Vec<i8>,
    /// Scale exponent of each output (and its innovation).
    pub output_exponents: Vec<i8>,
    /// Proven peak of each estimated state (the largest of the predicted
    /// and, for the current form, the filtered estimate).
    pub state_bounds: Vec<f64>,
    /// Proven peak of each innovation (and stand-in reading).
    pub innovation_bounds: Vec<f64>,
    /// How the state bound was proven: the impulse-response sum of the
    /// estimate (readings proof) or of the estimation error (plant proof).
    pub proof: PeakBound,
    /// The signal bounds behind the scales and which proof gave them.
    pub signals: SignalBounds,
    /// The form's tables in Q form: a, b, l (predictor) or a, b, k
    /// (current), then c, d; empty for a held observer.
    pub form_tables: Vec<QuantisedTable>,
    /// The fused tables in Q form: f, g, h, then c, d.
    pub fused_tables: Vec<QuantisedTable>,
    /// The tables in `format`, typed (the same integers as `form_tables`
    /// and `fused_tables`), with the gate once the design has attached it
    /// (`FixedDesign::attach_gate`, called by the design).
    pub tables: QTables,
    /// The same tables in the other Q format at the same scales, or why
    /// they cannot be built (not checked for stability: see `accuracy`).
    pub other_format: Result<QTables, String>,
    /// Eigenvalues of the quantised error matrix of the form's tables (of
    /// the fused tables for a held observer).
    pub error_poles: Vec<Complex<f64>>,
    /// Their largest magnitude.
    pub spectral_radius: f64,
    /// Spectral radius of the quantised fused F.
    pub fused_spectral_radius: f64,
    /// Largest |exact − dequantised| entry over every table.
    pub max_table_error: f64,
    /// Predicted deviation of every form and format from the exact
    /// observer, and the transient growth of the error dynamics.
    pub accuracy: Accuracy,
    /// Non-fatal findings, each tied to a model key.
    pub warnings: Vec<(String, String)>,
}

impl FixedDesign {
    /// Quantises the design's gate `g` into the tables of both formats at
    /// the output scales; fails only for the design's own format (the
    /// other format then records why it has no tables).
    pub(crate) fn attach_gate(&mut self, g: &gate::FloatGate) -> Result<(), ConvertError> {
        let format = self.tables.format;
        self.tables.gate = Some(gate::quantise_in(format, g, &self.tables.scales.output)?);
        if let Ok(other) = &mut self.other_format {
            match gate::quantise_in(other.format, g, &other.scales.output) {
                Ok(q) => other.gate = Some(q),
                Err(e) => {
                    self.other_format = Err(format!(
                        "the innovation gate cannot be stored in {}: {e}",
                        format_name(other.format)
                    ));
                }
            }
        }
        Ok(())
    }

    /// The tables in `format`: the design's, or the other format's at the
    /// same scales; `Err` says why the other format has none.
    pub fn tables_in(&self, format: FixedFormat) -> Result<&QTables, String> {
        if format == self.tables.format {
            Ok(&self.tables)
        } else {
            self.other_format.as_ref().map_err(Clone::clone)
        }
    }
}

/// Why fixed-point tables were refused.
#[derive(Debug, Clone, PartialEq)]
pub struct FixedError {
    /// The model key concerned.
    pub key: &'static str,
    /// What is wrong and what to do.
    pub message: String,
}

/// What the fixed-point design needs from the float design.
pub struct FloatTables<'a> {
    /// The observer's form and its gain.
    pub form: ObserverForm<'a>,
    /// Sampled plant.
    pub ad: &'a DMatrix<f64>,
    /// Sampled input matrix.
    pub bd: &'a DMatrix<f64>,
    /// Output matrix.
    pub cd: &'a DMatrix<f64>,
    /// Feed-through.
    pub dd: &'a DMatrix<f64>,
    /// Fused F.
    pub f: &'a DMatrix<f64>,
    /// Fused G.
    pub g: &'a DMatrix<f64>,
    /// Fused H.
    pub h: &'a DMatrix<f64>,
    /// Spectral radius of the exact F.
    pub spectral_radius: f64,
    /// Name of every state, for messages.
    pub state_names: &'a [String],
}

impl<'a> FloatTables<'a> {
    /// The tables of `design` (`state_names` its states' names).
    pub fn of(design: &'a crate::Design, state_names: &'a [String]) -> Self {
        Self {
            form: design.observer().form,
            ad: &design.ad,
            bd: &design.bd,
            cd: &design.cd,
            dd: &design.dd,
            f: &design.f,
            g: &design.g,
            h: &design.h,
            spectral_radius: design.spectral_radius,
            state_names,
        }
    }
}

/// The smallest s with `value` < 2^s (`value` ≥ 0, finite), clamped to i8.
fn exponent_above(value: f64) -> i8 {
    if value <= 0.0 {
        return -31;
    }
    let s = value.log2().floor() as i32 + 1;
    // log2 may round at exact powers of two; step to the right side.
    let s = if 2f64.powi(s - 1) > value { s - 1 } else { s };
    i8::try_from(s.clamp(-31, 100)).unwrap_or(100)
}

/// Eigenvalues of the stored error matrices: the form's (the fused one's
/// for a held observer) and the fused one's.
fn quantised_poles(t: &FloatTables<'_>, q: &QTables) -> Result<[Vec<Complex<f64>>; 2], FixedError> {
    let eig_fail = |e: numerics::NumericsError| FixedError {
        key: "fixed_point",
        message: format!("eigenvalues of the quantised error matrix: {e}"),
    };
    let fq = q
        .stored(FormKind::Fused)
        .map_or_else(|| t.f.clone(), |s| s.error_matrix());
    let fused_poles = numerics::eigenvalues("quantised F", &fq).map_err(eig_fail)?;
    let error_poles = match q.stored(q.kind()).filter(|_| q.kind() != FormKind::Fused) {
        Some(s) => {
            numerics::eigenvalues("quantised error matrix", &s.error_matrix()).map_err(eig_fail)?
        }
        None => fused_poles.clone(),
    };
    Ok([error_poles, fused_poles])
}

fn radius(poles: &[Complex<f64>]) -> f64 {
    poles.iter().map(|z| z.norm()).fold(0.0, f64::max)
}

/// Designs the fixed-point tables of `t` for `spec`.
pub fn design(t: &FloatTables<'_>, spec: &FixedPointSpec) -> Result<FixedDesign, FixedError> {
    let margin = 2f64.powi(i32::try_from(spec.margin_bits).unwrap_or(0));
    let mut warnings = Vec::new();
    let signals = scales::signal_bounds(t, spec)?;
    let declared = match signals.source {
        ScaleSource::Readings => spec.state_range.as_ref(),
        ScaleSource::Plant => None,
    };
    let state_exponents: Vec<i8> = signals
        .state
        .iter()
        .enumerate()
        .map(|(i, &b)| match declared.and_then(|r| r.get(i)) {
            Some(&range) => {
                if range < b {
                    warnings.push((
                        format!("fixed_point.state_range[{i}]"),
                        format!("{range} is below the proven peak {b:.6e} of this state: its estimate can saturate"),
                    ));
                }
                exponent_above(range * margin)
            }
            None => exponent_above(b * margin),
        })
        .collect();
    let input_exponents: Vec<i8> = spec
        .input_range
        .iter()
        .map(|&u| exponent_above(u))
        .collect();
    let output_exponents: Vec<i8> = spec
        .output_range
        .iter()
        .zip(&signals.innovation)
        .map(|(&y, &r)| exponent_above(y).max(exponent_above(r * margin)))
        .collect();
    let exps = (
        &state_exponents[..],
        &input_exponents[..],
        &output_exponents[..],
    );
    let scales = QScales {
        state: state_exponents.clone(),
        input: input_exponents.clone(),
        output: output_exponents.clone(),
    };
    let quantise = |format| {
        QTables::build(t, None, format, scales.clone()).map_err(|e| FixedError {
            key: "fixed_point",
            message: e.to_string(),
        })
    };
    let tables = quantise(spec.format)?;
    let [error_poles, fused_poles] = quantised_poles(t, &tables)?;
    let spectral_radius = radius(&error_poles);
    let fused_spectral_radius = radius(&fused_poles);
    for (what, rho) in [
        ("the form's", spectral_radius),
        ("the fused", fused_spectral_radius),
    ] {
        let lost = rho - t.spectral_radius;
        if rho >= 1.0 || lost > spec.stability_margin {
            let hint = if spec.format == FixedFormat::Q15 {
                "; try format = \"q31\""
            } else {
                ""
            };
            return Err(FixedError {
                key: "fixed_point.format",
                message: format!(
                    "{} rounding makes {what} error dynamics {}: quantised spectral radius {rho:.9} against {:.9} exact (growth {lost:.3e}, allowed stability_margin = {}){hint}",
                    format_name(spec.format),
                    if rho >= 1.0 { "unstable" } else { "too slow" },
                    t.spectral_radius,
                    spec.stability_margin
                ),
            });
        }
    }
    let other = match spec.format {
        FixedFormat::Q31 => FixedFormat::Q15,
        FixedFormat::Q15 => FixedFormat::Q31,
    };
    let other_format = quantise(other);
    let (q31, q15) = match spec.format {
        FixedFormat::Q31 => (Ok(&tables), other_format.as_ref()),
        FixedFormat::Q15 => (other_format.as_ref(), Ok(&tables)),
    };
    let accuracy = accuracy::analyse(t, spec, &signals, exps, (q31, q15))?;
    warnings.extend(accuracy::judge(t, spec, &accuracy)?);
    warnings.extend(accuracy::table_losses(
        t,
        spec,
        &accuracy,
        tables.all().into_iter(),
    ));
    let max_table_error = tables
        .all()
        .iter()
        .map(|q| q.max_abs_error)
        .fold(0.0, f64::max);
    let (form_tables, fused_tables) = tables.lists();
    Ok(FixedDesign {
        format: spec.format,
        state_exponents,
        input_exponents,
        output_exponents,
        state_bounds: signals.state.clone(),
        innovation_bounds: signals.innovation.clone(),
        proof: signals.proof.clone(),
        signals,
        form_tables,
        fused_tables,
        tables,
        other_format: other_format.map_err(|e| e.message),
        error_poles,
        spectral_radius,
        fused_spectral_radius,
        max_table_error,
        accuracy,
        warnings,
    })
}

/// "Q15" or "Q31".
pub fn format_name(format: FixedFormat) -> &'static str {
    match format {
        FixedFormat::Q15 => "Q15",
        FixedFormat::Q31 => "Q31",
    }
}
