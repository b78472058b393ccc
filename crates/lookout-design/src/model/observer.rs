//! The `[observer]` section: observer form, gain source and innovation gate.

use nalgebra::{Complex, DMatrix};

use super::error::{ModelError, ModelErrorKind, ModelWarning};
use super::kalman::{self, KalmanSpec};
use super::plant::{Domain, Plant};
use super::poles::{Plane, read_poles};
use super::reader::{Dim, Table};

/// Keys allowed in `[observer]`.
pub(crate) const KEYS: &[&str] = &[
    "form",
    "poles",
    "discrete_poles",
    "gain",
    "gain_method",
    "kalman",
    "gate_probability",
    "gate_threshold",
];

/// The gain sources, each named by one key; exactly one must be present.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum SourceKey {
    Poles,
    DiscretePoles,
    Gain,
    Kalman,
}

const GAIN_SOURCES: &[(&str, SourceKey)] = &[
    ("poles", SourceKey::Poles),
    ("discrete_poles", SourceKey::DiscretePoles),
    ("gain", SourceKey::Gain),
    ("kalman", SourceKey::Kalman),
];

/// When the measurement of step k enters the estimate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Form {
    /// `x̂[k+1] = A x̂[k] + B u[k] + L (y[k] − C x̂[k] − D u[k])`: the estimate
    /// for the next step, one sample of delay, nothing to compute between
    /// reading y and writing u.
    Predictor,
    /// `x̂[k|k] = x̂[k|k−1] + M (y[k] − C x̂[k|k−1] − D u[k])`, then
    /// `x̂[k+1|k] = A x̂[k|k] + B u[k]`: the estimate uses y\[k\] at once.
    Current,
}

/// How a continuous-time gain `L` designed elsewhere becomes a discrete gain.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum GainMethod {
    /// Zero-order-hold discretisation of the whole continuous observer
    /// `ẋ̂ = (A − L C) x̂ + B u + L y`, with y held over the sample.
    #[default]
    Hold,
    /// Place the discrete poles at `exp(s T)` for each eigenvalue s of `A − L C`.
    PoleMap,
}

/// Where the observer gain comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum GainSource {
    /// s-plane poles (rad/s), n of them, conjugate pairs listed explicitly
    /// (`re + |im| i` then `re − |im| i`); mapped by `z = exp(s T)`.
    Poles(Vec<Complex<f64>>),
    /// z-plane poles, n of them, conjugate pairs listed explicitly.
    DiscretePoles(Vec<Complex<f64>>),
    /// A continuous-time gain L (n × p) designed elsewhere.
    Gain {
        /// The gain, n × p.
        l: DMatrix<f64>,
        /// How it becomes a discrete gain.
        method: GainMethod,
    },
    /// A steady-state Kalman gain from noise levels.
    Kalman(KalmanSpec),
}

/// Innovation gating: a measurement whose normalised innovation
/// `νᵀ S⁻¹ ν` exceeds the threshold is not used for that step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Gate {
    /// The threshold is the chi-square quantile with p degrees of freedom at
    /// this probability (0 < probability < 1).
    Probability(f64),
    /// The threshold itself (> 0).
    Threshold(f64),
}

/// The observer request.
#[derive(Debug, Clone, PartialEq)]
pub struct ObserverSpec {
    /// Predictor or current form.
    pub form: Form,
    /// Where the gain comes from.
    pub gain_source: GainSource,
    /// Innovation gate, if any.
    pub gate: Option<Gate>,
}

/// Reads and checks `[observer]` for `plant` sampled every `sample_period`
/// seconds; `states` counts the estimated states (the plant's and any
/// disturbance states), which pole lists and a given gain must cover.
pub(crate) fn read(
    table: &Table<'_, '_>,
    plant: &Plant,
    states: Dim<'_>,
    sample_period: f64,
    warnings: &mut Vec<ModelWarning>,
) -> Result<ObserverSpec, ModelError> {
    let form = table
        .require("form", "\"predictor\" or \"current\"")?
        .choice(&[("predictor", Form::Predictor), ("current", Form::Current)])?;
    let gain_source = read_gain_source(table, plant, states, sample_period, warnings)?;
    let gate = read_gate(table)?;
    Ok(ObserverSpec {
        form,
        gain_source,
        gate,
    })
}

fn read_gain_source(
    table: &Table<'_, '_>,
    plant: &Plant,
    states: Dim<'_>,
    sample_period: f64,
    warnings: &mut Vec<ModelWarning>,
) -> Result<GainSource, ModelError> {
    let present: Vec<(&str, SourceKey)> = GAIN_SOURCES
        .iter()
        .copied()
        .filter(|(key, _)| table.has(key))
        .collect();
    let choices = "give exactly one of poles, discrete_poles, gain or [observer.kalman]";
    let source = match present.as_slice() {
        [] => {
            return Err(table.fail(
                ModelErrorKind::MissingKey,
                format!("no gain source; {choices}"),
            ));
        }
        [one] => *one,
        several => {
            let keys: Vec<&str> = several.iter().map(|(key, _)| *key).collect();
            return Err(table.fail(
                ModelErrorKind::Conflict,
                format!("several gain sources ({}); {choices}", keys.join(", ")),
            ));
        }
    };
    let (key, source) = source;
    if source != SourceKey::Gain && table.has("gain_method") {
        return Err(table.fail_at(
            "gain_method",
            ModelErrorKind::Conflict,
            "gain_method applies only to a given `gain`; remove it or give `gain` instead",
        ));
    }

    Ok(match source {
        SourceKey::Poles => {
            let node = table.require(key, "s-plane poles")?;
            GainSource::Poles(read_poles(
                &node,
                Plane::S,
                states,
                sample_period,
                warnings,
            )?)
        }
        SourceKey::DiscretePoles => {
            let node = table.require(key, "z-plane poles")?;
            GainSource::DiscretePoles(read_poles(
                &node,
                Plane::Z,
                states,
                sample_period,
                warnings,
            )?)
        }
        SourceKey::Gain => {
            let node = table.require(key, "the n x p continuous gain")?;
            let l = node.matrix_of(
                states,
                Dim {
                    count: plant.p(),
                    per: "output",
                    symbol: "p",
                    from: "plant.c",
                },
            )?;
            if plant.domain == Domain::Discrete {
                return Err(node.fail(
                    ModelErrorKind::Conflict,
                    "a continuous-time gain needs a continuous plant, but plant.domain = \
                     \"discrete\"; give discrete_poles or [observer.kalman] instead",
                ));
            }
            let method = match table.get("gain_method") {
                Some(node) => node.choice(&[
                    ("hold", GainMethod::Hold),
                    ("pole-map", GainMethod::PoleMap),
                ])?,
                None => GainMethod::default(),
            };
            GainSource::Gain { l, method }
        }
        SourceKey::Kalman => {
            let kalman_table =
                table.require_table(key, kalman::KEYS, "the Kalman noise description")?;
            GainSource::Kalman(kalman::read(&kalman_table, plant, warnings)?)
        }
    })
}

fn read_gate(table: &Table<'_, '_>) -> Result<Option<Gate>, ModelError> {
    match (table.get("gate_probability"), table.get("gate_threshold")) {
        (Some(_), Some(_)) => Err(table.fail_at(
            "gate_threshold",
            ModelErrorKind::Conflict,
            "give gate_probability or gate_threshold, not both",
        )),
        (Some(node), None) => {
            let probability = node.number()?;
            if probability > 0.0 && probability < 1.0 {
                Ok(Some(Gate::Probability(probability)))
            } else {
                Err(node.fail(
                    ModelErrorKind::OutOfRange,
                    format!("{probability} is not a probability strictly between 0 and 1"),
                ))
            }
        }
        (None, Some(node)) => {
            let threshold = node.number()?;
            if threshold > 0.0 {
                Ok(Some(Gate::Threshold(threshold)))
            } else {
                Err(node.fail(
                    ModelErrorKind::OutOfRange,
                    format!(
                        "{threshold} is not positive; the gate threshold bounds a sum of squares"
                    ),
                ))
            }
        }
        (None, None) => Ok(None),
    }
}
