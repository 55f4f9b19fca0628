//! The engine's one error type.
//!
//! Every failure names the input it concerns (when there is one) so the
//! interface layers can point at the field, and carries a short lowercase
//! message written for a person.

use std::fmt;

/// What kind of failure the engine met.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// A value is outside the range the engine accepts.
    OutOfRange,
    /// The inputs contradict each other, or ask for something with no answer.
    NoSolution,
    /// An intermediate figure left the range of 28-digit decimal arithmetic.
    Overflow,
}

/// An error from the engine: the kind, the input it concerns, and a message.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EngineError {
    /// What went wrong.
    pub kind: ErrorKind,
    /// The request field the error concerns, in the interface's own names.
    pub field: Option<&'static str>,
    /// What went wrong, in words.
    pub message: String,
}

impl EngineError {
    /// A value outside the accepted range, naming its field.
    pub fn out_of_range(field: &'static str, message: impl Into<String>) -> Self {
        Self {
            kind: ErrorKind::OutOfRange,
            field: Some(field),
            message: message.into(),
        }
    }
    /// Inputs with no answer, naming the field concerned when there is one.
    pub fn no_solution(field: Option<&'static str>, message: impl Into<String>) -> Self {
        Self {
            kind: ErrorKind::NoSolution,
            field,
            message: message.into(),
        }
    }
    /// An overflow in the arithmetic; `what` says which figure overflowed.
    pub fn overflow(what: &str) -> Self {
        Self {
            kind: ErrorKind::Overflow,
            field: None,
            message: format!("{what} leaves the range of 28-digit decimal arithmetic"),
        }
    }
    /// The same error, attributed to `field` when it has no field yet.
    pub fn at(mut self, field: &'static str) -> Self {
        if self.field.is_none() {
            self.field = Some(field);
        }
        self
    }
}

impl fmt::Display for EngineError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.field {
            Some(field) => write!(f, "{field}: {}", self.message),
            None => f.write_str(&self.message),
        }
    }
}

impl std::error::Error for EngineError {}

/// Results of the engine.
pub type Result<T> = std::result::Result<T, EngineError>;

/// Turns the `None` of a checked decimal operation into an overflow error.
pub(crate) trait OrOverflow<T> {
    fn or_overflow(self, what: &str) -> Result<T>;
}

impl<T> OrOverflow<T> for Option<T> {
    fn or_overflow(self, what: &str) -> Result<T> {
        self.ok_or_else(|| EngineError::overflow(what))
    }
}
