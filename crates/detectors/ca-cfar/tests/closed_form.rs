//! Closed-form CA-CFAR multipliers and false-alarm probabilities against
//! published values and an independent distribution library.

use echobench_detector_ca_cfar::{ca_multiplier, ca_pfa};
use statrs::distribution::{ContinuousCDF, FisherSnedecor};

#[test]
fn multipliers_match_cv7_and_the_table() {
    // docs/reference/check-values.md#cv7 (Finn & Johnson 1968; Richards 2014 eq. 6.135), to 1e-6.
    let cv7 = [
        (16, 1e-3, 8.638824),
        (24, 1e-6, 18.678706),
        (32, 1e-4, 10.672686),
    ];
    // docs/reference/detectors.md#d4 table, more rows of the same formula [C].
    let table = [
        (8, 1e-3, 10.970990),
        (8, 1e-6, 36.987306),
        (16, 1e-4, 12.452471),
        (64, 1e-6, 15.420017),
    ];
    for (n, pfa, expected) in cv7.into_iter().chain(table) {
        let alpha = ca_multiplier(n, pfa);
        assert!(
            (alpha - expected).abs() < 1e-6,
            "N={n} Pfa={pfa}: {alpha} vs {expected}"
        );
    }
}

#[test]
fn pfa_inverts_the_multiplier() {
    for n in [1, 2, 8, 16, 24, 32, 64, 1000] {
        for pfa in [0.5, 1e-2, 1e-3, 1e-6, 1e-12] {
            let back = ca_pfa(n, ca_multiplier(n, pfa));
            assert!((back / pfa - 1.0).abs() < 1e-12, "N={n} Pfa={pfa}: {back}");
        }
    }
}

#[test]
fn many_cells_approach_the_known_noise_threshold() {
    // Richards 2014 §6.5.3: as N → ∞ the CA threshold tends to the ideal
    // known-noise one, −ln Pfa (docs/reference/detectors.md#d4 table, row ∞: 6.907755).
    let alpha = ca_multiplier(10_000_000, 1e-3);
    assert!((alpha - 6.907755).abs() < 1e-5, "{alpha}");
    assert!((alpha - 1e-3f64.ln().abs()).abs() < 1e-5);
}

#[test]
fn pfa_is_the_f_distribution_tail() {
    // docs/reference/detectors.md#d3: CA-CFAR is the m = 1 band ratio, so
    // P(CUT/mean ≥ α) = sf of F(2, 2N) at α = (1 + α/N)^(−N).
    for n in [4usize, 16, 24, 32] {
        let f = FisherSnedecor::new(2.0, 2.0 * n as f64).unwrap();
        for alpha in [0.5, 2.0, 5.0, 8.638824, 12.0, 18.678706] {
            let ours = ca_pfa(n, alpha);
            let from_cdf = 1.0 - f.cdf(alpha);
            assert!(
                (ours - from_cdf).abs() < 1e-9,
                "N={n} α={alpha}: {ours} vs {from_cdf}"
            );
            let from_sf = f.sf(alpha);
            assert!(
                (ours / from_sf - 1.0).abs() < 1e-9,
                "N={n} α={alpha}: {ours} vs {from_sf}"
            );
        }
    }
}

#[test]
fn out_of_domain_inputs_give_nan_not_a_panic() {
    assert!(ca_multiplier(0, 1e-3).is_nan());
    assert!(ca_multiplier(16, 0.0).is_nan());
    assert!(ca_multiplier(16, 1.5).is_nan());
    assert!(ca_multiplier(16, f64::NAN).is_nan());
    assert_eq!(ca_multiplier(16, 1.0), 0.0);
    assert!(ca_pfa(0, 1.0).is_nan());
    assert!(ca_pfa(16, f64::NAN).is_nan());
    assert_eq!(ca_pfa(16, -3.0), 1.0);
    assert_eq!(ca_pfa(16, f64::INFINITY), 0.0);
}
