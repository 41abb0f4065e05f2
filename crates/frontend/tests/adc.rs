//! The ADC (docs/reference/front-end-and-noise.md#f8; check-values.md#pc22).

mod support;

use echobench_frontend::{ideal_sine_snr_db, Adc, AdcCoding};
use std::f64::consts::PI;
use support::uniform_input;

/// docs/reference/check-values.md#pc22: 12 bit over 3.3 V has an LSB of 0.806 mV (q = V_FS/2^N).
#[test]
fn lsb_of_12_bit_at_3v3() {
    let adc = Adc::new(12, 3.3).unwrap();
    assert!((adc.lsb_v() * 1e3 - 0.806).abs() < 5e-4);
    assert_eq!((adc.min_code(), adc.max_code()), (0, 4095));
}

/// Bennett (1948): with an input that is uniform over many LSBs, the
/// quantization error has power q²/12 (within 5 %).
#[test]
fn quantization_noise_power_is_q_squared_over_12() {
    for bits in [8, 12, 16] {
        let adc = Adc::new(bits, 3.3).unwrap();
        let q = adc.lsb_v();
        let input = uniform_input(200_000, 0.0, 3.3 - q, bits);
        let power = input
            .iter()
            .map(|&v| (adc.volts(adc.code(v)) - v).powi(2))
            .sum::<f64>()
            / input.len() as f64;
        let ratio = power / (q * q / 12.0);
        assert!((ratio - 1.0).abs() < 0.05, "{bits} bit: {ratio}");
    }
    // A slow sine dithered by 1 LSB RMS of Gaussian-like noise (sum of uniforms)
    // also gives q²/12: the dither makes the error uniform (common practice,
    // docs/reference/front-end-and-noise.md#f8).
    let adc = Adc::new(12, 3.3).unwrap();
    let q = adc.lsb_v();
    let dither = uniform_input(400_000, -0.5, 0.5, 77);
    let power = (0..100_000)
        .map(|n| {
            let noise: f64 = dither[4 * n..4 * n + 4].iter().sum::<f64>() * 3f64.sqrt() * q;
            let v = 1.65 + 0.01 * (2.0 * PI * n as f64 / 5000.0).sin() + noise;
            (adc.volts(adc.code(v)) - v).powi(2)
        })
        .sum::<f64>()
        / 100_000.0;
    assert!((power / (q * q / 12.0) - 1.0).abs() < 0.05);
}

/// Full-scale sine SNR = 6.02·N + 1.76 dB (Bennett 1948;
/// docs/reference/check-values.md#pc22: 12 bit → 74.0 dB, 10/16 bit → 62.0/98.1 dB).
#[test]
fn full_scale_sine_snr() {
    for (bits, expected_db) in [(10u8, 62.0), (12, 74.0), (16, 98.1)] {
        assert!((ideal_sine_snr_db(bits) - expected_db).abs() < 0.05);
        let adc = Adc::new(bits, 3.3).unwrap();
        let q = adc.lsb_v();
        let half_levels = f64::from(1u32 << (bits - 1));
        let mid_v = half_levels * q;
        // Full scale less half an LSB, so that the top code is not clipped.
        let amplitude_v = (half_levels - 0.5) * q;
        // 997 cycles (prime) in 65 536 samples: every phase is visited.
        let count = 65_536;
        let (mut signal, mut error) = (0.0, 0.0);
        for n in 0..count {
            let v = mid_v + amplitude_v * (2.0 * PI * 997.0 * n as f64 / count as f64).sin();
            signal += (v - mid_v).powi(2);
            error += (adc.volts(adc.code(v)) - v).powi(2);
        }
        let snr_db = 10.0 * (signal / error).log10();
        assert!(
            (snr_db - expected_db).abs() < 0.3,
            "{bits} bit: {snr_db} dB"
        );
    }
}

/// Inputs beyond the span clip to the end codes (docs/reference/front-end-and-noise.md#f8: "clip …
/// then ADC codes [0, 2^N − 1]"); NaN does not panic.
#[test]
fn clipping_at_full_scale() {
    let adc = Adc::new(12, 3.3).unwrap();
    assert_eq!(adc.code(3.3), 4095);
    assert_eq!(adc.code(100.0), 4095);
    assert_eq!(adc.code(f64::INFINITY), 4095);
    assert_eq!(adc.code(-0.5), 0);
    assert_eq!(adc.code(f64::NEG_INFINITY), 0);
    assert_eq!(adc.code(f64::NAN), 0);
    assert!((adc.volts(4095) - (3.3 - adc.lsb_v())).abs() < 1e-12);
    // Rounding to the nearest level: half an LSB is the decision point.
    let q = adc.lsb_v();
    assert_eq!(adc.code(0.49 * q), 0);
    assert_eq!(adc.code(0.51 * q), 1);
    let mut codes = Vec::new();
    adc.codes_into(&[-1.0, 1.65, 4.0], &mut codes);
    assert_eq!(codes, vec![0, 2048, 4095]);
}

#[test]
fn bipolar_twos_complement() {
    let adc = Adc::bipolar(16, 1.0).unwrap();
    assert_eq!((adc.min_code(), adc.max_code()), (-32_768, 32_767));
    assert_eq!(adc.code(0.0), 0);
    assert_eq!(adc.code(-2.0), -32_768);
    assert_eq!(adc.code(2.0), 32_767);
    assert!((adc.volts(adc.code(0.123456)) - 0.123456).abs() <= adc.lsb_v() / 2.0);
    let same = Adc::with_span(16, -1.0, 1.0, AdcCoding::TwosComplement).unwrap();
    assert_eq!(same, adc);
}

#[test]
fn adc_parameters_are_validated() {
    assert_eq!(Adc::new(0, 3.3).unwrap_err().param, "bits");
    assert_eq!(Adc::new(25, 3.3).unwrap_err().param, "bits");
    assert_eq!(Adc::new(12, 0.0).unwrap_err().param, "full_scale_v");
    assert_eq!(Adc::new(12, f64::NAN).unwrap_err().param, "full_scale_v");
    assert_eq!(Adc::bipolar(12, -1.0).unwrap_err().param, "half_span_v");
    assert_eq!(
        Adc::with_span(12, 1.0, 1.0, AdcCoding::OffsetBinary)
            .unwrap_err()
            .param,
        "high_v"
    );
    assert_eq!(Adc::new(24, 3.3).unwrap().max_code(), (1 << 24) - 1);
}
