//! Parameter validation of the front end, through the one parameter-error type of
//! `echobench-core` (owner: the front end), so its messages read like every other layer's.

pub use echobench_core::param_error::ParamError;
use echobench_core::param_error::ParamOwner;

const OWNER: ParamOwner = ParamOwner::FrontEnd;

/// An error on front-end parameter `field`.
pub(crate) fn refuse(field: &str, value: f64, requirement: impl Into<String>) -> ParamError {
    OWNER.error(field, value, requirement)
}

/// Finite and strictly positive.
pub(crate) fn positive(field: &str, value: f64) -> Result<f64, ParamError> {
    OWNER.positive(field, value)
}

/// Finite, any sign.
pub(crate) fn finite(field: &str, value: f64) -> Result<f64, ParamError> {
    OWNER.finite(field, value)
}
