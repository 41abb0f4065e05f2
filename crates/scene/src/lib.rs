//! Scene files and physically grounded IF synthesis for CW Doppler motion sensors.
//!
//! A scene file (YAML) describes one sensor, the room's noise and
//! interference, and the actors that move in it. [`load_scene_file`] reads it
//! strictly and reports every problem at once; [`Synthesizer`] turns one trial
//! of it into ADC samples block by block, with exact [`Truth`].
//!
//! **Reproducibility is by construction.** Nothing random is ever passed
//! along: every draw of a trial (a walker's speed, a fan's phase, each noise
//! sample) comes from its own ChaCha8 stream whose seed is a stable hash of
//! `(seed, scene, sweep point, trial, stream name)` ([`StreamKey`]). A trial
//! is therefore bit-identical whichever thread or machine makes it, and
//! whatever else is made before or beside it.
#![deny(missing_docs)]

pub mod actors;
mod build;
pub mod export;
mod models;
pub mod param;
pub mod radar;
pub mod render;
pub mod spec;
mod synth;
pub mod truth;
pub mod upsample;

pub use build::{build_model, oversampling_for, radar_geometry, trial_truth, MAX_OVERSAMPLING};
pub use echobench_core::seed::StreamKey;
pub use spec::{
    load_scene_node, load_scene_text, load_scene_text_with_warnings, SceneSpec,
    MAX_SAMPLES_PER_TRIAL,
};
pub use synth::{synthesize, SynthError, Synthesizer, Trial, BLOCK_OUTPUT_SAMPLES};
pub use truth::Truth;

use echobench_yaml_reader::{Problem, Report, Severity};

/// Reads a scene file; returns the scene and its warnings, or every problem found.
///
/// Beyond the file's own checks, trial 0 is drawn and its truth computed, so
/// that a target that never enters the coverage zone is flagged as a warning.
///
/// # Errors
/// An unreadable file, or the report of every problem in it.
pub fn load_scene_file(path: &std::path::Path) -> Result<(SceneSpec, Report), Report> {
    let name = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| Report {
        problems: vec![Problem {
            severity: Severity::Error,
            file: name.clone(),
            location: None,
            field: String::new(),
            message: format!("cannot read the file: {e}"),
            hint: None,
        }],
    })?;
    let (scene, mut report) = load_scene_text_with_warnings(&name, &text)?;
    report.extend(scene_sanity(&scene, &name));
    if report.has_errors() {
        return Err(report);
    }
    Ok((scene, report))
}

/// Checks that need a drawn trial: models that refuse a value, targets that never enter coverage.
pub fn scene_sanity(scene: &SceneSpec, file: &str) -> Report {
    let mut report = Report::default();
    let mut push = |severity, field: String, message: String| {
        report.problems.push(Problem {
            severity,
            file: file.to_string(),
            location: None,
            field,
            message,
            hint: None,
        })
    };
    let key = StreamKey::new(0, scene.name.clone(), 0);
    match trial_truth(scene, &key) {
        Err(e) => push(Severity::Error, e.field.clone(), e.message.clone()),
        Ok(truth) => {
            for (i, actor) in scene.actors.iter().enumerate() {
                // A target that is there but never moves (a seated reader) has no event to
                // detect, but a presence product still has to keep its light on: only a
                // target that is never inside the zone at all is a mistake.
                let moves = truth.events.iter().any(|e| e.actor_id == actor.id);
                let present = truth.still_presence.iter().any(|e| e.actor_id == actor.id);
                if actor.target && !moves && !present {
                    push(
                        Severity::Warning,
                        format!("actors[{i}]"),
                        format!(
                            "target `{}` is never moving inside the coverage zone in trial 0 ({} m, ±{}°): it gives no event to detect",
                            actor.id, scene.coverage.range_m, scene.coverage.azimuth_half_deg
                        ),
                    );
                }
            }
        }
    }
    report
}
