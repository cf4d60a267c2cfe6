//! A refused parameter of a simulation model (the mains supply, the ADC):
//! which field and why, so a scenario error can point at the key without
//! reading it back out of a message.

use std::fmt;

/// A field of a model's parameters that its `validate` refused.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldError {
    /// The field's name, as the scenario file's key (`rate_hz`).
    pub field: &'static str,
    /// What was expected, without the field's name.
    pub message: String,
}

impl FieldError {
    /// A refusal of `field`.
    pub fn new(field: &'static str, message: impl Into<String>) -> Self {
        FieldError {
            field,
            message: message.into(),
        }
    }
}

impl fmt::Display for FieldError {
    /// `field: message`.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.field, self.message)
    }
}

impl std::error::Error for FieldError {}
