//! Errors that reach a user: bad input, always naming the offending field.

use std::fmt;

/// "Your input is bad": a field path such as `elements[0].profile.conic` and
/// a sentence saying what is allowed. Bugs are never reported through this
/// type; they are bugs.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputError {
    /// Dotted path of the offending field, empty for the whole document.
    pub field: String,
    /// What is wrong and what is allowed.
    pub message: String,
}

impl InputError {
    pub fn new(field: impl Into<String>, message: impl Into<String>) -> Self {
        Self { field: field.into(), message: message.into() }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.field.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "{}: {}", self.field, self.message)
        }
    }
}

impl std::error::Error for InputError {}
