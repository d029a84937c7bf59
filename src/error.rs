//! One error type for the whole program: what went wrong, a hint that names
//! the fix, and whose side the fault is on (the input, or the program).
//!
//! Every module of the core keeps its own typed error enum (so tests can
//! match on it) and implements [`Diagnostic`] to say its kind and hint. Any
//! such error turns into an [`Error`] with `?`. The message never carries the
//! hint: the two travel apart, so a table cell can hold the message alone and
//! a terminal can print both.

use std::fmt;
use std::path::Path;

/// Whose side an error is on; the binary maps it to an exit code.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// The input (a file, a value, an option) is wrong: exit code 2.
    BadInput,
    /// The program or the machine failed (a write, a solver): exit code 1.
    Internal,
}

/// What an error of the core says about itself.
pub trait Diagnostic: fmt::Display {
    /// A line that names the fix, if there is one.
    fn hint(&self) -> Option<String> {
        None
    }
    /// Whose side the error is on.
    fn kind(&self) -> ErrorKind {
        ErrorKind::BadInput
    }
}

/// An error with its kind, message, optional hint and the context it arose in.
#[derive(Debug, Clone, PartialEq)]
pub struct Error {
    kind: ErrorKind,
    message: String,
    hint: Option<String>,
    /// Outermost first, e.g. ["evaluating card.toml"].
    context: Vec<String>,
}

impl Error {
    /// An error in the input.
    pub fn bad_input(message: impl Into<String>) -> Self {
        Error {
            kind: ErrorKind::BadInput,
            message: message.into(),
            hint: None,
            context: Vec::new(),
        }
    }

    /// A failure of the program or the machine.
    pub fn internal(message: impl Into<String>) -> Self {
        Error {
            kind: ErrorKind::Internal,
            message: message.into(),
            hint: None,
            context: Vec::new(),
        }
    }

    /// A failed file operation (an internal error naming the path).
    pub fn io(action: &str, path: &Path, err: std::io::Error) -> Self {
        Error::internal(format!("{action} {}: {err}", path.display()))
    }

    /// The same error with a hint.
    #[must_use]
    pub fn with_hint(mut self, hint: impl Into<String>) -> Self {
        self.hint = Some(hint.into());
        self
    }

    /// The same error inside a wider context ("evaluating card.toml").
    #[must_use]
    pub fn context(mut self, context: impl Into<String>) -> Self {
        self.context.insert(0, context.into());
        self
    }

    /// Whose side the error is on.
    pub fn kind(&self) -> ErrorKind {
        self.kind
    }

    /// The message without its context.
    pub fn message(&self) -> &str {
        &self.message
    }

    /// The hint, if any.
    pub fn hint(&self) -> Option<&str> {
        self.hint.as_deref()
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for c in &self.context {
            write!(f, "{c}: ")?;
        }
        f.write_str(&self.message)
    }
}

impl std::error::Error for Error {}

impl<E: Diagnostic> From<E> for Error {
    fn from(e: E) -> Self {
        Error {
            kind: e.kind(),
            message: e.to_string(),
            hint: e.hint(),
            context: Vec::new(),
        }
    }
}

/// A number that is not what a quantity needs; the name is the key a user
/// wrote, so file readers can point at it.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ValueError {
    #[error("{name} must be a finite number, got {value}")]
    NotFinite { name: &'static str, value: f64 },
    #[error("{name} must be positive, got {value} {unit}")]
    NotPositive {
        name: &'static str,
        value: f64,
        unit: &'static str,
    },
    #[error("{name} must lie in {range}, got {value}")]
    OutOfRange {
        name: &'static str,
        value: f64,
        range: &'static str,
    },
}

impl ValueError {
    /// The name of the quantity.
    pub fn name(&self) -> &'static str {
        match self {
            ValueError::NotFinite { name, .. }
            | ValueError::NotPositive { name, .. }
            | ValueError::OutOfRange { name, .. } => name,
        }
    }
}

impl Diagnostic for ValueError {}

/// `value` if it is finite.
///
/// # Errors
/// NaN or an infinity.
pub fn finite(name: &'static str, value: f64) -> Result<f64, ValueError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(ValueError::NotFinite { name, value })
    }
}

/// `value` if it is finite and above zero.
///
/// # Errors
/// NaN, an infinity, zero or a negative number.
pub fn positive(name: &'static str, value: f64, unit: &'static str) -> Result<f64, ValueError> {
    finite(name, value)?;
    if value > 0.0 {
        Ok(value)
    } else {
        Err(ValueError::NotPositive { name, value, unit })
    }
}

/// `.context(...)` on any result whose error becomes an [`Error`].
pub trait ResultExt<T> {
    /// Put the error inside a context.
    ///
    /// # Errors
    /// The error of `self`, with the context added.
    fn context(self, context: impl Into<String>) -> Result<T, Error>;
    /// As [`ResultExt::context`], with the context built only on failure.
    ///
    /// # Errors
    /// The error of `self`, with the context added.
    fn with_context<S: Into<String>>(self, f: impl FnOnce() -> S) -> Result<T, Error>;
}

impl<T, E: Into<Error>> ResultExt<T> for Result<T, E> {
    fn context(self, context: impl Into<String>) -> Result<T, Error> {
        self.map_err(|e| e.into().context(context))
    }
    fn with_context<S: Into<String>>(self, f: impl FnOnce() -> S) -> Result<T, Error> {
        self.map_err(|e| e.into().context(f()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Debug)]
    struct Odd;
    impl fmt::Display for Odd {
        fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
            f.write_str("the value is odd")
        }
    }
    impl Diagnostic for Odd {
        fn hint(&self) -> Option<String> {
            Some("give an even value".into())
        }
    }

    #[test]
    fn hint_and_context_stay_apart_from_the_message() {
        let r: Result<(), Odd> = Err(Odd);
        let e = r.context("reading x.toml").unwrap_err();
        assert_eq!(e.to_string(), "reading x.toml: the value is odd");
        assert_eq!(e.message(), "the value is odd");
        assert_eq!(e.hint(), Some("give an even value"));
        assert_eq!(e.kind(), ErrorKind::BadInput);
        assert_eq!(Error::internal("disk full").kind(), ErrorKind::Internal);
    }
}
