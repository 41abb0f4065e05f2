//! One product's `scenes:`: each entry's origin (a file or an inline mapping), label, trial
//! counts, rare-event rate, sweep and recordings, read into a [`SuiteScene`] with its variants.

use crate::capture::read_capture;
use crate::load::{error, problem, TrialCounts};
use crate::model::{SceneLabel, SceneVariant, SuiteScene};
use crate::sources::SceneSource;
use crate::variants::{read_sweep, read_variants, report_variant_problems, VariantContext};
use echobench_scene::SceneSpec;
use echobench_yaml_reader::{parse, Limits, Location, Node, Reader, Report, Severity, Value};

/// Bounds on a scene file named by a suite, as the scene crate reads scene files.
const SCENE_LIMITS: Limits = Limits {
    max_bytes: 1 << 20,
    max_nodes: 100_000,
    max_depth: 32,
};

/// Most calibration hours a room may ask for: about a year (the run's limits at the door
/// still apply to the whole workload).
const MAX_CALIBRATION_HOURS: f64 = 10_000.0;

/// Most occurrences per day a rare event may declare: one a second. More often than that it
/// is not rare but steady, and belongs in a room's noise.
const MAX_OCCURRENCES_PER_DAY: f64 = 86_400.0;

pub(crate) fn read_scenes(
    node: &Node,
    path: &str,
    product: &str,
    suite_file: &str,
    source: &dyn SceneSource,
    defaults: TrialCounts,
    report: &mut Report,
) -> Option<Vec<SuiteScene>> {
    let Value::Seq(items) = &node.value else {
        report.problems.push(error(
            suite_file,
            node.location,
            path.into(),
            format!(
                "expected a list of scene entries, found {}",
                node.kind_name()
            ),
        ));
        return None;
    };
    if items.is_empty() {
        report.problems.push(error(
            suite_file,
            node.location,
            path.into(),
            "a suite needs at least one scene".into(),
        ));
        return None;
    }
    let mut out = Vec::new();
    let mut ids: Vec<(String, Location)> = Vec::new();
    let mut ok = true;
    for (index, item) in items.iter().enumerate() {
        let entry_path = format!("{path}[{index}]");
        match read_scene_entry(item, &entry_path, suite_file, source, defaults, report) {
            Some((mut scene, id_location)) => {
                scene.product = product.to_string();
                if let Some((_, first)) = ids.iter().find(|(id, _)| *id == scene.id) {
                    report.problems.push(problem(
                        Severity::Error,
                        suite_file,
                        id_location,
                        entry_path.clone(),
                        format!(
                            "scene id `{}` is used twice (first on line {}); ids must be unique, as they seed the trials",
                            scene.id, first.line
                        ),
                        Some("give one of the entries its own `id`".into()),
                    ));
                    ok = false;
                }
                ids.push((scene.id.clone(), id_location));
                out.push(scene);
            }
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// Where an entry's scene comes from.
enum Origin<'n> {
    File {
        relative: String,
        location: Location,
    },
    Inline(&'n Node),
}

/// Reads one entry of `scenes:` and its variants; returns the scene and the location of its id.
fn read_scene_entry(
    node: &Node,
    path: &str,
    suite_file: &str,
    source: &dyn SceneSource,
    defaults: TrialCounts,
    report: &mut Report,
) -> Option<(SuiteScene, Location)> {
    let path = path.to_string();
    let mut reader = Reader::new(suite_file);
    let Some(mut f) = reader.fields(node, &path) else {
        report.extend(reader.finish());
        return None;
    };
    let mut ok = true;
    let file_node = f.raw("file");
    let scene_node = f.raw("scene");
    let capture_node = f.raw("capture");
    let capture_path = f.path_of("capture");
    let id_node = f.raw("id");
    let id: Option<String> = f.optional("id");
    let label = match f.required_choice("label", &["target", "nuisance"]) {
        Some("target") => Some(SceneLabel::Target),
        Some(_) => Some(SceneLabel::Nuisance),
        None => None,
    };
    let label_location = f.raw("label").map_or(node.location, |n| n.location);
    // Overrides are checked here; the suite-wide counts where they are written.
    let trials_override: Option<u64> = f.optional("trials");
    let calibration_override: Option<u64> = f.optional("calibration_trials");
    // A room can ask for noise-only time instead of a trial count (a soak): converted to
    // trials of the scene's length below, once the scene is read.
    let calibration_hours: Option<f64> = f.optional("calibration_hours");
    if let Some(h) = calibration_hours {
        if calibration_override.is_some() {
            f.error_at(
                "calibration_hours",
                "give `calibration_hours` or `calibration_trials`, not both",
            );
        } else if !(h > 0.0 && h <= MAX_CALIBRATION_HOURS) {
            f.error_at(
                "calibration_hours",
                format!("must be > 0 and at most {MAX_CALIBRATION_HOURS} h, found {h}"),
            );
        }
    }
    // A rare event (a door swinging, air conditioning starting): each trial holds one
    // occurrence, and the event's rate of false alarms is its occurrences per day times the
    // fraction of occurrences that raise one. Its trials are not noise-only time of a room,
    // so it has no calibration trials and no part in the threshold or the steady rate.
    let occurrences_per_day: Option<f64> = f.optional("occurrences_per_day");
    if let Some(rate) = occurrences_per_day {
        if !(rate > 0.0 && rate <= MAX_OCCURRENCES_PER_DAY) {
            f.error_at(
                "occurrences_per_day",
                format!("must be > 0 and at most {MAX_OCCURRENCES_PER_DAY} per day, found {rate}"),
            );
        } else if label == Some(SceneLabel::Target) {
            f.error_at(
                "occurrences_per_day",
                "only a nuisance scene can be a rare event (a target scene is scored for detection)",
            );
        } else if calibration_override.is_some() || calibration_hours.is_some() {
            f.error_at(
                "occurrences_per_day",
                "a rare event is not a calibration room: drop `calibration_trials` and `calibration_hours`",
            );
        } else if capture_node.is_some() {
            f.error_at(
                "occurrences_per_day",
                "a rare event is synthesized, one occurrence per trial; a recording cannot be one",
            );
        }
    }
    for (key, count) in [
        ("trials", trials_override),
        ("calibration_trials", calibration_override),
    ] {
        if count == Some(0) {
            f.error_at(key, "must be at least 1");
        }
    }
    let trials = trials_override.or(defaults.trials);
    let calibration_trials = calibration_override
        .or(calibration_hours.map(|_| 1))
        .or(defaults.calibration_trials);
    if capture_node.is_none() {
        for (key, count) in [
            ("trials", trials),
            ("calibration_trials", calibration_trials),
        ] {
            if count.is_none() {
                f.error_at(
                    key,
                    format!("missing: set `{key}` for the whole suite or in this entry"),
                );
            }
        }
    }
    if id.as_ref().is_some_and(|id| id.trim().is_empty()) {
        f.error_at("id", "must not be empty");
    }
    let origin = match (file_node, scene_node) {
        (Some(file), None) => {
            let relative: Option<String> = f.optional("file");
            match relative {
                Some(relative) if !relative.trim().is_empty() => Some(Origin::File {
                    relative,
                    location: file.location,
                }),
                Some(_) => {
                    f.error_at("file", "must name a scene file");
                    None
                }
                None => None,
            }
        }
        (None, Some(scene)) => {
            if id.is_none() {
                f.error_at(
                    "id",
                    "an inline scene needs an `id` (it names the scene in results and seeds its trials)",
                );
            }
            Some(Origin::Inline(scene))
        }
        (Some(_), Some(_)) => {
            f.error_at(
                "scene",
                "give either `file` (a scene file) or `scene` (an inline scene), not both",
            );
            None
        }
        (None, None) => {
            f.error_at(
                "file",
                "missing: give `file` (a path relative to the suite) or `scene` (an inline scene with an `id`)",
            );
            None
        }
    };
    let sweep = match f.raw("sweep") {
        Some(sweep_node) => {
            let sweep_path = f.path_of("sweep");
            let sweep = read_sweep(sweep_node, &sweep_path, f.reader());
            if sweep.is_none() {
                ok = false;
            }
            sweep
        }
        None => None,
    };
    f.finish();
    let entry_problems = reader.finish();
    ok &= !entry_problems.has_errors();
    report.extend(entry_problems);
    let origin = origin?;
    let (tree, scene_file, inline) =
        scene_tree(origin, id.as_deref(), suite_file, &path, source, report)?;
    let context = VariantContext {
        suite_file,
        scene_file: &scene_file,
        entry_path: &path,
        inline,
    };
    let variants_read = read_variants(&tree, sweep.as_ref(), &context, report)?;
    report_variant_problems(
        &variants_read,
        sweep.as_ref().map(|s| s.field.as_str()),
        report,
    );

    let mut variants = Vec::with_capacity(variants_read.len());
    for (point, variant) in variants_read.into_iter().enumerate() {
        let (sweep_value, sweep_number) = match variant.written {
            Some(written) => (Some(written.text), written.number),
            None => (None, None),
        };
        variants.push(SceneVariant {
            sweep_point: point as u64,
            sweep_value,
            sweep_number,
            scene: variant.scene?,
        });
    }
    let first = &variants.first()?.scene;
    let label = label?;
    let capture = match capture_node {
        Some(capture_node) => {
            if trials_override.is_some()
                || calibration_override.is_some()
                || calibration_hours.is_some()
            {
                report.problems.push(error(
                    suite_file,
                    capture_node.location,
                    capture_path.clone(),
                    "a capture entry takes its trials from its recordings: drop `trials` and `calibration_trials`".into(),
                ));
                ok = false;
            }
            let read = read_capture(
                capture_node,
                &capture_path,
                suite_file,
                source,
                first,
                report,
            );
            ok &= read.is_some();
            read
        }
        None => {
            check_label(label, first, suite_file, label_location, &path, report);
            None
        }
    };
    if !ok {
        return None;
    }
    let (trials, calibration_trials) = match &capture {
        Some(c) => (c.test.len() as u64, c.calibration.len() as u64),
        None => (
            trials.unwrap_or(1),
            match (calibration_hours, occurrences_per_day) {
                // A rare event's occurrences are scored on test trials only.
                (_, Some(_)) => 0,
                // Whole trials covering at least the hours asked for.
                (Some(hours), None) => (hours * 3600.0 / first.duration_s).ceil().max(1.0) as u64,
                (None, None) => calibration_trials.unwrap_or(1),
            },
        ),
    };
    let id = id.unwrap_or_else(|| first.name.clone());
    let id_location = id_node.map_or(node.location, |n| n.location);
    Some((
        SuiteScene {
            id,
            product: String::new(),
            label,
            trials,
            calibration_trials,
            sweep_field: sweep.map(|s| s.field),
            variants,
            capture,
            occurrences_per_day,
        },
        id_location,
    ))
}

/// The scene's YAML tree, the file its problems are reported in, and whether it is inline.
fn scene_tree(
    origin: Origin<'_>,
    id: Option<&str>,
    suite_file: &str,
    path: &str,
    source: &dyn SceneSource,
    report: &mut Report,
) -> Option<(Node, String, bool)> {
    match origin {
        Origin::File { relative, location } => {
            let display = source.display_name(&relative);
            let text = match source.read(&relative) {
                Ok(text) => text,
                Err(message) => {
                    report.problems.push(error(
                        suite_file,
                        location,
                        format!("{path}.file"),
                        format!("scene file not found: {message}"),
                    ));
                    return None;
                }
            };
            match parse(&display, &text, &SCENE_LIMITS) {
                Ok(tree) => Some((tree, display, false)),
                Err(problems) => {
                    report.extend(problems);
                    None
                }
            }
        }
        Origin::Inline(scene) => {
            let mut tree = scene.clone();
            // Without a `name`, the scene reader would name it after the suite file.
            if let (Value::Map(entries), Some(id)) = (&mut tree.value, id) {
                if !entries.iter().any(|(key, _, _)| key == "name") {
                    let at = tree.location;
                    let name = Node {
                        value: Value::Str(id.to_string()),
                        location: at,
                    };
                    entries.insert(0, ("name".to_string(), name, at));
                }
            }
            Some((tree, suite_file.to_string(), true))
        }
    }
}

/// Warns when the label says the opposite of the scene's actors.
fn check_label(
    label: SceneLabel,
    scene: &SceneSpec,
    suite_file: &str,
    label_location: Location,
    path: &str,
    report: &mut Report,
) {
    let target = scene.actors.iter().find(|a| a.target);
    let (message, hint) = match (label, target) {
        (SceneLabel::Target, None) => (
            format!(
                "labelled `target`, but scene `{}` has no target actor: its trials count as positives with nothing to detect",
                scene.name
            ),
            "set `target: true` on the actor to detect, or label the scene `nuisance`",
        ),
        (SceneLabel::Nuisance, Some(actor)) => (
            format!(
                "labelled `nuisance`, but actor `{}` of scene `{}` is a target: its trials count as negatives although it is to be detected",
                actor.id, scene.name
            ),
            "label the scene `target`, or set `target: false` on the actor",
        ),
        _ => return,
    };
    report.problems.push(problem(
        Severity::Warning,
        suite_file,
        label_location,
        format!("{path}.label"),
        message,
        Some(hint.to_string()),
    ));
}
