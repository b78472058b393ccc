//! Numerical building blocks of observer design, all on dense
//! `nalgebra::DMatrix<f64>`:
//!
//! | stage | module | method |
//! |---|---|---|
//! | matrix exponential | [`expm`](mod@expm) | Al-Mohy–Higham (2009) scaling and squaring after balancing, Padé degree 3–13, a-posteriori accuracy estimate |
//! | zero-order hold, process noise | [`discretise`] | block exponentials; Van Loan (1978) |
//! | eigenvalues | [`eig`] | Parlett–Reinsch balancing, Hessenberg, Francis double-shift QR (capped) |
//! | observability | [`observability`](mod@observability) | staircase reduction (Van Dooren 1981) with Householder QR and column pivoting; PBH test per mode on small plants |
//! | observer pole placement | [`place`] | Kautsky–Nichols–Van Dooren (1985) method 0 on the dual pair, bases from one Hessenberg reduction, sweeps on T⁻¹ (Woodbury); direct when every state is measured |
//! | steady-state Kalman filter | [`dare`] | structure-preserving doubling (Chu, Fan, Lin, Wang 2004) |
//!
//! Every routine checks its input (shape, finiteness, symmetry/definiteness
//! where the math needs it), terminates by an iteration cap, never panics, and
//! returns a [`NumericsError`] naming the matrix, the index and the failed
//! condition with its estimate. Non-fatal findings come back as
//! [`NumericsWarning`]s beside the result.
//!
//! Non-goals: sparse or structured (banded, large-scale) problems; the state
//! dimensions met on microcontrollers are small (n ≲ 30). The stages other
//! than pole placement cost O(n³) time and O(n²) memory and are timed up to
//! 400 states (README). Pole placement is O(n³) when every state is measured
//! (p = n) and O(n³ p) time, O(n² p) memory otherwise (`place`).

mod balance;
pub(crate) mod checks;
pub mod chi_square;
pub mod dare;
pub mod discretise;
pub mod eig;
mod error;
pub mod expm;
pub mod observability;
pub mod place;
mod place_bases;
mod place_knv;
mod place_polynomial;
mod staircase;
mod subspace;

pub use dare::{KalmanGains, solve_filter_dare};
pub use discretise::{van_loan_process_noise, zoh, zoh_with_estimate};
pub use eig::{eigenvalues, spectral_radius};
pub use error::{NumericsError, NumericsWarning, Result};
pub use expm::{EXPM_NORM_LIMIT, EXPM_TOLERANCE, Exponential, expm, expm_with_estimate};
pub use observability::{ObservabilityReport, PbhMode, observability};
pub use place::{Placement, place_observer_poles};
