//! The short-time spectrum against the physics of tones and noise.

use echobench_spectrogram::{short_time_spectrum, Channels, SpectrogramError, Spectrum};
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use std::f64::consts::PI;

fn real_tone(frequency_hz: f64, amplitude: f64, fs: f64, samples: usize) -> Vec<f32> {
    (0..samples)
        .map(|n| (amplitude * (2.0 * PI * frequency_hz * n as f64 / fs + 0.3).cos()) as f32)
        .collect()
}

/// `A e^{j2πft}` as interleaved I, Q: a positive `frequency_hz` turns counter-clockwise.
fn complex_tone(frequency_hz: f64, amplitude: f64, fs: f64, samples: usize) -> Vec<f32> {
    (0..samples)
        .flat_map(|n| {
            let phase = 2.0 * PI * frequency_hz * n as f64 / fs + 0.3;
            [
                (amplitude * phase.cos()) as f32,
                (amplitude * phase.sin()) as f32,
            ]
        })
        .collect()
}

fn peak_bin(spectrum: &Spectrum, frame: usize) -> usize {
    let row = spectrum.frame_db(frame).unwrap();
    (0..row.len())
        .max_by(|&a, &b| row[a].total_cmp(&row[b]))
        .unwrap()
}

#[test]
fn real_tone_lands_in_its_bin_in_every_frame() {
    let fs = 2000.0;
    let n = 256;
    let bin_width = fs / n as f64;
    // On a bin centre, and between bins (nearest bin wins).
    for (frequency_hz, expected_bin) in [
        (37.0 * bin_width, 37),
        (37.3 * bin_width, 37),
        (80.7 * bin_width, 81),
        (3.0 * bin_width, 3),
    ] {
        let samples = real_tone(frequency_hz, 0.5, fs, 4000);
        let spectrum = short_time_spectrum(&samples, Channels::Real, fs, n, 64).unwrap();
        assert_eq!(spectrum.bin_count(), n / 2 + 1);
        for frame in 0..spectrum.frame_count() {
            assert_eq!(
                peak_bin(&spectrum, frame),
                expected_bin,
                "{frequency_hz} Hz"
            );
        }
        assert!((spectrum.freqs_hz[expected_bin] - expected_bin as f64 * bin_width).abs() < 1e-9);
    }
}

#[test]
fn bin_centred_tone_peak_density_follows_hann_noise_bandwidth() {
    // Harris 1978, Table 1 (Hanning): equivalent noise bandwidth 1.50 bins. A tone of power
    // A²/2 centred on a bin therefore reads A²/2 / (1.5 · fs/N) V²/Hz in that bin.
    let (fs, n, amplitude) = (1000.0, 128, 0.8);
    let samples = real_tone(20.0 * fs / n as f64, amplitude, fs, 1024);
    let spectrum = short_time_spectrum(&samples, Channels::Real, fs, n, 32).unwrap();
    let expected_db = 10.0 * ((amplitude * amplitude / 2.0) / (1.5 * fs / n as f64)).log10();
    for frame in 0..spectrum.frame_count() {
        let peak = spectrum.frame_db(frame).unwrap()[20];
        assert!(
            (f64::from(peak) - expected_db).abs() < 1e-3,
            "{peak} vs {expected_db}"
        );
    }
}

#[test]
fn iq_separates_positive_and_negative_doppler() {
    let fs = 2000.0;
    let n = 256;
    let bin_width = fs / n as f64;
    for sign in [1.0, -1.0] {
        let frequency_hz = sign * 25.0 * bin_width;
        let samples = complex_tone(frequency_hz, 0.5, fs, 3000);
        let spectrum = short_time_spectrum(&samples, Channels::Iq, fs, n, 64).unwrap();
        assert_eq!(spectrum.bin_count(), n);
        assert_eq!(spectrum.freqs_hz[0], -fs / 2.0);
        assert_eq!(spectrum.freqs_hz[n / 2], 0.0);
        for frame in 0..spectrum.frame_count() {
            let peak = peak_bin(&spectrum, frame);
            assert!(
                (spectrum.freqs_hz[peak] - frequency_hz).abs() < 1e-9,
                "frame {frame}: peak at {} Hz, tone at {frequency_hz} Hz",
                spectrum.freqs_hz[peak]
            );
            // The mirror frequency holds only rounding noise: a bin-centred tone leaks into
            // the neighbouring bins of a periodic Hann window and nowhere else (Harris 1978).
            let mirror = spectrum
                .freqs_hz
                .iter()
                .position(|&f| (f + frequency_hz).abs() < 1e-9)
                .unwrap();
            let row = spectrum.frame_db(frame).unwrap();
            assert!(
                row[peak] - row[mirror] > 120.0,
                "peak {} dB, mirror {} dB",
                row[peak],
                row[mirror]
            );
        }
    }
}

#[test]
fn real_input_cannot_tell_approach_from_recession() {
    // A single-channel mixer outputs Re{z}: the spectra of ±f_d are identical
    // (docs/reference/radar-physics.md#r2, after Droitcour et al. 2004).
    let fs = 1000.0;
    let approaching: Vec<f32> = complex_tone(70.0, 1.0, fs, 2000)
        .iter()
        .step_by(2)
        .copied()
        .collect();
    let receding: Vec<f32> = complex_tone(-70.0, 1.0, fs, 2000)
        .iter()
        .step_by(2)
        .copied()
        .collect();
    let a = short_time_spectrum(&approaching, Channels::Real, fs, 200, 50).unwrap();
    let b = short_time_spectrum(&receding, Channels::Real, fs, 200, 50).unwrap();
    let linear = |db: &f32| 10f64.powf(f64::from(*db) / 10.0);
    let peak = a.power_db.iter().map(linear).fold(0.0, f64::max);
    for (x, y) in a.power_db.iter().zip(&b.power_db) {
        assert!(
            (linear(x) - linear(y)).abs() < 1e-6 * peak,
            "{x} dB vs {y} dB"
        );
    }
}

#[test]
fn white_noise_density_level() {
    // White noise of variance σ² has a two-sided density σ²/fs; the Hann-weighted periodogram is
    // unbiased for it (E|X[k]|² = σ² Σw²), and the one-sided density is twice that
    // (Oppenheim & Schafer, Discrete-Time Signal Processing, 3rd ed., ch. 10, from memory).
    let fs = 2000.0;
    let sigma = 0.1;
    let mut rng = ChaCha8Rng::from_seed([3; 32]);
    let normal = Normal::new(0.0, sigma).unwrap();
    for channels in [Channels::Real, Channels::Iq] {
        let values = 40_000 * channels.count();
        let samples: Vec<f32> = (0..values)
            .map(|_| normal.sample(&mut rng) as f32)
            .collect();
        let spectrum = short_time_spectrum(&samples, channels, fs, 256, 128).unwrap();
        let bins = spectrum.bin_count();
        // Interior bins only: DC and Nyquist of a real spectrum are not folded.
        let mut total = 0.0;
        let mut count = 0usize;
        for frame in 0..spectrum.frame_count() {
            let row = spectrum.frame_db(frame).unwrap();
            for &value in &row[1..bins - 1] {
                total += 10f64.powf(f64::from(value) / 10.0);
                count += 1;
            }
        }
        let mean = total / count as f64;
        // Real: one-sided 2σ²/fs. I/Q: I and Q each of variance σ², so E|z|² = 2σ² and the
        // two-sided density is 2σ²/fs too.
        let expected = 2.0 * sigma * sigma / fs;
        // ~40 000 nearly independent cells: the relative standard error is below 1 %.
        assert!(
            (mean / expected - 1.0).abs() < 0.03,
            "{channels}: mean {mean:e} vs {expected:e}"
        );
    }
}

#[test]
fn frames_and_time_axis() {
    let fs = 500.0;
    let samples = vec![0.0_f32; 1000];
    let spectrum = short_time_spectrum(&samples, Channels::Real, fs, 100, 30).unwrap();
    // Whole frames only: starts 0, 30, …, 900.
    assert_eq!(spectrum.frame_count(), (1000 - 100) / 30 + 1);
    assert_eq!(spectrum.frame_count(), 31);
    assert!((spectrum.times_s[0] - 49.5 / fs).abs() < 1e-12);
    assert!((spectrum.times_s[30] - (900.0 + 49.5) / fs).abs() < 1e-12);
    assert!((spectrum.duration_s - 2.0).abs() < 1e-12);
    assert_eq!(spectrum.power_db.len(), 31 * 51);
    // Silence maps to the floor, not to −∞.
    assert!(spectrum.power_db.iter().all(|&v| v == -300.0));
}

#[test]
fn bad_input_is_refused_not_panicked_on() {
    let fs = 1000.0;
    let good = vec![0.1_f32; 512];
    let mut with_nan = good.clone();
    with_nan[77] = f32::NAN;
    assert!(matches!(
        short_time_spectrum(&with_nan, Channels::Real, fs, 64, 16),
        Err(SpectrogramError::NonFiniteSample { index: 77, .. })
    ));
    assert!(matches!(
        short_time_spectrum(&good[..511], Channels::Iq, fs, 64, 16),
        Err(SpectrogramError::OddIqLength { values: 511 })
    ));
    assert!(matches!(
        short_time_spectrum(&good, Channels::Iq, fs, 300, 16),
        Err(SpectrogramError::TooShort {
            samples: 256,
            frame_len: 300
        })
    ));
    assert!(matches!(
        short_time_spectrum(&good, Channels::Real, fs, 64, 0),
        Err(SpectrogramError::ZeroHop)
    ));
    assert!(matches!(
        short_time_spectrum(&good, Channels::Real, fs, 1, 1),
        Err(SpectrogramError::FrameTooShort { frame_len: 1 })
    ));
    for bad_rate in [0.0, -1.0, f64::NAN, f64::INFINITY] {
        assert!(matches!(
            short_time_spectrum(&good, Channels::Real, bad_rate, 64, 16),
            Err(SpectrogramError::BadSampleRate { .. })
        ));
    }
}
