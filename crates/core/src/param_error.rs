//! One parameter-error type for every layer: detectors, the front end, the noise
//! generators, the motion models and the event scoring.
//!
//! Each layer used to carry its own error struct with its own field names
//! (`field`/`param`/`parameter`, a value as text or as a number, `requirement`/
//! `expected`/`allowed`), so a caller that gathered problems from several layers had
//! four shapes to print. Here there is one: who owns the parameter ([`ParamOwner`]),
//! which parameter, the value as written, and what would have been accepted. The
//! value is kept as text because a detector's parameter can be a name or a flag as
//! well as a number.
//!
//! The range checks every layer repeated (finite, > 0, ≥ 0, within a range) are
//! methods of the owner, so their wording is the same everywhere.

use std::fmt;

/// Who a parameter belongs to, for the message's first words.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum ParamOwner {
    /// A detector plugin, by id.
    Detector(String),
    /// The analog front end and the ADC.
    FrontEnd,
    /// A noise or interference generator.
    Noise,
    /// A motion model, by name (`"door"`, `"walker"`).
    Motion(&'static str),
    /// The alarm and event scoring (hold time, M-of-N, tolerances).
    EventScoring,
}

impl fmt::Display for ParamOwner {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ParamOwner::Detector(id) => write!(f, "detector `{id}`"),
            ParamOwner::FrontEnd => f.write_str("front end"),
            ParamOwner::Noise => f.write_str("noise"),
            ParamOwner::Motion(model) => write!(f, "{model} model"),
            ParamOwner::EventScoring => f.write_str("event scoring"),
        }
    }
}

/// A detector's id names the owner: `ParamError::new("ca-cfar", ...)`.
impl From<&str> for ParamOwner {
    fn from(detector: &str) -> Self {
        ParamOwner::Detector(detector.to_string())
    }
}

/// A detector's id names the owner.
impl From<&String> for ParamOwner {
    fn from(detector: &String) -> Self {
        ParamOwner::Detector(detector.clone())
    }
}

/// A detector's id names the owner.
impl From<String> for ParamOwner {
    fn from(detector: String) -> Self {
        ParamOwner::Detector(detector)
    }
}

/// A parameter was refused: whose, which, the value given and what is allowed.
///
/// ```
/// use echobench_core::param_error::{ParamError, ParamOwner};
/// let e = ParamError::new("ca-cfar", "guard_cells", 9, "must be below training_cells (8)");
/// assert_eq!(
///     e.to_string(),
///     "detector `ca-cfar`: parameter `guard_cells` = 9: must be below training_cells (8)"
/// );
/// let e = ParamOwner::FrontEnd.positive("gain_db", f64::NAN).unwrap_err();
/// assert_eq!(e.to_string(), "front end: parameter `gain_db` = NaN: must be finite and > 0");
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct ParamError {
    /// Whose parameter.
    pub owner: ParamOwner,
    /// The parameter (list entries with their index, `low_pass_corners_hz[1]`; a relation
    /// between parameters names them all).
    pub param: String,
    /// The value given, as written.
    pub value: String,
    /// What would have been accepted.
    pub message: String,
}

impl fmt::Display for ParamError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "{}: parameter `{}` = {}: {}",
            self.owner, self.param, self.value, self.message
        )
    }
}

impl std::error::Error for ParamError {}

impl ParamError {
    /// An error about `param` of `owner` (a detector's id, or a [`ParamOwner`]).
    pub fn new(
        owner: impl Into<ParamOwner>,
        param: &str,
        value: impl fmt::Display,
        message: impl Into<String>,
    ) -> Self {
        ParamError {
            owner: owner.into(),
            param: param.to_string(),
            value: value.to_string(),
            message: message.into(),
        }
    }
}

impl ParamOwner {
    /// `value` if finite, else an error on `param`.
    ///
    /// # Errors
    /// When `value` is NaN or infinite.
    pub fn finite(&self, param: &str, value: f64) -> Result<f64, ParamError> {
        self.accept(param, value, value.is_finite(), "must be finite")
    }

    /// `value` if finite and > 0, else an error on `param`.
    ///
    /// # Errors
    /// When `value` is not a finite positive number.
    pub fn positive(&self, param: &str, value: f64) -> Result<f64, ParamError> {
        self.accept(
            param,
            value,
            value.is_finite() && value > 0.0,
            "must be finite and > 0",
        )
    }

    /// `value` if finite and ≥ 0, else an error on `param`.
    ///
    /// # Errors
    /// When `value` is negative, NaN or infinite.
    pub fn non_negative(&self, param: &str, value: f64) -> Result<f64, ParamError> {
        self.accept(
            param,
            value,
            value.is_finite() && value >= 0.0,
            "must be finite and >= 0",
        )
    }

    /// `value` if `low <= value <= high`, else an error on `param`.
    ///
    /// # Errors
    /// When `value` lies outside the closed range or is NaN.
    pub fn within(&self, param: &str, value: f64, low: f64, high: f64) -> Result<f64, ParamError> {
        self.accept(
            param,
            value,
            value.is_finite() && value >= low && value <= high,
            &format!("must be a number in [{low}, {high}]"),
        )
    }

    /// `value` if `low < value < high`, else an error on `param`.
    ///
    /// # Errors
    /// When `value` lies outside the open range or is NaN.
    pub fn strictly_within(
        &self,
        param: &str,
        value: f64,
        low: f64,
        high: f64,
    ) -> Result<f64, ParamError> {
        self.accept(
            param,
            value,
            value.is_finite() && value > low && value < high,
            &format!("must be a number in ({low}, {high})"),
        )
    }

    /// An error on `param` of this owner.
    pub fn error(
        &self,
        param: &str,
        value: impl fmt::Display,
        message: impl Into<String>,
    ) -> ParamError {
        ParamError::new(self.clone(), param, value, message)
    }

    fn accept(&self, param: &str, value: f64, ok: bool, rule: &str) -> Result<f64, ParamError> {
        if ok {
            Ok(value)
        } else {
            Err(self.error(param, value, rule))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_owner_reads_the_same_way() {
        let cases = [
            (
                ParamOwner::from("energy"),
                "detector `energy`: parameter `x` = -1: must be finite and > 0",
            ),
            (
                ParamOwner::FrontEnd,
                "front end: parameter `x` = -1: must be finite and > 0",
            ),
            (
                ParamOwner::Noise,
                "noise: parameter `x` = -1: must be finite and > 0",
            ),
            (
                ParamOwner::Motion("door"),
                "door model: parameter `x` = -1: must be finite and > 0",
            ),
            (
                ParamOwner::EventScoring,
                "event scoring: parameter `x` = -1: must be finite and > 0",
            ),
        ];
        for (owner, expected) in cases {
            assert_eq!(owner.positive("x", -1.0).unwrap_err().to_string(), expected);
        }
    }

    #[test]
    fn checks_accept_their_ranges_and_refuse_nan() {
        let o = ParamOwner::Noise;
        assert_eq!(o.finite("x", -3.0), Ok(-3.0));
        assert!(o.finite("x", f64::INFINITY).is_err());
        assert_eq!(o.non_negative("x", 0.0), Ok(0.0));
        assert!(o.non_negative("x", -0.1).is_err());
        assert!(o.positive("x", 0.0).is_err());
        assert_eq!(o.within("x", 1.0, 0.0, 1.0), Ok(1.0));
        assert!(o.strictly_within("x", 1.0, 0.0, 1.0).is_err());
        for check in [ParamOwner::within, ParamOwner::strictly_within] {
            let e = check(&o, "x", f64::NAN, f64::NEG_INFINITY, f64::INFINITY).unwrap_err();
            assert_eq!(e.value, "NaN");
        }
    }
}
