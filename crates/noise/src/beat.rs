//! The beat tone of a neighbouring CW sensor.
//!
//! Two free-running oscillators near the same carrier couple directly (one-way path), and the mixer
//! outputs their difference frequency f_b(t) = Δf0 + (κ1 − κ2)·f0·ΔT(t)
//! (docs/reference/front-end-and-noise.md#f7). At 10.525 GHz a 3 ppm/°C oscillator drifts 31.6
//! kHz/°C, so f_b is usually far above the IF band, and the tone shows up only as short chirps when
//! the drifting offset crosses zero. This generator therefore never clamps f_b into the band: it
//! integrates the phase φ[n+1] = φ[n] + 2π f_b[n]/f_s continuously (so the chirp through zero
//! frequency is smooth and the phase reverses as the sign of f_b changes, as cos(2π∫(f1 − f2)dt)
//! does) and lets the front-end low-pass decide what remains.
//!
//! Offset drift, one of:
//! - [`OffsetDrift::Steady`]: constant f_b.
//! - [`OffsetDrift::OrnsteinUhlenbeck`]: f_b = mean + OU(rms, τ); a random
//!   temperature difference that relaxes with the modules' thermal time constant.
//! - [`OffsetDrift::Sinusoidal`]: f_b = mean + amplitude·sin(2πt/period + ψ), ψ
//!   random; a periodic thermal cycle (a thermostat, a heater switching).
//!
//! One exception, a property of the discrete simulation and not of the physics:
//! a sampled tone above f_s/2 would alias back into the band, where the real
//! analog low-pass would have removed it. So the tone fades out with a
//! raised-cosine taper between 0.4·f_s and 0.5·f_s and is silent above; at the
//! simulation rate f_sim ≥ 8·f_s this lies far above any IF low-pass corner.

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use std::f64::consts::{PI, TAU};

use crate::drift::OrnsteinUhlenbeck;
use crate::error::{finite, non_negative, positive, sample_rate, ParamError};
use crate::{cycles_at, rng_from_seed, AdditiveNoise};

/// The anti-alias taper starts at this fraction of the sample rate.
const TAPER_START_FRACTION: f64 = 0.4;

/// How the beat offset frequency drifts around its mean.
#[derive(Debug, Clone, PartialEq)]
pub enum OffsetDrift {
    /// The offset stays at its mean.
    Steady,
    /// Ornstein–Uhlenbeck wander: RMS deviation and correlation time.
    OrnsteinUhlenbeck {
        /// Standard deviation of the offset around its mean, Hz.
        rms_hz: f64,
        /// Correlation time, s.
        time_constant_s: f64,
    },
    /// Periodic swing with a random starting phase.
    Sinusoidal {
        /// Peak deviation of the offset from its mean, Hz.
        amplitude_hz: f64,
        /// Period of the swing, s.
        period_s: f64,
    },
}

/// Parameters of [`BeatTone`].
#[derive(Debug, Clone, PartialEq)]
pub struct BeatToneParams {
    /// Peak amplitude of the beat tone at the mixer output, V.
    pub amplitude_v: f64,
    /// Mean offset frequency f1 − f2, Hz (either sign).
    pub mean_offset_hz: f64,
    /// How the offset drifts.
    pub drift: OffsetDrift,
}

#[derive(Debug, Clone)]
enum DriftState {
    Steady,
    Random(OrnsteinUhlenbeck),
    Periodic {
        amplitude_hz: f64,
        cycles_per_sample: f64,
        phase_rad: f64,
    },
}

/// A neighbouring sensor's beat tone with a drifting offset frequency.
#[derive(Debug, Clone)]
pub struct BeatTone {
    amplitude_v: f64,
    mean_offset_hz: f64,
    drift: DriftState,
    /// Tone phase in cycles, kept in [0, 1).
    phase_cycles: f64,
    sample_index: u64,
    sample_rate_hz: f64,
    rng: ChaCha8Rng,
}

impl BeatTone {
    /// Makes the beat-tone generator; its initial phase and drift come from `seed`.
    ///
    /// # Errors
    /// When the amplitude or mean offset is not finite, a drift RMS or amplitude is
    /// negative or not finite, a time constant or period is not finite and
    /// positive, or the sample rate is not finite and positive.
    ///
    /// ```
    /// use echobench_noise::{AdditiveNoise, BeatTone, BeatToneParams, OffsetDrift};
    /// let params = BeatToneParams {
    ///     amplitude_v: 2e-3,
    ///     mean_offset_hz: 0.0,
    ///     drift: OffsetDrift::Sinusoidal { amplitude_hz: 300.0, period_s: 20.0 },
    /// };
    /// let mut beat = BeatTone::new(&params, 8000.0, [2; 32]).unwrap();
    /// let mut block = vec![0.0; 800];
    /// beat.add_to(&mut block);
    /// assert!(beat.offset_hz().abs() <= 300.0);
    /// ```
    pub fn new(
        params: &BeatToneParams,
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        let fs = sample_rate(sample_rate_hz)?;
        let amplitude_v = finite("amplitude_v", params.amplitude_v)?;
        let mean_offset_hz = finite("mean_offset_hz", params.mean_offset_hz)?;
        let mut rng = rng_from_seed(seed);
        let phase_cycles = rng.random::<f64>();
        let drift = match params.drift {
            OffsetDrift::Steady => DriftState::Steady,
            OffsetDrift::OrnsteinUhlenbeck {
                rms_hz,
                time_constant_s,
            } => {
                let rms_hz = non_negative("drift.rms_hz", rms_hz)?;
                let time_constant_s = positive("drift.time_constant_s", time_constant_s)?;
                DriftState::Random(OrnsteinUhlenbeck::new(
                    rms_hz,
                    time_constant_s,
                    fs,
                    &mut rng,
                ))
            }
            OffsetDrift::Sinusoidal {
                amplitude_hz,
                period_s,
            } => {
                let amplitude_hz = non_negative("drift.amplitude_hz", amplitude_hz)?;
                let period_s = positive("drift.period_s", period_s)?;
                DriftState::Periodic {
                    amplitude_hz,
                    cycles_per_sample: 1.0 / (period_s * fs),
                    phase_rad: TAU * rng.random::<f64>(),
                }
            }
        };
        Ok(BeatTone {
            amplitude_v,
            mean_offset_hz,
            drift,
            phase_cycles,
            sample_index: 0,
            sample_rate_hz: fs,
            rng,
        })
    }

    /// The offset frequency f_b of the next sample, Hz (signed).
    pub fn offset_hz(&self) -> f64 {
        self.mean_offset_hz
            + match &self.drift {
                DriftState::Steady => 0.0,
                DriftState::Random(process) => process.value(),
                DriftState::Periodic {
                    amplitude_hz,
                    cycles_per_sample,
                    phase_rad,
                } => {
                    let cycles = cycles_at(self.sample_index, *cycles_per_sample);
                    amplitude_hz * (TAU * cycles + phase_rad).sin()
                }
            }
    }

    /// Gain of the anti-alias taper at |f_b| (see the module docs).
    fn taper(&self, offset_hz: f64) -> f64 {
        let start_hz = TAPER_START_FRACTION * self.sample_rate_hz;
        let end_hz = 0.5 * self.sample_rate_hz;
        let magnitude = offset_hz.abs();
        if magnitude <= start_hz {
            1.0
        } else if magnitude >= end_hz {
            0.0
        } else {
            0.5 * (1.0 + (PI * (magnitude - start_hz) / (end_hz - start_hz)).cos())
        }
    }
}

impl AdditiveNoise for BeatTone {
    fn add_to(&mut self, out: &mut [f64]) {
        for sample in out.iter_mut() {
            let offset_hz = self.offset_hz();
            *sample += self.amplitude_v * self.taper(offset_hz) * (TAU * self.phase_cycles).cos();
            let next = self.phase_cycles + offset_hz / self.sample_rate_hz;
            self.phase_cycles = next - next.floor();
            if let DriftState::Random(process) = &mut self.drift {
                process.advance(&mut self.rng);
            }
            self.sample_index += 1;
        }
    }
}
