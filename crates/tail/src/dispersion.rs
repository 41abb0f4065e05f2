//! Trial-to-trial heterogeneity of the exceedance rate: a dispersion test of the per-trial
//! cluster counts against Poisson, and the quasi-likelihood scale factor that widens the
//! fit's intervals when the counts are over-dispersed.
//!
//! # Why
//!
//! The peaks-over-threshold model takes the cluster maxima above `u` as one Poisson process
//! over the whole run ([`crate::fit`]). A nuisance room whose parameters are drawn per trial
//! (a fan's speed, the strength of the gusts) breaks that: a trial with strong gusts holds
//! many clusters above `u` and a calm one none, so the count over the run varies more than a
//! Poisson count and the excesses of one trial share that trial's tail. Trials, not clusters,
//! are then the independent units, and likelihood intervals that count every cluster as
//! independent are too narrow (`docs/reference/statistics.md#s12`).
//!
//! # The test (Fisher 1950)
//!
//! With `k` trials of noise-only times `t_j` (total `T`) holding `n_j` clusters above `u`
//! (total `n`), the expected counts under one Poisson process, given `n`, are
//! `e_j = n t_j / T`, and Pearson's statistic is
//! `X² = Σ_j (n_j − e_j)² / e_j = Σ_j n_j² / e_j − n`, referred to χ² with `k − 1` degrees of
//! freedom: Fisher's index-of-dispersion test (R. A. Fisher 1950, "The significance of
//! deviations from expectation in a Poisson series", *Biometrics* 6; with equal `t_j` it is
//! `Σ (n_j − n̄)²/n̄`). Only trials with clusters enter the sum, so their times are all the
//! accumulator keeps. When most trials hold no cluster (the usual case far in the tail) the
//! χ² reference is rough in its upper tail (its mean `k − 1` is exact, its variance
//! `2 (k − 1)(n − 1)/n` nearly so, its skewness is not); the p-value is for reading, and the
//! widening below does not depend on it.
//!
//! # The widening (McCullagh & Nelder 1989, §4.5.2)
//!
//! The dispersion estimate `φ̂ = X² / (k − 1)` is the quasi-likelihood scale of over-dispersed
//! Poisson counts (McCullagh & Nelder 1989, *Generalized Linear Models*, 2nd ed., §4.5.2 and
//! §6.2.3): the counts' variance is `φ` times their mean, so log-likelihood differences are
//! divided by `φ`, which for a likelihood-ratio interval is a cut of `φ·χ²₁/2` instead of
//! `χ²₁/2`. The excesses are clustered the same way: for a mean of excesses grouped in trials
//! the variance grows by Kish's design effect `1 + (m* − 1) ρ`, `m* = Σ n_j² / n`, with `ρ` the
//! within-trial correlation (L. Kish 1987, *Statistical Design for Research*, §7.1, from
//! memory), and with equal trial times `φ̂ = (m* − n̄) k/(k − 1)`: the design effect at full
//! within-trial correlation, up to the mean count per trial `n̄` (small in the tail). So one
//! factor, `max(1, φ̂)`, scales the whole joint likelihood of [`crate::fit`] (the cut for both
//! the rate and the threshold intervals). Under a Poisson process `φ̂` is 1 within about
//! `√(2/k)`; it is never taken below 1, since under-dispersion would only narrow the
//! intervals. Kent (1982, "Robust properties of likelihood ratio tests", *Biometrika* 69) shows
//! why a scale is the right form: under a mis-specified model the likelihood-ratio statistic
//! of a scalar is a multiple of χ²₁, the multiple being the ratio of the true to the assumed
//! variance.
//!
//! **Limit.** The widening makes the interval honest about the trials the run holds; it
//! cannot show a kind of trial the run never drew (a storm in one trial of ten thousand,
//! in a run of a few hundred). A room whose parameters vary that much needs a run long enough
//! to sample them.

use statrs::distribution::{ChiSquared, ContinuousCDF};

/// The dispersion of per-trial cluster counts above a threshold (module doc).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct TrialDispersion {
    /// Trials in the run (`k`), including those without a cluster.
    pub trials: u64,
    /// Trials with at least one cluster above the threshold.
    pub trials_with_clusters: u64,
    /// Clusters above the threshold (`n`).
    pub clusters: u64,
    /// Pearson's `X²` (module doc); 0 without clusters or with one trial.
    pub statistic: f64,
    /// The χ² reference's degrees of freedom, `k − 1`.
    pub degrees_of_freedom: u64,
    /// `P(χ²_{k−1} >= X²)` (approximate when most trials hold no cluster; module doc); 1
    /// without a test.
    pub p_value: f64,
    /// The scale factor `max(1, X²/(k − 1))` by which the fit's log-likelihood cut is
    /// multiplied.
    pub scale: f64,
}

impl TrialDispersion {
    /// No over-dispersion and no test: what a fit without trial information assumes.
    pub const NONE: TrialDispersion = TrialDispersion {
        trials: 0,
        trials_with_clusters: 0,
        clusters: 0,
        statistic: 0.0,
        degrees_of_freedom: 0,
        p_value: 1.0,
        scale: 1.0,
    };

    /// From `(n_j, t_j ns)` of the trials with clusters, the number of trials `k` and their
    /// total time `T` ns (module doc). A trial of zero time cannot hold a cluster and is
    /// skipped.
    pub fn from_counts(counts: &[(u64, u64)], trials: u64, exposure_ns: u64) -> Self {
        let clusters: u64 = counts.iter().map(|c| c.0).sum();
        if trials < 2 || clusters == 0 || exposure_ns == 0 {
            return TrialDispersion {
                trials,
                trials_with_clusters: counts.len() as u64,
                clusters,
                ..TrialDispersion::NONE
            };
        }
        let n = clusters as f64;
        let t = exposure_ns as f64;
        let mut statistic = -n;
        for &(n_j, t_j) in counts {
            if t_j > 0 {
                let e_j = n * t_j as f64 / t;
                statistic += (n_j as f64) * (n_j as f64) / e_j;
            }
        }
        // Rounding can leave a tiny negative value where every n_j equals its expectation.
        let statistic = statistic.max(0.0);
        let dof = trials - 1;
        let p_value = ChiSquared::new(dof as f64).map_or(1.0, |c| c.sf(statistic));
        TrialDispersion {
            trials,
            trials_with_clusters: counts.len() as u64,
            clusters,
            statistic,
            degrees_of_freedom: dof,
            p_value,
            scale: (statistic / dof as f64).max(1.0),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn equal_times_give_the_variance_over_the_mean() {
        // Four trials of 10 s with counts 0, 1, 2, 5: n̄ = 2, Σ(n − n̄)² = 4 + 1 + 0 + 9 = 14,
        // index of dispersion 14/2 = 7 on 3 degrees of freedom (Fisher 1950's form).
        let d = TrialDispersion::from_counts(&[(1, 10), (2, 10), (5, 10)], 4, 40);
        assert!((d.statistic - 7.0).abs() < 1e-12);
        assert_eq!(d.degrees_of_freedom, 3);
        assert!((d.scale - 7.0 / 3.0).abs() < 1e-12);
        // P(χ²₃ >= 7) = 0.0718978 (scipy.stats.chi2.sf(7, 3)).
        assert!((d.p_value - 0.071_897_8).abs() < 1e-6);
        // Counts exactly proportional to the times: no dispersion, scale 1.
        let even = TrialDispersion::from_counts(&[(1, 10), (2, 20), (3, 30)], 3, 60);
        assert!(even.statistic.abs() < 1e-12 && even.scale == 1.0);
        assert!(TrialDispersion::from_counts(&[], 10, 100).scale == 1.0);
    }
}
