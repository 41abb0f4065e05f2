//! Confidence intervals for a binomial proportion: Pd from detected events, Pfa from
//! noise-only trials.
//!
//! Brown, Cai & DasGupta (2001) recommend Wilson or Jeffreys for two-sided intervals;
//! Clopper–Pearson is exact and conservative (coverage never below the nominal level), the
//! choice when the bound is a guarantee. The Wald interval is deliberately absent: it gives
//! `[0, 0]` for zero false alarms.

use statrs::distribution::{Beta, ContinuousCDF, Normal};

use crate::error::{check_confidence, check_count, check_positive, StatsError};
use crate::interval::Interval;

/// Checks a (successes, trials) pair.
fn check_counts(successes: u64, trials: u64) -> Result<(), StatsError> {
    if trials == 0 {
        return Err(StatsError::TooFewSamples {
            name: "trials",
            needed: 1,
            got: 0,
        });
    }
    check_count("successes", successes, trials)
}

/// Quantile `p` of `Beta(a, b)`; callers guarantee `a, b > 0` and `p` in `[0, 1]`.
pub(crate) fn beta_quantile(a: f64, b: f64, p: f64) -> f64 {
    match Beta::new(a, b) {
        Ok(beta) => beta.inverse_cdf(p.clamp(0.0, 1.0)),
        Err(_) => f64::NAN,
    }
}

/// Upper standard normal quantile `z` with `P(Z > z) = tail`.
fn normal_upper_quantile(tail: f64) -> f64 {
    Normal::standard().inverse_cdf(1.0 - tail)
}

/// Wilson (1927) score interval for `successes` out of `trials`, two-sided at `confidence`:
/// `(p̂ + z²/2n ± z·√(p̂(1−p̂)/n + z²/4n²)) / (1 + z²/n)`, `z = Φ⁻¹(1 − α/2)`.
///
/// The ends are exactly 0 for zero successes and exactly 1 for `successes == trials`.
///
/// # Errors
/// `trials == 0`, `successes > trials`, or `confidence` not in (0, 1).
///
/// ```
/// // 4 of 5 walk-through events detected.
/// let ci = echobench_stats::wilson_interval(4, 5, 0.95).unwrap();
/// assert!((ci.low - 0.375535).abs() < 1e-6 && (ci.high - 0.963776).abs() < 1e-6);
/// ```
pub fn wilson_interval(
    successes: u64,
    trials: u64,
    confidence: f64,
) -> Result<Interval, StatsError> {
    check_counts(successes, trials)?;
    let alpha = 1.0 - check_confidence(confidence)?;
    let z = normal_upper_quantile(alpha / 2.0);
    let n = trials as f64;
    let p_hat = successes as f64 / n;
    let z2 = z * z;
    let centre = p_hat + z2 / (2.0 * n);
    let half_width = z * (p_hat * (1.0 - p_hat) / n + z2 / (4.0 * n * n)).sqrt();
    let scale = 1.0 + z2 / n;
    let low = if successes == 0 {
        0.0
    } else {
        ((centre - half_width) / scale).clamp(0.0, 1.0)
    };
    let high = if successes == trials {
        1.0
    } else {
        ((centre + half_width) / scale).clamp(0.0, 1.0)
    };
    Ok(Interval { low, high })
}

/// Clopper & Pearson (1934) exact interval, two-sided at `confidence`:
/// `[Beta⁻¹(α/2; k, n−k+1), Beta⁻¹(1−α/2; k+1, n−k)]`, with `low = 0` when `k = 0` and
/// `high = 1` when `k = n`. Coverage is at least `confidence` for every true proportion.
///
/// # Errors
/// `trials == 0`, `successes > trials`, or `confidence` not in (0, 1).
pub fn clopper_pearson_interval(
    successes: u64,
    trials: u64,
    confidence: f64,
) -> Result<Interval, StatsError> {
    check_counts(successes, trials)?;
    let alpha = 1.0 - check_confidence(confidence)?;
    Ok(Interval {
        low: cp_lower(successes, trials, alpha / 2.0),
        high: cp_upper(successes, trials, alpha / 2.0),
    })
}

/// Exact lower bound with upper-tail probability `tail`: `P(X >= k | p = low) = tail`.
pub(crate) fn cp_lower(successes: u64, trials: u64, tail: f64) -> f64 {
    if successes == 0 {
        0.0
    } else {
        let (k, n) = (successes as f64, trials as f64);
        beta_quantile(k, n - k + 1.0, tail)
    }
}

/// Exact upper bound with lower-tail probability `tail`: `P(X <= k | p = high) = tail`.
fn cp_upper(successes: u64, trials: u64, tail: f64) -> f64 {
    if successes == trials {
        1.0
    } else {
        let (k, n) = (successes as f64, trials as f64);
        beta_quantile(k + 1.0, n - k, 1.0 - tail)
    }
}

/// Jeffreys interval: the equal-tailed `confidence` interval of the `Beta(k+½, n−k+½)`
/// posterior under the Jeffreys prior, with Brown, Cai & DasGupta's (2001, §4.1.2)
/// modification `low = 0` at `k = 0` and `high = 1` at `k = n`.
///
/// # Errors
/// `trials == 0`, `successes > trials`, or `confidence` not in (0, 1).
pub fn jeffreys_interval(
    successes: u64,
    trials: u64,
    confidence: f64,
) -> Result<Interval, StatsError> {
    check_counts(successes, trials)?;
    let alpha = 1.0 - check_confidence(confidence)?;
    let (k, n) = (successes as f64, trials as f64);
    let low = if successes == 0 {
        0.0
    } else {
        beta_quantile(k + 0.5, n - k + 0.5, alpha / 2.0)
    };
    let high = if successes == trials {
        1.0
    } else {
        beta_quantile(k + 0.5, n - k + 0.5, 1.0 - alpha / 2.0)
    };
    Ok(Interval { low, high })
}

/// One-sided exact (Clopper–Pearson) upper confidence bound on a proportion:
/// `Beta⁻¹(confidence; k+1, n−k)`, 1 when `k = n`. For zero events it is
/// `1 − (1 − confidence)^{1/n}`, which the rule of three approximates by `3/n` at 95 %.
///
/// # Errors
/// `trials == 0`, `successes > trials`, or `confidence` not in (0, 1).
pub fn clopper_pearson_upper_bound(
    successes: u64,
    trials: u64,
    confidence: f64,
) -> Result<f64, StatsError> {
    check_counts(successes, trials)?;
    let alpha = 1.0 - check_confidence(confidence)?;
    Ok(cp_upper(successes, trials, alpha))
}

/// One-sided exact (Clopper–Pearson) lower confidence bound on a proportion:
/// `Beta⁻¹(1 − confidence; k, n−k+1)`, 0 when `k = 0`.
///
/// # Errors
/// `trials == 0`, `successes > trials`, or `confidence` not in (0, 1).
pub fn clopper_pearson_lower_bound(
    successes: u64,
    trials: u64,
    confidence: f64,
) -> Result<f64, StatsError> {
    check_counts(successes, trials)?;
    let alpha = 1.0 - check_confidence(confidence)?;
    Ok(cp_lower(successes, trials, alpha))
}

/// Rule of three (Hanley & Lippman-Hand 1983): with zero events in `trials` trials the
/// one-sided 95 % upper bound on the proportion is about `3/trials` (from
/// `−ln 0.05 ≈ 2.996`). An approximation; [`clopper_pearson_upper_bound`] is the exact value.
///
/// # Errors
/// `trials == 0`.
pub fn rule_of_three_upper_bound(trials: u64) -> Result<f64, StatsError> {
    if trials == 0 {
        return Err(StatsError::TooFewSamples {
            name: "trials",
            needed: 1,
            got: 0,
        });
    }
    Ok(3.0 / trials as f64)
}

/// Smallest number of trials that, if all are free of events, bounds the proportion below
/// `max_proportion` at one-sided `confidence`: the least `n` with
/// `1 − (1 − confidence)^{1/n} <= max_proportion`, i.e. `n >= ln(1−c)/ln(1−p)`.
/// Showing Pfa ≤ 1e-3 at 95 % needs 2995 alarm-free trials.
///
/// # Errors
/// `max_proportion` not in (0, 1), `confidence` not in (0, 1), or an answer beyond `u64`.
pub fn trials_for_zero_event_claim(
    max_proportion: f64,
    confidence: f64,
) -> Result<u64, StatsError> {
    check_positive("max_proportion", max_proportion)?;
    if max_proportion >= 1.0 {
        return Err(StatsError::InvalidArgument {
            name: "max_proportion",
            value: max_proportion,
            expected: "a proportion strictly between 0 and 1",
        });
    }
    let alpha = 1.0 - check_confidence(confidence)?;
    // ln_1p keeps precision for the tiny proportions radar work uses.
    let needed = alpha.ln() / (-max_proportion).ln_1p();
    let mut n = needed.ceil();
    if !(n.is_finite() && n < u64::MAX as f64) {
        return Err(StatsError::InvalidArgument {
            name: "max_proportion",
            value: max_proportion,
            expected: "a proportion large enough that the trial count fits in u64",
        });
    }
    // Guard the ceiling against rounding in the logarithms: check the bound itself.
    let bound = |n: f64| 1.0 - alpha.powf(1.0 / n);
    if n > 1.0 && bound(n - 1.0) <= max_proportion {
        n -= 1.0;
    } else if bound(n) > max_proportion {
        n += 1.0;
    }
    Ok(n.max(1.0) as u64)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn invalid_arguments_are_errors_not_panics() {
        assert!(wilson_interval(1, 0, 0.95).is_err());
        assert!(wilson_interval(3, 2, 0.95).is_err());
        assert!(clopper_pearson_interval(1, 2, 1.0).is_err());
        assert!(jeffreys_interval(1, 2, f64::NAN).is_err());
        assert!(clopper_pearson_upper_bound(0, 0, 0.95).is_err());
        assert!(clopper_pearson_lower_bound(0, 1, 0.0).is_err());
        assert!(rule_of_three_upper_bound(0).is_err());
        assert!(trials_for_zero_event_claim(0.0, 0.95).is_err());
        assert!(trials_for_zero_event_claim(1.0, 0.95).is_err());
        assert!(trials_for_zero_event_claim(1e-300, 0.95).is_err());
    }

    #[test]
    fn all_or_nothing_counts_reach_the_ends() {
        for n in [1u64, 2, 7, 1000] {
            for ci in [
                wilson_interval(0, n, 0.95),
                clopper_pearson_interval(0, n, 0.95),
                jeffreys_interval(0, n, 0.95),
            ] {
                let ci = ci.unwrap_or(Interval {
                    low: f64::NAN,
                    high: f64::NAN,
                });
                assert_eq!(ci.low, 0.0);
                assert!(ci.high > 0.0 && ci.high < 1.0);
            }
            for ci in [
                wilson_interval(n, n, 0.95),
                clopper_pearson_interval(n, n, 0.95),
                jeffreys_interval(n, n, 0.95),
            ] {
                let ci = ci.unwrap_or(Interval {
                    low: f64::NAN,
                    high: f64::NAN,
                });
                assert_eq!(ci.high, 1.0);
                assert!(ci.low > 0.0 && ci.low < 1.0);
            }
            assert_eq!(clopper_pearson_upper_bound(n, n, 0.95), Ok(1.0));
            assert_eq!(clopper_pearson_lower_bound(0, n, 0.95), Ok(0.0));
        }
    }

    #[test]
    fn clopper_pearson_bounds_solve_their_tail_equations() {
        // Definition (Clopper & Pearson 1934): P(X >= k | low) = α/2, P(X <= k | high) = α/2.
        use statrs::distribution::{Binomial, DiscreteCDF};
        for (k, n) in [(1u64, 10u64), (3, 1000), (17, 40), (39, 40)] {
            let ci = clopper_pearson_interval(k, n, 0.9).unwrap_or(Interval {
                low: f64::NAN,
                high: f64::NAN,
            });
            let at_low = Binomial::new(ci.low, n)
                .map(|b| b.sf(k - 1))
                .unwrap_or(f64::NAN);
            let at_high = Binomial::new(ci.high, n)
                .map(|b| b.cdf(k))
                .unwrap_or(f64::NAN);
            assert!((at_low - 0.05).abs() < 1e-9, "{k}/{n}: {at_low}");
            assert!((at_high - 0.05).abs() < 1e-9, "{k}/{n}: {at_high}");
        }
    }
}
