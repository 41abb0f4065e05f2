//! Mains hum and lamp flicker: fixed sets of harmonically related tones.
//!
//! Mains (docs/reference/front-end-and-noise.md#f4): tones at f_m = 50 or 60 Hz and its harmonics
//! (odd ones from rectifier currents, 2·f_m from full-wave ripple). Gas-discharge lamps: the
//! plasma's reflectivity is modulated at 2·f_m, so IF tones appear at 2·f_m and its harmonics
//! (100/200/300 … Hz or 120/240/360 … Hz; docs/reference/check-values.md#pc25).
//!
//! Phases are drawn once from the seed (uniform on [0, 2π)). Harmonics at or
//! above f_s/2 are left out: the analog chain removes them in the real module,
//! and a sampled tone above Nyquist would alias into the IF band instead.

use rand::Rng;
use std::f64::consts::TAU;

use crate::error::{finite, refuse, sample_rate, ParamError};
use crate::{cycles_at, rng_from_seed, AdditiveNoise};

/// Largest accepted |frequency_offset_hz| as a fraction of the nominal mains
/// frequency. Grids hold about ±1 % (EN 50160, from memory); 5 % leaves room to
/// test off-nominal supplies (generators, islanded grids) while rejecting typos.
const MAX_OFFSET_FRACTION: f64 = 0.05;

/// Parameters of [`MainsHum`].
#[derive(Debug, Clone, PartialEq)]
pub struct MainsHumParams {
    /// Nominal mains frequency: 50 or 60 Hz.
    pub mains_hz: f64,
    /// Peak amplitude of each harmonic, V: entry 0 is the fundamental f_m,
    /// entry k is (k + 1)·f_m.
    pub harmonic_amplitudes_v: Vec<f64>,
    /// Deviation of the actual grid frequency from nominal, Hz (within ±5 %).
    pub frequency_offset_hz: f64,
}

/// Parameters of [`LampFlicker`].
#[derive(Debug, Clone, PartialEq)]
pub struct LampFlickerParams {
    /// Nominal mains frequency: 50 or 60 Hz (the lamp's tones are at 2·f_m·k).
    pub mains_hz: f64,
    /// Peak amplitude of each tone, V: entry 0 at 2·f_m, entry k at 2(k + 1)·f_m.
    pub harmonic_amplitudes_v: Vec<f64>,
    /// Deviation of the actual grid frequency from nominal, Hz (within ±5 %).
    pub frequency_offset_hz: f64,
}

#[derive(Debug, Clone)]
struct Tone {
    cycles_per_sample: f64,
    amplitude_v: f64,
    phase_rad: f64,
    /// e^{j·phase} of the next sample, advanced by one complex multiply per sample.
    phasor: (f64, f64),
    /// e^{j·2π·cycles_per_sample}.
    step: (f64, f64),
}

/// Samples between exact re-evaluations of a tone's phasor from the sample
/// counter. The rotation recurrence in between drifts by ~1e-16 per step, so the
/// error stays below 1e-12 relative; resynchronising at fixed *absolute*
/// indices keeps the output independent of block boundaries.
const RESYNC_SAMPLES: u64 = 1024;

impl Tone {
    fn exact_phasor(&self, sample_index: u64) -> (f64, f64) {
        let angle = TAU * cycles_at(sample_index, self.cycles_per_sample) + self.phase_rad;
        (angle.cos(), angle.sin())
    }
}

/// Tones at k·base_hz with amplitudes and random phases: exact from the sample
/// counter every [`RESYNC_SAMPLES`], a complex rotation in between.
#[derive(Debug, Clone)]
struct HarmonicSeries {
    tones: Vec<Tone>,
    sample_index: u64,
    base_hz: f64,
}

impl HarmonicSeries {
    fn new(
        mains_hz: f64,
        frequency_offset_hz: f64,
        multiple_of_mains: f64,
        amplitudes_v: &[f64],
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        let fs = sample_rate(sample_rate_hz)?;
        if mains_hz != 50.0 && mains_hz != 60.0 {
            return Err(refuse("mains_hz", mains_hz, "must be 50 or 60"));
        }
        let offset = finite("frequency_offset_hz", frequency_offset_hz)?;
        if offset.abs() > MAX_OFFSET_FRACTION * mains_hz {
            return Err(refuse(
                "frequency_offset_hz",
                offset,
                format!(
                    "must be within ±{} Hz (5 % of mains_hz)",
                    MAX_OFFSET_FRACTION * mains_hz
                ),
            ));
        }
        for (k, &amplitude) in amplitudes_v.iter().enumerate() {
            finite(&format!("harmonic_amplitudes_v[{k}]"), amplitude)?;
        }
        let base_hz = multiple_of_mains * (mains_hz + offset);
        let mut rng = rng_from_seed(seed);
        let mut tones = Vec::with_capacity(amplitudes_v.len());
        for (k, &amplitude_v) in amplitudes_v.iter().enumerate() {
            // Every phase is drawn, kept or not, so that a change of sample rate
            // does not reshuffle the phases of the tones that remain.
            let phase_rad = TAU * rng.random::<f64>();
            let frequency_hz = (k + 1) as f64 * base_hz;
            if frequency_hz < fs / 2.0 && amplitude_v != 0.0 {
                let step_rad = TAU * frequency_hz / fs;
                tones.push(Tone {
                    cycles_per_sample: frequency_hz / fs,
                    amplitude_v,
                    phase_rad,
                    phasor: (phase_rad.cos(), phase_rad.sin()),
                    step: (step_rad.cos(), step_rad.sin()),
                });
            }
        }
        Ok(HarmonicSeries {
            tones,
            sample_index: 0,
            base_hz,
        })
    }

    fn add_to(&mut self, out: &mut [f64]) {
        // In runs between resynchronisation points, so that the inner loop is
        // the bare rotation (the same arithmetic, in the same order, as one
        // sample at a time with a resync test on every sample).
        let mut done = 0;
        while done < out.len() {
            let index = self.sample_index + done as u64;
            let into_run = index % RESYNC_SAMPLES;
            if into_run == 0 {
                for tone in &mut self.tones {
                    tone.phasor = tone.exact_phasor(index);
                }
            }
            let run = ((RESYNC_SAMPLES - into_run) as usize).min(out.len() - done);
            let samples = &mut out[done..done + run];
            // Four tones at a time, so that four independent rotations overlap
            // in the pipeline; each sample still adds tone 1, then 2, … in order.
            for group in self.tones.chunks_mut(4) {
                match group {
                    [a, b, c, d] => rotate_and_add([a, b, c, d], samples),
                    [a, b, c] => rotate_and_add([a, b, c], samples),
                    [a, b] => rotate_and_add([a, b], samples),
                    [a] => rotate_and_add([a], samples),
                    _ => {}
                }
            }
            done += run;
        }
        self.sample_index += out.len() as u64;
    }
}

/// Adds `tones` to `samples`, advancing each tone's phasor by one step per sample.
fn rotate_and_add<const N: usize>(tones: [&mut Tone; N], samples: &mut [f64]) {
    let amplitude: [f64; N] = std::array::from_fn(|j| tones[j].amplitude_v);
    let step: [(f64, f64); N] = std::array::from_fn(|j| tones[j].step);
    let mut phasor: [(f64, f64); N] = std::array::from_fn(|j| tones[j].phasor);
    for sample in samples.iter_mut() {
        for j in 0..N {
            let (re, im) = phasor[j];
            *sample += amplitude[j] * re;
            phasor[j] = (
                re * step[j].0 - im * step[j].1,
                re * step[j].1 + im * step[j].0,
            );
        }
    }
    for (tone, phasor) in tones.into_iter().zip(phasor) {
        tone.phasor = phasor;
    }
}

/// Mains hum: the grid frequency and its harmonics.
#[derive(Debug, Clone)]
pub struct MainsHum {
    series: HarmonicSeries,
}

impl MainsHum {
    /// Makes the hum generator; phases come from `seed`.
    ///
    /// # Errors
    /// When `mains_hz` is neither 50 nor 60, the offset is beyond ±5 %, an
    /// amplitude is not finite, or the sample rate is not finite and positive.
    ///
    /// ```
    /// use echobench_noise::{MainsHum, MainsHumParams};
    /// let params = MainsHumParams {
    ///     mains_hz: 50.0,
    ///     harmonic_amplitudes_v: vec![1e-3, 0.0, 3e-4],
    ///     frequency_offset_hz: 0.0,
    /// };
    /// assert!(MainsHum::new(&params, 1000.0, [3; 32]).is_ok());
    /// let wrong = MainsHumParams { mains_hz: 55.0, ..params };
    /// assert_eq!(MainsHum::new(&wrong, 1000.0, [3; 32]).unwrap_err().param, "mains_hz");
    /// ```
    pub fn new(
        params: &MainsHumParams,
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        Ok(MainsHum {
            series: HarmonicSeries::new(
                params.mains_hz,
                params.frequency_offset_hz,
                1.0,
                &params.harmonic_amplitudes_v,
                sample_rate_hz,
                seed,
            )?,
        })
    }

    /// Actual fundamental frequency (nominal + offset), Hz.
    pub fn fundamental_hz(&self) -> f64 {
        self.series.base_hz
    }
}

impl AdditiveNoise for MainsHum {
    fn add_to(&mut self, out: &mut [f64]) {
        self.series.add_to(out);
    }
}

/// Gas-discharge lamp flicker: tones at 2·f_m and its harmonics.
#[derive(Debug, Clone)]
pub struct LampFlicker {
    series: HarmonicSeries,
}

impl LampFlicker {
    /// Makes the lamp-flicker generator; phases come from `seed`.
    ///
    /// # Errors
    /// As [`MainsHum::new`].
    ///
    /// ```
    /// use echobench_noise::{LampFlicker, LampFlickerParams};
    /// let params = LampFlickerParams {
    ///     mains_hz: 60.0,
    ///     harmonic_amplitudes_v: vec![2e-4, 5e-5],
    ///     frequency_offset_hz: 0.0,
    /// };
    /// let lamp = LampFlicker::new(&params, 1000.0, [4; 32]).unwrap();
    /// assert_eq!(lamp.first_tone_hz(), 120.0);
    /// ```
    pub fn new(
        params: &LampFlickerParams,
        sample_rate_hz: f64,
        seed: [u8; 32],
    ) -> Result<Self, ParamError> {
        Ok(LampFlicker {
            series: HarmonicSeries::new(
                params.mains_hz,
                params.frequency_offset_hz,
                2.0,
                &params.harmonic_amplitudes_v,
                sample_rate_hz,
                seed,
            )?,
        })
    }

    /// Frequency of the first tone, 2·(nominal + offset), Hz.
    pub fn first_tone_hz(&self) -> f64 {
        self.series.base_hz
    }
}

impl AdditiveNoise for LampFlicker {
    fn add_to(&mut self, out: &mut [f64]) {
        self.series.add_to(out);
    }
}
