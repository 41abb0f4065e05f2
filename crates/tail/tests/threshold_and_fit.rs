//! Goodness of fit, the ξ = 0 and ξ = −1 edges of the fit, the stability table and the
//! automatic threshold rule.

mod common;

use echobench_tail::{
    candidate_thresholds, choose_from, AlarmRule, GpdFit, TailAccumulator, TailFit, ThresholdRule,
    Verdict, NO_SHAPE_FLOOR,
};
use rand::Rng;

#[test]
fn anderson_darling_size_matches_the_table_by_simulation() {
    // Parametric bootstrap of the test's size (the check of the transcribed Choulakian &
    // Stephens 2001 Table 2): GPD samples of known shape, fitted and tested at 5 %; the
    // rejection rate should be 5 %. 400 replicates: the count is Binomial(400, 0.05), mean 20,
    // sd 4.4; the accepted range [8, 34] is about ±3 sd.
    for (xi, n) in [(0.2, 150), (-0.3, 150)] {
        let mut rejected = 0;
        for seed in 0..400 {
            let mut rng = common::rng(&format!("ad-size-{xi}"), seed);
            let y = common::gpd_sample(&mut rng, n, xi, 1.0);
            let fit = TailFit::from_excesses(0.0, &y, 1.0, NO_SHAPE_FLOOR).unwrap();
            if fit.goodness_of_fit().rejects(0.05) == Some(true) {
                rejected += 1;
            }
        }
        println!("ξ = {xi}: rejected {rejected}/400 at 5 %");
        assert!((8..=34).contains(&rejected), "ξ = {xi}: {rejected}/400");
    }
}

#[test]
fn a_two_lump_sample_is_rejected() {
    // Half the excesses in [0, 1], half in [3, 4]: a density with a hole, which no GPD (its
    // density is monotone for ξ > −1) fits. 100 excesses; power should be near 1.
    let mut rejected = 0;
    for seed in 0..50 {
        let mut rng = common::rng("ad-power", seed);
        let y: Vec<f64> = (0..100)
            .map(|i| common::open_uniform(&mut rng) + if i % 2 == 0 { 0.0 } else { 3.0 })
            .collect();
        let fit = TailFit::from_excesses(0.0, &y, 1.0, NO_SHAPE_FLOOR).unwrap();
        if matches!(
            fit.verdict(0.05),
            Verdict::Rejected { .. } | Verdict::Boundary
        ) {
            rejected += 1;
        }
    }
    assert!(rejected >= 48, "{rejected}/50");
}

#[test]
fn exponential_limit_is_smooth_and_boundary_is_flagged() {
    // ξ = 0: the profile is smooth through 0 (no special case visible from outside): its
    // central-difference slope is the same at steps of 1e-3, 1e-6 and 1e-8 around 0.
    let mut rng = common::rng("exp-limit", 1);
    let y = common::gpd_sample(&mut rng, 2000, 0.0, 1.0);
    let fit = GpdFit::new(&y).unwrap();
    let slope =
        |d: f64| (fit.profile_log_likelihood(d) - fit.profile_log_likelihood(-d)) / (2.0 * d);
    let reference = slope(1e-3);
    for d in [1e-6, 1e-8] {
        let s = slope(d);
        assert!(
            (s - reference).abs() < 1e-3 * reference.abs().max(1.0),
            "{s} vs {reference}"
        );
    }
    // At ξ = 0 the MLE of σ is the mean (Coles 2001, exponential case).
    let mean = y.iter().sum::<f64>() / y.len() as f64;
    let at0 = fit.profile_log_likelihood(0.0);
    let direct = -(y.len() as f64) * mean.ln() - y.len() as f64;
    assert!((at0 - direct).abs() < 1e-9 * direct.abs());
    assert!(fit.gpd().xi().abs() < 0.1 && !fit.at_boundary());

    // ξ = −1.5: a density rising towards the endpoint; the likelihood is unbounded for
    // ξ < −1 (Smith 1985), so the fit stops at the boundary and says so.
    let mut rng = common::rng("boundary", 1);
    let y = common::gpd_sample(&mut rng, 200, -1.5, 1.0);
    let tail = TailFit::from_excesses(0.0, &y, 1.0, NO_SHAPE_FLOOR).unwrap();
    assert!(tail.gpd_fit().at_boundary());
    assert_eq!(tail.gpd().xi(), -1.0);
    assert_eq!(tail.verdict(0.05), Verdict::Boundary);
    let ymax = y.iter().copied().fold(0.0, f64::max);
    assert_eq!(tail.gpd().sigma(), ymax);
}

/// CA-CFAR statistic CUT / mean(N reference cells), exponential cells: its excesses over any
/// u are exactly GPD with ξ = 1/N and σ_u = (N + u)/N (from P(s > α) = (1 + α/N)^(−N),
/// Richards 2005, CA-CFAR section), so σ* = σ_u − ξ u = 1 at every threshold and the mean
/// excess is σ_u/(1 − ξ) = (N + u)/(N − 1) (Coles 2001, §4.3.1).
fn cfar_accumulator(seed: u64, frames: usize, bump: bool) -> TailAccumulator {
    const N: usize = 16;
    let rule = AlarmRule::new(1, 1, 0.0).unwrap();
    let mut acc = TailAccumulator::new(rule, f64::NEG_INFINITY, 1500).unwrap();
    let mut rng = common::rng("cfar-table", seed);
    let mut scan = acc.scan(0);
    for k in 0..frames {
        let cut = -common::open_uniform(&mut rng).ln();
        let sum: f64 = (0..N).map(|_| -common::open_uniform(&mut rng).ln()).sum();
        let mut s = cut / (sum / N as f64);
        // A shelf of values at 15–15.5 in 0.2 % of frames, far beyond the natural tail (whose
        // 1e-5 level is about 12): every candidate threshold holds it, so no GPD fits.
        if bump && rng.random::<f64>() < 0.002 {
            s = 15.0 + 0.5 * rng.random::<f64>();
        }
        scan.push(k as f64 * 0.01, s).unwrap();
    }
    acc.add(scan, frames as f64 * 0.01).unwrap();
    acc
}

#[test]
fn stability_table_of_an_exact_gpd_tail_and_the_automatic_choice() {
    const N: f64 = 16.0;
    let acc = cfar_accumulator(1, 60_000, false);
    let rule = ThresholdRule::default();
    let candidates = candidate_thresholds(&acc, 10, rule.min_exceedances).unwrap();
    assert!(candidates.len() >= 8 && candidates.windows(2).all(|w| w[0] < w[1]));
    let (table, chosen) = choose_from(&acc, &candidates, &rule).unwrap();
    let mut xi_hits = 0;
    let mut scale_hits = 0;
    let mut mean_hits = 0;
    for row in &table {
        let u = row.threshold;
        assert!(row.exceedances >= rule.min_exceedances);
        xi_hits += row.xi.unwrap().contains(1.0 / N) as usize;
        scale_hits += row.modified_scale.unwrap().contains(1.0) as usize;
        mean_hits += row.mean_excess.unwrap().contains((N + u) / (N - 1.0)) as usize;
    }
    println!(
        "ξ {xi_hits}, σ* {scale_hits}, mean excess {mean_hits} of {}",
        table.len()
    );
    // Rows share data, so their misses come together; most rows must hold the truth.
    let most = (table.len() * 4).div_ceil(5);
    assert!(xi_hits >= most && scale_hits >= most && mean_hits >= most);
    let i = chosen.expect("an exact GPD tail has a stable threshold");
    let row = &table[i];
    assert!(row.xi.unwrap().contains(1.0 / N));
    assert_eq!(row.verdict, Some(Verdict::Usable));
}

#[test]
fn a_tail_with_a_shelf_has_no_usable_threshold() {
    let acc = cfar_accumulator(2, 60_000, true);
    let rule = ThresholdRule::default();
    let candidates = candidate_thresholds(&acc, 10, rule.min_exceedances).unwrap();
    let (table, chosen) = choose_from(&acc, &candidates, &rule).unwrap();
    for row in &table {
        println!(
            "u {:.3} n {} verdict {:?}",
            row.threshold, row.exceedances, row.verdict
        );
    }
    assert_eq!(chosen, None);
}

#[test]
fn one_call_extrapolation_and_its_fallbacks() {
    use echobench_tail::{extrapolate, Status};
    const N: f64 = 16.0;
    let acc = cfar_accumulator(3, 60_000, false);
    let frames_per_h = 3600.0 / 0.01;
    // Per-frame probabilities 1e-6 and 1e-7: 17 and 170 times rarer than the run's 60 000
    // frames can show; their closed-form levels (Richards 2005, CA-CFAR section).
    let probabilities = [1e-6, 1e-7];
    let rates: Vec<f64> = probabilities.iter().map(|p| p * frames_per_h).collect();
    let rule = ThresholdRule::default();
    let ex = extrapolate(&acc, &rule, 10, &rates).unwrap();
    assert_eq!(ex.status, Status::Fitted);
    let fit = ex.fit.as_ref().unwrap();
    for (target, p) in ex.targets.iter().zip(probabilities) {
        let alpha = N * (f64::powf(p, -1.0 / N) - 1.0);
        let est = target.threshold.as_ref().unwrap();
        println!("p {p}: α {alpha:.3}, fitted {est:?}");
        assert!(est.contains(alpha));
    }
    // The band for a report: rates fall with the level, intervals hold their estimates.
    let u = fit.threshold();
    let levels: Vec<f64> = (0..6).map(|i| u + i as f64 * 2.0).collect();
    let band = ex.rate_band(&levels, 0.95).unwrap();
    assert_eq!(band.len(), levels.len());
    for w in band.windows(2) {
        assert!(w[1].1.value < w[0].1.value && w[1].1.upper <= w[0].1.upper);
    }
    for (x, e) in &band {
        println!("x {x}: {e:?}");
    }
    assert!(band
        .iter()
        .all(|(_, e)| e.lower <= e.value && e.value <= e.upper));

    // Fallbacks: a shelf in the tail, and a run with too few clusters.
    let shelf = extrapolate(&cfar_accumulator(2, 60_000, true), &rule, 10, &rates).unwrap();
    assert_eq!(shelf.status, Status::NoStableThreshold);
    assert!(shelf.fit.is_none() && shelf.targets.is_empty() && !shelf.table.is_empty());
    let short = extrapolate(&cfar_accumulator(4, 25, false), &rule, 10, &rates).unwrap();
    assert_eq!(short.status, Status::TooFewClusters);
}
