//! Parameter validation shared by every generator.

use std::fmt;

/// A rejected generator parameter: which field, its value, and what is allowed.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamError {
    /// The parameter's name as it appears in the params struct or constructor
    /// (for list entries, with the index, e.g. `harmonic_amplitudes_v[2]`).
    pub field: String,
    /// The rejected value.
    pub value: f64,
    /// What the field must satisfy.
    pub requirement: String,
}

impl fmt::Display for ParamError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "noise parameter `{}` = {} is not valid: {}",
            self.field, self.value, self.requirement
        )
    }
}

impl std::error::Error for ParamError {}

impl ParamError {
    pub(crate) fn new(
        field: impl Into<String>,
        value: f64,
        requirement: impl Into<String>,
    ) -> Self {
        ParamError {
            field: field.into(),
            value,
            requirement: requirement.into(),
        }
    }
}

/// Finite and strictly positive.
pub(crate) fn positive(field: &str, value: f64) -> Result<f64, ParamError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(ParamError::new(field, value, "must be finite and > 0"))
    }
}

/// Finite and ≥ 0.
pub(crate) fn non_negative(field: &str, value: f64) -> Result<f64, ParamError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(ParamError::new(field, value, "must be finite and >= 0"))
    }
}

/// Finite, any sign.
pub(crate) fn finite(field: &str, value: f64) -> Result<f64, ParamError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(ParamError::new(field, value, "must be finite"))
    }
}

/// The sample rate every generator needs.
pub(crate) fn sample_rate(value: f64) -> Result<f64, ParamError> {
    positive("sample_rate_hz", value)
}
