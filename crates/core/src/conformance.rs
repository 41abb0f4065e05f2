//! The conformance kit: the detector contract, checked in one call.
//!
//! A detector that keeps the contract of [`crate::detector`] can be scored by
//! the harness on any stream, split into blocks however its owner likes. The
//! rules are easy to state and easy to break by accident (an I/Q block read
//! two pairs at a time, a counter that `reset` forgets, a buffer the plan
//! hands to every state), so they are checked here once, the same way for
//! every plugin, built-in or not. The kit plans once, as the runner does, and
//! starts every state it feeds from that one plan:
//!
//! ```
//! use echobench_core::conformance;
//! use echobench_core::detector::{test_stream, DetectorPlugin, Params};
//! # use echobench_core::conformance::tests_support::MeanPlugin as MyPlugin;
//! let plugin = MyPlugin;
//! conformance::assert_conforms(&plugin, &Params::defaults(plugin.params()), &test_stream(2000.0));
//! ```
//!
//! **The one design decision: the kit makes its own signals.** A caller gives
//! only the plugin, its parameters and the stream description; the kit
//! synthesizes a deterministic test stream (a bias, a Doppler-like tone that
//! comes and goes, seeded noise), silence, a full-scale square wave and a
//! stream with non-finite samples, so that no detector can pass by being fed
//! only what it was tuned on. Each failed rule is one [`Violation`] naming the
//! [`Rule`]; all rules are checked, so one call lists every problem.
//!
//! **Non-finite input (NaN, ±∞).** The decision: a detector must not panic
//! and must not emit a non-finite score. It may either treat such samples in a
//! documented way and keep scoring (every built-in counts them as 0) or report
//! a failure (`process` returns a `DetectorFailure`), which the harness records for that trial.

use crate::detector::{
    check_scores, Detector, DetectorPlan, DetectorPlugin, FrameScore, Params, Samples,
};
use crate::seed::mix64;
use crate::{Channels, StreamInfo};
use std::fmt;
use std::panic::{catch_unwind, AssertUnwindSafe};

/// Length of the kit's test streams unless the caller asks for another
/// ([`check_for`]): 10 s holds at least two decisions of every built-in (the
/// longest, `periodicity`, analyses 4 s windows every 0.5 s by default).
pub const DEFAULT_DURATION_S: f64 = 10.0;

/// The lower rail of the kit's clipping test, volts: the default ADC span of a
/// scene (`sensor.adc.full_scale_v` = 3.3 V, unipolar from 0 V).
pub const RAIL_LOW_V: f32 = 0.0;

/// The upper rail of the kit's clipping test, volts (see [`RAIL_LOW_V`]).
pub const RAIL_HIGH_V: f32 = 3.3;

/// One rule of the detector contract.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Rule {
    /// The plugin plans a detector with the given parameters for the stream.
    Builds,
    /// The kit's test stream runs without a panic or a failure and yields at least one score.
    Runs,
    /// Blocks of 1, 7, mixed odd sizes and one big block give bit-identical scores.
    BlockSizeInvariance,
    /// I/Q streams: blocks of odd numbers of pairs give the same scores as one block (a
    /// typed block cannot split a pair, but a detector can still read pairs two at a time).
    OddIqBlocks,
    /// A state reset after other input repeats the scores of a fresh state from the same plan.
    Reset,
    /// Two states started from one plan and fed in turns give the scores each gives alone.
    Independent,
    /// Silence (all zeros) gives finite scores.
    Silence,
    /// A full-scale square wave between the ADC rails gives finite scores.
    Clipping,
    /// NaN and ±∞ samples cause no panic and no non-finite score (a reported failure is allowed).
    NonFiniteInput,
    /// A stream of a single sample is handled.
    SingleSample,
    /// Scores are finite, in time order, and none lies after the samples given so far.
    TimeOrder,
}

impl Rule {
    /// Every rule, in the order the kit checks them.
    pub const ALL: [Rule; 11] = [
        Rule::Builds,
        Rule::Runs,
        Rule::BlockSizeInvariance,
        Rule::OddIqBlocks,
        Rule::Reset,
        Rule::Independent,
        Rule::Silence,
        Rule::Clipping,
        Rule::NonFiniteInput,
        Rule::SingleSample,
        Rule::TimeOrder,
    ];

    /// The rule's short name, as messages show it.
    pub fn name(self) -> &'static str {
        match self {
            Rule::Builds => "builds",
            Rule::Runs => "runs",
            Rule::BlockSizeInvariance => "block-size invariance",
            Rule::OddIqBlocks => "odd I/Q blocks",
            Rule::Reset => "reset",
            Rule::Independent => "independent states",
            Rule::Silence => "silence",
            Rule::Clipping => "full-scale clipping",
            Rule::NonFiniteInput => "NaN input",
            Rule::SingleSample => "single sample",
            Rule::TimeOrder => "time order",
        }
    }
}

impl fmt::Display for Rule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// A broken rule, with what the kit saw.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Violation {
    /// The rule.
    pub rule: Rule,
    /// What happened, in words (the first differing score, the panic message, ...).
    pub message: String,
}

impl fmt::Display for Violation {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "rule `{}`: {}", self.rule, self.message)
    }
}

/// Checks every rule on `plugin` with `params` for streams like `info`, over
/// [`DEFAULT_DURATION_S`] of signal.
///
/// # Errors
/// Every broken rule, in the order of [`Rule::ALL`].
pub fn check(
    plugin: &dyn DetectorPlugin,
    params: &Params,
    info: &StreamInfo,
) -> Result<(), Vec<Violation>> {
    check_for(plugin, params, info, DEFAULT_DURATION_S)
}

/// Panics with every violation listed when `plugin` breaks a rule: the one
/// line a detector's tests need.
///
/// # Panics
/// When [`check`] reports a violation.
pub fn assert_conforms(plugin: &dyn DetectorPlugin, params: &Params, info: &StreamInfo) {
    if let Err(violations) = check(plugin, params, info) {
        let lines: Vec<String> = violations.iter().map(|v| format!("  {v}")).collect();
        panic!(
            "detector `{}` on a {} stream at {} Hz breaks the contract:\n{}",
            plugin.id(),
            info.channels,
            info.sample_rate_hz,
            lines.join("\n")
        );
    }
}

/// [`assert_conforms`] with the plugin's default parameters on 2 kHz test streams of each
/// of `channels` (real, and I/Q for a detector that takes it): a built-in's whole
/// conformance test in one line.
///
/// # Panics
/// When any stream breaks a rule.
pub fn assert_defaults_conform(plugin: &dyn DetectorPlugin, channels: &[crate::Channels]) {
    let params = Params::defaults(plugin.params());
    for &channels in channels {
        let info = StreamInfo {
            channels,
            ..crate::detector::test_stream(2000.0)
        };
        assert_conforms(plugin, &params, &info);
    }
}

/// As [`check`], over `duration_s` of signal (for a detector whose first
/// decision comes later than [`DEFAULT_DURATION_S`]).
///
/// # Errors
/// Every broken rule, in the order of [`Rule::ALL`].
pub fn check_for(
    plugin: &dyn DetectorPlugin,
    params: &Params,
    info: &StreamInfo,
    duration_s: f64,
) -> Result<(), Vec<Violation>> {
    let mut found = Vec::new();
    let mut violate = |rule: Rule, message: String| found.push(Violation { rule, message });
    let instants = if info.sample_rate_hz.is_finite() && duration_s.is_finite() {
        (duration_s * info.sample_rate_hz).round().max(1.0) as usize
    } else {
        1
    };
    let channels = info.channels.count();
    // One plan, as the runner makes one per stream shape; every state below starts from it.
    let plan: std::sync::Arc<dyn DetectorPlan> =
        match catch_unwind(AssertUnwindSafe(|| plugin.plan(params, info))) {
            Ok(Ok(plan)) => plan,
            Ok(Err(e)) => {
                violate(Rule::Builds, e.to_string());
                return Err(found);
            }
            Err(p) => {
                violate(Rule::Builds, crate::detector::panic_message(p));
                return Err(found);
            }
        };
    let fresh = || -> Result<Box<dyn Detector>, String> {
        catch_unwind(AssertUnwindSafe(|| plan.start()))
            .map_err(|p| format!("{} in `start`", crate::detector::panic_message(p)))
    };
    let mut detector = match fresh() {
        Ok(d) => d,
        Err(message) => {
            violate(Rule::Builds, message);
            return Err(found);
        }
    };
    let feed = |detector: &mut dyn Detector, samples: &[f32], split: Split| {
        feed(detector, samples, split, info)
    };

    // The reference: the test stream in one block.
    let stream = test_signal(instants, info.channels, 0x6b69_7431);
    let reference = match feed(detector.as_mut(), &stream, Split::Whole) {
        Fed::Scores(s) if s.is_empty() => {
            violate(
                Rule::Runs,
                format!(
                    "no score from {duration_s} s of signal (give a longer stream with `check_for`)"
                ),
            );
            None
        }
        Fed::Scores(s) => Some(s),
        Fed::Failed(m) => {
            violate(Rule::Runs, format!("failed on the test stream: {m}"));
            None
        }
        Fed::Panicked(m) => {
            violate(Rule::Runs, format!("{m} on the test stream"));
            None
        }
        Fed::Future(m) => {
            violate(Rule::TimeOrder, m);
            None
        }
    };
    if let Some(reference) = &reference {
        if let Err((i, m)) = check_scores(reference) {
            violate(Rule::TimeOrder, format!("score {i}: {m}"));
        }
        // Block sizes in sample instants: whole pairs on I/Q streams.
        for sizes in [&[1][..], &[7], &[13, 1, 255, 3, 4097]] {
            let split = Split::Cycle(sizes.iter().map(|n| n * channels).collect());
            let label = format!("blocks of {sizes:?} samples");
            compare(
                &fresh,
                info,
                &stream,
                split,
                reference,
                Rule::BlockSizeInvariance,
                &label,
                &mut violate,
            );
        }
        if info.channels == Channels::Iq {
            // Blocks of odd numbers of pairs, mixed with even ones.
            for sizes in [&[3][..], &[5, 2, 9], &[2, 2, 1]] {
                let split = Split::Cycle(sizes.iter().map(|n| 2 * n).collect());
                let label = format!("blocks of {sizes:?} I/Q pairs");
                compare(
                    &fresh,
                    info,
                    &stream,
                    split,
                    reference,
                    Rule::OddIqBlocks,
                    &label,
                    &mut violate,
                );
            }
        }
        // Reset: other input (louder, ending mid-frame), a reset, then the test stream.
        match fresh() {
            Err(m) => violate(Rule::Reset, format!("a second start failed: {m}")),
            Ok(mut d) => {
                let before = test_signal(instants * 3 / 5 + 3, info.channels, 0x7072_6566);
                let loud: Vec<f32> = before.iter().map(|x| 4.0 * x - 4.95).collect();
                let outcome = match feed(d.as_mut(), &loud, Split::Cycle(vec![64 * channels])) {
                    Fed::Panicked(m) => Err(format!("{m} before the reset")),
                    _ => match catch_unwind(AssertUnwindSafe(|| d.reset())) {
                        Err(p) => Err(format!("{} in `reset`", crate::detector::panic_message(p))),
                        Ok(()) => Ok(feed(d.as_mut(), &stream, Split::Whole)),
                    },
                };
                match outcome {
                    Err(m) => violate(Rule::Reset, m),
                    Ok(Fed::Scores(s)) => {
                        if let Some(m) = first_difference(&s, reference) {
                            violate(Rule::Reset, format!("after other input and `reset`, {m}"));
                        }
                    }
                    Ok(other) => {
                        violate(Rule::Reset, format!("after `reset`: {}", other.problem()))
                    }
                }
            }
        }
    }

    // Independence: two states from the one plan, fed in turns (the other one a louder,
    // different signal), must each give what they give alone.
    if let Some(reference) = &reference {
        match (fresh(), fresh()) {
            (Ok(mut a), Ok(mut b)) => {
                let other: Vec<f32> = test_signal(instants, info.channels, 0x6f74_6872)
                    .iter()
                    .map(|x| 3.0 * x - 3.3)
                    .collect();
                match interleave(a.as_mut(), b.as_mut(), &stream, &other, 97 * channels, info) {
                    Err(m) => violate(Rule::Independent, m),
                    Ok(s) => {
                        if let Some(m) = first_difference(&s, reference) {
                            violate(
                                Rule::Independent,
                                format!("fed in turns with a second state of the same plan, {m}"),
                            );
                        }
                    }
                }
            }
            (Err(m), _) | (_, Err(m)) => violate(Rule::Independent, m),
        }
    }

    // Silence, clipping and a single sample: finite scores in order, no failure.
    let silence = vec![0.0f32; instants * channels];
    let clipped: Vec<f32> = (0..instants * channels)
        .map(|i| {
            if (i / channels / 5).is_multiple_of(2) {
                RAIL_HIGH_V
            } else {
                RAIL_LOW_V
            }
        })
        .collect();
    let single = &stream[..channels];
    for (rule, samples) in [
        (Rule::Silence, &silence[..]),
        (Rule::Clipping, &clipped[..]),
        (Rule::SingleSample, single),
    ] {
        match fresh() {
            Err(m) => violate(rule, format!("a second start failed: {m}")),
            Ok(mut d) => match feed(d.as_mut(), samples, Split::Cycle(vec![256 * channels])) {
                Fed::Scores(s) => {
                    if let Err((i, m)) = check_scores(&s) {
                        violate(rule, format!("score {i}: {m}"));
                    }
                }
                other => violate(rule, other.problem()),
            },
        }
    }

    // Non-finite samples: a failure is an answer, a panic or a NaN score is not.
    let mut poisoned = stream.clone();
    let len = poisoned.len();
    for (k, bad) in [f32::NAN, f32::INFINITY, f32::NEG_INFINITY, f32::NAN]
        .into_iter()
        .enumerate()
    {
        poisoned[(len * (2 * k + 1) / 8).min(len - 1)] = bad;
    }
    match fresh() {
        Err(m) => violate(Rule::NonFiniteInput, format!("a second start failed: {m}")),
        Ok(mut d) => match feed(d.as_mut(), &poisoned, Split::Cycle(vec![256 * channels])) {
            Fed::Scores(s) => {
                if let Err((i, m)) = check_scores(&s) {
                    violate(Rule::NonFiniteInput, format!("score {i}: {m}"));
                }
            }
            Fed::Failed(_) => {}
            other => violate(Rule::NonFiniteInput, other.problem()),
        },
    }

    if found.is_empty() {
        Ok(())
    } else {
        found.sort_by_key(|v| v.rule);
        Err(found)
    }
}

/// Runs the test stream through a fresh detector split by `split` and
/// reports a difference from `reference` under `rule`.
#[allow(clippy::too_many_arguments)]
fn compare(
    fresh: &dyn Fn() -> Result<Box<dyn Detector>, String>,
    info: &StreamInfo,
    stream: &[f32],
    split: Split,
    reference: &[FrameScore],
    rule: Rule,
    label: &str,
    violate: &mut dyn FnMut(Rule, String),
) {
    match fresh() {
        Err(m) => violate(rule, format!("a second start failed: {m}")),
        Ok(mut d) => match feed(d.as_mut(), stream, split, info) {
            Fed::Scores(s) => {
                if let Some(m) = first_difference(&s, reference) {
                    violate(rule, format!("{label} against one block: {m}"));
                }
            }
            other => violate(rule, format!("{label}: {}", other.problem())),
        },
    }
}

/// How a stream is cut into blocks (lengths in values, cycled).
enum Split {
    /// One block.
    Whole,
    /// Block lengths repeated until the stream ends.
    Cycle(Vec<usize>),
}

/// What feeding a stream gave.
enum Fed {
    /// Scores, in the order emitted.
    Scores(Vec<FrameScore>),
    /// The detector reported a failure.
    Failed(String),
    /// The detector panicked.
    Panicked(String),
    /// A score stamped after the last sample given so far.
    Future(String),
}

impl Fed {
    fn problem(&self) -> String {
        match self {
            Fed::Scores(_) => "no problem".into(),
            Fed::Failed(m) => format!("reported a failure: {m}"),
            Fed::Panicked(m) => m.clone(),
            Fed::Future(m) => m.clone(),
        }
    }
}

/// Pushes `samples` through `detector` in blocks, catching panics, polling
/// failures and checking that no score lies after the samples given so far.
fn feed(detector: &mut dyn Detector, samples: &[f32], split: Split, info: &StreamInfo) -> Fed {
    let sizes = match split {
        Split::Whole => vec![samples.len().max(1)],
        Split::Cycle(sizes) => sizes,
    };
    let channels = info.channels.count();
    let mut out = Vec::new();
    let mut at = 0;
    for &size in sizes.iter().cycle() {
        if at >= samples.len() {
            break;
        }
        let end = (at + size.max(1)).min(samples.len());
        let before = out.len();
        match catch_unwind(AssertUnwindSafe(|| {
            let block = Samples::from_values(&samples[at..end], info.channels)
                .expect("the kit cuts I/Q streams between pairs");
            detector.process(block, &mut out)
        })) {
            Err(p) => {
                return Fed::Panicked(format!(
                    "{} in `process` (values {at}..{end})",
                    crate::detector::panic_message(p)
                ))
            }
            Ok(Err(failure)) => return Fed::Failed(failure.message),
            Ok(Ok(())) => {}
        }
        // Whole instants given so far; a frame may not end after them.
        let given = (end / channels) as u64;
        if let Some(s) = out[before..].iter().find(|s| s.end_sample > given) {
            return Fed::Future(format!(
                "a frame ending at sample {} after only {given} samples were given",
                s.end_sample
            ));
        }
        at = end;
    }
    Fed::Scores(out)
}

/// Feeds `mine` to `a` and `other` to `b` in turns, `block` values at a time,
/// and returns `a`'s scores (what `b` gives is not judged here).
fn interleave(
    a: &mut dyn Detector,
    b: &mut dyn Detector,
    mine: &[f32],
    other: &[f32],
    block: usize,
    info: &StreamInfo,
) -> Result<Vec<FrameScore>, String> {
    fn one(
        detector: &mut dyn Detector,
        values: &[f32],
        info: &StreamInfo,
        into: &mut Vec<FrameScore>,
    ) -> Result<(), String> {
        let block = Samples::from_values(values, info.channels)
            .expect("the kit cuts I/Q streams between pairs");
        match catch_unwind(AssertUnwindSafe(|| detector.process(block, into))) {
            Err(p) => Err(format!(
                "{} in `process`, fed in turns",
                crate::detector::panic_message(p)
            )),
            Ok(Err(failure)) => Err(format!("reported a failure: {}", failure.message)),
            Ok(Ok(())) => Ok(()),
        }
    }
    let (mut out, mut sink) = (Vec::new(), Vec::new());
    let mut at = 0;
    while at < mine.len() {
        let end = (at + block).min(mine.len());
        one(a, &mine[at..end], info, &mut out)?;
        one(
            b,
            &other[at.min(other.len())..end.min(other.len())],
            info,
            &mut sink,
        )?;
        at = end;
    }
    Ok(out)
}

/// Where two score traces first differ (bit for bit), in words.
fn first_difference(got: &[FrameScore], want: &[FrameScore]) -> Option<String> {
    let same = |a: &FrameScore, b: &FrameScore| {
        a.end_sample == b.end_sample && a.value.to_bits() == b.value.to_bits()
    };
    if let Some(i) = (0..got.len().min(want.len())).find(|&i| !same(&got[i], &want[i])) {
        return Some(format!(
            "score {i} is {} at sample {}, expected {} at sample {}",
            got[i].value, got[i].end_sample, want[i].value, want[i].end_sample
        ));
    }
    (got.len() != want.len()).then(|| format!("{} scores, expected {}", got.len(), want.len()))
}

/// The kit's test stream: `instants` samples (pairs on I/Q streams) of a
/// 1.65 V bias, a tone at fs/23 whose amplitude comes and goes (0.2 V peak,
/// off in the middle third) and seeded uniform noise of ±10 mV. On I/Q
/// streams the tone is a complex exponential (I = cos, Q = sin).
fn test_signal(instants: usize, channels: Channels, seed: u64) -> Vec<f32> {
    let mut state = seed;
    let mut noise = move || {
        state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        // 53 random bits to a uniform value in [-1, 1).
        (mix64(state) >> 11) as f64 / (1u64 << 52) as f64 - 1.0
    };
    let mut out = Vec::with_capacity(instants * channels.count());
    let omega = std::f64::consts::TAU / 23.0;
    for n in 0..instants {
        let on = !(instants / 3..2 * instants / 3).contains(&n);
        let amplitude = if on {
            0.2 * (0.5 + 0.5 * (n as f64 * omega / 97.0).cos())
        } else {
            0.0
        };
        let phase = n as f64 * omega;
        out.push((1.65 + amplitude * phase.cos() + 0.01 * noise()) as f32);
        if channels == Channels::Iq {
            out.push((1.65 + amplitude * phase.sin() + 0.01 * noise()) as f32);
        }
    }
    out
}

/// Small detectors for the kit's own examples and tests: one that keeps the
/// contract and two that break it on purpose. Public only so that the doc
/// example above can run; not part of the API a plugin uses.
#[doc(hidden)]
pub mod tests_support {
    use crate::detector::Samples;
    use crate::detector::{Cost, Detector, DetectorPlugin, ParamError, ParamSpec, Params};
    use crate::detector::{DetectorFailure, DetectorPlan, FrameScore, IqSample, PrototypePlan};
    use crate::param_decl::IntegerParam;
    use crate::StreamInfo;
    use std::sync::{Arc, Mutex};

    const FRAME_LEN: IntegerParam = IntegerParam {
        name: "frame_len",
        unit: "samples",
        about: "samples per frame",
        min: 1,
        max: 1 << 20,
        default: 50,
    };
    static PARAMS: [ParamSpec; 1] = [FRAME_LEN.spec()];

    /// How a test detector misbehaves.
    #[derive(Debug, Clone, Copy, PartialEq, Eq)]
    pub enum Flaw {
        /// None: keeps the contract.
        None,
        /// Reads I/Q blocks two pairs at a time (as a half-band decimator
        /// would), dropping the odd pair at the end of a block.
        DropsOddPair,
        /// `reset` does nothing.
        KeepsStateAcrossReset,
        /// Every state of one plan adds into one frame sum, kept in the plan.
        SharesStateAcrossStarts,
    }

    /// The mean power of each frame (|x|² summed over channels): small and correct.
    pub struct MeanPlugin;

    /// [`MeanPlugin`] with a flaw.
    pub struct FlawedPlugin(pub Flaw);

    impl DetectorPlugin for MeanPlugin {
        fn id(&self) -> &'static str {
            "kit-mean"
        }
        fn about(&self) -> &'static str {
            "mean power per frame (the conformance kit's example)"
        }
        fn params(&self) -> &'static [ParamSpec] {
            &PARAMS
        }
        fn plan(
            &self,
            params: &Params,
            info: &StreamInfo,
        ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
            FlawedPlugin(Flaw::None).plan(params, info)
        }
        fn check(&self, params: &Params, info: &StreamInfo) -> Result<(), ParamError> {
            FlawedPlugin(Flaw::None).check(params, info)
        }

        fn cost(&self, params: &Params, info: &StreamInfo) -> Option<Cost> {
            FlawedPlugin(Flaw::None).cost(params, info)
        }
    }

    impl DetectorPlugin for FlawedPlugin {
        fn id(&self) -> &'static str {
            "kit-flawed"
        }
        fn about(&self) -> &'static str {
            "mean power per frame, with a deliberate flaw"
        }
        fn params(&self) -> &'static [ParamSpec] {
            &PARAMS
        }
        fn plan(
            &self,
            params: &Params,
            info: &StreamInfo,
        ) -> Result<Arc<dyn DetectorPlan>, ParamError> {
            crate::detector::check_sample_rate(self.id(), info)?;
            Ok(PrototypePlan::shared(MeanDetector {
                flaw: self.0,
                frame_len: FRAME_LEN.get(params)? as u64,
                sum: 0.0,
                plan_sum: Arc::new(Mutex::new(0.0)),
                in_frame: 0,
                consumed: 0,
            }))
        }
        fn check(&self, _: &Params, info: &StreamInfo) -> Result<(), ParamError> {
            crate::detector::check_sample_rate(self.id(), info).map(|_| ())
        }

        fn cost(&self, _: &Params, _: &StreamInfo) -> Option<Cost> {
            Some(Cost {
                state_bytes: 32,
                ops_per_sample: 3.0,
            })
        }
    }

    #[derive(Clone)]
    struct MeanDetector {
        flaw: Flaw,
        frame_len: u64,
        sum: f64,
        /// The sum [`Flaw::SharesStateAcrossStarts`] uses: one cell behind an
        /// `Arc`, so every clone the plan starts writes the same one.
        plan_sum: Arc<Mutex<f64>>,
        in_frame: u64,
        consumed: u64,
    }

    impl MeanDetector {
        fn instant(&mut self, power: f64, out: &mut Vec<FrameScore>) {
            let power = if power.is_finite() { power } else { 0.0 };
            let mut shared = self.plan_sum.lock().unwrap_or_else(|e| e.into_inner());
            let sum = if self.flaw == Flaw::SharesStateAcrossStarts {
                &mut *shared
            } else {
                &mut self.sum
            };
            *sum += power;
            self.in_frame += 1;
            self.consumed += 1;
            if self.in_frame == self.frame_len {
                out.push(FrameScore {
                    end_sample: self.consumed,
                    value: *sum / self.frame_len as f64,
                });
                *sum = 0.0;
                self.in_frame = 0;
            }
        }
    }

    impl Detector for MeanDetector {
        fn process(
            &mut self,
            block: Samples<'_>,
            out: &mut Vec<FrameScore>,
        ) -> Result<(), DetectorFailure> {
            let sq = |x: f32| f64::from(x) * f64::from(x);
            let power = |[i, q]: IqSample| sq(i) + sq(q);
            match block {
                Samples::Real(x) => x.iter().for_each(|&x| self.instant(sq(x), out)),
                Samples::Iq(pairs) if self.flaw == Flaw::DropsOddPair => {
                    for two in pairs.chunks_exact(2) {
                        self.instant(power(two[0]), out);
                        self.instant(power(two[1]), out);
                    }
                }
                Samples::Iq(pairs) => pairs.iter().for_each(|&p| self.instant(power(p), out)),
            }
            Ok(())
        }

        fn reset(&mut self) {
            if self.flaw != Flaw::KeepsStateAcrossReset {
                self.sum = 0.0;
                *self.plan_sum.lock().unwrap_or_else(|e| e.into_inner()) = 0.0;
                self.in_frame = 0;
                self.consumed = 0;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::tests_support::{Flaw, FlawedPlugin, MeanPlugin};
    use super::*;
    use crate::detector::test_stream;

    fn iq(fs: f64) -> StreamInfo {
        StreamInfo {
            channels: Channels::Iq,
            ..test_stream(fs)
        }
    }

    fn rules(result: Result<(), Vec<Violation>>) -> Vec<Rule> {
        result
            .err()
            .unwrap_or_default()
            .iter()
            .map(|v| v.rule)
            .collect()
    }

    #[test]
    fn a_correct_detector_passes_on_real_and_iq_streams() {
        let params = Params::defaults(MeanPlugin.params());
        assert_eq!(check(&MeanPlugin, &params, &test_stream(2000.0)), Ok(()));
        assert_eq!(check(&MeanPlugin, &params, &iq(1000.0)), Ok(()));
    }

    #[test]
    fn a_detector_that_drops_an_odd_iq_pair_fails_the_odd_block_rule() {
        let plugin = FlawedPlugin(Flaw::DropsOddPair);
        let params = Params::defaults(plugin.params());
        let violations = check(&plugin, &params, &iq(1000.0)).unwrap_err();
        let odd: Vec<&Violation> = violations
            .iter()
            .filter(|v| v.rule == Rule::OddIqBlocks)
            .collect();
        // [3] and [5, 2, 9] leave odd pairs; [2, 2, 1] too, every third block.
        assert_eq!(odd.len(), 3, "{violations:?}");
        assert!(
            odd[0]
                .to_string()
                .starts_with("rule `odd I/Q blocks`: blocks of [3] I/Q pairs against one block"),
            "{}",
            odd[0]
        );
        // On a real stream there are no pairs.
        assert_eq!(check(&plugin, &params, &test_stream(1000.0)), Ok(()));
    }

    #[test]
    fn a_detector_that_keeps_state_across_reset_fails_the_reset_rule() {
        let plugin = FlawedPlugin(Flaw::KeepsStateAcrossReset);
        let params = Params::defaults(plugin.params());
        let violations = check(&plugin, &params, &test_stream(2000.0)).unwrap_err();
        assert_eq!(rules(Err(violations.clone())), vec![Rule::Reset]);
        assert!(
            violations[0].to_string().starts_with("rule `reset`: after"),
            "{}",
            violations[0]
        );
        let message =
            std::panic::catch_unwind(|| assert_conforms(&plugin, &params, &test_stream(2000.0)))
                .unwrap_err();
        let text = message.downcast_ref::<String>().expect("a formatted panic");
        assert!(
            text.contains("detector `kit-flawed`") && text.contains("rule `reset`"),
            "{text}"
        );
    }

    #[test]
    fn states_that_share_what_they_write_fail_the_independence_rule() {
        let plan_keeper = FlawedPlugin(Flaw::SharesStateAcrossStarts);
        let params = Params::defaults(plan_keeper.params());
        // Alone, each state is a correct detector: only feeding two in turns shows it.
        let violations = check(&plan_keeper, &params, &test_stream(2000.0)).unwrap_err();
        assert_eq!(rules(Err(violations.clone())), vec![Rule::Independent]);
        assert!(
            violations[0]
                .to_string()
                .starts_with("rule `independent states`: fed in turns with a second state"),
            "{}",
            violations[0]
        );
    }

    #[test]
    fn a_detector_that_never_scores_is_told_to_use_a_longer_stream() {
        let params = Params::resolve(
            "kit-mean",
            MeanPlugin.params(),
            &[(
                "frame_len".into(),
                crate::detector::ParamValue::Integer(100_000),
            )],
        )
        .unwrap();
        assert_eq!(
            rules(check(&MeanPlugin, &params, &test_stream(2000.0))),
            vec![Rule::Runs]
        );
        assert_eq!(
            check_for(&MeanPlugin, &params, &test_stream(2000.0), 60.0),
            Ok(())
        );
    }

    #[test]
    fn the_test_signal_is_deterministic_and_has_its_quiet_third() {
        let a = test_signal(3000, Channels::Iq, 1);
        assert_eq!(a, test_signal(3000, Channels::Iq, 1));
        assert_eq!(a.len(), 6000);
        // The middle third holds only bias and noise: within 10 mV of 1.65 V.
        assert!(a[2000..4000].iter().all(|x| (x - 1.65).abs() <= 0.0101));
        assert!(a[..2000].iter().any(|x| (x - 1.65).abs() > 0.1));
    }
}
