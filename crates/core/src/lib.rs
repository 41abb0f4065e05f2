//! The small types every echobench crate agrees on.
//!
//! This crate sits at the bottom of the workspace and depends on nothing of
//! ours. It holds the description of a sample stream ([`StreamInfo`]), time
//! intervals with a checked invariant ([`Interval`]), detector scores
//! ([`Score`]) and the stable, counter-based seeding ([`seed::StreamKey`]) that
//! makes every trial reproducible whatever the thread count or shard split,
//! and the branch-free elementary functions of the synthesis loops
//! ([`fastmath`]), whose results do not depend on the platform's maths library.
#![deny(missing_docs)]

pub mod alarm_statistic;
pub mod atomic;
pub mod conformance;
pub mod detector;
pub mod doppler;
pub mod fastmath;
pub mod param_decl;
pub mod param_error;
pub mod seed;
pub mod suggest;

pub use detector::FrameScore;

use std::fmt;

/// How many values one sample instant carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Channels {
    /// Single-channel mixer: one real value per sample.
    Real,
    /// Quadrature receiver: interleaved I, Q pairs.
    Iq,
}

impl Channels {
    /// Values per sample instant (1 for real, 2 for I/Q).
    pub fn count(self) -> usize {
        match self {
            Channels::Real => 1,
            Channels::Iq => 2,
        }
    }
}

impl fmt::Display for Channels {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Channels::Real => "real",
            Channels::Iq => "iq",
        })
    }
}

/// What a detector is told about the stream it will be fed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StreamInfo {
    /// Output sample rate of the ADC, in Hz.
    pub sample_rate_hz: f64,
    /// Real or I/Q samples (I/Q are interleaved I, Q, I, Q, ...).
    pub channels: Channels,
    /// ADC resolution in bits; samples are in volts at the ADC input.
    pub adc_bits: u8,
    /// Carrier frequency of the sensor, in Hz (lets detectors derive Doppler bands from speeds).
    pub carrier_hz: f64,
}

/// One detector output: a continuous score for the decision frame ending at `t_s`.
///
/// Higher means more likely motion. Detectors emit scores, not decisions, so
/// the harness can sweep thresholds for ROC curves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Score {
    /// Time of the end of the decision frame, seconds from the start of the trial.
    pub t_s: f64,
    /// The score; higher means more likely motion.
    pub value: f64,
}

/// A closed time interval `[start_s, end_s]` with `start_s <= end_s`, both finite.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    start_s: f64,
    end_s: f64,
}

/// Why an [`Interval`] could not be made.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalError {
    /// The rejected start, seconds.
    pub start_s: f64,
    /// The rejected end, seconds.
    pub end_s: f64,
}

impl fmt::Display for IntervalError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "interval [{}, {}] s is not valid: both ends must be finite and start <= end",
            self.start_s, self.end_s
        )
    }
}

impl std::error::Error for IntervalError {}

impl Interval {
    /// Makes an interval.
    ///
    /// # Errors
    /// When either end is not finite or `start_s > end_s`.
    ///
    /// ```
    /// use echobench_core::Interval;
    /// let i = Interval::new(1.0, 2.5).unwrap();
    /// assert_eq!(i.duration_s(), 1.5);
    /// assert!(Interval::new(3.0, 2.0).is_err());
    /// ```
    pub fn new(start_s: f64, end_s: f64) -> Result<Self, IntervalError> {
        if start_s.is_finite() && end_s.is_finite() && start_s <= end_s {
            Ok(Interval { start_s, end_s })
        } else {
            Err(IntervalError { start_s, end_s })
        }
    }

    /// Start, seconds.
    pub fn start_s(&self) -> f64 {
        self.start_s
    }

    /// End, seconds.
    pub fn end_s(&self) -> f64 {
        self.end_s
    }

    /// Length, seconds.
    pub fn duration_s(&self) -> f64 {
        self.end_s - self.start_s
    }

    /// True when `t_s` lies inside the closed interval.
    pub fn contains(&self, t_s: f64) -> bool {
        t_s >= self.start_s && t_s <= self.end_s
    }

    /// True when the two closed intervals share at least one instant.
    pub fn overlaps(&self, other: &Interval) -> bool {
        self.start_s <= other.end_s && other.start_s <= self.end_s
    }
}

/// Merges overlapping or touching intervals; the result is sorted and disjoint.
///
/// ```
/// use echobench_core::{merge_intervals, Interval};
/// let merged = merge_intervals(vec![
///     Interval::new(5.0, 6.0).unwrap(),
///     Interval::new(1.0, 2.0).unwrap(),
///     Interval::new(1.5, 3.0).unwrap(),
/// ]);
/// assert_eq!(merged, vec![Interval::new(1.0, 3.0).unwrap(), Interval::new(5.0, 6.0).unwrap()]);
/// ```
pub fn merge_intervals(mut intervals: Vec<Interval>) -> Vec<Interval> {
    intervals.sort_by(|a, b| a.start_s.total_cmp(&b.start_s));
    let mut merged: Vec<Interval> = Vec::with_capacity(intervals.len());
    for interval in intervals {
        match merged.last_mut() {
            Some(last) if interval.start_s <= last.end_s => {
                last.end_s = last.end_s.max(interval.end_s);
            }
            _ => merged.push(interval),
        }
    }
    merged
}
