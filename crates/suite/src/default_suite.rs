//! The built-in default suite: its text and every scene file it names, compiled in.

use crate::load::load_suite_text;
use crate::model::Suite;
use crate::sources::EmbeddedSource;
use echobench_core::detector::DetectorPlugin;
use echobench_yaml_reader::Report;
use std::sync::Arc;

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

/// The built-in default suite, read and checked against `plugins`.
///
/// # Errors
/// Every problem found: none for the built-in detectors (a test holds it so),
/// but a plugin list without one of them is refused.
pub fn default_suite(plugins: &[Arc<dyn DetectorPlugin>]) -> Result<Suite, Report> {
    let (mut suite, _warnings) = load_suite_text(
        DEFAULT_SUITE_FILE_NAME,
        DEFAULT_SUITE_YAML,
        &EmbeddedSource::default_suite(),
        plugins,
    )?;
    suite.source = DEFAULT_SUITE_SOURCE.to_string();
    Ok(suite)
}
