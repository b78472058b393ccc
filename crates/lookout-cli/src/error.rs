//! The command's one error type: what went wrong and which exit code it maps to.

use lookout_design::DesignError;
use std::fmt;

/// Any failure of a subcommand. Exit code 2 for bad input, 1 otherwise.
#[derive(Debug)]
pub enum CliError {
    /// The design pipeline failed (its own rule decides the exit code).
    Design(DesignError),
    /// A bad option or input file of the command itself (exit 2).
    BadInput(String),
    /// Anything else: an output that cannot be written, an internal
    /// inconsistency (exit 1).
    Failure(String),
}

impl CliError {
    /// Whether the user's input is at fault (exit code 2).
    pub fn is_input_error(&self) -> bool {
        match self {
            CliError::Design(e) => e.is_input_error(),
            CliError::BadInput(_) => true,
            CliError::Failure(_) => false,
        }
    }
}

impl fmt::Display for CliError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            CliError::Design(e) => write!(f, "{e}"),
            CliError::BadInput(m) | CliError::Failure(m) => f.write_str(m),
        }
    }
}

impl From<DesignError> for CliError {
    fn from(e: DesignError) -> Self {
        CliError::Design(e)
    }
}

impl From<lookout_sim::SimError> for CliError {
    fn from(e: lookout_sim::SimError) -> Self {
        match e {
            lookout_sim::SimError::BadInput(m) => CliError::BadInput(m),
            lookout_sim::SimError::Failure(m) => CliError::Failure(m),
        }
    }
}
