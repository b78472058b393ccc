//! The design's predicted deviation from the f64 observer beside the
//! measured one: a measured deviation above the prediction, on a run the
//! prediction covers, is a bug in the analysis (design issue 12).

use super::RunResult;
use super::metrics::Metrics;
use super::metrics::Peaks;
use super::runtime::{Format, FormatRun};
use crate::text::Sci;
use lookout_design::Design;
use lookout_design::fixed_point::{Deviation, FormKind, NumberKind};

/// The prediction for one format's run.
#[derive(Debug, Clone)]
pub struct Check {
    /// Bound on |x̂ − x̂_f64| per state: this format's deviation from the
    /// exact observer plus the f64 observer's.
    pub bound: Vec<f64>,
    /// Why the bound does not cover this run (signals outside their scales,
    /// dropped or gated readings), if so.
    pub not_covered: Option<String>,
    /// Measured above the bound on a covered run.
    pub exceeded: bool,
}

/// The analysis' name for a format.
pub fn kind(format: Format) -> NumberKind {
    match format {
        Format::F64 => NumberKind::F64,
        Format::F32 => NumberKind::F32,
        Format::Q31 => NumberKind::Q31,
        Format::Q15 => NumberKind::Q15,
    }
}

/// Whether a peak reaches its scale 2^e.
fn outside(peaks: &[f64], exps: &[i8]) -> bool {
    peaks
        .iter()
        .zip(exps)
        .any(|(v, &e)| *v >= 2f64.powi(i32::from(e)))
}

/// The form simulate runs in every format: the model's, fused for a held
/// observer (as `runtime` builds its tables).
pub fn simulated_form(design: &Design) -> FormKind {
    design.observer().form.kind()
}

/// The design's proven deviation of `format` from the exact observer, for
/// the form simulate runs (`format_accuracy` in `lookout design --json`);
/// `None` without `[fixed_point]`.
pub fn design_deviation(design: &Design, format: Format) -> Option<&Deviation> {
    let fx = design.fixed_point.as_ref()?;
    fx.accuracy.get(simulated_form(design), kind(format))
}

/// The check of `run` (`None` for f64 or without `[fixed_point]`).
pub fn check(design: &Design, r: &RunResult, run: &FormatRun, m: &Metrics) -> Option<Check> {
    let bound = bound(design, run.format)?;
    let f64_run = r.formats.first().map(|(f, _)| f);
    let not_covered = not_covered(design, r.traj.dropped, &r.peaks, run, f64_run);
    let exceeded = not_covered.is_none()
        && m.max_deviation_from_f64
            .iter()
            .zip(&bound)
            .any(|(d, b)| d > b);
    Some(Check {
        bound,
        not_covered,
        exceeded,
    })
}

/// The design's bound on |x̂ − x̂_f64| per state for `format`: its deviation
/// from the exact observer plus the f64 observer's (`None` for f64, without
/// `[fixed_point]`, or where the analysis refused).
pub fn bound(design: &Design, format: Format) -> Option<Vec<f64>> {
    if format == Format::F64 {
        return None;
    }
    let this = design_deviation(design, format)?;
    let reference = design_deviation(design, Format::F64)?;
    if this.refused.is_some() || reference.refused.is_some() {
        return None;
    }
    Some(
        this.total
            .iter()
            .zip(&reference.total)
            .map(|(a, b)| a + b)
            .collect(),
    )
}

/// Why the bound does not cover `run` (of a run with `dropped` readings
/// and input and reading peaks `signals`), if so.
pub fn not_covered(
    design: &Design,
    dropped: usize,
    signals: &Peaks,
    run: &FormatRun,
    f64_run: Option<&FormatRun>,
) -> Option<String> {
    let fx = design.fixed_point.as_ref()?;
    if run.saturations > 0 {
        Some("the run saturated".to_string())
    } else if dropped > 0 || run.gated > 0 {
        Some("readings were dropped or gated (the estimate then runs open loop)".to_string())
    } else if outside(&signals.input, &fx.input_exponents)
        || outside(&signals.reading, &fx.output_exponents)
        || f64_run.is_some_and(|f| outside(&f.estimate_peak, &fx.state_exponents))
    {
        Some("a signal left its scale".to_string())
    } else {
        None
    }
}

impl Check {
    /// One report line.
    pub fn line(&self) -> String {
        let b: Vec<String> = self.bound.iter().map(|&v| Sci(v, 3).to_string()).collect();
        let verdict = match (&self.not_covered, self.exceeded) {
            (Some(why), _) => format!("not covered: {why}"),
            (None, true) => "MEASURED ABOVE PREDICTION: a bug in the design's analysis".to_string(),
            (None, false) => "measured within prediction".to_string(),
        };
        format!(
            "predicted max |x̂−x̂64| (design) [{}]: {verdict}",
            b.join(", ")
        )
    }
}
