//! Fixed-point (Q15 and Q31) observers: integer-only steps for
//! microcontrollers without an FPU, or where results must be bit-identical
//! on every target.
//!
//! The number format (signal scales, table exponents, rounding, saturation,
//! accumulator headroom, ADC readings) is documented once, on [`Fixed`].
//!
//! Each float observer has a fixed-point twin with the same API:
//! [`FixedPredictorObserver`], [`FixedCurrentObserver`],
//! [`FixedFusedObserver`], on [`FixedPredictorTables`],
//! [`FixedCurrentTables`], [`FixedFusedTables`] (plain data for `const`
//! items). The tables are built on the host by lookout-design's one quantiser
//! (`lookout_design::fixed_point`, also behind the generated tables); the
//! steps never touch a float.
//!
//! The steps are checked three ways: this module denies
//! `clippy::float_arithmetic` (outside the two value conversions
//! [`Fixed::from_real`] and [`Fixed::to_real`], which are not steps)
//! and `clippy::arithmetic_side_effects` (every integer operation saturates,
//! or is a shift or product proved in range beside it), and
//! `checks/no-panic` links every fixed-point step under `#[no_panic]`.
#![deny(clippy::float_arithmetic, clippy::arithmetic_side_effects)]

#[macro_use]
mod arith;
mod current;
mod format;
mod fused;
mod gate;
mod headroom;
mod measurement;
mod predictor;
mod tables;

pub use arith::{Accumulation, Exact, Saturating};
pub use current::FixedCurrentObserver;
pub use format::{Fixed, Q15, Q31, Wide};
pub use fused::FixedFusedObserver;
pub use headroom::{HeadroomError, Proven, TableName};
pub use predictor::FixedPredictorObserver;
pub use tables::{
    FixedCurrentTables, FixedFusedTables, FixedGate, FixedOutputMap, FixedPredictorTables, Scales,
};
