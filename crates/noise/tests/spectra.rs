//! PSD checks of the white and flicker generators
//! (docs/reference/front-end-and-noise.md#f1 and #f2).

mod support;

use echobench_noise::{
    kasdin_taps, FlickerNoise, FlickerParams, WhiteNoise, DEFAULT_FLICKER_LOWEST_HZ,
};
use support::{band_mean, run_in_blocks, welch_psd};

/// White noise of one-sided density d has a flat Welch PSD of d² V²/Hz
/// (definition of a one-sided density; Welch 1967 estimator) and variance d²·f_s/2.
#[test]
fn white_noise_level_matches_density() {
    for fs in [2000.0, 16_000.0] {
        let density = 3e-6;
        let mut white = WhiteNoise::new(density, fs, [fs as u8; 32]).unwrap();
        let signal = run_in_blocks(&mut white, 1 << 18, 4096);
        let (freqs, psd) = welch_psd(&signal, fs, 1024);
        let level = band_mean(&freqs, &psd, 0.01 * fs, 0.49 * fs);
        let ratio = level / (density * density);
        assert!((ratio - 1.0).abs() < 0.03, "fs {fs}: PSD / d² = {ratio}");
        // Flat: the lower and upper quarters of the band agree.
        let low = band_mean(&freqs, &psd, 0.01 * fs, 0.125 * fs);
        let high = band_mean(&freqs, &psd, 0.375 * fs, 0.49 * fs);
        assert!(
            (low / high - 1.0).abs() < 0.05,
            "fs {fs}: not flat {low} vs {high}"
        );
        let variance = signal.iter().map(|x| x * x).sum::<f64>() / signal.len() as f64;
        let expected = density * density * fs / 2.0;
        assert!((variance / expected - 1.0).abs() < 0.02);
    }
}

fn flicker_signal(fs: f64, corner_hz: f64, density: f64, seconds: f64, seed: u8) -> Vec<f64> {
    let params = FlickerParams {
        white_density_v_per_rt_hz: density,
        corner_hz,
        lowest_hz: DEFAULT_FLICKER_LOWEST_HZ,
    };
    let mut flicker = FlickerNoise::new(&params, fs, [seed; 32]).unwrap();
    run_in_blocks(&mut flicker, (fs * seconds) as usize, 4096)
}

/// Log-spaced band centres and band-mean PSDs between `low_hz` and `high_hz`.
fn log_bands(
    freqs: &[f64],
    psd: &[f64],
    low_hz: f64,
    high_hz: f64,
    per_decade: usize,
) -> Vec<(f64, f64)> {
    let count = ((high_hz / low_hz).log10() * per_decade as f64).round() as usize;
    (0..count)
        .map(|i| {
            let a = low_hz * 10f64.powf(i as f64 / per_decade as f64);
            let b = low_hz * 10f64.powf((i + 1) as f64 / per_decade as f64);
            ((a * b).sqrt(), band_mean(freqs, psd, a, b))
        })
        .collect()
}

/// Least-squares slope of ln PSD against ln f.
fn log_log_slope(bands: &[(f64, f64)]) -> f64 {
    let n = bands.len() as f64;
    let xs: Vec<f64> = bands.iter().map(|(f, _)| f.ln()).collect();
    let ys: Vec<f64> = bands.iter().map(|(_, p)| p.ln()).collect();
    let mx = xs.iter().sum::<f64>() / n;
    let my = ys.iter().sum::<f64>() / n;
    let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
    let sxx: f64 = xs.iter().map(|x| (x - mx) * (x - mx)).sum();
    sxy / sxx
}

/// Flicker PSD S_w·f_c/f: log-log slope −1 ± 0.15 below the corner
/// (docs/reference/front-end-and-noise.md#f2, Kasdin 1995 for the 1/f^α form with α = 1).
#[test]
fn flicker_slope_is_minus_one_below_corner() {
    let fs = 4000.0;
    let signal = flicker_signal(fs, 100.0, 2e-6, 300.0, 21);
    let (freqs, psd) = welch_psd(&signal, fs, 16_384);
    let bands = log_bands(&freqs, &psd, 1.0, 100.0, 5);
    let slope = log_log_slope(&bands);
    assert!((slope + 1.0).abs() < 0.15, "slope {slope}");
}

/// The flicker PSD crosses the white level S_w at f_c (±20 %), and white plus
/// flicker follows S_w·(1 + f_c/f) (docs/reference/front-end-and-noise.md#f2).
#[test]
fn flicker_meets_white_at_the_corner() {
    let fs = 4000.0;
    let density = 2e-6;
    let corner_hz = 100.0;
    let seconds = 300.0;
    let flicker = flicker_signal(fs, corner_hz, density, seconds, 22);
    let mut white_source = WhiteNoise::new(density, fs, [23; 32]).unwrap();
    let white = run_in_blocks(&mut white_source, flicker.len(), 4096);
    let (freqs, flicker_psd) = welch_psd(&flicker, fs, 16_384);
    let (_, white_psd) = welch_psd(&white, fs, 16_384);
    let flicker_bands = log_bands(&freqs, &flicker_psd, 20.0, 500.0, 10);
    let white_bands = log_bands(&freqs, &white_psd, 20.0, 500.0, 10);
    // Ratio flicker/white per band; find where it crosses 1, interpolating in log-log.
    let ratios: Vec<(f64, f64)> = flicker_bands
        .iter()
        .zip(&white_bands)
        .map(|((f, p), (_, w))| (*f, p / w))
        .collect();
    let crossing = ratios
        .windows(2)
        .find(|pair| pair[0].1 >= 1.0 && pair[1].1 < 1.0)
        .map(|pair| {
            let (f0, r0) = (pair[0].0.ln(), pair[0].1.ln());
            let (f1, r1) = (pair[1].0.ln(), pair[1].1.ln());
            (f0 + (0.0 - r0) * (f1 - f0) / (r1 - r0)).exp()
        })
        .expect("flicker never crosses the white level");
    assert!(
        (crossing / corner_hz - 1.0).abs() < 0.2,
        "measured corner {crossing} Hz"
    );

    let total: Vec<f64> = flicker.iter().zip(&white).map(|(a, b)| a + b).collect();
    let (freqs, total_psd) = welch_psd(&total, fs, 16_384);
    // The expectation is the band mean of S_w·(1 + f_c/f) over the same bins:
    // over a third of a decade the mean of 1/f lies 2.4 % (3.6 % on the bins of
    // the 2–4.3 Hz band) below its value at the geometric centre, which would
    // otherwise eat half of the tolerance. The rest is estimator variance.
    let target: Vec<f64> = freqs
        .iter()
        .map(|f| density * density * (1.0 + corner_hz / f))
        .collect();
    let expected_bands = log_bands(&freqs, &target, 2.0, 1000.0, 3);
    let measured_bands = log_bands(&freqs, &total_psd, 2.0, 1000.0, 3);
    for ((centre_hz, measured), (_, expected)) in measured_bands.iter().zip(&expected_bands) {
        assert!(
            (measured / expected - 1.0).abs() < 0.08,
            "{centre_hz} Hz: measured {measured}, expected {expected}"
        );
    }
}

/// docs/reference/check-values.md#pc26: Kasdin's α = 1 taps 1, 0.5, 0.375, 0.3125, 0.2734375
/// (Kasdin, Proc. IEEE 83(5), 1995; values computed there).
#[test]
fn kasdin_taps_match_check_26() {
    let taps = kasdin_taps(1.0, 5).unwrap();
    let expected = [1.0, 0.5, 0.375, 0.3125, 0.2734375];
    for (tap, want) in taps.iter().zip(expected) {
        assert!((tap - want).abs() < 1e-15, "{tap} vs {want}");
    }
    // α = 2 is a random walk (all ones), α = 0 white noise (a unit impulse):
    // the limits of the same recursion (Kasdin 1995).
    assert!(kasdin_taps(2.0, 6).unwrap().iter().all(|&t| t == 1.0));
    assert_eq!(kasdin_taps(0.0, 3).unwrap(), vec![1.0, 0.0, 0.0]);
    assert!(kasdin_taps(f64::NAN, 3).is_err());
    assert!(kasdin_taps(2.5, 3).is_err());
}

/// Kasdin's filter applied to white noise gives the same 1/f slope as the
/// section design, a cross-check of the method by an independent one.
#[test]
fn kasdin_filter_slope_agrees() {
    let fs = 1000.0;
    let taps = kasdin_taps(1.0, 4096).unwrap();
    let mut white = WhiteNoise::new(1.0, fs, [31; 32]).unwrap();
    let input = run_in_blocks(&mut white, 1 << 17, 4096);
    let output: Vec<f64> = (taps.len()..input.len())
        .map(|n| taps.iter().enumerate().map(|(k, h)| h * input[n - k]).sum())
        .collect();
    let (freqs, psd) = welch_psd(&output, fs, 4096);
    let slope = log_log_slope(&log_bands(&freqs, &psd, 2.0, 100.0, 5));
    assert!((slope + 1.0).abs() < 0.15, "Kasdin slope {slope}");
}
