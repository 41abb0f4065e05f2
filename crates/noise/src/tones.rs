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
    /// A·e^{jθ} at the last resynchronisation point, θ the tone's phase there.
    start: (f64, f64),
    /// cos and sin of 2π·k·cycles_per_sample for k = 0…`RESYNC_SAMPLES` − 1.
    turns_cos: Vec<f64>,
    turns_sin: Vec<f64>,
}

/// Samples between exact evaluations of a tone's phase from the sample counter.
/// In between, sample k of the stretch is A·cos(θ + 2πk·f/f_s) =
/// Re(A·e^{jθ}·e^{j2πk·f/f_s}) with the second factor from a table made once:
/// each value is a complex product of two exact phasors (a few ulp), and
/// samples do not depend on each other, so the loop vectorises. The points
/// are fixed *absolute* indices, so the output is independent of block boundaries.
const RESYNC_SAMPLES: u64 = 256;

impl Tone {
    /// A·e^{jθ} at `sample_index`.
    fn exact_start(&self, sample_index: u64) -> (f64, f64) {
        let angle = TAU * cycles_at(sample_index, self.cycles_per_sample) + self.phase_rad;
        (
            self.amplitude_v * angle.cos(),
            self.amplitude_v * angle.sin(),
        )
    }
}

/// Tones at k·base_hz with amplitudes and random phases: exact from the sample
/// counter every [`RESYNC_SAMPLES`], by a table of phase turns in between.
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
                let cycles_per_sample = frequency_hz / fs;
                let turn = |k: u64| TAU * cycles_at(k, cycles_per_sample);
                let mut tone = Tone {
                    cycles_per_sample,
                    amplitude_v,
                    phase_rad,
                    start: (0.0, 0.0),
                    turns_cos: (0..RESYNC_SAMPLES).map(|k| turn(k).cos()).collect(),
                    turns_sin: (0..RESYNC_SAMPLES).map(|k| turn(k).sin()).collect(),
                };
                tone.start = tone.exact_start(0);
                tones.push(tone);
            }
        }
        Ok(HarmonicSeries {
            tones,
            sample_index: 0,
            base_hz,
        })
    }

    fn add_to(&mut self, out: &mut [f64]) {
        // In runs between resynchronisation points; each sample adds tone 1,
        // then 2, … in order, whatever the block split.
        let mut done = 0;
        while done < out.len() {
            let index = self.sample_index + done as u64;
            let into_run = (index % RESYNC_SAMPLES) as usize;
            if into_run == 0 {
                for tone in &mut self.tones {
                    tone.start = tone.exact_start(index);
                }
            }
            let run = (RESYNC_SAMPLES as usize - into_run).min(out.len() - done);
            let samples = &mut out[done..done + run];
            for tone in &self.tones {
                let (re, im) = tone.start;
                let turns = tone.turns_cos[into_run..]
                    .iter()
                    .zip(&tone.turns_sin[into_run..]);
                for (sample, (cos, sin)) in samples.iter_mut().zip(turns) {
                    *sample += re * cos - im * sin;
                }
            }
            done += run;
        }
        self.sample_index += out.len() as u64;
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_table_gives_each_tone_within_1e_11_of_its_direct_formula() {
        // Against A·cos(2π·frac(n·f/f_s) + φ) at every sample of a long run
        // (a grid 0.3 Hz off nominal, so the tones are not periodic in the
        // table), added in blocks that straddle the resynchronisation points.
        // The direct formula itself rounds n·f/f_s (up to 4e3 cycles here) to
        // about 1e-12 cycle, so the two agree to some 1e-12 of the amplitude
        // (measured 5e-12), not to the table's own few ulp.
        let fs = 26_000.0;
        let amplitudes = [2e-6, 0.5e-6, 0.3e-6];
        let mut series = HarmonicSeries::new(50.0, 0.3, 1.0, &amplitudes, fs, [9; 32]).unwrap();
        let samples = 2_000_000;
        let mut out = vec![0.0; samples];
        for block in out.chunks_mut(1000) {
            series.add_to(block);
        }
        let mut worst: f64 = 0.0;
        for (n, &value) in out.iter().enumerate() {
            let direct: f64 = series
                .tones
                .iter()
                .map(|tone| {
                    let angle = TAU * cycles_at(n as u64, tone.cycles_per_sample) + tone.phase_rad;
                    tone.amplitude_v * angle.cos()
                })
                .sum();
            worst = worst.max((value - direct).abs());
        }
        assert!(worst < 1e-11 * 2e-6, "{worst:e}");
    }
}
