//! Impulsive radio bursts (docs/reference/front-end-and-noise.md#f6; check-values.md#pc20).

mod support;

use echobench_noise::{
    RadioBurstParams, RadioBursts, COMMON_BEACON_INTERVAL_S, IEEE_802_11_TIME_UNIT_S,
};
use support::{run_in_blocks, tone_amplitude};

fn beacon_params(width_s: f64, power_jitter_db: f64) -> RadioBurstParams {
    RadioBurstParams {
        poisson_rate_hz: 0.0,
        periodic_interval_s: Some(COMMON_BEACON_INTERVAL_S),
        width_s,
        amplitude_v: 2e-3,
        power_jitter_db,
    }
}

/// Pulse onsets, s, recovered exactly from the fractional first sample of each
/// pulse (value = amplitude × covered fraction of the sample).
fn onsets_s(signal: &[f64], amplitude_v: f64, fs: f64) -> Vec<f64> {
    let mut onsets = Vec::new();
    for n in 0..signal.len() {
        let previous = if n == 0 { 0.0 } else { signal[n - 1] };
        if signal[n] > 0.0 && previous == 0.0 {
            onsets.push((n as f64 + 1.0 - signal[n] / amplitude_v) / fs);
        }
    }
    onsets
}

/// docs/reference/check-values.md#pc20: the beacon train has a 102.4 ms period (100 TU, IEEE 802.11
/// TU = 1024 µs), i.e. lines at multiples of 9.766 Hz.
#[test]
fn beacon_period_is_102_4_ms() {
    assert_eq!(IEEE_802_11_TIME_UNIT_S, 1.024e-3);
    assert!((COMMON_BEACON_INTERVAL_S - 0.1024).abs() < 1e-15);
    assert!((1.0 / COMMON_BEACON_INTERVAL_S - 9.766).abs() < 5e-4);
    let fs = 8000.0;
    let mut bursts = RadioBursts::new(&beacon_params(1e-3, 0.0), fs, [5; 32]).unwrap();
    let signal = run_in_blocks(&mut bursts, 8000 * 20, 4096);
    let onsets = onsets_s(&signal, 2e-3, fs);
    assert!((onsets.len() as i64 - (20.0 / 0.1024) as i64).abs() <= 1);
    for pair in onsets.windows(2) {
        assert!(
            (pair[1] - pair[0] - 0.1024).abs() < 1e-9,
            "gap {}",
            pair[1] - pair[0]
        );
    }
    // The first beacon lands inside the first interval.
    assert!(onsets[0] < 0.1024);
    // Spectral lines of the train: strong at 9.765625 Hz, nothing half-way.
    let line = tone_amplitude(&signal, fs, 1.0 / 0.1024);
    let between = tone_amplitude(&signal, fs, 1.5 / 0.1024);
    assert!(line > 100.0 * between, "line {line}, between {between}");
}

/// Each pulse carries amplitude × width of area, also when its edges fall inside
/// samples and when it is shorter than one sample.
#[test]
fn pulse_area_is_amplitude_times_width() {
    for (fs, width_s) in [(8000.0, 1e-3), (2000.0, 0.2e-3), (1000.0, 2.7e-3)] {
        let mut bursts = RadioBursts::new(&beacon_params(width_s, 0.0), fs, [6; 32]).unwrap();
        let signal = run_in_blocks(&mut bursts, (fs * 10.0) as usize, 4096);
        let record_s = signal.len() as f64 / fs;
        let complete: Vec<f64> = onsets_s(&signal, 2e-3, fs)
            .into_iter()
            .filter(|onset| onset + width_s <= record_s)
            .collect();
        let last_end_s = complete.last().unwrap() + width_s;
        let area_v_s = signal[..(last_end_s * fs).ceil() as usize]
            .iter()
            .sum::<f64>()
            / fs;
        let per_pulse = area_v_s / complete.len() as f64;
        assert!(
            (per_pulse / (2e-3 * width_s) - 1.0).abs() < 1e-9,
            "fs {fs}: {per_pulse}"
        );
    }
}

/// Poisson arrivals: mean count rate·T (±4σ) and a dispersion index (variance /
/// mean of counts per window) of 1 (property of the Poisson process).
#[test]
fn poisson_arrivals_have_the_configured_rate() {
    let fs = 2000.0;
    let rate_hz = 20.0;
    let width_s = 0.2e-3;
    let params = RadioBurstParams {
        poisson_rate_hz: rate_hz,
        periodic_interval_s: None,
        width_s,
        amplitude_v: 1.0,
        power_jitter_db: 0.0,
    };
    let mut bursts = RadioBursts::new(&params, fs, [7; 32]).unwrap();
    let seconds = 500;
    let signal = run_in_blocks(&mut bursts, seconds * 2000, 4096);
    // Area per pulse is width_s (unit amplitude), so counts follow from areas.
    let counts: Vec<f64> = signal
        .chunks(2000)
        .map(|window| (window.iter().sum::<f64>() / fs / width_s).round())
        .collect();
    let total: f64 = counts.iter().sum();
    let expected = rate_hz * seconds as f64;
    assert!(
        (total - expected).abs() < 4.0 * expected.sqrt(),
        "total {total}"
    );
    let mean = total / counts.len() as f64;
    let variance =
        counts.iter().map(|c| (c - mean) * (c - mean)).sum::<f64>() / (counts.len() - 1) as f64;
    assert!(
        (variance / mean - 1.0).abs() < 0.25,
        "dispersion {}",
        variance / mean
    );
}

/// Log-normal power jitter: 10·log10(a/A) has mean 0 and standard deviation
/// `power_jitter_db` (square-law detection: amplitude ∝ power; common practice).
#[test]
fn power_jitter_is_log_normal_in_db() {
    let fs = 8000.0;
    let mut bursts = RadioBursts::new(&beacon_params(3e-3, 6.0), fs, [8; 32]).unwrap();
    let signal = run_in_blocks(&mut bursts, 8000 * 120, 4096);
    // A 3 ms pulse covers 24 samples; its interior samples hold the full amplitude.
    let mut levels_db = Vec::new();
    let mut peak: f64 = 0.0;
    for &v in &signal {
        if v > 0.0 {
            peak = peak.max(v);
        } else if peak > 0.0 {
            levels_db.push(10.0 * (peak / 2e-3).log10());
            peak = 0.0;
        }
    }
    assert!(levels_db.len() > 1000);
    let n = levels_db.len() as f64;
    let mean = levels_db.iter().sum::<f64>() / n;
    let sd = (levels_db
        .iter()
        .map(|l| (l - mean) * (l - mean))
        .sum::<f64>()
        / (n - 1.0))
        .sqrt();
    assert!(mean.abs() < 0.6, "mean {mean} dB");
    assert!((sd - 6.0).abs() < 0.5, "sd {sd} dB");
}

#[test]
fn burst_parameters_are_validated() {
    let good = beacon_params(1e-3, 2.0);
    let cases = [
        (
            RadioBurstParams {
                width_s: 0.0,
                ..good.clone()
            },
            "width_s",
        ),
        (
            RadioBurstParams {
                poisson_rate_hz: -1.0,
                ..good.clone()
            },
            "poisson_rate_hz",
        ),
        (
            RadioBurstParams {
                periodic_interval_s: Some(f64::NAN),
                ..good.clone()
            },
            "periodic_interval_s",
        ),
        (
            RadioBurstParams {
                amplitude_v: f64::INFINITY,
                ..good.clone()
            },
            "amplitude_v",
        ),
        (
            RadioBurstParams {
                power_jitter_db: -3.0,
                ..good.clone()
            },
            "power_jitter_db",
        ),
    ];
    for (params, field) in cases {
        assert_eq!(
            RadioBursts::new(&params, 8000.0, [0; 32])
                .unwrap_err()
                .param,
            field
        );
    }
}
