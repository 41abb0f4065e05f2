//! The coverage check at load: each synthetic target scene variant's Doppler worked out from
//! its kinematics (`echobench-coverage`), and a warning wherever a detector's declared bands
//! miss it.

use crate::detectors::{stream_of, DetectorRead};
use crate::model::{CoverageFinding, SceneLabel, SuiteScene};
use echobench_core::detector::DetectorPlugin;
use echobench_yaml_reader::{Problem, Report, Severity};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::Arc;

/// Trials whose kinematics the coverage check samples per target scene variant.
const COVERAGE_TRIALS: u64 = 2;

/// Works out each synthetic target scene variant's Doppler from its kinematics and warns
/// where a detector's declared bands miss it (`echobench-coverage`); returns the findings.
pub(crate) fn check_coverage(
    scenes: &[SuiteScene],
    detectors: &[DetectorRead],
    plugins: &[Arc<dyn DetectorPlugin>],
    seed: u64,
    suite_file: &str,
    report: &mut Report,
) -> Vec<CoverageFinding> {
    let mut findings = Vec::new();
    for scene in scenes {
        if scene.label != SceneLabel::Target || scene.capture.is_some() {
            continue;
        }
        for variant in &scene.variants {
            let keys: Vec<echobench_core::seed::StreamKey> = (0..COVERAGE_TRIALS)
                .map(|trial| echobench_core::seed::StreamKey {
                    suite_seed: seed,
                    scene_id: scene.id.clone(),
                    sweep_point: variant.sweep_point,
                    trial,
                })
                .collect();
            let target = match catch_unwind(AssertUnwindSafe(|| {
                echobench_coverage::target_doppler(&variant.scene, &keys)
            })) {
                Ok(Ok(target)) if !target.is_empty() => target,
                _ => continue,
            };
            let info = stream_of(&variant.scene);
            for detector in detectors {
                let plugin = &plugins[detector.plugin_index];
                let bands = match catch_unwind(AssertUnwindSafe(|| {
                    plugin.doppler_bands(&detector.entry.resolved, &info)
                })) {
                    Ok(bands) => bands,
                    Err(_) => continue,
                };
                for warning in echobench_coverage::coverage_warnings(
                    &scene.id,
                    &target,
                    &detector.entry.label,
                    &bands,
                    &info,
                ) {
                    let message = match &variant.sweep_value {
                        Some(v) => format!(
                            "{warning} (with `{}` = {v})",
                            scene.sweep_field.as_deref().unwrap_or("the swept field")
                        ),
                        None => warning.to_string(),
                    };
                    report.problems.push(Problem {
                        severity: Severity::Warning,
                        file: suite_file.to_string(),
                        location: Some(detector.location),
                        field: detector.path.clone(),
                        message: message.clone(),
                        hint: Some(
                            "widen the detector's motion band (in m/s, e.g. `motion_min_mps`), or accept that this target moves outside it"
                                .into(),
                        ),
                    });
                    findings.push(crate::model::CoverageFinding {
                        scene: scene.id.clone(),
                        sweep_value: variant.sweep_value.clone(),
                        detector: detector.entry.label.clone(),
                        short: short_coverage(&warning.problem),
                        message,
                    });
                }
            }
        }
    }
    findings
}

/// The table form of a coverage problem.
fn short_coverage(problem: &echobench_coverage::CoverageProblem) -> String {
    use echobench_coverage::CoverageProblem;
    match problem {
        CoverageProblem::BandsMissTarget { fraction, .. } => format!(
            "out of band ({:.0} % of the target's echo energy in the motion band)",
            100.0 * fraction
        ),
        CoverageProblem::PastNyquist { fraction, .. } => format!(
            "past Nyquist ({:.0} % of the echo energy aliases)",
            100.0 * fraction
        ),
        CoverageProblem::NuisanceHoldsTorso { band_label, .. } => {
            format!("torso line in the nuisance band `{band_label}`")
        }
    }
}
