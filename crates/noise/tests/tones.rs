//! Mains hum and lamp flicker lines (docs/reference/front-end-and-noise.md#f4,
//! check-values.md#pc25: 50, 100, 150 … Hz / 60, 120, 180 … Hz; lamp at 2·f_m; common practice).

mod support;

use echobench_noise::{LampFlicker, LampFlickerParams, MainsHum, MainsHumParams};
use rustfft::{num_complex::Complex, FftPlanner};
use support::{run_in_blocks, tone_amplitude};

/// Frequencies of the `count` largest FFT bins of a signal whose length is a
/// whole number of seconds (so each line falls on a bin), sorted.
fn strongest_lines_hz(signal: &[f64], fs: f64, count: usize) -> Vec<f64> {
    let mut buffer: Vec<Complex<f64>> = signal.iter().map(|&x| Complex::new(x, 0.0)).collect();
    FftPlanner::new()
        .plan_fft_forward(buffer.len())
        .process(&mut buffer);
    let mut bins: Vec<(usize, f64)> = buffer[..buffer.len() / 2]
        .iter()
        .map(|c| c.norm())
        .enumerate()
        .collect();
    bins.sort_by(|a, b| b.1.total_cmp(&a.1));
    let mut lines: Vec<f64> = bins[..count]
        .iter()
        .map(|(k, _)| *k as f64 * fs / signal.len() as f64)
        .collect();
    lines.sort_by(f64::total_cmp);
    lines
}

#[test]
fn hum_lines_at_mains_harmonics() {
    let fs = 1000.0;
    let amplitudes = vec![1e-3, 2e-4, 5e-4, 1e-4, 3e-4];
    for mains_hz in [50.0, 60.0] {
        let params = MainsHumParams {
            mains_hz,
            harmonic_amplitudes_v: amplitudes.clone(),
            frequency_offset_hz: 0.0,
        };
        let mut hum = MainsHum::new(&params, fs, [1; 32]).unwrap();
        let signal = run_in_blocks(&mut hum, 20_000, 999);
        let expected: Vec<f64> = (1..=5).map(|k| k as f64 * mains_hz).collect();
        assert_eq!(strongest_lines_hz(&signal, fs, 5), expected);
        for (k, amplitude) in amplitudes.iter().enumerate() {
            let measured = tone_amplitude(&signal, fs, (k + 1) as f64 * mains_hz);
            assert!(
                (measured / amplitude - 1.0).abs() < 1e-6,
                "{mains_hz} Hz h{}",
                k + 1
            );
        }
        assert!(tone_amplitude(&signal, fs, 1.5 * mains_hz) < 1e-9);
    }
}

#[test]
fn hum_follows_grid_offset() {
    let fs = 2000.0;
    let params = MainsHumParams {
        mains_hz: 50.0,
        harmonic_amplitudes_v: vec![1e-3, 0.0, 4e-4],
        frequency_offset_hz: -0.25,
    };
    let mut hum = MainsHum::new(&params, fs, [2; 32]).unwrap();
    assert_eq!(hum.fundamental_hz(), 49.75);
    let signal = run_in_blocks(&mut hum, 80_000, 4096);
    assert!((tone_amplitude(&signal, fs, 49.75) / 1e-3 - 1.0).abs() < 1e-6);
    assert!((tone_amplitude(&signal, fs, 149.25) / 4e-4 - 1.0).abs() < 1e-6);
    // The nominal line is empty: 50 Hz is 10 bins of a 40 s record away.
    assert!(tone_amplitude(&signal, fs, 50.0) < 1e-5);
}

#[test]
fn harmonics_above_nyquist_are_left_out() {
    let fs = 400.0;
    let params = MainsHumParams {
        mains_hz: 60.0,
        harmonic_amplitudes_v: vec![1e-3, 1e-3, 1e-3, 1e-3],
        frequency_offset_hz: 0.0,
    };
    let mut hum = MainsHum::new(&params, fs, [3; 32]).unwrap();
    let signal = run_in_blocks(&mut hum, 4000, 4096);
    // 240 Hz (4th) is above f_s/2 = 200 Hz; it would alias to 160 Hz.
    assert!(tone_amplitude(&signal, fs, 160.0) < 1e-9);
    assert!((tone_amplitude(&signal, fs, 180.0) / 1e-3 - 1.0).abs() < 1e-6);
}

#[test]
fn lamp_lines_at_twice_mains() {
    let fs = 2000.0;
    for mains_hz in [50.0, 60.0] {
        let params = LampFlickerParams {
            mains_hz,
            harmonic_amplitudes_v: vec![3e-4, 1e-4, 5e-5],
            frequency_offset_hz: 0.0,
        };
        let mut lamp = LampFlicker::new(&params, fs, [4; 32]).unwrap();
        assert_eq!(lamp.first_tone_hz(), 2.0 * mains_hz);
        let signal = run_in_blocks(&mut lamp, 10_000, 7);
        let expected: Vec<f64> = (1..=3).map(|k| 2.0 * k as f64 * mains_hz).collect();
        assert_eq!(strongest_lines_hz(&signal, fs, 3), expected);
        // Nothing at the mains fundamental or odd harmonics.
        assert!(tone_amplitude(&signal, fs, mains_hz) < 1e-9);
        assert!(tone_amplitude(&signal, fs, 3.0 * mains_hz) < 1e-9);
    }
}

#[test]
fn mains_parameters_are_validated() {
    let good = MainsHumParams {
        mains_hz: 50.0,
        harmonic_amplitudes_v: vec![1e-3, 1e-4],
        frequency_offset_hz: 0.3,
    };
    assert!(MainsHum::new(&good, 1000.0, [0; 32]).is_ok());
    let cases = [
        (
            MainsHumParams {
                mains_hz: 55.0,
                ..good.clone()
            },
            "mains_hz",
        ),
        (
            MainsHumParams {
                mains_hz: f64::NAN,
                ..good.clone()
            },
            "mains_hz",
        ),
        (
            MainsHumParams {
                frequency_offset_hz: 3.0,
                ..good.clone()
            },
            "frequency_offset_hz",
        ),
        (
            MainsHumParams {
                harmonic_amplitudes_v: vec![1e-3, f64::INFINITY],
                ..good.clone()
            },
            "harmonic_amplitudes_v[1]",
        ),
    ];
    for (params, field) in cases {
        let error = MainsHum::new(&params, 1000.0, [0; 32]).unwrap_err();
        assert_eq!(error.param, field);
        assert!(error.to_string().contains(field));
    }
    assert_eq!(
        MainsHum::new(&good, 0.0, [0; 32]).unwrap_err().param,
        "sample_rate_hz"
    );
    let lamp = LampFlickerParams {
        mains_hz: 400.0,
        harmonic_amplitudes_v: vec![1e-3],
        frequency_offset_hz: 0.0,
    };
    assert_eq!(
        LampFlicker::new(&lamp, 1000.0, [0; 32]).unwrap_err().param,
        "mains_hz"
    );
}
