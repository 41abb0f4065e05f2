//! Coverage of the profile-likelihood intervals on simulated data of known parameters.
//!
//! Source of the criterion: a 95 % interval contains the truth in 95 % of samples; with 50
//! seeds, at least 44 (the bar; P(Binomial(50, 0.95) ≤ 43) ≈ 0.038, so a correct
//! method fails it rarely, and one with 85 % coverage passes it with probability ≈ 0.3).
//! The data are drawn from the model itself: GPD excesses by inversion, a Poisson count of
//! them (Coles 2001, §4.4: the point-process model of exceedances).

mod common;

use echobench_tail::{GpdFit, TailFit, NO_SHAPE_FLOOR};

const SEEDS: u64 = 50;
const NEEDED: usize = 44;

#[test]
fn shape_interval_covers_the_true_shape() {
    for (xi, sigma, n) in [(0.2, 1.0, 100), (-0.25, 2.0, 100), (0.0, 0.5, 60)] {
        let mut hits = 0;
        for seed in 0..SEEDS {
            let mut rng = common::rng(&format!("coverage-xi-{xi}"), seed);
            let y = common::gpd_sample(&mut rng, n, xi, sigma);
            let (lo, hi) = GpdFit::new(&y).unwrap().xi_interval(0.95).unwrap();
            if lo <= xi && xi <= hi {
                hits += 1;
            }
        }
        println!("ξ = {xi}, n = {n}: {hits}/{SEEDS}");
        assert!(hits >= NEEDED, "ξ = {xi}: {hits}/{SEEDS}");
    }
}

/// One simulated run: `n_u ~ Poisson(λ_u T)` clusters with GPD excesses over u = 10.
fn simulated_fit(name: &str, seed: u64, lambda_u: f64, t_h: f64, xi: f64, sigma: f64) -> TailFit {
    let mut rng = common::rng(name, seed);
    let n = common::poisson(&mut rng, lambda_u * t_h);
    let y = common::gpd_sample(&mut rng, n, xi, sigma);
    TailFit::from_excesses(10.0, &y, t_h, NO_SHAPE_FLOOR).unwrap()
}

#[test]
fn extrapolated_rate_and_level_intervals_cover_the_truth() {
    // 150 clusters expected above u in 1000 h (0.15/h); the target rate is 1e-3 of that,
    // about seven times beyond the rarest cluster the run is expected to hold.
    let (lambda_u, t_h) = (0.15, 1000.0);
    for (xi, sigma) in [(0.1, 2.0), (-0.2, 2.0)] {
        let target = lambda_u * 1e-3;
        // The true level: λ_u P(Y > x − u) = target (Coles 2001, eq. 4.13).
        let p: f64 = 1e-3;
        let x_true = 10.0 + sigma * ((-xi * p.ln()).exp_m1()) / xi;
        let (mut rate_hits, mut level_hits) = (0, 0);
        for seed in 0..SEEDS {
            let fit = simulated_fit(
                &format!("coverage-rate-{xi}"),
                seed,
                lambda_u,
                t_h,
                xi,
                sigma,
            );
            let rate = fit.rate_interval(x_true, 0.95).unwrap();
            if rate.contains(target) {
                rate_hits += 1;
            }
            let level = fit.threshold_for_rate(target, 0.95).unwrap();
            if level.contains(x_true) {
                level_hits += 1;
            }
        }
        println!("ξ = {xi}: rate {rate_hits}/{SEEDS}, level {level_hits}/{SEEDS}");
        assert!(rate_hits >= NEEDED, "ξ = {xi}: rate {rate_hits}/{SEEDS}");
        assert!(level_hits >= NEEDED, "ξ = {xi}: level {level_hits}/{SEEDS}");
    }
}

#[test]
fn interval_ends_are_on_the_likelihood_cut_and_bracket_the_estimate() {
    let fit = simulated_fit("interval-shape", 7, 0.15, 1000.0, 0.1, 2.0);
    let x = 18.0;
    let r = fit.rate_interval(x, 0.95).unwrap();
    assert!(r.lower < r.value && r.value < r.upper, "{r:?}");
    assert_eq!(r.value, fit.rate_per_h(x));
    // A wider confidence gives a wider interval.
    let r99 = fit.rate_interval(x, 0.99).unwrap();
    assert!(r99.lower < r.lower && r99.upper > r.upper && r.lower > 0.0);
    // The level for the rate the fit gives at x is x itself, and its interval maps onto the
    // rate interval read the other way (the same likelihood-ratio set).
    let level = fit.threshold_for_rate(r.value, 0.95).unwrap();
    assert!((level.value - x).abs() < 1e-9 * x, "{level:?}");
    assert!(level.lower < x && x < level.upper);
    // The two inversions describe one likelihood-ratio set {(x, rate)}: the level interval
    // for the rate at the upper end of x's rate interval ends (above) at x, and the one for
    // the rate at its lower end starts at x.
    let span = x - fit.threshold();
    let at_upper = fit.threshold_for_rate(r.upper, 0.95).unwrap();
    assert!((at_upper.upper - x).abs() < 1e-6 * span, "{at_upper:?}");
    let at_lower = fit.threshold_for_rate(r.lower, 0.95).unwrap();
    assert!((at_lower.lower - x).abs() < 1e-6 * span, "{at_lower:?}");
}
