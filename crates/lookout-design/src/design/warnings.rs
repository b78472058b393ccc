//! Findings a practitioner needs that do not stop the design.

use super::Design;
use crate::model::GainSource;
use crate::numerics::NumericsWarning;
use std::fmt;

/// Spectral radius from which convergence is called slow.
pub const SLOW_SPECTRAL_RADIUS: f64 = 0.995;

/// A non-fatal finding, tied to the model key it concerns.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Warning {
    /// The model key concerned (e.g. `observer.poles[2]`), or the design stage.
    pub key: String,
    /// What was found, one line.
    pub message: String,
}

impl Warning {
    pub(crate) fn new(key: impl Into<String>, message: impl Into<String>) -> Self {
        Self {
            key: key.into(),
            message: message.into(),
        }
    }
}

impl fmt::Display for Warning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.key, self.message)
    }
}

/// Every warning of a design, in a fixed order: the model's, the numerical
/// stages', then the checks below.
pub(super) fn collect(design: &Design, numerics: Vec<NumericsWarning>) -> Vec<Warning> {
    let t = design.model.sample_period;
    let mut out: Vec<Warning> = design
        .model
        .warnings
        .iter()
        .map(|w| Warning::new(w.path.clone(), w.message.clone()))
        .collect();
    out.extend(
        design
            .observability
            .warnings
            .iter()
            .map(|w| Warning::new("observability", w.to_string())),
    );
    out.extend(
        numerics
            .iter()
            .map(|w| Warning::new("gain design", w.to_string())),
    );

    if let GainSource::Poles(poles) = &design.model.observer.gain_source {
        for (i, s) in poles.iter().enumerate() {
            let key = format!("observer.poles[{i}]");
            if s.im.abs() * t >= std::f64::consts::PI {
                out.push(Warning::new(
                    key,
                    format!(
                        "pole {} aliases: its frequency {:.4} rad/s is at or above the Nyquist rate π/T = {:.4} rad/s",
                        complex(s.re, s.im),
                        s.im.abs(),
                        std::f64::consts::PI / t
                    ),
                ));
            } else if s.norm() * t > 1.0 {
                out.push(Warning::new(
                    key,
                    format!(
                        "pole {} is faster than the sample rate can follow (|s|·T = {:.3} > 1): the sampled observer acts nearly deadbeat and passes measurement noise straight through",
                        complex(s.re, s.im),
                        s.norm() * t
                    ),
                ));
            }
        }
    }
    if design.spectral_radius >= SLOW_SPECTRAL_RADIUS {
        let steps = 1.0 / (1.0 - design.spectral_radius);
        out.push(Warning::new(
            "observer",
            format!(
                "error spectral radius {:.6} is close to 1: errors shrink by e only every {:.0} samples ({:.3} s)",
                design.spectral_radius,
                steps,
                steps * t
            ),
        ));
    }
    for (j, gain) in design.output_noise_gain.iter().enumerate() {
        if gain.is_nan() {
            out.push(Warning::new(
                format!("observer (output {j})"),
                format!(
                    "the noise gain of output {j} is not computable: the sum of the error dynamics' powers overflows f64 (the error dynamics are stable, spectral radius {:.9}, but their transient growth is too large to sum)",
                    design.spectral_radius
                ),
            ));
        } else if *gain > 1.0 {
            out.push(Warning::new(
                format!("observer (output {j})"),
                format!(
                    "the gain is large enough that measurement noise dominates: the estimate of output {j} carries {gain:.2}× the noise of the raw reading"
                ),
            ));
        }
    }
    if let Some(mismatch) = &design.hold_mismatch {
        let (ex, eu) = (mismatch.state.norm(), mismatch.input.norm());
        if ex > 1e-12 || eu > 1e-12 {
            out.push(Warning::new(
                "observer.gain_method",
                format!(
                    "the held observer is not an exact observer of the sampled plant: e⁺ = F e + Ex x + Eu u with ‖Ex‖ = {ex:.3e}, ‖Eu‖ = {eu:.3e}, so the estimate is biased while the state moves"
                ),
            ));
        }
    }
    out
}

fn complex(re: f64, im: f64) -> String {
    if im == 0.0 {
        format!("{re}")
    } else {
        format!("{re}{im:+}i")
    }
}
