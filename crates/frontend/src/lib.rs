//! The analog front end and the ADC of a CW Doppler motion sensor.
//!
//! The module's IF passes a coupling high-pass, op-amp stages with gain and
//! RC low-passes, and reaches the ADC (docs/reference/front-end-and-noise.md#f9): here a cascade of
//! [`FirstOrderSection`]s, a voltage gain and a soft-knee output swing limit
//! ([`AnalogChain`]), then an [`Adc`] that quantizes and clips to its codes.
//!
//! The one design decision: **the analog parts are simulated as digital
//! first-order sections at the oversampled rate f_sim = M·f_s, and the ADC takes
//! every M-th sample** ([`Decimator`], [`OversampledFrontEnd`]). Each analog
//! first-order RC stage maps to one bilinear-transform section with
//! pre-warping, so its −3 dB corner is exact at any rate; first-order sections
//! in cascade (not one high-order polynomial) keep f64 round-off harmless even for
//! a 0.5 Hz pole at 16 kHz (pole 0.99980). Running the chain fast and then
//! sampling and holding, as the real ADC does, lets everything above f_s/2 that
//! the weak RC anti-alias filter leaves through fold into the band physically.
//!
//! Everything streams: state lives in the structs, blocks may have any length,
//! the output is bit-identical for any block split, and nothing allocates per
//! sample.
#![deny(missing_docs)]

mod adc;
mod chain;
mod error;
mod section;

pub use adc::{ideal_sine_snr_db, Adc, AdcCoding, MAX_ADC_BITS};
pub use chain::{AnalogChain, AnalogChainParams, Decimator, OutputSwing, OversampledFrontEnd};
pub use error::ParamError;
pub use section::{
    bilinear_corner_without_prewarp_hz, corner_from_rc_hz, FirstOrderSection, SectionKind,
};
