//! Monte Carlo false-alarm rates against Pfa = Π_{i<k} (N−i)/(N−i+T)
//! (Rohling 1983; Richards 2014 §6.5.6).
//!
//! Seeded; each check asserts |p̂ − p| ≤ 4.5·√(p(1 − p)/M) (docs/reference/statistics.md#s9).

use echobench_core::detector::{test_stream, Detector, Samples};
use echobench_detector_dsp::Window;
use echobench_detector_os_cfar::{os_multiplier, os_ratio, OsCfarConfig, OsCfarDetector};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Exp1, StandardNormal};

fn assert_in_interval(hits: usize, trials: usize, p: f64, what: &str) {
    let measured = hits as f64 / trials as f64;
    let half_width = 4.5 * (p * (1.0 - p) / trials as f64).sqrt();
    assert!(
        (measured - p).abs() <= half_width,
        "{what}: measured {measured:.6e} vs {p:.6e} ± {half_width:.2e} ({hits}/{trials})"
    );
}

#[test]
fn exponential_cells_follow_the_closed_form() {
    // docs/reference/check-values.md#cv11 [MC]: N = 24, k = 18, T = 6.50243 → 0.000995 over 2e6.
    const TRIALS: usize = 200_000;
    let mut rng = ChaCha8Rng::from_seed([21; 32]);
    for (n, k) in [(24usize, 18usize), (16, 12)] {
        let thresholds = [os_multiplier(n, k, 1e-2), os_multiplier(n, k, 1e-3)];
        let mut hits = [0usize; 2];
        let mut cells = vec![0.0; n];
        for _ in 0..TRIALS {
            let cut: f64 = rng.sample(Exp1);
            for c in cells.iter_mut() {
                *c = rng.sample(Exp1);
            }
            let ratio = os_ratio(cut, &mut cells, k);
            for (h, &t) in hits.iter_mut().zip(&thresholds) {
                *h += usize::from(ratio >= t);
            }
        }
        for (h, pfa) in hits.iter().zip([1e-2, 1e-3]) {
            assert_in_interval(*h, TRIALS, pfa, &format!("N={n} k={k} Pfa={pfa}"));
        }
    }
}

#[test]
fn rectangular_frames_without_overlap_follow_the_closed_form() {
    // The detector itself on white Gaussian noise with a rectangular window
    // and hop = frame_len: 64-point frames at 64 Hz (1 Hz bins), CUT bin 16
    // only, guard 1, train 8: cells 7–25, away from DC and Nyquist.
    const FRAMES: usize = 200_000;
    let config = OsCfarConfig {
        window: Window::Rectangular,
        frame_len: 64,
        hop: 64,
        guard: 1,
        train: 8,
        rank: 12,
        low_hz: 15.5,
        high_hz: 16.5,
        band_params: ("low_hz", "high_hz"),
        pfa: 1e-2,
    };
    let info = test_stream(64.0);
    let mut detector = OsCfarDetector::new(&config, &info).unwrap();
    assert_eq!(detector.cut_bins(), &[16]);
    let mut rng = ChaCha8Rng::from_seed([22; 32]);
    let mut chunk = vec![0.0f32; 64 * 100];
    let mut scores = Vec::with_capacity(FRAMES);
    for _ in 0..FRAMES / 100 {
        for v in chunk.iter_mut() {
            let g: f32 = rng.sample(StandardNormal);
            *v = 0.002 * g;
        }
        detector
            .process(Samples::Real(&chunk), &mut scores)
            .unwrap();
    }
    assert_eq!(scores.len(), FRAMES);
    for pfa in [1e-2, 1e-3] {
        let t = os_multiplier(16, 12, pfa);
        let hits = scores.iter().filter(|s| s.value >= t).count();
        assert_in_interval(hits, FRAMES, pfa, &format!("frames, Pfa={pfa}"));
    }
}
