use std::fmt;

/// Why a tail computation was refused.
#[derive(Debug, Clone, PartialEq)]
pub enum TailError {
    /// A parameter is out of range: which, the value, what is allowed.
    Parameter {
        /// Which parameter.
        name: &'static str,
        /// The refused value.
        value: f64,
        /// What would have been accepted.
        allowed: &'static str,
    },
    /// Too few exceedances to fit a tail.
    TooFewExceedances {
        /// Exceedances available.
        found: usize,
        /// The least the fit accepts.
        needed: usize,
    },
    /// A level below the lowest level the accumulator kept everything above.
    BelowFloor {
        /// The level asked for.
        level: f64,
        /// The accumulator's floor.
        floor: f64,
    },
    /// The requested rate is at or above the exceedance rate at the fit threshold, so its
    /// threshold lies below the fitted tail: read it from the counts instead.
    RateAboveFitThreshold {
        /// The requested rate, per hour.
        rate_per_h: f64,
        /// The exceedance rate at the fit threshold, per hour.
        threshold_rate_per_h: f64,
    },
    /// Frame times went backwards within a trial.
    TimeOrder {
        /// The trial's key.
        trial: u64,
        /// The offending time, seconds.
        t_s: f64,
    },
    /// Two accumulators both hold the same trial.
    DuplicateTrial {
        /// The trial's key.
        trial: u64,
    },
    /// Accumulators with different alarm rules cannot be merged.
    RuleMismatch,
}

impl fmt::Display for TailError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            TailError::Parameter {
                name,
                value,
                allowed,
            } => write!(f, "{name} = {value} is not valid: must be {allowed}"),
            TailError::TooFewExceedances { found, needed } => write!(
                f,
                "{found} exceedances are too few for a tail fit (at least {needed} needed)"
            ),
            TailError::BelowFloor { level, floor } => write!(
                f,
                "level {level} is below {floor}, the lowest level whose exceedances were all kept"
            ),
            TailError::RateAboveFitThreshold {
                rate_per_h,
                threshold_rate_per_h,
            } => write!(
                f,
                "a rate of {rate_per_h}/h is not below the exceedance rate at the fit \
                 threshold ({threshold_rate_per_h}/h): its threshold is below the fitted tail"
            ),
            TailError::TimeOrder { trial, t_s } => {
                write!(f, "trial {trial}: frame time {t_s} s is out of time order")
            }
            TailError::DuplicateTrial { trial } => {
                write!(f, "trial {trial} was added to two accumulators")
            }
            TailError::RuleMismatch => {
                write!(
                    f,
                    "accumulators with different alarm rules cannot be merged"
                )
            }
        }
    }
}

impl std::error::Error for TailError {}

pub(crate) fn parameter(name: &'static str, value: f64, allowed: &'static str) -> TailError {
    TailError::Parameter {
        name,
        value,
        allowed,
    }
}

pub(crate) fn check_confidence(confidence: f64) -> Result<f64, TailError> {
    if confidence > 0.0 && confidence < 1.0 {
        Ok(confidence)
    } else {
        Err(parameter(
            "confidence",
            confidence,
            "strictly between 0 and 1",
        ))
    }
}
