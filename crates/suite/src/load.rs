//! The top of a suite file: reading it (from a path or from text), its top-level fields, and
//! the order of the parts: products and scenes, detectors, alarm and scoring, then the checks
//! that need several parts at once (each detector on each stream, coverage).

use crate::coverage::check_coverage;
use crate::detectors::{anchor_external_commands, check_streams, every_registered, read_detectors};
use crate::model::{AlarmSpec, Product, ProductKind, ScoringSpec, Suite};
use crate::products::{check_products, read_products};
use crate::scenes::read_scenes;
use crate::settings::{read_alarm, read_scoring};
use crate::sources::{FolderSource, SceneSource};
use crate::zone_block::{check_zone_scene, read_zone};
use echobench_core::detector::DetectorPlugin;
use echobench_yaml_reader::{parse, Limits, Location, Node, Problem, Reader, Report, Severity};
use std::path::Path;
use std::sync::Arc;

/// Bounds on a suite file: inline scenes make it larger than a scene, so the default limits.
const SUITE_LIMITS: Limits = Limits {
    max_bytes: 4 << 20,
    max_nodes: 200_000,
    max_depth: 64,
};

/// Reads a suite file; scene paths are relative to its folder.
///
/// `plugins` are the detectors the suite may name (their ids and parameter specs).
///
/// # Errors
/// An unreadable file, or the report of every problem found in the suite and its scenes.
pub fn load_suite_file(
    path: &Path,
    plugins: &[Arc<dyn DetectorPlugin>],
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
    plugins: &[Arc<dyn DetectorPlugin>],
) -> Result<(Suite, Report), Report> {
    let root = parse(name, text, &SUITE_LIMITS)?;
    let mut report = Report::default();
    let suite = read_suite(&root, name, scenes, plugins, &mut report);
    match suite {
        Some(suite) if !report.has_errors() => Ok((suite, report)),
        _ => Err(report),
    }
}

pub(crate) fn problem(
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

pub(crate) fn error(file: &str, location: Location, field: String, message: String) -> Problem {
    problem(Severity::Error, file, location, field, message, None)
}

fn read_suite(
    root: &Node,
    name: &str,
    scenes: &dyn SceneSource,
    plugins: &[Arc<dyn DetectorPlugin>],
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
    let zone_node = f.raw("zone");
    if zone_node.is_some() && products_node.is_some() {
        f.error_at(
            "zone",
            "a zone belongs to a product: move it under the product whose room it maps",
        );
    }
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
            let mut zone_reader = Reader::new(name);
            let zone = zone_node.and_then(|n| read_zone(n, "zone", &mut zone_reader));
            let zone_failed = zone_node.is_some() && zone.is_none();
            let product = Product {
                name: suite_name.clone(),
                about: String::new(),
                module: None,
                kind: ProductKind::Intrusion,
                zone,
            };
            let list = read_scenes(
                node,
                "scenes",
                &product.name,
                name,
                scenes,
                defaults,
                report,
            );
            if let (Some(zone), Some(list)) = (&product.zone, &list) {
                check_zone_scene(zone, "zone", list, &mut zone_reader);
            }
            let problems = zone_reader.finish();
            let zone_failed = zone_failed || problems.has_errors();
            report.extend(problems);
            list.filter(|_| !zone_failed)
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

#[derive(Debug, Clone, Copy)]
pub(crate) struct TrialCounts {
    pub(crate) trials: Option<u64>,
    pub(crate) calibration_trials: Option<u64>,
}
