//! A closed confidence interval on the real line.

/// A closed interval `[low, high]`, e.g. a confidence interval for a probability or a rate.
///
/// Intervals returned by this crate always satisfy `low <= high`; for probabilities both ends
/// lie in `[0, 1]`, for rates both are `>= 0`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    /// Lower end (inclusive).
    pub low: f64,
    /// Upper end (inclusive).
    pub high: f64,
}

impl Interval {
    /// True when `low <= value <= high`.
    ///
    /// ```
    /// let ci = echobench_stats::Interval { low: 0.1, high: 0.3 };
    /// assert!(ci.contains(0.2) && !ci.contains(0.31));
    /// ```
    pub fn contains(&self, value: f64) -> bool {
        self.low <= value && value <= self.high
    }

    /// `high - low`.
    pub fn width(&self) -> f64 {
        self.high - self.low
    }
}
