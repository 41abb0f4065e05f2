//! Detector throughput in input samples per second (one thread).
//!
//! Every built-in plugin runs with its default parameters on the same fixed
//! 60 s of a 2 kHz real 12-bit stream, pushed in blocks of 4096 samples (a
//! DMA-sized block, not a frame multiple, so the framers' carry-over path runs
//! too). The input is seeded white Gaussian noise plus a tone on a mid-rail
//! bias, quantised like the ADC, so spectral detectors transform real data and
//! threshold-free scores are not all zero. Detectors whose Doppler bands can
//! follow the carrier are also run at 2.45 GHz.
//!
//! `cargo run -p echobench-benches --example detector_costs --release` turns
//! the results into the README table.
use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use echobench_core::detector::{check_scores, Params, Samples};
use echobench_core::{Channels, FrameScore, StreamInfo};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::Normal;
use std::hint::black_box;
use std::time::Duration;

/// Sample rate of the benchmark stream, Hz.
const SAMPLE_RATE_HZ: f64 = 2000.0;
/// Length of the fixed input, s.
const DURATION_S: f64 = 60.0;
/// Samples handed to `process` per call.
const BLOCK_LEN: usize = 4096;
/// ADC resolution, bits, and full scale, V (a 3.3 V microcontroller ADC, common practice).
const ADC_BITS: u8 = 12;
const ADC_FULL_SCALE_V: f64 = 3.3;
/// Mid-rail bias the IF amplifier centres the signal on, V.
const BIAS_V: f64 = ADC_FULL_SCALE_V / 2.0;
/// Noise standard deviation, V (about 6 LSB: the ADC sees real noise, not one code).
const NOISE_RMS_V: f64 = 5e-3;
/// The tone: 45 Hz lies in band-ratio's default motion band (10–80 Hz) and in
/// periodicity's 0.6–4 m/s band at 2.45 GHz (9.8–65 Hz).
const TONE_HZ: f64 = 45.0;
const TONE_AMPLITUDE_V: f64 = 50e-3;
/// Fixed seed: every run measures the same samples.
const SEED: [u8; 32] = *b"echobench detector throughput!!!";

/// Carriers: the 24 GHz K-band module, and the 2.4 GHz ISM band for detectors
/// whose bands are given in speeds.
const CARRIER_24G_HZ: f64 = 24.125e9;
const CARRIER_2G4_HZ: f64 = 2.45e9;

fn stream(carrier_hz: f64) -> StreamInfo {
    StreamInfo {
        sample_rate_hz: SAMPLE_RATE_HZ,
        channels: Channels::Real,
        adc_bits: ADC_BITS,
        carrier_hz,
    }
}

/// Noise plus tone on the bias, clipped and rounded to the ADC's codes, in volts.
fn input_volts() -> Vec<f32> {
    let mut rng = ChaCha8Rng::from_seed(SEED);
    let noise = Normal::new(0.0, NOISE_RMS_V).expect("positive, finite standard deviation");
    let lsb_v = ADC_FULL_SCALE_V / f64::from(1u32 << ADC_BITS);
    let top_code = f64::from((1u32 << ADC_BITS) - 1);
    let samples = (DURATION_S * SAMPLE_RATE_HZ) as usize;
    (0..samples)
        .map(|i| {
            let t_s = i as f64 / SAMPLE_RATE_HZ;
            let v = BIAS_V
                + TONE_AMPLITUDE_V * (std::f64::consts::TAU * TONE_HZ * t_s).sin()
                + rng.sample(noise);
            let code = (v / lsb_v).floor().clamp(0.0, top_code);
            ((code + 0.5) * lsb_v) as f32
        })
        .collect()
}

/// Which carriers a plugin is measured at: both when its default bands can
/// depend on the carrier, else the 24 GHz one only.
fn carriers(id: &str) -> &'static [f64] {
    match id {
        "band-ratio" | "periodicity" => &[CARRIER_24G_HZ, CARRIER_2G4_HZ],
        _ => &[CARRIER_24G_HZ],
    }
}

fn carrier_label(carrier_hz: f64) -> String {
    format!("{}GHz", carrier_hz / 1e9)
}

fn detectors(c: &mut Criterion) {
    let input = input_volts();
    let mut group = c.benchmark_group("detectors");
    group.sample_size(10);
    group.warm_up_time(Duration::from_secs(1));
    group.measurement_time(Duration::from_secs(3));
    group.throughput(Throughput::Elements(input.len() as u64));
    for plugin in echobench_detectors::builtin() {
        let params = Params::defaults(plugin.params());
        for &carrier_hz in carriers(plugin.id()) {
            let info = stream(carrier_hz);
            let mut detector = plugin
                .plan(&params, &info)
                .map(|plan| plan.start())
                .unwrap_or_else(|e| panic!("{e}"));
            let mut scores: Vec<FrameScore> = Vec::with_capacity(input.len());
            // One checked pass first: the timed work must produce valid scores.
            for block in input.chunks(BLOCK_LEN) {
                if let Err(failure) = detector.process(Samples::Real(block), &mut scores) {
                    panic!("{}: {failure}", plugin.id());
                }
            }
            if let Err((index, message)) = check_scores(&scores) {
                panic!("{}: score {index}: {message}", plugin.id());
            }
            assert!(!scores.is_empty(), "{}: no scores in 60 s", plugin.id());
            let peak = scores.iter().map(|s| s.value).fold(f64::MIN, f64::max);
            eprintln!(
                "{} at {}: {} scores, peak {peak:.3}",
                plugin.id(),
                carrier_label(carrier_hz),
                scores.len()
            );
            let id = BenchmarkId::new(plugin.id(), carrier_label(carrier_hz));
            group.bench_function(id, |b| {
                b.iter(|| {
                    detector.reset();
                    scores.clear();
                    for block in input.chunks(BLOCK_LEN) {
                        // Checked in the pass above: in-process detectors do not fail.
                        let _ = detector.process(Samples::Real(black_box(block)), &mut scores);
                    }
                    black_box(scores.len())
                })
            });
        }
    }
    group.finish();
}

criterion_group!(benches, detectors);
criterion_main!(benches);
