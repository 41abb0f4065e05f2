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
use std::fmt;

/// The M-of-N rule: the alarm condition holds when at least `m` of the last `n` frame
/// decisions are true. Invariant: `1 <= m <= n`, so a value of this type is always a rule
/// the scorers can apply (the one validated type the intrusion scorer, the presence scorer
/// and the tail fits share).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct MOfN {
    m: usize,
    n: usize,
}

impl MOfN {
    /// 1-of-1: the condition is the frame decision itself.
    pub const SINGLE: MOfN = MOfN { m: 1, n: 1 };

    /// Makes an M-of-N rule.
    ///
    /// # Errors
    /// When `m` is 0 or larger than `n`.
    ///
    /// ```
    /// use echobench_core::alarm_statistic::MOfN;
    /// assert_eq!(MOfN::new(2, 3).unwrap().m(), 2);
    /// assert!(MOfN::new(0, 3).is_err());
    /// assert!(MOfN::new(4, 3).unwrap_err().to_string().contains("m_of_n.m = 4"));
    /// ```
    pub fn new(m: usize, n: usize) -> Result<Self, MOfNError> {
        if m >= 1 && m <= n {
            Ok(MOfN { m, n })
        } else {
            Err(MOfNError { m, n })
        }
    }

    /// How many true decisions are needed.
    pub fn m(&self) -> usize {
        self.m
    }

    /// How many recent frames are looked at.
    pub fn n(&self) -> usize {
        self.n
    }
}

/// An M-of-N rule with `m` outside `1..=n`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct MOfNError {
    /// The refused M.
    pub m: usize,
    /// The N it was given with.
    pub n: usize,
}

impl fmt::Display for MOfNError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "m_of_n.m = {} is not valid: must be between 1 and n = {}",
            self.m, self.n
        )
    }
}

impl std::error::Error for MOfNError {}

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
/// use echobench_core::alarm_statistic::MOfN;
/// let mut s = MOfNStatistic::new(MOfN::new(2, 3).unwrap());
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
    /// The statistic of `rule`.
    pub fn new(rule: MOfN) -> Self {
        let (m, n) = (rule.m, rule.n);
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
                let mut statistic = MOfNStatistic::new(MOfN::new(m, n).unwrap());
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
