//! Fixed-size discrete state observers for microcontrollers: `no_std`, no
//! allocation, no panic path, no `unsafe`, fed by constant tables.
//!
//! An observer runs a model of the plant beside it and corrects the model
//! with a gain times the innovation r = y − C x̂ − D u, so that the
//! estimation error decays by designed error dynamics. This crate is the part
//! that runs in firmware; the host crate `lookout-design` discretises the
//! model, designs the gain, checks it and writes the tables as Rust source.
//!
//! | type | update | multiply-adds per step |
//! |---|---|---|
//! | [`PredictorObserver`] (Luenberger) | x̂⁺ = A x̂ + B u + L r | N² + NM + 2NP + PM |
//! | [`CurrentObserver`] (e.g. steady-state Kalman) | x̂[k\|k] = x̂[k\|k−1] + K r, then x̂[k+1\|k] = A x̂[k\|k] + B u | N² + NM + 2NP + PM |
//! | [`FusedObserver`] | x̂⁺ = F x̂ + G u + H y | N² + NM + NP |
//!
//! N states, M inputs and P outputs are const generics, so a table of the
//! wrong size does not compile. Gating adds P² + P multiply-adds
//! ([`Gate`]). Tables ([`PredictorTables`], [`CurrentTables`],
//! [`FusedTables`]) are plain data written as `const` or `static` items; an
//! observer borrows them and owns only its state.
//!
//! All six observers (three forms, float and fixed point) implement one
//! trait, [`Observer`]: `step`, `step_masked`, `predict`, `estimate`,
//! `innovation`, `set_state`, `reset`, with the step cost and, for fixed
//! point, the signal scales. Bring it into scope (`use lookout::Observer`)
//! to step an observer; code written against it serves every observer, and
//! a call on a concrete observer costs what the observer's own step does.
//!
//! Each step returns a [`Status`]: which channels corrected the estimate,
//! which were missing (masked by the caller or not finite), and whether the
//! measurement was gated or the input refused. A non-finite input never
//! touches the state; a non-finite reading is a missing channel.
//!
//! # Example
//!
//! A cart on a rail (position and speed, sampled every 10 ms, force input,
//! position measured), with the deadbeat predictor gain L = [2, 1/T]ᵀ, which
//! places both error poles at z = 0: from any start the estimate is exact
//! after two steps.
//!
//! ```
//! use lookout::{Matrix, Observer, Plant, PredictorObserver, PredictorTables};
//!
//! const T: f64 = 0.01;
//! static CART: PredictorTables<f64, 2, 1, 1> = PredictorTables {
//!     plant: Plant {
//!         a: Matrix::from_rows([[1.0, T], [0.0, 1.0]]),
//!         b: Matrix::from_rows([[T * T / 2.0], [T]]),
//!         c: Matrix::from_rows([[1.0, 0.0]]),
//!         d: Matrix::from_rows([[0.0]]),
//!     },
//!     l: Matrix::from_rows([[2.0], [1.0 / T]]),
//!     gate: None,
//! };
//!
//! let mut observer = PredictorObserver::new(&CART, [0.0, 0.0]);
//! let mut x = [0.3, -1.2]; // the true state, unknown to the observer
//! for _ in 0..2 {
//!     let u = [0.5];
//!     let y = [x[0]];
//!     let status = observer.step(&u, &y);
//!     assert!(status.corrected());
//!     x = [x[0] + T * x[1] + T * T / 2.0 * u[0], x[1] + T * u[0]];
//! }
//! let e = observer.estimate();
//! assert!((e[0] - x[0]).abs() < 1e-12 && (e[1] - x[1]).abs() < 1e-12);
//! ```
//!
//! Tables whose sizes disagree are rejected by the compiler:
//!
//! ```compile_fail,E0308
//! use lookout::{Matrix, Plant, PredictorTables};
//! // C must be 1 × 2 for a 2-state, 1-output observer: this one is 1 × 3.
//! static BAD: PredictorTables<f32, 2, 1, 1> = PredictorTables {
//!     plant: Plant {
//!         a: Matrix::from_rows([[1.0, 0.0], [0.0, 1.0]]),
//!         b: Matrix::from_rows([[0.0], [1.0]]),
//!         c: Matrix::from_rows([[1.0, 0.0, 0.0]]),
//!         d: Matrix::from_rows([[0.0]]),
//!     },
//!     l: Matrix::from_rows([[0.5], [0.1]]),
//!     gate: None,
//! };
//! ```
//!
//! # Fixed point
//!
//! For targets without an FPU, or firmware that must be bit-reproducible,
//! [`FixedPredictorObserver`], [`FixedCurrentObserver`] and
//! [`FixedFusedObserver`] run the same updates in [`Q15`] or [`Q31`] with
//! integer arithmetic only: an exact wide accumulator per output element, one
//! rounding (half up), saturating stores counted in [`Status::saturations`].
//! The number format, scaling rules, accumulator headroom and the conversion
//! of raw ADC counts are documented once, on [`Fixed`]; each observer states
//! its error per step in LSB. The Q tables are built on the host by
//! lookout-design (generated source, or at run time through its
//! `QuantiseTables` hand-off); this crate holds only what runs on the target.
//!
//! # Features
//!
//! None by default. `nalgebra`: conversions between [`Matrix`] and
//! nalgebra's `SMatrix`.
//!
//! # No panic path
//!
//! The crate denies `unwrap`, `expect`, `panic!` and slice indexing; the
//! project's CI also builds a binary that links only if no step function can
//! reach a panic (`checks/no-panic`).
#![no_std]
#![deny(missing_docs)]
#![deny(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::panic,
    clippy::indexing_slicing
)]

#[macro_use]
mod observer;
mod current;
mod fixed;
mod fused;
mod gate;
mod matrix;
mod measurement;
mod predictor;
mod real;
mod status;
mod tables;

pub use current::CurrentObserver;
pub use fixed::{
    Accumulation, Exact, Fixed, FixedCurrentObserver, FixedCurrentTables, FixedFusedObserver,
    FixedFusedTables, FixedGate, FixedOutputMap, FixedPredictorObserver, FixedPredictorTables,
    HeadroomError, Proven, Q15, Q31, Saturating, Scales, TableName, Wide,
};
pub use fused::FusedObserver;
pub use gate::{GATE_STAGES, Gate, Recovery};
pub use matrix::Matrix;
pub use observer::Observer;
pub use predictor::PredictorObserver;
pub use real::Real;
pub use status::{ChannelMask, Outcome, Status};
pub use tables::{CurrentTables, FusedTables, Plant, PredictorTables};
