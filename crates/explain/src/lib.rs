//! Why a detector missed an event or raised a false alarm: one trial of a run, re-created from
//! its seed and drawn with the detector's score, the operating threshold, the alarm state and
//! the truth laid under a spectrogram; and the report's gallery of the worst misses and false
//! alarms of every detector.
//!
//! **Design decision: the trial is re-created, never stored.** A run keeps only tallies (a few
//! integers per trial), so a picture of a trial cannot come from the run folder. It comes from
//! the trial's key instead: the suite as run (`suite.yaml`), the run's seed (from
//! `tallies.json`), the scene and sweep point and the trial index give the same random streams,
//! hence the same samples ([`echobench_harness::runner::trial_key`] and the harness's
//! `TrialSignal`, which the runner itself uses); the detector is built from the suite's
//! parameters and fed the same blocks, and the alarm logic is the harness's, at the operating
//! threshold the run chose for that product ([`echobench_harness::runner::DetectorTally`]).
//! Each explanation compares its counts with the run's own record of the trial
//! (`OperatingTally::trials`), so a picture that does not show what the run counted says so.
//!
//! A trial is named by a key that the gallery prints and the command line takes back:
//! `SCENE[@SWEEP]/TRIAL`, e.g. `office-corridor-range@6/3` ([`trial_key_text`]).
//!
//! The gallery is chosen from the tallies alone, deterministically: per product and detector,
//! at the first operating point, the test trials with the most missed events (ties: scene
//! order, then trial index) and those with the most false alarms (same ties), `per_detector`
//! of each, at most [`MAX_GALLERY_PICTURES`] pictures in all ([`select_gallery`]).
#![deny(missing_docs)]

mod alarms;
mod gallery;
mod key;
mod picture;
mod replay;

pub use gallery::{
    gallery_sections, select_gallery, GalleryPick, GallerySelection, PickKind,
    GALLERY_PER_DETECTOR, MAX_GALLERY_PICTURES,
};
pub use key::{trial_key_text, TrialRef, CALIBRATION_PREFIX};

use echobench_core::detector::DetectorPlugin;
use echobench_core::Interval;
use echobench_harness::events::{TrialEventScore, TrialTruth};
use echobench_harness::runner::{
    alarm_logic, DetectorTally, Tallies, TrialOutcome, SCHEMA_VERSION,
};
use echobench_harness::summary::rate_label;
use echobench_report::plot::format_number;
use echobench_suite::Suite;
use echobench_suite::{
    load_suite_text, EmbeddedSource, FolderSource, SceneSource, DEFAULT_SUITE_FILE_NAME,
    DEFAULT_SUITE_SOURCE, DEFAULT_SUITE_YAML,
};
use std::path::Path;
use std::sync::Arc;

/// Why a trial cannot be explained. Every variant says what to change.
#[derive(Debug, thiserror::Error)]
pub enum ExplainError {
    /// The run folder cannot be read.
    #[error("{0}")]
    Folder(String),
    /// The suite as run cannot be read again.
    #[error("the suite of the run cannot be read again:\n{0}")]
    Suite(String),
    /// The trial key names no trial of the suite.
    #[error("trial `{key}`: {message}")]
    Key {
        /// The key as given.
        key: String,
        /// What is wrong, with what would be accepted.
        message: String,
    },
    /// The detector label, product or target rate names nothing of the run.
    #[error("detector `{label}`: {message}")]
    Detector {
        /// The label as given.
        label: String,
        /// What is wrong, with what would be accepted.
        message: String,
    },
    /// The trial could not be re-created, or the detector failed on it.
    #[error("trial `{key}`: {message}")]
    Trial {
        /// The trial's key.
        key: String,
        /// What went wrong.
        message: String,
    },
    /// The picture could not be drawn.
    #[error("cannot draw the picture: {0}")]
    Picture(String),
}

/// A run as the explanations need it: the suite as run (with the run's seed) and its tallies.
#[derive(Debug, Clone)]
pub struct ExplainRun {
    /// The suite, read again from the run's `suite.yaml`, with the run's seed.
    pub suite: Suite,
    /// The run's tallies.
    pub tallies: Tallies,
}

impl ExplainRun {
    /// A run from a suite and the tallies it gave (the seed is taken from the tallies, since
    /// `run --seed` overrides the suite's).
    ///
    /// # Errors
    /// Tallies of another suite, or of another schema.
    pub fn new(mut suite: Suite, tallies: Tallies) -> Result<ExplainRun, ExplainError> {
        if tallies.schema != SCHEMA_VERSION {
            return Err(ExplainError::Folder(format!(
                "the tallies have schema {}, this echobench reads schema {SCHEMA_VERSION}: re-run the suite",
                tallies.schema
            )));
        }
        if tallies.suite != suite.name {
            return Err(ExplainError::Folder(format!(
                "the tallies are of suite `{}`, the suite is `{}`",
                tallies.suite, suite.name
            )));
        }
        suite.seed = tallies.seed;
        Ok(ExplainRun { suite, tallies })
    }

    /// Reads a run folder (checked complete by `echobench_run_folder::verify`): its
    /// `tallies.json` and `suite.yaml`.
    ///
    /// The suite's scene files are found as the run found them: the built-in files for the
    /// built-in default suite, the folder of `suite_file` when given (its text must be the
    /// run's `suite.yaml`), and otherwise the run folder itself (enough for a suite of inline
    /// scenes).
    ///
    /// # Errors
    /// An incomplete folder, unreadable tallies, a `suite_file` that is not the suite as run,
    /// or a suite that cannot be read again (e.g. scene files not found: pass `suite_file`).
    pub fn load(
        dir: &Path,
        suite_file: Option<&Path>,
        plugins: &[Arc<dyn DetectorPlugin>],
    ) -> Result<ExplainRun, ExplainError> {
        echobench_run_folder::verify(dir, &["tallies.json", "suite.yaml"])
            .map_err(|e| ExplainError::Folder(e.to_string()))?;
        let read = |name: &str| {
            let path = dir.join(name);
            std::fs::read_to_string(&path)
                .map_err(|e| ExplainError::Folder(format!("{}: {e}", path.display())))
        };
        let tallies_text = read("tallies.json")?;
        let tallies: Tallies = serde_json::from_str(&tallies_text).map_err(|e| {
            ExplainError::Folder(format!("{}: {e}", dir.join("tallies.json").display()))
        })?;
        let suite_text = read("suite.yaml")?;
        Self::from_text(&suite_text, tallies, dir, suite_file, plugins)
    }

    /// A run from the text of its `suite.yaml` and its tallies (see [`ExplainRun::load`] for
    /// where scene files are found; `run_dir` is the run folder).
    ///
    /// # Errors
    /// As [`ExplainRun::load`].
    pub fn from_text(
        suite_text: &str,
        tallies: Tallies,
        run_dir: &Path,
        suite_file: Option<&Path>,
        plugins: &[Arc<dyn DetectorPlugin>],
    ) -> Result<ExplainRun, ExplainError> {
        let embedded = EmbeddedSource::default_suite();
        let folder;
        let (name, source, built_in): (String, &dyn SceneSource, bool) =
            if suite_text == DEFAULT_SUITE_YAML && suite_file.is_none() {
                (DEFAULT_SUITE_FILE_NAME.to_string(), &embedded, true)
            } else if let Some(file) = suite_file {
                let given = std::fs::read_to_string(file)
                    .map_err(|e| ExplainError::Folder(format!("{}: {e}", file.display())))?;
                if given != suite_text {
                    return Err(ExplainError::Folder(format!(
                    "{} is not the suite this run ran (its text differs from the run's suite.yaml)",
                    file.display()
                )));
                }
                folder = FolderSource::new(file.parent().unwrap_or_else(|| Path::new("")));
                (file.display().to_string(), &folder, false)
            } else {
                folder = FolderSource::new(run_dir);
                (
                    run_dir.join("suite.yaml").display().to_string(),
                    &folder,
                    false,
                )
            };
        let (mut suite, _warnings) = load_suite_text(&name, suite_text, source, plugins)
            .map_err(|report| {
                let mut text = report.to_string();
                if !built_in && suite_file.is_none() {
                    text.push_str(
                        "(scene files are read beside the suite file that was run: name it with --suite)",
                    );
                }
                ExplainError::Suite(text)
            })?;
        if built_in {
            suite.source = DEFAULT_SUITE_SOURCE.to_string();
        }
        ExplainRun::new(suite, tallies)
    }

    /// The tallies of `detector` on the product of scene `scene_index`.
    fn tally(&self, detector: &str, product: &str) -> Result<&DetectorTally, ExplainError> {
        self.tallies
            .detectors
            .iter()
            .find(|d| d.label == detector && d.product == product)
            .ok_or_else(|| {
                let labels: Vec<&str> = self
                    .tallies
                    .detectors
                    .iter()
                    .filter(|d| d.product == product)
                    .map(|d| d.label.as_str())
                    .collect();
                ExplainError::Detector {
                    label: detector.to_string(),
                    message: format!(
                        "not scored on product `{product}` in this run; its detectors are {}",
                        labels.join(", ")
                    ),
                }
            })
    }
}

/// Which trial to explain, and at which operating point.
#[derive(Debug, Clone, PartialEq)]
pub struct ExplainRequest {
    /// Detector label in the suite.
    pub detector: String,
    /// Trial key, `SCENE[@SWEEP]/TRIAL` ([`trial_key_text`]).
    pub trial: String,
    /// The product, when given: must be the product of the trial's scene.
    pub product: Option<String>,
    /// The target false-alarm rate whose operating threshold is used, per hour; `None` for the
    /// run's first (the one the ranking leads with).
    pub target_per_hour: Option<f64>,
}

/// One trial explained.
#[derive(Debug, Clone)]
pub struct Explanation {
    /// The product.
    pub product: String,
    /// Detector label.
    pub detector: String,
    /// The trial's key.
    pub key: String,
    /// The target rate of the operating point, per hour.
    pub target_per_hour: f64,
    /// The operating threshold.
    pub threshold: f64,
    /// What the alarm logic made of the scores at that threshold.
    pub score: TrialEventScore,
    /// For each false alarm, the nuisance sources active at its time.
    pub false_alarm_sources: Vec<Vec<String>>,
    /// The run's own record of this trial at that operating point (test trials of this shard).
    pub recorded: Option<TrialOutcome>,
    /// The picture, a self-contained SVG document.
    pub svg: String,
}

impl Explanation {
    /// What happened, in a few words: `missed 1 of 1 event`, `2 false alarms`, `detected 1 of
    /// 1 event, latency 0.42 s`, `no false alarm`.
    pub fn outcome(&self) -> String {
        outcome_words(&self.score)
    }

    /// A file name for the picture: `explain-DETECTOR-KEY.svg`, with `/` as `-` and any
    /// character other than letters, digits, `.`, `_`, `-` and `@` as `_`
    /// (`explain-energy-corridor@6-3.svg`).
    pub fn file_name(&self) -> String {
        picture_file_name(&self.detector, &self.key)
    }

    /// Whether the re-created trial gives the counts the run recorded (`None` when the run
    /// has no record of it: a calibration trial, or a test trial of another shard).
    pub fn matches_record(&self) -> Option<bool> {
        self.recorded.map(|r| {
            r.events as usize == self.score.events_total()
                && r.detected as usize == self.score.events_detected()
                && r.false_alarms as usize == self.score.false_alarms()
        })
    }

    /// The explanation as lines of text for a console: outcome, each event and false alarm
    /// with its time, and the comparison with the run's record.
    pub fn text(&self) -> String {
        let mut out = format!(
            "{} on {} ({}) at threshold {} (operating point for {}): {}\n",
            self.detector,
            self.key,
            self.product,
            format_number(self.threshold, 6),
            rate_label(self.target_per_hour),
            self.outcome()
        );
        for (i, latency) in self.score.detection_latency_s.iter().enumerate() {
            match latency {
                Some(l) => out.push_str(&format!(
                    "  event {}: detected, latency {} s\n",
                    i + 1,
                    format_number(*l, 3)
                )),
                None => out.push_str(&format!("  event {}: missed\n", i + 1)),
            }
        }
        for (t, sources) in self
            .score
            .false_alarm_times_s
            .iter()
            .zip(&self.false_alarm_sources)
        {
            out.push_str(&format!(
                "  false alarm at {} s{}\n",
                format_number(*t, 4),
                if sources.is_empty() {
                    " (no nuisance active)".to_string()
                } else {
                    format!(" while {} active", sources.join(", "))
                }
            ));
        }
        match (self.matches_record(), self.recorded) {
            (Some(true), _) => out.push_str("  the run recorded the same counts for this trial\n"),
            (Some(false), Some(r)) => out.push_str(&format!(
                "  warning: the run recorded {} of {} events detected and {} false alarms for this trial: the code or the scene files changed since the run\n",
                r.detected, r.events, r.false_alarms
            )),
            _ => out.push_str("  (the run holds no record of this trial: a calibration trial, or one of another shard)\n"),
        }
        out
    }
}

/// `explain-DETECTOR-KEY.svg` with unsafe characters replaced (see [`Explanation::file_name`]).
fn picture_file_name(detector: &str, key: &str) -> String {
    let safe = |text: &str| -> String {
        text.chars()
            .map(|c| match c {
                '/' => '-',
                c if c.is_ascii_alphanumeric() || matches!(c, '.' | '_' | '-' | '@') => c,
                _ => '_',
            })
            .collect()
    };
    format!("explain-{}-{}.svg", safe(detector), safe(key))
}

fn plural(n: usize, word: &str) -> String {
    format!("{n} {word}{}", if n == 1 { "" } else { "s" })
}

/// `missed 1 of 2 events, 1 false alarm`, `detected 1 of 1 event, latency 0.84 s`, ...
fn outcome_words(score: &TrialEventScore) -> String {
    let (events, detected) = (score.events_total(), score.events_detected());
    let false_alarms = score.false_alarms();
    let mut parts = Vec::new();
    if detected < events {
        parts.push(format!(
            "missed {} of {}",
            events - detected,
            plural(events, "event")
        ));
    } else if events > 0 {
        let latencies: Vec<String> = score
            .latencies_s()
            .iter()
            .map(|l| format!("{} s", format_number(*l, 3)))
            .collect();
        parts.push(format!(
            "detected {} of {}, latency {}",
            detected,
            plural(events, "event"),
            latencies.join(", ")
        ));
    }
    if false_alarms > 0 {
        let mut words = plural(false_alarms, "false alarm");
        if score.stuck_recounts > 0 {
            words.push_str(&format!(
                " ({} charged to an alarm left on)",
                score.stuck_recounts
            ));
        }
        parts.push(words);
    } else if events == 0 {
        parts.push("no false alarm".into());
    }
    parts.join(", ")
}

/// The operating point of `tally` for `target_per_hour` (the first when `None`).
fn operating_index(
    tally: &DetectorTally,
    target_per_hour: Option<f64>,
) -> Result<usize, ExplainError> {
    let available = || {
        tally
            .operating
            .iter()
            .map(|o| rate_label(o.target_per_hour))
            .collect::<Vec<_>>()
            .join(", ")
    };
    match target_per_hour {
        None if !tally.operating.is_empty() => Ok(0),
        None => Err(ExplainError::Detector {
            label: tally.label.clone(),
            message: "the run chose no operating point".into(),
        }),
        Some(rate) => tally
            .operating
            .iter()
            .position(|o| (o.target_per_hour / rate - 1.0).abs() < 1e-6)
            .ok_or_else(|| ExplainError::Detector {
                label: tally.label.clone(),
                message: format!(
                    "the run has no operating point for {}/h; it has {}",
                    format_number(rate, 6),
                    available()
                ),
            }),
    }
}

/// The run's record of a test trial at operating point `o`.
fn recorded(tally: &DetectorTally, suite: &Suite, at: TrialRef, o: usize) -> Option<TrialOutcome> {
    if at.calibration {
        return None;
    }
    let scene = &suite.scenes[at.scene_index];
    let sweep_point = scene.variants[at.variant_index].sweep_point;
    let variant = tally
        .variants
        .iter()
        .find(|v| v.scene == scene.id && v.sweep_point == sweep_point)?;
    let trials = &variant.operating.get(o)?.trials;
    trials
        .binary_search_by_key(&at.trial, |t| t.trial)
        .ok()
        .map(|i| trials[i])
}

/// A short stable hash (FNV-1a, 64 bits) of `text`, for ids that must differ between pictures.
fn id_hash(text: &str) -> String {
    let mut hash: u64 = 0xcbf2_9ce4_8422_2325;
    for byte in text.bytes() {
        hash ^= u64::from(byte);
        hash = hash.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{hash:016x}")
}

/// Explains one detector on one re-created trial (shared by [`explain_trial`] and the gallery).
fn explain_replayed(
    run: &ExplainRun,
    tally: &DetectorTally,
    o: usize,
    plugin_id: &str,
    at: TrialRef,
    replayed: &replay::Replayed,
    trace: &Result<Vec<echobench_core::Score>, String>,
) -> Result<Explanation, ExplainError> {
    let suite = &run.suite;
    let key = at.key(suite);
    let scores = trace.as_ref().map_err(|message| ExplainError::Trial {
        key: key.clone(),
        message: format!("detector `{}` failed: {message}", tally.label),
    })?;
    let (logic, window) = alarm_logic(suite).map_err(|e| ExplainError::Trial {
        key: key.clone(),
        message: e.to_string(),
    })?;
    let truth = TrialTruth::new(&replayed.truth.events, replayed.duration_s, window)
        .map_err(|e| ExplainError::Trial {
            key: key.clone(),
            message: e.to_string(),
        })?
        .ignoring(&replayed.truth.still);
    let point = &tally.operating[o];
    let alarms = alarms::replay_alarms(
        scores,
        &truth,
        &logic,
        point.threshold,
        &replayed.truth.nuisances,
    );
    let scene = &suite.scenes[at.scene_index];
    let variant = &scene.variants[at.variant_index];
    let headline = format!(
        "{}: {} on {key}",
        capitalised(&outcome_words(&alarms.score)),
        tally.label
    );
    let sweep = match (&scene.sweep_field, &variant.sweep_value) {
        (Some(field), Some(value)) => format!(", {field} = {value}"),
        _ => String::new(),
    };
    let facts = [
        format!(
            "product {} · detector {} ({plugin_id}) · {} trial {} of scene {}{sweep} · seed {}",
            tally.product,
            tally.label,
            if at.calibration { "calibration" } else { "test" },
            at.trial,
            scene.id,
            suite.seed,
        ),
        format!(
            "threshold {} = operating point for {} ({}) · hold {} s · {} · events matched from {} s before to {} s after",
            format_number(point.threshold, 6),
            rate_label(point.target_per_hour),
            point.rule.replace('_', " "),
            format_number(logic.hold_s(), 3),
            match suite.alarm.m_of_n {
                Some((m, n)) => format!("{m} of {n} frames"),
                None => "one frame".to_string(),
            },
            format_number(window.pre_s(), 3),
            format_number(window.post_s(), 3),
        ),
    ];
    let title = format!(
        "{}{} · {} trial {}",
        scene.id,
        variant
            .sweep_value
            .as_ref()
            .map_or_else(String::new, |v| format!(" @ {v}")),
        if at.calibration {
            "calibration"
        } else {
            "test"
        },
        at.trial
    );
    let suffix = id_hash(&format!("{}\0{}\0{key}\0{o}", tally.product, tally.label));
    let events: Vec<Interval> = replayed.truth.events.clone();
    let svg = picture::draw(&picture::PictureInput {
        headline: &headline,
        facts: [&facts[0], &facts[1]],
        spectrogram_title: &title,
        samples: &replayed.samples,
        channels: replayed.info.channels,
        sample_rate_hz: replayed.info.sample_rate_hz,
        // The band the front end passes: up to 2.5 times its highest low-pass corner, where one
        // first-order section is 8.6 dB down (1/√(1 + 2.5²)) and the signal that matters ends.
        max_hz: variant
            .scene
            .sensor
            .front_end
            .low_pass_hz
            .iter()
            .copied()
            .fold(None, |top: Option<f64>, f| {
                Some(top.map_or(f, |t| t.max(f)))
            })
            .map(|f| 2.5 * f),
        scores,
        threshold: point.threshold,
        hold_s: logic.hold_s(),
        alarms: &alarms,
        truth: &truth,
        events: &events,
        nuisances: &replayed.truth.nuisances,
        id_suffix: &suffix[..10],
    })?;
    debug_assert_eq!(
        alarms.drawn_false_alarms_s(),
        alarms.score.false_alarm_times_s
    );
    Ok(Explanation {
        product: tally.product.clone(),
        detector: tally.label.clone(),
        key,
        target_per_hour: point.target_per_hour,
        threshold: point.threshold,
        recorded: recorded(tally, suite, at, o),
        false_alarm_sources: alarms.false_alarm_sources.clone(),
        score: alarms.score,
        svg,
    })
}

fn capitalised(text: &str) -> String {
    let mut chars = text.chars();
    match chars.next() {
        Some(first) => first.to_uppercase().chain(chars).collect(),
        None => String::new(),
    }
}

/// Re-creates one trial of a run, runs the named detector on it and draws the explanation.
///
/// # Errors
/// An unknown detector, trial key, product or target rate (each error lists what the run
/// has), a trial that cannot be re-created, a detector that fails on it, or a picture that
/// cannot be drawn.
pub fn explain_trial(
    run: &ExplainRun,
    plugins: &[Arc<dyn DetectorPlugin>],
    request: &ExplainRequest,
) -> Result<Explanation, ExplainError> {
    let suite = &run.suite;
    let at = TrialRef::resolve(suite, &request.trial)?;
    let product = &suite.scenes[at.scene_index].product;
    if let Some(asked) = &request.product {
        if asked != product {
            return Err(ExplainError::Key {
                key: request.trial.clone(),
                message: format!(
                    "scene `{}` belongs to product `{product}`, not `{asked}`",
                    suite.scenes[at.scene_index].id
                ),
            });
        }
    }
    let detector = replay::resolve_detector(suite, &request.detector, plugins)?;
    let tally = run.tally(&request.detector, product)?;
    let o = operating_index(tally, request.target_per_hour)?;
    let replayed = replay::replay(suite, at, &[&detector])?;
    explain_replayed(
        run,
        tally,
        o,
        detector.plugin.id(),
        at,
        &replayed,
        &replayed.traces[0],
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn file_names_are_plain() {
        assert_eq!(
            picture_file_name("energy", "corridor@6/3"),
            "explain-energy-corridor@6-3.svg"
        );
        assert_eq!(
            picture_file_name("my det", "calibration/a b/0"),
            "explain-my_det-calibration-a_b-0.svg"
        );
    }

    #[test]
    fn outcomes_read_plainly() {
        let score =
            |latencies: Vec<Option<f64>>, false_alarms: Vec<f64>, stuck: usize| TrialEventScore {
                threshold: 1.0,
                detection_latency_s: latencies,
                false_alarm_times_s: false_alarms,
                retriggers: 0,
                suppressed_onsets: 0,
                ignored_onsets: 0,
                stuck_recounts: stuck,
                false_on_ns: 0,
                exposure_s: 10.0,
            };
        assert_eq!(
            outcome_words(&score(vec![None], vec![], 0)),
            "missed 1 of 1 event"
        );
        assert_eq!(
            outcome_words(&score(vec![Some(0.5), None], vec![3.0], 0)),
            "missed 1 of 2 events, 1 false alarm"
        );
        assert_eq!(
            outcome_words(&score(vec![Some(0.84)], vec![], 0)),
            "detected 1 of 1 event, latency 0.84 s"
        );
        assert_eq!(
            outcome_words(&score(vec![], vec![1.0, 6.0, 11.0], 2)),
            "3 false alarms (2 charged to an alarm left on)"
        );
        assert_eq!(outcome_words(&score(vec![], vec![], 0)), "no false alarm");
        assert_eq!(capitalised("missed"), "Missed");
    }
}
