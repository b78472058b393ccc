//! A format's settling band: the design's deviation bound of the format
//! (the float analysis at the run's own signal peaks, or the Q format's
//! proven deviation) plus k·σ with noise, or the f64 run's residual
//! without; and the words the report uses for where it comes from.

use crate::config::RunConfig;
use crate::metrics::Peaks;
use crate::predicted;
use crate::reference::Reference;
use crate::runtime::{Format, FormatRun};
use lookout_design::Design;
use lookout_design::fixed_point::accuracy::float_deviation;
use lookout_design::fixed_point::{Deviation, FloatTables};

/// Without `[fixed_point]` (float formats only): the design's float
/// analysis ([`lookout_design::fixed_point::accuracy::float_deviation`])
/// with this run's peaks standing in for the signal scales: the larger of
/// the format's and the f64 run's estimate per state (the exact estimate
/// differs from the f64 one by f64 rounding only), the inputs and readings.
fn run_peak_deviation(
    design: &Design,
    signals: &Peaks,
    run: &FormatRun,
    reference_run: &FormatRun,
) -> Option<Deviation> {
    let names = design.state_names();
    let tables = FloatTables::of(design, &names);
    let x: Vec<f64> = run
        .estimate_peak
        .iter()
        .zip(&reference_run.estimate_peak)
        .map(|(a, b)| a.max(*b))
        .collect();
    float_deviation(
        &tables,
        predicted::simulated_form(design),
        predicted::kind(run.format),
        (&x, &signals.input, &signals.reading),
    )
}

/// Bound on |x̂ − x̂_exact| of `run` per state, x̂_exact the exact
/// observer's estimate: the design's proven deviation for this form and
/// format (`format_accuracy`, see [`predicted::design_deviation`]) when the
/// model has `[fixed_point]`, else the float analysis at this run's peaks.
/// Infinite where no bound exists (the analysis refuses the combination:
/// its stored error dynamics do not decay or its tables do not fit).
pub fn deviation(
    design: &Design,
    signals: &Peaks,
    run: &FormatRun,
    reference_run: &FormatRun,
) -> Vec<f64> {
    // A float step never saturates, so the bound at this run's own signal
    // peaks is proven for the run and far tighter than the design's at the
    // full scales (which would hide a real bias in the band); a Q step is
    // bounded at its scales, which it cannot leave without saturating.
    let found = match run.format {
        Format::F64 | Format::F32 => run_peak_deviation(design, signals, run, reference_run),
        _ => predicted::design_deviation(design, run.format).cloned(),
    };
    match found {
        Some(d) if d.refused.is_none() => d.total,
        _ => vec![f64::INFINITY; design.n()],
    }
}

/// Where [`deviation`] comes from, for the report.
pub fn deviation_source(design: &Design) -> String {
    let form = predicted::simulated_form(design).name();
    let float = format!(
        "for f64 and f32 the design's float deviation bound of the {form} form (as in format_accuracy: Higham's γ per dot product through the ℓ1 impulse response of the stored error dynamics) at this run's signal peaks, proven for the run while every reading is used"
    );
    if design.fixed_point.is_some() {
        format!(
            "{float}; for Q formats the design's proven deviation of the {form} form at the scales (format_accuracy in `lookout design --json`; proven while every reading is used, no signal leaves its scale and nothing saturates)"
        )
    } else {
        float
    }
}

/// Where the bands of a run come from, for the report.
pub fn tolerance_source(design: &Design, opts: &RunConfig, reference: &Reference) -> String {
    if opts.tolerance.is_some() {
        "--tolerance".to_string()
    } else if reference.noisy {
        format!(
            "k·σ per state with k = {:.2} (a consistent error leaves it anywhere in the run with probability {}), σ from {}; plus 1 × {}",
            reference.k,
            super::reference::BAND_MISS,
            reference.source,
            deviation_source(design)
        )
    } else {
        format!(
            "the f64 run's residual over the last quarter plus 1 × the f64 run's and 1 × the format's deviation bound: {}",
            deviation_source(design)
        )
    }
}

/// The band of a format from its deviation bound `dev` and the f64 run's
/// `f64_dev`: with noise k·σ plus `dev` (σ is the exact observer's error);
/// without, the f64 run's residual (its largest error over the last
/// quarter) plus `f64_dev` (the exact observer's error is within that) plus
/// `dev`.
pub fn band(reference: &Reference, dev: &[f64], f64_dev: &[f64], residual: &[f64]) -> Vec<f64> {
    dev.iter()
        .zip(f64_dev)
        .zip(&reference.sigma)
        .zip(residual)
        .map(|(((&d, &d64), &s), &res)| {
            let b = if reference.noisy {
                reference.k * s + d
            } else {
                res + d64 + d
            };
            b.max(f64::MIN_POSITIVE)
        })
        .collect()
}
