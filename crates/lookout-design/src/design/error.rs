//! Why a design was refused.

use crate::model::ModelError;
use crate::numerics::NumericsError;
use std::fmt;

/// Why a design could not be made. Every message is one line that names the
/// model file and what is wrong.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum DesignError {
    /// The model file is missing, unreadable or wrong.
    Model(ModelError),
    /// A numerical stage refused the model: `stage` says which (e.g.
    /// "observability of (Ad, Cd)", "pole placement").
    Numerics {
        /// The model file, as named in messages.
        origin: String,
        /// The stage that failed.
        stage: &'static str,
        /// What failed.
        source: NumericsError,
    },
    /// The model asks for something this design does not do; `key` names the
    /// model key concerned.
    Unsupported {
        /// The model file.
        origin: String,
        /// The key concerned.
        key: &'static str,
        /// What is wrong and what to do instead.
        message: String,
    },
    /// The output path names something that must not be replaced (a
    /// directory, a device, a link that does not end at a regular file):
    /// the user's choice of path is at fault, so this is an input error.
    RefusedOutput {
        /// The path given.
        path: String,
        /// What it is and why it is refused.
        message: String,
    },
    /// The output could not be written.
    Io {
        /// The file concerned.
        path: String,
        /// The operating system's message.
        message: String,
    },
}

impl DesignError {
    /// Whether the error lies in the user's input (the model file: missing,
    /// unreadable, wrong, or asking for a design that cannot be made; or an
    /// output path that must not be replaced), as opposed to failing to
    /// write the output. The CLI maps input errors to exit code 2.
    pub fn is_input_error(&self) -> bool {
        !matches!(self, DesignError::Io { .. })
    }
}

impl fmt::Display for DesignError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            DesignError::Model(e) => write!(f, "{e}"),
            DesignError::Numerics {
                origin,
                stage,
                source,
            } => write!(f, "{origin}: {stage}: {source}"),
            DesignError::Unsupported {
                origin,
                key,
                message,
            } => write!(f, "{origin}: {key}: {message}"),
            DesignError::Io { path, message } | DesignError::RefusedOutput { path, message } => {
                write!(f, "{path}: {message}")
            }
        }
    }
}

impl std::error::Error for DesignError {}

impl From<ModelError> for DesignError {
    fn from(e: ModelError) -> Self {
        DesignError::Model(e)
    }
}
