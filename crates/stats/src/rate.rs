//! Exact intervals for a Poisson rate: false alarms per hour of noise-only exposure.
//!
//! Garwood (1936): for `k` events in exposure `T`,
//! `[χ²_{α/2}(2k)/2, χ²_{1−α/2}(2k+2)/2] / T`. Since `χ²(2k)/2` is `Gamma(k, 1)`, the
//! quantiles are taken from the unit-rate Gamma distribution directly.

use statrs::distribution::{ContinuousCDF, Gamma};

use crate::error::{check_confidence, check_positive, StatsError};
use crate::interval::Interval;

/// Quantile `p` of `Gamma(shape, rate = 1)`, i.e. `χ²_p(2·shape)/2`; callers pass `shape > 0`.
fn unit_gamma_quantile(shape: f64, p: f64) -> f64 {
    match Gamma::new(shape, 1.0) {
        Ok(gamma) => gamma.inverse_cdf(p.clamp(0.0, 1.0)),
        Err(_) => f64::NAN,
    }
}

/// Exact (Garwood 1936) two-sided interval for the rate of `events` in `exposure`
/// (events per unit of exposure; pass hours to get per hour). The lower end is 0 for zero
/// events. Equals statsmodels' `confint_poisson(k, T, method='exact-c')`.
///
/// # Errors
/// `exposure` not finite and > 0, or `confidence` not in (0, 1).
///
/// ```
/// // 2 false alarms in 10 h of noise-only recording.
/// let ci = echobench_stats::garwood_interval(2, 10.0, 0.95).unwrap();
/// assert!((ci.low - 0.024221).abs() < 1e-6 && (ci.high - 0.722469).abs() < 1e-6);
/// ```
pub fn garwood_interval(
    events: u64,
    exposure: f64,
    confidence: f64,
) -> Result<Interval, StatsError> {
    let exposure = check_positive("exposure", exposure)?;
    let alpha = 1.0 - check_confidence(confidence)?;
    let k = events as f64;
    let low = if events == 0 {
        0.0
    } else {
        unit_gamma_quantile(k, alpha / 2.0) / exposure
    };
    let high = unit_gamma_quantile(k + 1.0, 1.0 - alpha / 2.0) / exposure;
    Ok(Interval { low, high })
}

/// One-sided exact upper confidence bound on the rate, `χ²_c(2k+2)/(2T)`. For zero events
/// it is `−ln(1 − c)/T` (2.996/T at 95 %).
///
/// # Errors
/// `exposure` not finite and > 0, or `confidence` not in (0, 1).
pub fn garwood_upper_bound(events: u64, exposure: f64, confidence: f64) -> Result<f64, StatsError> {
    let exposure = check_positive("exposure", exposure)?;
    let confidence = check_confidence(confidence)?;
    Ok(unit_gamma_quantile(events as f64 + 1.0, confidence) / exposure)
}

/// Exposure needed to claim `rate <= max_rate` at one-sided `confidence` if at most
/// `allowed_events` occur: the `T` at which [`garwood_upper_bound`] of `allowed_events`
/// equals `max_rate`. Claiming ≤ 0.1 FA/h at 95 % takes 29.96 h with no false alarm,
/// 47.44 h with one, 62.96 h with two.
///
/// # Errors
/// `max_rate` not finite and > 0, or `confidence` not in (0, 1).
pub fn exposure_for_rate_claim(
    max_rate: f64,
    allowed_events: u64,
    confidence: f64,
) -> Result<f64, StatsError> {
    let max_rate = check_positive("max_rate", max_rate)?;
    let confidence = check_confidence(confidence)?;
    Ok(unit_gamma_quantile(allowed_events as f64 + 1.0, confidence) / max_rate)
}

/// One-sided exact lower confidence bound on the rate, `χ²_{1−c}(2k)/(2T)` (Garwood 1936,
/// the lower end of his interval at one-sided level `1 − c`); 0 for zero events. The
/// one-sided lower bound at `c` equals the lower end of the two-sided interval at `2c − 1`.
///
/// # Errors
/// `exposure` not finite and > 0, or `confidence` not in (0, 1).
///
/// ```
/// // 2 false alarms in 10 h: the 97.5 % one-sided bound is the 95 % two-sided lower end.
/// let low = echobench_stats::garwood_lower_bound(2, 10.0, 0.975).unwrap();
/// assert!((low - 0.024221).abs() < 1e-6);
/// ```
pub fn garwood_lower_bound(events: u64, exposure: f64, confidence: f64) -> Result<f64, StatsError> {
    let exposure = check_positive("exposure", exposure)?;
    let confidence = check_confidence(confidence)?;
    if events == 0 {
        return Ok(0.0);
    }
    Ok(unit_gamma_quantile(events as f64, 1.0 - confidence) / exposure)
}

/// Exact one-sided p-value of `H0: rate <= limit` given `events` in `exposure`:
/// `P(X >= k)` for `X ~ Poisson(limit·T)`, computed as the `Gamma(k, 1)` distribution function
/// at `limit·T` (the Poisson–Gamma identity behind Garwood's interval). It is below `1 − c`
/// exactly when [`garwood_lower_bound`] at `c` is above `limit`. 1 for zero events.
///
/// # Errors
/// `exposure` not finite and > 0, or `limit` not finite and >= 0.
pub fn rate_over_limit_p_value(events: u64, exposure: f64, limit: f64) -> Result<f64, StatsError> {
    let exposure = check_positive("exposure", exposure)?;
    let limit = crate::error::check_non_negative("limit", limit)?;
    if events == 0 {
        return Ok(1.0);
    }
    if limit == 0.0 {
        return Ok(0.0);
    }
    Ok(Gamma::new(events as f64, 1.0).map_or(f64::NAN, |g| g.cdf(limit * exposure)))
}

/// Exposure at which a rate observed at `rate` would be told apart from `limit` at one-sided
/// `confidence`, if events keep arriving at that rate: the `T` at which the Garwood bound of
/// the expected count `rate·T` reaches `limit` — the upper bound `χ²_c(2rT+2)/(2T)` when
/// `rate < limit`, the lower bound `χ²_{1−c}(2rT)/(2T)` when `rate > limit`. The count is
/// treated as continuous (the Gamma form of the χ² quantile), a projection rather than a
/// promise. For `rate = 0` it is the closed form `−ln(1 − c)/limit` of
/// [`exposure_for_rate_claim`] with no event (2.996/limit at 95 %). `None` when `rate`
/// equals `limit` (no exposure separates them) or no exposure up to 2⁶⁰ times the starting
/// guess does.
///
/// # Errors
/// `limit` not finite and > 0, `rate` not finite and >= 0, or `confidence` not in (0.5, 1).
///
/// ```
/// // No false alarm, budget 2/h: −ln(0.05)/2 = 1.498 h of noise-only time.
/// let t = echobench_stats::exposure_to_resolve_rate(0.0, 2.0, 0.95).unwrap().unwrap();
/// assert!((t - 1.4979).abs() < 1e-4);
/// ```
pub fn exposure_to_resolve_rate(
    rate: f64,
    limit: f64,
    confidence: f64,
) -> Result<Option<f64>, StatsError> {
    let rate = crate::error::check_non_negative("rate", rate)?;
    let limit = check_positive("limit", limit)?;
    let confidence = check_confidence(confidence)?;
    if confidence <= 0.5 {
        return Err(StatsError::InvalidArgument {
            name: "confidence",
            value: confidence,
            expected: "a one-sided level above 0.5, e.g. 0.95",
        });
    }
    if rate == limit {
        return Ok(None);
    }
    if rate == 0.0 {
        return exposure_for_rate_claim(limit, 0, confidence).map(Some);
    }
    // `excess(T)` is the signed distance of the bound from the limit, in expected events;
    // it changes sign once, from "bound on the limit's side" to "bound past the limit".
    let excess = |t: f64| -> f64 {
        if rate < limit {
            limit * t - unit_gamma_quantile(rate * t + 1.0, confidence)
        } else {
            unit_gamma_quantile(rate * t, 1.0 - confidence) - limit * t
        }
    };
    // Start from the exposure that holds one expected event or that a zero count needs,
    // then widen the bracket by doubling and halving.
    let guess = (1.0 / rate).max(-(1.0 - confidence).ln() / limit);
    let (mut low, mut high) = (guess, guess);
    for _ in 0..60 {
        if excess(low) < 0.0 {
            break;
        }
        low /= 2.0;
    }
    for _ in 0..60 {
        if excess(high) >= 0.0 {
            break;
        }
        high *= 2.0;
    }
    if excess(low) >= 0.0 || excess(high) < 0.0 {
        return Ok(None);
    }
    // Bisection to a relative width of 1e-12: the quantile has no closed-form inverse in T.
    while (high - low) > 1e-12 * high {
        let mid = 0.5 * (low + high);
        if excess(mid) >= 0.0 {
            high = mid;
        } else {
            low = mid;
        }
    }
    Ok(Some(high))
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::distribution::{DiscreteCDF, Poisson};

    #[test]
    fn garwood_ends_solve_the_poisson_tail_equations() {
        // Garwood (1936): P(X >= k | μ_low) = α/2 and P(X <= k | μ_high) = α/2.
        for k in [1u64, 2, 5, 40, 300] {
            let ci = garwood_interval(k, 1.0, 0.95).unwrap_or(Interval {
                low: f64::NAN,
                high: f64::NAN,
            });
            let at_low = Poisson::new(ci.low)
                .map(|p| p.sf(k - 1))
                .unwrap_or(f64::NAN);
            let at_high = Poisson::new(ci.high).map(|p| p.cdf(k)).unwrap_or(f64::NAN);
            assert!((at_low - 0.025).abs() < 1e-9, "k={k}: {at_low}");
            assert!((at_high - 0.025).abs() < 1e-9, "k={k}: {at_high}");
        }
    }

    #[test]
    fn one_sided_lower_bound_solves_its_tail_equation() {
        // Garwood (1936), one-sided: P(X >= k | μ_low) = 1 − c.
        for (k, c) in [(1u64, 0.95), (3, 0.95), (10, 0.99), (250, 0.9)] {
            let low = garwood_lower_bound(k, 2.0, c).unwrap_or(f64::NAN);
            let tail = Poisson::new(low * 2.0)
                .map(|p| p.sf(k - 1))
                .unwrap_or(f64::NAN);
            assert!((tail - (1.0 - c)).abs() < 1e-9, "k={k}: {tail}");
        }
        assert_eq!(garwood_lower_bound(0, 2.0, 0.95).ok(), Some(0.0));
    }

    #[test]
    fn over_limit_p_value_is_the_poisson_upper_tail_and_matches_the_bound() {
        for (k, t, limit) in [(1u64, 1.0, 0.5), (4, 1.03, 2.0), (30, 2.5, 8.0)] {
            let p = rate_over_limit_p_value(k, t, limit).unwrap_or(f64::NAN);
            let tail = Poisson::new(limit * t)
                .map(|d| d.sf(k - 1))
                .unwrap_or(f64::NAN);
            assert!((p - tail).abs() < 1e-12, "k={k}: {p} vs {tail}");
            // p < 1 − c exactly when the one-sided lower bound at c is over the limit.
            for c in [0.9, 0.95, 0.99] {
                let low = garwood_lower_bound(k, t, c).unwrap_or(f64::NAN);
                assert_eq!(p < 1.0 - c, low > limit, "k={k} c={c}");
            }
        }
        assert_eq!(rate_over_limit_p_value(0, 1.0, 2.0).ok(), Some(1.0));
    }

    #[test]
    fn resolving_exposure_puts_the_projected_bound_on_the_limit() {
        // Zero events: −ln(1 − c)/limit, the closed form of the zero-count Garwood bound.
        let t0 = exposure_to_resolve_rate(0.0, 2.0, 0.95).ok().flatten();
        assert!((t0.unwrap_or(f64::NAN) - 0.05f64.ln().abs() / 2.0).abs() < 1e-12);
        for (rate, limit) in [(0.5, 2.0), (1.9, 2.0), (3.0, 2.0), (40.0, 2.0), (2.1, 2.0)] {
            let t = exposure_to_resolve_rate(rate, limit, 0.95)
                .ok()
                .flatten()
                .unwrap_or(f64::NAN);
            let bound = if rate < limit {
                unit_gamma_quantile(rate * t + 1.0, 0.95) / t
            } else {
                unit_gamma_quantile(rate * t, 0.05) / t
            };
            assert!(
                (bound - limit).abs() < 1e-6 * limit,
                "{rate}: T={t} bound={bound}"
            );
            // Half that exposure does not resolve it: the bound still straddles the limit.
            let half = t / 2.0;
            let straddles = if rate < limit {
                unit_gamma_quantile(rate * half + 1.0, 0.95) / half > limit
            } else {
                unit_gamma_quantile(rate * half, 0.05) / half < limit
            };
            assert!(straddles, "{rate}");
        }
        assert_eq!(exposure_to_resolve_rate(2.0, 2.0, 0.95).ok(), Some(None));
        assert!(exposure_to_resolve_rate(1.0, 2.0, 0.4).is_err());
    }

    #[test]
    fn bad_exposure_or_confidence_is_an_error() {
        assert!(garwood_interval(1, 0.0, 0.95).is_err());
        assert!(garwood_interval(1, f64::NAN, 0.95).is_err());
        assert!(garwood_interval(1, 1.0, 0.0).is_err());
        assert!(garwood_upper_bound(1, -1.0, 0.95).is_err());
        assert!(garwood_upper_bound(1, f64::INFINITY, 0.95).is_err());
        assert!(exposure_for_rate_claim(0.0, 0, 0.95).is_err());
        assert!(exposure_for_rate_claim(0.1, 0, 1.5).is_err());
    }
}
