//! Streaming behaviour: block-size invariance, agreement with a slow direct
//! implementation, silence, NaN, clipping and trials shorter than a frame.

use echobench_core::detector::{
    check_scores, test_stream, Detector, DetectorPlugin, Params, Samples,
};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_dsp::Window;
use echobench_detector_os_cfar::{OsCfarConfig, OsCfarDetector, OsCfarPlugin};
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

/// Noise plus a 40 Hz tone that comes and goes.
fn random_input(values: usize, seed: u8) -> Vec<f32> {
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    (0..values)
        .map(|i| {
            let g: f64 = rng.sample(StandardNormal);
            let on = (i / 1500) % 2 == 0;
            let tone = if on {
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
    OsCfarPlugin
        .plan(
            &Params::resolve("os-cfar", OsCfarPlugin.params(), &given).unwrap(),
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
        let input = random_input(12_000, seed);
        let whole = run_in_blocks(built(&info).as_mut(), &input, input.len(), info.channels);
        assert!(whole.len() > 40);
        check_scores(&whole).unwrap();
        for block in [1, 7, 256] {
            assert_eq!(
                run_in_blocks(built(&info).as_mut(), &input, block, info.channels),
                whole
            );
        }
        let mut detector = built(&info);
        let mut out = Vec::new();
        detector
            .process(
                Samples::from_values(&input[..998], info.channels).unwrap(),
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

/// Direct DFT per frame (real or interleaved I/Q), then for each CUT a full
/// sort of its cells: reflected about DC and Nyquist (real, as the
/// reference pipeline's `detect_naive`) or wrapped (I/Q).
fn naive_scores(x: &[f32], c: &OsCfarConfig, iq: bool) -> Vec<(f64, f64)> {
    let n = c.frame_len;
    let per_sample = if iq { 2 } else { 1 };
    let bins = if iq { n } else { n / 2 + 1 };
    let window = |i: usize| match c.window {
        Window::Hann => 0.5 - 0.5 * (std::f64::consts::TAU * i as f64 / n as f64).cos(),
        Window::Rectangular => 1.0,
    };
    let cut: Vec<usize> = (0..bins)
        .filter(|&k| {
            let signed = if iq && k >= n.div_ceil(2) {
                k as f64 - n as f64
            } else {
                k as f64
            };
            let f = (signed * FS_HZ / n as f64).abs();
            f >= c.low_hz && f <= c.high_hz
        })
        .collect();
    let (g, t) = (c.guard as i64, c.train as i64);
    let offsets: Vec<i64> = (-(g + t)..-g).chain(g + 1..=g + t).collect();
    let cell = |k: usize, o: i64| -> usize {
        if iq {
            (k as i64 + o).rem_euclid(n as i64) as usize
        } else {
            let j = (k as i64 + o).unsigned_abs() as usize;
            if j > bins - 1 {
                2 * (bins - 1) - j
            } else {
                j
            }
        }
    };
    let mut scores = Vec::new();
    let mut start = 0;
    while (start + n) * per_sample <= x.len() {
        let power: Vec<f64> = (0..bins)
            .map(|k| {
                let (mut re, mut im) = (0.0, 0.0);
                for i in 0..n {
                    let angle = -std::f64::consts::TAU * ((k * i) % n) as f64 / n as f64;
                    let (cos, sin) = (angle.cos(), angle.sin());
                    let a = f64::from(x[per_sample * (start + i)]) * window(i);
                    let b = if iq {
                        f64::from(x[2 * (start + i) + 1]) * window(i)
                    } else {
                        0.0
                    };
                    re += a * cos - b * sin;
                    im += a * sin + b * cos;
                }
                re * re + im * im
            })
            .collect();
        let mut best = f64::NEG_INFINITY;
        for &k in &cut {
            let mut cells: Vec<f64> = offsets.iter().map(|&o| power[cell(k, o)]).collect();
            cells.sort_by(f64::total_cmp);
            best = best.max(power[k] / cells[c.rank - 1]);
        }
        scores.push(((start + n) as f64 / FS_HZ, best));
        start += c.hop;
    }
    scores
}

fn assert_close(fast: &[FrameScore], slow: &[(f64, f64)]) {
    assert_eq!(fast.len(), slow.len());
    for (f, &(t_s, value)) in fast.iter().zip(slow) {
        assert!((f.end_sample as f64 / FS_HZ - t_s).abs() < 1e-12);
        assert!(
            (f.value / value - 1.0).abs() < 1e-9,
            "t = {t_s}: {} vs {value}",
            f.value
        );
    }
}

#[test]
fn fast_path_matches_a_direct_dft_and_a_sort() {
    // Real: every bin from DC to Nyquist is a CUT, so both reflections run.
    let real = OsCfarConfig {
        window: Window::Rectangular,
        frame_len: 64,
        hop: 40,
        guard: 1,
        train: 6,
        rank: 9,
        low_hz: 0.0,
        high_hz: 1000.0,
        band_params: ("low_hz", "high_hz"),
        pfa: 1e-3,
    };
    let input = random_input(3000, 3);
    let mut detector = OsCfarDetector::new(&real, &test_stream(FS_HZ)).unwrap();
    let fast = run_in_blocks(&mut detector, &input, 333, Channels::Real);
    assert_close(&fast, &naive_scores(&input, &real, false));
    // Default geometry (Hann, 256/128, 1–100 Hz, rank 12 of 16).
    let default = OsCfarConfig::default();
    let mut detector = OsCfarDetector::new(&default, &test_stream(FS_HZ)).unwrap();
    let fast = run_in_blocks(&mut detector, &input, 1000, Channels::Real);
    assert_close(&fast, &naive_scores(&input, &default, false));
    // I/Q, odd frame, CUTs around DC where the cells wrap.
    let iq = OsCfarConfig {
        frame_len: 45,
        hop: 20,
        guard: 1,
        train: 5,
        rank: 7,
        low_hz: 0.0,
        high_hz: 150.0,
        ..OsCfarConfig::default()
    };
    let input = random_input(1800, 4);
    let mut detector = OsCfarDetector::new(&iq, &iq_stream()).unwrap();
    assert_eq!(detector.cut_bins(), &[0, 1, 2, 3, 42, 43, 44]);
    let fast = run_in_blocks(&mut detector, &input, 77, Channels::Iq);
    assert_close(&fast, &naive_scores(&input, &iq, true));
}

#[test]
fn silence_scores_zero() {
    // The documented floor makes 0/0 = 0.
    for info in [test_stream(FS_HZ), iq_stream()] {
        let out = run_in_blocks(built(&info).as_mut(), &[0.0; 4000], 4000, info.channels);
        assert!(!out.is_empty());
        assert!(out.iter().all(|s| s.value == 0.0));
    }
}

#[test]
fn non_finite_samples_count_as_zero() {
    // Documented choice: NaN or ±∞ is a dropped sample, read as 0.
    for info in [test_stream(FS_HZ), iq_stream()] {
        let clean = random_input(5000, 5);
        let mut zeroed = clean.clone();
        let mut broken = clean;
        for (i, bad) in [
            (10, f32::NAN),
            (2500, f32::INFINITY),
            (4001, f32::NEG_INFINITY),
        ] {
            zeroed[i] = 0.0;
            broken[i] = bad;
        }
        let expected = run_in_blocks(built(&info).as_mut(), &zeroed, 5000, info.channels);
        let got = run_in_blocks(built(&info).as_mut(), &broken, 321, info.channels);
        check_scores(&got).unwrap();
        assert_eq!(got, expected);
    }
}

#[test]
fn clipped_and_extreme_inputs_give_finite_scores() {
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
    }
}
