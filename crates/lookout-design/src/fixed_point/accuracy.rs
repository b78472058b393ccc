//! The accuracy of every form and number format, and the advice built on
//! it: the deviation table ([`Accuracy`]), the check against
//! `deviation_limit` (or 1 % of each state's range), lost table entries and
//! transient growth.

use super::deviation::{self, Deviation, FormKind, NumberKind, Signals, Stored};
use super::scales::SignalBounds;
use super::{FixedError, FloatTables, QTables, QuantisedTable, format_name};
use crate::model::{FixedFormat, FixedPointSpec, ScaleSource};
use nalgebra::{DMatrix, DVector};

/// Share of a state's range a predicted deviation may reach, without a
/// declared `deviation_limit`, before a warning.
pub const DEFAULT_SHARE: f64 = 0.01;
/// Share of its own value a table entry may lose to rounding before a
/// warning.
pub const ENTRY_LOSS_SHARE: f64 = 0.01;
/// Peak ‖Fᵏ‖∞ (states measured against their scales) from which the error
/// dynamics are called strongly non-normal.
pub const TRANSIENT_WARNING: f64 = 100.0;

/// Predicted deviations of every form and format, and what they are judged
/// against.
#[derive(Debug, Clone, PartialEq)]
pub struct Accuracy {
    /// One entry per form (the model's form, then fused) and format (f64,
    /// f32, Q31, Q15).
    pub deviations: Vec<Deviation>,
    /// Each state's range: `state_range`, or the proven peak.
    pub range: Vec<f64>,
    /// Allowed deviation per state: `deviation_limit`, or 1 % of `range`.
    pub limit: Vec<f64>,
    /// Whether `limit` was declared.
    pub limit_declared: bool,
    /// Largest ‖Fᵏ‖∞ of the exact error dynamics with each state measured
    /// against its scale (among every k < 512 and multiples of the
    /// impulse-response strides).
    pub transient_peak: f64,
    /// The step k of that peak.
    pub transient_step: f64,
}

impl Accuracy {
    /// The entry for `form` in `format`.
    pub fn get(&self, form: FormKind, format: NumberKind) -> Option<&Deviation> {
        self.deviations
            .iter()
            .find(|d| d.form == form && d.format == format)
    }

    /// Whether `d` meets the limit on every state.
    pub fn meets(&self, d: &Deviation) -> bool {
        d.refused.is_none() && d.total.iter().zip(&self.limit).all(|(v, l)| v <= l)
    }

    /// The combinations that meet the limit, as "predictor q31, fused f64".
    pub fn meeting(&self) -> Vec<String> {
        self.deviations
            .iter()
            .filter(|d| self.meets(d))
            .map(|d| format!("{} {}", d.form.name(), d.format.name()))
            .collect()
    }
}

/// The form the model asks for (fused for a held observer).
pub fn model_form(t: &FloatTables<'_>) -> FormKind {
    t.form.kind()
}

/// The analysis' name for a Q format.
pub fn number_kind(format: FixedFormat) -> NumberKind {
    match format {
        FixedFormat::Q31 => NumberKind::Q31,
        FixedFormat::Q15 => NumberKind::Q15,
    }
}

fn exact_tables(t: &FloatTables<'_>, form: FormKind) -> Option<Stored> {
    let m = |x: &DMatrix<f64>| x.clone();
    Some(match form {
        FormKind::Predictor => {
            Stored::Predictor([m(t.ad), m(t.bd), m(t.form.gain()?), m(t.cd), m(t.dd)])
        }
        FormKind::Current => {
            Stored::Current([m(t.ad), m(t.bd), m(t.form.gain()?), m(t.cd), m(t.dd)])
        }
        FormKind::Fused => Stored::Fused([m(t.f), m(t.g), m(t.h)]),
    })
}

/// The deviation of `form`'s exact tables run in the float `format` when
/// every state, input and reading stays below the magnitudes `x`, `u`, `y`:
/// the analysis behind [`Accuracy`] at other signal bounds than the scales,
/// for a model without `[fixed_point]`. `None` for a Q format (its tables
/// need scales) or a form `t` has no tables for.
pub fn float_deviation(
    t: &FloatTables<'_>,
    form: FormKind,
    format: NumberKind,
    (x, u, y): (&[f64], &[f64], &[f64]),
) -> Option<Deviation> {
    if !matches!(format, NumberKind::F64 | NumberKind::F32) {
        return None;
    }
    let stored = exact_tables(t, form)?;
    let s = Signals {
        x: x.to_vec(),
        u: u.to_vec(),
        y: y.to_vec(),
    };
    Some(deviation::predict(
        (t.f, t.g, t.h),
        &stored.rounded(format),
        format,
        &s,
    ))
}

/// Peak ‖Fᵏ‖∞ of S⁻¹ F S, S = diag(2^sx), and its step.
fn transient(f: &DMatrix<f64>, sx: &[i8]) -> (f64, f64) {
    let n = f.nrows();
    let s = |i: usize| 2f64.powi(sx.get(i).map_or(0, |&e| i32::from(e)));
    let scaled = DMatrix::from_fn(n, n, |i, j| f[(i, j)] * s(j) / s(i));
    match super::bounds::peak(
        &scaled,
        &DMatrix::zeros(n, 1),
        &DVector::zeros(1),
        &DVector::zeros(n),
    ) {
        Ok(p) => (p.transient_peak, p.transient_step),
        Err(_) => (f64::INFINITY, f64::NAN),
    }
}

/// Every form and format's predicted deviation.
pub(super) fn analyse(
    t: &FloatTables<'_>,
    spec: &FixedPointSpec,
    signals: &SignalBounds,
    (sx, su, sy): (&[i8], &[i8], &[i8]),
    (q31, q15): (Result<&QTables, &FixedError>, Result<&QTables, &FixedError>),
) -> Result<Accuracy, FixedError> {
    let s = Signals::of_exponents(sx, su, sy);
    let exact = (t.f, t.g, t.h);
    let mut deviations = Vec::new();
    let mut forms = vec![model_form(t)];
    if forms[0] != FormKind::Fused {
        forms.push(FormKind::Fused);
    }
    for form in forms {
        let Some(stored) = exact_tables(t, form) else {
            continue;
        };
        for format in [NumberKind::F64, NumberKind::F32] {
            deviations.push(deviation::predict(
                exact,
                &stored.rounded(format),
                format,
                &s,
            ));
        }
        for (format, tables) in [(NumberKind::Q31, q31), (NumberKind::Q15, q15)] {
            let picked = tables.map(|q| q.stored(form));
            deviations.push(match picked {
                Ok(Some(stored)) => deviation::predict(exact, &stored, format, &s),
                Ok(None) => continue,
                Err(e) => Deviation {
                    form,
                    format,
                    refused: Some(e.message.clone()),
                    spectral_radius: f64::NAN,
                    from_tables: Vec::new(),
                    bias: Vec::new(),
                    from_rounding: Vec::new(),
                    total: Vec::new(),
                },
            });
        }
    }
    // Disturbance states have no declared range or limit: their proven
    // peak and 1 % of it stand in.
    let range: Vec<f64> = signals
        .state
        .iter()
        .enumerate()
        .map(|(i, &peak)| {
            spec.state_range
                .as_ref()
                .and_then(|r| r.get(i).copied())
                .unwrap_or(peak)
        })
        .collect();
    let limit = range
        .iter()
        .enumerate()
        .map(|(i, r)| {
            spec.deviation_limit
                .as_ref()
                .and_then(|l| l.get(i).copied())
                .unwrap_or(r * DEFAULT_SHARE)
        })
        .collect();
    let (transient_peak, transient_step) = transient(t.f, sx);
    Ok(Accuracy {
        deviations,
        range,
        limit,
        limit_declared: spec.deviation_limit.is_some(),
        transient_peak,
        transient_step,
    })
}

fn state_name(t: &FloatTables<'_>, i: usize) -> String {
    t.state_names
        .get(i)
        .cloned()
        .unwrap_or_else(|| format!("x{i}"))
}

/// The first state whose deviation exceeds its limit, with both.
fn first_excess(acc: &Accuracy, d: &Deviation) -> Option<(usize, f64, f64)> {
    d.total
        .iter()
        .zip(&acc.limit)
        .enumerate()
        .find(|(_, (v, l))| v > l)
        .map(|(i, (&v, &l))| (i, v, l))
}

/// What meets the limit, and what would help the rest.
fn alternatives(spec: &FixedPointSpec, acc: &Accuracy) -> String {
    let ok = acc.meeting();
    let mut out = if ok.is_empty() {
        "no form or format meets it".to_string()
    } else {
        format!("combinations that meet it: {}", ok.join(", "))
    };
    if acc.transient_peak > TRANSIENT_WARNING {
        out += &format!(
            "; the error transient grows {:.3e}-fold, which every bound carries: slower error poles would shrink it",
            acc.transient_peak
        );
    }
    if spec.scales_from == ScaleSource::Readings {
        out += "; the scales treat every reading as arbitrary: declaring state_range (with initial_error and output_noise) lets them rest on the plant";
    }
    out
}

/// Refuses the design when the requested form and format cannot meet
/// `deviation_limit`; otherwise the warnings about deviations and transient
/// growth.
pub(super) fn judge(
    t: &FloatTables<'_>,
    spec: &FixedPointSpec,
    acc: &Accuracy,
) -> Result<Vec<(String, String)>, FixedError> {
    let format = number_kind(spec.format);
    let mut warnings = Vec::new();
    let mut forms = vec![model_form(t)];
    if forms[0] != FormKind::Fused {
        forms.push(FormKind::Fused);
    }
    for (index, form) in forms.into_iter().enumerate() {
        let Some(d) = acc.get(form, format) else {
            continue;
        };
        let what = format!("the {} form in {}", form.name(), format_name(spec.format));
        let problem = match (&d.refused, first_excess(acc, d)) {
            (Some(why), _) => Some(format!("{what} cannot run: {why}")),
            (None, Some((i, v, l))) => Some(format!(
                "{what} is predicted to deviate from the exact observer by up to {v:.3e} in {} ({:.3} % of its range; allowed {l:.3e}{})",
                state_name(t, i),
                100.0 * v / acc.range.get(i).copied().unwrap_or(f64::NAN),
                if acc.limit_declared {
                    ""
                } else {
                    ", 1 % of the range by default"
                }
            )),
            (None, None) => None,
        };
        let Some(problem) = problem else { continue };
        let message = format!("{problem}; {}", alternatives(spec, acc));
        if acc.limit_declared && index == 0 {
            return Err(FixedError {
                key: "fixed_point.deviation_limit",
                message,
            });
        }
        warnings.push(("fixed_point.format".to_string(), message));
    }
    if acc.transient_peak > TRANSIENT_WARNING {
        warnings.push((
            "observer".to_string(),
            format!(
                "the error dynamics are strongly non-normal: an initial error grows {:.3e}-fold (peak of ‖Fᵏ‖∞, states measured against their scales, at step {}) before it decays",
                acc.transient_peak, acc.transient_step
            ),
        ));
    }
    Ok(warnings)
}

/// A warning for each stored table with an entry that lost more than
/// [`ENTRY_LOSS_SHARE`] of its value, with the steady-state bias the
/// rounded tables can cause.
pub(super) fn table_losses<'q>(
    t: &FloatTables<'_>,
    spec: &FixedPointSpec,
    acc: &Accuracy,
    tables: impl Iterator<Item = &'q QuantisedTable>,
) -> Vec<(String, String)> {
    let format = number_kind(spec.format);
    let mut seen: Vec<&str> = Vec::new();
    let mut out = Vec::new();
    for q in tables {
        let Some((i, j, loss)) = q.worst_loss else {
            continue;
        };
        if loss <= ENTRY_LOSS_SHARE || seen.contains(&q.name) {
            continue;
        }
        seen.push(q.name);
        let form = if matches!(q.name, "f" | "g" | "h") {
            FormKind::Fused
        } else {
            model_form(t)
        };
        let bias = acc
            .get(form, format)
            .map(|d| {
                d.bias
                    .iter()
                    .enumerate()
                    .map(|(k, b)| format!("{} {b:.3e}", state_name(t, k)))
                    .collect::<Vec<_>>()
                    .join(", ")
            })
            .unwrap_or_default();
        out.push((
            "fixed_point.format".to_string(),
            format!(
                "table {} entry ({i}, {j}) loses {:.1} % of its value to {} rounding; the rounded {} tables can bias the estimate in steady state by up to: {bias}",
                q.name,
                100.0 * loss,
                format_name(spec.format),
                form.name()
            ),
        ));
    }
    out
}
