//! Re-creating one trial exactly as the runner ran it: the same key, so the same samples, fed
//! to freshly built detectors, with the same checks on their scores.

use crate::key::TrialRef;
use crate::ExplainError;
use echobench_core::detector::{
    check_scores, Detector, DetectorPlugin, FrameScore, Params, Samples,
};
use echobench_core::{Score, StreamInfo};
use echobench_harness::runner::trial_key;
use echobench_harness::signal::{SignalTruth, TrialSignal};
use echobench_suite::Suite;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::Arc;

/// Sample instants per block fed to the detectors: the runner's block. Detectors give
/// identical scores for any block split (their contract, tested per detector), so this only
/// keeps memory and timing alike.
const BLOCK: usize = 4096;

/// A detector of the suite, resolved against its plugin.
pub(crate) struct ReplayDetector<'a> {
    /// The plugin.
    pub plugin: &'a dyn DetectorPlugin,
    /// Parameters as the suite sets them (the rest at their defaults).
    pub params: Params,
}

/// Resolves the suite's detector `label` against `plugins`, as the runner does.
pub(crate) fn resolve_detector<'a>(
    suite: &Suite,
    label: &str,
    plugins: &'a [Arc<dyn DetectorPlugin>],
) -> Result<ReplayDetector<'a>, ExplainError> {
    let entry = suite
        .detectors
        .iter()
        .find(|d| d.label == label)
        .ok_or_else(|| ExplainError::Detector {
            label: label.to_string(),
            message: format!(
                "suite `{}` has no detector labelled so; its detectors are {}",
                suite.name,
                suite
                    .detectors
                    .iter()
                    .map(|d| d.label.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        })?;
    let plugin = plugins
        .iter()
        .find(|p| p.id() == entry.plugin)
        .ok_or_else(|| ExplainError::Detector {
            label: label.to_string(),
            message: format!("no plugin `{}` among those given", entry.plugin),
        })?;
    // The parameters the suite loader resolved, as the runner takes them.
    Ok(ReplayDetector {
        plugin: plugin.as_ref(),
        params: entry.resolved.clone(),
    })
}

/// One trial re-created: its samples, truth and each detector's scores.
pub(crate) struct Replayed {
    /// Volts at the ADC less bias, interleaved I, Q for I/Q modules.
    pub samples: Vec<f32>,
    /// The stream the detectors were told about.
    pub info: StreamInfo,
    /// The truth as the scorer takes it.
    pub truth: SignalTruth,
    /// The trial's length as the runner scores it (the scene's duration), s.
    pub duration_s: f64,
    /// Per detector asked for: its scores, or why it failed (as the runner would record it).
    pub traces: Vec<Result<Vec<Score>, String>>,
}

/// Synthesizes (or reads) trial `at` of `suite` and feeds every detector of `detectors`.
pub(crate) fn replay(
    suite: &Suite,
    at: TrialRef,
    detectors: &[&ReplayDetector<'_>],
) -> Result<Replayed, ExplainError> {
    let entry = &suite.scenes[at.scene_index];
    let variant = &entry.variants[at.variant_index];
    let key = trial_key(
        suite,
        at.scene_index,
        at.variant_index,
        at.trial,
        at.calibration,
    );
    let capture = match &entry.capture {
        Some(c) => {
            let list = if at.calibration {
                &c.calibration
            } else {
                &c.test
            };
            let trial = list
                .get(at.trial as usize)
                .ok_or_else(|| ExplainError::Trial {
                    key: at.key(suite),
                    message: "the recording has no such trial".into(),
                })?;
            Some((c, trial))
        }
        None => None,
    };
    let trial_error = |message: String| ExplainError::Trial {
        key: at.key(suite),
        message,
    };
    let mut signal = TrialSignal::new(variant, capture, &key).map_err(trial_error)?;
    let info = signal.info();
    let mut built: Vec<Result<Box<dyn Detector>, String>> = detectors
        .iter()
        .map(|d| {
            match catch_unwind(AssertUnwindSafe(|| {
                d.plugin.plan(&d.params, &info).map(|plan| plan.start())
            })) {
                Ok(Ok(detector)) => Ok(detector),
                Ok(Err(e)) => Err(e.to_string()),
                Err(p) => Err(echobench_core::detector::panic_message(p)),
            }
        })
        .collect();
    let mut scores: Vec<Vec<FrameScore>> = vec![Vec::new(); detectors.len()];
    let mut samples = Vec::new();
    let mut block = Vec::with_capacity(BLOCK * 2);
    let mut codes = Vec::with_capacity(BLOCK * 2);
    loop {
        block.clear();
        codes.clear();
        let added = signal
            .next_block(&mut block, &mut codes, BLOCK)
            .map_err(trial_error)?;
        if added == 0 {
            break;
        }
        samples.extend_from_slice(&block);
        // Whole sample instants, as the runner hands them.
        let typed = Samples::from_values(&block, info.channels)
            .ok_or_else(|| trial_error("the signal split an I/Q pair".to_string()))?;
        for (slot, out) in built.iter_mut().zip(scores.iter_mut()) {
            let Ok(detector) = slot else { continue };
            match catch_unwind(AssertUnwindSafe(|| detector.process(typed, out))) {
                Err(p) => *slot = Err(echobench_core::detector::panic_message(p)),
                Ok(Err(failure)) => *slot = Err(failure.message),
                Ok(Ok(())) => {}
            }
        }
    }
    let traces = built
        .into_iter()
        .zip(scores)
        .map(|(slot, trace)| match slot {
            Err(message) => Err(message),
            Ok(_) => match check_scores(&trace) {
                // Frame ends to seconds, as the runner does.
                Ok(()) => Ok(trace
                    .into_iter()
                    .map(|s| s.timed(info.sample_rate_hz))
                    .collect()),
                Err((i, message)) => Err(format!("score {i}: {message}")),
            },
        })
        .collect();
    Ok(Replayed {
        samples,
        info,
        truth: signal.truth(),
        duration_s: variant.scene.duration_s,
        traces,
    })
}
