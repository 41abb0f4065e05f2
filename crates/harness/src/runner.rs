//! The parallel trial runner: calibration, then test trials, into mergeable tallies.
//!
//! A run has two phases. **Calibration** trials (their own seeds, run by every
//! shard identically) fix each detector's threshold grid (pooled score
//! quantiles) and its operating thresholds (the lowest grid threshold whose
//! calibration false-alarm rate meets each target). **Test** trials are then
//! tallied at those fixed thresholds, so Pd and false-alarm rates at the
//! operating points are not optimistically biased (docs/reference/statistics.md#s4), and so
//! shards' tallies add up exactly.
//!
//! Only tallies are kept, never trials: each test trial is synthesized in
//! blocks, fed to every detector, scored, and dropped. Tallies are integer
//! counts and integer nanoseconds of exposure, so adding them is exact and
//! independent of the order in which threads finish; the few lists (per-trial
//! maximum scores, latencies of detected events) are sorted by trial key before
//! they are written. The result is bit-identical for any thread count and any
//! shard split.

use crate::events::{score_thresholds, AlarmLogic, MOfN, MatchWindow, TrialTruth};
use crate::planned::PlannedDetectors;
use crate::signal::TrialSignal;
use echobench_core::alarm_statistic::MOfNStatistic;
use echobench_core::detector::{
    check_scores, Detector, DetectorPlugin, FrameScore, Params, Samples,
};
use echobench_core::seed::StreamKey;
use echobench_core::{Interval, Score};
use echobench_presence::{
    false_switch_ons_at, score_trial, statistic_frames, PresenceTally, PresenceTruth, Timer,
};
use echobench_suite::{
    CaptureSource, CaptureTrial, PresenceOutput, SceneLabel, SceneVariant, Suite,
};
use echobench_tail::TailAccumulator;
use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::Arc;
use std::time::Instant;

/// Version of the tallies and summary schema.
pub const SCHEMA_VERSION: u32 = 3;

/// Output samples synthesized per block fed to the detectors.
const BLOCK: usize = 4096;

/// A part of the test trials: those whose key hashes to `index` of `count` (1-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Shard {
    /// Which shard, 1..=count.
    pub index: u64,
    /// How many shards.
    pub count: u64,
}

impl Shard {
    /// Parses `K/N`.
    ///
    /// # Errors
    /// When the text is not `K/N` with 1 ≤ K ≤ N.
    pub fn parse(text: &str) -> Result<Shard, String> {
        let (k, n) = text
            .split_once('/')
            .ok_or_else(|| format!("`{text}` is not K/N"))?;
        let index: u64 = k
            .trim()
            .parse()
            .map_err(|_| format!("`{k}` is not a whole number"))?;
        let count: u64 = n
            .trim()
            .parse()
            .map_err(|_| format!("`{n}` is not a whole number"))?;
        if index == 0 || index > count {
            return Err(format!("shard {index}/{count}: need 1 ≤ K ≤ N"));
        }
        Ok(Shard { index, count })
    }

    pub(crate) fn owns(&self, key: &StreamKey) -> bool {
        key.trial_hash() % self.count == self.index - 1
    }
}

/// A detector of the run: its suite entry resolved against a plugin.
pub struct RunDetector {
    /// Label in the suite.
    pub label: String,
    /// The plugin.
    pub plugin: Arc<dyn DetectorPlugin>,
    /// Resolved parameters.
    pub params: Params,
    /// Thresholds fixed from a baseline run per product, tallied beside the calibrated
    /// ones (see `echobench gate`); empty for an ordinary run.
    pub pinned: BTreeMap<String, Vec<PinnedPoint>>,
}

/// What happened to one detector on one trial when it misbehaved.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize, PartialOrd, Ord)]
pub struct Failure {
    /// Scene id.
    pub scene: String,
    /// Sweep point.
    pub sweep_point: u64,
    /// Trial index.
    pub trial: u64,
    /// `calibration` or `test`.
    pub phase: String,
    /// What went wrong (panic message, NaN score, time order).
    pub message: String,
}

/// An operating threshold chosen on the calibration trials.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OperatingPoint {
    /// The false-alarm rate it was chosen to meet, per hour.
    pub target_per_hour: f64,
    /// Its index in the threshold grid.
    pub grid_index: usize,
    /// The threshold.
    pub threshold: f64,
    /// False alarms at that threshold in calibration.
    pub calibration_false_alarms: u64,
    /// Noise-only exposure of the calibration trials, ns.
    pub calibration_exposure_ns: u64,
    /// The rule that chose it (`worst_room` or `pooled`).
    pub rule: String,
    /// Each nuisance room (scene variant) of the product in calibration, at the chosen
    /// threshold, in suite order.
    pub rooms: Vec<RoomCalibration>,
    /// The room whose rate set the threshold (the one that still exceeded the target one
    /// grid step lower), when the worst-room rule chose it.
    pub limiting_room: Option<String>,
}

/// Calibration of one nuisance room (a scene variant) over the threshold grid.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RoomGrid {
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// False alarms at each grid threshold.
    pub false_alarms: Vec<u64>,
    /// Noise-only exposure, ns.
    pub exposure_ns: u64,
}

/// Calibration of one nuisance room (a scene variant) at an operating threshold.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RoomCalibration {
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// False alarms at the threshold.
    pub false_alarms: u64,
    /// Noise-only exposure, ns.
    pub exposure_ns: u64,
}

impl RoomCalibration {
    /// `scene` or `scene @ value`, as rooms are named in outputs.
    pub fn name(&self) -> String {
        room_name(&self.scene, self.sweep_value.as_deref())
    }
}

/// `scene` or `scene @ value`.
pub fn room_name(scene: &str, sweep_value: Option<&str>) -> String {
    match sweep_value {
        Some(v) => format!("{scene} @ {v}"),
        None => scene.to_string(),
    }
}

/// A threshold taken from a baseline run, so a candidate is scored where the
/// baseline operates (`echobench gate`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PinnedPoint {
    /// The false-alarm rate the baseline chose it for, per hour.
    pub target_per_hour: f64,
    /// The threshold.
    pub threshold: f64,
}

/// One test trial's outcome at one threshold: what the paired comparison of two
/// runs on the same seeds needs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize)]
pub struct TrialOutcome {
    /// Trial index (with the variant, the trial's seed).
    pub trial: u64,
    /// False alarms in the trial.
    pub false_alarms: u32,
    /// Target events in the trial.
    pub events: u32,
    /// Of those, detected.
    pub detected: u32,
}

/// State memory and arithmetic a detector declares (`DetectorPlugin::cost`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct DeclaredCost {
    /// State memory, bytes.
    pub state_bytes: u64,
    /// Arithmetic operations per input sample.
    pub ops_per_sample: f64,
}

/// Counts at one operating point for one scene variant.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
pub struct OperatingTally {
    /// Events detected.
    pub detected: u64,
    /// False alarms.
    pub false_alarms: u64,
    /// Latencies of detected events, ms, sorted.
    pub latencies_ms: Vec<i64>,
    /// Of the false alarms, re-counts of a stuck alarm (one per hold period it stayed on).
    pub stuck_recounts: u64,
    /// Time the alarm condition held on noise-only time, ns.
    pub false_on_ns: u64,
    /// False alarms by the nuisance sources active at their time (`none` when none was).
    pub false_alarms_by_source: BTreeMap<String, u64>,
    /// Per test trial, sorted by trial.
    pub trials: Vec<TrialOutcome>,
}

/// Tallies of one detector on one scene variant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariantTally {
    /// Scene id.
    pub scene: String,
    /// Sweep point index.
    pub sweep_point: u64,
    /// Swept value as written.
    pub sweep_value: Option<String>,
    /// Swept value as a number.
    pub sweep_number: Option<f64>,
    /// The swept field's path as the suite writes it (`actors[0].path.start_m[0]`), when the
    /// scene is swept: readers need not parse the suite again to name the axis.
    #[serde(default)]
    pub sweep_field: Option<String>,
    /// The swept field's unit by the project's naming rule (the suffix of its name,
    /// `echobench_suite::unit_of_field`), when it has one.
    #[serde(default)]
    pub sweep_unit: Option<String>,
    /// `target`, `nuisance` (a room) or `event` (a rare event, scored per occurrence).
    pub label: String,
    /// Test trials tallied.
    pub trials: u64,
    /// Target events (after merging overlapping windows).
    pub events: u64,
    /// Noise-only exposure, ns.
    pub exposure_ns: u64,
    /// Events detected at each grid threshold.
    pub detected: Vec<u64>,
    /// False alarms at each grid threshold.
    pub false_alarms: Vec<u64>,
    /// Re-triggers inside event windows at each grid threshold.
    pub retriggers: Vec<u64>,
    /// At each operating point.
    pub operating: Vec<OperatingTally>,
    /// At each pinned threshold.
    pub pinned: Vec<OperatingTally>,
    /// (trial, maximum score of the trial), sorted by trial.
    pub max_scores: Vec<(u64, f64)>,
    /// Frames outside event windows.
    pub noise_frames: u64,
    /// Of those, frames at or above the nominal threshold.
    pub noise_frames_above_nominal: u64,
    /// A rare event's declared occurrences per day (`None` for a room or a target scene;
    /// its `label` is then `event`). Its trials add no exposure and no false alarms to the
    /// counts above: each holds one occurrence, counted in `trials_alarmed` and in the
    /// operating points' `trials`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub occurrences_per_day: Option<f64>,
    /// A rare event: at each grid threshold, the trials (occurrences) that raised at least
    /// one false alarm (empty otherwise).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub trials_alarmed: Vec<u64>,
    /// Presence products: the output pin at each operating point (empty otherwise).
    #[serde(default)]
    pub presence: Vec<PresenceTally>,
    /// Presence products: at each operating point, the pin at each hold of the product's
    /// sweep (`DetectorTally::presence_output.hold_sweep_s`).
    #[serde(default)]
    pub hold_sweep: Vec<Vec<PresenceTally>>,
    /// Presence products: the pin at each pinned threshold.
    #[serde(default)]
    pub pinned_presence: Vec<PresenceTally>,
}

/// Tallies of one detector on one product over the whole run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DetectorTally {
    /// The product (sensor module) whose scenes these are.
    pub product: String,
    /// `intrusion` or `presence`: what the product's output is judged on.
    #[serde(default = "intrusion_kind")]
    pub kind: String,
    /// A presence product's timer, budgets and hold sweep (operating points are chosen
    /// for `false_switch_ons_per_day`, stored per hour in `OperatingPoint`).
    #[serde(default)]
    pub presence_output: Option<PresenceOutput>,
    /// Per nuisance room, the tail fit of the calibration's alarm statistic and the
    /// thresholds it gives for rare rates (the same in every shard).
    #[serde(default)]
    pub tail: Vec<crate::rare_rates::RoomTail>,
    /// Per pinned threshold, the product's false-alarm rate from the calibration rooms
    /// (tail fit above each room's fit threshold, counted below), worst room.
    #[serde(default)]
    pub pinned_tail: Vec<Option<crate::rare_rates::RateAt>>,
    /// Label.
    pub label: String,
    /// Plugin id.
    pub plugin: String,
    /// Parameters as resolved (name, value).
    pub params: Vec<(String, String)>,
    /// The threshold grid, ascending.
    pub thresholds: Vec<f64>,
    /// Operating points, one per target rate.
    pub operating: Vec<OperatingPoint>,
    /// Calibration false alarms of each nuisance room at every grid threshold (the same
    /// in every shard): what chose the operating points, and what miss reasons compare.
    pub calibration_rooms: Vec<RoomGrid>,
    /// Calibration false alarms on all calibration noise-only time of the product (rooms
    /// and target scenes) at every grid threshold: what the pooled rule compares.
    pub calibration_pooled: Vec<u64>,
    /// Nominal threshold and per-frame Pfa from the detector's closed form, if any.
    pub nominal: Option<(f64, f64)>,
    /// Thresholds pinned from a baseline run, if any.
    pub pinned: Vec<PinnedPoint>,
    /// What the plugin declares it costs, for the suite's stream.
    pub cost: Option<DeclaredCost>,
    /// Per scene variant, in suite order.
    pub variants: Vec<VariantTally>,
    /// Trials on which the detector failed (excluded from the tallies).
    pub failures: Vec<Failure>,
}

fn intrusion_kind() -> String {
    "intrusion".into()
}

/// Everything a run (or a shard of one) keeps; shards merge by adding these.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Tallies {
    /// Schema version.
    pub schema: u32,
    /// Suite name.
    pub suite: String,
    /// Suite seed.
    pub seed: u64,
    /// Shards included (empty: the whole run).
    pub shards: Vec<Shard>,
    /// Test trials run.
    pub test_trials: u64,
    /// Seconds of signal in the test trials, ms.
    pub test_signal_ms: u64,
    /// Per product and detector, product by product in suite order.
    pub detectors: Vec<DetectorTally>,
}

/// Wall-clock figures of a run (not part of the deterministic outputs).
#[derive(Debug, Clone, Default, Serialize, Deserialize)]
pub struct Timing {
    /// Whole run, s.
    pub wall_s: f64,
    /// Synthesis time summed over threads, s.
    pub synthesis_s: f64,
    /// Per `product/label`: the detector's processing time on that product's test trials,
    /// summed over threads, s.
    pub detector_s: BTreeMap<String, f64>,
    /// Samples fed to each detector.
    pub samples: u64,
    /// Per product: test samples fed to each of its detectors.
    #[serde(default)]
    pub samples_by_product: BTreeMap<String, u64>,
    /// Seconds of signal synthesized for calibration (re-runs of the tail included).
    #[serde(default)]
    pub calibration_signal_s: f64,
    /// Peak resident memory of the process when the run ended, bytes (`VmHWM` of
    /// `/proc/self/status`; `None` where the system does not tell). Memory must stay bounded
    /// by threads, not by trials: a soak's figure should match a short run's.
    #[serde(default)]
    pub peak_rss_bytes: Option<u64>,
}

/// The process's peak resident memory so far, bytes, from `/proc/self/status` (Linux).
pub fn peak_rss_bytes() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    let kib: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024)
}

/// Progress of a run, for a progress display.
#[derive(Debug, Clone, Copy)]
pub struct Progress {
    /// `true` in calibration, `false` in the test phase.
    pub calibration: bool,
    /// Trials done in this phase.
    pub done: u64,
    /// Trials in this phase.
    pub total: u64,
}

/// Why a run could not be made.
#[derive(Debug, Clone, PartialEq)]
pub struct RunError(pub String);

impl std::fmt::Display for RunError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for RunError {}

/// The suite's detectors with their plugins, each configured with the parameters the suite
/// loader resolved (kept in [`echobench_suite::DetectorEntry::resolved`]; they are not
/// resolved a second time here).
///
/// # Errors
/// A detector whose plugin is not among `plugins` (a suite loaded with other plugins).
pub fn resolve_detectors(
    suite: &Suite,
    plugins: &[Arc<dyn DetectorPlugin>],
) -> Result<Vec<RunDetector>, RunError> {
    suite
        .detectors
        .iter()
        .map(|entry| {
            let plugin = plugins
                .iter()
                .find(|p| p.id() == entry.plugin)
                .ok_or_else(|| {
                    RunError(format!(
                        "detector `{}`: no plugin `{}`",
                        entry.label, entry.plugin
                    ))
                })?;
            Ok(RunDetector {
                label: entry.label.clone(),
                plugin: Arc::clone(plugin),
                params: entry.resolved.clone(),
                pinned: BTreeMap::new(),
            })
        })
        .collect()
}

#[derive(Clone)]
struct Job {
    scene: usize,
    variant: usize,
    key: StreamKey,
    calibration: bool,
}

/// The key of a trial; calibration trials live in their own seed space.
pub fn trial_key(
    suite: &Suite,
    scene: usize,
    variant: usize,
    trial: u64,
    calibration: bool,
) -> StreamKey {
    let s = &suite.scenes[scene];
    let scene_id = if calibration {
        format!("calibration/{}", s.id)
    } else {
        s.id.clone()
    };
    StreamKey {
        suite_seed: suite.seed,
        scene_id,
        sweep_point: s.variants[variant].sweep_point,
        trial,
    }
}

/// Chunks of streamed calibration trials per worker thread: enough for the threads to
/// balance uneven trials, few enough that the chunks' counts (each with its tail
/// accumulators) stay a small, fixed number (a choice of ours).
const CHUNKS_PER_THREAD: usize = 4;

/// A suite's calibration trials, each made from its index when needed, in the order of
/// `jobs(suite, true, None)`: a soak has tens of thousands of them, and a list of their keys
/// would grow memory with the calibration time.
struct CalibrationJobs<'s> {
    suite: &'s Suite,
    /// (scene, variant, trials, index of its first trial), in job order.
    blocks: Vec<(usize, usize, u64, usize)>,
    total: usize,
}

impl<'s> CalibrationJobs<'s> {
    fn new(suite: &'s Suite) -> Self {
        let mut blocks = Vec::new();
        let mut total = 0usize;
        for (si, scene) in suite.scenes.iter().enumerate() {
            // A rare event is never calibrated on, whatever a suite built in code says.
            let count = if scene.occurrences_per_day.is_some() {
                0
            } else {
                scene.calibration_trials
            };
            for vi in 0..scene.variants.len() {
                blocks.push((si, vi, count, total));
                total += count as usize;
            }
        }
        CalibrationJobs {
            suite,
            blocks,
            total,
        }
    }

    fn len(&self) -> usize {
        self.total
    }

    /// The scene, variant and trial of job `i`.
    fn place(&self, i: usize) -> (usize, usize, u64) {
        let b = self.blocks.partition_point(|b| b.3 + b.2 as usize <= i);
        let (scene, variant, _, first) = self.blocks[b];
        (scene, variant, (i - first) as u64)
    }

    fn trial(&self, i: usize) -> u64 {
        self.place(i).2
    }

    fn get(&self, i: usize) -> Job {
        let (scene, variant, trial) = self.place(i);
        Job {
            scene,
            variant,
            key: trial_key(self.suite, scene, variant, trial, true),
            calibration: true,
        }
    }
}

fn jobs(suite: &Suite, calibration: bool, shard: Option<Shard>) -> Vec<Job> {
    let mut out = Vec::new();
    for (si, scene) in suite.scenes.iter().enumerate() {
        let count = if calibration {
            // A rare event is never calibrated on, whatever a suite built in code says.
            if scene.occurrences_per_day.is_some() {
                0
            } else {
                scene.calibration_trials
            }
        } else {
            scene.trials
        };
        for vi in 0..scene.variants.len() {
            for trial in 0..count {
                let key = trial_key(suite, si, vi, trial, calibration);
                if calibration || shard.is_none_or(|s| s.owns(&key)) {
                    out.push(Job {
                        scene: si,
                        variant: vi,
                        key,
                        calibration,
                    });
                }
            }
        }
    }
    out
}

/// One detector's output on one trial.
pub(crate) enum Trace {
    Ok { scores: Vec<Score>, busy_s: f64 },
    Failed(String),
}

pub(crate) struct TrialOutput {
    pub(crate) traces: Vec<Trace>,
    truth: Vec<Interval>,
    /// Present, not moving: ignored by intrusion scoring.
    still: Vec<Interval>,
    nuisances: Vec<(Interval, String)>,
    duration_s: f64,
    synthesis_s: f64,
    pub(crate) samples: u64,
}

/// Synthesizes a trial and feeds every detector, catching panics and bad scores per detector.
fn run_trial(
    suite: &Suite,
    planned: &PlannedDetectors,
    job: &Job,
) -> Result<TrialOutput, RunError> {
    let entry = &suite.scenes[job.scene];
    let variant = &entry.variants[job.variant];
    let capture = entry.capture.as_ref().map(|c| {
        let list = if job.calibration {
            &c.calibration
        } else {
            &c.test
        };
        (c, &list[job.key.trial as usize])
    });
    let what = format!("scene `{}` trial {}", entry.id, job.key.trial);
    feed_trial(variant, capture, &job.key, planned, &what)
}

/// Synthesizes (or reads) one trial of `variant` under `key` and feeds every detector of
/// `planned`; `what` names the trial in errors. The one place trials meet detectors: the
/// suite's trials and the zone's walks both come through here.
pub(crate) fn feed_trial(
    variant: &SceneVariant,
    capture: Option<(&CaptureSource, &CaptureTrial)>,
    key: &StreamKey,
    planned: &PlannedDetectors,
    what: &str,
) -> Result<TrialOutput, RunError> {
    let detectors = planned.detectors();
    let scene = &variant.scene;
    let trial_error = |e: String| RunError(format!("{what}: {e}"));
    let mut synth = TrialSignal::new(variant, capture, key).map_err(trial_error)?;
    let info = synth.info();
    // This thread's states, reset since their last trial (or fresh from the run's plans).
    let mut built: Vec<Result<Box<dyn Detector>, String>> = (0..detectors.len())
        .map(|i| planned.take(i, &info))
        .collect();
    let mut scores: Vec<Vec<FrameScore>> = vec![Vec::new(); detectors.len()];
    let mut busy = vec![0.0f64; detectors.len()];
    let mut volts = Vec::with_capacity(BLOCK * 2);
    let mut codes = Vec::with_capacity(BLOCK * 2);
    let mut synthesis_s = 0.0;
    let mut samples = 0u64;
    loop {
        volts.clear();
        codes.clear();
        let t0 = Instant::now();
        let added = synth
            .next_block(&mut volts, &mut codes, BLOCK)
            .map_err(trial_error)?;
        synthesis_s += t0.elapsed().as_secs_f64();
        if added == 0 {
            break;
        }
        samples += added as u64;
        // Whole sample instants: the signal hands out pairs on I/Q streams.
        let block = Samples::from_values(&volts, info.channels)
            .ok_or_else(|| trial_error("the signal split an I/Q pair".to_string()))?;
        for (i, slot) in built.iter_mut().enumerate() {
            let Ok(detector) = slot else { continue };
            let t1 = Instant::now();
            let result = catch_unwind(AssertUnwindSafe(|| detector.process(block, &mut scores[i])));
            busy[i] += t1.elapsed().as_secs_f64();
            match result {
                Err(p) => *slot = Err(echobench_core::detector::panic_message(p)),
                Ok(Err(failure)) => *slot = Err(failure.message),
                Ok(Ok(())) => {}
            }
        }
    }
    let truth = synth.truth();
    let traces = built
        .into_iter()
        .zip(scores)
        .zip(busy)
        .enumerate()
        .map(|(i, ((slot, trace), busy_s))| {
            let state = match slot {
                Err(message) => return Trace::Failed(message),
                Ok(state) => state,
            };
            // Reset and kept for this thread's next trial of this stream shape.
            planned.give_back(i, &info, state);
            match check_scores(&trace) {
                Ok(()) => Trace::Ok {
                    // The one place where frame ends become seconds.
                    scores: trace
                        .into_iter()
                        .map(|s| s.timed(info.sample_rate_hz))
                        .collect(),
                    busy_s,
                },
                Err((i, message)) => Trace::Failed(format!("score {i}: {message}")),
            }
        })
        .collect();
    Ok(TrialOutput {
        traces,
        truth: truth.events,
        still: truth.still,
        nuisances: truth.nuisances,
        duration_s: scene.duration_s,
        synthesis_s,
        samples,
    })
}

/// The suite's alarm logic (M-of-N, hold, stuck alarms re-counted) and event matching window,
/// as every trial is scored with (also used to explain one trial again).
///
/// # Errors
/// A refused M-of-N, hold or window (the suite loader refuses these first).
pub fn alarm_logic(suite: &Suite) -> Result<(AlarmLogic, MatchWindow), RunError> {
    let m_of_n = match suite.alarm.m_of_n {
        Some((m, n)) => MOfN::new(m as usize, n as usize),
        None => MOfN::new(1, 1),
    }
    .map_err(|e| RunError(e.to_string()))?;
    let logic = AlarmLogic::new(suite.alarm.hold_s, m_of_n)
        .map_err(|e| RunError(e.to_string()))?
        .recounting_stuck_alarms();
    let window = MatchWindow::new(suite.scoring.early_s, suite.scoring.late_s)
        .map_err(|e| RunError(e.to_string()))?;
    Ok((logic, window))
}

/// Threshold grid from pooled calibration scores: half the points at evenly
/// spaced quantiles, half crowded into the upper tail (quantiles 1 − 10^−x), where
/// the operating points of low false-alarm rates lie; plus one just above the
/// largest score, where nothing alarms.
pub fn threshold_grid(mut pooled: Vec<f64>, count: usize) -> Vec<f64> {
    pooled.retain(|x| x.is_finite());
    if pooled.is_empty() {
        return vec![0.0, 1.0];
    }
    pooled.sort_by(f64::total_cmp);
    let n = pooled.len();
    let at = |q: f64| pooled[((q * (n - 1) as f64).round() as usize).min(n - 1)];
    let mut grid = Vec::with_capacity(count + 1);
    let half = count / 2;
    for i in 0..half {
        grid.push(at(i as f64 / half as f64));
    }
    let decades = (n as f64).log10().max(1.0);
    for i in 0..(count - half) {
        let x = 1.0 + decades * i as f64 / (count - half).max(1) as f64;
        grid.push(at(1.0 - 10f64.powf(-x)));
    }
    let top = pooled[n - 1];
    grid.push(if top > 0.0 {
        top * (1.0 + 1e-9) + f64::MIN_POSITIVE
    } else {
        top + 1e-12
    });
    grid.sort_by(f64::total_cmp);
    grid.dedup();
    grid
}

fn ns(seconds: f64) -> u64 {
    (seconds * 1e9).round().max(0.0) as u64
}

/// Runs a suite (or a shard of it) and returns its tallies and timing.
///
/// # Errors
/// A scene whose drawn values a model refuses, or a detector that cannot be
/// configured at all. Misbehaving detectors (panics, NaN, time disorder) are
/// not errors: they are recorded per trial in [`DetectorTally::failures`].
pub fn run_suite(
    suite: &Suite,
    detectors: &[RunDetector],
    shard: Option<Shard>,
    progress: &(dyn Fn(Progress) + Sync),
) -> Result<(Tallies, Timing), RunError> {
    let started = Instant::now();
    let mut timing = Timing::default();
    let mut all = Vec::with_capacity(suite.products.len() * detectors.len());
    // One plan per (detector, stream shape) for the whole run, shared by every product.
    let planned = PlannedDetectors::new(detectors);
    let (mut test_trials, mut test_signal_ms) = (0, 0);
    // Products run one after the other: each is calibrated on its own scenes only, so
    // its thresholds are those of a suite holding it alone.
    for product in &suite.products {
        let view = suite.product_view(&product.name);
        if view.scenes.is_empty() {
            continue;
        }
        let part = run_product(&view, &planned, shard, progress)?;
        all.extend(part.tallies);
        test_trials += part.test_trials;
        test_signal_ms += part.test_signal_ms;
        timing.synthesis_s += part.timing.synthesis_s;
        timing.samples += part.timing.samples;
        timing
            .samples_by_product
            .insert(product.name.clone(), part.timing.samples);
        timing.calibration_signal_s += part.timing.calibration_signal_s;
        for (k, v) in part.timing.detector_s {
            *timing.detector_s.entry(k).or_default() += v;
        }
    }
    timing.wall_s = started.elapsed().as_secs_f64();
    timing.peak_rss_bytes = peak_rss_bytes();
    Ok((
        Tallies {
            schema: SCHEMA_VERSION,
            suite: suite.name.clone(),
            seed: suite.seed,
            shards: shard.into_iter().collect(),
            test_trials,
            test_signal_ms,
            detectors: all,
        },
        timing,
    ))
}

/// What one product's run adds to the tallies.
struct ProductRun {
    tallies: Vec<DetectorTally>,
    timing: Timing,
    test_trials: u64,
    test_signal_ms: u64,
}

/// Calibrates and tallies one product (`suite` is its [`Suite::product_view`]).
fn run_product(
    suite: &Suite,
    planned: &PlannedDetectors,
    shard: Option<Shard>,
    progress: &(dyn Fn(Progress) + Sync),
) -> Result<ProductRun, RunError> {
    let detectors = planned.detectors();
    let product = suite
        .products
        .first()
        .map_or_else(|| suite.name.clone(), |p| p.name.clone());
    let (logic, window) = alarm_logic(suite)?;
    let presence = presence_setup(suite, &logic)?;
    let mut timing = Timing::default();

    // Calibration: every shard runs the same trials and gets the same thresholds. A
    // presence product counts its output's false switch-ons against its own budget.
    let counting = match &presence {
        Some((_, timer, rule)) => Counting::SwitchOns { timer, rule: *rule },
        None => Counting::Alarms {
            logic: &logic,
            window,
        },
    };
    let targets_per_hour: Vec<f64> = match &presence {
        Some((output, ..)) => output
            .false_switch_ons_per_day
            .iter()
            .map(|per_day| per_day / 24.0)
            .collect(),
        None => suite.scoring.target_false_alarms_per_hour.clone(),
    };
    // Rare rates by tail extrapolation: the reporting ladder and the product's own targets.
    let mut rare_rates = crate::rare_rates::REPORT_RATES_PER_HOUR.to_vec();
    for &t in &targets_per_hour {
        if !rare_rates.contains(&t) {
            rare_rates.push(t);
        }
    }
    let (calibrated, calibration_signal_s) =
        calibrate(suite, planned, counting, &rare_rates, progress)?;
    let mut tallies: Vec<DetectorTally> = Vec::with_capacity(detectors.len());
    for (detector, cal) in detectors.iter().zip(calibrated) {
        let Calibrated {
            thresholds,
            false_alarms,
            exposure_ns,
            rooms,
            failures,
            tail_rooms,
            tails,
        } = cal;
        let operating = targets_per_hour
            .iter()
            .map(|&target| {
                choose_operating_point(
                    target,
                    suite.scoring.threshold_rule,
                    &thresholds,
                    &false_alarms,
                    exposure_ns,
                    &rooms,
                    suite,
                )
            })
            .collect::<Vec<_>>();
        let nominal = detector
            .plugin
            .nominal_operating_point(&detector.params, &suite_stream_info(suite))
            .map(|p| (p.threshold, p.frame_pfa));
        let cost = detector
            .plugin
            .cost(&detector.params, &suite_stream_info(suite))
            .map(|c| DeclaredCost {
                state_bytes: c.state_bytes as u64,
                ops_per_sample: c.ops_per_sample,
            });
        let pinned_points = detector.pinned.get(&product).cloned().unwrap_or_default();
        // The product's calibration-tail rate at each pinned threshold, for a gate that
        // judges the budget by it.
        let pinned_tail: Vec<Option<crate::rare_rates::RateAt>> = pinned_points
            .par_iter()
            .map(|p| crate::rare_rates::product_rate_at(&tail_rooms, &tails, p.threshold))
            .collect();
        drop(tails);
        let pinned_len = pinned_points.len();
        let (grid_len, operating_len) = (thresholds.len(), operating.len());
        // Presence tallies exist for presence products only.
        let (presence_len, sweep_len, pinned_presence_len) = match &presence {
            Some((output, ..)) => (operating_len, output.hold_sweep_s.len(), pinned_len),
            None => (0, 0, 0),
        };
        let variants = suite
            .scenes
            .iter()
            .flat_map(|s| {
                s.variants.iter().map(move |v| VariantTally {
                    scene: s.id.clone(),
                    sweep_point: v.sweep_point,
                    sweep_value: v.sweep_value.clone(),
                    sweep_number: v.sweep_number,
                    sweep_field: s.sweep_field.clone(),
                    sweep_unit: s.sweep_unit().map(str::to_string),
                    // A rare event is a nuisance scored per occurrence, not a room: its own
                    // label keeps it out of every per-room table and pooled rate.
                    label: match (s.label, s.occurrences_per_day) {
                        (SceneLabel::Target, _) => "target".into(),
                        (SceneLabel::Nuisance, None) => "nuisance".into(),
                        (SceneLabel::Nuisance, Some(_)) => "event".into(),
                    },
                    trials: 0,
                    events: 0,
                    exposure_ns: 0,
                    detected: vec![0; grid_len],
                    false_alarms: vec![0; grid_len],
                    retriggers: vec![0; grid_len],
                    operating: vec![OperatingTally::default(); operating_len],
                    pinned: vec![OperatingTally::default(); pinned_len],
                    max_scores: Vec::new(),
                    noise_frames: 0,
                    noise_frames_above_nominal: 0,
                    occurrences_per_day: s.occurrences_per_day,
                    trials_alarmed: if s.occurrences_per_day.is_some() {
                        vec![0; grid_len]
                    } else {
                        Vec::new()
                    },
                    presence: vec![PresenceTally::default(); presence_len],
                    hold_sweep: vec![vec![PresenceTally::default(); sweep_len]; presence_len],
                    pinned_presence: vec![PresenceTally::default(); pinned_presence_len],
                })
            })
            .collect();
        let calibration_rooms = rooms
            .iter()
            .map(|r| {
                let scene = &suite.scenes[r.scene];
                RoomGrid {
                    scene: scene.id.clone(),
                    sweep_value: scene.variants[r.variant].sweep_value.clone(),
                    false_alarms: r.false_alarms.clone(),
                    exposure_ns: r.exposure_ns,
                }
            })
            .collect();
        tallies.push(DetectorTally {
            product: product.clone(),
            kind: suite
                .products
                .first()
                .map_or("intrusion", |p| p.kind.name())
                .to_string(),
            presence_output: presence.as_ref().map(|(output, ..)| output.clone()),
            tail: tail_rooms,
            pinned_tail,
            calibration_rooms,
            calibration_pooled: false_alarms,
            label: detector.label.clone(),
            plugin: detector.plugin.id().to_string(),
            params: detector
                .params
                .iter()
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect(),
            thresholds,
            operating,
            nominal,
            pinned: pinned_points,
            cost,
            variants,
            failures,
        });
    }

    // Test trials: each is tallied and dropped; tallies are folded per thread and added.
    let test_jobs = jobs(suite, false, shard);
    let variant_index: Vec<Vec<usize>> = {
        let mut next = 0;
        suite
            .scenes
            .iter()
            .map(|s| {
                let ids = (next..next + s.variants.len()).collect();
                next += s.variants.len();
                ids
            })
            .collect()
    };
    let empty = || {
        (
            tallies
                .iter()
                .map(empty_like)
                .collect::<Vec<DetectorTally>>(),
            Timing::default(),
            0u64,
            0u64,
        )
    };
    let done = std::sync::atomic::AtomicU64::new(0);
    let folded = test_jobs
        .par_iter()
        .try_fold(empty, |mut acc, job| -> Result<_, RunError> {
            let trial = run_trial(suite, planned, job)?;
            let truth = trial_truth(&trial, window)?;
            let occupancy = match presence {
                Some(_) => Some(presence_truth(&trial)?),
                None => None,
            };
            let vi = variant_index[job.scene][job.variant];
            acc.1.synthesis_s += trial.synthesis_s;
            acc.1.samples += trial.samples;
            acc.2 += 1;
            acc.3 += (trial.duration_s * 1e3).round() as u64;
            for (di, trace) in trial.traces.iter().enumerate() {
                let tally = &mut acc.0[di];
                match trace {
                    Trace::Failed(message) => tally.failures.push(Failure {
                        scene: suite.scenes[job.scene].id.clone(),
                        sweep_point: job.key.sweep_point,
                        trial: job.key.trial,
                        phase: "test".into(),
                        message: message.clone(),
                    }),
                    Trace::Ok { scores, busy_s } => {
                        *acc.1
                            .detector_s
                            .entry(format!("{}/{}", tally.product, tally.label))
                            .or_default() += busy_s;
                        let thresholds = tallies[di].thresholds.clone();
                        let operating: Vec<usize> =
                            tallies[di].operating.iter().map(|o| o.grid_index).collect();
                        let nominal = tallies[di].nominal.map(|n| n.0);
                        let pinned: Vec<f64> =
                            tallies[di].pinned.iter().map(|p| p.threshold).collect();
                        tally_trial(
                            &mut tally.variants[vi],
                            scores,
                            &truth,
                            &trial,
                            &logic,
                            &thresholds,
                            &operating,
                            &pinned,
                            nominal,
                            job.key.trial,
                        );
                        if let (Some((output, timer, rule)), Some(occupancy)) =
                            (&presence, &occupancy)
                        {
                            tally_presence(
                                &mut tally.variants[vi],
                                scores,
                                occupancy,
                                output,
                                timer,
                                *rule,
                                &tallies[di],
                            )?;
                        }
                    }
                }
            }
            let d = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            progress(Progress {
                calibration: false,
                done: d,
                total: test_jobs.len() as u64,
            });
            Ok(acc)
        })
        .try_reduce(empty, |a, b| Ok(add_partials(a, b)))?;
    let (parts, part_timing, test_trials, test_signal_ms) = folded;
    for (tally, part) in tallies.iter_mut().zip(parts) {
        merge_detector(tally, part);
        normalise(tally);
    }
    timing.synthesis_s = part_timing.synthesis_s;
    timing.samples = part_timing.samples;
    timing.detector_s = part_timing.detector_s;
    timing.calibration_signal_s = calibration_signal_s;
    Ok(ProductRun {
        tallies,
        timing,
        test_trials,
        test_signal_ms,
    })
}

/// Calibration trials per scene variant whose score traces are kept to place the
/// threshold grid (the first ones by trial index); the others are scored and dropped.
/// The grid only has to span the scores (its counts are exact either way, see
/// `calibrate`); 24 is the test-trial count of the default suite, whose trials were
/// enough to place its grid before calibration was streamed, and keeps the pilot's
/// memory to a few megabytes per product.
pub const PILOT_TRIALS: u64 = 24;

/// Most thresholds added above the pilot grid for the scores that only the streamed
/// calibration trials reach: about half the pilot grid's default 120 again, so the rare
/// rates' tail is resolved as finely as the grid's own upper tail (a choice of ours).
const TAIL_THRESHOLDS: usize = 64;

/// Of those, the largest trial maxima (of the alarm statistic) kept one by one: a counted threshold for a rare
/// target allows at most `target × calibration hours` alarms, a handful in a soak (one in a
/// week at one per week), so the thresholds that decide it are the few largest maxima.
/// Spaced evenly in rank over a week's hundreds of maxima, the grid skipped them and the
/// counted one-per-week threshold landed on the week's largest maximum instead of its
/// second largest (a choice of ours: 32 covers targets up to 32 alarms per calibration).
const TAIL_EXACT_TOP: usize = 32;

/// One detector's calibration: the grid and the false alarms at each of its thresholds.
struct Calibrated {
    thresholds: Vec<f64>,
    false_alarms: Vec<u64>,
    exposure_ns: u64,
    rooms: Vec<RoomCounts>,
    failures: Vec<Failure>,
    /// Each room's tail fit (rare rates by extrapolation).
    tail_rooms: Vec<crate::rare_rates::RoomTail>,
    /// Each room's accumulator, for rates at thresholds known only after calibration
    /// (pinned ones); dropped with the calibration.
    tails: Vec<TailAccumulator>,
}

/// Calibration counts of one detector while trials stream past.
#[derive(Clone)]
struct CalibrationCounts {
    false_alarms: Vec<u64>,
    exposure_ns: u64,
    /// Per room (in [`rooms_of`] order): false alarms per grid threshold and exposure.
    rooms: Vec<(Vec<u64>, u64)>,
    failures: Vec<Failure>,
    /// Indices (into the calibration jobs) of trials whose alarm statistic reaches the
    /// pilot grid's top, with its largest value.
    beyond_top: Vec<(usize, f64)>,
    /// Per room: the exceedance frames of the alarm statistic, for the tail fit.
    tails: Vec<TailAccumulator>,
}

impl CalibrationCounts {
    fn new(grid_len: usize, rooms: usize, tail: &TailAccumulator) -> Self {
        CalibrationCounts {
            false_alarms: vec![0; grid_len],
            exposure_ns: 0,
            rooms: vec![(vec![0; grid_len], 0); rooms],
            failures: Vec::new(),
            beyond_top: Vec::new(),
            tails: vec![tail.clone(); rooms],
        }
    }

    fn add(mut self, other: CalibrationCounts) -> Result<Self, RunError> {
        for (a, b) in self.tails.iter_mut().zip(other.tails) {
            a.merge(b)
                .map_err(|e| RunError(format!("tail accumulator: {e}")))?;
        }
        for (a, b) in self.false_alarms.iter_mut().zip(&other.false_alarms) {
            *a += b;
        }
        self.exposure_ns += other.exposure_ns;
        for ((a, ae), (b, be)) in self.rooms.iter_mut().zip(&other.rooms) {
            for (x, y) in a.iter_mut().zip(b) {
                *x += y;
            }
            *ae += be;
        }
        self.failures.extend(other.failures);
        self.beyond_top.extend(other.beyond_top);
        Ok(self)
    }
}

/// Scores one calibration trial for every detector into `counts` (one per detector).
#[allow(clippy::too_many_arguments)]
fn count_calibration_trial(
    suite: &Suite,
    job: &Job,
    job_index: usize,
    trial: &TrialOutput,
    grids: &[Vec<f64>],
    room_of: &dyn Fn(&Job) -> Option<usize>,
    counting: Counting<'_>,
    counts: &mut [CalibrationCounts],
    add_exposure: bool,
) -> Result<(), RunError> {
    // The trial's truth in the form the counting needs, made once for every detector.
    let prepared = match counting {
        Counting::Alarms { logic, window } => Prepared::Alarms {
            logic,
            truth: trial_truth(trial, window)?,
        },
        Counting::SwitchOns { timer, rule } => Prepared::SwitchOns {
            timer,
            rule,
            truth: presence_truth(trial)?,
        },
    };
    let room = room_of(job);
    let rule = match counting {
        Counting::Alarms { logic, .. } => logic.m_of_n(),
        Counting::SwitchOns { rule, .. } => rule,
    };
    for (di, count) in counts.iter_mut().enumerate() {
        match &trial.traces[di] {
            Trace::Ok { scores, .. } => {
                let grid = &grids[di];
                // False alarms (or false switch-ons) at each grid threshold, and the
                // exposure they are counted over.
                let (false_alarms, exposure_ns) = match &prepared {
                    Prepared::Alarms { logic, truth } => (
                        score_thresholds(scores, truth, logic, grid)
                            .iter()
                            .map(|r| r.false_alarms() as u64)
                            .collect::<Vec<u64>>(),
                        ns(truth.exposure_s()),
                    ),
                    Prepared::SwitchOns { timer, rule, truth } => (
                        false_switch_ons_at(&statistic_frames(scores, *rule), truth, timer, grid)
                            .map_err(|e| RunError(e.to_string()))?,
                        truth.empty_ns(),
                    ),
                };
                for (g, n) in false_alarms.iter().enumerate() {
                    count.false_alarms[g] += n;
                }
                if add_exposure {
                    count.exposure_ns += exposure_ns;
                }
                if let Some(r) = room {
                    let (room_false_alarms, room_exposure) = &mut count.rooms[r];
                    for (g, n) in false_alarms.iter().enumerate() {
                        room_false_alarms[g] += n;
                    }
                    if add_exposure {
                        *room_exposure += exposure_ns;
                        // A room is noise only: its whole trace feeds the tail fit, keyed by
                        // the job's index (unique within the product's calibration).
                        let tail = &mut count.tails[r];
                        let mut scan = tail.scan(job_index as u64);
                        for score in scores.iter().filter(|s| s.t_s.is_finite()) {
                            scan.push(score.t_s, score.value)
                                .map_err(|e| RunError(format!("tail scan: {e}")))?;
                        }
                        tail.add(scan, exposure_ns as f64 * 1e-9)
                            .map_err(|e| RunError(format!("tail accumulator: {e}")))?;
                    }
                }
                if add_exposure {
                    // The largest value of the alarm statistic (the M-th largest of the last N
                    // scores), not of the raw scores: the alarm condition holds exactly where
                    // the statistic reaches the threshold, so the counts change only at its
                    // values, and a threshold placed at a trial's largest raw score would sit
                    // above the alarm peak it stands for.
                    let mut statistic = MOfNStatistic::new(rule);
                    let max = scores
                        .iter()
                        .map(|s| statistic.push(s.value))
                        .filter(|v| v.is_finite())
                        .fold(f64::NEG_INFINITY, f64::max);
                    if grid.last().is_some_and(|top| max >= *top) {
                        count.beyond_top.push((job_index, max));
                    }
                }
            }
            Trace::Failed(message) => {
                if add_exposure {
                    count.failures.push(Failure {
                        scene: suite.scenes[job.scene].id.clone(),
                        sweep_point: job.key.sweep_point,
                        trial: job.key.trial,
                        phase: "calibration".into(),
                        message: message.clone(),
                    });
                }
            }
        }
    }
    Ok(())
}

/// Thresholds above the pilot grid's top: the largest alarm statistics (M-th largest of the
/// last N scores) of the trials that reach it (at most [`TAIL_THRESHOLDS`] of them, evenly
/// spaced in rank), and one just above the largest, where nothing alarms. Counts change only
/// where the alarm statistic crosses a threshold, and only these trials' statistics get
/// there, so these are the thresholds at which the rare false-alarm rates are decided.
fn tail_thresholds(top: f64, beyond: &[(usize, f64)]) -> Vec<f64> {
    let mut maxima: Vec<f64> = beyond
        .iter()
        .map(|(_, m)| *m)
        .filter(|m| *m > top)
        .collect();
    if maxima.is_empty() {
        return Vec::new();
    }
    maxima.sort_by(f64::total_cmp);
    maxima.dedup();
    let n = maxima.len();
    let mut out: Vec<f64> = if n <= TAIL_THRESHOLDS {
        maxima.clone()
    } else {
        // Evenly spaced in rank below the top, every one of the top maxima.
        let exact_from = n - TAIL_EXACT_TOP;
        let spaced = TAIL_THRESHOLDS - TAIL_EXACT_TOP;
        let mut out: Vec<f64> = (0..spaced)
            .map(|i| maxima[i * (exact_from - 1) / (spaced - 1)])
            .collect();
        out.extend_from_slice(&maxima[exact_from..]);
        out
    };
    let largest = maxima[n - 1];
    out.push(if largest > 0.0 {
        largest * (1.0 + 1e-9) + f64::MIN_POSITIVE
    } else {
        largest + 1e-12
    });
    out.dedup();
    out
}

/// Calibrates every detector of a product in memory bounded by the pilot, not by the
/// number of calibration trials:
///
/// 1. the first [`PILOT_TRIALS`] calibration trials of every variant are run and their
///    score traces kept; each detector's threshold grid is cut from their pooled scores
///    ([`threshold_grid`]);
/// 2. every calibration trial (the pilot from its kept traces, the others as they are
///    synthesized, then dropped) is scored at that grid: false alarms per threshold, per
///    room and pooled, and the trials whose alarm statistic reaches the grid's top;
/// 3. thresholds are added above the top at those trials' largest alarm statistics
///    ([`tail_thresholds`]), and only those trials are synthesized again and scored there:
///    every other trial's statistic stays below the top, so it has no alarm at these
///    thresholds. The counts at every threshold are therefore exact, as if all traces had
///    been kept.
fn calibrate(
    suite: &Suite,
    planned: &PlannedDetectors,
    counting: Counting<'_>,
    rare_rates_per_hour: &[f64],
    progress: &(dyn Fn(Progress) + Sync),
) -> Result<(Vec<Calibrated>, f64), RunError> {
    let detectors = planned.detectors();
    // The tail fit declusters with the hold that separates one counted alarm (or one
    // switch-on of a presence product's output) from the next.
    let (m, n, hold_s) = match counting {
        Counting::Alarms { logic, .. } => (logic.m_of_n().m(), logic.m_of_n().n(), logic.hold_s()),
        Counting::SwitchOns { timer, rule } => (rule.m(), rule.n(), timer.hold_s()),
    };
    let tail_template = crate::rare_rates::accumulator(m, n, hold_s).map_err(RunError)?;
    let all_jobs = CalibrationJobs::new(suite);
    let total = all_jobs.len() as u64;
    let done = std::sync::atomic::AtomicU64::new(0);
    let tick = || {
        let d = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
        progress(Progress {
            calibration: true,
            done: d.min(total),
            total,
        });
    };
    let pilot: Vec<usize> = (0..all_jobs.len())
        .filter(|&i| all_jobs.trial(i) < PILOT_TRIALS)
        .collect();
    // The streamed trials go in a fixed number of contiguous chunks, each folded into one
    // set of counts: rayon's own splitting would make one accumulator per leaf, alive down a
    // join tree whose depth grows with the trial count, so a soak's memory would grow with
    // its calibration time (by a tail accumulator per level). The counts merge exactly, so
    // the chunking changes no result.
    let chunk_count = (rayon::current_num_threads() * CHUNKS_PER_THREAD).max(1);
    let chunk_len = all_jobs.len().div_ceil(chunk_count).max(1);
    let streamed = (0..chunk_count).into_par_iter().map(|c| {
        (c * chunk_len..((c + 1) * chunk_len).min(all_jobs.len()))
            .filter(|&i| all_jobs.trial(i) >= PILOT_TRIALS)
    });
    let pilot_outputs: Vec<TrialOutput> = pilot
        .par_iter()
        .map(|&i| {
            let out = run_trial(suite, planned, &all_jobs.get(i));
            tick();
            out
        })
        .collect::<Result<_, _>>()?;
    let grids: Vec<Vec<f64>> = (0..detectors.len())
        .map(|di| {
            let pooled: Vec<f64> = pilot_outputs
                .iter()
                .filter_map(|t| match &t.traces[di] {
                    Trace::Ok { scores, .. } => Some(scores.iter().map(|s| s.value)),
                    Trace::Failed(_) => None,
                })
                .flatten()
                .collect();
            threshold_grid(pooled, suite.scoring.threshold_count)
        })
        .collect();
    let room_list = rooms_of(suite, 0);
    let room_of = |job: &Job| {
        room_list
            .iter()
            .position(|r| r.scene == job.scene && r.variant == job.variant)
    };
    let empty = || -> Vec<CalibrationCounts> {
        grids
            .iter()
            .map(|g| CalibrationCounts::new(g.len(), room_list.len(), &tail_template))
            .collect()
    };
    let mut counts = empty();
    for (&i, trial) in pilot.iter().zip(&pilot_outputs) {
        count_calibration_trial(
            suite,
            &all_jobs.get(i),
            i,
            trial,
            &grids,
            &room_of,
            counting,
            &mut counts,
            true,
        )?;
    }
    drop(pilot_outputs);
    let streamed_counts = streamed
        .map(|chunk| -> Result<_, RunError> {
            let mut acc = empty();
            for i in chunk {
                let job = all_jobs.get(i);
                let trial = run_trial(suite, planned, &job)?;
                count_calibration_trial(
                    suite, &job, i, &trial, &grids, &room_of, counting, &mut acc, true,
                )?;
                tick();
            }
            Ok(acc)
        })
        .try_reduce(empty, |a, b| {
            a.into_iter().zip(b).map(|(x, y)| x.add(y)).collect()
        })?;
    counts = counts
        .into_iter()
        .zip(streamed_counts)
        .map(|(x, y)| x.add(y))
        .collect::<Result<_, _>>()?;

    // The tail: thresholds above each pilot grid, scored on the trials that reach them.
    let tails: Vec<Vec<f64>> = grids
        .iter()
        .zip(&mut counts)
        .map(|(grid, c)| {
            c.beyond_top.sort_by_key(|b| b.0);
            tail_thresholds(*grid.last().unwrap_or(&f64::INFINITY), &c.beyond_top)
        })
        .collect();
    let mut again: Vec<usize> = counts
        .iter()
        .flat_map(|c| c.beyond_top.iter().map(|(i, _)| *i))
        .collect();
    again.sort_unstable();
    again.dedup();
    let tail_empty = || -> Vec<CalibrationCounts> {
        tails
            .iter()
            .map(|t| CalibrationCounts::new(t.len(), room_list.len(), &tail_template))
            .collect()
    };
    let tail_counts = again
        .par_iter()
        .try_fold(tail_empty, |mut acc, &i| -> Result<_, RunError> {
            let job = all_jobs.get(i);
            let trial = run_trial(suite, planned, &job)?;
            count_calibration_trial(
                suite, &job, i, &trial, &tails, &room_of, counting, &mut acc, false,
            )?;
            Ok(acc)
        })
        .try_reduce(tail_empty, |a, b| {
            a.into_iter().zip(b).map(|(x, y)| x.add(y)).collect()
        })?;

    let duration = |i: &usize| {
        let (scene, variant, _) = all_jobs.place(*i);
        suite.scenes[scene].variants[variant].scene.duration_s
    };
    let signal_s: f64 = (0..all_jobs.len()).map(|i| duration(&i)).sum::<f64>()
        + again.iter().map(duration).sum::<f64>();
    // Each detector's (and inside, each room's) tail fit is independent of the others:
    // in parallel, collected in order.
    let calibrated = grids
        .into_par_iter()
        .zip(counts)
        .zip(tails.into_par_iter().zip(tail_counts))
        .map(|((grid, c), (tail, t))| {
            let mut thresholds = grid;
            thresholds.extend(tail);
            let mut false_alarms = c.false_alarms;
            false_alarms.extend(t.false_alarms);
            let mut rooms = rooms_of(suite, 0);
            for (room, ((mut f, e), (tf, _))) in
                rooms.iter_mut().zip(c.rooms.into_iter().zip(t.rooms))
            {
                f.extend(tf);
                room.false_alarms = f;
                room.exposure_ns = e;
            }
            let mut tail_rooms: Vec<crate::rare_rates::RoomTail> = rooms
                .par_iter()
                .zip(&c.tails)
                .map(|(room, acc)| {
                    let scene = &suite.scenes[room.scene];
                    crate::rare_rates::fit_room(
                        &scene.id,
                        scene.variants[room.variant].sweep_value.as_deref(),
                        acc,
                        rare_rates_per_hour,
                    )
                })
                .collect();
            // The fitted curve and the stability table of the room that sets the
            // one-per-day threshold, for the report's pictures; the other rooms' tables go.
            let per_day = crate::rare_rates::REPORT_RATES_PER_HOUR[1];
            let limiting = match crate::rare_rates::worst_room(&tail_rooms, &[per_day]).first() {
                Some((_, Some(name))) => tail_rooms.iter().position(|r| r.name() == *name),
                _ => None,
            };
            if let Some(i) = limiting {
                crate::rare_rates::add_band(&mut tail_rooms[i], &c.tails[i]);
            }
            for (i, room) in tail_rooms.iter_mut().enumerate() {
                if Some(i) != limiting {
                    room.stability.clear();
                }
            }
            Calibrated {
                thresholds,
                false_alarms,
                exposure_ns: c.exposure_ns,
                rooms,
                failures: c.failures,
                tail_rooms,
                tails: c.tails,
            }
        })
        .collect();
    Ok((calibrated, signal_s))
}

/// How a product's calibration trials are counted at each grid threshold.
#[derive(Clone, Copy)]
enum Counting<'a> {
    /// Alarms outside every event window, over noise-only time (intrusion products).
    Alarms {
        logic: &'a AlarmLogic,
        window: MatchWindow,
    },
    /// Switch-ons of the output pin while the room is empty, over empty time (presence
    /// products).
    SwitchOns {
        timer: &'a Timer,
        rule: echobench_presence::MOfN,
    },
}

/// One calibration trial's truth with what its counting needs.
enum Prepared<'a> {
    Alarms {
        logic: &'a AlarmLogic,
        truth: TrialTruth,
    },
    SwitchOns {
        timer: &'a Timer,
        rule: echobench_presence::MOfN,
        truth: PresenceTruth,
    },
}

/// A trial's presence truth: moving while a target moves in the zone, still while one is
/// there without moving, empty otherwise.
fn presence_truth(trial: &TrialOutput) -> Result<PresenceTruth, RunError> {
    PresenceTruth::from_intervals(trial.duration_s, &trial.truth, &trial.still)
        .map_err(|e| RunError(format!("presence truth: {e}")))
}

/// The presence product's timer and M-of-N rule, when the product is one.
fn presence_setup(
    suite: &Suite,
    logic: &AlarmLogic,
) -> Result<Option<(PresenceOutput, Timer, echobench_presence::MOfN)>, RunError> {
    let Some(output) = suite.products.first().and_then(|p| p.kind.presence()) else {
        return Ok(None);
    };
    let timer = output.timer().map_err(|e| RunError(e.to_string()))?;
    Ok(Some((output.clone(), timer, logic.m_of_n())))
}

/// A trial's truth prepared for scoring: matching windows, and the present-but-still
/// intervals ignored.
fn trial_truth(trial: &TrialOutput, window: MatchWindow) -> Result<TrialTruth, RunError> {
    Ok(TrialTruth::new(&trial.truth, trial.duration_s, window)
        .map_err(|e| RunError(e.to_string()))?
        .ignoring(&trial.still))
}

/// One nuisance room (scene variant) in calibration: false alarms per grid threshold.
struct RoomCounts {
    scene: usize,
    variant: usize,
    false_alarms: Vec<u64>,
    exposure_ns: u64,
}

fn rooms_of(suite: &Suite, grid_len: usize) -> Vec<RoomCounts> {
    let mut out = Vec::new();
    for (si, scene) in suite.scenes.iter().enumerate() {
        if scene.label != SceneLabel::Nuisance
            || scene.calibration_trials == 0
            || scene.occurrences_per_day.is_some()
        {
            continue;
        }
        for vi in 0..scene.variants.len() {
            out.push(RoomCounts {
                scene: si,
                variant: vi,
                false_alarms: vec![0; grid_len],
                exposure_ns: 0,
            });
        }
    }
    out
}

/// The operating threshold for `target` false alarms per hour: the lowest grid threshold
/// whose calibration rate meets the target in every nuisance room (worst room), or on the
/// pooled calibration time; the top of the grid (nothing alarms in calibration) when none
/// does. A product without nuisance rooms falls back to the pooled rule.
fn choose_operating_point(
    target: f64,
    rule: echobench_suite::ThresholdRule,
    thresholds: &[f64],
    pooled_false_alarms: &[u64],
    pooled_exposure_ns: u64,
    rooms: &[RoomCounts],
    suite: &Suite,
) -> OperatingPoint {
    let meets = |false_alarms: u64, exposure_ns: u64| {
        let hours = exposure_ns as f64 / 3.6e12;
        hours > 0.0 && false_alarms as f64 / hours <= target
    };
    let measured: Vec<&RoomCounts> = rooms.iter().filter(|r| r.exposure_ns > 0).collect();
    let worst_room = rule == echobench_suite::ThresholdRule::WorstRoom && !measured.is_empty();
    let top = thresholds.len() - 1;
    let grid_index = if worst_room {
        (0..thresholds.len())
            .find(|&g| {
                measured
                    .iter()
                    .all(|r| meets(r.false_alarms[g], r.exposure_ns))
            })
            .unwrap_or(top)
    } else {
        (0..thresholds.len())
            .find(|&g| meets(pooled_false_alarms[g], pooled_exposure_ns))
            .unwrap_or(top)
    };
    let room_label = |r: &RoomCounts| {
        let scene = &suite.scenes[r.scene];
        room_name(&scene.id, scene.variants[r.variant].sweep_value.as_deref())
    };
    // The room that still exceeded the target one grid step lower set the threshold;
    // the highest rate there when several did.
    let limiting_room = (worst_room && grid_index > 0)
        .then(|| {
            measured
                .iter()
                .filter(|r| !meets(r.false_alarms[grid_index - 1], r.exposure_ns))
                .max_by(|a, b| {
                    let rate = |r: &RoomCounts| {
                        r.false_alarms[grid_index - 1] as f64 / r.exposure_ns as f64
                    };
                    rate(a).total_cmp(&rate(b))
                })
                .map(|r| room_label(r))
        })
        .flatten();
    OperatingPoint {
        target_per_hour: target,
        grid_index,
        threshold: thresholds[grid_index],
        calibration_false_alarms: pooled_false_alarms[grid_index],
        calibration_exposure_ns: pooled_exposure_ns,
        rule: if worst_room {
            echobench_suite::ThresholdRule::WorstRoom.name().into()
        } else {
            echobench_suite::ThresholdRule::Pooled.name().into()
        },
        rooms: rooms
            .iter()
            .map(|r| {
                let scene = &suite.scenes[r.scene];
                RoomCalibration {
                    scene: scene.id.clone(),
                    sweep_value: scene.variants[r.variant].sweep_value.clone(),
                    false_alarms: r.false_alarms[grid_index],
                    exposure_ns: r.exposure_ns,
                }
            })
            .collect(),
        limiting_room,
    }
}

/// The stream of the suite's first scene (for nominal operating points, which
/// depend on the sample rate only through bin layouts).
fn suite_stream_info(suite: &Suite) -> echobench_core::StreamInfo {
    let s = &suite.scenes[0].variants[0].scene.sensor;
    echobench_core::StreamInfo {
        sample_rate_hz: s.sample_rate_hz,
        channels: s.output,
        adc_bits: s.adc.bits,
        carrier_hz: s.carrier_hz,
    }
}

fn empty_like(t: &DetectorTally) -> DetectorTally {
    DetectorTally {
        product: t.product.clone(),
        kind: t.kind.clone(),
        presence_output: t.presence_output.clone(),
        tail: t.tail.clone(),
        pinned_tail: t.pinned_tail.clone(),
        calibration_rooms: t.calibration_rooms.clone(),
        calibration_pooled: t.calibration_pooled.clone(),
        label: t.label.clone(),
        plugin: t.plugin.clone(),
        params: t.params.clone(),
        thresholds: t.thresholds.clone(),
        operating: t.operating.clone(),
        nominal: t.nominal,
        pinned: t.pinned.clone(),
        cost: t.cost,
        variants: t.variants.clone(),
        failures: Vec::new(),
    }
}

#[allow(clippy::too_many_arguments)]
fn tally_trial(
    v: &mut VariantTally,
    scores: &[Score],
    truth: &TrialTruth,
    trial: &TrialOutput,
    logic: &AlarmLogic,
    thresholds: &[f64],
    operating: &[usize],
    pinned: &[f64],
    nominal: Option<f64>,
    trial_index: u64,
) {
    v.trials += 1;
    v.events += truth.events().len() as u64;
    // A rare event's trial is one occurrence, not noise-only time of a room.
    let steady = v.occurrences_per_day.is_none();
    if steady {
        v.exposure_ns += ns(truth.exposure_s());
    }
    let results = score_thresholds(scores, truth, logic, thresholds);
    for (g, r) in results.iter().enumerate() {
        v.detected[g] += r.events_detected() as u64;
        v.retriggers[g] += r.retriggers as u64;
        if steady {
            v.false_alarms[g] += r.false_alarms() as u64;
        } else if r.false_alarms() > 0 {
            v.trials_alarmed[g] += 1;
        }
    }
    for (o, &g) in operating.iter().enumerate() {
        tally_operating(&mut v.operating[o], &results[g], trial, trial_index, steady);
    }
    if !pinned.is_empty() {
        let pinned_results = score_thresholds(scores, truth, logic, pinned);
        for (op, r) in v.pinned.iter_mut().zip(&pinned_results) {
            tally_operating(op, r, trial, trial_index, steady);
        }
    }
    let max = scores
        .iter()
        .map(|s| s.value)
        .fold(f64::NEG_INFINITY, f64::max);
    v.max_scores
        .push((trial_index, if max.is_finite() { max } else { 0.0 }));
    for s in scores {
        if truth.is_noise_time(s.t_s) {
            v.noise_frames += 1;
            if nominal.is_some_and(|n| s.value >= n) {
                v.noise_frames_above_nominal += 1;
            }
        }
    }
}

/// Scores a presence product's output pin on one test trial: at each operating point,
/// at each hold of the sweep there, and at each pinned threshold.
fn tally_presence(
    v: &mut VariantTally,
    scores: &[Score],
    occupancy: &PresenceTruth,
    output: &PresenceOutput,
    timer: &Timer,
    rule: echobench_presence::MOfN,
    detector: &DetectorTally,
) -> Result<(), RunError> {
    let error = |e: echobench_presence::PresenceError| RunError(format!("presence scoring: {e}"));
    let frames = statistic_frames(scores, rule);
    let conditions =
        |threshold: f64| -> Vec<_> { frames.iter().map(|f| f.condition(threshold)).collect() };
    for (o, point) in detector.operating.iter().enumerate() {
        let at_threshold = conditions(point.threshold);
        v.presence[o].merge(&score_trial(&at_threshold, occupancy, timer).map_err(error)?);
        for (h, &hold_s) in output.hold_sweep_s.iter().enumerate() {
            let hold_ns = Timer::new(hold_s).map_err(error)?.hold_ns();
            let swept = timer.with_hold_ns(hold_ns).map_err(error)?;
            v.hold_sweep[o][h]
                .merge(&score_trial(&at_threshold, occupancy, &swept).map_err(error)?);
        }
    }
    for (p, point) in detector.pinned.iter().enumerate() {
        v.pinned_presence[p]
            .merge(&score_trial(&conditions(point.threshold), occupancy, timer).map_err(error)?);
    }
    Ok(())
}

/// Adds one trial's scoring at one threshold; `steady` is false for a rare event's
/// occurrence, whose false alarms are kept per trial only (they are not a rate per hour).
fn tally_operating(
    op: &mut OperatingTally,
    r: &crate::events::TrialEventScore,
    trial: &TrialOutput,
    trial_index: u64,
    steady: bool,
) {
    op.detected += r.events_detected() as u64;
    op.latencies_ms
        .extend(r.latencies_s().iter().map(|l| (l * 1e3).round() as i64));
    if steady {
        op.false_alarms += r.false_alarms() as u64;
        op.stuck_recounts += r.stuck_recounts as u64;
        op.false_on_ns += r.false_on_ns;
        for sources in
            crate::events::attribute_false_alarms(&r.false_alarm_times_s, &trial.nuisances, 0.0)
        {
            if sources.is_empty() {
                *op.false_alarms_by_source.entry("none".into()).or_default() += 1;
            }
            for source in sources {
                *op.false_alarms_by_source.entry(source).or_default() += 1;
            }
        }
    }
    op.trials.push(TrialOutcome {
        trial: trial_index,
        false_alarms: r.false_alarms() as u32,
        events: r.events_total() as u32,
        detected: r.events_detected() as u32,
    });
}

fn add_partials(
    mut a: (Vec<DetectorTally>, Timing, u64, u64),
    b: (Vec<DetectorTally>, Timing, u64, u64),
) -> (Vec<DetectorTally>, Timing, u64, u64) {
    for (x, y) in a.0.iter_mut().zip(b.0) {
        merge_detector(x, y);
    }
    a.1.synthesis_s += b.1.synthesis_s;
    a.1.samples += b.1.samples;
    for (k, v) in b.1.detector_s {
        *a.1.detector_s.entry(k).or_default() += v;
    }
    (a.0, a.1, a.2 + b.2, a.3 + b.3)
}

/// Adds `other`'s counts into `into` (same suite, same thresholds).
pub fn merge_detector(into: &mut DetectorTally, other: DetectorTally) {
    for (a, b) in into.variants.iter_mut().zip(other.variants) {
        a.trials += b.trials;
        a.events += b.events;
        a.exposure_ns += b.exposure_ns;
        for (x, y) in a.detected.iter_mut().zip(&b.detected) {
            *x += y;
        }
        for (x, y) in a.false_alarms.iter_mut().zip(&b.false_alarms) {
            *x += y;
        }
        for (x, y) in a.trials_alarmed.iter_mut().zip(&b.trials_alarmed) {
            *x += y;
        }
        for (x, y) in a.retriggers.iter_mut().zip(&b.retriggers) {
            *x += y;
        }
        for (x, y) in a
            .operating
            .iter_mut()
            .zip(b.operating)
            .chain(a.pinned.iter_mut().zip(b.pinned))
        {
            x.detected += y.detected;
            x.false_alarms += y.false_alarms;
            x.stuck_recounts += y.stuck_recounts;
            x.false_on_ns += y.false_on_ns;
            x.latencies_ms.extend(y.latencies_ms);
            for (k, v) in y.false_alarms_by_source {
                *x.false_alarms_by_source.entry(k).or_default() += v;
            }
            x.trials.extend(y.trials);
        }
        for (x, y) in a
            .presence
            .iter_mut()
            .zip(&b.presence)
            .chain(a.pinned_presence.iter_mut().zip(&b.pinned_presence))
        {
            x.merge(y);
        }
        for (xs, ys) in a.hold_sweep.iter_mut().zip(&b.hold_sweep) {
            for (x, y) in xs.iter_mut().zip(ys) {
                x.merge(y);
            }
        }
        a.max_scores.extend(b.max_scores);
        a.noise_frames += b.noise_frames;
        a.noise_frames_above_nominal += b.noise_frames_above_nominal;
    }
    into.failures.extend(other.failures);
}

/// Puts every list in its canonical order, so outputs do not depend on thread timing.
pub fn normalise(tally: &mut DetectorTally) {
    for v in &mut tally.variants {
        v.max_scores
            .sort_by(|a, b| a.0.cmp(&b.0).then(a.1.total_cmp(&b.1)));
        for op in v.operating.iter_mut().chain(v.pinned.iter_mut()) {
            op.latencies_ms.sort_unstable();
            op.trials.sort_unstable();
        }
    }
    tally.failures.sort();
}

/// Merges shard tallies of one suite into one.
///
/// # Errors
/// When the tallies come from different suites, seeds or threshold grids, or a shard appears twice.
pub fn merge_tallies(parts: Vec<Tallies>) -> Result<Tallies, RunError> {
    let mut iter = parts.into_iter();
    let mut merged = iter
        .next()
        .ok_or_else(|| RunError("nothing to merge".into()))?;
    for part in iter {
        if part.suite != merged.suite || part.seed != merged.seed || part.schema != merged.schema {
            return Err(RunError(format!(
                "cannot merge suite `{}` seed {} with suite `{}` seed {}",
                part.suite, part.seed, merged.suite, merged.seed
            )));
        }
        for shard in &part.shards {
            if merged.shards.contains(shard) {
                return Err(RunError(format!(
                    "shard {}/{} appears twice",
                    shard.index, shard.count
                )));
            }
        }
        if merged.shards.is_empty() || part.shards.is_empty() {
            return Err(RunError(
                "a whole run cannot be merged with another run".into(),
            ));
        }
        merged.shards.extend(part.shards);
        merged.test_trials += part.test_trials;
        merged.test_signal_ms += part.test_signal_ms;
        for (a, b) in merged.detectors.iter_mut().zip(part.detectors) {
            if a.thresholds != b.thresholds
                || a.label != b.label
                || a.product != b.product
                || a.pinned != b.pinned
            {
                return Err(RunError(format!(
                    "product `{}`, detector `{}`: the shards' threshold grids differ",
                    a.product, a.label
                )));
            }
            merge_detector(a, b);
        }
    }
    merged.shards.sort_by_key(|s| s.index);
    let count = merged.shards[0].count;
    if merged.shards.iter().any(|s| s.count != count) {
        return Err(RunError(
            "the shards come from splits of different sizes".into(),
        ));
    }
    if merged.shards.len() as u64 == count {
        // Every shard is present: the merged tallies are the whole run.
        merged.shards.clear();
    }
    for d in &mut merged.detectors {
        normalise(d);
    }
    Ok(merged)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shards_parse_and_split_every_key_once() {
        assert_eq!(Shard::parse("2/3").unwrap(), Shard { index: 2, count: 3 });
        assert!(
            Shard::parse("0/3").is_err()
                && Shard::parse("4/3").is_err()
                && Shard::parse("x").is_err()
        );
        let shards: Vec<Shard> = (1..=3).map(|k| Shard { index: k, count: 3 }).collect();
        for trial in 0..100 {
            let key = StreamKey::new(5, "scene", trial);
            assert_eq!(shards.iter().filter(|s| s.owns(&key)).count(), 1);
        }
    }

    /// Above the pilot grid the largest trial maxima are thresholds one by one, so the
    /// counted threshold of a rare target (at most a few alarms) is exact; below them the
    /// thresholds are spaced in rank, and one is added above the largest.
    #[test]
    fn tail_thresholds_keep_every_top_maximum() {
        let beyond: Vec<(usize, f64)> = (0..1000).map(|i| (i, 10.0 + i as f64)).collect();
        let t = tail_thresholds(10.5, &beyond);
        assert_eq!(t.len(), TAIL_THRESHOLDS + 1);
        // The 999 maxima above the top are 11..=1009; the largest 32 are all there.
        for k in 0..TAIL_EXACT_TOP {
            assert!(
                t.contains(&(1009.0 - k as f64)),
                "maximum {} missing",
                1009 - k
            );
        }
        assert_eq!(t[0], 11.0);
        assert!(t.windows(2).all(|w| w[0] < w[1]));
        assert!(*t.last().unwrap() > 1009.0);
        // Few maxima: every one.
        let few: Vec<(usize, f64)> = (0..5).map(|i| (i, i as f64)).collect();
        assert_eq!(tail_thresholds(0.5, &few)[..4], [1.0, 2.0, 3.0, 4.0]);
    }

    /// The calibration jobs made one at a time from their index are the listed ones, in
    /// the same order (the default suite: many scenes, sweeps, a rare event without any).
    #[test]
    fn calibration_jobs_by_index_are_the_listed_jobs() {
        let plugins = echobench_detectors::builtin();
        let suite = echobench_suite::default_suite(&plugins).unwrap();
        let listed = jobs(&suite, true, None);
        let by_index = CalibrationJobs::new(&suite);
        assert_eq!(by_index.len(), listed.len());
        for (i, job) in listed.iter().enumerate() {
            let made = by_index.get(i);
            assert_eq!(
                (made.scene, made.variant, &made.key, made.calibration),
                (job.scene, job.variant, &job.key, job.calibration),
                "job {i}"
            );
        }
    }

    /// The streamed calibration (pilot grid, streamed counts, re-run tail) gives exactly
    /// the false alarms that scoring every kept trace at the same thresholds gives.
    #[test]
    fn streamed_calibration_counts_equal_the_brute_force_counts() {
        let plugins = echobench_detectors::builtin();
        let mut suite = echobench_suite::default_suite(&plugins)
            .unwrap()
            .product_view("corridor-lights-2g4");
        suite
            .scenes
            .retain(|s| s.id == "porch-palm-gusts" || s.id == "warehouse-aisle-crossing");
        for scene in &mut suite.scenes {
            scene.calibration_trials = if scene.label == SceneLabel::Nuisance {
                PILOT_TRIALS + 40
            } else {
                2
            };
        }
        suite
            .detectors
            .retain(|d| d.label == "energy" || d.label == "band-ratio");
        let detectors = resolve_detectors(&suite, &plugins).unwrap();
        let planned = PlannedDetectors::new(&detectors);
        let (logic, window) = alarm_logic(&suite).unwrap();
        let (calibrated, _) = calibrate(
            &suite,
            &planned,
            Counting::Alarms {
                logic: &logic,
                window,
            },
            &crate::rare_rates::REPORT_RATES_PER_HOUR,
            &|_| {},
        )
        .unwrap();
        let all_jobs = jobs(&suite, true, None);
        let mut tails = 0;
        for (di, cal) in calibrated.iter().enumerate() {
            assert!(cal.thresholds.windows(2).all(|w| w[0] < w[1]));
            let grid_len = threshold_grid(vec![0.0, 1.0], suite.scoring.threshold_count).len();
            tails += cal.thresholds.len().saturating_sub(grid_len);
            let mut pooled = vec![0u64; cal.thresholds.len()];
            let mut room = vec![0u64; cal.thresholds.len()];
            let (mut peaks, mut pilot_scores) = (Vec::new(), Vec::new());
            for job in &all_jobs {
                let trial = run_trial(&suite, &planned, job).unwrap();
                let Trace::Ok { scores, .. } = &trial.traces[di] else {
                    panic!("no failures here")
                };
                let mut statistic = MOfNStatistic::new(logic.m_of_n());
                peaks.push(
                    scores
                        .iter()
                        .map(|s| statistic.push(s.value))
                        .fold(f64::NEG_INFINITY, f64::max),
                );
                if job.key.trial < PILOT_TRIALS {
                    pilot_scores.extend(scores.iter().map(|s| s.value));
                }
                let truth = trial_truth(&trial, window).unwrap();
                for (g, r) in score_thresholds(scores, &truth, &logic, &cal.thresholds)
                    .iter()
                    .enumerate()
                {
                    pooled[g] += r.false_alarms() as u64;
                    if suite.scenes[job.scene].label == SceneLabel::Nuisance {
                        room[g] += r.false_alarms() as u64;
                    }
                }
            }
            assert_eq!(pooled, cal.false_alarms, "detector {di}");
            assert_eq!(room, cal.rooms[0].false_alarms, "detector {di}");
            // Above the pilot grid the thresholds are values of the alarm statistic (the 2nd
            // largest of 3 scores here), where the counts change: the last but one is the
            // calibration's largest alarm peak, not its largest raw score.
            let pilot_len = threshold_grid(pilot_scores, suite.scoring.threshold_count).len();
            if let Some((last, beyond)) = cal.thresholds[pilot_len..].split_last() {
                let largest = peaks.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                assert!(*last > largest, "detector {di}");
                for t in beyond {
                    assert!(
                        peaks.contains(t),
                        "detector {di}: {t} is no trial's alarm peak"
                    );
                }
                assert_eq!(beyond.last(), Some(&largest), "detector {di}");
            }
        }
        assert!(
            tails > 0,
            "the streamed trials must reach beyond the pilot grid"
        );
        // The same counts on one thread as on two (the folds add integers).
        for threads in [1, 2] {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap();
            let (again, _) = pool
                .install(|| {
                    calibrate(
                        &suite,
                        &PlannedDetectors::new(&detectors),
                        Counting::Alarms {
                            logic: &logic,
                            window,
                        },
                        &crate::rare_rates::REPORT_RATES_PER_HOUR,
                        &|_| {},
                    )
                })
                .unwrap();
            for (a, b) in again.iter().zip(&calibrated) {
                assert_eq!(a.thresholds, b.thresholds, "{threads} threads");
                assert_eq!(a.false_alarms, b.false_alarms, "{threads} threads");
                assert_eq!(a.exposure_ns, b.exposure_ns, "{threads} threads");
                // The tail fits too: the accumulators merge to the same frames in any order.
                assert_eq!(a.tail_rooms, b.tail_rooms, "{threads} threads");
            }
        }
    }

    #[test]
    fn grid_is_sorted_unique_and_tops_the_largest_score() {
        let scores: Vec<f64> = (0..10_000)
            .map(|i| (i as f64 * 0.37).sin().abs() * 10.0)
            .collect();
        let grid = threshold_grid(scores.clone(), 120);
        assert!(grid.windows(2).all(|w| w[0] < w[1]));
        assert!(*grid.last().unwrap() > scores.iter().cloned().fold(0.0, f64::max));
        assert!(grid.len() > 60);
    }
}
