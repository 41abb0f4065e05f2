//! Trial keys: how a user names one trial of a run, in the form the gallery prints.
//!
//! A key is `SCENE[@SWEEP]/TRIAL`: the scene id, the swept value as the suite writes it
//! (only for a swept scene), and the trial index, e.g. `office-corridor-range@6/3`. A
//! calibration trial (own seeds) is `calibration/SCENE[@SWEEP]/TRIAL`, as its seed names it.
//! Keys are resolved against the suite's own list of variants rather than split on `@`, so a
//! scene id may hold any character; spaces around `@` are accepted (rooms are printed as
//! `scene @ 6` in tables).

use crate::ExplainError;
use echobench_suite::Suite;

/// What a calibration key starts with (the prefix of its scene id in the seed).
pub const CALIBRATION_PREFIX: &str = "calibration/";

/// One trial of a suite, resolved against it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct TrialRef {
    /// Index of the scene in `Suite::scenes`.
    pub scene_index: usize,
    /// Index of the variant in the scene's `variants`.
    pub variant_index: usize,
    /// Trial index.
    pub trial: u64,
    /// A calibration trial (its own seeds), not a test trial.
    pub calibration: bool,
}

/// The key of a trial: `SCENE[@SWEEP]/TRIAL`, with `calibration/` before a calibration trial.
///
/// ```
/// use echobench_explain::trial_key_text;
/// assert_eq!(trial_key_text("corridor", Some("6"), 3, false), "corridor@6/3");
/// assert_eq!(trial_key_text("fan", None, 0, true), "calibration/fan/0");
/// ```
pub fn trial_key_text(
    scene: &str,
    sweep_value: Option<&str>,
    trial: u64,
    calibration: bool,
) -> String {
    let prefix = if calibration { CALIBRATION_PREFIX } else { "" };
    format!("{prefix}{}/{trial}", variant_name(scene, sweep_value))
}

/// `scene` or `scene@value`: the part of a key before the trial index.
fn variant_name(scene: &str, sweep_value: Option<&str>) -> String {
    match sweep_value {
        Some(value) => format!("{scene}@{value}"),
        None => scene.to_string(),
    }
}

/// `scene@value` with any spaces around the last `@` dropped.
fn normalised(prefix: &str) -> String {
    match prefix.rsplit_once('@') {
        Some((scene, value)) => format!("{}@{}", scene.trim_end(), value.trim_start()),
        None => prefix.to_string(),
    }
}

impl TrialRef {
    /// Resolves a key against `suite`.
    ///
    /// # Errors
    /// A key without a `/TRIAL` index, an unknown scene (with the nearest id), a swept scene
    /// named without its value or with a value it does not have (with the values it has), or a
    /// trial index the scene does not run.
    pub fn resolve(suite: &Suite, key: &str) -> Result<TrialRef, ExplainError> {
        let bad = |message: String| ExplainError::Key {
            key: key.to_string(),
            message,
        };
        let text = key.trim();
        let (prefix, index) = text.rsplit_once('/').ok_or_else(|| {
            bad("a trial key is SCENE[@SWEEP]/TRIAL, e.g. `office-corridor-range@6/3`".into())
        })?;
        let trial: u64 = index
            .trim()
            .parse()
            .map_err(|_| bad(format!("`{index}` is not a trial index (a whole number)")))?;
        let wanted = normalised(prefix.trim());
        let find = |wanted: &str| {
            suite.scenes.iter().enumerate().find_map(|(si, scene)| {
                scene.variants.iter().enumerate().find_map(|(vi, v)| {
                    (variant_name(&scene.id, v.sweep_value.as_deref()) == wanted)
                        .then_some((si, vi))
                })
            })
        };
        let (found, calibration) = match find(&wanted) {
            Some(found) => (Some(found), false),
            None => match wanted.strip_prefix(CALIBRATION_PREFIX) {
                Some(rest) => (find(rest), true),
                None => (None, false),
            },
        };
        let Some((scene_index, variant_index)) = found else {
            let bare = wanted.strip_prefix(CALIBRATION_PREFIX).unwrap_or(&wanted);
            let scene_part = bare.rsplit_once('@').map_or(bare, |(scene, _)| scene);
            if let Some(scene) = suite
                .scenes
                .iter()
                .find(|s| s.id == scene_part || s.id == bare)
            {
                let values: Vec<&str> = scene
                    .variants
                    .iter()
                    .filter_map(|v| v.sweep_value.as_deref())
                    .collect();
                return Err(bad(if values.is_empty() {
                    format!(
                        "scene `{}` has no sweep: name it as `{}/{trial}`",
                        scene.id, scene.id
                    )
                } else {
                    format!(
                        "scene `{}` is swept over {}: name one value, e.g. `{}@{}/{trial}`",
                        scene.id,
                        values.join(", "),
                        scene.id,
                        values[0]
                    )
                }));
            }
            let ids: Vec<&str> = suite.scenes.iter().map(|s| s.id.as_str()).collect();
            let hint = echobench_yaml_reader::suggest(scene_part, &ids)
                .map_or_else(String::new, |near| format!(" (did you mean `{near}`?)"));
            return Err(bad(format!(
                "no scene `{scene_part}` in suite `{}`{hint}; its scenes are {}",
                suite.name,
                ids.join(", ")
            )));
        };
        let scene = &suite.scenes[scene_index];
        let count = match (&scene.capture, calibration) {
            (Some(c), true) => c.calibration.len() as u64,
            (Some(c), false) => c.test.len() as u64,
            (None, true) => scene.calibration_trials,
            (None, false) => scene.trials,
        };
        if trial >= count {
            let kind = if calibration { "calibration" } else { "test" };
            return Err(bad(if count == 0 {
                format!("scene `{}` runs no {kind} trials", scene.id)
            } else {
                format!(
                    "scene `{}` runs {count} {kind} trials per variant: indices 0 to {}",
                    scene.id,
                    count - 1
                )
            }));
        }
        Ok(TrialRef {
            scene_index,
            variant_index,
            trial,
            calibration,
        })
    }

    /// The key of this trial, as [`trial_key_text`] writes it.
    pub fn key(&self, suite: &Suite) -> String {
        let scene = &suite.scenes[self.scene_index];
        trial_key_text(
            &scene.id,
            scene.variants[self.variant_index].sweep_value.as_deref(),
            self.trial,
            self.calibration,
        )
    }
}
