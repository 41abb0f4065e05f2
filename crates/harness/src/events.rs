//! Event-level scoring of one trial: from a detector's score trace to alarms,
//! and from alarms to detections, latencies and false alarms.
//!
//! # Definitions (the same for every detector)
//!
//! **Frame decision.** `d[k] = score[k] >= threshold` (the decision rule of
//! the ROC convention: an alarm when the score reaches the threshold). A NaN
//! score never reaches a threshold; a NaN threshold is never reached.
//!
//! **M-of-N.** The alarm *condition* `c[k]` holds when at least `M` of the
//! last `N` frame decisions `d[k−N+1..=k]` are true. Frames before the first
//! one of the trace count as false, so the first `N − 1` frames need `M` true
//! decisions among the frames seen so far. `1-of-1` ([`MOfN::SINGLE`]) is the
//! plain threshold.
//!
//! **Alarm onsets** are the rising edges of `c`: frames where `c[k]` is true
//! and `c[k−1]` is false, taking the condition as false before the first frame
//! (the sensor has just been switched on). The onset time is the frame's
//! `t_s`. An onset at a non-finite time cannot be placed and is dropped.
//!
//! **Hold time `H`**, non-retriggerable (docs/reference/event-scoring.md#e1): after a
//! *counted* alarm at `t`, onsets in `[t, t + H)` are suppressed and do not
//! extend the hold. An onset is therefore counted when
//! `t_onset >= t_last + H − HOLD_TOLERANCE_S`; the 1 ns tolerance makes an
//! onset that falls on `t + H` up to rounding of the frame times count, so a
//! hold of `h` frame periods suppresses exactly `h − 1` frames after the
//! alarm frame.
//!
//! **Matching windows.** Truth event `i` = `[on_i, off_i]` gets the window
//! `W_i = [on_i − τ_pre, off_i + τ_post]` (docs/reference/event-scoring.md#e2). Windows
//! that overlap or touch are merged into one *matched event*, whose onset is
//! the earliest truth onset among those merged. "Events total" counts matched
//! events.
//!
//! **Detection.** A matched event is detected iff at least one counted onset
//! lies in its (closed) window; its latency is the first such onset minus the
//! event's onset (negative down to `−τ_pre`). Further counted onsets inside
//! the same window are *re-triggers*: neither detections nor false alarms,
//! counted apart (docs/reference/event-scoring.md#e3).
//!
//! **Alarm already latched when a window opens** (docs/reference/event-scoring.md#e3,
//! decided as in its worked example): its onset lies before the window, so it
//! is a false alarm, and the event needs a *new* counted onset inside the
//! window to be detected. With the onset-based logic above this needs no
//! special case.
//!
//! **False alarms** are counted onsets outside every window. **Exposure** is
//! the noise-only time, `trial duration − |∪ W_i ∩ [0, duration]|`; the
//! false-alarm rate is false alarms / exposure (docs/reference/event-scoring.md#e4).
//!
//! **Present, not moving.** Intervals in which a person is inside the zone
//! but still (seated, standing; see the scene crate's truth) are *ignored*:
//! an onset there is neither a detection nor a false alarm (it still starts a
//! hold), and their time is not exposure. Intrusion scoring has nothing to say
//! about them; presence scoring does.
//!
//! **A stuck alarm is re-counted** when the logic asks for it
//! ([`AlarmLogic::recounting_stuck_alarms`], which the runner always uses): a
//! condition that stays true on noise frames (outside every window and ignored
//! interval) counts another false alarm each time a whole hold has run out
//! since the later of the last counted alarm and the last frame on which it
//! was on inside a window or ignored interval. So a detector that never
//! switches off is charged one false alarm per hold period instead of one in
//! all, while an alarm that outlasts its event's window by less than a hold
//! (a detector with a long integration lets go late) is not charged. Inside a
//! window a re-count is nothing (a detection still needs a rising edge there).
//! The plain logic of docs/reference/event-scoring.md (and its worked example) has no
//! re-counts.
//!
//! **False-on time** is the time the condition holds on noise frames (outside
//! windows and ignored intervals): each such frame adds the time since the
//! previous frame (since 0 for the first), in integer nanoseconds so that the
//! grid scorer's sums are exact.
//!
//! # Design decision: one pass serves the whole threshold grid
//!
//! The ROC sweep scores every trial at ~100 thresholds. The M-of-N condition
//! at threshold θ is "the M-th largest of the last N scores is ≥ θ", so the
//! alarm statistic `s[k]` (that order statistic; the score itself for 1-of-1)
//! is computed once and the condition becomes the plain threshold test
//! `s[k] >= θ` for every θ. A rising edge at frame `k` then happens exactly
//! for the thresholds in `(s[k−1], s[k]]`: a contiguous run of the sorted grid,
//! found by binary search. [`score_thresholds`] walks the trace once and
//! touches only the thresholds that have an onset at that frame, so its cost is
//! O(frames · N) for the sliding order statistic (a sorted window of N
//! scores, nothing for 1-of-1) plus O(onset frames · log grid + total onsets),
//! instead of O(frames · grid). [`score_threshold`] is the plain per-threshold loop
//! ([`AlarmTracker`] plus a linear window search); the tests check that the
//! two agree exactly on random traces.

use echobench_core::alarm_statistic::MOfNStatistic;
use echobench_core::{merge_intervals, Interval, Score};

/// Rounding allowance of the hold comparison, seconds (see the module doc).
pub const HOLD_TOLERANCE_S: f64 = 1e-9;

/// A parameter of the event scoring was refused (the one parameter-error type, owned by
/// `ParamOwner::EventScoring`).
pub use echobench_core::param_error::ParamError;
use echobench_core::param_error::ParamOwner;

fn check_non_negative(parameter: &str, value: f64) -> Result<f64, ParamError> {
    ParamOwner::EventScoring.non_negative(parameter, value)
}

/// The M-of-N rule (`1 <= m <= n`), the one validated type the scorers and the tail fits share.
pub use echobench_core::alarm_statistic::MOfN;

/// The alarm logic applied to every detector's scores: M-of-N, then rising
/// edges, then a non-retriggerable hold.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AlarmLogic {
    hold_s: f64,
    m_of_n: MOfN,
    recount_stuck: bool,
}

impl AlarmLogic {
    /// Makes the alarm logic.
    ///
    /// # Errors
    /// When `hold_s` is negative or not finite.
    pub fn new(hold_s: f64, m_of_n: MOfN) -> Result<Self, ParamError> {
        Ok(AlarmLogic {
            hold_s: check_non_negative("hold_s", hold_s)?,
            m_of_n,
            recount_stuck: false,
        })
    }

    /// The same logic, charging a condition that stays on outside every window one
    /// false alarm per hold period (see the module doc).
    #[must_use]
    pub fn recounting_stuck_alarms(mut self) -> Self {
        self.recount_stuck = true;
        self
    }

    /// Whether stuck alarms are re-counted.
    pub fn recounts_stuck_alarms(&self) -> bool {
        self.recount_stuck
    }

    /// Hold (refractory) time after a counted alarm, seconds.
    pub fn hold_s(&self) -> f64 {
        self.hold_s
    }

    /// The M-of-N rule.
    pub fn m_of_n(&self) -> MOfN {
        self.m_of_n
    }
}

/// How far a truth event's matching window reaches before its onset and
/// after its offset.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MatchWindow {
    pre_s: f64,
    post_s: f64,
}

impl MatchWindow {
    /// Makes a matching window `[on − pre_s, off + post_s]`.
    ///
    /// # Errors
    /// When either margin is negative or not finite.
    pub fn new(pre_s: f64, post_s: f64) -> Result<Self, ParamError> {
        Ok(MatchWindow {
            pre_s: check_non_negative("pre_s", pre_s)?,
            post_s: check_non_negative("post_s", post_s)?,
        })
    }

    /// Margin before the onset (absorbs onset jitter), seconds.
    pub fn pre_s(&self) -> f64 {
        self.pre_s
    }

    /// Margin after the offset (lets a late alarm count), seconds.
    pub fn post_s(&self) -> f64 {
        self.post_s
    }
}

/// One matched event: one truth event, or several whose windows overlapped.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MatchedEvent {
    /// Earliest truth onset of the merged events, seconds; latencies are
    /// measured from here.
    pub onset_s: f64,
    /// The merged matching window.
    pub window: Interval,
    /// How many truth events were merged into this one.
    pub truth_events: usize,
}

/// A trial's ground truth prepared for scoring: merged matching windows and
/// the noise-only exposure.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialTruth {
    events: Vec<MatchedEvent>,
    ignored: Vec<Interval>,
    duration_s: f64,
    exposure_s: f64,
}

impl TrialTruth {
    /// Prepares the truth events of a trial that lasts `[0, duration_s]`.
    ///
    /// Events may run past the trial's ends; only the exposure is clipped to
    /// the trial.
    ///
    /// # Errors
    /// When `duration_s` is negative or not finite, or a window end overflows.
    pub fn new(
        truth: &[Interval],
        duration_s: f64,
        window: MatchWindow,
    ) -> Result<Self, ParamError> {
        let duration_s = check_non_negative("duration_s", duration_s)?;
        let mut raw_windows = Vec::with_capacity(truth.len());
        for event in truth {
            let opened = Interval::new(
                event.start_s() - window.pre_s,
                event.end_s() + window.post_s,
            )
            .map_err(|_| {
                ParamOwner::EventScoring.error(
                    "truth event",
                    event.start_s(),
                    "must be an event whose window ends stay finite",
                )
            })?;
            raw_windows.push(opened);
        }
        let mut events: Vec<MatchedEvent> = merge_intervals(raw_windows)
            .into_iter()
            .map(|window| MatchedEvent {
                onset_s: f64::INFINITY,
                window,
                truth_events: 0,
            })
            .collect();
        for event in truth {
            // Every raw window lies inside exactly one merged window; its
            // start identifies it.
            let start_s = event.start_s() - window.pre_s;
            let index = events.partition_point(|e| e.window.end_s() < start_s);
            if let Some(matched) = events.get_mut(index) {
                matched.onset_s = matched.onset_s.min(event.start_s());
                matched.truth_events += 1;
            }
        }
        let covered_s: f64 = events
            .iter()
            .map(|e| (e.window.end_s().min(duration_s) - e.window.start_s().max(0.0)).max(0.0))
            .sum();
        Ok(TrialTruth {
            events,
            ignored: Vec::new(),
            duration_s,
            exposure_s: (duration_s - covered_s).max(0.0),
        })
    }

    /// The same truth with intervals in which a person is present but not moving:
    /// alarms there are neither detections nor false alarms, and their time is not
    /// exposure (see the module doc).
    #[must_use]
    pub fn ignoring(mut self, still: &[Interval]) -> Self {
        self.ignored = merge_intervals(still.to_vec());
        let union = merge_intervals(
            self.events
                .iter()
                .map(|e| e.window)
                .chain(self.ignored.iter().copied())
                .collect(),
        );
        let covered_s: f64 = union
            .iter()
            .map(|w| (w.end_s().min(self.duration_s) - w.start_s().max(0.0)).max(0.0))
            .sum();
        self.exposure_s = (self.duration_s - covered_s).max(0.0);
        self
    }

    /// The ignored (present, not moving) intervals, merged and in time order.
    pub fn ignored(&self) -> &[Interval] {
        &self.ignored
    }

    /// Whether `t_s` lies in an ignored interval.
    pub fn is_ignored(&self, t_s: f64) -> bool {
        let index = self.ignored.partition_point(|w| w.end_s() < t_s);
        self.ignored.get(index).is_some_and(|w| w.contains(t_s))
    }

    /// Whether a frame at `t_s` is noise-only time: outside every window and every
    /// ignored interval.
    pub fn is_noise_time(&self, t_s: f64) -> bool {
        self.event_at(t_s).is_none() && !self.is_ignored(t_s)
    }

    /// The matched events in time order.
    pub fn events(&self) -> &[MatchedEvent] {
        &self.events
    }

    /// Trial duration, seconds.
    pub fn duration_s(&self) -> f64 {
        self.duration_s
    }

    /// Noise-only time: duration minus the windows' union inside the trial, seconds.
    pub fn exposure_s(&self) -> f64 {
        self.exposure_s
    }

    /// Index of the matched event whose window contains `t_s`, if any.
    pub fn event_at(&self, t_s: f64) -> Option<usize> {
        let index = self.events.partition_point(|e| e.window.end_s() < t_s);
        self.events
            .get(index)
            .filter(|e| e.window.contains(t_s))
            .map(|_| index)
    }
}

/// The event-level result of one trial at one threshold.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialEventScore {
    /// The threshold scored.
    pub threshold: f64,
    /// One entry per matched event of the [`TrialTruth`], in time order: the
    /// detection latency in seconds, or `None` when the event was missed.
    pub detection_latency_s: Vec<Option<f64>>,
    /// Times of the false alarms (counted onsets outside every window), seconds.
    pub false_alarm_times_s: Vec<f64>,
    /// Counted onsets inside a window that was already detected.
    pub retriggers: usize,
    /// Onsets suppressed by the hold time.
    pub suppressed_onsets: usize,
    /// Counted onsets inside ignored (present, not moving) intervals.
    pub ignored_onsets: usize,
    /// Of the false alarms, those charged to a stuck condition (re-counts).
    pub stuck_recounts: usize,
    /// Time the alarm condition held on noise frames, ns.
    pub false_on_ns: u64,
    /// Noise-only time of the trial, seconds.
    pub exposure_s: f64,
}

impl TrialEventScore {
    fn empty(threshold: f64, truth: &TrialTruth) -> Self {
        TrialEventScore {
            threshold,
            detection_latency_s: vec![None; truth.events.len()],
            false_alarm_times_s: Vec::new(),
            retriggers: 0,
            suppressed_onsets: 0,
            ignored_onsets: 0,
            stuck_recounts: 0,
            false_on_ns: 0,
            exposure_s: truth.exposure_s,
        }
    }

    /// Books one counted onset at `t_s`, which lies in matched event `event`
    /// (if any).
    fn record_counted(&mut self, truth: &TrialTruth, event: Option<usize>, t_s: f64) {
        let slot =
            event.and_then(|i| Some((self.detection_latency_s.get_mut(i)?, truth.events.get(i)?)));
        match slot {
            Some((latency, matched)) => {
                if latency.is_none() {
                    *latency = Some(t_s - matched.onset_s);
                } else {
                    self.retriggers += 1;
                }
            }
            None if truth.is_ignored(t_s) => self.ignored_onsets += 1,
            None => self.false_alarm_times_s.push(t_s),
        }
    }

    /// Books a re-count of a stuck condition at `t_s` (a noise frame).
    fn record_recount(&mut self, t_s: f64) {
        self.false_alarm_times_s.push(t_s);
        self.stuck_recounts += 1;
    }

    /// Number of matched events.
    pub fn events_total(&self) -> usize {
        self.detection_latency_s.len()
    }

    /// Number of matched events detected.
    pub fn events_detected(&self) -> usize {
        self.detection_latency_s.iter().flatten().count()
    }

    /// Latencies of the detected events, in event order, seconds.
    pub fn latencies_s(&self) -> Vec<f64> {
        self.detection_latency_s.iter().flatten().copied().collect()
    }

    /// Number of false alarms.
    pub fn false_alarms(&self) -> usize {
        self.false_alarm_times_s.len()
    }

    /// Exposure in hours.
    pub fn exposure_h(&self) -> f64 {
        self.exposure_s / 3600.0
    }

    /// Fraction of events detected; `None` when the trial has no event.
    pub fn detection_fraction(&self) -> Option<f64> {
        let total = self.events_total();
        (total > 0).then(|| self.events_detected() as f64 / total as f64)
    }

    /// False alarms per hour of exposure; `None` when there is no exposure.
    pub fn false_alarms_per_h(&self) -> Option<f64> {
        (self.exposure_s > 0.0).then(|| self.false_alarms() as f64 / self.exposure_h())
    }

    /// Exact two-sided interval on the false-alarm rate of this trial, per
    /// hour (Garwood 1936, from `echobench_stats`). Pooling across trials
    /// adds counts and exposures first and calls the same function.
    ///
    /// # Errors
    /// When there is no exposure or `confidence` is not in (0, 1).
    pub fn false_alarms_per_h_interval(
        &self,
        confidence: f64,
    ) -> Result<echobench_stats::Interval, echobench_stats::StatsError> {
        echobench_stats::garwood_interval(self.false_alarms() as u64, self.exposure_h(), confidence)
    }
}

/// What one frame did to the alarm logic.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum AlarmStep {
    /// No onset at this frame.
    Quiet,
    /// An onset that counts as an alarm, at `t_s`.
    Counted {
        /// Onset time, seconds.
        t_s: f64,
    },
    /// An onset swallowed by the hold of an earlier alarm, at `t_s`.
    Suppressed {
        /// Onset time, seconds.
        t_s: f64,
    },
    /// A condition that stayed on for a whole hold on noise frames, counted again at `t_s`.
    Recounted {
        /// Time of the re-count, seconds.
        t_s: f64,
    },
}

fn hold_allows(t_s: f64, last_counted_s: f64, hold_s: f64) -> bool {
    t_s >= last_counted_s + hold_s - HOLD_TOLERANCE_S
}

/// The alarm logic at one threshold as a streaming state machine: push the
/// scores in time order, one at a time.
///
/// This is the plain definition (a ring of the last `N` decisions); it is
/// what [`score_threshold`] runs and the reference the grid scorer is tested
/// against. It allocates its ring once, in [`AlarmTracker::new`].
#[derive(Debug, Clone)]
pub struct AlarmTracker {
    threshold: f64,
    hold_s: f64,
    recount_stuck: bool,
    m: usize,
    recent: Vec<bool>,
    next_slot: usize,
    true_count: usize,
    condition: bool,
    last_counted_s: f64,
    last_excused_s: f64,
}

impl AlarmTracker {
    /// A tracker in its switched-on state.
    pub fn new(logic: &AlarmLogic, threshold: f64) -> Self {
        AlarmTracker {
            threshold,
            hold_s: logic.hold_s,
            recount_stuck: logic.recount_stuck,
            m: logic.m_of_n.m(),
            recent: vec![false; logic.m_of_n.n()],
            next_slot: 0,
            true_count: 0,
            condition: false,
            last_counted_s: f64::NEG_INFINITY,
            last_excused_s: f64::NEG_INFINITY,
        }
    }

    /// Returns to the switched-on state.
    pub fn reset(&mut self) {
        self.recent.fill(false);
        self.next_slot = 0;
        self.true_count = 0;
        self.condition = false;
        self.last_counted_s = f64::NEG_INFINITY;
        self.last_excused_s = f64::NEG_INFINITY;
    }

    /// Feeds one frame that is not noise-only time (no re-count can happen).
    pub fn push(&mut self, score: Score) -> AlarmStep {
        self.push_frame(score, false)
    }

    /// Whether the alarm condition holds after the last frame pushed.
    pub fn is_on(&self) -> bool {
        self.condition
    }

    /// Feeds one frame; `noise_frame` says it lies outside every window and ignored
    /// interval, where a stuck condition is re-counted (when the logic does that).
    pub fn push_frame(&mut self, score: Score, noise_frame: bool) -> AlarmStep {
        let decision = score.value >= self.threshold;
        if let Some(slot) = self.recent.get_mut(self.next_slot) {
            let leaving = std::mem::replace(slot, decision);
            self.true_count = self.true_count + usize::from(decision) - usize::from(leaving);
            self.next_slot = (self.next_slot + 1) % self.recent.len();
        }
        let condition = self.true_count >= self.m;
        let rising = condition && !self.condition;
        self.condition = condition;
        if condition && !noise_frame && score.t_s.is_finite() {
            self.last_excused_s = score.t_s;
        }
        let stuck = condition && !rising && self.recount_stuck && noise_frame;
        if stuck
            && score.t_s.is_finite()
            && hold_allows(
                score.t_s,
                self.last_counted_s.max(self.last_excused_s),
                self.hold_s,
            )
        {
            self.last_counted_s = score.t_s;
            AlarmStep::Recounted { t_s: score.t_s }
        } else if !rising || !score.t_s.is_finite() {
            AlarmStep::Quiet
        } else if hold_allows(score.t_s, self.last_counted_s, self.hold_s) {
            self.last_counted_s = score.t_s;
            AlarmStep::Counted { t_s: score.t_s }
        } else {
            AlarmStep::Suppressed { t_s: score.t_s }
        }
    }
}

/// Scores one trial at one threshold: the plain per-threshold loop.
///
/// `trace` must be in time order (as `Detector::process` emits it).
pub fn score_threshold(
    trace: &[Score],
    truth: &TrialTruth,
    logic: &AlarmLogic,
    threshold: f64,
) -> TrialEventScore {
    let mut result = TrialEventScore::empty(threshold, truth);
    let mut tracker = AlarmTracker::new(logic, threshold);
    let mut previous_ns = 0i64;
    for &score in trace {
        // Linear searches on purpose: this is the obvious version.
        let in_window = |t_s: f64| truth.events.iter().position(|e| e.window.contains(t_s));
        let ignored = truth.ignored.iter().any(|w| w.contains(score.t_s));
        let noise_frame = score.t_s.is_finite() && in_window(score.t_s).is_none() && !ignored;
        match tracker.push_frame(score, noise_frame) {
            AlarmStep::Quiet => {}
            AlarmStep::Suppressed { .. } => result.suppressed_onsets += 1,
            AlarmStep::Counted { t_s } => result.record_counted(truth, in_window(t_s), t_s),
            AlarmStep::Recounted { t_s } => result.record_recount(t_s),
        }
        if let Some(now_ns) = frame_ns(score.t_s) {
            if tracker.is_on() && noise_frame {
                result.false_on_ns += now_ns.saturating_sub(previous_ns).max(0) as u64;
            }
            previous_ns = now_ns;
        }
    }
    result
}

/// A frame time in whole nanoseconds (`None` when it is not finite).
fn frame_ns(t_s: f64) -> Option<i64> {
    t_s.is_finite().then(|| (t_s * 1e9).round() as i64)
}

/// Scores one trial at every threshold of a grid in a single pass over the
/// trace (see the module doc). Results come in the order of `thresholds`,
/// which need not be sorted; each equals [`score_threshold`] at that threshold.
///
/// `trace` must be in time order (as `Detector::process` emits it).
pub fn score_thresholds(
    trace: &[Score],
    truth: &TrialTruth,
    logic: &AlarmLogic,
    thresholds: &[f64],
) -> Vec<TrialEventScore> {
    let mut results: Vec<TrialEventScore> = thresholds
        .iter()
        .map(|&threshold| TrialEventScore::empty(threshold, truth))
        .collect();
    // NaN thresholds are never reached: their results stay empty.
    let mut order: Vec<usize> = (0..thresholds.len())
        .filter(|&i| !thresholds[i].is_nan())
        .collect();
    order.sort_by(|&a, &b| thresholds[a].total_cmp(&thresholds[b]));
    let sorted: Vec<f64> = order.iter().map(|&i| thresholds[i]).collect();
    let mut last_counted_s = vec![f64::NEG_INFINITY; sorted.len()];
    // Last frame each threshold's condition was on inside a window or ignored interval.
    let mut last_excused_s = vec![f64::NEG_INFINITY; sorted.len()];

    let mut statistic = MOfNStatistic::new(logic.m_of_n);
    let mut previous = f64::NAN;
    // False-on time per sorted threshold as a difference array: a noise frame adds its
    // duration to every threshold the statistic reaches, a prefix of the sorted grid.
    let mut false_on_ns = vec![0i64; sorted.len() + 1];
    let mut previous_ns = 0i64;
    for score in trace {
        let current = statistic.push(score.value);
        let before = std::mem::replace(&mut previous, current);
        if !score.t_s.is_finite() {
            continue;
        }
        let t_s = score.t_s;
        let event = truth.event_at(t_s);
        let noise_frame = event.is_none() && !truth.is_ignored(t_s);
        // Thresholds at which the condition holds now: θ <= current, a prefix.
        let on = if current.is_nan() {
            0
        } else {
            sorted.partition_point(|&theta| theta <= current)
        };
        let now_ns = frame_ns(t_s).unwrap_or(previous_ns);
        if noise_frame && on > 0 {
            let step = now_ns.saturating_sub(previous_ns).max(0);
            false_on_ns[0] += step;
            false_on_ns[on] -= step;
        }
        previous_ns = now_ns;
        // Rising edge for θ in (before, current]; none unless the statistic rose.
        let first = if current.is_nan() || current <= before {
            on
        } else if before.is_nan() {
            0
        } else {
            sorted.partition_point(|&theta| theta <= before)
        };
        if logic.recount_stuck && noise_frame {
            // Conditions that were already on: a stuck alarm re-counted per hold.
            for ((slot, last_s), excused_s) in order[..first]
                .iter()
                .zip(&mut last_counted_s[..first])
                .zip(&last_excused_s[..first])
            {
                if hold_allows(t_s, last_s.max(*excused_s), logic.hold_s) {
                    *last_s = t_s;
                    results[*slot].record_recount(t_s);
                }
            }
        } else if !noise_frame {
            for excused_s in &mut last_excused_s[..on] {
                *excused_s = t_s;
            }
        }
        for (slot, last_s) in order[first..on].iter().zip(&mut last_counted_s[first..on]) {
            let result = &mut results[*slot];
            if hold_allows(t_s, *last_s, logic.hold_s) {
                *last_s = t_s;
                result.record_counted(truth, event, t_s);
            } else {
                result.suppressed_onsets += 1;
            }
        }
    }
    let mut running = 0i64;
    for (slot, step) in order.iter().zip(&false_on_ns) {
        running += step;
        results[*slot].false_on_ns = running.max(0) as u64;
    }
    results
}

/// For each false-alarm time, the sources of the nuisance intervals active
/// then, without repeats, in the order of `nuisances`; an empty list means the
/// false alarm has no nuisance to blame (noise alone).
///
/// A nuisance `[start, end]` counts as active over `[start, end + lag_s]`:
/// detectors integrate over a frame and smooth, so an alarm can come a little
/// after the nuisance stopped. A negative or NaN `lag_s` is taken as 0.
pub fn attribute_false_alarms<T: Clone + PartialEq>(
    false_alarm_times_s: &[f64],
    nuisances: &[(Interval, T)],
    lag_s: f64,
) -> Vec<Vec<T>> {
    let lag_s = if lag_s > 0.0 { lag_s } else { 0.0 };
    false_alarm_times_s
        .iter()
        .map(|&t_s| {
            let mut sources: Vec<T> = Vec::new();
            for (interval, source) in nuisances {
                let active = t_s >= interval.start_s() && t_s <= interval.end_s() + lag_s;
                if active && !sources.contains(source) {
                    sources.push(source.clone());
                }
            }
            sources
        })
        .collect()
}

/// False alarms per second from independent frame exceedances with
/// probability `p` at `frame_rate_hz`, under a non-retriggerable hold of
/// `hold_s`.
///
/// Renewal argument (docs/reference/event-scoring.md#e6): after a counted alarm the next `h − 1`
/// frames are suppressed, then the wait for an exceedance is geometric with
/// mean `1/p` frames, so the mean spacing is `h − 1 + 1/p` frames and the rate
/// `r / (h − 1 + 1/p)`. `h = H·r` when the hold is a whole number of frames
/// (r = 20 Hz, p = 1e-3, H = 5 s → 65.514 FA/h); otherwise `h` is the number
/// of frame slots the hold covers, `⌈H·r⌉`, and at least 1 (a hold shorter
/// than a frame suppresses nothing), which is what the scorer does. With the
/// scorer's rising edges on independent frames the exact spacing is
/// `h − 2 + 1/p + 1/(1−p)` frames for `h ≥ 2` (after the hold, one free frame,
/// then the wait for a 0 followed by a 1), `p/(1−p)` frames more: negligible
/// for rare exceedances.
///
/// `None` when `frame_rate_hz` is not finite and positive, `p` is not in
/// `[0, 1]` or `hold_s` is not finite and non-negative.
pub fn fa_rate_with_hold(frame_rate_hz: f64, p: f64, hold_s: f64) -> Option<f64> {
    let valid = frame_rate_hz.is_finite()
        && frame_rate_hz > 0.0
        && (0.0..=1.0).contains(&p)
        && hold_s.is_finite()
        && hold_s >= 0.0;
    if !valid {
        return None;
    }
    let hold_frames = ((hold_s - HOLD_TOLERANCE_S) * frame_rate_hz)
        .ceil()
        .max(1.0);
    Some(frame_rate_hz / (hold_frames - 1.0 + 1.0 / p))
}

#[cfg(test)]
mod tests {
    use super::*;
    use echobench_core::seed::mix64;

    fn interval(start_s: f64, end_s: f64) -> Interval {
        Interval::new(start_s, end_s).expect("valid test interval")
    }

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol
    }

    /// A trace with frame `k` at `k / rate_hz` seconds carrying `values[k]`.
    fn trace_from(rate_hz: f64, values: &[f64]) -> Vec<Score> {
        values
            .iter()
            .enumerate()
            .map(|(k, &value)| Score {
                t_s: k as f64 / rate_hz,
                value,
            })
            .collect()
    }

    /// SplitMix64 counter stream (Steele, Lea & Flood 2014) on the core mixer:
    /// seeded and deterministic. The harness crate has no rand dependency.
    struct Counter(u64);
    impl Counter {
        fn next_u64(&mut self) -> u64 {
            self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
            mix64(self.0)
        }
        fn uniform(&mut self) -> f64 {
            (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
        }
        fn below(&mut self, n: u64) -> u64 {
            self.next_u64() % n
        }
    }

    const CV24_EVENTS: [(f64, f64); 5] = [
        (100.0, 130.0),
        (500.0, 520.0),
        (1000.0, 1040.0),
        (2000.0, 2010.0),
        (2500.0, 2506.0),
    ];
    const CV24_ONSETS: [f64; 12] = [
        50.0, 52.0, 99.8, 103.0, 125.0, 502.0, 1003.5, 1500.0, 1503.0, 1520.0, 2011.0, 3000.0,
    ];

    fn cv24_truth() -> TrialTruth {
        let events: Vec<Interval> = CV24_EVENTS.iter().map(|&(a, b)| interval(a, b)).collect();
        TrialTruth::new(&events, 3600.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap()
    }

    /// The CV24 raw onsets as a 10 Hz score trace over the hour: each onset
    /// starts a pulse of `pulse_frames` frames of score 1.0, else 0.
    fn cv24_trace(pulse_frames: usize) -> Vec<Score> {
        let rate_hz = 10.0;
        let mut values = vec![0.0; 36_001];
        for onset_s in CV24_ONSETS {
            let k = (onset_s * rate_hz).round() as usize;
            for value in values.iter_mut().skip(k).take(pulse_frames) {
                *value = 1.0;
            }
        }
        trace_from(rate_hz, &values)
    }

    #[test]
    fn cv24_worked_example() {
        // docs/reference/event-scoring.md#e7, check value cv24 [C: worked by hand and by an
        // independent scorer], tolerance 1e-6.
        let truth = cv24_truth();
        let logic = AlarmLogic::new(5.0, MOfN::SINGLE).unwrap();
        for pulse_frames in [1, 3] {
            let trace = cv24_trace(pulse_frames);
            let score = score_threshold(&trace, &truth, &logic, 0.5);
            let grid = score_thresholds(&trace, &truth, &logic, &[0.5]);
            assert_eq!(grid, vec![score.clone()]);

            assert_eq!(score.events_total(), 5);
            assert_eq!(score.events_detected(), 4);
            assert_eq!(score.detection_fraction(), Some(0.8));
            let expected_latencies = [-0.2, 2.0, 3.5, 11.0];
            let latencies = score.latencies_s();
            assert_eq!(latencies.len(), 4);
            for (got, want) in latencies.iter().zip(expected_latencies) {
                assert!(close(*got, want, 1e-6), "{latencies:?}");
            }
            assert_eq!(score.detection_latency_s[4], None, "E5 missed");
            assert_eq!(
                score.false_alarm_times_s,
                vec![50.0, 1500.0, 1520.0, 3000.0]
            );
            assert_eq!(score.suppressed_onsets, 3, "52.0, 103.0, 1503.0");
            assert_eq!(score.retriggers, 1, "125.0 in E1");
            assert!(close(score.exposure_h(), 0.967083, 1e-6));
            let rate = score.false_alarms_per_h().unwrap();
            assert!(close(rate, 4.136148, 1e-6), "{rate}");
            // Exact 95 % interval (Garwood 1936) through echobench-stats.
            let ci = score.false_alarms_per_h_interval(0.95).unwrap();
            assert!(close(ci.low, 1.126961, 1e-6), "{ci:?}");
            assert!(close(ci.high, 10.590182, 1e-6), "{ci:?}");
        }
        // Without the hold: 6 false alarms (docs/reference/event-scoring.md#e7), 103.0 and 125.0
        // both re-trigger E1.
        let no_hold = AlarmLogic::new(0.0, MOfN::SINGLE).unwrap();
        let score = score_threshold(&cv24_trace(1), &truth, &no_hold, 0.5);
        assert_eq!(score.false_alarms(), 6);
        assert_eq!(score.events_detected(), 4);
        assert_eq!(score.retriggers, 2);
        assert_eq!(score.suppressed_onsets, 0);
        // Dividing by the full hour would give 4.0 (docs/reference/event-scoring.md#e7): the
        // exposure is what makes it 4.136.
        assert!(close(4.0 / (truth.duration_s() / 3600.0), 4.0, 1e-12));
    }

    #[test]
    fn cv25_formula() {
        // docs/reference/event-scoring.md#e6, check value cv25 [C]: r = 20 Hz, p = 1e-3, H = 5 s →
        // 65.514 FA/h (72 without the hold); tolerance 1e-3 relative.
        let per_h = 3600.0 * fa_rate_with_hold(20.0, 1e-3, 5.0).unwrap();
        assert!(close(per_h, 65.514, 65.514 * 1e-3), "{per_h}");
        assert!(close(per_h, 72000.0 / 1099.0, 1e-9));
        // No hold: one alarm per exceedance, FA/h = 3600·r·p (Richards 2014 §6.5.1).
        let per_h = 3600.0 * fa_rate_with_hold(20.0, 1e-3, 0.0).unwrap();
        assert!(close(per_h, 72.0, 1e-9), "{per_h}");
        assert_eq!(fa_rate_with_hold(20.0, 0.0, 5.0), Some(0.0));
        assert_eq!(fa_rate_with_hold(0.0, 1e-3, 5.0), None);
        assert_eq!(fa_rate_with_hold(20.0, f64::NAN, 5.0), None);
        assert_eq!(fa_rate_with_hold(20.0, 1e-3, -1.0), None);
    }

    #[test]
    fn cv25_monte_carlo() {
        // Bernoulli(p) frames at 20 Hz for 200 h through the whole alarm path
        // (threshold → rising edges → hold), as in docs/reference/event-scoring.md#e6 [MC: 65.85
        // over 200 h]. Tolerance 4.5 σ of a renewal count (renewal CLT,
        // var N ≈ T·var X / (E X)³: Cox 1962, Renewal Theory, from memory),
        // which must itself be within ±5 %.
        let (rate_hz, p, hold_s) = (20.0, 1e-3, 5.0);
        let logic = AlarmLogic::new(hold_s, MOfN::SINGLE).unwrap();
        let mut tracker = AlarmTracker::new(&logic, 0.5);
        let mut noise = Counter(0x0c25_0c25);
        let frames: u64 = 200 * 3600 * 20;
        let mut counted = 0u64;
        for k in 0..frames {
            let value = if noise.uniform() < p { 1.0 } else { 0.0 };
            let step = tracker.push(Score {
                t_s: k as f64 / rate_hz,
                value,
            });
            if let AlarmStep::Counted { .. } = step {
                counted += 1;
            }
        }
        let hours = frames as f64 / rate_hz / 3600.0;
        let expected_per_h = 3600.0 * fa_rate_with_hold(rate_hz, p, hold_s).unwrap();
        let spacing_mean = 99.0 + 1.0 / p;
        let spacing_sd = (1.0 - p).sqrt() / p;
        let expected_count = expected_per_h * hours;
        let sigma_rel = spacing_sd / spacing_mean / expected_count.sqrt();
        assert!(4.5 * sigma_rel < 0.05, "run too short: {sigma_rel}");
        let measured_per_h = counted as f64 / hours;
        let relative = (measured_per_h - expected_per_h) / expected_per_h;
        assert!(
            relative.abs() <= 4.5 * sigma_rel,
            "measured {measured_per_h} FA/h vs {expected_per_h} ({relative:+.4}, σ {sigma_rel:.4})"
        );
    }

    #[test]
    fn hold_of_a_fraction_of_frames_covers_whole_frames() {
        // r = 10 Hz, H = 0.35 s: the hold covers ⌈3.5⌉ = 4 frame slots.
        // With p = 0.5 the rising-edge spacing h − 2 + 1/p + 1/(1−p) is 6
        // frames for h = 4 but 5.5 for h = 3.5, so a short Monte Carlo through
        // the scorer tells them apart and ties the scorer to the h that
        // fa_rate_with_hold uses. Spacing variance p/(1−p)² + (1−p)/p² = 4
        // (two geometric waits, common practice); tolerance 4.5 σ.
        let (rate_hz, p, hold_s) = (10.0, 0.5, 0.35);
        let formula = fa_rate_with_hold(rate_hz, p, hold_s).unwrap();
        assert!(close(formula, 10.0 / (4.0 - 1.0 + 2.0), 1e-12), "{formula}");
        let hold_frames = rate_hz / formula + 1.0 - 1.0 / p;
        let spacing_mean = hold_frames - 2.0 + 1.0 / p + 1.0 / (1.0 - p);
        let logic = AlarmLogic::new(hold_s, MOfN::SINGLE).unwrap();
        let mut tracker = AlarmTracker::new(&logic, 0.5);
        let mut noise = Counter(0x35);
        let frames = 600_000u64;
        let mut counted = 0u64;
        for k in 0..frames {
            let value = if noise.uniform() < p { 1.0 } else { 0.0 };
            let t_s = k as f64 / rate_hz;
            if let AlarmStep::Counted { .. } = tracker.push(Score { t_s, value }) {
                counted += 1;
            }
        }
        let expected = frames as f64 / spacing_mean;
        let sigma = (frames as f64 * 4.0 / spacing_mean.powi(3)).sqrt();
        assert!(
            (counted as f64 - expected).abs() <= 4.5 * sigma,
            "{counted} alarms vs {expected} ± {sigma}"
        );
        assert!(4.5 * sigma < (frames as f64 / 5.5 - expected) / 2.0);
    }

    #[test]
    fn hold_suppresses_exactly_h_minus_one_frames() {
        let quiet = MatchWindow::new(0.0, 0.0).unwrap();
        let pulses = |rate_hz: f64, frames: usize, every: usize| {
            let values: Vec<f64> = (0..frames)
                .map(|k| if k % every == 0 { 1.0 } else { 0.0 })
                .collect();
            trace_from(rate_hz, &values)
        };
        // 4 Hz, hold 1.25 s = 5 frames (exact in binary). Onsets every 5
        // frames fall exactly on t + H: all count.
        let truth = TrialTruth::new(&[], 5.0, quiet).unwrap();
        let logic = AlarmLogic::new(1.25, MOfN::SINGLE).unwrap();
        let score = score_threshold(&pulses(4.0, 20, 5), &truth, &logic, 0.5);
        assert_eq!(score.false_alarm_times_s, vec![0.0, 1.25, 2.5, 3.75]);
        assert_eq!(score.suppressed_onsets, 0);
        // Onsets every 4 frames: every second one falls inside a hold.
        let score = score_threshold(&pulses(4.0, 20, 4), &truth, &logic, 0.5);
        assert_eq!(score.false_alarm_times_s, vec![0.0, 2.0, 4.0]);
        assert_eq!(score.suppressed_onsets, 2);
        // Non-retriggerable: suppressed onsets do not extend the hold. Onsets
        // every 3 frames count at 0, 6, 12, ... (a retriggerable latch would
        // count only the first).
        let truth = TrialTruth::new(&[], 7.5, quiet).unwrap();
        let score = score_threshold(&pulses(4.0, 30, 3), &truth, &logic, 0.5);
        assert_eq!(score.false_alarm_times_s, vec![0.0, 1.5, 3.0, 4.5, 6.0]);
        assert_eq!(score.suppressed_onsets, 5);
        // 10 Hz, hold 0.3 s = 3 frames: k/10 + 0.3 rounds above (k + 3)/10
        // for about a third of the frames; onsets every 3 frames must all
        // count (the rounding tolerance), so the hold is exactly 3 frames.
        let truth = TrialTruth::new(&[], 60.0, quiet).unwrap();
        let logic = AlarmLogic::new(0.3, MOfN::SINGLE).unwrap();
        let score = score_threshold(&pulses(10.0, 600, 3), &truth, &logic, 0.5);
        assert_eq!(score.false_alarms(), 200);
        assert_eq!(score.suppressed_onsets, 0);
    }

    /// Onset frames of the alarm condition for 0/1 decisions under `rule`.
    fn onset_frames(decisions: &[u8], rule: MOfN) -> Vec<usize> {
        let values: Vec<f64> = decisions.iter().map(|&d| f64::from(d)).collect();
        let trace = trace_from(1.0, &values);
        let logic = AlarmLogic::new(0.0, rule).unwrap();
        let mut tracker = AlarmTracker::new(&logic, 0.5);
        let from_tracker: Vec<usize> = trace
            .iter()
            .enumerate()
            .filter(|(_, s)| matches!(tracker.push(**s), AlarmStep::Counted { .. }))
            .map(|(k, _)| k)
            .collect();
        let truth = TrialTruth::new(
            &[],
            values.len() as f64,
            MatchWindow::new(0.0, 0.0).unwrap(),
        )
        .unwrap();
        let from_grid: Vec<usize> = score_thresholds(&trace, &truth, &logic, &[0.5])[0]
            .false_alarm_times_s
            .iter()
            .map(|&t| t as usize)
            .collect();
        assert_eq!(from_tracker, from_grid);
        from_tracker
    }

    #[test]
    fn m_of_n_behaviour() {
        let two_of_three = MOfN::new(2, 3).unwrap();
        // An isolated exceedance never makes 2-of-3.
        assert_eq!(
            onset_frames(&[0, 1, 0, 0, 1, 0, 0, 0, 1], two_of_three),
            Vec::<usize>::new()
        );
        // 1,0,1 is 2 of 3: the condition rises on the second exceedance
        // (frame 2), falls at 3, rises again at 7 and holds while the window
        // keeps two.
        assert_eq!(
            onset_frames(&[1, 0, 1, 0, 0, 0, 1, 1, 1, 1, 0], two_of_three),
            vec![2, 7]
        );
        // Before the trace the frames count as false: 1,1 at the start is an
        // onset at frame 1.
        assert_eq!(onset_frames(&[1, 1, 0, 0, 0], two_of_three), vec![1]);
        // 3-of-3 needs three in a row.
        let three_of_three = MOfN::new(3, 3).unwrap();
        assert_eq!(
            onset_frames(&[1, 1, 0, 1, 1, 1, 1, 0, 1, 1, 1], three_of_three),
            vec![5, 10]
        );
        // 1-of-4 stretches an exceedance over 4 frames: close exceedances merge.
        let one_of_four = MOfN::new(1, 4).unwrap();
        assert_eq!(
            onset_frames(&[1, 0, 0, 1, 0, 0, 0, 0, 1], one_of_four),
            vec![0, 8]
        );
        // 1-of-1 is the plain rising edge.
        assert_eq!(
            onset_frames(&[1, 1, 0, 1, 0, 1], MOfN::SINGLE),
            vec![0, 3, 5]
        );
    }

    #[test]
    fn m_of_n_delays_the_cv24_detections_by_one_frame() {
        // 2-of-3 with 3-frame pulses: every onset moves one frame (0.1 s) later.
        let truth = cv24_truth();
        let logic = AlarmLogic::new(5.0, MOfN::new(2, 3).unwrap()).unwrap();
        let score = score_threshold(&cv24_trace(3), &truth, &logic, 0.5);
        let latencies = score.latencies_s();
        for (got, want) in latencies.iter().zip([-0.1, 2.1, 3.6, 11.1]) {
            assert!(close(*got, want, 1e-9), "{latencies:?}");
        }
        assert_eq!(score.false_alarms(), 4);
        // 1-frame pulses never make 2-of-3: nothing at all.
        let score = score_threshold(&cv24_trace(1), &truth, &logic, 0.5);
        assert_eq!(score.events_detected() + score.false_alarms(), 0);
    }

    fn random_case(seed: u64) -> (Vec<Score>, TrialTruth, AlarmLogic, Vec<f64>) {
        let mut rng = Counter(seed);
        let rate_hz = [1.0, 8.0, 10.0, 20.0][rng.below(4) as usize];
        let frames = rng.below(600) as usize;
        let levels = 1 + rng.below(12);
        let nan_chance = [0.0, 0.02][rng.below(2) as usize];
        let values: Vec<f64> = (0..frames)
            .map(|_| {
                if rng.uniform() < nan_chance {
                    f64::NAN
                } else if levels <= 4 {
                    rng.below(levels) as f64
                } else {
                    // Continuous scores: no ties, many crossings.
                    rng.uniform() * levels as f64
                }
            })
            .collect();
        let trace = trace_from(rate_hz, &values);
        let duration_s = frames as f64 / rate_hz;
        let events: Vec<Interval> = (0..rng.below(6))
            .map(|_| {
                let start = rng.uniform() * duration_s;
                interval(start, start + rng.uniform() * 10.0)
            })
            .collect();
        let window = MatchWindow::new(rng.uniform(), 3.0 * rng.uniform()).unwrap();
        let still: Vec<Interval> = (0..rng.below(3))
            .map(|_| {
                let start = rng.uniform() * duration_s;
                interval(start, start + rng.uniform() * 8.0)
            })
            .collect();
        let truth = TrialTruth::new(&events, duration_s, window)
            .unwrap()
            .ignoring(&still);
        let rules = [(1, 1), (2, 3), (3, 3), (1, 4), (3, 5), (4, 7)];
        let (m, n) = rules[rng.below(rules.len() as u64) as usize];
        let hold_s = [0.0, 0.25, 1.0, 3.7][rng.below(4) as usize];
        let mut logic = AlarmLogic::new(hold_s, MOfN::new(m, n).unwrap()).unwrap();
        if rng.below(2) == 1 {
            logic = logic.recounting_stuck_alarms();
        }
        let mut thresholds: Vec<f64> = (0..40)
            .map(|_| {
                if levels <= 4 {
                    rng.below(levels + 1) as f64 - 0.5 * rng.below(2) as f64
                } else {
                    rng.uniform() * levels as f64
                }
            })
            .collect();
        // Exact score values (ties), the extremes, a NaN and a duplicate.
        thresholds.extend(values.iter().take(5).copied());
        thresholds.extend([f64::NEG_INFINITY, f64::INFINITY, f64::NAN, 0.0, -0.0]);
        if let Some(&first) = thresholds.first() {
            thresholds.push(first);
        }
        (trace, truth, logic, thresholds)
    }

    fn same_score(a: &TrialEventScore, b: &TrialEventScore) -> bool {
        a.threshold.to_bits() == b.threshold.to_bits()
            && a.detection_latency_s == b.detection_latency_s
            && a.false_alarm_times_s == b.false_alarm_times_s
            && a.retriggers == b.retriggers
            && a.suppressed_onsets == b.suppressed_onsets
            && a.ignored_onsets == b.ignored_onsets
            && a.stuck_recounts == b.stuck_recounts
            && a.false_on_ns == b.false_on_ns
            && a.exposure_s == b.exposure_s
    }

    #[test]
    fn grid_equals_per_threshold_loop_on_random_traces() {
        let mut busy_cases = 0;
        for seed in 0..300u64 {
            let (trace, truth, logic, thresholds) = random_case(mix64(seed ^ 0x6e1d));
            let grid = score_thresholds(&trace, &truth, &logic, &thresholds);
            assert_eq!(grid.len(), thresholds.len());
            for (fast, &threshold) in grid.iter().zip(&thresholds) {
                let slow = score_threshold(&trace, &truth, &logic, threshold);
                assert!(
                    same_score(fast, &slow),
                    "seed {seed}, threshold {threshold}, {logic:?}\nfast {fast:?}\nslow {slow:?}"
                );
            }
            if grid
                .iter()
                .any(|s| s.events_detected() > 0 && s.false_alarms() > 0)
            {
                busy_cases += 1;
            }
        }
        // The comparison must have exercised detections and false alarms.
        assert!(busy_cases > 100, "{busy_cases}");
    }

    #[test]
    fn the_random_cases_exercise_recounts_ignored_onsets_and_false_on_time() {
        let (mut recounts, mut ignored, mut on) = (0, 0, 0);
        for seed in 0..300u64 {
            let (trace, truth, logic, thresholds) = random_case(mix64(seed ^ 0x6e1d));
            for r in score_thresholds(&trace, &truth, &logic, &thresholds) {
                recounts += r.stuck_recounts;
                ignored += r.ignored_onsets;
                on += usize::from(r.false_on_ns > 0);
            }
        }
        assert!(
            recounts > 100 && ignored > 100 && on > 100,
            "{recounts} {ignored} {on}"
        );
    }

    #[test]
    fn a_stuck_alarm_is_charged_once_per_hold_and_its_false_on_time_reported() {
        // Worked by hand: frames every 0.1 s over 60 s, score 1 throughout, threshold
        // 0.5, hold 2 s, no events. Plain logic: one onset at t = 0, one false alarm.
        // Re-counting: an alarm at 0, 2, 4, ..., 58 s = 30 false alarms (60 s / 2 s).
        // False-on time: every frame is on; the first adds 0 s (it is at t = 0), each
        // of the other 600 adds 0.1 s: 60 s.
        let trace = trace_from(10.0, &[1.0; 601]);
        let truth = TrialTruth::new(&[], 60.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap();
        let plain = AlarmLogic::new(2.0, MOfN::SINGLE).unwrap();
        assert_eq!(
            score_threshold(&trace, &truth, &plain, 0.5).false_alarms(),
            1
        );
        let recounting = plain.recounting_stuck_alarms();
        let r = score_threshold(&trace, &truth, &recounting, 0.5);
        assert_eq!(r.false_alarms(), 31, "0, 2, ..., 60 s");
        assert_eq!(r.stuck_recounts, 30);
        assert_eq!(r.false_on_ns, 60_000_000_000);
        assert_eq!(
            score_thresholds(&trace, &truth, &recounting, &[0.5]),
            vec![r]
        );
        // With an event at 20–30 s (closed window 19.5–32 s), re-counts stop in the
        // window and resume a whole hold after its last frame (32.0 s): 0, 2, ..., 18
        // (10 alarms), then 34, 36, ..., 60 (14); the onset at 0 is the only rising
        // edge, so the event is missed. False-on: frames 0.1–19.4 s (19.4 s) and
        // 32.1–60 s (280 frames, 28 s): 47.4 s.
        let truth = TrialTruth::new(
            &[interval(20.0, 30.0)],
            60.0,
            MatchWindow::new(0.5, 2.0).unwrap(),
        )
        .unwrap();
        let r = score_threshold(&trace, &truth, &recounting, 0.5);
        assert_eq!(r.false_alarms(), 24, "{:?}", r.false_alarm_times_s);
        assert_eq!(r.events_detected(), 0);
        assert!(
            close(r.false_on_ns as f64 * 1e-9, 47.4, 1e-6),
            "{}",
            r.false_on_ns
        );
        // A detector that lets go 1.5 s after the window (less than a hold): detected, not
        // charged; its 15 frames on noise time (32.1–33.5 s) are 1.5 s of false-on time.
        let mut late = vec![0.0; 601];
        late[200..=335].fill(1.0);
        let r = score_threshold(&trace_from(10.0, &late), &truth, &recounting, 0.5);
        assert_eq!((r.events_detected(), r.false_alarms()), (1, 0));
        assert!(
            close(r.false_on_ns as f64 * 1e-9, 1.5, 1e-6),
            "{}",
            r.false_on_ns
        );
        // Ignored (present, not moving) time: neither false alarms nor exposure.
        let truth = TrialTruth::new(&[], 60.0, MatchWindow::new(0.5, 2.0).unwrap())
            .unwrap()
            .ignoring(&[interval(0.0, 30.0)]);
        let r = score_threshold(&trace, &truth, &recounting, 0.5);
        assert!(close(truth.exposure_s(), 30.0, 1e-9));
        assert_eq!(r.ignored_onsets, 1, "the onset at 0 s");
        assert_eq!(
            r.false_alarms(),
            15,
            "32, 34, ..., 60 s: a hold after the last ignored frame"
        );
    }

    #[test]
    fn empty_trace() {
        let truth = cv24_truth();
        let logic = AlarmLogic::new(5.0, MOfN::new(2, 3).unwrap()).unwrap();
        let score = score_threshold(&[], &truth, &logic, 0.5);
        assert_eq!(score.events_total(), 5);
        assert_eq!(score.events_detected(), 0);
        assert_eq!(score.false_alarms(), 0);
        assert_eq!(score.false_alarms_per_h(), Some(0.0));
        assert!(close(score.exposure_s, 3600.0 - 118.5, 1e-9));
        assert_eq!(
            score_thresholds(&[], &truth, &logic, &[0.0, 1.0]),
            vec![
                TrialEventScore::empty(0.0, &truth),
                TrialEventScore::empty(1.0, &truth)
            ]
        );
        assert!(score_thresholds(&[], &truth, &logic, &[]).is_empty());
    }

    #[test]
    fn no_events() {
        let truth = TrialTruth::new(&[], 60.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap();
        assert_eq!(truth.exposure_s(), 60.0);
        let values: Vec<f64> = (0..600)
            .map(|k| if k % 100 == 7 { 2.0 } else { 0.0 })
            .collect();
        let trace = trace_from(10.0, &values);
        let logic = AlarmLogic::new(1.0, MOfN::SINGLE).unwrap();
        let score = score_threshold(&trace, &truth, &logic, 1.0);
        assert_eq!(score.events_total(), 0);
        assert_eq!(score.detection_fraction(), None);
        assert_eq!(score.false_alarms(), 6);
        assert!(close(score.false_alarms_per_h().unwrap(), 6.0 * 60.0, 1e-9));
        // A trial of zero length has no exposure and no rate.
        let zero = TrialTruth::new(&[], 0.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap();
        let nothing = score_threshold(&[], &zero, &logic, 1.0);
        assert_eq!(nothing.false_alarms_per_h(), None);
        assert!(nothing.false_alarms_per_h_interval(0.95).is_err());
    }

    #[test]
    fn events_at_the_trial_edges() {
        // Event from t = 0 with the detector above threshold from the first
        // frame: the onset at the first frame detects it (latency 0), and the
        // window is clipped to the trial for the exposure. Event reaching the
        // end: detected at the last frame; its window runs past the end.
        let events = [interval(0.0, 3.0), interval(18.0, 20.0)];
        let truth = TrialTruth::new(&events, 20.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap();
        assert!(close(truth.exposure_s(), 20.0 - 5.0 - 2.5, 1e-12));
        let mut values = vec![0.0; 201];
        values[..10].fill(1.0);
        values[200] = 1.0;
        let trace = trace_from(10.0, &values);
        let logic = AlarmLogic::new(5.0, MOfN::SINGLE).unwrap();
        let score = score_threshold(&trace, &truth, &logic, 1.0);
        assert_eq!(score.detection_latency_s, vec![Some(0.0), Some(2.0)]);
        assert_eq!(score.false_alarms(), 0);
        assert_eq!(
            score_thresholds(&trace, &truth, &logic, &[1.0]),
            vec![score]
        );
        // An event entirely before the trial costs no exposure (its window is
        // clipped away), stays in the total and is missed.
        let early = [interval(-10.0, -5.0)];
        let truth = TrialTruth::new(&early, 20.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap();
        assert_eq!(truth.exposure_s(), 20.0);
        let score = score_threshold(&trace, &truth, &logic, 1.0);
        assert_eq!(score.detection_latency_s, vec![None]);
        assert_eq!(score.false_alarm_times_s, vec![0.0, 20.0]);
    }

    #[test]
    fn windows_are_closed() {
        // Event [10, 20], window [9.5, 22]: onsets exactly on either window
        // end match; 0.1 s outside they are false alarms.
        let truth = TrialTruth::new(
            &[interval(10.0, 20.0)],
            40.0,
            MatchWindow::new(0.5, 2.0).unwrap(),
        )
        .unwrap();
        let logic = AlarmLogic::new(0.0, MOfN::SINGLE).unwrap();
        for (frame, detected) in [(95, true), (220, true), (94, false), (221, false)] {
            let mut values = vec![0.0; 400];
            values[frame] = 1.0;
            let trace = trace_from(10.0, &values);
            let slow = score_threshold(&trace, &truth, &logic, 1.0);
            let fast = score_thresholds(&trace, &truth, &logic, &[1.0]);
            assert_eq!(fast, vec![slow.clone()]);
            assert_eq!(slow.events_detected() == 1, detected, "frame {frame}");
            assert_eq!(slow.false_alarms() == 1, !detected, "frame {frame}");
        }
    }

    #[test]
    fn alarm_latched_before_the_window_is_a_false_alarm_and_a_miss() {
        // docs/reference/event-scoring.md#e3, as its worked example decides: the score is
        // above threshold from 5 s, before the window [9.5, 22] opens, and
        // stays there: one false alarm at 5 s, the event needs a new onset.
        let events = [interval(10.0, 20.0)];
        let truth = TrialTruth::new(&events, 40.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap();
        let values: Vec<f64> = (0..400)
            .map(|k| if (50..250).contains(&k) { 1.0 } else { 0.0 })
            .collect();
        let trace = trace_from(10.0, &values);
        let logic = AlarmLogic::new(5.0, MOfN::SINGLE).unwrap();
        let score = score_threshold(&trace, &truth, &logic, 1.0);
        assert_eq!(score.false_alarm_times_s, vec![5.0]);
        assert_eq!(score.detection_latency_s, vec![None]);
        // A dip and a new onset inside the window detects it.
        let mut values = values;
        values[120] = 0.0;
        let score = score_threshold(&trace_from(10.0, &values), &truth, &logic, 1.0);
        assert_eq!(score.false_alarm_times_s, vec![5.0]);
        let latency = score.detection_latency_s[0].unwrap();
        assert!(close(latency, 2.1, 1e-9), "{latency}");
    }

    #[test]
    fn overlapping_windows_merge_into_one_event() {
        // [10, 20] and [21, 30] with τ_post = 2 s: windows [9.5, 22] and
        // [20.5, 32] overlap → one event with onset 10 s; [50, 55] stays apart.
        // Out of time order on purpose: the earliest onset must win.
        let events = [
            interval(50.0, 55.0),
            interval(10.0, 20.0),
            interval(21.0, 30.0),
        ];
        let truth = TrialTruth::new(&events, 100.0, MatchWindow::new(0.5, 2.0).unwrap()).unwrap();
        assert_eq!(truth.events().len(), 2);
        assert_eq!(truth.events()[0].onset_s, 10.0);
        assert_eq!(truth.events()[0].truth_events, 2);
        assert_eq!(truth.events()[0].window, interval(9.5, 32.0));
        assert_eq!(truth.events()[1].onset_s, 50.0);
        assert!(close(truth.exposure_s(), 100.0 - 22.5 - 7.5, 1e-12));
        let mut values = vec![0.0; 1000];
        values[220] = 1.0; // 22.0 s: inside the merged window, latency 12 s
        values[280] = 1.0; // 28.0 s: re-trigger of the same event
        let trace = trace_from(10.0, &values);
        let logic = AlarmLogic::new(1.0, MOfN::SINGLE).unwrap();
        let score = score_threshold(&trace, &truth, &logic, 1.0);
        assert_eq!(score.detection_latency_s, vec![Some(12.0), None]);
        assert_eq!(score.retriggers, 1);
        assert_eq!(score.false_alarms(), 0);
    }

    #[test]
    fn nan_scores_and_thresholds_never_alarm() {
        let truth = TrialTruth::new(&[], 10.0, MatchWindow::new(0.0, 0.0).unwrap()).unwrap();
        let trace = trace_from(10.0, &[f64::NAN, 1.0, f64::NAN, 1.0, 1.0]);
        let logic = AlarmLogic::new(0.0, MOfN::SINGLE).unwrap();
        let score = score_threshold(&trace, &truth, &logic, 0.5);
        assert_eq!(score.false_alarm_times_s, vec![0.1, 0.3]);
        let at_minus_inf = score_threshold(&trace, &truth, &logic, f64::NEG_INFINITY);
        assert_eq!(at_minus_inf.false_alarm_times_s, vec![0.1, 0.3]);
        assert_eq!(
            score_threshold(&trace, &truth, &logic, f64::NAN).false_alarms(),
            0
        );
        let grid = score_thresholds(&trace, &truth, &logic, &[f64::NAN, 0.5]);
        assert_eq!(grid[0].false_alarms(), 0);
        assert_eq!(grid[1].false_alarm_times_s, vec![0.1, 0.3]);
        // A frame at a non-finite time cannot be placed: its onset is dropped.
        let odd = [Score {
            t_s: f64::NAN,
            value: 1.0,
        }];
        assert_eq!(score_threshold(&odd, &truth, &logic, 0.5).false_alarms(), 0);
        assert_eq!(
            score_thresholds(&odd, &truth, &logic, &[0.5])[0].false_alarms(),
            0
        );
    }

    #[test]
    fn tracker_reset_starts_over() {
        let logic = AlarmLogic::new(100.0, MOfN::new(2, 2).unwrap()).unwrap();
        let mut tracker = AlarmTracker::new(&logic, 0.5);
        let one = |t_s| Score { t_s, value: 1.0 };
        assert_eq!(tracker.push(one(0.0)), AlarmStep::Quiet);
        assert_eq!(tracker.push(one(1.0)), AlarmStep::Counted { t_s: 1.0 });
        tracker.reset();
        assert_eq!(tracker.push(one(2.0)), AlarmStep::Quiet);
        assert_eq!(tracker.push(one(3.0)), AlarmStep::Counted { t_s: 3.0 });
    }

    #[test]
    fn bad_parameters_are_refused() {
        assert!(AlarmLogic::new(-1.0, MOfN::SINGLE).is_err());
        assert!(AlarmLogic::new(f64::NAN, MOfN::SINGLE).is_err());
        assert!(MatchWindow::new(-0.1, 1.0).is_err());
        assert!(MatchWindow::new(0.1, f64::INFINITY).is_err());
        let window = MatchWindow::new(0.5, 2.0).unwrap();
        assert!(TrialTruth::new(&[], f64::NAN, window).is_err());
        assert!(TrialTruth::new(&[], -3.0, window).is_err());
        let huge = [interval(0.0, f64::MAX)];
        let wide = MatchWindow::new(0.5, f64::MAX).unwrap();
        let error = TrialTruth::new(&huge, 10.0, wide).unwrap_err();
        assert_eq!(error.param, "truth event");
        let message = MOfN::new(5, 3).unwrap_err().to_string();
        assert!(message.contains("m_of_n.m = 5"), "{message}");
    }

    #[test]
    fn false_alarms_attributed_to_active_nuisances() {
        let nuisances = [
            (interval(0.0, 10.0), "fan"),
            (interval(5.0, 6.0), "door"),
            (interval(8.0, 9.0), "fan"),
            (interval(20.0, 30.0), "curtain"),
        ];
        let attributed = attribute_false_alarms(&[5.5, 12.0, 10.4, 31.0, 40.0], &nuisances, 0.5);
        assert_eq!(
            attributed,
            vec![vec!["fan", "door"], vec![], vec!["fan"], vec![], vec![]]
        );
        // Without lag, 10.4 s is after the fan stopped; a NaN lag is no lag.
        assert_eq!(
            attribute_false_alarms(&[10.4, 30.0], &nuisances, f64::NAN),
            vec![vec![], vec!["curtain"]]
        );
    }
}
