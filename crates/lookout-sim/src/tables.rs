//! The design's tables in a number format, zero-padded to a size class:
//! the one place the simulator turns a [`Design`] into runtime tables.
//!
//! They come from the design crate's hand-off
//! ([`lookout_design::runtime`]), which builds them from
//! [`Design::observer`] and, for Q tables, from the design's one quantiser:
//! the simulator runs exactly the tables `lookout emit` writes (the
//! hand-off's tests compare them with the emitted tables, integer for
//! integer). Zero padding to a larger size is exact (see
//! [`crate::runtime`]).

use crate::SimError;
use crate::runtime::Format;
use lookout::{
    CurrentTables, Fixed, FixedCurrentTables, FixedFusedTables, FixedPredictorTables, FusedTables,
    PredictorTables, Real,
};
use lookout_design::Design;
use lookout_design::design::ObserverForm;
use lookout_design::runtime::{self as handoff, HandoffError};

/// The float type of a float observer.
pub trait Scalar: Real + Send + Sync {
    /// `v` rounded to this type (`None`: out of its range).
    fn of(v: f64) -> Option<Self>;
    /// Back to f64.
    fn to(self) -> f64;
}

impl Scalar for f64 {
    fn of(v: f64) -> Option<Self> {
        Some(v)
    }
    fn to(self) -> f64 {
        self
    }
}

impl Scalar for f32 {
    fn of(v: f64) -> Option<Self> {
        #[allow(clippy::cast_possible_truncation)] // rounding to f32 is the point
        let narrow = v as f32;
        (narrow.is_finite() || !v.is_finite()).then_some(narrow)
    }
    fn to(self) -> f64 {
        f64::from(self)
    }
}

/// The design's float tables for its form, padded, in type T.
pub enum FloatTables<T, const N: usize, const M: usize, const P: usize> {
    /// Predictor form.
    Predictor(PredictorTables<T, N, M, P>),
    /// Current form.
    Current(CurrentTables<T, N, M, P>),
    /// Fused (held) form.
    Fused(FusedTables<T, N, M, P>),
}

/// The design's Q tables for its form, padded, in format Q.
pub enum FixedTables<Q: Fixed, const N: usize, const M: usize, const P: usize> {
    /// Predictor form.
    Predictor(FixedPredictorTables<Q, N, M, P>),
    /// Current form.
    Current(FixedCurrentTables<Q, N, M, P>),
    /// Fused (held) form.
    Fused(FixedFusedTables<Q, N, M, P>),
}

/// A hand-off failure as the command reports it: the model and the format
/// named, as bad input (a table that does not fit the format).
fn refused(design: &Design, format: Format) -> impl Fn(HandoffError) -> SimError + '_ {
    move |e| SimError::BadInput(format!("{}: {} tables: {e}", design.origin, format.name()))
}

/// The design's float tables, padded to N, M, P, in type T (`format`
/// names it in messages).
pub fn float_tables<T: Scalar, const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
) -> Result<FloatTables<T, N, M, P>, SimError> {
    let e = refused(design, format);
    Ok(match design.observer().form {
        ObserverForm::Predictor { .. } => {
            FloatTables::Predictor(handoff::predictor_tables(design).map_err(e)?)
        }
        ObserverForm::Current { .. } => {
            FloatTables::Current(handoff::current_tables(design).map_err(e)?)
        }
        ObserverForm::Fused => FloatTables::Fused(handoff::fused_tables(design).map_err(e)?),
    })
}

/// The design's Q tables in format Q (`format`, Q31 or Q15), padded to
/// N, M, P: the design's own format, or the other one at the same scales.
pub fn fixed_tables<Q: Fixed, const N: usize, const M: usize, const P: usize>(
    design: &Design,
    format: Format,
) -> Result<FixedTables<Q, N, M, P>, SimError> {
    let e = refused(design, format);
    Ok(match design.observer().form {
        ObserverForm::Predictor { .. } => {
            FixedTables::Predictor(handoff::fixed_predictor_tables(design).map_err(e)?)
        }
        ObserverForm::Current { .. } => {
            FixedTables::Current(handoff::fixed_current_tables(design).map_err(e)?)
        }
        ObserverForm::Fused => FixedTables::Fused(handoff::fixed_fused_tables(design).map_err(e)?),
    })
}
