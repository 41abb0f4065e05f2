//! The numpy example `python/energy_detector.py` against the built-in
//! `energy` detector, through the protocol, and the detector contract
//! (block-size invariance, NaN, silence, clipping, single sample, reset) on it.
//!
//! Tolerance. Both sides receive the same f32 samples (the protocol carries
//! f32, and `energy` also takes f32 through `Detector::process`) and widen
//! them to f64 exactly; squares, filters (same coefficients, same operation
//! order) and the floor update are the same f64 operations. What differs is
//! the order of the additions in a frame's sum: a ring buffer in Rust,
//! numpy's pairwise sum in Python. For a sum of N positive terms each order
//! is within (N − 1)·u of the exact sum, u = 2⁻⁵³ (Higham, Accuracy and
//! Stability of Numerical Algorithms, 2nd ed. 2002, §4.2), so two orders
//! differ by at most 2(N − 1)·u ≈ 5.7e-14 for N = 256. The floor is a convex
//! combination of such energies (relative error carried at most as is) plus
//! its own roundings, about 3u per update, which the average forgets at rate
//! s = 1 − exp(−hop/(fs·floor_s)): at most 3u/s ≈ 5e-14 at the defaults
//! (s = 0.0064). A score E/F is therefore within ~2e-13 relative; the test
//! allows 1e-12 (5 times that; the differences seen are ~2e-15), while a
//! real bug, one sample missing from a frame of 256, moves a score by ~0.4 %. (Were the Python side computing
//! in f32, the bound would be (N + 1)·2⁻²⁴ ≈ 1.5e-5, as for the C port.)
//! Time stamps are the same f64 division of the same integers: bit-equal.

mod common;

use common::{build, energy_example, python_with_numpy, run};
use echobench_core::detector::{
    check_scores, test_stream, DetectorPlugin, ParamValue, Params, Samples,
};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_energy::EnergyPlugin;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// Relative tolerance per frame (derived in the file doc).
const RELATIVE: f64 = 1e-12;

fn noise(seed: u8, len: usize, sigma: f64) -> Vec<f32> {
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    let normal = Normal::new(0.0, sigma).expect("valid sigma");
    let mut samples: Vec<f32> = (0..len).map(|_| normal.sample(&mut rng) as f32).collect();
    // A burst in the middle, so the floor's gate is exercised.
    let (a, b) = (len * 2 / 5, len / 2);
    for x in &mut samples[a..b] {
        *x *= 10.0;
    }
    samples
}

fn iq_stream(fs: f64) -> StreamInfo {
    StreamInfo {
        channels: Channels::Iq,
        ..test_stream(fs)
    }
}

/// The built-in detector's scores with the same settings (name, value).
fn built_in(
    settings: &[(&str, ParamValue)],
    info: &StreamInfo,
    samples: &[f32],
) -> Vec<FrameScore> {
    let given: Vec<(String, ParamValue)> = settings
        .iter()
        .map(|(n, v)| (n.to_string(), v.clone()))
        .collect();
    let params = Params::resolve("energy", EnergyPlugin.params(), &given).expect("valid");
    let mut detector = EnergyPlugin
        .plan(&params, info)
        .map(|plan| plan.start())
        .expect("valid");
    run(detector.as_mut(), samples, 1000, info.channels)
}

/// The same settings as the example's name=value arguments.
fn as_args(settings: &[(&str, ParamValue)]) -> String {
    let mut words = vec![energy_example()];
    words.extend(settings.iter().map(|(n, v)| format!("{n}={v}")));
    words.join(" ")
}

fn python(
    settings: &[(&str, ParamValue)],
    info: &StreamInfo,
    samples: &[f32],
    block: usize,
) -> Vec<FrameScore> {
    let mut detector =
        build("python3", &as_args(settings), &[], info).unwrap_or_else(|e| panic!("{e}"));
    run(detector.as_mut(), samples, block, info.channels)
}

fn assert_close(python: &[FrameScore], rust: &[FrameScore], what: &str) {
    assert_eq!(python.len(), rust.len(), "{what}: frame counts");
    assert!(!rust.is_empty(), "{what}");
    for (p, r) in python.iter().zip(rust) {
        assert_eq!(p.end_sample, r.end_sample, "{what}: frame ends");
        let difference = (p.value - r.value).abs();
        assert!(
            difference <= RELATIVE * r.value.abs(),
            "{what} at sample {}: python {} vs rust {}",
            r.end_sample,
            p.value,
            r.value
        );
    }
}

/// A named set of `energy` settings on a stream.
type Configuration = (&'static str, Vec<(&'static str, ParamValue)>, StreamInfo);

fn real(x: f64) -> ParamValue {
    ParamValue::Real(x)
}

fn int(i: i64) -> ParamValue {
    ParamValue::Integer(i)
}

fn text(s: &str) -> ParamValue {
    ParamValue::Text(s.to_string())
}

#[test]
fn reproduces_the_built_in_energy_detector() {
    if !python_with_numpy() {
        return;
    }
    let fs = 2000.0;
    let samples = noise(11, 20_000, 0.01);
    let configurations: [Configuration; 3] = [
        ("defaults (floor)", vec![], test_stream(fs)),
        (
            "band-limited, raw",
            vec![
                ("low_hz", real(5.0)),
                ("high_hz", real(300.0)),
                ("normalise", text("none")),
                ("frame_len", int(200)),
                ("hop", int(70)),
            ],
            test_stream(fs),
        ),
        (
            "I/Q, band-limited, floor",
            vec![
                ("low_hz", real(20.0)),
                ("high_hz", real(400.0)),
                ("floor_s", real(0.5)),
                ("floor_gate", real(3.0)),
            ],
            iq_stream(fs),
        ),
    ];
    for (what, settings, info) in &configurations {
        let rust = built_in(settings, info, &samples);
        let from_python = python(settings, info, &samples, 1000);
        assert_close(&from_python, &rust, what);
        assert!(check_scores(&from_python).is_ok());
    }
}

/// Blocks of 1, 7, 256 sample instants and the whole trial (which the host
/// splits into BLCKs of 4096 values) give bit-identical scores: framing,
/// filters and floor carry their state across blocks (block-size invariance).
#[test]
fn python_scores_do_not_depend_on_block_size() {
    if !python_with_numpy() {
        return;
    }
    let fs = 2000.0;
    let samples = noise(5, 3000, 0.02);
    let settings = [
        ("low_hz", real(10.0)),
        ("high_hz", real(500.0)),
        ("frame_len", int(100)),
        ("hop", int(30)),
    ];
    for info in [test_stream(fs), iq_stream(fs)] {
        let whole = python(&settings, &info, &samples, samples.len());
        let instants = samples.len() / info.channels.count();
        assert_eq!(whole.len(), (instants - 100) / 30 + 1);
        for block in [1, 7, 256] {
            assert_eq!(
                python(&settings, &info, &samples, block),
                whole,
                "block {block}"
            );
        }
    }
}

#[test]
fn nan_silence_clipping_and_a_single_sample_behave() {
    if !python_with_numpy() {
        return;
    }
    let info = test_stream(2000.0);
    // NaN and ±inf are sent as 0: the same scores as the stream with zeros there.
    let clean = noise(3, 3000, 0.02);
    let mut zeroed = clean.clone();
    let mut poisoned = clean;
    for (k, bad) in [
        (10, f32::NAN),
        (1500, f32::INFINITY),
        (2999, f32::NEG_INFINITY),
    ] {
        zeroed[k] = 0.0;
        poisoned[k] = bad;
    }
    assert_eq!(
        python(&[], &info, &poisoned, 500),
        python(&[], &info, &zeroed, 500)
    );
    // Silence: finite scores, 0 in both modes (the floor division is guarded).
    for mode in ["floor", "none"] {
        let silent = python(&[("normalise", text(mode))], &info, &[0.0; 4096], 4096);
        assert_eq!(silent.len(), (4096 - 256) / 128 + 1);
        assert!(silent.iter().all(|s| s.value == 0.0), "{mode}");
    }
    // Full-scale clipping: a ±0.1 V square wave has mean x² = 0.01 V² (in f32's 0.1).
    let square: Vec<f32> = (0..2048)
        .map(|i| if i % 2 == 0 { 0.1 } else { -0.1 })
        .collect();
    let expected = f64::from(0.1_f32).powi(2);
    for s in python(&[("normalise", text("none"))], &info, &square, 300) {
        assert!((s.value - expected).abs() <= 1e-15, "{}", s.value);
    }
    // A single sample: no complete frame, no failure; a frame of 1 scores it.
    assert!(python(&[], &info, &[0.5], 1).is_empty());
    let one = python(
        &[
            ("frame_len", int(1)),
            ("hop", int(1)),
            ("normalise", text("none")),
        ],
        &info,
        &[0.5],
        1,
    );
    assert_eq!(
        one,
        vec![FrameScore {
            end_sample: 1,
            value: 0.25
        }]
    );
}

#[test]
fn reset_starts_a_fresh_program() {
    if !python_with_numpy() {
        return;
    }
    let info = test_stream(2000.0);
    let samples = noise(9, 4000, 0.01);
    let mut detector = build("python3", &as_args(&[]), &[], &info).expect("starts");
    let first = run(detector.as_mut(), &samples, 999, info.channels);
    detector.reset();
    let second = run(detector.as_mut(), &samples, 999, info.channels);
    assert_eq!(first, second, "the floor and framing start afresh");
}

/// A stream the example refuses (a corner above Nyquist) is a build error
/// quoting the program's own message, made before READY; so is an unknown
/// argument.
#[test]
fn the_example_refuses_bad_settings_at_build() {
    if !python_with_numpy() {
        return;
    }
    let info = test_stream(1000.0);
    let error = build("python3", &as_args(&[("high_hz", real(600.0))]), &[], &info)
        .err()
        .expect("refused");
    assert_eq!(error.param, "command");
    assert!(error.message.contains("high_hz=600"), "{error}");
    assert!(error.message.contains("exited with status 1"), "{error}");
    let error = build(
        "python3",
        &format!("{} hop_len=3", energy_example()),
        &[],
        &info,
    )
    .err()
    .expect("refused");
    assert!(
        error.message.contains("unknown argument 'hop_len=3'"),
        "{error}"
    );
}

/// The time budget charges only the waits for the program: the harness's own
/// time between blocks (here a sleep longer than the whole budget) is free.
#[test]
fn time_between_blocks_is_not_charged_to_the_program() {
    if !python_with_numpy() {
        return;
    }
    let info = test_stream(2000.0);
    let mut detector = build(
        "python3",
        &as_args(&[("normalise", text("none"))]),
        &[("timeout_s", real(1.5))],
        &info,
    )
    .expect("starts within 1.5 s");
    let samples = noise(2, 1024, 0.01);
    let mut out = Vec::new();
    assert_eq!(
        detector.process(Samples::Real(&samples[..512]), &mut out),
        Ok(())
    );
    std::thread::sleep(std::time::Duration::from_millis(1600));
    assert_eq!(
        detector.process(Samples::Real(&samples[512..]), &mut out),
        Ok(())
    );
    assert_eq!(out.len(), (1024 - 256) / 128 + 1);
}

/// The external plugin running the numpy example keeps the whole detector
/// contract, checked by core's conformance kit (2 s of signal, to keep the
/// round trips of blocks of one value short).
#[test]
fn the_python_example_passes_the_conformance_kit() {
    if !python_with_numpy() {
        return;
    }
    let settings = [("frame_len", int(100)), ("hop", int(30))];
    let params = common::params("python3", &as_args(&settings), &[]).expect("valid");
    let plugin = echobench_detector_external::ExternalPlugin::new(true);
    for info in [test_stream(2000.0), iq_stream(2000.0)] {
        if let Err(violations) =
            echobench_core::conformance::check_for(&plugin, &params, &info, 2.0)
        {
            let lines: Vec<String> = violations.iter().map(|v| v.to_string()).collect();
            panic!("{} stream:\n{}", info.channels, lines.join("\n"));
        }
    }
}
