//! The streaming resampler: block-size invariance, delay compensation, and
//! its pass band and stop band measured with pure tones against the design
//! figures (resample.rs module doc: rubato 5.1's cutoff placement and the
//! 4-term Blackman-Harris window of Harris 1978).

use echobench_capture::resample::{BLACKMAN_HARRIS_SIDELOBE_DB, MIN_BLOCK_FRAMES};
use echobench_capture::{ResampleError, Resampler};
use echobench_core::Channels;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::f64::consts::PI;

fn tone(freq_hz: f64, rate_hz: f64, frames: usize, phase: f64) -> Vec<f32> {
    (0..frames)
        .map(|n| (2.0 * PI * freq_hz * n as f64 / rate_hz + phase).sin() as f32)
        .collect()
}

fn resample_in_blocks(resampler: &mut Resampler, input: &[f32], blocks: &[usize]) -> Vec<f32> {
    let mut out = Vec::new();
    let mut at = 0;
    let mut k = 0;
    while at < input.len() {
        let n = blocks[k % blocks.len()].min(input.len() - at);
        resampler.process(&input[at..at + n], &mut out).unwrap();
        at += n;
        k += 1;
    }
    resampler.finish(&mut out).unwrap();
    out
}

/// Least-squares amplitude and phase of a tone at `freq_hz` in `y[from..to]`
/// (sampled at `rate_hz`): fits `a·sin + b·cos`.
fn fit_tone(y: &[f32], rate_hz: f64, freq_hz: f64, from: usize, to: usize) -> (f64, f64) {
    let (mut ss, mut sc, mut cc, mut ys, mut yc) = (0.0, 0.0, 0.0, 0.0, 0.0);
    for (n, &v) in y.iter().enumerate().take(to).skip(from) {
        let w = 2.0 * PI * freq_hz * n as f64 / rate_hz;
        let (s, c) = w.sin_cos();
        let v = f64::from(v);
        ss += s * s;
        sc += s * c;
        cc += c * c;
        ys += v * s;
        yc += v * c;
    }
    let det = ss * cc - sc * sc;
    let a = (ys * cc - yc * sc) / det;
    let b = (yc * ss - ys * sc) / det;
    (a.hypot(b), b.atan2(a))
}

fn rms(y: &[f32]) -> f64 {
    (y.iter().map(|&v| f64::from(v).powi(2)).sum::<f64>() / y.len() as f64).sqrt()
}

#[test]
fn output_is_bit_identical_whatever_the_block_sizes() {
    let mut rng = ChaCha8Rng::from_seed([5; 32]);
    for (from, to, channels) in [
        (2000, 1000, Channels::Real),
        (44_100, 2000, Channels::Iq),
        (1000, 2500, Channels::Iq),
    ] {
        let values = 2 * from as usize * channels.count() + 333;
        let input: Vec<f32> = (0..values).map(|_| rng.random_range(-1.0..1.0)).collect();
        let mut reference_resampler = Resampler::new(from, to, channels).unwrap();
        let reference = resample_in_blocks(&mut reference_resampler, &input, &[input.len()]);
        let frames_in = (values / channels.count()) as u64;
        assert_eq!(
            reference.len() as u64,
            channels.count() as u64 * (frames_in * u64::from(to)).div_ceil(u64::from(from)),
            "{from} → {to}: ceil(frames · to / from) frames out"
        );
        let random: Vec<usize> = (0..50).map(|_| rng.random_range(1..3000)).collect();
        for blocks in [vec![1usize], vec![7], vec![256], random] {
            let mut resampler = Resampler::new(from, to, channels).unwrap();
            let out = resample_in_blocks(&mut resampler, &input, &blocks);
            let same = out.len() == reference.len()
                && out
                    .iter()
                    .zip(&reference)
                    .all(|(a, b)| a.to_bits() == b.to_bits());
            assert!(same, "{from} → {to}, blocks {:?}...", &blocks[..1]);
        }
        // Reset gives a fresh stream: the same output again.
        reference_resampler.reset();
        let again = resample_in_blocks(&mut reference_resampler, &input, &[999]);
        assert!(again
            .iter()
            .zip(&reference)
            .all(|(a, b)| a.to_bits() == b.to_bits()));
    }
}

#[test]
fn the_delay_is_compensated_output_n_is_input_time_n_over_rate_out() {
    // A pass-band tone: each output sample must equal the tone at t = n / rate_out.
    for (from, to, freq_hz) in [
        (2000u32, 1000u32, 123.4),
        (44_100, 2000, 301.7),
        (1000, 2500, 77.7),
    ] {
        let mut resampler = Resampler::new(from, to, Channels::Real).unwrap();
        let design = resampler.design();
        let frames = 4 * from as usize;
        let input = tone(freq_hz, f64::from(from), frames, 0.3);
        let out = resample_in_blocks(&mut resampler, &input, &[1000]);
        let edge = 2 * design
            .block_out_frames
            .max(design.block_in_frames * to as usize / from as usize);
        let mut worst = 0.0f64;
        for (n, &v) in out.iter().enumerate().take(out.len() - edge).skip(edge) {
            let want = (2.0 * PI * freq_hz * n as f64 / f64::from(to) + 0.3).sin();
            worst = worst.max((f64::from(v) - want).abs());
        }
        // Ripple 10^(−92/20) ≈ 2.5e-5 plus f32 rounding: 1e-4 leaves room, and a
        // one-sample misalignment would give errors of 2π·f/rate ≈ 0.4.
        assert!(worst < 1e-4, "{from} → {to}: worst error {worst}");
    }
}

#[test]
fn iq_channels_are_resampled_independently() {
    let (from, to) = (2000u32, 1000u32);
    let frames = 8000;
    let i = tone(50.0, 2000.0, frames, 0.0);
    let q = tone(170.0, 2000.0, frames, 1.0);
    let interleaved: Vec<f32> = i.iter().zip(&q).flat_map(|(a, b)| [*a, *b]).collect();
    let mut iq = Resampler::new(from, to, Channels::Iq).unwrap();
    let out = resample_in_blocks(&mut iq, &interleaved, &[333]);
    let mut real = Resampler::new(from, to, Channels::Real).unwrap();
    let out_i = resample_in_blocks(&mut real, &i, &[333]);
    real.reset();
    let out_q = resample_in_blocks(&mut real, &q, &[333]);
    let got_i: Vec<f32> = out.iter().step_by(2).copied().collect();
    let got_q: Vec<f32> = out.iter().skip(1).step_by(2).copied().collect();
    assert_eq!(got_i, out_i);
    assert_eq!(got_q, out_q);
}

/// Pass-band gain and stop-band rejection for one rate pair, against the design.
fn check_band(from: u32, to: u32, passband_hz: &[f64], stopband_hz: &[f64]) {
    let mut resampler = Resampler::new(from, to, Channels::Real).unwrap();
    let design = resampler.design();
    let lower_nyquist = 0.5 * f64::from(from.min(to));
    assert!(
        design.block_in_frames >= MIN_BLOCK_FRAMES && design.block_out_frames >= MIN_BLOCK_FRAMES
    );
    // rubato places the windowed sinc's cutoff so that its first null (cutoff
    // plus the main-lobe half width, 4 bins of rate_in / N) is at the lower
    // Nyquist frequency: check that placement within a tenth of a bin.
    let bin_hz = f64::from(from) / design.block_in_frames as f64;
    assert!(
        (design.cutoff_hz + 4.0 * bin_hz - lower_nyquist).abs() < 0.1 * bin_hz,
        "{from} → {to}: cutoff {} Hz, bin {bin_hz} Hz",
        design.cutoff_hz
    );
    assert!(design.passband_edge_hz >= 0.968 * lower_nyquist);
    let frames = 3 * from as usize;
    let margin = 2 * design.block_out_frames;
    for &f in passband_hz {
        assert!(
            f <= design.passband_edge_hz,
            "test tone {f} Hz is not in the pass band"
        );
        resampler.reset();
        let out = resample_in_blocks(
            &mut resampler,
            &tone(f, f64::from(from), frames, 0.0),
            &[4096],
        );
        let (amplitude, _) = fit_tone(&out, f64::from(to), f, margin, out.len() - margin);
        let gain_db = 20.0 * amplitude.log10();
        // Windowed-sinc pass-band ripple equals its stop-band ripple: 10^(−92/20)
        // → ±0.0002 dB; 0.001 dB allows for the fit.
        assert!(
            gain_db.abs() < 1e-3,
            "{from} → {to}: {f} Hz gain {gain_db} dB"
        );
    }
    for &f in stopband_hz {
        assert!(f > design.stopband_edge_hz && f < 0.5 * f64::from(from));
        resampler.reset();
        let out = resample_in_blocks(
            &mut resampler,
            &tone(f, f64::from(from), frames, 0.0),
            &[4096],
        );
        // Whatever is left is the alias; its level relative to the input tone
        // (RMS of a unit sine is 1/√2).
        let level_db = 20.0 * (rms(&out[margin..out.len() - margin]) * 2f64.sqrt()).log10();
        assert!(
            level_db <= BLACKMAN_HARRIS_SIDELOBE_DB,
            "{from} → {to}: {f} Hz leaks at {level_db} dB"
        );
    }
}

#[test]
fn halving_2khz_to_1khz_meets_the_pass_band_and_stop_band_figures() {
    // Lower Nyquist 500 Hz; pass-band edge 500 − 8·2000/1024 = 484.4 Hz.
    check_band(
        2000,
        1000,
        &[10.0, 100.0, 250.0, 400.0, 470.0, 484.0],
        &[501.0, 505.0, 520.0, 600.0, 750.0, 900.0, 990.0],
    );
}

#[test]
fn audio_rate_44k1_to_2khz_meets_the_pass_band_and_stop_band_figures() {
    // Lower Nyquist 1000 Hz; pass-band edge 1000 − 8·44100/11466 = 969.2 Hz.
    check_band(
        44_100,
        2000,
        &[20.0, 300.0, 700.0, 950.0, 969.0],
        &[
            1001.0, 1010.0, 1100.0, 1500.0, 3000.0, 8000.0, 15_000.0, 21_900.0,
        ],
    );
}

#[test]
fn equal_rates_pass_through_and_bad_rates_are_refused() {
    let mut same = Resampler::new(2000, 2000, Channels::Iq).unwrap();
    let input: Vec<f32> = (0..101).map(|n| n as f32 * 0.01).collect();
    let mut out = Vec::new();
    same.process(&input[..50], &mut out).unwrap();
    same.process(&input[50..], &mut out).unwrap();
    same.finish(&mut out).unwrap();
    assert_eq!(
        out,
        input[..100],
        "the incomplete last I/Q frame is dropped"
    );
    assert_eq!(same.process(&input, &mut out), Err(ResampleError::Finished));

    assert!(Resampler::new(0, 1000, Channels::Real).is_err());
    assert!(Resampler::new(1000, 0, Channels::Real).is_err());
    // 9 999 991 Hz and 1000 Hz share no factor: blocks of ~10^7 frames would be needed.
    let err = Resampler::new(9_999_991, 1000, Channels::Real).unwrap_err();
    assert!(err.to_string().contains("common divisor"), "{err}");
}
