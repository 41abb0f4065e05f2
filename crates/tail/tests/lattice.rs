//! Scores on a lattice (docs/reference/statistics.md#s14): a fit of coarse, tied cluster
//! maxima must say it cannot be trusted instead of returning a narrow interval, and a fine
//! lattice must leave the continuous fit as it was.
//!
//! Data from the model itself: exponential (GPD ξ = 0) excesses of scale σ = 1, rounded down
//! to a lattice of step Δ. Rounding down shifts every excess by less than Δ, so the scale
//! estimate moves by about Δ/2 (the mean of a uniform rounding error; the exponential MLE is
//! the mean, Coles 2001, §4.3.2 at ξ = 0).

mod common;

use echobench_tail::{
    extrapolate, AlarmRule, GpdFit, Status, TailAccumulator, TailFit, ThresholdRule, Verdict,
    NO_SHAPE_FLOOR,
};

fn rounded(y: &[f64], step: f64) -> Vec<f64> {
    // Excesses over a threshold on the lattice are whole steps of at least one.
    y.iter()
        .map(|v| ((v / step).floor() + 1.0) * step)
        .collect()
}

#[test]
fn a_fine_lattice_leaves_the_continuous_fit_within_half_a_step() {
    let mut rng = common::rng("lattice-fine", 1);
    let y = common::gpd_sample(&mut rng, 300, 0.0, 1.0);
    let exact = GpdFit::with_shape_floor(&y, 0.0).unwrap().gpd();
    for step in [1e-3, 1e-5] {
        let fit = TailFit::from_excesses(0.0, &rounded(&y, step), 10.0, 0.0).unwrap();
        // Rounded up by one step at most: the mean (σ̂ at ξ = 0) rises by less than a step.
        let moved = fit.gpd().sigma() - exact.sigma();
        assert!(moved > 0.0 && moved < step, "Δ = {step}: σ moved {moved}");
        assert_eq!(fit.coarseness(), None);
        assert_ne!(
            fit.verdict(0.05),
            Verdict::Coarse {
                step: None,
                distinct: 0
            }
        );
    }
}

#[test]
fn a_coarse_lattice_or_few_distinct_values_is_flagged_not_fitted_narrowly() {
    let mut rng = common::rng("lattice-coarse", 2);
    let y = common::gpd_sample(&mut rng, 300, 0.0, 1.0);
    // Δ = σ/4: the continuous likelihood would read the ties as exact.
    let fit = TailFit::from_excesses(0.0, &rounded(&y, 0.25), 10.0, NO_SHAPE_FLOOR).unwrap();
    match fit.verdict(0.05) {
        Verdict::Coarse { step, distinct } => {
            assert!((step.unwrap() - 0.25).abs() < 1e-9);
            assert!(distinct < 60, "{distinct}");
        }
        other => panic!("{other:?}"),
    }
    // Twelve distinct values among 300: too few, whatever the scale.
    let few: Vec<f64> = y
        .iter()
        .map(|v| 1.0 + (v * 2.0).floor().min(11.0))
        .collect();
    assert!(matches!(
        TailFit::from_excesses(0.0, &few, 10.0, 0.0)
            .unwrap()
            .verdict(0.05),
        Verdict::Coarse { distinct: 12, .. }
    ));
}

#[test]
fn extrapolation_of_coarse_scores_ends_in_a_warning_status() {
    // Per-frame exponential scores rounded down to 0.5 (σ/2), 1-of-1 frames: every candidate
    // threshold sees a handful of distinct maxima, so the run falls back and says why.
    let rule = AlarmRule::new(1, 1, 0.5).unwrap();
    let mut acc = TailAccumulator::new(rule, f64::NEG_INFINITY, 5_000).unwrap();
    let mut rng = common::rng("lattice-extrapolate", 3);
    for trial in 0..20u64 {
        let mut scan = acc.scan(trial);
        for k in 0..5_000 {
            let x = common::gpd_draw(&mut rng, 0.0, 1.0);
            scan.push(k as f64, (x / 0.5).floor() * 0.5).unwrap();
        }
        acc.add(scan, 5_000.0).unwrap();
    }
    let ex = extrapolate(&acc, &ThresholdRule::default(), 10, &[1e-3]).unwrap();
    match ex.status {
        Status::CoarseScores { step, distinct } => {
            assert!(distinct < 30, "{distinct}");
            if let Some(s) = step {
                assert!((s - 0.5).abs() < 1e-9);
            }
        }
        other => panic!("{other:?}"),
    }
    assert!(ex.targets.is_empty());
}
