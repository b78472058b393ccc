//! The error a model file can raise, and the non-fatal warnings it can carry.

use std::fmt;

/// What kind of problem a [`ModelError`] reports.
///
/// The kind is for programs (the CLI maps every kind to exit code 2, "bad
/// input"); the message is for people.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum ModelErrorKind {
    /// The file could not be read.
    Io,
    /// The text is not valid TOML (the toml parser's own message).
    Syntax,
    /// A required key is absent.
    MissingKey,
    /// A key that the schema does not know (typo protection).
    UnknownKey,
    /// A value of the wrong TOML type (string where a number belongs, …).
    WrongType,
    /// A matrix or list of the wrong size, ragged rows, or an empty matrix.
    WrongSize,
    /// `inf` or `nan` (TOML accepts both literals), or a number too large for `f64`.
    NonFinite,
    /// A number outside its allowed range (`sample_period <= 0`, a negative range, …).
    OutOfRange,
    /// A string that is not one of the allowed choices (`form`, `domain`, …).
    UnknownChoice,
    /// Keys that exclude each other or need each other (two gain sources, `gain_method` without `gain`, …).
    Conflict,
    /// An observer pole outside the stable region (s-plane Re ≥ 0, z-plane |z| ≥ 1).
    UnstablePole,
    /// The pole list does not have n poles (or writes a real pole as a complex entry).
    PoleCount,
    /// A noise matrix that is not symmetric, or not positive (semi)definite.
    NotDefinite,
    /// A name that is not usable as an identifier, or a duplicated name.
    BadName,
}

/// A position in the model text, 1-based, counted in characters.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Location {
    /// Line number, starting at 1.
    pub line: usize,
    /// Column number in characters, starting at 1.
    pub column: usize,
}

impl Location {
    /// The line and column of byte offset `offset` in `text` (clamped to the text).
    pub fn of_offset(text: &str, offset: usize) -> Location {
        let mut line = 1;
        let mut column = 1;
        for (at, ch) in text.char_indices() {
            if at >= offset {
                break;
            }
            if ch == '\n' {
                line += 1;
                column = 1;
            } else {
                column += 1;
            }
        }
        Location { line, column }
    }
}

/// A model file that cannot be used, with the file, the key path and the reason.
///
/// Displays as one line, `origin: key.path: what is wrong`, for example
/// `conveyor.toml: plant.b: expected 2 rows (one per state, n = 2 from plant.a), found 3`.
/// Syntax errors have no key path and display the line and column instead:
/// `conveyor.toml:3:9: syntax error: …`. For every other error the position of the
/// offending value is still available from [`ModelError::location`] (for editors).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ModelError {
    origin: String,
    path: String,
    kind: ModelErrorKind,
    message: String,
    location: Option<Location>,
}

impl ModelError {
    /// An error about the value at key path `path` of the file `origin`.
    pub fn new(
        origin: impl Into<String>,
        path: impl Into<String>,
        kind: ModelErrorKind,
        message: impl Into<String>,
    ) -> ModelError {
        ModelError {
            origin: origin.into(),
            path: path.into(),
            kind,
            message: message.into(),
            location: None,
        }
    }

    /// The same error, pointing at `location` in the text.
    pub fn at(mut self, location: Option<Location>) -> ModelError {
        self.location = location;
        self
    }

    /// The file name (or other origin) given to the parser.
    pub fn origin(&self) -> &str {
        &self.origin
    }

    /// The key path of the offending value, e.g. `plant.b[1][0]`; empty for syntax and I/O errors.
    pub fn path(&self) -> &str {
        &self.path
    }

    /// What kind of problem this is.
    pub fn kind(&self) -> ModelErrorKind {
        self.kind
    }

    /// The reason, without origin or path.
    pub fn message(&self) -> &str {
        &self.message
    }

    /// Where in the text the offending value starts, when known.
    pub fn location(&self) -> Option<Location> {
        self.location
    }
}

impl fmt::Display for ModelError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match (self.kind, self.location) {
            (ModelErrorKind::Syntax, Some(at)) => write!(
                f,
                "{}:{}:{}: syntax error: {}",
                self.origin, at.line, at.column, self.message
            ),
            _ if self.path.is_empty() => write!(f, "{}: {}", self.origin, self.message),
            _ => write!(f, "{}: {}: {}", self.origin, self.path, self.message),
        }
    }
}

impl std::error::Error for ModelError {}

/// A finding that does not stop the design but that the user should read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ModelWarning {
    /// Key path of the value concerned, e.g. `observer.poles[2]`.
    pub path: String,
    /// What was found, one line.
    pub message: String,
}

impl fmt::Display for ModelWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "warning: {}: {}", self.path, self.message)
    }
}
