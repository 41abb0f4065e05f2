//! Streaming behaviour: block-size invariance, agreement with a slow direct
//! implementation, and what comes out for silence, NaN, clipping and trials
//! shorter than a frame.

use echobench_core::detector::{
    check_scores, test_stream, Detector, DetectorPlugin, Params, Samples,
};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_ca_cfar::{CaCfarConfig, CaCfarDetector, CaCfarPlugin};
use echobench_detector_dsp::Window;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

const FS_HZ: f64 = 2000.0;

fn iq_stream() -> StreamInfo {
    StreamInfo {
        channels: Channels::Iq,
        ..test_stream(FS_HZ)
    }
}

/// Noise plus a 40 Hz tone that comes and goes, so scores vary.
fn random_input(values: usize, seed: u8) -> Vec<f32> {
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    (0..values)
        .map(|i| {
            let g: f64 = rng.sample(StandardNormal);
            let tone = if (i / 1500) % 2 == 0 {
                0.05 * (std::f64::consts::TAU * 40.0 * i as f64 / FS_HZ).cos()
            } else {
                0.0
            };
            (0.01 * g + tone) as f32
        })
        .collect()
}

/// Feeds `input` (interleaved on I/Q streams) in blocks of `block` sample instants.
fn run_in_blocks(
    detector: &mut dyn Detector,
    input: &[f32],
    block: usize,
    channels: Channels,
) -> Vec<FrameScore> {
    let mut out = Vec::new();
    for chunk in input.chunks(block.max(1) * channels.count()) {
        let chunk = Samples::from_values(chunk, channels).expect("whole pairs");
        detector.process(chunk, &mut out).unwrap();
    }
    out
}

/// The reference configuration (Hz band 1–100 Hz, 256/128 frames), pinned on purpose:
/// these tests count frames of 256 samples. The m/s defaults are tested in `lib.rs`.
fn built(info: &StreamInfo) -> Box<dyn Detector> {
    let given: Vec<(String, echobench_core::detector::ParamValue)> = vec![
        (
            "band_units".into(),
            echobench_core::detector::ParamValue::Text("hz".into()),
        ),
        (
            "frame_len".into(),
            echobench_core::detector::ParamValue::Integer(256),
        ),
        (
            "hop".into(),
            echobench_core::detector::ParamValue::Integer(128),
        ),
    ];
    CaCfarPlugin
        .plan(
            &Params::resolve("ca-cfar", CaCfarPlugin.params(), &given).unwrap(),
            info,
        )
        .map(|plan| plan.start())
        .unwrap()
}

#[test]
fn block_size_does_not_change_the_scores() {
    // DEVELOPERS.md, Habits (streaming code): feeding 1, 7, 256 or all samples at a time gives
    // identical scores.
    for (info, seed) in [(test_stream(FS_HZ), 1), (iq_stream(), 2)] {
        let input = random_input(2 * 6000, seed);
        let whole = run_in_blocks(built(&info).as_mut(), &input, input.len(), info.channels);
        assert!(whole.len() > 40);
        check_scores(&whole).unwrap();
        for block in [1, 7, 256] {
            assert_eq!(
                run_in_blocks(built(&info).as_mut(), &input, block, info.channels),
                whole,
                "block {block}, {}",
                info.channels
            );
        }
        // Empty blocks are harmless, and reset starts over.
        let mut detector = built(&info);
        let mut out = Vec::new();
        detector
            .process(Samples::from_values(&[], info.channels).unwrap(), &mut out)
            .unwrap();
        detector
            .process(
                Samples::from_values(&input[..1000], info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        detector.reset();
        out.clear();
        detector
            .process(
                Samples::from_values(&input, info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        assert_eq!(out, whole);
    }
}

/// The slow, obvious version: a direct DFT per frame and the reference
/// pipeline's `detect_naive` loop (reflect with |j|, then 2(nb − 1) − j).
fn naive_real_scores(x: &[f32], config: &CaCfarConfig, fs: f64) -> Vec<(f64, f64)> {
    let n = config.frame_len;
    let nb = n / 2 + 1;
    let window: Vec<f64> = (0..n)
        .map(|i| match config.window {
            Window::Hann => 0.5 - 0.5 * (std::f64::consts::TAU * i as f64 / n as f64).cos(),
            Window::Rectangular => 1.0,
        })
        .collect();
    let cut: Vec<usize> = (0..nb)
        .filter(|&k| {
            let f = k as f64 * fs / n as f64;
            f >= config.low_hz && f <= config.high_hz
        })
        .collect();
    let (g, t) = (config.guard as i64, config.train as i64);
    let offsets: Vec<i64> = (-(g + t)..-g).chain(g + 1..=g + t).collect();
    let mut scores = Vec::new();
    let mut start = 0;
    while start + n <= x.len() {
        let power: Vec<f64> = (0..nb)
            .map(|k| {
                let (mut re, mut im) = (0.0, 0.0);
                for i in 0..n {
                    let v = f64::from(x[start + i]) * window[i];
                    let angle = -std::f64::consts::TAU * ((k * i) % n) as f64 / n as f64;
                    re += v * angle.cos();
                    im += v * angle.sin();
                }
                re * re + im * im
            })
            .collect();
        let mut best = f64::NEG_INFINITY;
        for &k in &cut {
            let training: Vec<f64> = offsets
                .iter()
                .map(|&o| {
                    let j = (k as i64 + o).unsigned_abs() as usize;
                    power[if j > nb - 1 { 2 * (nb - 1) - j } else { j }]
                })
                .collect();
            best = best.max(power[k] / (training.iter().sum::<f64>() / training.len() as f64));
        }
        scores.push(((start + n) as f64 / fs, best));
        start += config.hop;
    }
    scores
}

/// Same for I/Q: complex DFT, |f| band over both signs, wrapped cells.
fn naive_iq_scores(x: &[f32], config: &CaCfarConfig, fs: f64) -> Vec<(f64, f64)> {
    let n = config.frame_len;
    let samples = x.len() / 2;
    let cut: Vec<usize> = (0..n)
        .filter(|&k| {
            // numpy.fft.fftfreq: k < N/2 positive, the rest negative.
            let signed = if k < n.div_ceil(2) {
                k as f64
            } else {
                k as f64 - n as f64
            };
            let f = (signed * fs / n as f64).abs();
            f >= config.low_hz && f <= config.high_hz
        })
        .collect();
    let (g, t) = (config.guard as i64, config.train as i64);
    let offsets: Vec<i64> = (-(g + t)..-g).chain(g + 1..=g + t).collect();
    let mut scores = Vec::new();
    let mut start = 0;
    while start + n <= samples {
        let power: Vec<f64> = (0..n)
            .map(|k| {
                let (mut re, mut im) = (0.0, 0.0);
                for i in 0..n {
                    let w = 0.5 - 0.5 * (std::f64::consts::TAU * i as f64 / n as f64).cos();
                    let (a, b) = (
                        f64::from(x[2 * (start + i)]) * w,
                        f64::from(x[2 * (start + i) + 1]) * w,
                    );
                    let angle = -std::f64::consts::TAU * ((k * i) % n) as f64 / n as f64;
                    let (c, s) = (angle.cos(), angle.sin());
                    re += a * c - b * s;
                    im += a * s + b * c;
                }
                re * re + im * im
            })
            .collect();
        let mut best = f64::NEG_INFINITY;
        for &k in &cut {
            let sum: f64 = offsets
                .iter()
                .map(|&o| power[(k as i64 + o).rem_euclid(n as i64) as usize])
                .sum();
            best = best.max(power[k] / (sum / offsets.len() as f64));
        }
        scores.push(((start + n) as f64 / fs, best));
        start += config.hop;
    }
    scores
}

fn assert_close(fast: &[FrameScore], slow: &[(f64, f64)]) {
    assert_eq!(fast.len(), slow.len());
    for (f, &(t_s, value)) in fast.iter().zip(slow) {
        let f_t_s = f.end_sample as f64 / FS_HZ;
        assert!((f_t_s - t_s).abs() < 1e-12, "{f_t_s} vs {t_s}");
        assert!(
            (f.value / value - 1.0).abs() < 1e-9,
            "t = {t_s}: {} vs {value}",
            f.value
        );
    }
}

#[test]
fn fast_path_matches_a_direct_dft_with_reflected_edges() {
    // Rectangular window, hop > frame/2, CUTs down to DC and up to Nyquist so
    // both reflections are exercised (64-point frames: bins 0–32 at 31.25 Hz).
    let config = CaCfarConfig {
        window: Window::Rectangular,
        frame_len: 64,
        hop: 40,
        guard: 1,
        train: 6,
        low_hz: 0.0,
        high_hz: 1000.0,
        band_params: ("low_hz", "high_hz"),
        pfa: 1e-3,
    };
    let input = random_input(3000, 3);
    let mut detector = CaCfarDetector::new(&config, &test_stream(FS_HZ)).unwrap();
    assert_eq!(detector.cut_bins().len(), 33);
    let fast = run_in_blocks(&mut detector, &input, 333, Channels::Real);
    assert_close(&fast, &naive_real_scores(&input, &config, FS_HZ));
    // And the reference configuration (Hann, 256/128, 1–100 Hz).
    let config = CaCfarConfig::default();
    let mut detector = CaCfarDetector::new(&config, &test_stream(FS_HZ)).unwrap();
    let fast = run_in_blocks(&mut detector, &input, 1000, Channels::Real);
    assert_close(&fast, &naive_real_scores(&input, &config, FS_HZ));
}

#[test]
fn iq_path_matches_a_direct_dft_with_a_wrapped_axis() {
    // Odd frame length (no Nyquist bin), CUTs around DC where the cells wrap.
    let config = CaCfarConfig {
        frame_len: 45,
        hop: 20,
        guard: 1,
        train: 5,
        low_hz: 0.0,
        high_hz: 150.0,
        ..CaCfarConfig::default()
    };
    let input = random_input(2 * 900, 4);
    let mut detector = CaCfarDetector::new(&config, &iq_stream()).unwrap();
    // |f| ≤ 150 Hz at 44.44 Hz per bin: bins 0–3 and 42–44.
    assert_eq!(detector.cut_bins(), &[0, 1, 2, 3, 42, 43, 44]);
    let fast = run_in_blocks(&mut detector, &input, 77, Channels::Iq);
    assert_close(&fast, &naive_iq_scores(&input, &config, FS_HZ));
}

#[test]
fn silence_scores_zero() {
    // All-zero training cells: the documented noise floor makes 0/0 = 0.
    for info in [test_stream(FS_HZ), iq_stream()] {
        let mut detector = built(&info);
        let mut out = Vec::new();
        detector
            .process(
                Samples::from_values(&vec![0.0; 4000], info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        assert!(!out.is_empty());
        assert!(out.iter().all(|s| s.value == 0.0), "{:?}", &out[..3]);
    }
}

#[test]
fn a_lone_tone_over_empty_cells_stays_finite() {
    // A bin-centred tone with a rectangular window leaves the training cells
    // at (numerically) zero: the ratio is huge but finite.
    let config = CaCfarConfig {
        window: Window::Rectangular,
        ..CaCfarConfig::default()
    };
    let tone: Vec<f32> = (0..2048)
        .map(|i| (std::f64::consts::TAU * 8.0 * i as f64 / 256.0).cos() as f32)
        .collect();
    let mut detector = CaCfarDetector::new(&config, &test_stream(FS_HZ)).unwrap();
    let mut out = Vec::new();
    detector.process(Samples::Real(&tone), &mut out).unwrap();
    check_scores(&out).unwrap();
    assert!(out.iter().all(|s| s.value > 1e6), "{:?}", &out[..2]);
}

#[test]
fn non_finite_samples_count_as_zero() {
    // Documented choice: NaN or ±∞ is a dropped sample, read as 0.
    for info in [test_stream(FS_HZ), iq_stream()] {
        let clean = random_input(5000, 5);
        let mut zeroed = clean.clone();
        let mut broken = clean.clone();
        for (i, bad) in [
            (100, f32::NAN),
            (2001, f32::INFINITY),
            (3333, f32::NEG_INFINITY),
        ] {
            zeroed[i] = 0.0;
            broken[i] = bad;
        }
        let expected = run_in_blocks(built(&info).as_mut(), &zeroed, 5000, info.channels);
        let got = run_in_blocks(built(&info).as_mut(), &broken, 123, info.channels);
        check_scores(&got).unwrap();
        assert_eq!(got, expected);
        let all_nan = run_in_blocks(
            built(&info).as_mut(),
            &[f32::NAN; 1000],
            1000,
            info.channels,
        );
        assert!(all_nan.iter().all(|s| s.value == 0.0));
    }
}

#[test]
fn clipped_and_extreme_inputs_give_finite_scores() {
    // A tone driven far past a ±0.1 V full scale, then the largest f32 values.
    let clipped: Vec<f32> = (0..4000)
        .map(|i| {
            (10.0 * (std::f64::consts::TAU * 30.0 * i as f64 / FS_HZ).sin()).clamp(-0.1, 0.1) as f32
        })
        .collect();
    let extreme: Vec<f32> = (0..4000)
        .map(|i| if i % 3 == 0 { f32::MAX } else { -f32::MAX })
        .collect();
    for info in [test_stream(FS_HZ), iq_stream()] {
        for input in [&clipped, &extreme] {
            let out = run_in_blocks(built(&info).as_mut(), input, 500, info.channels);
            assert!(!out.is_empty());
            check_scores(&out).unwrap();
        }
    }
}

#[test]
fn short_trials_give_no_scores_and_frames_end_on_time() {
    for info in [test_stream(FS_HZ), iq_stream()] {
        let values = info.channels.count();
        let mut detector = built(&info);
        let mut out = Vec::new();
        detector
            .process(
                Samples::from_values(&[0.5; 2][..values], info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        assert!(out.is_empty(), "a single sample cannot complete a frame");
        // One sample instant short of a frame, then the last one: exactly one score,
        // stamped at the end of the frame (256 samples at 2 kHz).
        detector.reset();
        let frame = random_input(256 * values, 6);
        detector
            .process(
                Samples::from_values(&frame[..frame.len() - values], info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        assert!(out.is_empty());
        detector
            .process(
                Samples::from_values(&frame[frame.len() - values..], info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        assert_eq!(out.len(), 1);
        assert_eq!(out[0].end_sample, 256);
        // The next frames follow every hop (128 samples).
        detector
            .process(
                Samples::from_values(&random_input(256 * values, 7), info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        let ends: Vec<u64> = out.iter().map(|s| s.end_sample).collect();
        assert_eq!(ends, vec![256, 384, 512]);
    }
}
