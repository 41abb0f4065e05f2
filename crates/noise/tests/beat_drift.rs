//! Neighbouring-sensor beat tone and slow DC drift
//! (docs/reference/front-end-and-noise.md#f3 and #f7).

mod support;

use echobench_noise::{BeatTone, BeatToneParams, DcDrift, DcDriftParams, OffsetDrift};
use support::{run_in_blocks, tone_amplitude};

#[test]
fn steady_beat_is_a_tone_at_the_offset() {
    let fs = 2000.0;
    for offset_hz in [7.0, -7.0] {
        let params = BeatToneParams {
            amplitude_v: 1e-3,
            mean_offset_hz: offset_hz,
            drift: OffsetDrift::Steady,
        };
        let mut beat = BeatTone::new(&params, fs, [1; 32]).unwrap();
        let signal = run_in_blocks(&mut beat, 20_000, 4096);
        // A real single-channel output cannot tell the sign of f1 − f2.
        assert!((tone_amplitude(&signal, fs, 7.0) / 1e-3 - 1.0).abs() < 1e-6);
        assert!(tone_amplitude(&signal, fs, 9.0) < 1e-9);
    }
}

/// With f_b(t) = A·sin(2πt/P + ψ), the phase advances by ∫|f_b| dt = 2AP/π cycles
/// per drift period, and cos φ crosses zero twice per cycle: 4AP/π crossings
/// (phase integration; a clamped or restarted phase would break this count).
#[test]
fn drifting_beat_crosses_zero_as_its_integrated_phase() {
    let fs = 4000.0;
    let (amplitude_hz, period_s) = (20.0, 5.0);
    let params = BeatToneParams {
        amplitude_v: 1.0,
        mean_offset_hz: 0.0,
        drift: OffsetDrift::Sinusoidal {
            amplitude_hz,
            period_s,
        },
    };
    let mut beat = BeatTone::new(&params, fs, [2; 32]).unwrap();
    let periods = 4.0;
    let signal = run_in_blocks(&mut beat, (fs * period_s * periods) as usize, 4096);
    let crossings = signal
        .windows(2)
        .filter(|w| (w[0] < 0.0) != (w[1] < 0.0))
        .count() as f64;
    let expected = periods * 4.0 * amplitude_hz * period_s / std::f64::consts::PI;
    // Near each zero of f_b the phase turns back; that can add or remove a
    // crossing (two turning points per drift period).
    assert!(
        (crossings - expected).abs() <= 2.0 * periods + 1.0,
        "{crossings} vs {expected}"
    );
    // The waveform is continuous: no step larger than one sample of the fastest beat.
    let max_step = signal
        .windows(2)
        .map(|w| (w[1] - w[0]).abs())
        .fold(0.0, f64::max);
    assert!(max_step <= 2.0 * std::f64::consts::PI * amplitude_hz / fs * 1.001);
}

#[test]
fn beat_offset_wanders_with_the_configured_rms() {
    let fs = 1000.0;
    let params = BeatToneParams {
        amplitude_v: 1e-3,
        mean_offset_hz: 50.0,
        drift: OffsetDrift::OrnsteinUhlenbeck {
            rms_hz: 30.0,
            time_constant_s: 0.5,
        },
    };
    let mut beat = BeatTone::new(&params, fs, [3; 32]).unwrap();
    let mut block = [0.0; 1];
    let offsets: Vec<f64> = (0..500_000)
        .map(|_| {
            let f = beat.offset_hz();
            echobench_noise::AdditiveNoise::add_to(&mut beat, &mut block);
            f
        })
        .collect();
    let n = offsets.len() as f64;
    let mean = offsets.iter().sum::<f64>() / n;
    let rms = (offsets.iter().map(|f| (f - mean) * (f - mean)).sum::<f64>() / n).sqrt();
    assert!((mean - 50.0).abs() < 3.0, "mean {mean}");
    assert!((rms / 30.0 - 1.0).abs() < 0.1, "rms {rms}");
}

/// The simulation's anti-alias taper: full amplitude up to 0.4·f_s, half at
/// 0.45·f_s (raised-cosine midpoint), silent above f_s/2.
#[test]
fn beat_above_nyquist_does_not_alias() {
    let fs = 1000.0;
    for (offset_hz, gain) in [(390.0, 1.0), (450.0, 0.5), (600.0, 0.0), (-600.0, 0.0)] {
        let params = BeatToneParams {
            amplitude_v: 1.0,
            mean_offset_hz: offset_hz,
            drift: OffsetDrift::Steady,
        };
        let mut beat = BeatTone::new(&params, fs, [4; 32]).unwrap();
        let signal = run_in_blocks(&mut beat, 10_000, 4096);
        let peak = signal.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        assert!((peak - gain).abs() < 0.01, "{offset_hz} Hz: peak {peak}");
    }
}

/// Smoothed DC drift: RMS as configured and autocorrelation (1 + 1)·e^{−1} = 0.736 at a
/// lag of one time constant (OU process through a first-order lag of the same τ).
#[test]
fn dc_drift_has_rms_and_correlation_time() {
    let fs = 100.0;
    let params = DcDriftParams {
        rms_v: 0.02,
        time_constant_s: 1.0,
    };
    let mut drift = DcDrift::new(&params, fs, [5; 32]).unwrap();
    let signal = run_in_blocks(&mut drift, 200_000, 4096);
    let n = signal.len() as f64;
    let mean = signal.iter().sum::<f64>() / n;
    let variance = signal.iter().map(|x| (x - mean) * (x - mean)).sum::<f64>() / n;
    assert!(
        (variance.sqrt() / 0.02 - 1.0).abs() < 0.1,
        "rms {}",
        variance.sqrt()
    );
    let lag = 100;
    let covariance = signal
        .iter()
        .zip(&signal[lag..])
        .map(|(a, b)| (a - mean) * (b - mean))
        .sum::<f64>()
        / (n - lag as f64);
    let correlation = covariance / variance;
    assert!(
        (correlation - 2.0 * (-1f64).exp()).abs() < 0.05,
        "r(τ) = {correlation}"
    );
}

#[test]
fn drift_parameters_are_validated() {
    let bad_tau = BeatToneParams {
        amplitude_v: 1e-3,
        mean_offset_hz: 0.0,
        drift: OffsetDrift::OrnsteinUhlenbeck {
            rms_hz: 1.0,
            time_constant_s: 0.0,
        },
    };
    assert_eq!(
        BeatTone::new(&bad_tau, 1000.0, [0; 32]).unwrap_err().param,
        "drift.time_constant_s"
    );
    let bad_period = BeatToneParams {
        drift: OffsetDrift::Sinusoidal {
            amplitude_hz: 1.0,
            period_s: -1.0,
        },
        ..bad_tau.clone()
    };
    assert_eq!(
        BeatTone::new(&bad_period, 1000.0, [0; 32])
            .unwrap_err()
            .param,
        "drift.period_s"
    );
    let bad_mean = BeatToneParams {
        mean_offset_hz: f64::NAN,
        ..bad_tau
    };
    assert_eq!(
        BeatTone::new(&bad_mean, 1000.0, [0; 32]).unwrap_err().param,
        "mean_offset_hz"
    );
    let bad_rms = DcDriftParams {
        rms_v: -1.0,
        time_constant_s: 1.0,
    };
    assert_eq!(
        DcDrift::new(&bad_rms, 1000.0, [0; 32]).unwrap_err().param,
        "rms_v"
    );
}
