//! Additive noise and interference at the mixer output of a CW Doppler module.
//!
//! Every generator here models one thing that adds to the IF voltage before the analog front end
//! (docs/reference/front-end-and-noise.md#f1 to #f7): white noise, flicker (1/f) noise, mains hum,
//! lamp flicker, impulsive radio bursts, a neighbouring sensor's beat tone and slow DC drift. Each
//! one implements [`AdditiveNoise`]: it adds its next samples into a caller-owned block.
//!
//! The one design decision: **every generator is a streaming state machine that
//! advances exactly one sample at a time, in a fixed order of arithmetic and of
//! random draws, from its own ChaCha8 stream seeded by the caller**. The
//! synthesizer runs at an internal rate (possibly oversampled) and calls with
//! blocks of any length; because no generator ever looks at the block length,
//! the output is bit-identical whatever the block sizes, and because all state
//! is sized at construction, nothing is allocated per sample. Tones are
//! evaluated from an integer sample counter rather than an accumulated phase
//! where their frequency is fixed, so they do not drift over long trials.
//!
//! Units are in names: volts (`_v`), hertz (`_hz`), seconds (`_s`), and noise
//! densities in V/√Hz (`_v_per_rt_hz`), one-sided.
#![deny(missing_docs)]

mod beat;
mod bursts;
mod drift;
mod error;
mod flicker;
mod tones;
mod white;

pub use beat::{BeatTone, BeatToneParams, OffsetDrift};
pub use bursts::{
    RadioBurstParams, RadioBursts, COMMON_BEACON_INTERVAL_S, IEEE_802_11_TIME_UNIT_S,
};
pub use drift::{DcDrift, DcDriftParams};
pub use error::ParamError;
pub use flicker::{kasdin_taps, FlickerNoise, FlickerParams, DEFAULT_FLICKER_LOWEST_HZ};
pub use tones::{LampFlicker, LampFlickerParams, MainsHum, MainsHumParams};
pub use white::WhiteNoise;

/// A generator whose output adds to the IF voltage.
pub trait AdditiveNoise: Send {
    /// Adds this generator's next `out.len()` samples, in volts, into `out`.
    ///
    /// Successive calls continue the same stream: calling with blocks of 1, 7
    /// or 4096 samples gives bit-identical results.
    fn add_to(&mut self, out: &mut [f64]);
}

/// Makes the generator's random stream from the caller's seed.
pub(crate) fn rng_from_seed(seed: [u8; 32]) -> rand_chacha::ChaCha8Rng {
    use rand::SeedableRng;
    rand_chacha::ChaCha8Rng::from_seed(seed)
}

/// `frac(index · cycles_per_sample)`: the phase, in cycles, of a fixed-frequency
/// tone at an integer sample index. Computing it from the counter (not by
/// accumulation) keeps long tones exact and independent of block boundaries.
#[inline]
pub(crate) fn cycles_at(sample_index: u64, cycles_per_sample: f64) -> f64 {
    (sample_index as f64 * cycles_per_sample).fract()
}
