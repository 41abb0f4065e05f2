//! First-order sections and RC corners (docs/reference/front-end-and-noise.md#f9 and #f10;
//! check-values.md#pc23 and the other numbers there, verified with scipy.signal.bilinear).

mod support;

use echobench_frontend::{
    bilinear_corner_without_prewarp_hz, corner_from_rc_hz, FirstOrderSection, SectionKind,
};
use std::f64::consts::PI;
use support::fitted_amplitude;

/// Steady-state amplitude of `section`'s response to a unit sine at `f_hz`,
/// fitted by least squares on cos, sin and a constant after a settling time.
fn measured_gain(mut section: FirstOrderSection, f_hz: f64, fs: f64, settle_s: f64) -> f64 {
    let settle = (settle_s * fs) as usize;
    let measure = ((20.0 / f_hz).max(1.0) * fs) as usize;
    let mut rows = Vec::with_capacity(measure);
    for n in 0..settle + measure {
        let phase = 2.0 * PI * f_hz * n as f64 / fs;
        let y = section.process(phase.sin());
        if n >= settle {
            rows.push((phase.cos(), phase.sin(), y));
        }
    }
    fitted_amplitude(&rows)
}

/// docs/reference/check-values.md#pc23: f_s = 1 kHz, f_c = 100 Hz low-pass: K = 0.3249197,
/// b0 = b1 = 0.2452373, a1 = −0.5095254, |H(f_c)| = −3.0103 dB.
#[test]
fn check_23_low_pass_coefficients_and_corner() {
    let lp = FirstOrderSection::low_pass(100.0, 1000.0).unwrap();
    let (b0, b1, a1) = lp.coefficients();
    assert!((b0 - 0.2452373).abs() < 5e-8);
    assert!((b1 - 0.2452373).abs() < 5e-8);
    assert!((a1 + 0.5095254).abs() < 5e-8);
    assert!(((PI * 100.0 / 1000.0).tan() - 0.3249197).abs() < 5e-8);
    let analytic_db = 20.0 * lp.magnitude_at(100.0).log10();
    assert!((analytic_db + 3.0103).abs() < 5e-5, "{analytic_db} dB");
    let measured_db = 20.0 * measured_gain(lp, 100.0, 1000.0, 0.2).log10();
    assert!(
        (measured_db + 3.0103).abs() < 1e-3,
        "measured {measured_db} dB"
    );
}

/// docs/reference/front-end-and-noise.md#f10: f_s = 1 kHz, f_c = 0.5 Hz high-pass: K = 0.0015708,
/// b0 = 0.9984317, a1 = −0.9968633; and its −3 dB point measured with a sine.
#[test]
fn half_hertz_high_pass() {
    let hp = FirstOrderSection::high_pass(0.5, 1000.0).unwrap();
    let (b0, b1, a1) = hp.coefficients();
    assert!((b0 - 0.9984317).abs() < 5e-8);
    assert_eq!(b1, -b0);
    assert!((a1 + 0.9968633).abs() < 5e-8);
    // τ = 0.318 s: settle 10τ.
    let measured_db = 20.0 * measured_gain(hp, 0.5, 1000.0, 3.2).log10();
    assert!(
        (measured_db + 3.0103).abs() < 2e-3,
        "measured {measured_db} dB"
    );
}

/// docs/reference/front-end-and-noise.md#f10: the 0.5 Hz high-pass at f_sim = 16 kHz has its pole
/// at 0.99980 (why the states are f64).
#[test]
fn high_pass_pole_at_16_khz() {
    let hp = FirstOrderSection::high_pass(0.5, 16_000.0).unwrap();
    let pole = -hp.coefficients().2;
    assert!((pole - 0.99980).abs() < 5e-6, "pole {pole}");
}

/// docs/reference/front-end-and-noise.md#f10: without pre-warping, an analog 100 Hz corner lands at
/// 96.89 Hz at 1 kHz; with pre-warping the section's −3 dB point is exactly 100 Hz.
#[test]
fn prewarping_matters() {
    let unwarped = bilinear_corner_without_prewarp_hz(100.0, 1000.0);
    assert!((unwarped - 96.89).abs() < 0.005, "{unwarped}");
    let lp = FirstOrderSection::low_pass(100.0, 1000.0).unwrap();
    assert!((lp.magnitude_at(100.0) - 0.5f64.sqrt()).abs() < 1e-12);
    assert!((lp.magnitude_at(unwarped) - 0.5f64.sqrt()).abs() > 1e-3);
}

/// docs/reference/front-end-and-noise.md#f9: f_c = 1/(2πRC): 47 kΩ·10 µF → 0.339 Hz; 1 MΩ·1 µF →
/// 0.159 Hz; 100 kΩ·22 nF → 72.3 Hz; 10 kΩ·100 nF → 159 Hz.
#[test]
fn rc_corners() {
    let cases = [
        (47e3, 10e-6, 0.339, 5e-4),
        (1e6, 1e-6, 0.159, 5e-4),
        (100e3, 22e-9, 72.3, 0.05),
        (10e3, 100e-9, 159.0, 0.5),
    ];
    for (r, c, expected, tolerance) in cases {
        let corner = corner_from_rc_hz(r, c);
        assert!(
            (corner - expected).abs() < tolerance,
            "{r} Ω, {c} F: {corner} Hz"
        );
    }
    // Bad component values give a corner the section constructors reject.
    for (r, c) in [(0.0, 1e-6), (-1e3, 1e-6), (f64::NAN, 1e-6)] {
        let corner = corner_from_rc_hz(r, c);
        let error = FirstOrderSection::high_pass(corner, 1000.0).unwrap_err();
        assert_eq!(error.param, "corner_hz");
    }
}

/// DC gain 1 (low-pass) and 0 (high-pass); gain at Nyquist 0 and 1 (bilinear
/// maps s = ∞ to z = −1).
#[test]
fn band_edges() {
    let lp = FirstOrderSection::low_pass(50.0, 1000.0).unwrap();
    let hp = FirstOrderSection::high_pass(50.0, 1000.0).unwrap();
    assert!((lp.magnitude_at(0.0) - 1.0).abs() < 1e-12);
    assert!(hp.magnitude_at(0.0).abs() < 1e-12);
    assert!(lp.magnitude_at(500.0).abs() < 1e-12);
    assert!((hp.magnitude_at(500.0) - 1.0).abs() < 1e-12);
    assert_eq!(lp.kind(), SectionKind::LowPass);
}

#[test]
fn settle_and_reset() {
    let mut hp = FirstOrderSection::high_pass(1.0, 1000.0).unwrap();
    assert_eq!(hp.settle_to(0.7), 0.0);
    // Already settled: a constant input keeps the output at 0.
    for _ in 0..100 {
        assert!(hp.process(0.7).abs() < 1e-15);
    }
    hp.reset();
    // From rest, a step passes through the high-pass at first (b0 ≈ 1).
    assert!(hp.process(0.7) > 0.69);
    let mut lp = FirstOrderSection::low_pass(10.0, 1000.0).unwrap();
    assert_eq!(lp.settle_to(-0.2), -0.2);
    assert!((lp.process(-0.2) + 0.2).abs() < 1e-15);
}

#[test]
fn bad_corners_are_rejected() {
    for corner in [0.0, -3.0, 500.0, 700.0, f64::NAN, f64::INFINITY] {
        assert_eq!(
            FirstOrderSection::low_pass(corner, 1000.0)
                .unwrap_err()
                .param,
            "corner_hz"
        );
    }
    for fs in [0.0, f64::NAN] {
        assert_eq!(
            FirstOrderSection::low_pass(10.0, fs).unwrap_err().param,
            "sample_rate_hz"
        );
    }
}
