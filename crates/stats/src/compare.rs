//! Did a change make things worse? Exact tests comparing a candidate build with a baseline
//! (`docs/reference/statistics.md#s8`): false-alarm rates per hour, per-trial proportions, paired
//! trials on common random numbers, the multiple-testing correction across gated scenarios, and the
//! power of the rate test for sizing the noise-only exposure.
//!
//! All tests are one-sided in the direction "candidate is worse" unless stated, and exact:
//! their size never exceeds the nominal level, so a gate built on them flakes at most at α.

use statrs::distribution::{Binomial, Discrete, DiscreteCDF, Hypergeometric, Poisson};

use crate::error::{
    check_alpha, check_confidence, check_count, check_non_negative, check_positive, StatsError,
};
use crate::proportion::cp_lower;

/// A count of events (false alarms) observed over an exposure (noise-only time).
///
/// The exposure unit is the caller's; echobench uses hours, so rates are per hour.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EventCount {
    /// Number of events observed.
    pub events: u64,
    /// Exposure over which they were observed (> 0).
    pub exposure: f64,
}

impl EventCount {
    /// Observed rate `events / exposure` (NaN or ∞ if the exposure is not positive).
    pub fn rate(&self) -> f64 {
        self.events as f64 / self.exposure
    }
}

/// Result of the exact conditional test of two Poisson rates ([`rate_ratio_test`]).
///
/// Report all fields: counts and exposures alone let a reader redo the test, and the
/// ratio with its bound says how large a regression is, not only whether there is one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateTest {
    /// One-sided p-value of `H0: λ_c/λ_b <= ratio_margin` against `λ_c/λ_b > ratio_margin`.
    pub p_value: f64,
    /// Point estimate of the rate ratio `(k_c/T_c)/(k_b/T_b)`; +∞ when the baseline has no
    /// events and the candidate has some, NaN when neither has any.
    pub ratio: f64,
    /// One-sided lower confidence bound on `λ_c/λ_b` at the requested confidence; 0 when the
    /// candidate has no events. The test rejects at `α = 1 − confidence` exactly when this
    /// bound exceeds `ratio_margin` (the exact test and the Clopper–Pearson bound are dual).
    pub lower_bound: f64,
    /// The null ratio ρ₀ tested against (1 = "no increase", 1.25 = "more than 25 % worse").
    pub ratio_margin: f64,
    /// Probability that an event belongs to the candidate under H0,
    /// `p₀ = ρ₀T_c/(ρ₀T_c + T_b)`.
    pub null_proportion: f64,
}

/// Exact conditional test that the candidate's event rate exceeds the baseline's by more
/// than a factor `ratio_margin` (Przyborowski & Wilenski 1940; Gu et al. 2008).
///
/// Given the total `n = k_b + k_c`, under `λ_c/λ_b = ρ₀` the candidate's count is
/// `Bin(n, p₀)` with `p₀ = ρ₀T_c/(ρ₀T_c + T_b)`; the one-sided p-value is
/// `P(X >= k_c) = binom.sf(k_c − 1, n, p₀)` (statsmodels `test_poisson_2indep(…,
/// method='exact-cond', alternative='larger')`). The ratio's lower bound comes from the
/// Clopper–Pearson lower bound `p_L` on that binomial proportion,
/// `ρ_L = p_L/(1 − p_L) · T_b/T_c`.
///
/// # Errors
/// Exposures not finite and > 0, `ratio_margin` not finite and > 0, `confidence` not in
/// (0, 1), or a total count beyond `u64`.
///
/// ```
/// use echobench_stats::{rate_ratio_test, EventCount};
/// // 40 false alarms in 100 h after the change, 20 in 100 h before.
/// let candidate = EventCount { events: 40, exposure: 100.0 };
/// let baseline = EventCount { events: 20, exposure: 100.0 };
/// let test = rate_ratio_test(candidate, baseline, 1.25, 0.95).unwrap();
/// assert!(test.p_value > 0.05 && test.lower_bound < 1.25); // not proven 25 % worse
/// ```
pub fn rate_ratio_test(
    candidate: EventCount,
    baseline: EventCount,
    ratio_margin: f64,
    confidence: f64,
) -> Result<RateTest, StatsError> {
    let candidate_exposure = check_positive("candidate.exposure", candidate.exposure)?;
    let baseline_exposure = check_positive("baseline.exposure", baseline.exposure)?;
    let ratio_margin = check_positive("ratio_margin", ratio_margin)?;
    let alpha = 1.0 - check_confidence(confidence)?;
    let total =
        candidate
            .events
            .checked_add(baseline.events)
            .ok_or(StatsError::InvalidArgument {
                name: "candidate.events + baseline.events",
                value: f64::INFINITY,
                expected: "a total that fits in u64",
            })?;
    let scaled_candidate = ratio_margin * candidate_exposure;
    let null_proportion = scaled_candidate / (scaled_candidate + baseline_exposure);
    let p_value = conditional_p_value(candidate.events, total, null_proportion);
    // (k_c·T_b)/(k_b·T_c) rather than a quotient of rates: equal exposures then give the
    // count ratio exactly.
    let ratio = (candidate.events as f64 * baseline_exposure)
        / (baseline.events as f64 * candidate_exposure);
    let lower_bound = if candidate.events == 0 {
        0.0
    } else {
        let p_low = cp_lower(candidate.events, total, alpha);
        p_low / (1.0 - p_low) * baseline_exposure / candidate_exposure
    };
    Ok(RateTest {
        p_value,
        ratio,
        lower_bound,
        ratio_margin,
        null_proportion,
    })
}

/// `P(X >= k)` for `X ~ Bin(n, p)`, the upper-tail p-value; 1 for `k = 0`.
fn conditional_p_value(k: u64, n: u64, p: f64) -> f64 {
    if k == 0 {
        return 1.0;
    }
    match Binomial::new(p, n) {
        Ok(binomial) => binomial.sf(k - 1),
        Err(_) => f64::NAN,
    }
}

/// Result of the exact McNemar test on paired trials ([`mcnemar_exact`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairedTest {
    /// One-sided p-value that the candidate alarms more often than the baseline:
    /// `P(X >= c)`, `X ~ Bin(b + c, ½)`.
    pub one_sided_p: f64,
    /// Two-sided p-value `min(1, 2·P(X <= min(b, c)))`, as statsmodels' `mcnemar(exact=True)`.
    pub two_sided_p: f64,
}

/// Exact McNemar test for paired runs on the same seeds ("common random numbers"):
/// `baseline_only` = trials where only the baseline alarmed (b), `candidate_only` = trials
/// where only the candidate did (c). Concordant trials carry no information. Under H0 each
/// discordant trial is equally likely to go either way, so `c ~ Bin(b + c, ½)`
/// (McNemar 1947; the exact binomial form is the sign test). With no discordant trials both
/// p-values are 1.
///
/// ```
/// let t = echobench_stats::mcnemar_exact(2, 9);
/// assert!((t.one_sided_p - 67.0 / 2048.0).abs() < 1e-12); // (1 + 11 + 55)/2^11
/// ```
pub fn mcnemar_exact(baseline_only: u64, candidate_only: u64) -> PairedTest {
    // Counts of trials cannot realistically overflow; saturating keeps this panic-free.
    let discordant = baseline_only.saturating_add(candidate_only);
    let one_sided_p = conditional_p_value(candidate_only, discordant, 0.5);
    let two_sided_p = match Binomial::new(0.5, discordant) {
        Ok(binomial) => (2.0 * binomial.cdf(baseline_only.min(candidate_only))).min(1.0),
        Err(_) => f64::NAN,
    };
    PairedTest {
        one_sided_p,
        two_sided_p,
    }
}

/// Checks a list of p-values.
fn check_p_values(p_values: &[f64]) -> Result<(), StatsError> {
    match p_values.iter().find(|p| !(0.0..=1.0).contains(*p)) {
        Some(&bad) => Err(StatsError::InvalidArgument {
            name: "p_values",
            value: bad,
            expected: "probabilities in [0, 1]",
        }),
        None => Ok(()),
    }
}

/// Holm (1979) step-down adjusted p-values, in the input order. With the p-values sorted
/// ascending, `p̃_(i) = max_{j<=i} min(1, (m − j + 1)·p_(j))`; hypothesis i is rejected at
/// family-wise error rate α exactly when `p̃_i <= α`. Uniformly more powerful than
/// Bonferroni and valid under any dependence between the tests.
///
/// # Errors
/// A p-value outside `[0, 1]` or NaN. An empty list gives an empty result.
pub fn holm_adjust(p_values: &[f64]) -> Result<Vec<f64>, StatsError> {
    check_p_values(p_values)?;
    let m = p_values.len();
    let mut order: Vec<usize> = (0..m).collect();
    order.sort_by(|&a, &b| p_values[a].total_cmp(&p_values[b]));
    let mut adjusted = vec![0.0; m];
    let mut running_max: f64 = 0.0;
    for (rank, &index) in order.iter().enumerate() {
        let scaled = ((m - rank) as f64 * p_values[index]).min(1.0);
        running_max = running_max.max(scaled);
        adjusted[index] = running_max;
    }
    Ok(adjusted)
}

/// Holm (1979) rejections at family-wise error rate `alpha`, in the input order:
/// `holm_adjust(p)[i] <= alpha`.
///
/// # Errors
/// A p-value outside `[0, 1]`, or `alpha` not in (0, 1).
pub fn holm_reject(p_values: &[f64], alpha: f64) -> Result<Vec<bool>, StatsError> {
    let alpha = check_alpha(alpha)?;
    Ok(holm_adjust(p_values)?
        .into_iter()
        .map(|p| p <= alpha)
        .collect())
}

/// Fisher's exact test, one-sided, that the candidate's per-trial proportion exceeds the
/// baseline's (Fisher 1935). Conditioning on both margins of the 2×2 table, the candidate's
/// count is hypergeometric: `X ~ Hypergeom(N = n_c + n_b, K = k_c + k_b, draws = n_c)`, and
/// the p-value is `P(X >= k_c)` (scipy `fisher_exact(…, alternative='greater')`).
///
/// # Errors
/// A count above its trials, or a total beyond `u64`.
pub fn fisher_exact_greater(
    candidate_events: u64,
    candidate_trials: u64,
    baseline_events: u64,
    baseline_trials: u64,
) -> Result<f64, StatsError> {
    check_count("candidate_events", candidate_events, candidate_trials)?;
    check_count("baseline_events", baseline_events, baseline_trials)?;
    let overflow = StatsError::InvalidArgument {
        name: "candidate_trials + baseline_trials",
        value: f64::INFINITY,
        expected: "a total that fits in u64",
    };
    let population = candidate_trials
        .checked_add(baseline_trials)
        .ok_or(overflow.clone())?;
    let events = candidate_events + baseline_events; // <= population, cannot overflow
    if candidate_events == 0 {
        return Ok(1.0);
    }
    let table = Hypergeometric::new(population, events, candidate_trials).map_err(|_| overflow)?;
    Ok(table.sf(candidate_events - 1).min(1.0))
}

/// Largest expected total count [`rate_ratio_test_power`] accepts.
const MAX_POWER_EXPECTED_EVENTS: f64 = 1e8;

/// Design of a rate-regression gate, for [`rate_ratio_test_power`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RatePowerDesign {
    /// True baseline event rate (events per unit exposure, >= 0).
    pub baseline_rate: f64,
    /// True candidate event rate (>= 0).
    pub candidate_rate: f64,
    /// Baseline exposure (> 0).
    pub baseline_exposure: f64,
    /// Candidate exposure (> 0).
    pub candidate_exposure: f64,
    /// Null ratio ρ₀ of the test (> 0).
    pub ratio_margin: f64,
    /// One-sided significance level α of the test.
    pub alpha: f64,
}

/// Probability that [`rate_ratio_test`] rejects at level `alpha` when the true rates are
/// those of `design`: the power if the candidate is worse, the actual size if the ratio
/// equals the margin.
///
/// Computed exactly, not simulated: the total `n` is `Poisson(μ = λ_bT_b + λ_cT_c)` and,
/// given `n`, the candidate's count is `Bin(n, π₁ = λ_cT_c/μ)`; so
/// `power = Σ_n Poisson(n; μ) · P(Bin(n, π₁) >= x*(n))` with `x*(n)` the smallest count whose
/// p-value is `<= α`. The sum runs over `μ ± 40√μ + 60`, beyond which the Poisson mass is
/// below double precision; cost O(√μ).
///
/// # Errors
/// Negative or non-finite rates, exposures or margin not finite and > 0, `alpha` not in
/// (0, 1), or an expected total count `μ` above 1e8.
pub fn rate_ratio_test_power(design: &RatePowerDesign) -> Result<f64, StatsError> {
    let baseline_rate = check_non_negative("baseline_rate", design.baseline_rate)?;
    let candidate_rate = check_non_negative("candidate_rate", design.candidate_rate)?;
    let baseline_exposure = check_positive("baseline_exposure", design.baseline_exposure)?;
    let candidate_exposure = check_positive("candidate_exposure", design.candidate_exposure)?;
    let ratio_margin = check_positive("ratio_margin", design.ratio_margin)?;
    let alpha = check_alpha(design.alpha)?;

    let baseline_mean = baseline_rate * baseline_exposure;
    let candidate_mean = candidate_rate * candidate_exposure;
    let total_mean = baseline_mean + candidate_mean;
    // The sum costs O(√μ) binomial tails; beyond 1e8 expected events it would take minutes,
    // and no false-alarm gate needs counts that large.
    if total_mean.is_nan() || total_mean > MAX_POWER_EXPECTED_EVENTS {
        return Err(StatsError::InvalidArgument {
            name: "rate × exposure",
            value: total_mean,
            expected: "an expected total event count of at most 1e8",
        });
    }
    let Ok(total_dist) = Poisson::new(total_mean) else {
        // μ = 0: no events ever, the p-value is always 1, the test never rejects.
        return Ok(0.0);
    };
    let candidate_share = candidate_mean / total_mean;
    let scaled_candidate = ratio_margin * candidate_exposure;
    let null_proportion = scaled_candidate / (scaled_candidate + baseline_exposure);
    let rejects = |x: u64, n: u64| conditional_p_value(x, n, null_proportion) <= alpha;

    let spread = 40.0 * total_mean.sqrt() + 60.0;
    let n_first = (total_mean - spread).max(0.0).floor() as u64;
    let n_last = (total_mean + spread).ceil() as u64;

    // x*(n) = smallest x in 1..=n+1 that rejects (n+1: none does). The p-value falls with
    // x and rises with n, so x*(n) never decreases with n: find it once by bisection, then
    // step it forward.
    let mut critical = {
        let (mut low, mut high) = (1u64, n_first + 1);
        while low < high {
            let mid = low + (high - low) / 2;
            if rejects(mid, n_first) {
                high = mid;
            } else {
                low = mid + 1;
            }
        }
        low
    };
    let mut power = 0.0;
    for n in n_first..=n_last {
        while critical <= n && !rejects(critical, n) {
            critical += 1;
        }
        if critical <= n {
            let share_tail = Binomial::new(candidate_share, n)
                .map(|b| b.sf(critical - 1))
                .unwrap_or(0.0);
            power += total_dist.pmf(n) * share_tail;
        }
    }
    Ok(power.clamp(0.0, 1.0))
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;

    /// The slow, obvious power: sum over both independent Poisson counts, run the test on
    /// each outcome. Shares no code with the conditional decomposition except the test.
    fn power_by_double_sum(design: &RatePowerDesign) -> f64 {
        let mean_b = design.baseline_rate * design.baseline_exposure;
        let mean_c = design.candidate_rate * design.candidate_exposure;
        let (Ok(pois_b), Ok(pois_c)) = (Poisson::new(mean_b), Poisson::new(mean_c)) else {
            return f64::NAN;
        };
        let upper = |m: f64| (m + 15.0 * m.sqrt() + 30.0) as u64;
        let mut power = 0.0;
        for kb in 0..=upper(mean_b) {
            for kc in 0..=upper(mean_c) {
                let test = rate_ratio_test(
                    EventCount {
                        events: kc,
                        exposure: design.candidate_exposure,
                    },
                    EventCount {
                        events: kb,
                        exposure: design.baseline_exposure,
                    },
                    design.ratio_margin,
                    1.0 - design.alpha,
                );
                if test.map(|t| t.p_value <= design.alpha).unwrap_or(false) {
                    power += pois_b.pmf(kb) * pois_c.pmf(kc);
                }
            }
        }
        power
    }

    #[test]
    fn power_matches_the_double_sum_over_outcomes() {
        for (rb, rc, tb, tc, margin, alpha) in [
            (1.0, 2.0, 10.0, 10.0, 1.0, 0.01),
            (0.5, 1.5, 20.0, 8.0, 1.25, 0.05),
            (2.0, 2.0, 5.0, 15.0, 1.0, 0.1),
            (0.3, 0.0, 10.0, 10.0, 1.0, 0.05),
        ] {
            let design = RatePowerDesign {
                baseline_rate: rb,
                candidate_rate: rc,
                baseline_exposure: tb,
                candidate_exposure: tc,
                ratio_margin: margin,
                alpha,
            };
            let fast = rate_ratio_test_power(&design).unwrap_or(f64::NAN);
            let slow = if rc == 0.0 {
                0.0
            } else {
                power_by_double_sum(&design)
            };
            assert!((fast - slow).abs() < 1e-10, "{design:?}: {fast} vs {slow}");
        }
    }

    #[test]
    fn lower_bound_and_test_are_dual() {
        // Exact test and Clopper–Pearson bound invert each other (Clopper & Pearson 1934):
        // at the margin equal to the bound the p-value is exactly α.
        for (kc, kb, tc, tb) in [
            (40u64, 20u64, 100.0, 100.0),
            (7, 1, 30.0, 50.0),
            (3, 0, 1.0, 2.0),
        ] {
            let c = EventCount {
                events: kc,
                exposure: tc,
            };
            let b = EventCount {
                events: kb,
                exposure: tb,
            };
            let bound = rate_ratio_test(c, b, 1.0, 0.95)
                .map(|t| t.lower_bound)
                .unwrap_or(f64::NAN);
            let at_bound = rate_ratio_test(c, b, bound, 0.95)
                .map(|t| t.p_value)
                .unwrap_or(f64::NAN);
            assert!((at_bound - 0.05).abs() < 1e-9, "{kc} vs {kb}: {at_bound}");
        }
    }

    #[test]
    fn edge_counts_do_not_panic() {
        let none = EventCount {
            events: 0,
            exposure: 10.0,
        };
        let some = EventCount {
            events: 3,
            exposure: 10.0,
        };
        let t = rate_ratio_test(none, none, 1.0, 0.95).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((t.p_value, t.lower_bound), (1.0, 0.0));
        assert!(t.ratio.is_nan());
        let t = rate_ratio_test(some, none, 1.0, 0.95).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(t.ratio, f64::INFINITY);
        assert!((t.p_value - 0.125).abs() < 1e-12); // (½)^3: all 3 events fell to the candidate
        assert!(t.lower_bound > 0.0 && t.lower_bound.is_finite());
        let t = rate_ratio_test(none, some, 1.0, 0.95).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((t.p_value, t.ratio, t.lower_bound), (1.0, 0.0, 0.0));
        assert!(rate_ratio_test(
            some,
            EventCount {
                events: 1,
                exposure: 0.0
            },
            1.0,
            0.95
        )
        .is_err());
        assert!(rate_ratio_test(some, some, 0.0, 0.95).is_err());
        assert!(rate_ratio_test(
            EventCount {
                events: u64::MAX,
                exposure: 1.0
            },
            some,
            1.0,
            0.95
        )
        .is_err());
        assert_eq!(
            mcnemar_exact(0, 0),
            PairedTest {
                one_sided_p: 1.0,
                two_sided_p: 1.0
            }
        );
        assert_eq!(mcnemar_exact(5, 0).one_sided_p, 1.0);
        assert_eq!(fisher_exact_greater(0, 10, 3, 10), Ok(1.0));
        assert!(fisher_exact_greater(11, 10, 3, 10).is_err());
        assert!(fisher_exact_greater(1, u64::MAX, 0, 1).is_err());
        let zero = RatePowerDesign {
            baseline_rate: 0.0,
            candidate_rate: 0.0,
            baseline_exposure: 1.0,
            candidate_exposure: 1.0,
            ratio_margin: 1.0,
            alpha: 0.05,
        };
        assert_eq!(rate_ratio_test_power(&zero), Ok(0.0));
        assert!(rate_ratio_test_power(&RatePowerDesign { alpha: 0.0, ..zero }).is_err());
        assert!(rate_ratio_test_power(&RatePowerDesign {
            baseline_rate: -1.0,
            ..zero
        })
        .is_err());
        assert!(rate_ratio_test_power(&RatePowerDesign {
            baseline_rate: f64::MAX,
            baseline_exposure: 10.0,
            ..zero
        })
        .is_err());
    }

    #[test]
    fn holm_matches_the_step_down_procedure() {
        // Holm (1979): sort ascending; reject H_(1), H_(2), … while p_(i) <= α/(m − i + 1);
        // stop at the first failure. Compared on seeded random p-value lists.
        let mut rng = ChaCha8Rng::from_seed([3; 32]);
        let mut next = move || rng.random::<f64>();
        for m in 1..12 {
            for _ in 0..50 {
                let p: Vec<f64> = (0..m).map(|_| next() * next() * 0.2).collect();
                let alpha = 0.05;
                let mut order: Vec<usize> = (0..m).collect();
                order.sort_by(|&a, &b| p[a].total_cmp(&p[b]));
                let mut expected = vec![false; m];
                for (i, &index) in order.iter().enumerate() {
                    if p[index] <= alpha / (m - i) as f64 {
                        expected[index] = true;
                    } else {
                        break;
                    }
                }
                assert_eq!(holm_reject(&p, alpha), Ok(expected), "{p:?}");
            }
        }
        assert_eq!(holm_adjust(&[]), Ok(vec![]));
        assert!(holm_adjust(&[0.1, f64::NAN]).is_err());
        assert!(holm_adjust(&[1.5]).is_err());
        assert!(holm_reject(&[0.1], 1.0).is_err());
    }
}
