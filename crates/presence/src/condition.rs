//! The per-frame alarm condition (threshold, then M-of-N), from the same M-of-N statistic
//! the intrusion scorer uses (`echobench_core::alarm_statistic`), so both kinds of product
//! agree on when the condition holds.

use echobench_core::alarm_statistic::MOfNStatistic;
use echobench_core::Score;

/// The M-of-N rule (`1 <= m <= n`), the same validated type the intrusion scorer uses.
pub use echobench_core::alarm_statistic::MOfN;

/// One frame's condition at the frame's end time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct ConditionFrame {
    /// End of the decision frame, whole nanoseconds from the trial's start.
    pub t_ns: i64,
    /// Whether the alarm condition holds at this frame (it triggers the timer).
    pub on: bool,
}

/// The condition of every frame of `trace` at `threshold`: decision `value >= threshold`
/// (a NaN score or threshold is never reached), then at least `m` true among the last `n`
/// decisions, frames before the first counting as false. Frames whose `t_s` is not finite
/// take part in the M-of-N window but are left out of the result (they cannot be placed).
///
/// ```
/// use echobench_core::Score;
/// use echobench_presence::{condition_frames, MOfN};
/// let trace: Vec<Score> = [0.9, 0.2, 0.8, 0.7]
///     .iter()
///     .enumerate()
///     .map(|(k, &value)| Score { t_s: 0.5 * (k + 1) as f64, value })
///     .collect();
/// let frames = condition_frames(&trace, 0.5, MOfN::new(2, 3).unwrap());
/// let on: Vec<bool> = frames.iter().map(|f| f.on).collect();
/// // decisions 1 0 1 1: two of the last three first at the third frame.
/// assert_eq!(on, [false, false, true, true]);
/// assert_eq!(frames[0].t_ns, 500_000_000);
/// ```
pub fn condition_frames(trace: &[Score], threshold: f64, rule: MOfN) -> Vec<ConditionFrame> {
    statistic_frames(trace, rule)
        .iter()
        .map(|frame| frame.condition(threshold))
        .collect()
}

/// One frame of the M-of-N alarm statistic, placed in time: the condition holds at
/// threshold θ exactly when `statistic >= θ` (NaN never does). One pass gives the
/// condition at every threshold; [`crate::false_switch_ons_at`] relies on it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StatisticFrame {
    /// The frame's end, whole nanoseconds.
    pub t_ns: i64,
    /// The M-th largest of the last N scores (NaN while fewer than M have a number).
    pub statistic: f64,
}

impl StatisticFrame {
    /// The condition of this frame at `threshold`.
    pub fn condition(&self, threshold: f64) -> ConditionFrame {
        ConditionFrame {
            t_ns: self.t_ns,
            on: self.statistic >= threshold,
        }
    }
}

/// The alarm statistic of every frame of `trace` (the intrusion scorer's, from
/// `echobench_core::alarm_statistic`); frames whose `t_s` is not finite take part in the
/// window but are left out of the result.
pub fn statistic_frames(trace: &[Score], rule: MOfN) -> Vec<StatisticFrame> {
    let mut statistic = MOfNStatistic::new(rule);
    let mut frames = Vec::with_capacity(trace.len());
    for score in trace {
        let value = statistic.push(score.value);
        if score.t_s.is_finite() {
            frames.push(StatisticFrame {
                t_ns: (score.t_s * 1e9).round() as i64,
                statistic: value,
            });
        }
    }
    frames
}

#[cfg(test)]
mod tests {
    use super::*;

    fn trace(values: &[f64]) -> Vec<Score> {
        values
            .iter()
            .enumerate()
            .map(|(k, &value)| Score {
                t_s: 0.1 * (k + 1) as f64,
                value,
            })
            .collect()
    }

    #[test]
    fn m_of_n_counts_the_last_n_decisions() {
        // Threshold 1, decisions: 1 0 0 1 1 0 1 0 0 0 (NaN is never >= 1).
        // 2-of-3 over the windows ending at each frame (frames before the first are false):
        //   k=1: [1]      1 true -> no      k=6: [1 1 0] 2 -> yes
        //   k=2: [1 0]    1      -> no      k=7: [1 0 1] 2 -> yes
        //   k=3: [1 0 0]  1      -> no      k=8: [0 1 0] 1 -> no
        //   k=4: [0 0 1]  1      -> no      k=9: [1 0 0] 1 -> no
        //   k=5: [0 1 1]  2      -> yes     k=10: [0 0 0] 0 -> no
        let scores = trace(&[2.0, 0.0, f64::NAN, 1.0, 3.0, 0.5, 1.5, 0.0, 0.2, -1.0]);
        let on: Vec<bool> = condition_frames(&scores, 1.0, MOfN::new(2, 3).unwrap())
            .iter()
            .map(|f| f.on)
            .collect();
        assert_eq!(
            on,
            [false, false, false, false, true, true, true, false, false, false]
        );
        let single: Vec<bool> = condition_frames(&scores, 1.0, MOfN::SINGLE)
            .iter()
            .map(|f| f.on)
            .collect();
        assert_eq!(
            single,
            [true, false, false, true, true, false, true, false, false, false]
        );
        assert!(condition_frames(&scores, f64::NAN, MOfN::SINGLE)
            .iter()
            .all(|f| !f.on));
    }

    #[test]
    fn a_frame_without_a_time_still_counts_in_the_window() {
        // Decisions 1 1 1 with the middle frame's time NaN: 2-of-2 holds at frames 2 and 3;
        // frame 2 is dropped, frame 3 keeps its condition, which needed frame 2's decision.
        let mut scores = trace(&[5.0, 5.0, 5.0]);
        scores[1].t_s = f64::NAN;
        let frames = condition_frames(&scores, 1.0, MOfN::new(2, 2).unwrap());
        assert_eq!(frames.len(), 2);
        assert_eq!(
            frames[1],
            ConditionFrame {
                t_ns: 300_000_000,
                on: true
            }
        );
        assert!(!frames[0].on);
    }
}
