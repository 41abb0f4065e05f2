//! Reading suite files strictly, and the built-in default suite.
//!
//! A suite file names its scenes (files relative to the suite, or inline
//! mappings), the detectors to score (plugin id, label, parameters), the alarm
//! logic and the scoring settings:
//!
//! ```yaml
//! name: default
//! seed: 20261201
//! trials: 8                  # test trials per scene variant
//! calibration_trials: 4      # calibration trials per variant, separate seeds
//! scenes:
//!   - file: suite-scenes/corridor-walker.yaml
//!     label: target          # target | nuisance
//!     trials: 6              # optional override (also calibration_trials)
//!     sweep:                 # in a flow mapping `{...}`, quote the field: `[` is YAML syntax there
//!       field: actors[0].path.start_m[0]
//!       values: [2, 4, 6, 8, 10, 12]
//!   - id: quiet-room         # inline scenes need an id
//!     label: nuisance
//!     scene: { ...a whole scene mapping... }
//! detectors:                # optional: without it, every registered plugin at its defaults
//!   - registered: all        # every registered plugin (built-in or embedded) at its defaults
//!   - plugin: ca-cfar
//!     label: ca-cfar-rect    # optional, unique, default = plugin id
//!     params: {window: rect, hop: 256}
//! alarm: {hold_s: 5, m_of_n: [2, 3]}
//! scoring: {early_s: 0.5, late_s: 2, target_false_alarms_per_hour: [1, 0.0416667],
//!           threshold_count: 120, false_alarm_budget_per_hour: 2}
//! ```
//!
//! **A sweep edits the scene's YAML tree, not its typed form.** The swept
//! value is written into the parsed scene at the field path before the scene
//! is read, so any field of any scene can be swept (a walker's start, a fan's
//! speed, a burst rate, even a distribution), and each variant goes through
//! exactly the same strict reading and checks as a hand-written scene. A
//! problem caused by the swept value is reported at the value in the suite.
//!
//! The harness knows no detector crate: the caller passes the list of plugins
//! (`echobench-detectors` holds the built-ins), and every `params` entry is
//! resolved against its plugin's declared parameters at load time, then the
//! configuration is tried against each scene's stream, so a bad value is
//! refused before any trial runs.

use crate::suite::{
    AlarmSpec, DetectorEntry, PresenceOutput, Product, ProductKind, SceneLabel, SceneVariant,
    ScoringSpec, Suite, SuiteScene, ThresholdRule,
};
use echobench_core::detector::{DetectorPlugin, ParamValue, Params};
use echobench_core::{Channels, StreamInfo};
use echobench_scene::{load_scene_node, scene_sanity, SceneSpec};
use echobench_yaml_reader::{
    parse, suggest, FieldPath, FromNode, Limits, Location, Node, Problem, Reader, Report, Severity,
    Value,
};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};

/// Where the scene files named by a suite come from.
pub trait SceneSource {
    /// The text of the scene file written as `relative` in the suite.
    ///
    /// # Errors
    /// Why it cannot be read, in words (the message is shown to the user).
    fn read(&self, relative: &str) -> Result<String, String>;

    /// How the file is named in messages (a path the user can open).
    fn display_name(&self, relative: &str) -> String;

    /// The file on disk, for sources that have one (recordings must be real files).
    fn path(&self, relative: &str) -> Option<PathBuf> {
        let _ = relative;
        None
    }
}

/// No scene files at all: for a suite whose scenes are all written inline (a suite built in
/// code or in a test). Naming a file is refused with the file's name.
pub struct InlineOnly;

impl SceneSource for InlineOnly {
    fn read(&self, relative: &str) -> Result<String, String> {
        Err(format!(
            "no scene file `{relative}`: this suite's scenes must be written inline"
        ))
    }

    fn display_name(&self, relative: &str) -> String {
        relative.to_string()
    }
}

/// Scene files on disk, relative to the suite file's folder.
#[derive(Debug, Clone)]
pub struct FolderSource {
    folder: PathBuf,
}

impl FolderSource {
    /// Scene paths are resolved against `folder`.
    pub fn new(folder: impl Into<PathBuf>) -> Self {
        FolderSource {
            folder: folder.into(),
        }
    }

    fn path_of(&self, relative: &str) -> PathBuf {
        self.folder.join(relative)
    }
}

impl SceneSource for FolderSource {
    fn read(&self, relative: &str) -> Result<String, String> {
        let path = self.path_of(relative);
        std::fs::read_to_string(&path).map_err(|e| format!("cannot read `{}`: {e}", path.display()))
    }

    fn display_name(&self, relative: &str) -> String {
        self.path_of(relative).display().to_string()
    }

    fn path(&self, relative: &str) -> Option<PathBuf> {
        Some(self.path_of(relative))
    }
}

/// Scene files held in memory as (name, text) pairs, e.g. compiled into the binary.
#[derive(Debug, Clone, Copy)]
pub struct EmbeddedSource {
    files: &'static [(&'static str, &'static str)],
}

impl EmbeddedSource {
    /// A source serving `files`, each named as the suite names it.
    pub const fn new(files: &'static [(&'static str, &'static str)]) -> Self {
        EmbeddedSource { files }
    }

    /// The scene files of the built-in default suite.
    pub const fn default_suite() -> Self {
        EmbeddedSource::new(&DEFAULT_SUITE_SCENES)
    }
}

impl SceneSource for EmbeddedSource {
    fn read(&self, relative: &str) -> Result<String, String> {
        match self.files.iter().find(|(name, _)| *name == relative) {
            Some((_, text)) => Ok((*text).to_string()),
            None => {
                let names: Vec<&str> = self.files.iter().map(|(name, _)| *name).collect();
                let hint = suggest(relative, &names)
                    .map_or_else(String::new, |near| format!(" (did you mean `{near}`?)"));
                Err(format!(
                    "no built-in scene file `{relative}`{hint}; the built-in files are: {}",
                    names.join(", ")
                ))
            }
        }
    }

    fn display_name(&self, relative: &str) -> String {
        format!("<built-in>/{relative}")
    }
}

/// How the built-in default suite is named in messages.
pub const DEFAULT_SUITE_FILE_NAME: &str = "<built-in>/default-suite.yaml";

/// `Suite::source` of the built-in default suite.
pub const DEFAULT_SUITE_SOURCE: &str = "<built-in default suite>";

/// The text of the built-in default suite (`scenarios/default-suite.yaml`).
pub const DEFAULT_SUITE_YAML: &str = include_str!("../../../scenarios/default-suite.yaml");

/// Every scene file the default suite names, as (name in the suite, text).
///
/// One explicit table, so that the binary carries exactly these files; a test
/// checks it against the folder `scenarios/suite-scenes/` and the suite.
pub static DEFAULT_SUITE_SCENES: [(&str, &str); 22] = [
    (
        "suite-scenes/bedroom-curtain-draught.yaml",
        include_str!("../../../scenarios/suite-scenes/bedroom-curtain-draught.yaml"),
    ),
    (
        "suite-scenes/care-home-slow-walker.yaml",
        include_str!("../../../scenarios/suite-scenes/care-home-slow-walker.yaml"),
    ),
    (
        "suite-scenes/corridor-door-stop.yaml",
        include_str!("../../../scenarios/suite-scenes/corridor-door-stop.yaml"),
    ),
    (
        "suite-scenes/empty-corridor-night.yaml",
        include_str!("../../../scenarios/suite-scenes/empty-corridor-night.yaml"),
    ),
    (
        "suite-scenes/corridor-fire-door-draught.yaml",
        include_str!("../../../scenarios/suite-scenes/corridor-fire-door-draught.yaml"),
    ),
    (
        "suite-scenes/empty-lab-bench.yaml",
        include_str!("../../../scenarios/suite-scenes/empty-lab-bench.yaml"),
    ),
    (
        "suite-scenes/hotel-lobby-diagonal.yaml",
        include_str!("../../../scenarios/suite-scenes/hotel-lobby-diagonal.yaml"),
    ),
    (
        "suite-scenes/kitchen-cat.yaml",
        include_str!("../../../scenarios/suite-scenes/kitchen-cat.yaml"),
    ),
    (
        "suite-scenes/lounge-ceiling-fan.yaml",
        include_str!("../../../scenarios/suite-scenes/lounge-ceiling-fan.yaml"),
    ),
    (
        "suite-scenes/meeting-room-walk-in.yaml",
        include_str!("../../../scenarios/suite-scenes/meeting-room-walk-in.yaml"),
    ),
    (
        "suite-scenes/night-office-mains-lamp.yaml",
        include_str!("../../../scenarios/suite-scenes/night-office-mains-lamp.yaml"),
    ),
    (
        "suite-scenes/office-corridor-range.yaml",
        include_str!("../../../scenarios/suite-scenes/office-corridor-range.yaml"),
    ),
    (
        "suite-scenes/open-office-approach.yaml",
        include_str!("../../../scenarios/suite-scenes/open-office-approach.yaml"),
    ),
    (
        "suite-scenes/porch-palm-gusts.yaml",
        include_str!("../../../scenarios/suite-scenes/porch-palm-gusts.yaml"),
    ),
    (
        "suite-scenes/reading-chair-breathing.yaml",
        include_str!("../../../scenarios/suite-scenes/reading-chair-breathing.yaml"),
    ),
    (
        "suite-scenes/meeting-room-visit.yaml",
        include_str!("../../../scenarios/suite-scenes/meeting-room-visit.yaml"),
    ),
    (
        "suite-scenes/shop-counter-wait.yaml",
        include_str!("../../../scenarios/suite-scenes/shop-counter-wait.yaml"),
    ),
    (
        "suite-scenes/office-desk-worker.yaml",
        include_str!("../../../scenarios/suite-scenes/office-desk-worker.yaml"),
    ),
    (
        "suite-scenes/shop-entrance-neighbour.yaml",
        include_str!("../../../scenarios/suite-scenes/shop-entrance-neighbour.yaml"),
    ),
    (
        "suite-scenes/stockroom-radio-bursts.yaml",
        include_str!("../../../scenarios/suite-scenes/stockroom-radio-bursts.yaml"),
    ),
    (
        "suite-scenes/study-desk-fan.yaml",
        include_str!("../../../scenarios/suite-scenes/study-desk-fan.yaml"),
    ),
    (
        "suite-scenes/warehouse-aisle-crossing.yaml",
        include_str!("../../../scenarios/suite-scenes/warehouse-aisle-crossing.yaml"),
    ),
];

/// Bounds on a suite file: inline scenes make it larger than a scene, so the default limits.
const SUITE_LIMITS: Limits = Limits {
    max_bytes: 4 << 20,
    max_nodes: 200_000,
    max_depth: 64,
};

/// Bounds on a scene file named by a suite, as the scene crate reads scene files.
const SCENE_LIMITS: Limits = Limits {
    max_bytes: 1 << 20,
    max_nodes: 100_000,
    max_depth: 32,
};

/// Allowed number of thresholds in a ROC sweep: fewer draws a coarse curve,
/// more costs memory per detector and trial without a visible gain.
const THRESHOLD_COUNT_RANGE: std::ops::RangeInclusive<usize> = 10..=10_000;

/// Largest N of an M-of-N rule: the harness keeps the last N frame decisions as bits of a u64.
const MAX_M_OF_N_FRAMES: u32 = 64;

/// Reads a suite file; scene paths are relative to its folder.
///
/// `plugins` are the detectors the suite may name (their ids and parameter specs).
///
/// # Errors
/// An unreadable file, or the report of every problem found in the suite and its scenes.
pub fn load_suite_file(
    path: &Path,
    plugins: &[&dyn DetectorPlugin],
) -> Result<(Suite, Report), Report> {
    let name = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| Report {
        problems: vec![Problem {
            severity: Severity::Error,
            file: name.clone(),
            location: None,
            field: String::new(),
            message: format!("cannot read the suite file: {e}"),
            hint: None,
        }],
    })?;
    let folder = path.parent().unwrap_or_else(|| Path::new(""));
    load_suite_text(&name, &text, &FolderSource::new(folder), plugins)
}

/// Reads a suite from text; `name` names it in messages and gives the default suite name.
///
/// # Errors
/// The report of every problem found in the suite and in the scenes it names.
pub fn load_suite_text(
    name: &str,
    text: &str,
    scenes: &dyn SceneSource,
    plugins: &[&dyn DetectorPlugin],
) -> Result<(Suite, Report), Report> {
    let root = parse(name, text, &SUITE_LIMITS)?;
    let mut report = Report::default();
    let suite = read_suite(&root, name, scenes, plugins, &mut report);
    match suite {
        Some(suite) if !report.has_errors() => Ok((suite, report)),
        _ => Err(report),
    }
}

/// The built-in default suite, read and checked against `plugins`.
///
/// # Errors
/// Every problem found: none for the built-in detectors (a test holds it so),
/// but a plugin list without one of them is refused.
pub fn default_suite(plugins: &[&dyn DetectorPlugin]) -> Result<Suite, Report> {
    let (mut suite, _warnings) = load_suite_text(
        DEFAULT_SUITE_FILE_NAME,
        DEFAULT_SUITE_YAML,
        &EmbeddedSource::default_suite(),
        plugins,
    )?;
    suite.source = DEFAULT_SUITE_SOURCE.to_string();
    Ok(suite)
}

fn problem(
    severity: Severity,
    file: &str,
    location: Location,
    field: String,
    message: String,
    hint: Option<String>,
) -> Problem {
    Problem {
        severity,
        file: file.to_string(),
        location: Some(location),
        field,
        message,
        hint,
    }
}

fn error(file: &str, location: Location, field: String, message: String) -> Problem {
    problem(Severity::Error, file, location, field, message, None)
}

fn read_suite(
    root: &Node,
    name: &str,
    scenes: &dyn SceneSource,
    plugins: &[&dyn DetectorPlugin],
    report: &mut Report,
) -> Option<Suite> {
    let default_name = Path::new(name)
        .file_stem()
        .map_or_else(|| "suite".to_string(), |s| s.to_string_lossy().into_owned());
    // A scene file given where a suite is expected: say so once, not as a dozen unknown fields.
    let looks_like_scene = ["sensor", "actors", "environment"]
        .iter()
        .any(|key| root.get(key).is_some())
        && root.get("scenes").is_none()
        && root.get("products").is_none();
    if looks_like_scene {
        report.problems.push(error(
            name,
            root.location,
            String::new(),
            "this is a scene file, not a suite: synthesize it with `echobench synth`, or name it under a product's `scenes:` in a suite".into(),
        ));
        return None;
    }
    let mut reader = Reader::new(name);
    let Some(mut f) = reader.fields(root, "") else {
        report.extend(reader.finish());
        return None;
    };
    let suite_name: String = f.optional_or("name", default_name);
    let seed: Option<u64> = f.required("seed");
    // Optional here: an entry may set its own, and a capture entry takes its trials from
    // its recordings; a synthetic entry with neither is refused where it is written.
    let trials: Option<u64> = f.optional("trials");
    let calibration_trials: Option<u64> = f.optional("calibration_trials");
    let scenes_node = f.raw("scenes");
    let products_node = f.raw("products");
    let detectors_node = f.raw("detectors");
    let alarm_node = f.raw("alarm");
    let scoring_node = f.raw("scoring");
    if suite_name.trim().is_empty() {
        f.error_at("name", "must not be empty");
    }
    for (key, count) in [
        ("trials", trials),
        ("calibration_trials", calibration_trials),
    ] {
        if count == Some(0) {
            f.error_at(key, "must be at least 1");
        }
    }
    match (scenes_node.is_some(), products_node.is_some()) {
        (false, false) => f.error_at(
            "scenes",
            "missing required field: give `scenes` (one product) or `products` (each with its scenes)",
        ),
        (true, true) => f.error_at(
            "scenes",
            "give either `scenes` (a suite of one product) or `products` (each with its own scenes), not both",
        ),
        _ => {}
    }
    // No `detectors:` list means every registered plugin at its defaults (`registered: all`).
    let top_location = f
        .raw("seed")
        .map_or(Location { line: 1, column: 1 }, |n| n.location);
    f.finish();
    report.extend(reader.finish());

    let defaults = TrialCounts {
        trials,
        calibration_trials,
    };
    let products_read = match (scenes_node, products_node) {
        (Some(node), None) => {
            let product = Product {
                name: suite_name.clone(),
                about: String::new(),
                module: None,
                kind: ProductKind::Intrusion,
            };
            read_scenes(
                node,
                "scenes",
                &product.name,
                name,
                scenes,
                defaults,
                report,
            )
            .map(|list| vec![(product, list, node.location)])
        }
        (None, Some(node)) => read_products(node, name, scenes, defaults, report),
        _ => None,
    };
    let products_read = products_read.and_then(|list| check_products(list, name, report));
    let detectors = match detectors_node {
        Some(node) => read_detectors(node, name, plugins, report),
        None => Some(every_registered(plugins, top_location, "detectors")),
    }
    .map(|list| anchor_external_commands(list, scenes, plugins));
    let alarm = match alarm_node {
        Some(node) => read_alarm(node, name, report),
        None => Some(AlarmSpec::default()),
    };
    let scoring = match scoring_node {
        Some(node) => read_scoring(node, name, report),
        None => Some(ScoringSpec::default()),
    };
    let mut coverage = Vec::new();
    if let (Some((_, scenes)), Some(detectors)) = (&products_read, &detectors) {
        check_streams(scenes, detectors, plugins, name, report);
        if !report.has_errors() {
            coverage = check_coverage(scenes, detectors, plugins, seed.unwrap_or(0), name, report);
        }
    }
    let (products, suite_scenes) = products_read?;
    Some(Suite {
        name: suite_name,
        source: name.to_string(),
        seed: seed?,
        trials: trials.unwrap_or(0),
        calibration_trials: calibration_trials.unwrap_or(0),
        products,
        scenes: suite_scenes,
        detectors: detectors?.into_iter().map(|d| d.entry).collect(),
        alarm: alarm?,
        scoring: scoring?,
        coverage,
    })
}

/// Trials whose kinematics the coverage check samples per target scene variant.
const COVERAGE_TRIALS: u64 = 2;

/// Works out each synthetic target scene variant's Doppler from its kinematics and warns
/// where a detector's declared bands miss it (`echobench-coverage`); returns the findings.
fn check_coverage(
    scenes: &[SuiteScene],
    detectors: &[DetectorRead],
    plugins: &[&dyn DetectorPlugin],
    seed: u64,
    suite_file: &str,
    report: &mut Report,
) -> Vec<crate::suite::CoverageFinding> {
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
                let plugin = plugins[detector.plugin_index];
                let bands = match catch_unwind(AssertUnwindSafe(|| {
                    plugin.doppler_bands(&detector.params, &info)
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
                    findings.push(crate::suite::CoverageFinding {
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

/// Largest number of products in one suite (each is calibrated on its own).
const MAX_PRODUCTS: usize = 64;

/// Module fields that belong to the room, not to the module: where it is placed.
const PLACEMENT_FIELDS: [&str; 2] = ["position_m", "azimuth_deg"];

/// Reads `products:`: each a name, optional `about` and `module`, and its scenes.
fn read_products(
    node: &Node,
    suite_file: &str,
    source: &dyn SceneSource,
    defaults: TrialCounts,
    report: &mut Report,
) -> Option<Vec<(Product, Vec<SuiteScene>, Location)>> {
    let Value::Seq(items) = &node.value else {
        report.problems.push(error(
            suite_file,
            node.location,
            "products".into(),
            format!("expected a list of products, found {}", node.kind_name()),
        ));
        return None;
    };
    if items.is_empty() || items.len() > MAX_PRODUCTS {
        report.problems.push(error(
            suite_file,
            node.location,
            "products".into(),
            format!(
                "a suite needs 1 to {MAX_PRODUCTS} products, found {}",
                items.len()
            ),
        ));
        return None;
    }
    let mut out = Vec::with_capacity(items.len());
    let mut ok = true;
    for (index, item) in items.iter().enumerate() {
        let path = format!("products[{index}]");
        let mut reader = Reader::new(suite_file);
        let Some(mut f) = reader.fields(item, &path) else {
            report.extend(reader.finish());
            ok = false;
            continue;
        };
        let name: Option<String> = f.required("name");
        let about: String = f.optional_or("about", String::new());
        let module_node = f.raw("module");
        let module_path = f.path_of("module");
        let scenes_node = f.raw("scenes");
        let kind_name = f.choice_or("kind", &["intrusion", "presence"], "intrusion");
        let output_node = f.raw("output");
        let output_path = f.path_of("output");
        let budget_node = f.raw("budget");
        let budget_path = f.path_of("budget");
        let hold_sweep_s: Option<Vec<f64>> = f.optional("hold_sweep_s");
        if let Some(sweep) = hold_sweep_s.as_ref().filter(|sweep| {
            sweep.is_empty()
                || sweep.len() > MAX_HOLD_SWEEP
                || sweep.iter().any(|h| !(*h > 0.0 && *h <= MAX_TIMER_S))
        }) {
            f.error_at(
                "hold_sweep_s",
                format!(
                    "give 1 to {MAX_HOLD_SWEEP} hold times, each > 0 and at most {MAX_TIMER_S} s, found {sweep:?}"
                ),
            );
        }
        let presence_fields_given =
            output_node.is_some() || budget_node.is_some() || hold_sweep_s.is_some();
        if kind_name != "presence" && presence_fields_given {
            f.error_at(
                "kind",
                "`output`, `budget` and `hold_sweep_s` describe a presence product's timer: add `kind: presence`, or remove them",
            );
        }
        let kind = if kind_name == "presence" {
            match (output_node, budget_node) {
                (Some(output), Some(budget)) => read_presence_output(
                    output,
                    &output_path,
                    budget,
                    &budget_path,
                    hold_sweep_s,
                    f.reader(),
                )
                .map(ProductKind::Presence),
                _ => {
                    f.error_at(
                        "kind",
                        "a presence product needs `output: {hold_s, min_on_s, lockout_s}` and `budget: {false_switch_ons_per_day: [...]}`",
                    );
                    None
                }
            }
        } else {
            Some(ProductKind::Intrusion)
        };
        if name.as_ref().is_some_and(|n| n.trim().is_empty()) {
            f.error_at("name", "must not be empty");
        }
        if scenes_node.is_none() {
            f.error_at(
                "scenes",
                "missing required field: the product's target and nuisance scenes",
            );
        }
        let module = module_node.and_then(|m| {
            if let Value::Map(entries) = &m.value {
                for (key, _, at) in entries {
                    if PLACEMENT_FIELDS.contains(&key.as_str()) {
                        f.reader().error(
                            *at,
                            &format!("{module_path}.{key}"),
                            format!(
                                "`{key}` places the module in a room: it belongs to each scene's `sensor`, not to the product's module"
                            ),
                        );
                    }
                }
            }
            echobench_scene::spec::SensorSpec::from_node(m, &module_path, f.reader())
        });
        let module_failed = module_node.is_some() && module.is_none();
        f.finish();
        let problems = reader.finish();
        let failed = problems.has_errors() || module_failed;
        report.extend(problems);
        let (Some(name), Some(scenes_node), Some(kind), false) = (name, scenes_node, kind, failed)
        else {
            ok = false;
            continue;
        };
        if out
            .iter()
            .any(|(p, _, _): &(Product, Vec<SuiteScene>, Location)| p.name == name)
        {
            report.problems.push(error(
                suite_file,
                item.location,
                format!("{path}.name"),
                format!("product `{name}` is named twice; names must be unique"),
            ));
            ok = false;
            continue;
        }
        let product = Product {
            name,
            about,
            module,
            kind,
        };
        match read_scenes(
            scenes_node,
            &format!("{path}.scenes"),
            &product.name,
            suite_file,
            source,
            defaults,
            report,
        ) {
            Some(list) => out.push((product, list, scenes_node.location)),
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// Most calibration hours a room may ask for: about a year (the run's limits at the door
/// still apply to the whole workload).
const MAX_CALIBRATION_HOURS: f64 = 10_000.0;

/// Most occurrences per day a rare event may declare: one a second. More often than that it
/// is not rare but steady, and belongs in a room's noise.
const MAX_OCCURRENCES_PER_DAY: f64 = 86_400.0;

/// Most budgets (operating points) and hold times of a presence product.
const MAX_PRESENCE_POINTS: usize = 8;
const MAX_HOLD_SWEEP: usize = 32;
/// Longest hold, minimum on-time or lock-out accepted, s (a day; timers of these modules
/// run seconds to tens of minutes, common practice).
const MAX_TIMER_S: f64 = 86_400.0;

/// Reads a presence product's `output` (its retrigger timer), `budget` and hold sweep.
fn read_presence_output(
    output: &Node,
    output_path: &str,
    budget: &Node,
    budget_path: &str,
    hold_sweep_s: Option<Vec<f64>>,
    reader: &mut Reader,
) -> Option<PresenceOutput> {
    let mut ok = true;
    let (hold_s, min_on_s, lockout_s) = {
        let mut f = reader.fields(output, output_path)?;
        let hold_s: Option<f64> = f.required("hold_s");
        let min_on_s: f64 = f.optional_or("min_on_s", 0.0);
        let lockout_s: f64 = f.optional_or("lockout_s", 0.0);
        if let Some(h) = hold_s.filter(|h| !(*h > 0.0 && *h <= MAX_TIMER_S)) {
            f.error_at(
                "hold_s",
                format!("the hold must be > 0 and at most {MAX_TIMER_S} s, found {h}"),
            );
            ok = false;
        }
        for (key, value) in [("min_on_s", min_on_s), ("lockout_s", lockout_s)] {
            if !(0.0..=MAX_TIMER_S).contains(&value) {
                f.error_at(key, format!("must be 0 to {MAX_TIMER_S} s, found {value}"));
                ok = false;
            }
        }
        f.finish();
        (hold_s?, min_on_s, lockout_s)
    };
    let false_switch_ons_per_day = {
        let mut f = reader.fields(budget, budget_path)?;
        let rates: Option<Vec<f64>> = f.required("false_switch_ons_per_day");
        if let Some(rates) = &rates {
            if rates.is_empty() || rates.len() > MAX_PRESENCE_POINTS {
                f.error_at(
                    "false_switch_ons_per_day",
                    format!(
                        "give 1 to {MAX_PRESENCE_POINTS} budgets (false switch-ons per day of empty time), found {}",
                        rates.len()
                    ),
                );
                ok = false;
            }
            if let Some(bad) = rates.iter().find(|r| **r <= 0.0) {
                f.error_at(
                    "false_switch_ons_per_day",
                    format!("every budget must be positive, found {bad}"),
                );
                ok = false;
            }
        }
        f.finish();
        rates?
    };
    let mut sweep = hold_sweep_s.unwrap_or_else(|| {
        // Default: a ladder around the product's hold, from a fifth to eight times it.
        [0.2, 0.5, 1.0, 2.0, 4.0, 8.0]
            .iter()
            .map(|k| k * hold_s)
            .filter(|h| *h <= MAX_TIMER_S)
            .collect()
    });
    sweep.push(hold_s);
    sweep.sort_by(f64::total_cmp);
    sweep.dedup();
    let out = PresenceOutput {
        hold_s,
        min_on_s,
        lockout_s,
        false_switch_ons_per_day,
        hold_sweep_s: sweep,
    };
    if let Err(e) = out.timer() {
        reader.error(output.location, output_path, e.to_string());
        ok = false;
    }
    ok.then_some(out)
}

/// Puts each product's module into its scenes (keeping their placement), or, for a
/// product without a module, checks that its scenes share one; checks scene ids across
/// products (they seed the trials).
fn check_products(
    read: Vec<(Product, Vec<SuiteScene>, Location)>,
    suite_file: &str,
    report: &mut Report,
) -> Option<(Vec<Product>, Vec<SuiteScene>)> {
    let mut ok = true;
    let mut products = Vec::with_capacity(read.len());
    let mut all_scenes: Vec<SuiteScene> = Vec::new();
    for (product, mut scenes, location) in read {
        match &product.module {
            Some(module) => {
                for scene in &mut scenes {
                    for variant in &mut scene.variants {
                        let own = &variant.scene.sensor;
                        variant.scene.sensor = echobench_scene::spec::SensorSpec {
                            position_m: own.position_m,
                            azimuth_deg: own.azimuth_deg,
                            ..module.clone()
                        };
                    }
                }
            }
            None => {
                if let Some(first) = scenes.first() {
                    let reference = &first.variants[0].scene.sensor;
                    for scene in &scenes {
                        for variant in &scene.variants {
                            let fields = module_differences(reference, &variant.scene.sensor);
                            if !fields.is_empty() {
                                report.problems.push(error(
                                    suite_file,
                                    location,
                                    "scenes".into(),
                                    format!(
                                        "product `{}` mixes sensor modules: scene `{}` differs from scene `{}` in {}; a product is one module (give the product a `module`, or split it into products)",
                                        product.name,
                                        scene.id,
                                        first.id,
                                        fields.join(", ")
                                    ),
                                ));
                                ok = false;
                                break;
                            }
                        }
                    }
                }
            }
        }
        for scene in &scenes {
            if let Some(other) = all_scenes.iter().find(|s| s.id == scene.id) {
                report.problems.push(error(
                    suite_file,
                    location,
                    "scenes".into(),
                    format!(
                        "scene id `{}` is used in product `{}` and in product `{}`; ids must be unique in a suite, as they seed the trials",
                        scene.id, other.product, product.name
                    ),
                ));
                ok = false;
            }
        }
        if product.kind.presence().is_some() {
            if let Some(event) = scenes.iter().find(|s| s.occurrences_per_day.is_some()) {
                report.problems.push(error(
                    suite_file,
                    location,
                    "scenes".into(),
                    format!(
                        "scene `{}` of presence product `{}` is a rare event (`occurrences_per_day`): rare events are scored on alarms, for intrusion products only so far",
                        event.id, product.name
                    ),
                ));
                ok = false;
            }
        }
        if scenes.iter().all(|s| s.calibration_trials == 0) {
            report.problems.push(error(
                suite_file,
                location,
                "scenes".into(),
                format!(
                    "product `{}` has no calibration trials: thresholds are chosen on them; give a capture entry `calibration_recordings`, or add a synthetic scene",
                    product.name
                ),
            ));
            ok = false;
        }
        all_scenes.extend(scenes);
        products.push(product);
    }
    ok.then_some((products, all_scenes))
}

/// The names of the module fields in which two sensors differ (placement ignored).
pub fn module_differences(
    a: &echobench_scene::spec::SensorSpec,
    b: &echobench_scene::spec::SensorSpec,
) -> Vec<&'static str> {
    let mut out = Vec::new();
    let mut differ = |name: &'static str, same: bool| {
        if !same {
            out.push(name);
        }
    };
    differ("carrier_hz", a.carrier_hz == b.carrier_hz);
    differ("sample_rate_hz", a.sample_rate_hz == b.sample_rate_hz);
    differ("output", a.output == b.output);
    differ("elevation_deg", a.elevation_deg == b.elevation_deg);
    differ(
        "beam_azimuth_3db_deg",
        a.beam_azimuth_3db_deg == b.beam_azimuth_3db_deg,
    );
    differ(
        "beam_elevation_3db_deg",
        a.beam_elevation_3db_deg == b.beam_elevation_3db_deg,
    );
    differ("beam_floor_db", a.beam_floor_db == b.beam_floor_db);
    differ("tx_power_dbm", a.tx_power_dbm == b.tx_power_dbm);
    differ("antenna_gain_dbi", a.antenna_gain_dbi == b.antenna_gain_dbi);
    differ(
        "conversion_loss_db",
        a.conversion_loss_db == b.conversion_loss_db,
    );
    differ("load_ohm", a.load_ohm == b.load_ohm);
    differ("mixer_dc_v", a.mixer_dc_v == b.mixer_dc_v);
    differ("drift", a.drift == b.drift);
    differ("front_end", a.front_end == b.front_end);
    differ("adc", a.adc == b.adc);
    out
}

#[derive(Debug, Clone, Copy)]
struct TrialCounts {
    trials: Option<u64>,
    calibration_trials: Option<u64>,
}

// ---------------------------------------------------------------- scenes

fn read_scenes(
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

/// An entry's sweep, as written.
struct SweepRead<'n> {
    field: String,
    field_location: Location,
    steps: FieldPath,
    values: Vec<&'n Node>,
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

/// A problem of a variant, with whether it is about the swept value itself
/// (then already moved to the value in the suite).
type AttributedProblem = (Problem, bool);

/// One variant as read: the scene if it is sound, its problems, the value written.
struct VariantRead {
    scene: Option<SceneSpec>,
    problems: Vec<AttributedProblem>,
    written: Option<WrittenValue>,
}

/// A swept value as written in the suite.
struct WrittenValue {
    text: String,
    number: Option<f64>,
}

/// Reads the variants of an entry: the tree as is, or one per sweep value written into it.
fn read_variants(
    tree: &Node,
    sweep: Option<&SweepRead<'_>>,
    context: &VariantContext<'_>,
    report: &mut Report,
) -> Option<Vec<VariantRead>> {
    let Some(sweep) = sweep else {
        let (scene, problems) = context.read_variant(tree, None);
        return Some(vec![VariantRead {
            scene,
            problems,
            written: None,
        }]);
    };
    if let Err(miss) = tree.at(&sweep.steps, "the scene") {
        let message = format!(
            "the field to sweep is not in the scene `{}`: {}{}",
            context.scene_file,
            miss.message,
            if miss.field_missing {
                "; a sweep only replaces a value the scene writes"
            } else {
                ""
            }
        );
        report.problems.push(problem(
            Severity::Error,
            context.suite_file,
            sweep.field_location,
            format!("{}.sweep.field", context.entry_path),
            message,
            miss.hint,
        ));
        return None;
    }
    let mut variants = Vec::with_capacity(sweep.values.len());
    for (point, value) in sweep.values.iter().enumerate() {
        let mut variant = tree.clone();
        let target = variant.at_mut(&sweep.steps)?;
        let mut new_value = (*value).clone();
        if !context.inline {
            // Located at the field it replaces, so that the scene file's locations
            // stay true; problems of the value itself are moved to the suite.
            relocate(&mut new_value, target.location);
        }
        *target = new_value;
        let text = render_value(value);
        let applied = AppliedSweep {
            field: &sweep.field,
            value_text: &text,
            value_location: value.location,
            value_path: format!("{}.sweep.values[{point}]", context.entry_path),
        };
        let (scene, problems) = context.read_variant(&variant, Some(&applied));
        variants.push(VariantRead {
            scene,
            problems,
            written: Some(WrittenValue {
                text,
                number: number_of(value),
            }),
        });
    }
    Some(variants)
}

/// Moves the variants' problems into `report`: one found in every variant once
/// as it is, the others prefixed with their variant's swept value.
fn report_variant_problems(
    variants: &[VariantRead],
    sweep_field: Option<&str>,
    report: &mut Report,
) {
    let mut reported: Vec<Problem> = Vec::new();
    for variant in variants {
        for (p, of_the_value) in &variant.problems {
            let common = variants.len() > 1
                && !of_the_value
                && variants
                    .iter()
                    .all(|other| other.problems.iter().any(|(o, _)| o == p));
            if common {
                if !reported.contains(p) {
                    reported.push(p.clone());
                }
                continue;
            }
            let mut p = p.clone();
            if let (Some(field), Some(written), false) =
                (sweep_field, &variant.written, *of_the_value)
            {
                p.message = format!("with `{field}` = {}: {}", written.text, p.message);
            }
            reported.push(p);
        }
    }
    report.problems.extend(reported);
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

/// Reads an entry's `capture:`: the recordings, their labels and layout, cut into trials of
/// the scene's duration. Every file is opened here (headers only for WAV; CSV is read through
/// once), so a missing, damaged or mislabelled recording is refused before any trial runs.
fn read_capture(
    node: &Node,
    path: &str,
    suite_file: &str,
    source: &dyn SceneSource,
    scene: &SceneSpec,
    report: &mut Report,
) -> Option<crate::suite::CaptureSource> {
    use echobench_capture::{AdcDescription, CaptureFormat, CsvLayout, CsvValues, TrialCut};
    let mut reader = Reader::new(suite_file);
    let mut f = reader.fields(node, path)?;
    let recordings = f.raw("recordings");
    let calibration_recordings = f.raw("calibration_recordings");
    let hop_s: Option<f64> = f.optional("hop_s");
    let skip_s: f64 = f.optional_or("skip_s", 0.0);
    let mix_db: Option<f64> = f.optional("mix_db");
    let csv_rate: Option<f64> = f.optional("csv_sample_rate_hz");
    let csv_values = f.choice_or("csv_values", &["codes", "signed_codes", "volts"], "codes");
    if hop_s.is_some_and(|h| !(h.is_finite() && h > 0.0)) {
        f.error_at("hop_s", "must be a positive number of seconds");
    }
    if !(skip_s.is_finite() && skip_s >= 0.0) {
        f.error_at("skip_s", "must be zero or a positive number of seconds");
    }
    if mix_db.is_some_and(|g| !(g.is_finite() && (-200.0..=60.0).contains(&g))) {
        f.error_at("mix_db", "must be a gain in dB between -200 and 60");
    }
    if csv_rate.is_some_and(|r| !(r.is_finite() && r > 0.0)) {
        f.error_at("csv_sample_rate_hz", "must be a positive rate");
    }
    if recordings.is_none() {
        f.error_at(
            "recordings",
            "missing: list the recordings, e.g. `- {samples: bench/walk-01.wav, labels: bench/walk-01-labels.csv}`",
        );
    }
    let recordings_path = f.path_of("recordings");
    let calibration_path = f.path_of("calibration_recordings");
    f.finish();
    let mut ok = !reader.has_errors();
    let sensor = &scene.sensor;
    let adc = match AdcDescription::new(
        sensor.adc.bits,
        sensor.adc.full_scale_v,
        Some(sensor.front_end.bias_v),
    ) {
        Ok(adc) => Some(adc),
        Err(e) => {
            reader.error(
                node.location,
                path,
                format!("the scene's ADC cannot scale a recording: {e}"),
            );
            None
        }
    };
    let values = match csv_values {
        "signed_codes" => CsvValues::SignedCodes,
        "volts" => CsvValues::InputVolts,
        _ => CsvValues::Codes,
    };
    let cut = TrialCut {
        trial_s: scene.duration_s,
        hop_s,
        skip_s,
    };
    let mut lists = Vec::new();
    for (list, list_path) in [
        (recordings, recordings_path),
        (calibration_recordings, calibration_path),
    ] {
        let mut trials = Vec::new();
        if let (Some(list), Some(adc)) = (list, adc) {
            let context = RecordingContext {
                source,
                sensor_rate_hz: sensor.sample_rate_hz,
                channels: sensor.output,
                csv_rate,
                values,
                adc,
                cut,
            };
            match &list.value {
                Value::Seq(items) => {
                    for (i, item) in items.iter().enumerate() {
                        let item_path = format!("{list_path}[{i}]");
                        match read_recording(item, &item_path, &context, &mut reader) {
                            Some(mut more) => trials.append(&mut more),
                            None => ok = false,
                        }
                    }
                }
                _ => {
                    reader.error(
                        list.location,
                        &list_path,
                        format!("expected a list of recordings, found {}", list.kind_name()),
                    );
                    ok = false;
                }
            }
        }
        lists.push(trials);
    }
    let problems = reader.finish();
    ok &= !problems.has_errors();
    report.extend(problems);
    let calibration = lists.pop()?;
    let test = lists.pop()?;
    if ok && test.is_empty() {
        report.problems.push(error(
            suite_file,
            node.location,
            format!("{path}.recordings"),
            format!(
                "no trial of {} s fits in the recordings: shorten the scene's `duration_s`",
                scene.duration_s
            ),
        ));
        ok = false;
    }
    let format = match csv_rate {
        Some(rate) => CaptureFormat::Csv(CsvLayout {
            sample_rate_hz: rate,
            values,
        }),
        None => CaptureFormat::Wav,
    };
    (ok).then(|| crate::suite::CaptureSource {
        adc: adc.expect("checked above"),
        format,
        mix_gain: mix_db.map(|db| 10f64.powf(db / 20.0)),
        test,
        calibration,
    })
}

struct RecordingContext<'a> {
    source: &'a dyn SceneSource,
    sensor_rate_hz: f64,
    channels: Channels,
    csv_rate: Option<f64>,
    values: echobench_capture::CsvValues,
    adc: echobench_capture::AdcDescription,
    cut: echobench_capture::TrialCut,
}

/// One `{samples, labels}` item: opens the file, reads the labels and cuts the trials.
fn read_recording(
    node: &Node,
    path: &str,
    context: &RecordingContext<'_>,
    reader: &mut Reader,
) -> Option<Vec<crate::suite::CaptureTrial>> {
    use echobench_capture::{read_labels, CaptureFormat, CaptureReader, CsvLayout};
    let mut f = reader.fields(node, path)?;
    let samples: Option<String> = f.required("samples");
    let labels: Option<String> = f.optional("labels");
    let samples_at = f.raw("samples").map_or(node.location, |n| n.location);
    let labels_at = f.raw("labels").map_or(node.location, |n| n.location);
    f.finish();
    let samples = samples?;
    let Some(file) = context.source.path(&samples) else {
        reader.error(
            samples_at,
            &format!("{path}.samples"),
            "recordings can only be read by a suite file on disk",
        );
        return None;
    };
    let is_csv = samples.to_ascii_lowercase().ends_with(".csv");
    let format = match (is_csv, context.csv_rate) {
        (true, Some(rate)) => CaptureFormat::Csv(CsvLayout {
            sample_rate_hz: rate,
            values: context.values,
        }),
        (true, None) => {
            reader.error(samples_at, &format!("{path}.samples"), "a CSV recording needs `csv_sample_rate_hz` in the capture (a CSV file does not state its rate)");
            return None;
        }
        (false, _) => CaptureFormat::Wav,
    };
    let capture = match CaptureReader::open(&file, &format, context.adc) {
        Ok(capture) => capture,
        Err(e) => {
            reader.error(samples_at, &format!("{path}.samples"), e.to_string());
            return None;
        }
    };
    for warning in capture.warnings() {
        reader.warn(
            samples_at,
            &format!("{path}.samples"),
            format!("{}: {warning}", file.display()),
        );
    }
    if capture.channels() != context.channels {
        reader.error(
            samples_at,
            &format!("{path}.samples"),
            format!(
                "the recording has {} channel(s) but the scene's sensor has `output: {}`",
                capture.channels().count(),
                if context.channels == Channels::Iq {
                    "iq"
                } else {
                    "real"
                }
            ),
        );
        return None;
    }
    let file_rate_hz = capture.sample_rate_hz();
    if file_rate_hz != context.sensor_rate_hz {
        let whole = |r: f64| r.fract() == 0.0 && r >= 1.0 && r <= u32::MAX as f64;
        let refused = if whole(file_rate_hz) && whole(context.sensor_rate_hz) {
            echobench_capture::Resampler::new(
                file_rate_hz as u32,
                context.sensor_rate_hz as u32,
                context.channels,
            )
            .err()
            .map(|e| e.to_string())
        } else {
            Some("only whole-hertz rates can be resampled".into())
        };
        if let Some(why) = refused {
            reader.error(
                samples_at,
                &format!("{path}.samples"),
                format!("recorded at {file_rate_hz} Hz, the scene's sensor runs at {} Hz, and the rates cannot be converted: {why}", context.sensor_rate_hz),
            );
            return None;
        }
    }
    let duration_s = capture.duration_s();
    let label_list = match &labels {
        Some(relative) => {
            let Some(label_file) = context.source.path(relative) else {
                reader.error(
                    labels_at,
                    &format!("{path}.labels"),
                    "label files can only be read by a suite file on disk",
                );
                return None;
            };
            match read_labels(&label_file, duration_s) {
                Ok(list) => list,
                Err(e) => {
                    reader.error(labels_at, &format!("{path}.labels"), e.to_string());
                    return None;
                }
            }
        }
        None => Vec::new(),
    };
    let windows = match echobench_capture::cut_trials(
        capture.frames(),
        file_rate_hz,
        &context.cut,
        &label_list,
    ) {
        Ok(windows) => windows,
        Err(e) => {
            // Named with the file: the same recording may be listed by several entries.
            let message = format!("{}: {e}", file.display());
            reader.error(samples_at, &format!("{path}.samples"), message);
            return None;
        }
    };
    Some(
        windows
            .into_iter()
            .map(|w| crate::suite::CaptureTrial {
                path: file.clone(),
                file_rate_hz,
                start_frame: w.start_frame,
                frames: w.frames,
                targets: w.labels.iter().map(|l| l.interval).collect(),
            })
            .collect(),
    )
}

fn read_sweep<'n>(node: &'n Node, path: &str, reader: &mut Reader) -> Option<SweepRead<'n>> {
    let mut f = reader.fields(node, path)?;
    let field: Option<String> = f.required("field");
    let field_location = f.raw("field").map_or(node.location, |n| n.location);
    let values_node = f.raw("values");
    let values_path = f.path_of("values");
    let steps = match &field {
        Some(field) => match FieldPath::parse(field) {
            Ok(steps) => Some(steps),
            Err(message) => {
                f.error_at("field", message);
                None
            }
        },
        None => None,
    };
    let mut values = Vec::new();
    let mut values_ok = true;
    match values_node {
        None => {
            f.error_at("values", "missing required field");
            values_ok = false;
        }
        Some(list) => match &list.value {
            Value::Seq(items) if items.is_empty() => {
                f.error_at(
                    "values",
                    "a sweep needs at least one value (each value is one scene variant)",
                );
                values_ok = false;
            }
            Value::Seq(items) => {
                for (i, item) in items.iter().enumerate() {
                    let item_path = format!("{values_path}[{i}]");
                    let refusal = sweep_value_refusal(item);
                    if let Some(message) = refusal {
                        f.reader().error(item.location, &item_path, message);
                        values_ok = false;
                        continue;
                    }
                    if let Some(j) = values[..]
                        .iter()
                        .position(|v: &&Node| v.value == item.value)
                    {
                        let message = format!(
                            "the same value as `values[{j}]`: two variants of one scene point"
                        );
                        f.reader().warn(item.location, &item_path, message);
                    }
                    values.push(item);
                }
            }
            _ => {
                f.error_at(
                    "values",
                    format!("expected a list of values, found {}", list.kind_name()),
                );
                values_ok = false;
            }
        },
    }
    f.finish();
    if !values_ok {
        return None;
    }
    Some(SweepRead {
        field: field?,
        field_location,
        steps: steps?,
        values,
    })
}

/// Why `value` cannot be written into a scene as a swept value, if it cannot.
fn sweep_value_refusal(value: &Node) -> Option<String> {
    const EXPECTED: &str = "expected a number, a name or a distribution";
    match &value.value {
        Value::Int(_) | Value::Str(_) | Value::Bool(_) | Value::Map(_) => None,
        Value::Float(x) if x.is_finite() => None,
        Value::Float(x) => Some(format!("must be a finite number, found {x}")),
        Value::Null => Some(format!("{EXPECTED}, found nothing (null)")),
        Value::Seq(_) => Some(format!(
            "{EXPECTED}, found a list (sweep one element, e.g. `start_m[0]`)"
        )),
    }
}

/// What a variant's problems are rewritten with.
struct VariantContext<'a> {
    suite_file: &'a str,
    scene_file: &'a str,
    entry_path: &'a str,
    inline: bool,
}

/// The sweep value written into one variant.
struct AppliedSweep<'a> {
    field: &'a str,
    value_text: &'a str,
    value_location: Location,
    value_path: String,
}

impl VariantContext<'_> {
    /// Reads one variant's tree as a scene and checks it; its problems, located and
    /// attributed, each with whether it is about the swept value (then moved to the suite).
    fn read_variant(
        &self,
        tree: &Node,
        sweep: Option<&AppliedSweep<'_>>,
    ) -> (Option<SceneSpec>, Vec<AttributedProblem>) {
        let (scene, problems) = match load_scene_node(self.scene_file, tree) {
            Ok((scene, warnings)) => {
                let mut problems = warnings;
                let sanity = scene_sanity(&scene, self.scene_file);
                let failed = sanity.has_errors();
                problems.extend(sanity);
                (if failed { None } else { Some(scene) }, problems.problems)
            }
            Err(report) => (None, report.problems),
        };
        let mut attributed = Vec::with_capacity(problems.len());
        for mut p in problems {
            if p.location.is_none() {
                p.location = Some(tree.deepest_location(&p.field));
            }
            if let Some(sweep) = sweep.filter(|s| field_is_within(&p.field, s.field)) {
                p.message = format!(
                    "{} (the swept value {} written at `{}`)",
                    p.message, sweep.value_text, sweep.field
                );
                p.file = self.suite_file.to_string();
                p.location = Some(sweep.value_location);
                p.field = sweep.value_path.clone();
                attributed.push((p, true));
                continue;
            }
            if self.inline {
                p.field = if p.field.is_empty() {
                    format!("{}.scene", self.entry_path)
                } else {
                    format!("{}.scene.{}", self.entry_path, p.field)
                };
            }
            attributed.push((p, false));
        }
        (scene, attributed)
    }
}

/// True when `field` is `prefix` or a field inside it.
fn field_is_within(field: &str, prefix: &str) -> bool {
    match field.strip_prefix(prefix) {
        Some(rest) => rest.is_empty() || rest.starts_with('.') || rest.starts_with('['),
        None => false,
    }
}

/// The swept value as written, for tables and messages.
fn render_value(node: &Node) -> String {
    match &node.value {
        Value::Null => "null".into(),
        Value::Bool(b) => b.to_string(),
        Value::Int(i) => i.to_string(),
        Value::Float(x) => x.to_string(),
        Value::Str(s) => s.clone(),
        Value::Seq(items) => {
            let items: Vec<String> = items.iter().map(render_value).collect();
            format!("[{}]", items.join(", "))
        }
        Value::Map(entries) => {
            let entries: Vec<String> = entries
                .iter()
                .map(|(key, value, _)| format!("{key}: {}", render_value(value)))
                .collect();
            format!("{{{}}}", entries.join(", "))
        }
    }
}

fn number_of(node: &Node) -> Option<f64> {
    match node.value {
        Value::Int(i) => Some(i as f64),
        Value::Float(x) => Some(x),
        _ => None,
    }
}

fn relocate(node: &mut Node, location: Location) {
    node.location = location;
    match &mut node.value {
        Value::Seq(items) => items.iter_mut().for_each(|item| relocate(item, location)),
        Value::Map(entries) => {
            for (_, value, key_location) in entries.iter_mut() {
                *key_location = location;
                relocate(value, location);
            }
        }
        _ => {}
    }
}

// ---------------------------------------------------------------- detectors

/// A detector entry with what the stream checks need.
struct DetectorRead {
    entry: DetectorEntry,
    plugin_index: usize,
    params: Params,
    location: Location,
    path: String,
    /// Where each given parameter's value is written.
    param_locations: Vec<(String, Location)>,
}

/// An `external` detector's `command` written as a relative path (with a `/`) names a
/// program beside the suite file, as scene and recording paths do: it is joined to the
/// suite's folder here, before the plugin looks for it. A bare name is left for `PATH`.
fn anchor_external_commands(
    list: Vec<DetectorRead>,
    source: &dyn SceneSource,
    plugins: &[&dyn DetectorPlugin],
) -> Vec<DetectorRead> {
    list.into_iter()
        .map(|mut read| {
            if read.entry.plugin != "external" {
                return read;
            }
            let mut changed = false;
            for (name, value) in &mut read.entry.params {
                if let ParamValue::Text(command) = value {
                    let relative =
                        command.contains('/') && !Path::new(command.trim()).is_absolute();
                    if name == "command" && relative {
                        if let Some(path) = source.path(command.trim()) {
                            *command = path.display().to_string();
                            changed = true;
                        }
                    }
                }
            }
            let plugin = plugins[read.plugin_index];
            if changed {
                if let Ok(params) =
                    Params::resolve(plugin.id(), plugin.params(), &read.entry.params)
                {
                    read.params = params;
                }
            }
            read
        })
        .collect()
}

fn read_detectors(
    node: &Node,
    suite_file: &str,
    plugins: &[&dyn DetectorPlugin],
    report: &mut Report,
) -> Option<Vec<DetectorRead>> {
    let mut reader = Reader::new(suite_file);
    let items = match &node.value {
        Value::Seq(items) if !items.is_empty() => items,
        Value::Seq(_) => {
            reader.error(
                node.location,
                "detectors",
                "a suite needs at least one detector",
            );
            report.extend(reader.finish());
            return None;
        }
        _ => {
            reader.error(
                node.location,
                "detectors",
                format!(
                    "expected a list of detector entries, found {}",
                    node.kind_name()
                ),
            );
            report.extend(reader.finish());
            return None;
        }
    };
    let ids: Vec<&str> = plugins.iter().map(|p| p.id()).collect();
    let mut out: Vec<DetectorRead> = Vec::new();
    let mut ok = true;
    for (index, item) in items.iter().enumerate() {
        let path = format!("detectors[{index}]");
        if let Some(word) = item.get("registered") {
            let alone = matches!(&item.value, Value::Map(entries) if entries.len() == 1);
            if !alone || word.value != Value::Str("all".into()) {
                reader.error_with_hint(
                    word.location,
                    &format!("{path}.registered"),
                    "`registered` takes the value `all` and stands alone in its entry",
                    "write `- registered: all` to score every registered plugin at its defaults",
                );
                ok = false;
                continue;
            }
            for read in every_registered(plugins, word.location, &path) {
                if let Some(first) = out.iter().find(|d| d.entry.label == read.entry.label) {
                    reader.error_with_hint(
                        word.location,
                        &path,
                        format!(
                            "detector label `{}` is used twice (first on line {}); labels name the results and must be unique",
                            read.entry.label, first.location.line
                        ),
                        "give the other entry its own `label`",
                    );
                    ok = false;
                    continue;
                }
                out.push(read);
            }
            continue;
        }
        let Some(mut f) = reader.fields(item, &path) else {
            ok = false;
            continue;
        };
        let plugin_id: Option<String> = f.required("plugin");
        let plugin_location = f.raw("plugin").map_or(item.location, |n| n.location);
        let label: Option<String> = f.optional("label");
        let label_location = f.raw("label").map_or(plugin_location, |n| n.location);
        let params_node = f.raw("params");
        let params_path = f.path_of("params");
        let plugin_index = match &plugin_id {
            Some(id) => match plugins.iter().position(|p| p.id() == id) {
                Some(i) => Some(i),
                None => {
                    let message = format!("unknown detector plugin `{id}`");
                    let hint = match suggest(id, &ids) {
                        Some(near) => format!("did you mean `{near}`?"),
                        None => format!("known plugins: {}", ids.join(", ")),
                    };
                    let plugin_path = f.path_of("plugin");
                    f.reader()
                        .error_with_hint(plugin_location, &plugin_path, message, hint);
                    None
                }
            },
            None => None,
        };
        if label.as_ref().is_some_and(|l| l.trim().is_empty()) {
            f.error_at("label", "must not be empty");
        }
        let given = match params_node {
            Some(params) => read_param_values(params, &params_path, f.reader()),
            None => Some(Vec::new()),
        };
        f.finish();
        let (Some(plugin_id), Some(plugin_index), Some(given)) = (plugin_id, plugin_index, given)
        else {
            ok = false;
            continue;
        };
        // One resolve reports every refused parameter at once, each at its own line.
        let plugin = plugins[plugin_index];
        let param_locations: Vec<(String, Location)> = given
            .iter()
            .map(|(name, _, _, value_location)| (name.clone(), *value_location))
            .collect();
        let pairs: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(n, v, _, _)| (n.clone(), v.clone()))
            .collect();
        let params = match Params::resolve(plugin.id(), plugin.params(), &pairs) {
            Ok(params) => Some(params),
            Err(problems) => {
                for problem in problems.iter() {
                    let Some((name, value, key_location, value_location)) =
                        given.iter().find(|(name, ..)| *name == problem.param)
                    else {
                        reader.error(item.location, &params_path, problem.to_string());
                        continue;
                    };
                    let known = plugin.params().iter().any(|s| s.name == name);
                    let location = if known {
                        *value_location
                    } else {
                        *key_location
                    };
                    reader.error(
                        location,
                        &format!("{params_path}.{name}"),
                        format!("{} = {}: {}", name, value, problem.message),
                    );
                }
                None
            }
        };
        let label = label.unwrap_or_else(|| plugin_id.clone());
        if let Some(first) = out.iter().find(|d| d.entry.label == label) {
            reader.error_with_hint(
                label_location,
                &format!("{path}.label"),
                format!(
                    "detector label `{label}` is used twice (first on line {}); labels name the results and must be unique",
                    first.location.line
                ),
                "give each entry its own `label`",
            );
            ok = false;
        }
        let Some(params) = params else {
            ok = false;
            continue;
        };
        out.push(DetectorRead {
            entry: DetectorEntry {
                label,
                plugin: plugin_id,
                params: pairs,
            },
            plugin_index,
            params,
            location: plugin_location,
            path,
            param_locations,
        });
    }
    report.extend(reader.finish());
    ok.then_some(out)
}

/// Every registered plugin but `external` (which needs a program to run) once, at its
/// defaults, labelled by its id, in the order the plugins were registered: what
/// `registered: all` (or a suite without `detectors`) means. A team that embeds echobench
/// with plugins of its own gets them scored by the default suite this way.
fn every_registered(
    plugins: &[&dyn DetectorPlugin],
    location: Location,
    path: &str,
) -> Vec<DetectorRead> {
    plugins
        .iter()
        .enumerate()
        .filter(|(_, plugin)| plugin.id() != "external")
        .map(|(plugin_index, plugin)| DetectorRead {
            entry: DetectorEntry {
                label: plugin.id().to_string(),
                plugin: plugin.id().to_string(),
                params: Vec::new(),
            },
            plugin_index,
            params: Params::defaults(plugin.params()),
            location,
            path: path.to_string(),
            param_locations: Vec::new(),
        })
        .collect()
}

/// A parameter value with the locations of its key and value.
type GivenParam = (String, ParamValue, Location, Location);

fn read_param_values(node: &Node, path: &str, reader: &mut Reader) -> Option<Vec<GivenParam>> {
    let Value::Map(entries) = &node.value else {
        reader.error(
            node.location,
            path,
            format!(
                "expected a mapping of parameter names to values, found {}",
                node.kind_name()
            ),
        );
        return None;
    };
    let mut out = Vec::new();
    let mut ok = true;
    for (name, value, key_location) in entries {
        let converted = match &value.value {
            Value::Int(i) => Some(ParamValue::Integer(*i)),
            Value::Float(x) if x.is_finite() => Some(ParamValue::Real(*x)),
            Value::Str(s) => Some(ParamValue::Text(s.clone())),
            Value::Bool(b) => Some(ParamValue::Flag(*b)),
            Value::Float(x) => {
                reader.error(
                    value.location,
                    &format!("{path}.{name}"),
                    format!("must be a finite number, found {x}"),
                );
                None
            }
            Value::Null | Value::Seq(_) | Value::Map(_) => {
                reader.error(
                    value.location,
                    &format!("{path}.{name}"),
                    format!(
                        "expected a number, a name or true/false, found {}",
                        value.kind_name()
                    ),
                );
                None
            }
        };
        match converted {
            Some(v) => out.push((name.clone(), v, *key_location, value.location)),
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// Tries each detector on each distinct stream of the suite's scenes, so that a
/// configuration a plugin refuses for a stream (a band above Nyquist, I/Q not
/// supported) is reported now, not as a failure of every trial.
fn check_streams(
    scenes: &[SuiteScene],
    detectors: &[DetectorRead],
    plugins: &[&dyn DetectorPlugin],
    suite_file: &str,
    report: &mut Report,
) {
    let mut streams: Vec<(StreamInfo, &str)> = Vec::new();
    for scene in scenes {
        for variant in &scene.variants {
            let info = stream_of(&variant.scene);
            if !streams.iter().any(|(known, _)| *known == info) {
                streams.push((info, scene.id.as_str()));
            }
        }
    }
    for detector in detectors {
        let plugin = plugins[detector.plugin_index];
        let mut refusals: Vec<String> = Vec::new();
        for (info, scene_id) in &streams {
            let outcome = catch_unwind(AssertUnwindSafe(|| plugin.check(&detector.params, info)));
            let (refusal, param) = match outcome {
                Ok(Ok(())) => (None, None),
                Ok(Err(e)) => (
                    Some(format!(
                        "parameter `{}` = {}: {}",
                        e.param, e.value, e.message
                    )),
                    Some(e.param),
                ),
                Err(_) => (
                    Some("the plugin panicked while checking its configuration".to_string()),
                    None,
                ),
            };
            if let Some(why) = refusal {
                let channels = match info.channels {
                    Channels::Real => "real",
                    Channels::Iq => "I/Q",
                };
                let message = format!(
                    "plugin `{}` refuses the stream of scene `{scene_id}` ({} Hz, {channels}, {}-bit, {} GHz): {why}",
                    plugin.id(),
                    info.sample_rate_hz,
                    info.adc_bits,
                    info.carrier_hz / 1e9
                );
                // At the parameter the plugin names, when the suite sets it.
                let (location, field) = match detector
                    .param_locations
                    .iter()
                    .find(|(name, _)| Some(name) == param.as_ref())
                {
                    Some((name, at)) => (*at, format!("{}.params.{name}", detector.path)),
                    None => (detector.location, detector.path.clone()),
                };
                if !refusals.contains(&why) {
                    report
                        .problems
                        .push(error(suite_file, location, field, message));
                    refusals.push(why);
                }
            }
        }
    }
}

fn stream_of(scene: &SceneSpec) -> StreamInfo {
    StreamInfo {
        sample_rate_hz: scene.sensor.sample_rate_hz,
        channels: scene.sensor.output,
        adc_bits: scene.sensor.adc.bits,
        carrier_hz: scene.sensor.carrier_hz,
    }
}

// ---------------------------------------------------------------- alarm and scoring

fn read_alarm(node: &Node, suite_file: &str, report: &mut Report) -> Option<AlarmSpec> {
    let mut reader = Reader::new(suite_file);
    let alarm = (|| {
        let mut f = reader.fields(node, "alarm")?;
        let defaults = AlarmSpec::default();
        let hold_s: f64 = f.optional_or("hold_s", defaults.hold_s);
        let m_of_n: Option<[u32; 2]> = f.optional("m_of_n");
        let mut ok = true;
        if hold_s < 0.0 {
            f.error_at(
                "hold_s",
                format!("the hold time must not be negative, found {hold_s} s"),
            );
            ok = false;
        }
        if let Some([m, n]) = m_of_n {
            if !(1 <= m && m <= n && n <= MAX_M_OF_N_FRAMES) {
                f.error_at(
                    "m_of_n",
                    format!("[M, N] = [{m}, {n}] must have 1 ≤ M ≤ N ≤ {MAX_M_OF_N_FRAMES}"),
                );
                ok = false;
            }
        }
        f.finish();
        ok.then_some(AlarmSpec {
            hold_s,
            m_of_n: m_of_n.map(|[m, n]| (m, n)),
        })
    })();
    let problems = reader.finish();
    let failed = problems.has_errors();
    report.extend(problems);
    if failed {
        None
    } else {
        alarm
    }
}

fn read_scoring(node: &Node, suite_file: &str, report: &mut Report) -> Option<ScoringSpec> {
    let mut reader = Reader::new(suite_file);
    let scoring = (|| {
        let mut f = reader.fields(node, "scoring")?;
        let defaults = ScoringSpec::default();
        let early_s: f64 = f.optional_or("early_s", defaults.early_s);
        let late_s: f64 = f.optional_or("late_s", defaults.late_s);
        let rates: Vec<f64> = f.optional_or(
            "target_false_alarms_per_hour",
            defaults.target_false_alarms_per_hour.clone(),
        );
        let threshold_count: usize = f.optional_or("threshold_count", defaults.threshold_count);
        let budget: Option<f64> = f.optional("false_alarm_budget_per_hour");
        let budget_from_tail = f.choice_or(
            "budget_evidence",
            &["test_trials", "calibration_tail"],
            "test_trials",
        ) == "calibration_tail";
        let threshold_rule = match f.choice_or(
            "threshold_rule",
            &[
                ThresholdRule::WorstRoom.name(),
                ThresholdRule::Pooled.name(),
            ],
            ThresholdRule::WorstRoom.name(),
        ) {
            "pooled" => ThresholdRule::Pooled,
            _ => ThresholdRule::WorstRoom,
        };
        let mut ok = true;
        for (key, value) in [("early_s", early_s), ("late_s", late_s)] {
            if value < 0.0 {
                f.error_at(
                    key,
                    format!("a tolerance must not be negative, found {value} s"),
                );
                ok = false;
            }
        }
        if rates.is_empty() {
            f.error_at(
                "target_false_alarms_per_hour",
                "give at least one false-alarm rate at which to choose an operating threshold",
            );
            ok = false;
        }
        if let Some(bad) = rates.iter().find(|r| **r <= 0.0) {
            f.error_at(
                "target_false_alarms_per_hour",
                format!("every rate must be positive, found {bad}"),
            );
            ok = false;
        }
        if !THRESHOLD_COUNT_RANGE.contains(&threshold_count) {
            f.error_at(
                "threshold_count",
                format!(
                    "must be {} to {}, found {threshold_count}",
                    THRESHOLD_COUNT_RANGE.start(),
                    THRESHOLD_COUNT_RANGE.end()
                ),
            );
            ok = false;
        }
        if let Some(b) = budget.filter(|b| *b <= 0.0) {
            f.error_at(
                "false_alarm_budget_per_hour",
                format!("must be positive, found {b}"),
            );
            ok = false;
        }
        f.finish();
        ok.then_some(ScoringSpec {
            early_s,
            late_s,
            target_false_alarms_per_hour: rates,
            threshold_count,
            false_alarm_budget_per_hour: budget,
            threshold_rule,
            budget_from_tail,
        })
    })();
    let problems = reader.finish();
    let failed = problems.has_errors();
    report.extend(problems);
    if failed {
        None
    } else {
        scoring
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn field_containment_respects_segment_boundaries() {
        assert!(field_is_within("actors[0].path", "actors[0].path"));
        assert!(field_is_within(
            "actors[0].path.speed_mps",
            "actors[0].path"
        ));
        assert!(field_is_within(
            "actors[0].path.start_m[0]",
            "actors[0].path.start_m"
        ));
        assert!(!field_is_within("actors[0].pathway", "actors[0].path"));
        assert!(!field_is_within("actors[10]", "actors[1]"));
    }
}
