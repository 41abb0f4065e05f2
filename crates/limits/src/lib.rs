//! What echobench will attempt: limits applied at the door, the same for `check` and `run`.
//!
//! Key design decision: every limit is a pure function of the suite as loaded (plus the
//! command-line switches), so `echobench check` and `echobench run` call the same
//! [`door_problems`] and `check` refuses exactly what `run` would refuse, before any trial
//! starts. A suite's workload is counted from the suite itself (trials × variants ×
//! duration) and compared with caps stated here; recordings are read through once, in
//! blocks, so a bad sample or a cut data chunk is named with its file before a run spends
//! hours reaching it.

#![deny(missing_docs)]

use echobench_suite::{CaptureSource, Suite};
use std::path::{Path, PathBuf};

/// Most trials (test and calibration, every scene variant) one suite may ask for.
pub const MAX_TRIALS: u64 = 1_000_000;

/// Most signal one suite may ask for, seconds (10 000 hours).
pub const MAX_SIGNAL_S: f64 = 10_000.0 * 3600.0;

/// Most detector configurations in one suite.
pub const MAX_DETECTORS: usize = 64;

/// Memory the runner's kept data may need at most, bytes (8 GiB); see [`Workload::memory_bytes`].
pub const MAX_MEMORY_BYTES: u64 = 8 << 30;

/// How many problems a list shows before it says how many more there are.
pub const SHOWN_PROBLEMS: usize = 100;

/// What a suite asks of the runner, counted from the suite.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Workload {
    /// Test trials, every scene variant.
    pub test_trials: u64,
    /// Calibration trials, every scene variant.
    pub calibration_trials: u64,
    /// Seconds of signal in the test trials.
    pub test_signal_s: f64,
    /// Seconds of signal in the calibration trials.
    pub calibration_signal_s: f64,
    /// Input samples (frames) of the calibration trials whose score traces the runner keeps
    /// (the pilot: the first `PILOT_TRIALS` of each variant).
    pub calibration_samples: f64,
    /// Detector configurations.
    pub detectors: u64,
    /// Operating points a test trial is tallied at (chosen and, with a reference, pinned).
    pub operating_points: u64,
}

impl Workload {
    /// Counts the workload of `suite` (the whole suite: a shard runs every calibration
    /// trial and a share of the test trials, so the whole is the bound).
    #[must_use]
    pub fn of(suite: &Suite) -> Workload {
        let mut w = Workload {
            detectors: suite.detectors.len() as u64,
            // Each target rate is an operating point; a reference pins as many again.
            operating_points: 2 * suite.scoring.target_false_alarms_per_hour.len() as u64,
            ..Workload::default()
        };
        for scene in &suite.scenes {
            for variant in &scene.variants {
                let duration_s = variant.scene.duration_s;
                let rate_hz = variant.scene.sensor.sample_rate_hz;
                w.test_trials = w.test_trials.saturating_add(scene.trials);
                w.calibration_trials = w
                    .calibration_trials
                    .saturating_add(scene.calibration_trials);
                w.test_signal_s += scene.trials as f64 * duration_s;
                w.calibration_signal_s += scene.calibration_trials as f64 * duration_s;
                // Only the pilot's score traces are kept (the runner's streamed calibration).
                let kept = scene
                    .calibration_trials
                    .min(echobench_harness::runner::PILOT_TRIALS);
                w.calibration_samples += kept as f64 * duration_s * rate_hz;
            }
        }
        w
    }

    /// Trials in all.
    #[must_use]
    pub fn trials(&self) -> u64 {
        self.test_trials.saturating_add(self.calibration_trials)
    }

    /// Signal in all, seconds.
    #[must_use]
    pub fn signal_s(&self) -> f64 {
        self.test_signal_s + self.calibration_signal_s
    }

    /// The most memory the runner's kept data can take, bytes: the pilot calibration score
    /// traces until the threshold grid is cut (a [`echobench_core::Score`] per input sample
    /// per detector, the most a detector scoring once per input sample emits), one
    /// [`echobench_harness::runner::TrialOutcome`] per test trial per operating point per
    /// detector, and a job entry (a trial key and indices) per trial. The per-thread
    /// working memory of a trial (blocks of samples, detector state) comes on top and
    /// does not grow with the suite.
    #[must_use]
    pub fn memory_bytes(&self) -> f64 {
        let score = std::mem::size_of::<echobench_core::Score>() as f64;
        let outcome = std::mem::size_of::<echobench_harness::runner::TrialOutcome>() as f64;
        let job = (std::mem::size_of::<echobench_core::seed::StreamKey>() + 4 * 8) as f64;
        self.calibration_samples * self.detectors as f64 * score
            + self.test_trials as f64
                * self.detectors as f64
                * self.operating_points.max(1) as f64
                * outcome
            + self.trials() as f64 * job
    }

    /// Every cap this workload exceeds, each as a sentence naming the figure and the cap.
    #[must_use]
    pub fn problems(&self) -> Vec<String> {
        let mut problems = Vec::new();
        if self.trials() > MAX_TRIALS {
            problems.push(format!(
                "the suite asks for {} trials ({} test + {} calibration, over every scene \
                 variant); the cap is {MAX_TRIALS}",
                self.trials(),
                self.test_trials,
                self.calibration_trials
            ));
        }
        if self.signal_s() > MAX_SIGNAL_S {
            problems.push(format!(
                "the suite asks for {:.0} h of signal (trials × variants × duration); the cap \
                 is {:.0} h",
                self.signal_s() / 3600.0,
                MAX_SIGNAL_S / 3600.0
            ));
        }
        if self.detectors > MAX_DETECTORS as u64 {
            problems.push(format!(
                "the suite has {} detectors; the cap is {MAX_DETECTORS}",
                self.detectors
            ));
        }
        if self.memory_bytes() > MAX_MEMORY_BYTES as f64 {
            problems.push(format!(
                "the run could keep up to {:.1} GiB of scores and tallies ({:.0} calibration \
                 samples × {} detectors, {} test trials); the cap is {} GiB: fewer \
                 calibration trials or detectors",
                self.memory_bytes() / f64::from(1u32 << 30),
                self.calibration_samples,
                self.detectors,
                self.test_trials,
                MAX_MEMORY_BYTES >> 30
            ));
        }
        problems
    }
}

/// Every distinct recording a suite reads, with how to read it.
fn recordings(suite: &Suite) -> Vec<(PathBuf, &CaptureSource)> {
    let mut out: Vec<(PathBuf, &CaptureSource)> = Vec::new();
    for scene in &suite.scenes {
        if let Some(capture) = &scene.capture {
            for trial in capture.test.iter().chain(&capture.calibration) {
                if !out.iter().any(|(p, _)| *p == trial.path) {
                    out.push((trial.path.clone(), capture));
                }
            }
        }
    }
    out
}

/// What reading a recording through found: its frames, and warnings naming the file (a
/// data chunk cut short is read as far as it goes, as a run reads it).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Scanned {
    /// Whole frames read.
    pub frames: u64,
    /// Each warning, naming the file.
    pub warnings: Vec<String>,
}

/// Reads one recording through in blocks (constant memory). A data chunk cut short is a
/// warning naming the file; a sample that is not a number, an empty data chunk, or a read
/// failure is a problem naming the file.
///
/// # Errors
/// The problems, as sentences naming the file.
pub fn scan_recording(path: &Path, capture: &CaptureSource) -> Result<Scanned, String> {
    let mut reader = echobench_capture::CaptureReader::open(path, &capture.format, capture.adc)
        .map_err(|e| e.to_string())?;
    let warnings = reader
        .warnings()
        .iter()
        .map(|w| format!("{}: {w}", path.display()))
        .collect();
    let mut problems = Vec::new();
    if reader.frames() == 0 {
        problems.push(format!(
            "{}: the recording holds no samples (its data chunk is empty or cut before the \
             first frame)",
            path.display()
        ));
    }
    let mut block = Vec::new();
    let mut frames = 0u64;
    loop {
        block.clear();
        match reader.read_block(&mut block, 1 << 15) {
            Ok(0) => break,
            Ok(n) => frames += n as u64,
            Err(e) => {
                problems.push(e.to_string());
                break;
            }
        }
    }
    if problems.is_empty() {
        Ok(Scanned { frames, warnings })
    } else {
        Err(problems.join("; "))
    }
}

/// Everything that keeps `run` from starting on `suite`: caps exceeded, unreadable or bad
/// recordings, and external programs without `allow_exec`, each as a sentence. `check`
/// calls it with `allow_exec` true and reports [`needs_exec`] as a note. (A recording cut
/// short is only a warning, which the suite loader already gives with the file's name.)
#[must_use]
pub fn door_problems(suite: &Suite, allow_exec: bool) -> Vec<String> {
    let mut problems = Workload::of(suite).problems();
    for (path, capture) in recordings(suite) {
        if let Err(problem) = scan_recording(&path, capture) {
            problems.push(problem);
        }
    }
    if !allow_exec {
        let external = needs_exec(suite);
        if !external.is_empty() {
            problems.push(format!(
                "detector{} {} run{} an outside program: that needs --allow-exec",
                if external.len() == 1 { "" } else { "s" },
                external.join(", "),
                if external.len() == 1 { "s" } else { "" }
            ));
        }
    }
    problems
}

/// Labels of the detectors that would run an outside program (the `external` plugin).
#[must_use]
pub fn needs_exec(suite: &Suite) -> Vec<String> {
    suite
        .detectors
        .iter()
        .filter(|d| d.plugin == "external")
        .map(|d| d.label.clone())
        .collect()
}

/// `lines` with at most [`SHOWN_PROBLEMS`] kept and, when more were cut, a last line
/// saying how many.
#[must_use]
pub fn cut_list(lines: Vec<String>) -> Vec<String> {
    let total = lines.len();
    if total <= SHOWN_PROBLEMS {
        return lines;
    }
    let mut kept: Vec<String> = lines.into_iter().take(SHOWN_PROBLEMS).collect();
    kept.push(format!(
        "… and {} more problems ({total} in all; the first {SHOWN_PROBLEMS} are shown)",
        total - SHOWN_PROBLEMS
    ));
    kept
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_default_suite_is_counted_from_its_file_and_passes_every_cap() {
        let plugins = echobench_detectors::builtin();
        let suite = echobench_suite::default_suite(&plugins).unwrap();
        let w = Workload::of(&suite);
        // Recount by hand from the suite: trials × variants × duration, scene by scene.
        let (mut trials, mut signal_s) = (0u64, 0.0f64);
        for scene in &suite.scenes {
            for variant in &scene.variants {
                trials += scene.trials + scene.calibration_trials;
                signal_s +=
                    (scene.trials + scene.calibration_trials) as f64 * variant.scene.duration_s;
            }
        }
        assert_eq!(w.trials(), trials);
        assert!((w.signal_s() - signal_s).abs() < 1e-6 * signal_s);
        assert_eq!(w.detectors, suite.detectors.len() as u64);
        assert!(w.problems().is_empty(), "{:?}", w.problems());
        assert!(w.memory_bytes() < MAX_MEMORY_BYTES as f64);
    }

    #[test]
    fn each_cap_is_named_when_exceeded_and_not_before() {
        let at_caps = Workload {
            test_trials: MAX_TRIALS / 2,
            calibration_trials: MAX_TRIALS / 2,
            test_signal_s: MAX_SIGNAL_S / 2.0,
            calibration_signal_s: MAX_SIGNAL_S / 2.0,
            calibration_samples: 0.0,
            detectors: MAX_DETECTORS as u64,
            operating_points: 0,
        };
        // At the caps, only memory can object; with no calibration samples and one
        // outcome per trial it stays below 8 GiB.
        assert!(at_caps.memory_bytes() < MAX_MEMORY_BYTES as f64);
        assert!(at_caps.problems().is_empty(), "{:?}", at_caps.problems());
        let over = Workload {
            test_trials: MAX_TRIALS / 2 + 1,
            test_signal_s: MAX_SIGNAL_S,
            detectors: MAX_DETECTORS as u64 + 1,
            calibration_samples: 1e9,
            ..at_caps
        };
        let problems = over.problems().join("\n");
        assert!(problems.contains("1000001 trials"), "{problems}");
        assert!(problems.contains("15000 h of signal"), "{problems}");
        assert!(problems.contains("65 detectors"), "{problems}");
        assert!(problems.contains("GiB of scores"), "{problems}");
    }

    #[test]
    fn long_lists_keep_a_hundred_lines_and_count_the_rest() {
        let short: Vec<String> = (0..SHOWN_PROBLEMS).map(|i| i.to_string()).collect();
        assert_eq!(cut_list(short.clone()), short);
        let long: Vec<String> = (0..397_771).map(|i| i.to_string()).collect();
        let cut = cut_list(long);
        assert_eq!(cut.len(), SHOWN_PROBLEMS + 1);
        assert_eq!(cut[99], "99");
        assert!(
            cut[100].contains("397671 more problems (397771 in all"),
            "{}",
            cut[100]
        );
    }
}
