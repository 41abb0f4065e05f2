//! Cutting a long capture into trials of equal length.

use crate::labels::Label;
use echobench_core::Interval;

/// How to cut a capture into trials.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TrialCut {
    /// Length of every trial, s.
    pub trial_s: f64,
    /// Start-to-start spacing, s; `None` = `trial_s` (back to back). Less
    /// than `trial_s` makes trials overlap (they then share events, so their
    /// counts are not independent); more leaves gaps unused.
    pub hop_s: Option<f64>,
    /// Time skipped at the start of the capture, s (the module settling after power-up, say).
    pub skip_s: f64,
}

impl TrialCut {
    /// Back-to-back trials of `trial_s` seconds from the start.
    pub fn back_to_back(trial_s: f64) -> Self {
        TrialCut {
            trial_s,
            hop_s: None,
            skip_s: 0.0,
        }
    }
}

/// A label as seen from inside one trial.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialLabel {
    /// When, s from the start of the trial.
    pub interval: Interval,
    /// The label's kind.
    pub kind: String,
    /// Line of the label in its file (0 for one made in code).
    pub line: u64,
    /// The label began before the trial (its onset is not in this trial, so a latency is meaningless).
    pub began_before: bool,
    /// The label goes on after the trial ends.
    pub ends_after: bool,
}

/// One trial window of a capture.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialWindow {
    /// Trial number, from 0.
    pub index: usize,
    /// First frame in the capture.
    pub start_frame: u64,
    /// Frames in the trial (the same for every trial).
    pub frames: u64,
    /// Start in capture time, s (`start_frame / rate`).
    pub start_s: f64,
    /// Length, s (`frames / rate`).
    pub duration_s: f64,
    /// Labels clipped to the trial and shifted to trial time, in order.
    pub labels: Vec<TrialLabel>,
}

/// Why a capture could not be cut.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CutError {
    /// A setting out of range.
    #[error("trial cut: `{name}` = {value}: {message}")]
    Setting {
        /// Which setting.
        name: &'static str,
        /// The value given.
        value: f64,
        /// What is accepted.
        message: String,
    },
    /// Not even one trial fits.
    #[error(
        "the capture ({capture_s} s after skipping {skip_s} s) is shorter than one trial ({trial_s} s)"
    )]
    TooShort {
        /// Capture length, s.
        capture_s: f64,
        /// Time skipped at the start, s.
        skip_s: f64,
        /// Trial length, s.
        trial_s: f64,
    },
}

fn frames_of(name: &'static str, seconds: f64, rate_hz: f64, min: u64) -> Result<u64, CutError> {
    let bad = |message: &str| CutError::Setting {
        name,
        value: seconds,
        message: message.to_string(),
    };
    if !seconds.is_finite() || seconds < 0.0 {
        return Err(bad("must be a finite, non-negative time"));
    }
    let frames = (seconds * rate_hz).round();
    if frames < min as f64 {
        return Err(bad(&format!(
            "is less than {min} sample(s) at {rate_hz} Hz"
        )));
    }
    if frames >= u64::MAX as f64 {
        return Err(bad("is too long"));
    }
    Ok(frames as u64)
}

/// Cuts a capture of `capture_frames` frames at `sample_rate_hz` into trials.
///
/// Trial `k` starts at frame `skip + k·hop` and holds `round(trial_s·rate)`
/// frames (times are rounded to whole frames). A last trial that would run
/// past the end of the capture is dropped, so every trial has the same
/// length. A label cut by a trial boundary stays a target interval in each
/// trial it reaches, clipped to that trial and marked
/// ([`TrialLabel::began_before`], [`TrialLabel::ends_after`]); a label that
/// only touches a trial at an instant is not carried into it.
///
/// ```
/// use echobench_capture::{cut_trials, Label, TrialCut};
/// use echobench_core::Interval;
/// let labels = vec![Label::new(Interval::new(8.0, 12.0).unwrap(), "walk")];
/// let trials = cut_trials(25_000, 1000.0, &TrialCut::back_to_back(10.0), &labels).unwrap();
/// assert_eq!(trials.len(), 2); // 5 s left over: dropped
/// assert_eq!(trials[0].labels[0].interval, Interval::new(8.0, 10.0).unwrap());
/// assert_eq!(trials[1].labels[0].interval, Interval::new(0.0, 2.0).unwrap());
/// assert!(trials[1].labels[0].began_before);
/// ```
///
/// # Errors
/// A rate, length, hop or skip that is not a finite positive number (or a
/// trial under one frame), or a capture too short for one trial.
pub fn cut_trials(
    capture_frames: u64,
    sample_rate_hz: f64,
    cut: &TrialCut,
    labels: &[Label],
) -> Result<Vec<TrialWindow>, CutError> {
    if !(sample_rate_hz.is_finite() && sample_rate_hz > 0.0) {
        return Err(CutError::Setting {
            name: "sample_rate_hz",
            value: sample_rate_hz,
            message: "must be a finite, positive rate".to_string(),
        });
    }
    let trial_frames = frames_of("trial_s", cut.trial_s, sample_rate_hz, 1)?;
    let hop_frames = match cut.hop_s {
        Some(hop_s) => frames_of("hop_s", hop_s, sample_rate_hz, 1)?,
        None => trial_frames,
    };
    let skip_frames = frames_of("skip_s", cut.skip_s, sample_rate_hz, 0)?;
    let usable = capture_frames.saturating_sub(skip_frames);
    if usable < trial_frames {
        return Err(CutError::TooShort {
            capture_s: capture_frames as f64 / sample_rate_hz,
            skip_s: cut.skip_s,
            trial_s: cut.trial_s,
        });
    }
    let count = (usable - trial_frames) / hop_frames + 1;
    let duration_s = trial_frames as f64 / sample_rate_hz;
    let mut trials = Vec::with_capacity(usize::try_from(count).unwrap_or(0).min(1 << 20));
    for index in 0..count {
        let start_frame = skip_frames + index * hop_frames;
        let start_s = start_frame as f64 / sample_rate_hz;
        let end_s = (start_frame + trial_frames) as f64 / sample_rate_hz;
        let clipped = labels
            .iter()
            .filter(|l| l.interval.end_s() > start_s && l.interval.start_s() < end_s)
            .filter_map(|l| {
                let from = l.interval.start_s().max(start_s) - start_s;
                let to = (l.interval.end_s().min(end_s) - start_s).min(duration_s);
                Interval::new(from.max(0.0), to)
                    .ok()
                    .map(|interval| TrialLabel {
                        interval,
                        kind: l.kind.clone(),
                        line: l.line,
                        began_before: l.interval.start_s() < start_s,
                        ends_after: l.interval.end_s() > end_s,
                    })
            })
            .collect();
        trials.push(TrialWindow {
            index: index as usize,
            start_frame,
            frames: trial_frames,
            start_s,
            duration_s,
            labels: clipped,
        });
    }
    Ok(trials)
}
