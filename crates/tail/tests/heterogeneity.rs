//! Trials that differ: a room whose parameters are drawn per trial makes the cluster counts
//! over-dispersed (a few trials hold most clusters), and intervals that count every cluster
//! as independent are too narrow. The dispersion test (Fisher 1950's index of dispersion)
//! must see it, and the quasi-likelihood widening (McCullagh & Nelder 1989, §4.5.2;
//! docs/reference/statistics.md#s12) must bring the coverage back to nominal.
//!
//! The model, built from its definition: 4000 trials of 15 s; with probability 1 % a trial is
//! "gusty" and holds Poisson(4) clusters whose maxima exceed u = 10 by Exp(scale 2) excesses;
//! the other trials hold none above u. So the rate above x >= u is, per hour,
//! `λ(x) = 0.01 · 4 / (15 s) · 3600 s/h · e^(−(x − u)/2)`, and the counts have variance
//! `1 + 4 · 0.99` times their mean (a compound of a binomial number of gusty trials).
//! Coverage criterion as in `coverage.rs` (95 % intervals, at least 44 of 50 seeds).

mod common;

use echobench_tail::{AlarmRule, TailAccumulator, TailFit, TrialDispersion, NO_SHAPE_FLOOR};
use rand::Rng;

const SEEDS: u64 = 50;
const NEEDED: usize = 44;
const TRIALS: u64 = 4000;
const TRIAL_S: f64 = 15.0;
const U: f64 = 10.0;
const SCALE: f64 = 2.0;

/// One run: each trial's clusters as single frames 3 s apart (a 1-of-1 rule with a hold of
/// 1 s makes each its own cluster). `gusty` is the share of gusty trials and `per_trial` their
/// mean count; with `gusty` = 1 every trial is alike (the homogeneous control).
fn run(name: &str, seed: u64, gusty: f64, per_trial: f64) -> TailAccumulator {
    let mut rng = common::rng(name, seed);
    let rule = AlarmRule::new(1, 1, 1.0).unwrap();
    let mut acc = TailAccumulator::new(rule, 0.0, usize::MAX).unwrap();
    for trial in 0..TRIALS {
        let mut scan = acc.scan(trial);
        if rng.random::<f64>() < gusty {
            let n = common::poisson(&mut rng, per_trial);
            for k in 0..n {
                let excess = common::gpd_draw(&mut rng, 0.0, SCALE);
                scan.push(3.0 * k as f64, U + excess).unwrap();
            }
        }
        acc.add(scan, TRIAL_S).unwrap();
    }
    acc
}

fn true_rate_per_h(gusty: f64, per_trial: f64, x: f64) -> f64 {
    gusty * per_trial / TRIAL_S * 3600.0 * (-(x - U) / SCALE).exp()
}

#[test]
fn over_dispersed_counts_are_detected_and_widen_the_intervals_to_nominal() {
    let (gusty, per_trial) = (0.01, 4.0);
    // A level where the count's uncertainty matters (a third of the rate at u) and one far
    // out (a hundredth), where the shape's uncertainty takes over.
    let near = U + SCALE * 3f64.ln();
    let far = U + SCALE * 100f64.ln();
    let (mut widened, mut naive, mut widened_far, mut rejected) = (0, 0, 0, 0);
    let mut scales = Vec::new();
    for seed in 0..SEEDS {
        let acc = run("heterogeneity-gusty", seed, gusty, per_trial);
        let fit = TailFit::from_accumulator(&acc, U, NO_SHAPE_FLOOR).unwrap();
        let d = fit.dispersion();
        assert_eq!(d, acc.trial_dispersion(U).unwrap());
        assert_eq!(d.trials, TRIALS);
        scales.push(d.scale);
        if d.p_value < 0.05 {
            rejected += 1;
        }
        let truth = true_rate_per_h(gusty, per_trial, near);
        if fit.rate_interval(near, 0.95).unwrap().contains(truth) {
            widened += 1;
        }
        let far_truth = true_rate_per_h(gusty, per_trial, far);
        if fit.rate_interval(far, 0.95).unwrap().contains(far_truth) {
            widened_far += 1;
        }
        // The old behaviour: every cluster counted as independent.
        let old = fit.with_dispersion(TrialDispersion::NONE).unwrap();
        if old.rate_interval(near, 0.95).unwrap().contains(truth) {
            naive += 1;
        }
    }
    scales.sort_by(f64::total_cmp);
    println!(
        "dispersion rejected in {rejected}/{SEEDS}; scale median {:.2}; covered: widened \
         {widened}/{SEEDS} (far {widened_far}/{SEEDS}), naive {naive}/{SEEDS}",
        scales[scales.len() / 2]
    );
    // The variance of the counts is 1 + 4·0.99 ≈ 5 times their mean: the test sees it every
    // time and the scale estimates it.
    assert!(rejected >= 48, "{rejected}");
    let median = scales[scales.len() / 2];
    assert!((3.5..7.0).contains(&median), "{median}");
    assert!(widened >= NEEDED, "widened {widened}/{SEEDS}");
    assert!(widened_far >= NEEDED, "widened, far {widened_far}/{SEEDS}");
    // Counting clusters as independent covers far less than 95 %: the old behaviour fails.
    assert!(naive < NEEDED, "naive {naive}/{SEEDS}");
}

#[test]
fn poisson_counts_leave_the_fit_nearly_unchanged() {
    // Every trial alike (0.04 clusters per trial): a Poisson process over the run. The test
    // rejects about 5 % of the time and the scale stays near 1 (its spread is about √(2/k)).
    let (gusty, per_trial) = (1.0, 0.04);
    let near = U + SCALE * 3f64.ln();
    let (mut covered, mut rejected) = (0, 0);
    for seed in 0..SEEDS {
        let acc = run("heterogeneity-poisson", seed, gusty, per_trial);
        let fit = TailFit::from_accumulator(&acc, U, NO_SHAPE_FLOOR).unwrap();
        let d = fit.dispersion();
        assert!(d.scale < 1.15, "{d:?}");
        if d.p_value < 0.05 {
            rejected += 1;
        }
        if fit
            .rate_interval(near, 0.95)
            .unwrap()
            .contains(true_rate_per_h(gusty, per_trial, near))
        {
            covered += 1;
        }
    }
    println!("homogeneous: rejected {rejected}/{SEEDS}, covered {covered}/{SEEDS}");
    // P(Binomial(50, 0.05) >= 8) ≈ 0.012.
    assert!(rejected < 8, "{rejected}");
    assert!(covered >= NEEDED, "{covered}");
}

#[test]
fn dispersion_does_not_depend_on_how_trials_were_split_or_merged() {
    let whole = run("heterogeneity-merge", 1, 0.01, 4.0);
    let rule = AlarmRule::new(1, 1, 1.0).unwrap();
    // The same trials, re-added into two accumulators by key parity, merged in both orders.
    let halves = |parity: u64| {
        let mut acc = TailAccumulator::new(rule, 0.0, usize::MAX).unwrap();
        let clusters = whole.clusters(0.0).unwrap();
        for trial in (0..TRIALS).filter(|t| t % 2 == parity) {
            let mut scan = acc.scan(trial);
            for c in clusters.iter().filter(|c| c.trial == trial) {
                scan.push(c.peak_s, c.max).unwrap();
            }
            acc.add(scan, TRIAL_S).unwrap();
        }
        acc
    };
    let mut a = halves(0);
    a.merge(halves(1)).unwrap();
    let mut b = halves(1);
    b.merge(halves(0)).unwrap();
    let d = whole.trial_dispersion(U).unwrap();
    assert_eq!(a.trial_dispersion(U).unwrap(), d);
    assert_eq!(b.trial_dispersion(U).unwrap(), d);
}
