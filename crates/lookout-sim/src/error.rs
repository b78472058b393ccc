//! The engine's one error type.

use std::fmt;

/// Why a run could not be made.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum SimError {
    /// The settings or the model cannot be simulated as asked (a user's
    /// input is at fault; the message names the setting).
    BadInput(String),
    /// Anything else: an internal inconsistency, or a sink that failed.
    Failure(String),
}

impl fmt::Display for SimError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SimError::BadInput(m) | SimError::Failure(m) => f.write_str(m),
        }
    }
}

impl std::error::Error for SimError {}
