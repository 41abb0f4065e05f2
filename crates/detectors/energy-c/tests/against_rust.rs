//! The C firmware against the Rust `energy` detector in raw mode (`normalise:
//! none`, no band limit): same frames, same time stamps, scores within the
//! single-precision bound derived in the crate doc (Higham 2002, §4.2).

use echobench_core::detector::{test_stream, DetectorPlugin, ParamValue, Params, Samples};
use echobench_core::FrameScore;
use echobench_detector_energy::EnergyPlugin;
use echobench_detector_energy_c::EnergyCPlugin;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// Unit roundoff of f32.
const U: f64 = f32::EPSILON as f64 / 2.0;
/// The tolerance stated in the crate doc for per-trial results.
const RELATIVE: f64 = 1e-5;

fn scores(
    plugin: &dyn DetectorPlugin,
    raw_mode: bool,
    frame_len: i64,
    hop: i64,
    samples: &[f32],
) -> Vec<FrameScore> {
    let mut given = vec![
        ("frame_len".to_string(), ParamValue::Integer(frame_len)),
        ("hop".to_string(), ParamValue::Integer(hop)),
    ];
    if raw_mode {
        given.push(("normalise".to_string(), ParamValue::Text("none".into())));
    }
    let params = Params::resolve(plugin.id(), plugin.params(), &given).expect("valid");
    let mut detector = plugin
        .plan(&params, &test_stream(2000.0))
        .map(|plan| plan.start())
        .expect("valid");
    let mut out = Vec::new();
    for block in samples.chunks(1000) {
        detector.process(Samples::Real(block), &mut out).unwrap();
    }
    out
}

/// Compares every frame; returns the largest relative difference seen.
fn compare(samples: &[f32], frame_len: i64, hop: i64) -> f64 {
    let rust = scores(&EnergyPlugin, true, frame_len, hop, samples);
    let c = scores(&EnergyCPlugin, false, frame_len, hop, samples);
    assert_eq!(rust.len(), c.len(), "frame counts");
    assert!(!rust.is_empty());
    // Worst case of a recursive float sum of N positive terms, the squares
    // and the division: (N + 1)·u relative.
    let bound = (frame_len as f64 + 1.0) * U;
    let mut worst: f64 = 0.0;
    for (r, c) in rust.iter().zip(&c) {
        assert_eq!(r.end_sample, c.end_sample, "frame ends");
        let difference = (c.value - r.value).abs();
        assert!(
            difference <= bound * r.value,
            "{} vs {} at sample {}",
            c.value,
            r.value,
            r.end_sample
        );
        if r.value > 0.0 {
            worst = worst.max(difference / r.value);
        }
    }
    worst
}

#[test]
fn c_matches_rust_on_random_input() {
    let mut rng = ChaCha8Rng::from_seed([42; 32]);
    let normal = Normal::new(0.0, 1.0).expect("unit normal");
    // Ten seconds at 2 kHz: noise of 5 mV with bursts twenty times stronger,
    // so frames span a wide range of energies.
    let samples: Vec<f32> = (0..20_000)
        .map(|n| {
            let level = if (n / 2500) % 2 == 1 { 0.1 } else { 0.005 };
            (level * normal.sample(&mut rng)) as f32
        })
        .collect();
    for (frame_len, hop) in [(256, 128), (16, 16), (2048, 500), (100, 300)] {
        let worst = compare(&samples, frame_len, hop);
        eprintln!("N = {frame_len}, hop {hop}: largest relative difference {worst:e}");
        assert!(worst <= RELATIVE, "N = {frame_len}: {worst}");
    }
}

#[test]
fn c_matches_rust_on_the_reference_fixture() {
    // tests/fixtures/reference-pipeline: 4 trials × 10 000 int16 codes, volts = code·0.2/4096.
    let path = format!(
        "{}/../../../tests/fixtures/reference-pipeline/codes-int16le.bin",
        env!("CARGO_MANIFEST_DIR")
    );
    let bytes = std::fs::read(path).expect("fixture codes");
    let volts: Vec<f32> = bytes
        .chunks_exact(2)
        .map(|b| (f64::from(i16::from_le_bytes([b[0], b[1]])) * 2.0 * 0.1 / 4096.0) as f32)
        .collect();
    assert_eq!(volts.len(), 40_000);
    for (trial, samples) in volts.chunks(10_000).enumerate() {
        let worst = compare(samples, 256, 128);
        eprintln!("trial {trial}: largest relative difference {worst:e}");
        assert!(worst <= RELATIVE, "trial {trial}: {worst}");
        // The per-trial score (max over frames), as the harness uses it.
        let max = |s: Vec<FrameScore>| s.iter().map(|s| s.value).fold(0.0, f64::max);
        let rust_max = max(scores(&EnergyPlugin, true, 256, 128, samples));
        let c_max = max(scores(&EnergyCPlugin, false, 256, 128, samples));
        assert!((c_max / rust_max - 1.0).abs() <= RELATIVE);
    }
}
