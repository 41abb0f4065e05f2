//! How uncertain is a threshold calibrated on noise-only trials?

use statrs::distribution::{Beta, ContinuousCDF};
use statrs::statistics::Distribution;

use crate::error::{check_confidence, StatsError};
use crate::interval::Interval;

/// The true Pfa of a threshold set to the k-th largest of `noise_trials` noise-only scores.
///
/// Whatever the score distribution (if continuous), the probability that a fresh noise score
/// reaches the k-th largest of M₀ is the (M₀−k+1)-th smallest of M₀ uniform order statistics, so
/// the true Pfa is `Beta(k, M₀ − k + 1)` (David & Nagaraja 2003, uniform order statistics, from
/// memory; `docs/reference/statistics.md#s4`). With M₀ = 10 000 and k = 10 the nominal Pfa 1e-3 is
/// in fact anywhere in [5.43e-4, 1.570e-3] with 90 % probability: calibrate on separate seeds and
/// report this spread.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EmpiricalThresholdPfa {
    rank_from_top: u64,
    noise_trials: u64,
    distribution: Beta,
}

impl EmpiricalThresholdPfa {
    /// Threshold at the `rank_from_top`-th largest (1 = the maximum) of `noise_trials` scores.
    ///
    /// # Errors
    /// `rank_from_top` is 0 or larger than `noise_trials`.
    pub fn new(rank_from_top: u64, noise_trials: u64) -> Result<Self, StatsError> {
        if rank_from_top == 0 || rank_from_top > noise_trials {
            return Err(StatsError::InvalidArgument {
                name: "rank_from_top",
                value: rank_from_top as f64,
                expected: "a rank from 1 to the number of noise-only trials",
            });
        }
        let a = rank_from_top as f64;
        let b = (noise_trials - rank_from_top) as f64 + 1.0;
        let distribution = Beta::new(a, b).map_err(|_| StatsError::InvalidArgument {
            name: "noise_trials",
            value: noise_trials as f64,
            expected: "a count whose Beta shape parameters are finite",
        })?;
        Ok(Self {
            rank_from_top,
            noise_trials,
            distribution,
        })
    }

    /// The rank k of the threshold among the noise scores, counted from the top.
    pub fn rank_from_top(&self) -> u64 {
        self.rank_from_top
    }

    /// The number M₀ of noise-only trials the threshold was taken from.
    pub fn noise_trials(&self) -> u64 {
        self.noise_trials
    }

    /// Expected true Pfa, `k/(M₀ + 1)`.
    pub fn mean(&self) -> f64 {
        self.distribution.mean().unwrap_or(f64::NAN)
    }

    /// Quantile `p` of the true Pfa's distribution.
    ///
    /// # Errors
    /// `p` outside `[0, 1]` or NaN.
    pub fn quantile(&self, p: f64) -> Result<f64, StatsError> {
        if !(0.0..=1.0).contains(&p) {
            return Err(StatsError::InvalidArgument {
                name: "p",
                value: p,
                expected: "a probability in [0, 1]",
            });
        }
        Ok(self.distribution.inverse_cdf(p))
    }

    /// Central range holding the true Pfa with probability `confidence`.
    ///
    /// # Errors
    /// `confidence` not in (0, 1).
    pub fn central_interval(&self, confidence: f64) -> Result<Interval, StatsError> {
        let tail = (1.0 - check_confidence(confidence)?) / 2.0;
        Ok(Interval {
            low: self.distribution.inverse_cdf(tail),
            high: self.distribution.inverse_cdf(1.0 - tail),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn maximum_of_m_scores_has_a_closed_form() {
        // k = 1: Beta(1, M0), cdf 1 − (1 − x)^M0, so its median is 1 − 0.5^{1/M0}.
        let pfa = EmpiricalThresholdPfa::new(1, 1000).unwrap_or_else(|e| panic!("{e}"));
        let median = pfa.quantile(0.5).unwrap_or(f64::NAN);
        assert!((median - (1.0 - 0.5f64.powf(1.0 / 1000.0))).abs() < 1e-12);
        assert!((pfa.mean() - 1.0 / 1001.0).abs() < 1e-15);
    }

    #[test]
    fn bad_ranks_are_errors() {
        assert!(EmpiricalThresholdPfa::new(0, 10).is_err());
        assert!(EmpiricalThresholdPfa::new(11, 10).is_err());
        assert!(EmpiricalThresholdPfa::new(10, 10).is_ok());
        let pfa = EmpiricalThresholdPfa::new(2, 10).unwrap_or_else(|e| panic!("{e}"));
        assert!(pfa.quantile(-0.1).is_err());
        assert!(pfa.quantile(f64::NAN).is_err());
        assert!(pfa.central_interval(1.0).is_err());
    }
}
