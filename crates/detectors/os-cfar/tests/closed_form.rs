//! Closed-form OS-CFAR false-alarm probabilities and multipliers against
//! published values and the Gamma-function form of the same law.

use echobench_detector_os_cfar::{os_multiplier, os_pfa, os_ratio};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use statrs::function::gamma::ln_gamma;

#[test]
fn multipliers_match_cv11() {
    // docs/reference/check-values.md#cv11 (Rohling 1983; product form [C]): N = 24, k = 18.
    for (pfa, expected) in [(1e-3, 6.502431), (1e-4, 9.340805), (1e-6, 16.293288)] {
        let t = os_multiplier(24, 18, pfa);
        assert!((t - expected).abs() < 1e-6, "Pfa={pfa}: {t} vs {expected}");
    }
}

#[test]
fn textbook_multiplier_gives_the_1e_3_design_point() {
    // docs/reference/check-values.md#cv12: Richards 2014 §6.5.6 works N = 20, k = 15 with
    // α = 6.857; the formula gives 9.98724e-4 (quoted to 6 digits, so the
    // rounding error is at most 5e-10).
    let pfa = os_pfa(20, 15, 6.857);
    assert!((pfa - 9.98724e-4).abs() < 1e-9, "{pfa}");
}

#[test]
fn product_form_equals_rohlings_gamma_form() {
    // Rohling 1983 / Richards 2014 §6.5.6:
    // Pfa = k·C(N,k)·Γ(k)·Γ(N−k+1+T)/Γ(N+1+T), via statrs' ln Γ.
    for (n, k) in [
        (16usize, 12usize),
        (20, 15),
        (24, 18),
        (24, 24),
        (32, 1),
        (8, 4),
    ] {
        for t in [0.3, 1.0, 4.0, 6.857, 16.0, 50.0] {
            let (nf, kf) = (n as f64, k as f64);
            let ln_binomial = ln_gamma(nf + 1.0) - ln_gamma(kf + 1.0) - ln_gamma(nf - kf + 1.0);
            let ln_gamma_form = kf.ln() + ln_binomial + ln_gamma(kf) + ln_gamma(nf - kf + 1.0 + t)
                - ln_gamma(nf + 1.0 + t);
            let product = os_pfa(n, k, t);
            assert!(
                (product.ln() - ln_gamma_form).abs() < 1e-9,
                "N={n} k={k} T={t}: {product} vs {}",
                ln_gamma_form.exp()
            );
        }
    }
}

#[test]
fn the_smallest_cell_is_exponential_with_mean_one_over_n() {
    // The minimum of N unit-mean exponentials is exponential with mean 1/N
    // (a textbook order-statistic fact), so P(X ≥ T·min) = N/(N + T).
    for n in [1usize, 4, 16] {
        for t in [0.5, 3.0, 40.0] {
            let expected = n as f64 / (n as f64 + t);
            assert!((os_pfa(n, 1, t) / expected - 1.0).abs() < 1e-15);
        }
    }
}

#[test]
fn multiplier_inverts_pfa() {
    for (n, k) in [(16usize, 12usize), (24, 18), (32, 24), (8, 8), (64, 1)] {
        for pfa in [0.5, 1e-2, 1e-3, 1e-6, 1e-12] {
            let t = os_multiplier(n, k, pfa);
            assert!(t > 0.0 && t.is_finite());
            let back = os_pfa(n, k, t);
            assert!(
                (back / pfa - 1.0).abs() < 1e-12,
                "N={n} k={k} Pfa={pfa}: {back}"
            );
        }
    }
}

#[test]
fn out_of_domain_inputs_give_nan_not_a_panic() {
    assert!(os_pfa(16, 0, 1.0).is_nan());
    assert!(os_pfa(16, 17, 1.0).is_nan());
    assert!(os_pfa(16, 12, f64::NAN).is_nan());
    assert_eq!(os_pfa(16, 12, 0.0), 1.0);
    assert_eq!(os_pfa(16, 12, f64::INFINITY), 0.0);
    assert!(os_multiplier(16, 0, 1e-3).is_nan());
    assert!(os_multiplier(16, 17, 1e-3).is_nan());
    assert!(os_multiplier(16, 12, 0.0).is_nan());
    assert!(os_multiplier(16, 12, f64::NAN).is_nan());
    assert_eq!(os_multiplier(16, 12, 1.0), 0.0);
    // k = 1: Pfa = N/(N + T), so Pfa = 1e-300 needs T ≈ 4e300 (still an
    // f64) and Pfa = 1e-320 needs 4e320: beyond f64, reported as +∞.
    assert!((os_multiplier(4, 1, 1e-300) / 4e300 - 1.0).abs() < 1e-12);
    assert_eq!(os_multiplier(4, 1, 1e-320), f64::INFINITY);
    let mut cells = [1.0, 2.0];
    assert!(os_ratio(1.0, &mut cells, 0).is_nan());
    assert!(os_ratio(1.0, &mut cells, 3).is_nan());
}

#[test]
fn selection_agrees_with_a_full_sort() {
    // The slow, obvious version: sort and index.
    let mut rng = ChaCha8Rng::from_seed([3; 32]);
    for _ in 0..500 {
        let n = rng.random_range(1..40);
        let cells: Vec<f64> = (0..n).map(|_| rng.random::<f64>()).collect();
        let rank = rng.random_range(1..=n);
        let mut sorted = cells.clone();
        sorted.sort_by(f64::total_cmp);
        let mut scratch = cells.clone();
        assert_eq!(os_ratio(2.0, &mut scratch, rank), 2.0 / sorted[rank - 1]);
    }
}
