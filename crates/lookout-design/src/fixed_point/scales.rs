//! The signal bounds the scales rest on: from arbitrary readings, or from
//! the plant's physical ranges through the error dynamics.
//!
//! * Readings: x̂⁺ = F x̂ + G u + H y with every |u| ≤ `input_range` and
//!   |y| ≤ `output_range` arbitrary; the peak of x̂ is the ℓ1 response to
//!   those ranges ([`bounds::peak`]) from a start inside its driven bound,
//!   and the innovation r = y − C x̂ − D u is at most |y| + |C| x̂max + |D| u.
//!   Conservative for a real plant: an integrating state gets a huge peak.
//! * Plant: with the true plant x⁺ = A x + B u + w, y = C x + D u + v and
//!   |x| ≤ `state_range`, the error e = x − x̂ obeys
//!   e⁺ = F e + w − H v + Ex x + Eu u (Ex = A − F − H C and Eu = B − G − H D
//!   vanish for every observer but a held one), from |e\[0\]| ≤
//!   `initial_error`. So |x̂| ≤ `state_range` + ē and |r| = |C e + v| ≤
//!   |C| ē + |v|. Valid while the plant stays in its declared range; the
//!   runtime's saturation count is the guard when it does not.
//!
//! Either way, for the current form the filtered estimate x̂[k|k] = x̂ + K r
//! is at most x̂max + |K| rmax.

use super::bounds::{self, BoundError, PeakBound};
use super::{FixedError, FloatTables};
use crate::design::ObserverForm;
use crate::model::{FixedPointSpec, ScaleSource};
use nalgebra::{DMatrix, DVector};

/// The proven peaks behind the scales.
#[derive(Debug, Clone, PartialEq)]
pub struct SignalBounds {
    /// Which proof.
    pub source: ScaleSource,
    /// Peak of each estimated state (predicted and, for the current form,
    /// filtered).
    pub state: Vec<f64>,
    /// Peak of each innovation.
    pub innovation: Vec<f64>,
    /// The impulse-response bound used: of the estimate (readings) or of
    /// the estimation error (plant).
    pub proof: PeakBound,
    /// For the plant proof, the bound ē on each |x_i − x̂_i|.
    pub error: Option<Vec<f64>>,
}

pub(super) fn abs_times(m: &DMatrix<f64>, v: &[f64]) -> Vec<f64> {
    m.row_iter()
        .map(|r| r.iter().zip(v).map(|(a, b)| a.abs() * b).sum())
        .collect()
}

fn hstack(blocks: &[&DMatrix<f64>]) -> DMatrix<f64> {
    let rows = blocks.first().map_or(0, |b| b.nrows());
    let cols = blocks.iter().map(|b| b.ncols()).sum();
    let mut e = DMatrix::zeros(rows, cols);
    let mut at = 0;
    for b in blocks {
        e.columns_mut(at, b.ncols()).copy_from(b);
        at += b.ncols();
    }
    e
}

fn unprovable(err: BoundError) -> FixedError {
    FixedError {
        key: "fixed_point",
        message: match err {
            BoundError::NoContraction { best } => format!(
                "cannot prove a bound on the estimate: no power of F up to about 1e19 steps has ∞-norm below 1e-12 (best {best:.4e}); the error dynamics are unstable or within 1e-17 of it"
            ),
            BoundError::NotFinite => {
                "cannot prove a bound on the estimate: the impulse-response sum overflows".into()
            }
        },
    }
}

/// The bounds of `t`'s signals under `spec`'s proof.
pub(super) fn signal_bounds(
    t: &FloatTables<'_>,
    spec: &FixedPointSpec,
) -> Result<SignalBounds, FixedError> {
    let n = t.f.nrows();
    let (x_peak, innovation, proof, error) = match (spec.scales_from, &spec.state_range) {
        (ScaleSource::Plant, Some(range)) if range.len() != n => {
            return Err(FixedError {
                key: "fixed_point.state_range",
                message: format!(
                    "the plant-based scales need the range of every estimated state, {n} with the disturbance states, but state_range has {}; set scales_from = \"readings\"",
                    range.len()
                ),
            });
        }
        (ScaleSource::Plant, Some(range)) => {
            let noise = spec
                .output_noise
                .clone()
                .unwrap_or_else(|| vec![0.0; t.cd.nrows()]);
            // Both have n entries when given (the reader checks the plant's
            // n, and state_range's length equal to n rules out extra states).
            let w = spec.model_error.clone().unwrap_or_else(|| vec![0.0; n]);
            let e0 = spec.initial_error.clone().unwrap_or_else(|| range.clone());
            let ex = t.ad - t.f - t.h * t.cd;
            let eu = t.bd - t.g - t.h * t.dd;
            let identity = DMatrix::identity(n, n);
            let e = hstack(&[&identity, t.h, &ex, &eu]);
            let drive = DVector::from_iterator(
                e.ncols(),
                w.iter()
                    .chain(&noise)
                    .chain(range)
                    .chain(&spec.input_range)
                    .copied(),
            );
            let proof =
                bounds::peak(t.f, &e, &drive, &DVector::from_vec(e0)).map_err(unprovable)?;
            let err = proof.peak.clone();
            let x: Vec<f64> = range.iter().zip(&err).map(|(r, e)| r + e).collect();
            let innovation: Vec<f64> = abs_times(t.cd, &err)
                .iter()
                .zip(&noise)
                .map(|(ce, v)| ce + v)
                .collect();
            (x, innovation, proof, Some(err))
        }
        _ => {
            let e = hstack(&[t.g, t.h]);
            let w = DVector::from_iterator(
                e.ncols(),
                spec.input_range.iter().chain(&spec.output_range).copied(),
            );
            let driven = bounds::peak(t.f, &e, &w, &DVector::zeros(n)).map_err(unprovable)?;
            let proof = bounds::peak(t.f, &e, &w, &DVector::from_vec(driven.driven.clone()))
                .map_err(unprovable)?;
            let mut u_w = spec.input_range.clone();
            u_w.truncate(t.dd.ncols());
            let x = proof.peak.clone();
            let innovation: Vec<f64> = abs_times(t.cd, &x)
                .iter()
                .zip(abs_times(t.dd, &u_w))
                .zip(&spec.output_range)
                .map(|((cx, du), y)| y + cx + du)
                .collect();
            (x, innovation, proof, None)
        }
    };
    let state = match t.form {
        ObserverForm::Current { k } => x_peak
            .iter()
            .zip(abs_times(k, &innovation))
            .map(|(x, kr)| x + kr)
            .collect(),
        _ => x_peak,
    };
    Ok(SignalBounds {
        source: if error.is_some() {
            ScaleSource::Plant
        } else {
            ScaleSource::Readings
        },
        state,
        innovation,
        proof,
        error,
    })
}
