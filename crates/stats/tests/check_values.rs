//! Check values cv16–cv25 and the extra rows of `docs/reference/check-values.md` (formulas in
//! `docs/reference/statistics.md` and `event-scoring.md`). Provenance is given per check: [B]
//! a published source, [C] a value computed with scipy / statsmodels / scikit-learn as listed
//! in `check-values.md`, "by hand" a value derived here from the cited definition.
//!
//! Quoted values are compared to within half a unit of their last quoted digit (the tightest test a
//! rounded number allows, and never looser than the 1e-6 of `docs/reference/statistics.md#s9`);
//! closed forms are compared to 1e-9 relative or tighter.

use echobench_stats::*;

/// Asserts `actual` rounds to `quoted`: `|actual − quoted| <= ½ unit of quoted's last digit`.
fn assert_quoted(actual: f64, quoted: &str, what: &str) {
    let expected: f64 = quoted.parse().unwrap_or(f64::NAN);
    let (mantissa, exponent) = match quoted.split_once(['e', 'E']) {
        Some((m, e)) => (m, e.parse::<i32>().unwrap_or(0)),
        None => (quoted, 0),
    };
    let decimals = mantissa.split_once('.').map_or(0, |(_, d)| d.len()) as i32;
    let half_unit = 0.5 * 10f64.powi(exponent - decimals);
    let slack = 1e-12 * expected.abs();
    assert!(
        (actual - expected).abs() <= half_unit + slack,
        "{what}: got {actual}, expected {quoted} (±{half_unit:e})"
    );
}

fn assert_close(actual: f64, expected: f64, relative: f64, what: &str) {
    assert!(
        (actual - expected).abs() <= relative * expected.abs(),
        "{what}: got {actual}, expected {expected} (rel {relative:e})"
    );
}

fn ok<T, E: std::fmt::Display>(result: Result<T, E>) -> T {
    result.unwrap_or_else(|e| panic!("unexpected error: {e}"))
}

// The tie example of docs/reference/check-values.md#cv16.
const POSITIVES: [f64; 6] = [0.9, 0.8, 0.7, 0.7, 0.55, 0.5];
const NEGATIVES: [f64; 7] = [0.7, 0.6, 0.5, 0.4, 0.3, 0.2, 0.1];

#[test]
fn cv16_auc_with_ties() {
    // [B] Mann & Whitney 1947, Hanley & McNeil 1982; [C] roc_auc_score, mannwhitneyu.
    assert_eq!(mann_whitney_u(&POSITIVES, &NEGATIVES), 36.5);
    let auc = auc_mann_whitney(&POSITIVES, &NEGATIVES);
    assert!((auc - 0.8690476190).abs() <= 1e-10);
    assert!((auc - 36.5 / 42.0).abs() <= 1e-12);
}

#[test]
fn roc_vertices_of_the_tie_example() {
    // [B] Fawcett 2006 alg. 2; [C] roc_curve(drop_intermediate=False): (0,0) (0,1/6) (0,1/3)
    // (1/7,2/3) (2/7,2/3) (2/7,5/6) (3/7,1) (4/7,1) … (1,1); thresholds are the distinct
    // scores, +∞ first.
    let expected = [
        (0.0, 0.0, f64::INFINITY),
        (0.0, 1.0 / 6.0, 0.9),
        (0.0, 2.0 / 6.0, 0.8),
        (1.0 / 7.0, 4.0 / 6.0, 0.7),
        (2.0 / 7.0, 4.0 / 6.0, 0.6),
        (2.0 / 7.0, 5.0 / 6.0, 0.55),
        (3.0 / 7.0, 1.0, 0.5),
        (4.0 / 7.0, 1.0, 0.4),
        (5.0 / 7.0, 1.0, 0.3),
        (6.0 / 7.0, 1.0, 0.2),
        (1.0, 1.0, 0.1),
    ];
    let roc = roc_points(&POSITIVES, &NEGATIVES);
    assert_eq!(roc.len(), expected.len());
    for (got, want) in roc.iter().zip(expected) {
        assert!(
            (got.0 - want.0).abs() < 1e-15 && (got.1 - want.1).abs() < 1e-15,
            "{got:?}"
        );
        assert_eq!(got.2, want.2);
    }
    // docs/reference/statistics.md#s1: the trapezoidal area equals the Mann–Whitney estimate.
    assert!((roc_area(&roc) - 36.5 / 42.0).abs() < 1e-12);
}

#[test]
fn cv17_partial_auc_and_pd_at_pfa() {
    // [B] McClish 1989; [C] roc_auc_score(max_fpr=…), np.trapezoid, np.interp.
    let roc = roc_points(&POSITIVES, &NEGATIVES);
    assert_quoted(
        partial_auc_mcclish(&roc, 0.3).unwrap_or(f64::NAN),
        "0.762138",
        "McClish 0.3",
    );
    assert_quoted(
        partial_auc(&roc, 0.3).unwrap_or(f64::NAN),
        "0.178690",
        "raw pAUC 0.3",
    );
    assert_quoted(
        partial_auc(&roc, 0.2).unwrap_or(f64::NAN),
        "0.109524",
        "raw pAUC 0.2",
    );
    assert_quoted(
        partial_auc_mcclish(&roc, 0.2).unwrap_or(f64::NAN),
        "0.748677",
        "McClish 0.2",
    );
    assert_quoted(
        pd_at_pfa_interpolated(&roc, 0.1).unwrap_or(f64::NAN),
        "0.566667",
        "Pd@0.1",
    );
    // By hand from docs/reference/statistics.md#s3 (a): thresholds with Pfâ = 0 <= 0.1 are +∞, 0.9,
    // 0.8; the lowest is 0.8, where Pd̂ = 2/6.
    assert_eq!(
        pd_at_pfa_conservative(&roc, 0.1),
        Some((0.0, 2.0 / 6.0, 0.8))
    );
    // A target on a vertex: Pfâ = 2/7 is reached exactly; both rules give the top, 5/6.
    let on_vertex = 2.0 / 7.0;
    assert_eq!(
        pd_at_pfa_conservative(&roc, on_vertex).map(|p| p.1),
        Some(5.0 / 6.0)
    );
    assert_eq!(pd_at_pfa_interpolated(&roc, on_vertex), Some(5.0 / 6.0));
}

#[test]
fn cv17_sw1_partial_auc_closed_form_against_a_fine_curve() {
    // [C] SW1 square-law ROC Pd = Pfa^{1/(1+S)}: pAUC(f0) = f0^{1+b}/(1+b), b = 1/(1+S);
    // S = 10, f0 = 0.1 → 0.074354, standardised 0.865019. A dense polyline of the exact
    // curve fed through partial_auc must reproduce both.
    let b = 1.0 / 11.0;
    // Log-spaced Pfa from 1e-15 to 1: the curve's slope is infinite at 0, so a uniform grid
    // would lose ~1e-6 of area in its first cell.
    let steps = 20_000;
    let roc: Vec<RocPoint> = std::iter::once((0.0, 0.0, f64::INFINITY))
        .chain((0..=steps).map(|i| {
            let pfa = 10f64.powf(-15.0 * (1.0 - i as f64 / steps as f64));
            (pfa, pfa.powf(b), -pfa)
        }))
        .collect();
    assert_quoted(
        partial_auc(&roc, 0.1).unwrap_or(f64::NAN),
        "0.074354",
        "SW1 pAUC",
    );
    assert_quoted(
        partial_auc_mcclish(&roc, 0.1).unwrap_or(f64::NAN),
        "0.865019",
        "SW1 McClish",
    );
}

#[test]
fn cv18_auc_estimates_match_closed_forms_within_hanley_mcneil_error() {
    // [C] SW1 square-law single cell: AUC = (1+S)/(2+S), S = 10 → 0.916667; Gaussian shift
    // d = 1: Φ(d/√2) = 0.760250. Seeded draws by inverse transform; |Â − A| <= 4.5·SE_HM
    // (docs/reference/statistics.md#s9, SE from Hanley & McNeil 1982).
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;
    use statrs::distribution::{ContinuousCDF, Normal};
    let mut rng = ChaCha8Rng::from_seed([42; 32]);
    let n = 4000;
    let mut exp = |mean: f64| -> Vec<f64> {
        (0..n)
            .map(|_| -mean * (1.0 - rng.random::<f64>()).ln())
            .collect()
    };
    let (h1, h0) = (exp(11.0), exp(1.0));
    let expected_sw1 = 11.0 / 12.0;
    assert_quoted(expected_sw1, "0.916667", "SW1 closed form");
    let se = auc_standard_error_hanley_mcneil(expected_sw1, n, n).unwrap_or(f64::NAN);
    assert!((auc_mann_whitney(&h1, &h0) - expected_sw1).abs() <= 4.5 * se);

    let normal = Normal::standard();
    let mut gauss = |shift: f64| -> Vec<f64> {
        (0..n)
            .map(|_| shift + normal.inverse_cdf(rng.random::<f64>().clamp(1e-300, 1.0 - 1e-16)))
            .collect()
    };
    let (g1, g0) = (gauss(1.0), gauss(0.0));
    let expected_gauss = normal.cdf(1.0 / 2f64.sqrt());
    assert_quoted(expected_gauss, "0.760250", "Gaussian closed form");
    let se = auc_standard_error_hanley_mcneil(expected_gauss, n, n).unwrap_or(f64::NAN);
    assert!((auc_mann_whitney(&g1, &g0) - expected_gauss).abs() <= 4.5 * se);
}

#[test]
fn cv19_hanley_mcneil_standard_error() {
    // [B] Hanley & McNeil 1982; [C].
    let se = auc_standard_error_hanley_mcneil(0.9, 100, 100).unwrap_or(f64::NAN);
    assert_quoted(se, "0.022629", "SE(A=0.9, 100, 100)");
}

#[test]
fn cv20_binomial_intervals_3_of_1000() {
    // [B] Wilson 1927, Clopper & Pearson 1934, Brown–Cai–DasGupta 2001;
    // [C] statsmodels proportion_confint(3, 1000, alpha=0.05, method=…).
    let wilson = ok(wilson_interval(3, 1000, 0.95));
    assert_quoted(wilson.low, "0.001021", "Wilson low");
    assert_quoted(wilson.high, "0.008783", "Wilson high");
    let cp = ok(clopper_pearson_interval(3, 1000, 0.95));
    assert_quoted(cp.low, "0.000619", "CP low");
    assert_quoted(cp.high, "0.008742", "CP high");
    let jeffreys = ok(jeffreys_interval(3, 1000, 0.95));
    assert_quoted(jeffreys.low, "0.000846", "Jeffreys low");
    assert_quoted(jeffreys.high, "0.007984", "Jeffreys high");
}

#[test]
fn binomial_intervals_4_of_5_events() {
    // [C] proportion_confint(4, 5, method='wilson' / 'beta').
    let wilson = ok(wilson_interval(4, 5, 0.95));
    assert_quoted(wilson.low, "0.375535", "Wilson low");
    assert_quoted(wilson.high, "0.963776", "Wilson high");
    let cp = ok(clopper_pearson_interval(4, 5, 0.95));
    assert_quoted(cp.low, "0.283582", "CP low");
    assert_quoted(cp.high, "0.994949", "CP high");
}

#[test]
fn cv21_zero_events_in_1000() {
    // [B] Hanley & Lippman-Hand 1983 (rule of three); [C] 1 − 0.05^{1/1000}.
    assert_close(
        ok(rule_of_three_upper_bound(1000)),
        0.003,
        1e-15,
        "rule of three",
    );
    let exact = ok(clopper_pearson_upper_bound(0, 1000, 0.95));
    assert!((exact - 0.0029912).abs() <= 1e-7);
    assert_close(exact, 1.0 - 0.05f64.powf(1.0 / 1000.0), 1e-9, "closed form");
    // [C] two-sided 95 % upper ends for 0/1000: CP 0.003682, Wilson 0.003827.
    assert_quoted(
        ok(clopper_pearson_interval(0, 1000, 0.95)).high,
        "0.003682",
        "CP upper",
    );
    assert_quoted(
        ok(wilson_interval(0, 1000, 0.95)).high,
        "0.003827",
        "Wilson upper",
    );
    // [C] Pfa <= 1e-3 at 95 % with zero alarms needs n >= 2995.
    assert_eq!(ok(trials_for_zero_event_claim(1e-3, 0.95)), 2995);
    assert!(ok(clopper_pearson_upper_bound(0, 2995, 0.95)) <= 1e-3);
    assert!(ok(clopper_pearson_upper_bound(0, 2994, 0.95)) > 1e-3);
}

#[test]
fn cv22_garwood_intervals() {
    // [B] Garwood 1936; [C] confint_poisson(k, 10, method='exact-c').
    let zero = ok(garwood_interval(0, 10.0, 0.95));
    assert_eq!(zero.low, 0.0);
    assert_quoted(zero.high, "0.368888", "0 in 10 h, high");
    // Closed form for k = 0: χ²_{0.975}(2)/2 = −ln 0.025.
    assert_close(
        zero.high,
        -(0.025f64.ln()) / 10.0,
        1e-9,
        "0 in 10 h closed form",
    );
    let one_sided = ok(garwood_upper_bound(0, 10.0, 0.95));
    assert_quoted(one_sided, "0.299573", "0 in 10 h one-sided");
    assert_close(
        one_sided,
        -(0.05f64.ln()) / 10.0,
        1e-9,
        "one-sided closed form",
    );
    let two = ok(garwood_interval(2, 10.0, 0.95));
    assert_quoted(two.low, "0.024221", "2 in 10 h, low");
    assert_quoted(two.high, "0.722469", "2 in 10 h, high");
}

#[test]
fn exposure_needed_to_claim_a_rate() {
    // [C] docs/reference/statistics.md#s6: ≤ 0.1 FA/h at one-sided 95 % needs
    // 29.96 / 47.44 / 62.96 h.
    assert_quoted(ok(exposure_for_rate_claim(0.1, 0, 0.95)), "29.96", "0 FA");
    assert_quoted(ok(exposure_for_rate_claim(0.1, 1, 0.95)), "47.44", "1 FA");
    assert_quoted(ok(exposure_for_rate_claim(0.1, 2, 0.95)), "62.96", "2 FA");
}

#[test]
fn cv24_rate_interval_of_the_event_example() {
    // [C] docs/reference/event-scoring.md#e7: 4 FAs over 3600 − 118.5 s → 4.136148 FA/h,
    // 95 % [1.126961, 10.590182].
    let exposure_h = (3600.0 - 118.5) / 3600.0;
    assert_quoted(exposure_h, "0.967083", "exposure");
    assert_quoted(4.0 / exposure_h, "4.136148", "FA/h");
    let ci = ok(garwood_interval(4, exposure_h, 0.95));
    assert_quoted(ci.low, "1.126961", "low");
    assert_quoted(ci.high, "10.590182", "high");
}

#[test]
fn cv23_rate_regression_gate() {
    // [B] Przyborowski & Wilenski 1940, Gu et al. 2008;
    // [C] test_poisson_2indep(…, method='exact-cond', alternative='larger').
    let count = |events| EventCount {
        events,
        exposure: 100.0,
    };
    let t = ok(rate_ratio_test(count(15), count(5), 1.0, 0.95));
    assert_quoted(t.p_value, "0.020695", "15 vs 5");
    assert_eq!(t.ratio, 3.0);
    let t = ok(rate_ratio_test(count(40), count(20), 1.0, 0.95));
    assert_quoted(t.p_value, "0.006745", "40 vs 20");
    // [C] one-sided 95 % lower bound on the ratio, p/(1−p) of beta.ppf(0.05, 40, 21).
    assert_quoted(t.lower_bound, "1.239814", "40 vs 20 lower bound");
    let t = ok(rate_ratio_test(count(40), count(20), 1.25, 0.95));
    assert_quoted(t.p_value, "0.053309", "40 vs 20 at ρ0 = 1.25");
    assert_close(t.null_proportion, 1.25 / 2.25, 1e-15, "p0");
    // docs/reference/statistics.md#s8: consistent — the bound is below the margin and p > 0.05.
    assert!(t.lower_bound < 1.25 && t.p_value > 0.05);
}

#[test]
fn mcnemar_on_paired_trials() {
    // [C] mcnemar([[985, 2], [9, 4]], exact=True) → 0.065430; one-sided binom.sf(8, 11, ½)
    // → 0.032715. By hand: (C(11,9)+C(11,10)+C(11,11))/2^11 = 67/2048.
    let t = mcnemar_exact(2, 9);
    assert_quoted(t.one_sided_p, "0.032715", "one-sided");
    assert_quoted(t.two_sided_p, "0.065430", "two-sided");
    assert_close(t.one_sided_p, 67.0 / 2048.0, 1e-12, "one-sided exact");
    assert_close(t.two_sided_p, 134.0 / 2048.0, 1e-12, "two-sided exact");
}

#[test]
fn fisher_exact_one_sided() {
    // [C] fisher_exact([[12, 988], [3, 997]], alternative='greater') → 0.017246.
    assert_quoted(
        ok(fisher_exact_greater(12, 1000, 3, 1000)),
        "0.017246",
        "12/1000 vs 3/1000",
    );
    // [B] Fisher 1935 (The Design of Experiments, the tea-tasting experiment, from memory):
    // 3 of 4 cups right, table [[3, 1], [1, 3]]: P = (C(4,3)C(4,1) + C(4,4)C(4,0))/C(8,4) = 17/70.
    assert_close(
        ok(fisher_exact_greater(3, 4, 1, 4)),
        17.0 / 70.0,
        1e-12,
        "tea tasting",
    );
}

#[test]
fn holm_adjusted_p_values() {
    // By hand from Holm 1979: sorted 0.005, 0.01, 0.03, 0.04 scaled by 4, 3, 2, 1 →
    // 0.02, 0.03, 0.06, 0.04 → running max 0.02, 0.03, 0.06, 0.06.
    let p = [0.01, 0.04, 0.03, 0.005];
    let adjusted = ok(holm_adjust(&p));
    for (got, want) in adjusted.iter().zip([0.03, 0.06, 0.06, 0.02]) {
        assert_close(*got, want, 1e-12, "Holm");
    }
    assert_eq!(ok(holm_reject(&p, 0.05)), vec![true, false, false, true]);
    // Capped at 1.
    assert_eq!(ok(holm_adjust(&[0.6, 0.9])), vec![1.0, 1.0]);
}

#[test]
fn power_table_of_the_exact_conditional_gate() {
    // [C] docs/reference/statistics.md#s8: one-sided α = 0.01, baseline 1 FA/h vs candidate 2 FA/h,
    // T h each: T = 10 → 0.2466, 20 → 0.5610, 30 → 0.7804, 50 → 0.9586; size at T = 10: 0.00547.
    let design = |candidate_rate, hours| RatePowerDesign {
        baseline_rate: 1.0,
        candidate_rate,
        baseline_exposure: hours,
        candidate_exposure: hours,
        ratio_margin: 1.0,
        alpha: 0.01,
    };
    for (hours, quoted) in [
        (10.0, "0.2466"),
        (20.0, "0.5610"),
        (30.0, "0.7804"),
        (50.0, "0.9586"),
    ] {
        let power = ok(rate_ratio_test_power(&design(2.0, hours)));
        assert_quoted(power, quoted, &format!("power at T = {hours} h"));
    }
    let size = ok(rate_ratio_test_power(&design(1.0, 10.0)));
    assert_quoted(size, "0.00547", "size at T = 10 h");
    assert!(size <= 0.01, "an exact test never exceeds its level");
}

#[test]
fn median_interval_for_twenty_latencies() {
    // [C] largest k with binom.cdf(k−1, 20, ½) <= 0.025 → ranks 6 and 15, coverage 0.958611.
    let ranks = ok(median_interval_ranks(20, 0.95));
    assert_eq!((ranks.low_rank, ranks.high_rank), (6, 15));
    assert_quoted(ranks.coverage, "0.958611", "coverage");
    // The ranks pick the 6th and 15th smallest values whatever the input order.
    let latencies: Vec<f64> = (1..=20).rev().map(|i| i as f64 * 0.25).collect();
    let ci = ok(median_confidence_interval(&latencies, 0.95));
    assert_eq!((ci.low, ci.high), (1.5, 3.75));
}

#[test]
fn latency_summaries_of_the_event_example() {
    // docs/reference/event-scoring.md#e7: latencies [−0.2, 2, 3.5, 11] s, median 2.75 s [C]. p90 by
    // hand from Hyndman & Fan 1996 definition 7: h = 3·0.9 = 2.7 → 3.5 + 0.7·(11 − 3.5) = 8.75.
    let latencies = [2.0, -0.2, 11.0, 3.5];
    assert_close(ok(median(&latencies)), 2.75, 1e-15, "median");
    assert_close(ok(quantile(&latencies, 0.9)), 8.75, 1e-15, "p90");
}

#[test]
fn cv25_empirical_threshold_pfa() {
    // [C] Beta(10, 9991): mean 9.999e-4, 90 % range [5.43e-4, 1.570e-3].
    let pfa = ok(EmpiricalThresholdPfa::new(10, 10_000));
    assert_quoted(pfa.mean(), "9.999e-4", "mean");
    assert_close(pfa.mean(), 10.0 / 10_001.0, 1e-12, "k/(M0+1)");
    let range = ok(pfa.central_interval(0.90));
    assert_quoted(range.low, "5.43e-4", "5 %");
    assert_quoted(range.high, "1.570e-3", "95 %");
    assert_eq!(range.low, ok(pfa.quantile(0.05)));
}
