//! Parameter validation shared by every generator, through the one parameter-error type
//! of `echobench-core` (owner: noise), so its messages read like every other layer's.

pub use echobench_core::param_error::ParamError;
use echobench_core::param_error::ParamOwner;

const OWNER: ParamOwner = ParamOwner::Noise;

/// An error on generator parameter `field` (for list entries, with the index,
/// e.g. `harmonic_amplitudes_v[2]`).
pub(crate) fn refuse(field: &str, value: f64, requirement: impl Into<String>) -> ParamError {
    OWNER.error(field, value, requirement)
}

/// Finite and strictly positive.
pub(crate) fn positive(field: &str, value: f64) -> Result<f64, ParamError> {
    OWNER.positive(field, value)
}

/// Finite and ≥ 0.
pub(crate) fn non_negative(field: &str, value: f64) -> Result<f64, ParamError> {
    OWNER.non_negative(field, value)
}

/// Finite, any sign.
pub(crate) fn finite(field: &str, value: f64) -> Result<f64, ParamError> {
    OWNER.finite(field, value)
}

/// The sample rate every generator needs.
pub(crate) fn sample_rate(value: f64) -> Result<f64, ParamError> {
    positive("sample_rate_hz", value)
}
