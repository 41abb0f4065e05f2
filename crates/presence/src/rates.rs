//! Rates with intervals, and latency quantiles with censored values.

use crate::{PresenceError, PresenceTally, Timer};
use echobench_stats::{garwood_interval, Interval};
use statrs::distribution::{ContinuousCDF, Gamma};

const NS_PER_HOUR: f64 = 3.6e12;
const NS_PER_DAY: f64 = 8.64e13;

/// A rate, its two-sided interval and what it was computed from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateEstimate {
    /// Point estimate.
    pub estimate: f64,
    /// Two-sided confidence interval.
    pub interval: Interval,
    /// The count (events, or ns of false-on time) in the numerator.
    pub count: u64,
    /// The exposure in the rate's unit (hours or days).
    pub exposure: f64,
}

/// Which occupied time a drop-out rate is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum OccupiedKind {
    /// All occupied time.
    All,
    /// Occupied and moving.
    Moving,
    /// Occupied and still.
    Still,
}

/// A quantile of a latency sample in which some values are censored (known only to exceed a
/// bound): censored values rank above every observed one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LatencyQuantile {
    /// No value at all (no entry, or no exit).
    NoValues,
    /// The quantile, seconds.
    Observed(f64),
    /// The quantile falls among the censored values: the output had not switched on (off)
    /// by then for that share of the entries (exits).
    NotReached,
}

/// Two-sided gamma interval for a weighted sum of independent Poisson counts, Fay & Feuer
/// (1997, Statistics in Medicine 16:791, eq. for the "gamma interval"): with `y = Σ wᵢ`
/// over the observed events, `v = Σ wᵢ²` and `w_M` the largest weight an event can carry,
/// the lower end is the `α/2` quantile of Gamma(shape `y²/v`, scale `v/y`) (0 when `y = 0`)
/// and the upper end the `1 − α/2` quantile of Gamma(shape `(y + w_M)²/(v + w_M²)`, scale
/// `(v + w_M²)/(y + w_M)`). With all weights equal to `w` it is exactly `w` times Garwood's
/// interval on the count. The interval is on the sum; divide by the exposure for a rate.
///
/// # Errors
/// `sum`, `sum_sq` or `max_weight` negative or not finite, `max_weight` 0, a positive `sum`
/// with a zero `sum_sq`, or `confidence` not in (0, 1).
///
/// ```
/// // One event of weight 1: shape 1 below (an exponential), shape 2 above.
/// let ci = echobench_presence::gamma_weighted_interval(1.0, 1.0, 1.0, 0.95).unwrap();
/// assert!((ci.low - 0.025318).abs() < 1e-6 && (ci.high - 5.571643).abs() < 1e-6);
/// ```
pub fn gamma_weighted_interval(
    sum: f64,
    sum_sq: f64,
    max_weight: f64,
    confidence: f64,
) -> Result<Interval, PresenceError> {
    let invalid = |name: &'static str, value: f64, allowed: &'static str| {
        Err(PresenceError::InvalidParameter {
            name,
            value,
            allowed,
        })
    };
    if !(sum.is_finite() && sum >= 0.0) {
        return invalid("sum", sum, "finite and >= 0");
    }
    if !(sum_sq.is_finite() && sum_sq >= 0.0) || (sum > 0.0 && sum_sq <= 0.0) {
        return invalid("sum_sq", sum_sq, "finite, >= 0, and > 0 when sum > 0");
    }
    if !(max_weight.is_finite() && max_weight > 0.0) {
        return invalid("max_weight", max_weight, "finite and > 0");
    }
    if !(confidence.is_finite() && confidence > 0.0 && confidence < 1.0) {
        return invalid("confidence", confidence, "strictly between 0 and 1");
    }
    let alpha = 1.0 - confidence;
    let gamma_quantile = |shape: f64, scale: f64, p: f64| -> f64 {
        Gamma::new(shape, 1.0).map_or(f64::NAN, |g| g.inverse_cdf(p)) * scale
    };
    let low = if sum > 0.0 {
        gamma_quantile(sum * sum / sum_sq, sum_sq / sum, alpha / 2.0)
    } else {
        0.0
    };
    let up_sum = sum + max_weight;
    let up_sq = sum_sq + max_weight * max_weight;
    let high = gamma_quantile(up_sum * up_sum / up_sq, up_sq / up_sum, 1.0 - alpha / 2.0);
    Ok(Interval { low, high })
}

fn garwood_rate(
    events: u64,
    exposure: f64,
    confidence: f64,
) -> Result<RateEstimate, PresenceError> {
    let interval = garwood_interval(events, exposure, confidence)?;
    Ok(RateEstimate {
        estimate: events as f64 / exposure,
        interval,
        count: events,
        exposure,
    })
}

/// A quantile level must lie in `[0, 1]`.
fn check_level(q: f64) -> Result<(), PresenceError> {
    if (0.0..=1.0).contains(&q) {
        Ok(())
    } else {
        Err(PresenceError::InvalidParameter {
            name: "q",
            value: q,
            allowed: "a quantile level in [0, 1]",
        })
    }
}

/// Type-7 quantile (Hyndman & Fan 1996, as `echobench_stats::quantile`) of a sample made of
/// `observed` (sorted) and `censored` values ranked above all of them.
fn censored_quantile(
    observed_ns: &[u64],
    censored: usize,
    q: f64,
) -> Result<LatencyQuantile, PresenceError> {
    check_level(q)?;
    let n = observed_ns.len() + censored;
    if n == 0 {
        return Ok(LatencyQuantile::NoValues);
    }
    let position = (n - 1) as f64 * q;
    let below = position.floor() as usize;
    let fraction = position - below as f64;
    let value = |i: usize| observed_ns.get(i).map(|&ns| ns as f64 / 1e9);
    Ok(match (value(below), fraction > 0.0) {
        (None, _) => LatencyQuantile::NotReached,
        (Some(x), false) => LatencyQuantile::Observed(x),
        (Some(x), true) => match value(below + 1) {
            Some(y) => LatencyQuantile::Observed(x + fraction * (y - x)),
            None => LatencyQuantile::NotReached,
        },
    })
}

/// Kaplan–Meier quantile of right-censored times (both lists sorted ascending, ns): the
/// survival estimate `S(t) = Π (1 − dᵢ/nᵢ)` over the distinct event times up to `t`, with `dᵢ`
/// events at time `tᵢ` and `nᵢ` times (events or censorings) at or after it, so a censoring
/// tied with an event counts as still at risk (the usual convention). The quantile is the
/// first event time with `1 − S ≥ q`.
fn kaplan_meier_quantile(
    events_ns: &[u64],
    censored_ns: &[u64],
    q: f64,
) -> Result<LatencyQuantile, PresenceError> {
    check_level(q)?;
    if events_ns.is_empty() && censored_ns.is_empty() {
        return Ok(LatencyQuantile::NoValues);
    }
    let mut at_risk = (events_ns.len() + censored_ns.len()) as f64;
    let mut survival = 1.0;
    let (mut e, mut c) = (0, 0);
    while e < events_ns.len() {
        let t = events_ns[e];
        // Censorings strictly before t leave the risk set first.
        while c < censored_ns.len() && censored_ns[c] < t {
            at_risk -= 1.0;
            c += 1;
        }
        let mut deaths = 0.0;
        while e < events_ns.len() && events_ns[e] == t {
            deaths += 1.0;
            e += 1;
        }
        survival *= 1.0 - deaths / at_risk;
        at_risk -= deaths;
        // A small allowance for the rounding of the product.
        if 1.0 - survival >= q - 1e-12 {
            return Ok(LatencyQuantile::Observed(t as f64 / 1e9));
        }
    }
    Ok(LatencyQuantile::NotReached)
}

impl PresenceTally {
    /// False switch-ons per day of empty time, with the exact Garwood interval (the count is
    /// Poisson-like over empty time).
    ///
    /// # Errors
    /// No empty time, or `confidence` not in (0, 1).
    pub fn false_switch_ons_per_day(&self, confidence: f64) -> Result<RateEstimate, PresenceError> {
        garwood_rate(
            self.false_switch_ons,
            self.empty_ns as f64 / NS_PER_DAY,
            confidence,
        )
    }

    /// Drop-outs per occupied hour (all, moving or still), with the exact Garwood interval.
    ///
    /// # Errors
    /// No occupied time of that kind, or `confidence` not in (0, 1).
    pub fn dropouts_per_occupied_h(
        &self,
        kind: OccupiedKind,
        confidence: f64,
    ) -> Result<RateEstimate, PresenceError> {
        let (events, exposure_ns) = match kind {
            OccupiedKind::All => (self.dropouts(), self.occupied_ns()),
            OccupiedKind::Moving => (self.dropouts_moving, self.moving_ns),
            OccupiedKind::Still => (self.dropouts_still, self.still_ns),
        };
        garwood_rate(events, exposure_ns as f64 / NS_PER_HOUR, confidence)
    }

    /// False-on time per day of empty time, seconds per day, with the gamma interval of
    /// [`gamma_weighted_interval`]: the false-on time is a sum of episodes arriving like a
    /// Poisson process over empty time, each weighing its length (a compound Poisson sum).
    /// The largest weight `w_M` is the longest episode seen or the timer's guaranteed on-time,
    /// whichever is longer (an episode's length is not known in advance; every false switch-on
    /// lasts at least the guaranteed on-time).
    ///
    /// # Errors
    /// No empty time, or `confidence` not in (0, 1).
    pub fn false_on_s_per_day(
        &self,
        timer: &Timer,
        confidence: f64,
    ) -> Result<RateEstimate, PresenceError> {
        let exposure_days = self.empty_ns as f64 / NS_PER_DAY;
        if self.empty_ns == 0 {
            return Err(PresenceError::InvalidParameter {
                name: "empty time",
                value: 0.0,
                allowed: "> 0",
            });
        }
        let max_weight =
            (self.longest_false_on_episode_ns as f64).max(timer.guaranteed_on_ns() as f64);
        let sum = gamma_weighted_interval(
            self.false_on_ns as f64,
            self.false_on_episode_sq_ns2 as f64,
            max_weight,
            confidence,
        )?;
        let per_day = |ns: f64| ns / 1e9 / exposure_days;
        Ok(RateEstimate {
            estimate: per_day(self.false_on_ns as f64),
            interval: Interval {
                low: per_day(sum.low),
                high: per_day(sum.high),
            },
            count: self.false_on_ns,
            exposure: exposure_days,
        })
    }

    /// Quantile `q` of the switch-on latency after entries (0.5 median, 0.9 p90); entries after
    /// which the output never came on rank above every observed latency.
    ///
    /// # Errors
    /// `q` outside `[0, 1]`.
    pub fn switch_on_latency_quantile(&self, q: f64) -> Result<LatencyQuantile, PresenceError> {
        censored_quantile(
            &self.switch_on_latency_ns,
            self.switch_on_censored_ns.len(),
            q,
        )
    }

    /// Quantile `q` of the time to switch off after exits; exits after which the output stayed
    /// on until the next entry or the trial's end rank above every observed time.
    ///
    /// # Errors
    /// `q` outside `[0, 1]`.
    pub fn switch_off_quantile(&self, q: f64) -> Result<LatencyQuantile, PresenceError> {
        censored_quantile(&self.switch_off_ns, self.switch_off_censored_ns.len(), q)
    }

    /// Quantile `q` of the time to switch off over the exits at which the output was on (an
    /// exit with the output already off has no switch-off to wait for; counting its 0 would
    /// make a detector that lost the person before they left look quick), by the
    /// Kaplan–Meier estimator (Kaplan & Meier 1958): an exit whose trial ended (or someone
    /// came back) with the output still on is right-censored at that time, and only says the
    /// switch-off came later than that. The quantile is the smallest time at which the
    /// estimated share switched off reaches `q` (Brookmeyer & Crowley 1982's convention);
    /// [`LatencyQuantile::NotReached`] when censoring leaves the estimate short of `q`.
    ///
    /// # Errors
    /// `q` outside `[0, 1]`.
    pub fn switch_off_quantile_when_on(&self, q: f64) -> Result<LatencyQuantile, PresenceError> {
        let first_on = self.switch_off_ns.partition_point(|&ns| ns == 0);
        kaplan_meier_quantile(
            &self.switch_off_ns[first_on..],
            &self.switch_off_censored_ns,
            q,
        )
    }

    /// Exits at which the output was already off (the person had been lost before leaving).
    pub fn exits_already_off(&self) -> u64 {
        self.switch_off_ns.partition_point(|&ns| ns == 0) as u64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn gamma_interval_against_tables_and_garwood() {
        // One event of weight 1: lower = Gamma(1) quantile at 0.025 = −ln(0.975) = 0.0253178;
        // upper = Gamma(2) quantile at 0.975 = χ²₀.₉₇₅(4)/2 = 11.1433/2 = 5.57164 (chi-square
        // table, e.g. the NIST/SEMATECH e-Handbook's chi-square table; section from memory).
        let one = gamma_weighted_interval(1.0, 1.0, 1.0, 0.95).unwrap();
        assert!((one.low - 0.975f64.ln().abs()).abs() < 1e-9);
        assert!((one.high - 5.571643).abs() < 1e-5);
        // Equal weights w: exactly w × Garwood (Fay & Feuer 1997, §2: exact when weights are
        // proportional). Two events of 2 ns each vs Garwood(2 events, exposure 1) × 2.
        let equal = gamma_weighted_interval(4.0, 8.0, 2.0, 0.95).unwrap();
        let garwood = garwood_interval(2, 1.0, 0.95).unwrap();
        assert!((equal.low - 2.0 * garwood.low).abs() < 1e-9);
        assert!((equal.high - 2.0 * garwood.high).abs() < 1e-9);
        // Unequal weights {1, 3}: y = 4, v = 10, w_M = 3: lower Gamma(1.6, scale 2.5) at
        // 0.025, upper Gamma(49/19, scale 19/7) at 0.975. Reference computed with mpmath 1.3
        // (regularised incomplete gamma, bisection to 30 digits): 0.327645, 17.767724.
        let unequal = gamma_weighted_interval(4.0, 10.0, 3.0, 0.95).unwrap();
        assert!((unequal.low - 0.327645).abs() < 1e-5, "{unequal:?}");
        assert!((unequal.high - 17.767724).abs() < 1e-4, "{unequal:?}");
        // Nothing seen: [0, w_M·(−ln 0.025)] = [0, 3.68888·w_M].
        let none = gamma_weighted_interval(0.0, 0.0, 2.0, 0.95).unwrap();
        assert_eq!(none.low, 0.0);
        assert!((none.high - 2.0 * 0.025f64.ln().abs()).abs() < 1e-9);
        assert!(gamma_weighted_interval(1.0, 0.0, 1.0, 0.95).is_err());
        assert!(gamma_weighted_interval(1.0, 1.0, 0.0, 0.95).is_err());
    }

    #[test]
    fn censored_values_rank_last() {
        // Observed 1, 2, 3, 4 s and one censored: n = 5. Median: position 2 -> 3 s.
        // p90: position 3.6 -> between the 4th (4 s) and the 5th (censored): not reached.
        // p70: position 2.8 -> 3 + 0.8·(4 − 3) = 3.8 s.
        let tally = PresenceTally {
            switch_on_latency_ns: vec![1_000_000_000, 2_000_000_000, 3_000_000_000, 4_000_000_000],
            switch_on_censored_ns: vec![9_000_000_000],
            ..PresenceTally::default()
        };
        assert_eq!(
            tally.switch_on_latency_quantile(0.5).unwrap(),
            LatencyQuantile::Observed(3.0)
        );
        assert_eq!(
            tally.switch_on_latency_quantile(0.9).unwrap(),
            LatencyQuantile::NotReached
        );
        match tally.switch_on_latency_quantile(0.7).unwrap() {
            LatencyQuantile::Observed(x) => assert!((x - 3.8).abs() < 1e-12),
            other => panic!("{other:?}"),
        }
        // Without censoring it is echobench_stats::quantile (type 7).
        let plain = PresenceTally {
            switch_on_censored_ns: Vec::new(),
            ..tally.clone()
        };
        let expected = echobench_stats::quantile(&[1.0, 2.0, 3.0, 4.0], 0.9).unwrap();
        assert_eq!(
            plain.switch_on_latency_quantile(0.9).unwrap(),
            LatencyQuantile::Observed(expected)
        );
        assert_eq!(
            PresenceTally::default().switch_off_quantile(0.5).unwrap(),
            LatencyQuantile::NoValues
        );
    }
}
