//! Distribution-free summaries of a sample, used for detection latency: median with an
//! order-statistic confidence interval, and sample quantiles such as p90.

use statrs::distribution::{Binomial, DiscreteCDF};

use crate::error::{check_confidence, StatsError};

/// Sorts a copy of a sample after checking it is non-empty and finite.
fn sorted_finite(samples: &[f64]) -> Result<Vec<f64>, StatsError> {
    if samples.is_empty() {
        return Err(StatsError::TooFewSamples {
            name: "samples",
            needed: 1,
            got: 0,
        });
    }
    if let Some(&bad) = samples.iter().find(|x| !x.is_finite()) {
        return Err(StatsError::InvalidArgument {
            name: "samples",
            value: bad,
            expected: "finite values",
        });
    }
    let mut sorted = samples.to_vec();
    sorted.sort_by(f64::total_cmp);
    Ok(sorted)
}

/// Type-7 quantile of an already sorted, finite, non-empty sample.
fn quantile_sorted(sorted: &[f64], q: f64) -> f64 {
    let position = (sorted.len() - 1) as f64 * q;
    let below = position.floor() as usize;
    let fraction = position - below as f64;
    match sorted.get(below + 1) {
        Some(&above) if fraction > 0.0 => sorted[below] + fraction * (above - sorted[below]),
        _ => sorted[below],
    }
}

/// Sample quantile `q` by Hyndman & Fan's (1996) definition 7, the default of R and NumPy:
/// with the sample sorted `x₁ <= … <= xₙ` and `h = (n − 1)q + 1`, the value is
/// `x_⌊h⌋ + (h − ⌊h⌋)(x_⌊h⌋+1 − x_⌊h⌋)`, linear interpolation between order statistics.
/// `q = 0` gives the minimum, `q = 1` the maximum; p90 is `quantile(latencies, 0.9)`.
///
/// # Errors
/// An empty sample, a non-finite value, or `q` outside `[0, 1]`.
///
/// ```
/// let p90 = echobench_stats::quantile(&[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0], 0.9);
/// assert!((p90.unwrap() - 9.1).abs() < 1e-12);
/// ```
pub fn quantile(samples: &[f64], q: f64) -> Result<f64, StatsError> {
    if !(0.0..=1.0).contains(&q) {
        return Err(StatsError::InvalidArgument {
            name: "q",
            value: q,
            expected: "a quantile level in [0, 1]",
        });
    }
    Ok(quantile_sorted(&sorted_finite(samples)?, q))
}

/// Sample median: the middle order statistic, or the mean of the two middle ones for an even
/// count (= [`quantile`] at 0.5).
///
/// # Errors
/// An empty sample or a non-finite value.
pub fn median(samples: &[f64]) -> Result<f64, StatsError> {
    quantile(samples, 0.5)
}

/// Ranks (1-based) of the order statistics that bound a distribution-free confidence interval
/// for the median, with the interval's exact coverage.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OrderStatisticRanks {
    /// Rank k of the lower end, `x₍k₎`.
    pub low_rank: usize,
    /// Rank `n − k + 1` of the upper end.
    pub high_rank: usize,
    /// Exact coverage `1 − 2·P(Bin(n, ½) <= k − 1)` for any continuous distribution;
    /// at least the requested confidence.
    pub coverage: f64,
}

/// Ranks of the median interval `[x₍k₎, x₍n−k+1₎]` for a sample of `n`: the largest k with
/// `P(Bin(n, ½) <= k − 1) <= α/2`. The median lies below `x₍k₎` only if fewer than k
/// observations fall below it, a `Bin(n, ½)` event whatever the distribution (Thompson
/// 1936; David & Nagaraja 2003 §7.1, from memory). n = 20 at 95 % gives ranks 6 and 15,
/// coverage 0.958611.
///
/// # Errors
/// `confidence` not in (0, 1), or `n` too small for any interval to reach the confidence
/// (`2^{1−n} > 1 − confidence`; n < 6 at 95 %).
pub fn median_interval_ranks(n: usize, confidence: f64) -> Result<OrderStatisticRanks, StatsError> {
    let alpha = 1.0 - check_confidence(confidence)?;
    let half_tail = alpha / 2.0;
    let below = |k: usize| -> f64 {
        // P(Bin(n, ½) <= k − 1); k >= 1.
        Binomial::new(0.5, n as u64)
            .map(|b| b.cdf((k - 1) as u64))
            .unwrap_or(f64::NAN)
    };
    if n == 0 || below(1) > half_tail {
        // Smallest n with 2^{-n} <= α/2.
        let needed = (-half_tail.log2()).ceil().max(1.0) as usize;
        return Err(StatsError::TooFewSamples {
            name: "samples",
            needed,
            got: n,
        });
    }
    // The tail grows with k; bisect for the last k that keeps it within α/2. k <= (n+1)/2
    // always holds because the tail at k − 1 >= n/2 is at least ½ > α/2.
    let (mut good, mut bad) = (1usize, n / 2 + 2);
    while bad - good > 1 {
        let mid = good + (bad - good) / 2;
        if below(mid) <= half_tail {
            good = mid;
        } else {
            bad = mid;
        }
    }
    Ok(OrderStatisticRanks {
        low_rank: good,
        high_rank: n - good + 1,
        coverage: 1.0 - 2.0 * below(good),
    })
}

/// A distribution-free confidence interval for the median of a sample.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MedianInterval {
    /// Lower end, the order statistic `x₍low_rank₎`.
    pub low: f64,
    /// Upper end, the order statistic `x₍high_rank₎`.
    pub high: f64,
    /// The ranks used and the exact coverage.
    pub ranks: OrderStatisticRanks,
}

/// Distribution-free confidence interval for the median of `samples` from order statistics
/// (see [`median_interval_ranks`]).
///
/// # Errors
/// An empty sample, a non-finite value, `confidence` not in (0, 1), or too few samples.
pub fn median_confidence_interval(
    samples: &[f64],
    confidence: f64,
) -> Result<MedianInterval, StatsError> {
    let sorted = sorted_finite(samples)?;
    let ranks = median_interval_ranks(sorted.len(), confidence)?;
    Ok(MedianInterval {
        low: sorted[ranks.low_rank - 1],
        high: sorted[ranks.high_rank - 1],
        ranks,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranks_match_a_linear_search_of_the_definition() {
        // Slow version: walk k upward while the binomial tail stays within α/2.
        for n in 6..200usize {
            for confidence in [0.9, 0.95, 0.99] {
                let Ok(fast) = median_interval_ranks(n, confidence) else {
                    assert!(n < 9, "n={n} at {confidence} should have an interval");
                    continue;
                };
                let tail = |k: usize| {
                    Binomial::new(0.5, n as u64)
                        .map(|b| b.cdf((k - 1) as u64))
                        .unwrap_or(f64::NAN)
                };
                let mut k = 1;
                while tail(k + 1) <= (1.0 - confidence) / 2.0 {
                    k += 1;
                }
                assert_eq!((fast.low_rank, fast.high_rank), (k, n - k + 1), "n={n}");
                assert!(fast.coverage >= confidence);
            }
        }
    }

    #[test]
    fn too_small_or_bad_samples_are_errors() {
        // 2^{-5} = 0.03125 > 0.025 but 2^{-6} <= 0.025: six values are the minimum at 95 %.
        assert_eq!(
            median_interval_ranks(5, 0.95),
            Err(StatsError::TooFewSamples {
                name: "samples",
                needed: 6,
                got: 5
            })
        );
        assert!(median_interval_ranks(6, 0.95).is_ok());
        assert!(median_interval_ranks(0, 0.95).is_err());
        assert!(median_confidence_interval(&[], 0.95).is_err());
        assert!(median(&[]).is_err());
        assert!(median(&[1.0, f64::NAN]).is_err());
        assert!(quantile(&[1.0, f64::INFINITY], 0.5).is_err());
        assert!(quantile(&[1.0], 1.5).is_err());
        assert_eq!(quantile(&[4.0], 0.9), Ok(4.0));
        assert_eq!(quantile(&[3.0, 1.0, 2.0], 0.0), Ok(1.0));
        assert_eq!(quantile(&[3.0, 1.0, 2.0], 1.0), Ok(3.0));
    }
}
