//! Test helpers: Welch PSD estimate, band averages, block-size invariance.
#![allow(dead_code)]

use echobench_noise::AdditiveNoise;
use rustfft::{num_complex::Complex, FftPlanner};
use std::f64::consts::PI;

/// One-sided PSD by Welch's method (Welch, IEEE Trans. Audio Electroacoust.
/// AU-15(2), 1967): Hann-windowed segments of `segment_len`, 50 % overlap,
/// density scaling 2|X|²/(f_s Σw²). Returns (frequencies, PSD in V²/Hz).
pub fn welch_psd(signal: &[f64], sample_rate_hz: f64, segment_len: usize) -> (Vec<f64>, Vec<f64>) {
    let window: Vec<f64> = (0..segment_len)
        .map(|n| 0.5 - 0.5 * (2.0 * PI * n as f64 / segment_len as f64).cos())
        .collect();
    let window_power: f64 = window.iter().map(|w| w * w).sum();
    let fft = FftPlanner::<f64>::new().plan_fft_forward(segment_len);
    let bins = segment_len / 2 + 1;
    let mut accumulated = vec![0.0; bins];
    let mut buffer = vec![Complex::new(0.0, 0.0); segment_len];
    let step = segment_len / 2;
    let mut segments = 0usize;
    let mut start = 0;
    while start + segment_len <= signal.len() {
        let segment = &signal[start..start + segment_len];
        let mean = segment.iter().sum::<f64>() / segment_len as f64;
        for ((slot, x), w) in buffer.iter_mut().zip(segment).zip(&window) {
            *slot = Complex::new((x - mean) * w, 0.0);
        }
        fft.process(&mut buffer);
        for (acc, x) in accumulated.iter_mut().zip(&buffer) {
            *acc += x.norm_sqr();
        }
        segments += 1;
        start += step;
    }
    let scale = 2.0 / (sample_rate_hz * window_power * segments as f64);
    let psd: Vec<f64> = accumulated.iter().map(|p| p * scale).collect();
    let freqs: Vec<f64> = (0..bins)
        .map(|k| k as f64 * sample_rate_hz / segment_len as f64)
        .collect();
    (freqs, psd)
}

/// Mean PSD over the bins with low ≤ f < high.
pub fn band_mean(freqs: &[f64], psd: &[f64], low_hz: f64, high_hz: f64) -> f64 {
    let values: Vec<f64> = freqs
        .iter()
        .zip(psd)
        .filter(|(f, _)| **f >= low_hz && **f < high_hz)
        .map(|(_, p)| *p)
        .collect();
    assert!(!values.is_empty(), "no bins in [{low_hz}, {high_hz})");
    values.iter().sum::<f64>() / values.len() as f64
}

/// Runs a generator over `total` samples in blocks of `block_len`.
pub fn run_in_blocks(source: &mut dyn AdditiveNoise, total: usize, block_len: usize) -> Vec<f64> {
    let mut out = vec![0.0; total];
    for chunk in out.chunks_mut(block_len) {
        source.add_to(chunk);
    }
    out
}

/// Asserts that blocks of 1, 7 and 4096 samples give bit-identical output.
pub fn assert_block_invariant(make: impl Fn() -> Box<dyn AdditiveNoise>, total: usize) {
    let reference = run_in_blocks(make().as_mut(), total, 4096);
    assert!(
        reference.iter().any(|v| *v != 0.0),
        "generator produced only zeros"
    );
    for block_len in [1, 7] {
        let other = run_in_blocks(make().as_mut(), total, block_len);
        for (i, (a, b)) in reference.iter().zip(&other).enumerate() {
            assert_eq!(
                a.to_bits(),
                b.to_bits(),
                "block {block_len}: sample {i} differs"
            );
        }
    }
}

/// Amplitude of the component at exactly `f_hz` by least-squares projection on
/// cos and sin (the signal must span many periods).
pub fn tone_amplitude(signal: &[f64], sample_rate_hz: f64, f_hz: f64) -> f64 {
    let (mut c, mut s) = (0.0, 0.0);
    for (n, x) in signal.iter().enumerate() {
        let phase = 2.0 * PI * f_hz * n as f64 / sample_rate_hz;
        c += x * phase.cos();
        s += x * phase.sin();
    }
    2.0 * (c * c + s * s).sqrt() / signal.len() as f64
}
