//! The energy statistic in white Gaussian noise (docs/reference/detectors.md#d2; Urkowitz 1967;
//! Kay 1998 Vol. II): with N samples per frame and known σ², N·score/σ² ~ χ²_N
//! for real samples and ~ Gamma(N, 1) for complex samples of total variance σ².
//! Thresholds come from `statrs` quantiles; the measured per-frame Pfa must lie
//! within |p̂ − p| ≤ 4.5·√(p(1 − p)/M) (docs/reference/statistics.md#s9).

use echobench_core::detector::{test_stream, DetectorPlugin, ParamValue, Params, Samples};
use echobench_core::{Channels, FrameScore, StreamInfo};
use echobench_detector_energy::EnergyPlugin;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use statrs::distribution::{ChiSquared, ContinuousCDF, Gamma};

#[test]
fn check_values_cv1_and_cv2_agree_with_statrs() {
    // cv1: chi2.isf(1e-3, 16) = 39.252355; cv2: gamma.isf(1e-3, 16) = 31.243610
    // (docs/reference/check-values.md#cv1 and #cv2, computed with scipy), to 1e-6 relative.
    let chi2 = ChiSquared::new(16.0)
        .expect("valid dof")
        .inverse_cdf(1.0 - 1e-3);
    assert!((chi2 / 39.252355 - 1.0).abs() <= 1e-6, "{chi2}");
    let gamma = Gamma::new(16.0, 1.0)
        .expect("valid shape")
        .inverse_cdf(1.0 - 1e-3);
    assert!((gamma / 31.243610 - 1.0).abs() <= 1e-6, "{gamma}");
}

/// Feeds `frames` non-overlapping frames of white Gaussian noise and returns
/// every frame's score (generated in chunks so memory stays small).
fn noise_scores(
    info: StreamInfo,
    frame_len: usize,
    frames: usize,
    sigma: f64,
    seed: u8,
) -> Vec<f64> {
    let given = [
        ("normalise".to_string(), ParamValue::Text("none".into())),
        (
            "frame_len".to_string(),
            ParamValue::Integer(frame_len as i64),
        ),
        ("hop".to_string(), ParamValue::Integer(frame_len as i64)),
    ];
    let params = Params::resolve("energy", EnergyPlugin.params(), &given).expect("valid");
    let mut detector = EnergyPlugin
        .plan(&params, &info)
        .map(|plan| plan.start())
        .expect("valid");
    let mut rng = ChaCha8Rng::from_seed([seed; 32]);
    let normal = Normal::new(0.0, sigma).expect("valid sigma");
    let values = frames * frame_len * info.channels.count();
    let mut block = vec![0.0_f32; 8192];
    let mut out: Vec<FrameScore> = Vec::with_capacity(1024);
    let mut scores = Vec::with_capacity(frames);
    let mut done = 0;
    while done < values {
        let len = block.len().min(values - done);
        for x in &mut block[..len] {
            *x = normal.sample(&mut rng) as f32;
        }
        detector
            .process(
                Samples::from_values(&block[..len], info.channels).unwrap(),
                &mut out,
            )
            .unwrap();
        scores.extend(out.drain(..).map(|s| s.value));
        done += len;
    }
    assert_eq!(scores.len(), frames);
    scores
}

fn assert_pfa(scores: &[f64], threshold: f64, pfa: f64, what: &str) {
    let m = scores.len() as f64;
    let alarms = scores.iter().filter(|&&s| s >= threshold).count() as f64;
    let measured = alarms / m;
    let half_width = 4.5 * (pfa * (1.0 - pfa) / m).sqrt();
    eprintln!("{what}: Pfa {pfa}: measured {measured} over {m} frames (± {half_width})");
    assert!(
        (measured - pfa).abs() <= half_width,
        "{what}: measured Pfa {measured} vs {pfa} ± {half_width}"
    );
}

#[test]
fn real_noise_pfa_matches_the_chi_square_quantile() {
    let n = 16;
    let sigma = 0.01;
    let scores = noise_scores(test_stream(2000.0), n, 1_000_000, sigma, 11);
    let chi2 = ChiSquared::new(n as f64).expect("valid dof");
    for pfa in [1e-2, 1e-3] {
        // Alarm if N·score/σ² ≥ γ, i.e. score ≥ γ·σ²/N.
        let gamma = chi2.inverse_cdf(1.0 - pfa);
        assert_pfa(
            &scores,
            gamma * sigma * sigma / n as f64,
            pfa,
            "real, N = 16",
        );
    }
}

#[test]
fn complex_noise_pfa_matches_the_gamma_quantile() {
    // CN(0, σ²): σ²/2 per rail (docs/reference/detectors.md#d1).
    let n = 16;
    let sigma2: f64 = 2.0e-4;
    let info = StreamInfo {
        channels: Channels::Iq,
        ..test_stream(2000.0)
    };
    let scores = noise_scores(info, n, 500_000, (sigma2 / 2.0).sqrt(), 12);
    let gamma = Gamma::new(n as f64, 1.0).expect("valid shape");
    for pfa in [1e-2, 1e-3] {
        let threshold = gamma.inverse_cdf(1.0 - pfa) * sigma2 / n as f64;
        assert_pfa(&scores, threshold, pfa, "complex, N = 16");
    }
}
