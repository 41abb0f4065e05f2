//! The run's alarm logic replayed frame by frame, for drawing: when the alarm condition held,
//! and what each onset was (detection, re-trigger, false alarm, suppressed, ignored).
//!
//! The counts come from the harness's own scorer ([`score_threshold`], equal to the grid
//! scorer the runner tallies with); the frame-by-frame states come from the harness's
//! [`AlarmTracker`] fed the same frames, so the picture and the numbers cannot disagree (a
//! test checks that the false alarms drawn are the ones counted).

use echobench_core::{Interval, Score};
use echobench_harness::events::{
    attribute_false_alarms, score_threshold, AlarmLogic, AlarmStep, AlarmTracker, TrialEventScore,
    TrialTruth,
};

/// What an onset (or a re-count) was.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum MarkKind {
    /// The first counted onset in an event's window.
    Detection {
        /// Onset time minus the event's onset, s.
        latency_s: f64,
    },
    /// A further counted onset in an already detected window.
    Retrigger,
    /// A counted onset outside every window (or a stuck alarm charged again).
    FalseAlarm {
        /// Charged to a condition that stayed on for a whole hold.
        stuck: bool,
        /// The nuisance sources active at that time.
        sources: Vec<String>,
    },
    /// An onset inside a present-not-moving interval: neither kind.
    Ignored,
    /// An onset swallowed by the hold of an earlier alarm.
    Suppressed,
}

/// One onset drawn on the alarm lane.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct AlarmMark {
    /// When, s.
    pub t_s: f64,
    /// What it was.
    pub kind: MarkKind,
}

/// A trial's alarms at one threshold.
#[derive(Debug, Clone)]
pub(crate) struct AlarmReplay {
    /// The scorer's result: what the run tallied for this trial.
    pub score: TrialEventScore,
    /// Intervals in which the alarm condition held (from a frame to the next).
    pub on: Vec<(f64, f64)>,
    /// Every onset and re-count, in time order.
    pub marks: Vec<AlarmMark>,
    /// For each false alarm of `score`, the nuisance sources active then.
    pub false_alarm_sources: Vec<Vec<String>>,
}

/// Replays the alarm logic on `scores` at `threshold`.
pub(crate) fn replay_alarms(
    scores: &[Score],
    truth: &TrialTruth,
    logic: &AlarmLogic,
    threshold: f64,
    nuisances: &[(Interval, String)],
) -> AlarmReplay {
    let score = score_threshold(scores, truth, logic, threshold);
    let mut tracker = AlarmTracker::new(logic, threshold);
    let mut on: Vec<(f64, f64)> = Vec::new();
    let mut marks = Vec::new();
    let mut detected = vec![false; truth.events().len()];
    // Frame period, for the last frame's extent.
    let period_s = scores
        .windows(2)
        .map(|w| w[1].t_s - w[0].t_s)
        .find(|d| d.is_finite() && *d > 0.0)
        .unwrap_or(0.0);
    for (k, frame) in scores.iter().enumerate() {
        let t_s = frame.t_s;
        // The same noise-frame rule as the scorer (outside every window and ignored interval).
        let noise_frame = t_s.is_finite() && truth.is_noise_time(t_s);
        let step = tracker.push_frame(*frame, noise_frame);
        if tracker.is_on() && t_s.is_finite() {
            let end_s = scores
                .get(k + 1)
                .map_or(t_s + period_s, |next| next.t_s)
                .max(t_s);
            match on.last_mut() {
                Some(last) if last.1 >= t_s => last.1 = end_s,
                _ => on.push((t_s, end_s)),
            }
        }
        let kind = match step {
            AlarmStep::Quiet => continue,
            AlarmStep::Suppressed { .. } => MarkKind::Suppressed,
            AlarmStep::Recounted { .. } => MarkKind::FalseAlarm {
                stuck: true,
                sources: Vec::new(),
            },
            AlarmStep::Counted { t_s } => match truth.event_at(t_s) {
                Some(i) if !detected[i] => {
                    detected[i] = true;
                    MarkKind::Detection {
                        latency_s: t_s - truth.events()[i].onset_s,
                    }
                }
                Some(_) => MarkKind::Retrigger,
                None if truth.is_ignored(t_s) => MarkKind::Ignored,
                None => MarkKind::FalseAlarm {
                    stuck: false,
                    sources: Vec::new(),
                },
            },
        };
        marks.push(AlarmMark { t_s, kind });
    }
    // The runner's attribution (no lag), attached to the drawn false alarms in order.
    let false_alarm_sources = attribute_false_alarms(&score.false_alarm_times_s, nuisances, 0.0);
    let mut sources = false_alarm_sources.iter();
    for mark in &mut marks {
        if let MarkKind::FalseAlarm { sources: s, .. } = &mut mark.kind {
            if let Some(found) = sources.next() {
                s.clone_from(found);
            }
        }
    }
    AlarmReplay {
        score,
        on,
        marks,
        false_alarm_sources,
    }
}

impl AlarmReplay {
    /// Times of the false alarms drawn (must equal the scorer's).
    pub(crate) fn drawn_false_alarms_s(&self) -> Vec<f64> {
        self.marks
            .iter()
            .filter(|m| matches!(m.kind, MarkKind::FalseAlarm { .. }))
            .map(|m| m.t_s)
            .collect()
    }
}
