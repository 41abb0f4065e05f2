//! Short-time power spectral density: Hann-windowed frames, one FFT plan per analysis.

use std::sync::Arc;

use echobench_core::Channels;
use realfft::{RealFftPlanner, RealToComplex};
use rustfft::num_complex::Complex;
use rustfft::{Fft, FftPlanner};

use crate::SpectrogramError;

/// Power spectral densities below this (V²/Hz) are shown as this value, so that an
/// all-zero frame maps to a finite −300 dB instead of −∞.
pub const POWER_FLOOR_V2_PER_HZ: f64 = 1e-30;

/// Largest spectrum (frames × bins) that [`short_time_spectrum`] will allocate: 100 million
/// cells (400 MB of `f32`). Larger requests are refused with a hint to raise the hop.
pub const MAX_SPECTRUM_CELLS: usize = 100_000_000;

/// A short-time power spectral density, in dB re 1 V²/Hz (samples are volts at the ADC input).
///
/// `power_db` is row-major, one row per frame: the value for frame `i` and bin `k` is
/// `power_db[i * freqs_hz.len() + k]`. Frequencies ascend: `0 ..= fs/2` for real input
/// (one-sided), `−fs/2 .. fs/2` for I/Q (two-sided, zero in the middle).
#[derive(Debug, Clone, PartialEq)]
pub struct Spectrum {
    /// Centre time of each frame, seconds from the first sample.
    pub times_s: Vec<f64>,
    /// Centre frequency of each bin, Hz, ascending.
    pub freqs_hz: Vec<f64>,
    /// Power spectral density in dB re 1 V²/Hz, frames × bins, row-major.
    pub power_db: Vec<f32>,
    /// Sample rate of the analysed stream, Hz.
    pub sample_rate_hz: f64,
    /// Frame (window and FFT) length, samples.
    pub frame_len: usize,
    /// Advance between frames, samples.
    pub hop: usize,
    /// Real (one-sided spectrum) or I/Q (two-sided spectrum).
    pub channels: Channels,
    /// Length of the analysed stream, seconds (samples per channel / sample rate).
    pub duration_s: f64,
}

impl Spectrum {
    /// Number of frames (rows).
    pub fn frame_count(&self) -> usize {
        self.times_s.len()
    }

    /// Number of frequency bins (columns).
    pub fn bin_count(&self) -> usize {
        self.freqs_hz.len()
    }

    /// The dB values of one frame, or `None` past the last frame.
    pub fn frame_db(&self, frame: usize) -> Option<&[f32]> {
        let bins = self.bin_count();
        self.power_db.get(frame * bins..(frame + 1) * bins)
    }
}

/// Short-time power spectral density of a trial.
///
/// Frame `i` covers samples `[i·hop, i·hop + frame_len)` per channel; only whole frames are
/// analysed. Each frame is multiplied by a periodic Hann window and transformed; the density is
/// `|X[k]|² / (fs · Σ w²)` (two-sided), doubled for the interior bins of a one-sided spectrum,
/// so that summing density × bin width gives the window-weighted mean square of the frame
/// (Parseval) and white noise reads the same level whatever the frame length.
/// Real input uses a real-to-complex FFT and gives bins `0 ..= frame_len/2`; I/Q input
/// (interleaved `I, Q` pairs, `z = I + jQ`) gives all `frame_len` bins, shifted so that they run
/// from `−fs/2` to just below `+fs/2`. With the project's complex-baseband convention
/// `z = A e^{−jφ}` an approaching target has a positive Doppler frequency.
///
/// # Errors
/// A zero sample rate or one that is not finite, `frame_len < 2`, `hop == 0`, an odd number of
/// values for I/Q, a non-finite sample (its index is named), a stream shorter than one frame, or
/// a result larger than [`MAX_SPECTRUM_CELLS`].
///
/// # Example
/// ```
/// use echobench_spectrogram::{short_time_spectrum, Channels};
/// // A 125 Hz tone sampled at 1 kHz, analysed in 64-sample frames (15.625 Hz bins).
/// let tone: Vec<f32> = (0..1000)
///     .map(|n| (2.0 * std::f64::consts::PI * 125.0 * n as f64 / 1000.0).cos() as f32)
///     .collect();
/// let spectrum = short_time_spectrum(&tone, Channels::Real, 1000.0, 64, 32).unwrap();
/// let row = spectrum.frame_db(0).unwrap();
/// let peak = (0..row.len()).max_by(|&a, &b| row[a].total_cmp(&row[b])).unwrap();
/// assert_eq!(spectrum.freqs_hz[peak], 125.0);
/// ```
pub fn short_time_spectrum(
    samples: &[f32],
    channels: Channels,
    sample_rate_hz: f64,
    frame_len: usize,
    hop: usize,
) -> Result<Spectrum, SpectrogramError> {
    if hop == 0 {
        return Err(SpectrogramError::ZeroHop);
    }
    let mut analyser = FrameAnalyser::new(channels, frame_len, sample_rate_hz)?;
    let values_per_instant = channels.count();
    if !samples.len().is_multiple_of(values_per_instant) {
        return Err(SpectrogramError::OddIqLength {
            values: samples.len(),
        });
    }
    if let Some(index) = samples.iter().position(|v| !v.is_finite()) {
        return Err(SpectrogramError::NonFiniteSample {
            index,
            value: samples[index],
        });
    }
    let instants = samples.len() / values_per_instant;
    if instants < frame_len {
        return Err(SpectrogramError::TooShort {
            samples: instants,
            frame_len,
        });
    }
    let frames = (instants - frame_len) / hop + 1;
    let bins = analyser.bin_count();
    if frames.saturating_mul(bins) > MAX_SPECTRUM_CELLS {
        return Err(SpectrogramError::TooLarge {
            frames,
            bins,
            limit: MAX_SPECTRUM_CELLS,
        });
    }

    let mut power_db = Vec::with_capacity(frames * bins);
    let mut density = vec![0.0_f64; bins];
    for frame in 0..frames {
        let start = frame * hop * values_per_instant;
        let end = start + frame_len * values_per_instant;
        analyser.power_spectral_density(&samples[start..end], &mut density);
        power_db.extend(
            density
                .iter()
                .map(|&p| (10.0 * p.max(POWER_FLOOR_V2_PER_HZ).log10()) as f32),
        );
    }

    // The centre of samples 0..N−1 is (N−1)/2; sample n is at n/fs.
    let centre_offset = (frame_len as f64 - 1.0) / 2.0;
    let times_s = (0..frames)
        .map(|i| ((i * hop) as f64 + centre_offset) / sample_rate_hz)
        .collect();
    Ok(Spectrum {
        times_s,
        freqs_hz: analyser.bin_frequencies_hz(),
        power_db,
        sample_rate_hz,
        frame_len,
        hop,
        channels,
        duration_s: instants as f64 / sample_rate_hz,
    })
}

/// Periodic ("DFT-even") Hann window `w[n] = 0.5 − 0.5 cos(2πn/N)`, the form used for spectral
/// analysis because its N-point DFT has exactly three non-zero terms.
/// [Harris, "On the use of windows for harmonic analysis with the discrete Fourier transform",
/// Proc. IEEE 66(1), 1978, the DFT-even windows of §II]
pub(crate) fn periodic_hann(frame_len: usize) -> Vec<f64> {
    let n_f = frame_len as f64;
    (0..frame_len)
        .map(|n| 0.5 - 0.5 * (2.0 * std::f64::consts::PI * n as f64 / n_f).cos())
        .collect()
}

/// The transform of one frame; the plan and its buffers are made once and reused.
enum Transform {
    Real {
        fft: Arc<dyn RealToComplex<f64>>,
        input: Vec<f64>,
        output: Vec<Complex<f64>>,
        scratch: Vec<Complex<f64>>,
    },
    Quadrature {
        fft: Arc<dyn Fft<f64>>,
        buffer: Vec<Complex<f64>>,
        scratch: Vec<Complex<f64>>,
    },
}

/// Windowed power spectral density of single frames, with the FFT planned once.
pub(crate) struct FrameAnalyser {
    window: Vec<f64>,
    /// 1 / (fs · Σ w²): turns |X|² into a two-sided density in V²/Hz.
    density_scale: f64,
    sample_rate_hz: f64,
    transform: Transform,
}

impl FrameAnalyser {
    /// Plans the transform for `frame_len`-sample frames of the given kind.
    pub(crate) fn new(
        channels: Channels,
        frame_len: usize,
        sample_rate_hz: f64,
    ) -> Result<Self, SpectrogramError> {
        if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
            return Err(SpectrogramError::BadSampleRate { sample_rate_hz });
        }
        if frame_len < 2 {
            return Err(SpectrogramError::FrameTooShort { frame_len });
        }
        let window = periodic_hann(frame_len);
        let window_energy: f64 = window.iter().map(|w| w * w).sum();
        let transform = match channels {
            Channels::Real => {
                let fft = RealFftPlanner::<f64>::new().plan_fft_forward(frame_len);
                Transform::Real {
                    input: fft.make_input_vec(),
                    output: fft.make_output_vec(),
                    scratch: fft.make_scratch_vec(),
                    fft,
                }
            }
            Channels::Iq => {
                let fft = FftPlanner::<f64>::new().plan_fft_forward(frame_len);
                Transform::Quadrature {
                    buffer: vec![Complex::new(0.0, 0.0); frame_len],
                    scratch: vec![Complex::new(0.0, 0.0); fft.get_inplace_scratch_len()],
                    fft,
                }
            }
        };
        Ok(Self {
            window,
            density_scale: 1.0 / (sample_rate_hz * window_energy),
            sample_rate_hz,
            transform,
        })
    }

    fn frame_len(&self) -> usize {
        self.window.len()
    }

    /// Bins per frame: `N/2 + 1` for real input, `N` for I/Q.
    pub(crate) fn bin_count(&self) -> usize {
        match self.transform {
            Transform::Real { .. } => self.frame_len() / 2 + 1,
            Transform::Quadrature { .. } => self.frame_len(),
        }
    }

    /// Bin centre frequencies in Hz, ascending, in the order of [`Self::power_spectral_density`].
    pub(crate) fn bin_frequencies_hz(&self) -> Vec<f64> {
        let n = self.frame_len();
        let bin_width_hz = self.sample_rate_hz / n as f64;
        match self.transform {
            Transform::Real { .. } => (0..self.bin_count())
                .map(|k| k as f64 * bin_width_hz)
                .collect(),
            Transform::Quadrature { .. } => (0..n)
                .map(|j| (j as f64 - (n / 2) as f64) * bin_width_hz)
                .collect(),
        }
    }

    /// Density of one frame in V²/Hz. `frame` holds `frame_len` values (real) or `frame_len`
    /// interleaved I, Q pairs; `out` holds [`Self::bin_count`] values.
    pub(crate) fn power_spectral_density(&mut self, frame: &[f32], out: &mut [f64]) {
        let n = self.frame_len();
        let scale = self.density_scale;
        match &mut self.transform {
            Transform::Real {
                fft,
                input,
                output,
                scratch,
            } => {
                for ((slot, &x), &w) in input.iter_mut().zip(frame).zip(&self.window) {
                    *slot = f64::from(x) * w;
                }
                // The buffers were made by this plan, so their lengths always match.
                fft.process_with_scratch(input, output, scratch)
                    .expect("buffers come from the plan");
                for (k, (slot, x)) in out.iter_mut().zip(output.iter()).enumerate() {
                    // One-sided: fold the negative frequencies onto the positive ones. DC and,
                    // for even N, the Nyquist bin have no mirror image.
                    let has_mirror = k != 0 && 2 * k != n;
                    let fold = if has_mirror { 2.0 } else { 1.0 };
                    *slot = fold * scale * x.norm_sqr();
                }
            }
            Transform::Quadrature {
                fft,
                buffer,
                scratch,
            } => {
                for ((slot, pair), &w) in buffer
                    .iter_mut()
                    .zip(frame.chunks_exact(2))
                    .zip(&self.window)
                {
                    *slot = Complex::new(f64::from(pair[0]) * w, f64::from(pair[1]) * w);
                }
                fft.process_with_scratch(buffer, scratch);
                // Shift: output position j holds FFT bin (j − N/2) mod N, i.e. −fs/2 first.
                let negative_start = n - n / 2;
                for (j, slot) in out.iter_mut().enumerate().take(n) {
                    let bin = (j + negative_start) % n;
                    *slot = scale * buffer[bin].norm_sqr();
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// The slow, obvious DFT `X[k] = Σ x[n] e^{−j2πkn/N}` (the definition, Oppenheim & Schafer,
    /// Discrete-Time Signal Processing, 3rd ed., ch. 8, from memory), with the phase index
    /// reduced mod N so the twiddles stay exact for large k·n.
    fn naive_dft(x: &[Complex<f64>]) -> Vec<Complex<f64>> {
        let n = x.len();
        (0..n)
            .map(|k| {
                x.iter()
                    .enumerate()
                    .map(|(m, &v)| {
                        let phase = -2.0 * std::f64::consts::PI * ((k * m) % n) as f64 / n as f64;
                        v * Complex::new(phase.cos(), phase.sin())
                    })
                    .sum()
            })
            .collect()
    }

    /// The density the definition gives for one frame, in the analyser's bin order.
    fn naive_density(frame: &[f32], channels: Channels, fs: f64) -> Vec<f64> {
        let n = match channels {
            Channels::Real => frame.len(),
            Channels::Iq => frame.len() / 2,
        };
        let w = periodic_hann(n);
        let energy: f64 = w.iter().map(|v| v * v).sum();
        let z: Vec<Complex<f64>> = match channels {
            Channels::Real => frame
                .iter()
                .zip(&w)
                .map(|(&x, &w)| Complex::new(f64::from(x) * w, 0.0))
                .collect(),
            Channels::Iq => frame
                .chunks_exact(2)
                .zip(&w)
                .map(|(p, &w)| Complex::new(f64::from(p[0]) * w, f64::from(p[1]) * w))
                .collect(),
        };
        let spectrum = naive_dft(&z);
        let two_sided: Vec<f64> = spectrum
            .iter()
            .map(|x| x.norm_sqr() / (fs * energy))
            .collect();
        match channels {
            // One-sided from the definition: add the mirror bin N−k instead of doubling, so the
            // fold itself is checked too.
            Channels::Real => (0..=n / 2)
                .map(|k| {
                    if k == 0 || 2 * k == n {
                        two_sided[k]
                    } else {
                        two_sided[k] + two_sided[n - k]
                    }
                })
                .collect(),
            Channels::Iq => (0..n)
                .map(|j| two_sided[(j as isize - (n / 2) as isize).rem_euclid(n as isize) as usize])
                .collect(),
        }
    }

    fn random_frame(rng: &mut ChaCha8Rng, values: usize) -> Vec<f32> {
        (0..values)
            .map(|_| rng.random_range(-1.0_f32..1.0))
            .collect()
    }

    #[test]
    fn density_matches_naive_dft_on_random_input() {
        let mut rng = ChaCha8Rng::from_seed([7; 32]);
        let fs = 2000.0;
        // Powers of two, a prime and an odd composite, so every FFT algorithm path is covered.
        for &n in &[2usize, 16, 64, 97, 255, 256] {
            for channels in [Channels::Real, Channels::Iq] {
                let mut analyser = FrameAnalyser::new(channels, n, fs).unwrap();
                let frame = random_frame(&mut rng, n * channels.count());
                let mut fast = vec![0.0; analyser.bin_count()];
                analyser.power_spectral_density(&frame, &mut fast);
                let slow = naive_density(&frame, channels, fs);
                assert_eq!(fast.len(), slow.len());
                for (k, (&a, &b)) in fast.iter().zip(&slow).enumerate() {
                    let relative = (a - b).abs() / b.abs().max(f64::MIN_POSITIVE);
                    assert!(
                        relative < 1e-9,
                        "N={n} {channels} bin {k}: fft {a:e} naive {b:e} (rel {relative:e})"
                    );
                }
            }
        }
    }

    #[test]
    fn density_obeys_parseval() {
        // Parseval's relation for the DFT, Σ|X[k]|² = N Σ|x[n]|² (Oppenheim & Schafer,
        // Discrete-Time Signal Processing, 3rd ed., ch. 8, from memory): with the density scaling
        // used here, Σ P[k]·(fs/N) equals the window-weighted mean square Σ|w x|² / Σ w².
        let mut rng = ChaCha8Rng::from_seed([11; 32]);
        let fs = 1000.0;
        for &n in &[64usize, 63] {
            for channels in [Channels::Real, Channels::Iq] {
                let mut analyser = FrameAnalyser::new(channels, n, fs).unwrap();
                let frame = random_frame(&mut rng, n * channels.count());
                let mut density = vec![0.0; analyser.bin_count()];
                analyser.power_spectral_density(&frame, &mut density);
                let integral: f64 = density.iter().sum::<f64>() * fs / n as f64;
                let w = periodic_hann(n);
                let weighted: f64 = frame
                    .chunks_exact(channels.count())
                    .zip(&w)
                    .map(|(v, &w)| v.iter().map(|&x| (f64::from(x) * w).powi(2)).sum::<f64>())
                    .sum();
                let mean_square = weighted / w.iter().map(|v| v * v).sum::<f64>();
                assert!(
                    (integral - mean_square).abs() < 1e-12 * mean_square,
                    "N={n} {channels}: {integral} vs {mean_square}"
                );
            }
        }
    }

    #[test]
    fn hann_window_coherent_gain_and_bandwidth() {
        // Harris 1978, Table 1, Hanning: coherent gain 0.50, equivalent noise bandwidth 1.50 bins.
        let w = periodic_hann(256);
        let sum: f64 = w.iter().sum();
        let energy: f64 = w.iter().map(|v| v * v).sum();
        assert!((sum / 256.0 - 0.5).abs() < 1e-12);
        assert!((256.0 * energy / (sum * sum) - 1.5).abs() < 1e-12);
        assert_eq!(w[0], 0.0);
        assert!((w[128] - 1.0).abs() < 1e-15);
    }
}
