//! Presence truth: who is in the coverage zone, as a timeline of labelled segments.

use crate::{seconds_to_ns, PresenceError};
use echobench_core::Interval;

/// What the coverage zone holds over a stretch of time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Occupancy {
    /// Nobody inside the coverage zone.
    Empty,
    /// Someone inside the zone, moving (walking, gesturing).
    OccupiedMoving,
    /// Someone inside the zone, not moving (seated, standing still).
    OccupiedStill,
}

impl Occupancy {
    /// Whether someone is inside the zone.
    pub fn is_occupied(self) -> bool {
        self != Occupancy::Empty
    }
}

/// One segment `[start_ns, end_ns)` of a truth timeline.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct Segment {
    /// Start, ns (belongs to this segment).
    pub start_ns: i64,
    /// End, ns (belongs to the next segment).
    pub end_ns: i64,
    /// Who is inside.
    pub occupancy: Occupancy,
}

/// A trial's presence truth: segments that tile `[0, duration)`, none empty, neighbours
/// labelled differently.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PresenceTruth {
    segments: Vec<Segment>,
    duration_ns: i64,
}

impl PresenceTruth {
    /// Reads a timeline of closed intervals that cover `[0, duration]` end to end: the first
    /// starts at 0, each next one starts where the previous ends (after rounding both to whole
    /// ns). Zero-length intervals are dropped and neighbours with the same label merged; a
    /// shared boundary belongs to the later interval.
    ///
    /// # Errors
    /// An empty timeline, a first start other than 0, a gap or overlap, a time above
    /// [`crate::MAX_TIME_S`], or a total duration of 0.
    ///
    /// ```
    /// use echobench_core::Interval;
    /// use echobench_presence::{Occupancy, PresenceTruth};
    /// let truth = PresenceTruth::new(&[
    ///     (Interval::new(0.0, 4.0).unwrap(), Occupancy::Empty),
    ///     (Interval::new(4.0, 9.5).unwrap(), Occupancy::OccupiedMoving),
    /// ]).unwrap();
    /// assert_eq!(truth.duration_ns(), 9_500_000_000);
    /// assert_eq!(truth.occupancy_at(4_000_000_000), Occupancy::OccupiedMoving);
    /// ```
    pub fn new(timeline: &[(Interval, Occupancy)]) -> Result<Self, PresenceError> {
        let mut segments = Vec::with_capacity(timeline.len());
        for (interval, occupancy) in timeline {
            segments.push(Segment {
                start_ns: seconds_to_ns("truth interval start", interval.start_s())?,
                end_ns: seconds_to_ns("truth interval end", interval.end_s())?,
                occupancy: *occupancy,
            });
        }
        PresenceTruth::from_segments(&segments)
    }

    /// The same from segments in whole ns (same rules as [`PresenceTruth::new`]).
    ///
    /// # Errors
    /// As [`PresenceTruth::new`].
    pub fn from_segments(raw: &[Segment]) -> Result<Self, PresenceError> {
        let timeline_error = |reason: String| Err(PresenceError::Timeline { reason });
        let mut expected_start = 0i64;
        let mut segments: Vec<Segment> = Vec::with_capacity(raw.len());
        for (index, segment) in raw.iter().enumerate() {
            if segment.start_ns != expected_start {
                return timeline_error(format!(
                    "segment {index} starts at {} ns, expected {expected_start} ns (segments must tile [0, duration] with no gap or overlap)",
                    segment.start_ns
                ));
            }
            if segment.end_ns < segment.start_ns {
                return timeline_error(format!("segment {index} ends before it starts"));
            }
            if segment.end_ns > crate::MAX_TIME_S as i64 * crate::NS_PER_S {
                return timeline_error(format!("segment {index} ends after 1e9 s"));
            }
            expected_start = segment.end_ns;
            if segment.end_ns == segment.start_ns {
                continue;
            }
            match segments.last_mut() {
                Some(last) if last.occupancy == segment.occupancy => last.end_ns = segment.end_ns,
                _ => segments.push(*segment),
            }
        }
        if expected_start == 0 {
            return timeline_error("the timeline is empty or lasts 0 s".to_string());
        }
        Ok(PresenceTruth {
            segments,
            duration_ns: expected_start,
        })
    }

    /// The timeline of a trial from the scene's truth: *moving* while some target moves
    /// inside the coverage zone (`moving`, the intrusion events), *still* while one is
    /// inside it without moving (`still`) and nobody moves, *empty* otherwise. Intervals
    /// may overlap and come in any order; they are clipped to `[0, duration_s]`.
    ///
    /// # Errors
    /// A duration that is not finite and > 0 or above [`crate::MAX_TIME_S`], or an
    /// interval bound that is not finite.
    ///
    /// ```
    /// use echobench_core::Interval;
    /// use echobench_presence::{Occupancy, PresenceTruth};
    /// let iv = |a, b| Interval::new(a, b).unwrap();
    /// let truth = PresenceTruth::from_intervals(10.0, &[iv(1.0, 3.0), iv(8.0, 9.0)], &[iv(2.5, 8.5)])
    ///     .unwrap();
    /// assert_eq!(truth.occupancy_at(2_000_000_000), Occupancy::OccupiedMoving);
    /// assert_eq!(truth.occupancy_at(5_000_000_000), Occupancy::OccupiedStill);
    /// assert_eq!(truth.occupancy_at(9_500_000_000), Occupancy::Empty);
    /// assert_eq!(truth.occupied_periods(), vec![(1_000_000_000, 9_000_000_000)]);
    /// ```
    pub fn from_intervals(
        duration_s: f64,
        moving: &[Interval],
        still: &[Interval],
    ) -> Result<Self, PresenceError> {
        let duration_ns = seconds_to_ns("duration_s", duration_s)?;
        if duration_ns <= 0 {
            return Err(PresenceError::InvalidParameter {
                name: "duration_s",
                value: duration_s,
                allowed: "> 0",
            });
        }
        let clipped = |list: &[Interval]| -> Result<Vec<(i64, i64)>, PresenceError> {
            let mut out = Vec::with_capacity(list.len());
            for interval in list {
                let start = seconds_to_ns("truth interval start", interval.start_s().max(0.0))?;
                let end = seconds_to_ns("truth interval end", interval.end_s().max(0.0))?;
                let (start, end) = (start.min(duration_ns), end.min(duration_ns));
                if start < end {
                    out.push((start, end));
                }
            }
            Ok(out)
        };
        let (moving, still) = (clipped(moving)?, clipped(still)?);
        // Every boundary, then the label of each elementary piece between two of them.
        let mut cuts: Vec<i64> = vec![0, duration_ns];
        for &(a, b) in moving.iter().chain(&still) {
            cuts.push(a);
            cuts.push(b);
        }
        cuts.sort_unstable();
        cuts.dedup();
        let inside = |list: &[(i64, i64)], t: i64| list.iter().any(|&(a, b)| a <= t && t < b);
        let segments: Vec<Segment> = cuts
            .windows(2)
            .map(|w| Segment {
                start_ns: w[0],
                end_ns: w[1],
                occupancy: if inside(&moving, w[0]) {
                    Occupancy::OccupiedMoving
                } else if inside(&still, w[0]) {
                    Occupancy::OccupiedStill
                } else {
                    Occupancy::Empty
                },
            })
            .collect();
        PresenceTruth::from_segments(&segments)
    }

    /// The segments, merged, in time order.
    pub fn segments(&self) -> &[Segment] {
        &self.segments
    }

    /// The trial's duration, ns.
    pub fn duration_ns(&self) -> i64 {
        self.duration_ns
    }

    /// Who is inside at `t_ns` (`Empty` outside `[0, duration)`).
    pub fn occupancy_at(&self, t_ns: i64) -> Occupancy {
        let index = self.segments.partition_point(|s| s.end_ns <= t_ns);
        self.segments
            .get(index)
            .filter(|s| s.start_ns <= t_ns)
            .map_or(Occupancy::Empty, |s| s.occupancy)
    }

    /// Time nobody is inside, ns.
    pub fn empty_ns(&self) -> u64 {
        self.segments
            .iter()
            .filter(|s| s.occupancy == Occupancy::Empty)
            .map(|s| (s.end_ns - s.start_ns) as u64)
            .sum()
    }

    /// The occupied periods `[a, b)`: maximal runs of occupied time (moving and still
    /// together), in time order.
    pub fn occupied_periods(&self) -> Vec<(i64, i64)> {
        let mut periods: Vec<(i64, i64)> = Vec::new();
        for segment in self.segments.iter().filter(|s| s.occupancy.is_occupied()) {
            match periods.last_mut() {
                Some(last) if last.1 == segment.start_ns => last.1 = segment.end_ns,
                _ => periods.push((segment.start_ns, segment.end_ns)),
            }
        }
        periods
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn interval(a: f64, b: f64) -> Interval {
        Interval::new(a, b).unwrap()
    }

    #[test]
    fn timeline_must_tile_from_zero() {
        use Occupancy::*;
        assert!(PresenceTruth::new(&[(interval(0.5, 2.0), Empty)]).is_err());
        assert!(
            PresenceTruth::new(&[(interval(0.0, 2.0), Empty), (interval(2.5, 3.0), Empty)])
                .is_err()
        );
        assert!(PresenceTruth::new(&[(interval(0.0, 0.0), Empty)]).is_err());
        assert!(PresenceTruth::new(&[]).is_err());
        // Zero-length pieces vanish, equal neighbours merge, moving and still form one period.
        let truth = PresenceTruth::new(&[
            (interval(0.0, 1.0), Empty),
            (interval(1.0, 1.0), OccupiedStill),
            (interval(1.0, 2.0), Empty),
            (interval(2.0, 3.0), OccupiedMoving),
            (interval(3.0, 5.0), OccupiedStill),
            (interval(5.0, 6.0), Empty),
        ])
        .unwrap();
        assert_eq!(truth.segments().len(), 4);
        let s = 1_000_000_000;
        assert_eq!(truth.occupied_periods(), vec![(2 * s, 5 * s)]);
        // Boundaries belong to the later segment.
        assert_eq!(truth.occupancy_at(2 * s), OccupiedMoving);
        assert_eq!(truth.occupancy_at(5 * s), Empty);
        assert_eq!(truth.occupancy_at(2 * s - 1), Empty);
    }
}
