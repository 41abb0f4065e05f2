//! The one error type of the crate.

use std::fmt;

/// Why a statistic could not be computed from the arguments given.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum StatsError {
    /// An argument lies outside its allowed domain (NaN, infinite, negative, out of range).
    InvalidArgument {
        /// Name of the offending argument.
        name: &'static str,
        /// The value received.
        value: f64,
        /// The allowed domain, in words.
        expected: &'static str,
    },
    /// A count of events is larger than the number of trials it was drawn from.
    CountExceedsTotal {
        /// Name of the count argument.
        name: &'static str,
        /// The count received.
        count: u64,
        /// The number of trials it should not exceed.
        total: u64,
    },
    /// A sample needed at least one element (or at least `needed`) but had fewer.
    TooFewSamples {
        /// Name of the sample argument.
        name: &'static str,
        /// Smallest usable sample size.
        needed: usize,
        /// Sample size received.
        got: usize,
    },
}

impl fmt::Display for StatsError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            StatsError::InvalidArgument {
                name,
                value,
                expected,
            } => write!(f, "{name} = {value} is invalid: expected {expected}"),
            StatsError::CountExceedsTotal { name, count, total } => {
                write!(f, "{name} = {count} exceeds the total of {total} trials")
            }
            StatsError::TooFewSamples { name, needed, got } => {
                write!(f, "{name} has {got} values, at least {needed} needed")
            }
        }
    }
}

impl std::error::Error for StatsError {}

/// Checks a confidence level and returns it; levels must lie strictly inside (0, 1).
pub(crate) fn check_confidence(confidence: f64) -> Result<f64, StatsError> {
    if confidence.is_finite() && confidence > 0.0 && confidence < 1.0 {
        Ok(confidence)
    } else {
        Err(StatsError::InvalidArgument {
            name: "confidence",
            value: confidence,
            expected: "a level strictly between 0 and 1, e.g. 0.95",
        })
    }
}

/// Checks a significance level alpha, strictly inside (0, 1).
pub(crate) fn check_alpha(alpha: f64) -> Result<f64, StatsError> {
    if alpha.is_finite() && alpha > 0.0 && alpha < 1.0 {
        Ok(alpha)
    } else {
        Err(StatsError::InvalidArgument {
            name: "alpha",
            value: alpha,
            expected: "a significance level strictly between 0 and 1, e.g. 0.01",
        })
    }
}

/// Checks that a quantity is finite and strictly positive (exposures, rates used as divisors).
pub(crate) fn check_positive(name: &'static str, value: f64) -> Result<f64, StatsError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(StatsError::InvalidArgument {
            name,
            value,
            expected: "a finite number > 0",
        })
    }
}

/// Checks that a quantity is finite and not negative (rates that may be zero).
pub(crate) fn check_non_negative(name: &'static str, value: f64) -> Result<f64, StatsError> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(StatsError::InvalidArgument {
            name,
            value,
            expected: "a finite number >= 0",
        })
    }
}

/// Checks `count <= total`.
pub(crate) fn check_count(name: &'static str, count: u64, total: u64) -> Result<(), StatsError> {
    if count <= total {
        Ok(())
    } else {
        Err(StatsError::CountExceedsTotal { name, count, total })
    }
}
