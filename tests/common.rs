//! Helpers shared by the integration tests: scene text to a trial, and spectra.
#![deny(missing_docs)]

use echobench_scene::{load_scene_text, synthesize, SceneSpec, StreamKey, Trial};

/// Parses a scene from YAML text, panicking with the full report on any problem.
pub fn scene_from_yaml(text: &str) -> SceneSpec {
    match load_scene_text("test.yaml", text) {
        Ok(scene) => scene,
        Err(report) => panic!("scene does not load:\n{report}"),
    }
}

/// Synthesizes trial `trial` of `scene` with seed `seed`.
pub fn trial(scene: &SceneSpec, seed: u64, trial: u64) -> Trial {
    synthesize(scene, &StreamKey::new(seed, scene.name.clone(), trial)).expect("synthesis failed")
}

/// The workspace root (the folder holding `scenarios/`).
pub fn workspace_root() -> std::path::PathBuf {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .expect("tests/ has a parent")
        .to_path_buf()
}
