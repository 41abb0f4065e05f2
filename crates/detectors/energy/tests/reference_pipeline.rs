//! Cross-check against the numpy reference pipeline (tests/fixtures/reference-pipeline,
//! made by the bench's `ref_pipeline.py`): its energy score is "the mean of x² over the
//! raw frame", frames of 256 samples every 128 starting at sample 0, trial score = max
//! over frames (docs/reference/detectors.md#d9).

use echobench_core::detector::{DetectorPlugin, ParamValue, Params, Samples};
use echobench_core::{detector::test_stream, FrameScore};
use echobench_detector_energy::{EnergyDetector, EnergyPlugin};

const SAMPLES_PER_TRIAL: usize = 10_000;
const TRIALS: usize = 4;
/// LSB of the reference's 12-bit ADC over ±0.1 V (fixture README).
const LSB_V: f64 = 2.0 * 0.1 / 4096.0;

fn fixture_dir() -> String {
    format!(
        "{}/../../../tests/fixtures/reference-pipeline/",
        env!("CARGO_MANIFEST_DIR")
    )
}

fn trials_volts() -> Vec<Vec<f64>> {
    let bytes = std::fs::read(fixture_dir() + "codes-int16le.bin").expect("fixture codes");
    assert_eq!(bytes.len(), TRIALS * SAMPLES_PER_TRIAL * 2);
    bytes
        .chunks_exact(2)
        .map(|pair| f64::from(i16::from_le_bytes([pair[0], pair[1]])) * LSB_V)
        .collect::<Vec<f64>>()
        .chunks(SAMPLES_PER_TRIAL)
        .map(<[f64]>::to_vec)
        .collect()
}

fn reference_energy() -> Vec<f64> {
    let csv = std::fs::read_to_string(fixture_dir() + "scores.csv").expect("fixture scores");
    let mut lines = csv.lines();
    let header: Vec<&str> = lines.next().expect("header").split(',').collect();
    let column = header
        .iter()
        .position(|&h| h == "energy")
        .expect("energy column");
    lines
        .map(|line| {
            line.split(',')
                .nth(column)
                .expect("field")
                .parse()
                .expect("number")
        })
        .collect()
}

fn reference_params() -> Params {
    // Raw mode, no band limit, frame 256 / hop 128: the reference's definition.
    let given = [
        ("normalise".to_string(), ParamValue::Text("none".into())),
        ("frame_len".to_string(), ParamValue::Integer(256)),
        ("hop".to_string(), ParamValue::Integer(128)),
        ("low_hz".to_string(), ParamValue::Real(0.0)),
        ("high_hz".to_string(), ParamValue::Real(0.0)),
    ];
    Params::resolve("energy", EnergyPlugin.params(), &given).expect("valid parameters")
}

fn max_score(scores: &[FrameScore]) -> f64 {
    scores
        .iter()
        .map(|s| s.value)
        .fold(f64::NEG_INFINITY, f64::max)
}

#[test]
fn raw_mode_reproduces_the_reference_energy_scores() {
    let info = test_stream(2000.0);
    let expected = reference_energy();
    assert_eq!(expected.len(), TRIALS);
    for (trial, (volts, &want)) in trials_volts().iter().zip(&expected).enumerate() {
        // Double-precision volts, as the reference holds them: 1e-9 relative.
        let mut detector = EnergyDetector::new(&reference_params(), &info).expect("valid");
        let mut scores = Vec::new();
        detector.process_f64(volts, &mut scores);
        assert_eq!(
            scores.len(),
            (SAMPLES_PER_TRIAL - 256) / 128 + 1,
            "77 frames"
        );
        let got = max_score(&scores);
        assert!(
            ((got - want) / want).abs() <= 1e-9,
            "trial {trial}: {got} vs reference {want}"
        );
        // Through the Detector trait the volts are f32: each x has relative
        // error ≤ u = 2⁻²⁴, so each x² ≤ 2u + u², and a mean of positive terms
        // keeps that bound (the f64 sum adds ~1e-16): 1.2e-7 relative.
        let samples: Vec<f32> = volts.iter().map(|&v| v as f32).collect();
        let mut detector = EnergyPlugin
            .plan(&reference_params(), &info)
            .map(|plan| plan.start())
            .expect("valid");
        let mut scores = Vec::new();
        detector
            .process(
                Samples::from_values(&samples, info.channels).unwrap(),
                &mut scores,
            )
            .unwrap();
        let got_f32 = max_score(&scores);
        let u = f64::from(f32::EPSILON) / 2.0;
        assert!(
            ((got_f32 - want) / want).abs() <= 2.0 * u + u * u + 1e-12,
            "trial {trial} via f32: {got_f32} vs reference {want}"
        );
    }
}
