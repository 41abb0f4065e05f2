//! The M-of-N alarm statistic: the M-th largest of the last N scores.
//!
//! An M-of-N alarm at threshold θ holds at a frame when at least M of the last N
//! frame decisions `score >= θ` are true, which is the same as "the M-th largest of
//! the last N scores is ≥ θ". Computing that order statistic once per frame turns
//! the condition at *every* threshold into one comparison, which is what lets the
//! intrusion scorer and the presence scorer evaluate a whole threshold grid in one
//! pass. Both use this one implementation, so the two kinds of product agree on
//! what "the condition holds" means.

use std::cmp::Ordering;

/// Orders scores with NaN below everything, `-inf` included: a NaN frame is a
/// false decision at every threshold.
pub fn nan_lowest(a: f64, b: f64) -> Ordering {
    match (a.is_nan(), b.is_nan()) {
        (true, true) => Ordering::Equal,
        (true, false) => Ordering::Less,
        (false, true) => Ordering::Greater,
        (false, false) => a.total_cmp(&b),
    }
}

/// Sliding M-th largest of the last N scores; NaN while fewer than M frames have a
/// number (then the condition is false at every threshold). Frames before the first
/// count as false decisions, as the scorers define.
///
/// ```
/// use echobench_core::alarm_statistic::MOfNStatistic;
/// let mut s = MOfNStatistic::new(2, 3);
/// assert!(s.push(5.0).is_nan()); // one frame: no second-largest yet
/// assert_eq!(s.push(1.0), 1.0);
/// assert_eq!(s.push(3.0), 3.0);
/// assert_eq!(s.push(0.0), 1.0); // window [1, 3, 0]
/// ```
#[derive(Debug, Clone)]
pub struct MOfNStatistic {
    m: usize,
    n: usize,
    recent: Vec<f64>,
    next_slot: usize,
    sorted: Vec<f64>,
}

impl MOfNStatistic {
    /// A statistic for M of N. The caller validates `1 <= m <= n`; an `m` above `n`
    /// gives NaN for ever (the condition never holds), `n = 0` is taken as 1.
    pub fn new(m: usize, n: usize) -> Self {
        let n = n.max(1);
        MOfNStatistic {
            m,
            n,
            recent: Vec::with_capacity(n),
            next_slot: 0,
            sorted: Vec::with_capacity(n),
        }
    }

    /// Feeds the next score and returns the statistic after it.
    pub fn push(&mut self, value: f64) -> f64 {
        if self.n == 1 && self.m == 1 {
            return value;
        }
        if self.recent.len() < self.n {
            self.recent.push(value);
        } else {
            let leaving = std::mem::replace(&mut self.recent[self.next_slot], value);
            if let Ok(at) = self
                .sorted
                .binary_search_by(|probe| nan_lowest(*probe, leaving))
            {
                self.sorted.remove(at);
            }
        }
        self.next_slot = (self.next_slot + 1) % self.n;
        let at = self
            .sorted
            .partition_point(|probe| nan_lowest(*probe, value) == Ordering::Less);
        self.sorted.insert(at, value);
        match self.sorted.len().checked_sub(self.m) {
            Some(index) => self.sorted[index],
            None => f64::NAN,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The statistic against the plain count of decisions, on a fixed pseudo-random
    /// sequence with NaNs, at several thresholds and rules.
    #[test]
    fn statistic_reaches_a_threshold_exactly_when_m_of_n_decisions_do() {
        let mut x = 0x2545_f491_4f6c_dd1du64;
        let mut next = || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        let values: Vec<f64> = (0..400)
            .map(|_| {
                let r = next();
                if r % 17 == 0 {
                    f64::NAN
                } else {
                    (r % 1000) as f64 / 100.0
                }
            })
            .collect();
        for (m, n) in [(1, 1), (1, 3), (2, 3), (3, 3), (2, 5)] {
            for theta in [0.5, 3.0, 7.7, 9.9] {
                let mut statistic = MOfNStatistic::new(m, n);
                for k in 0..values.len() {
                    let s = statistic.push(values[k]);
                    let from = (k + 1).saturating_sub(n);
                    let count = values[from..=k].iter().filter(|v| **v >= theta).count();
                    assert_eq!(s >= theta, count >= m, "{m}-of-{n} θ={theta} frame {k}");
                }
            }
        }
    }
}
