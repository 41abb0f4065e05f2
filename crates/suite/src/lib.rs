//! Suites: which scenes, how many trials, which detectors, and how to score them — read
//! strictly from a suite file (or the built-in default suite) into a checked [`Suite`].
//!
//! This crate loads; it neither runs nor scores (`echobench-harness` does, from a [`Suite`])
//! nor writes results. It depends on the scene, capture, coverage and YAML crates, never on
//! the harness.
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
//! **Key design decision: everything that can be refused is refused at load, and what load
//! worked out is kept.** A sweep edits the scene's YAML tree, not its typed form: the swept
//! value is written into the parsed scene at the field path before the scene is read, so any
//! field of any scene can be swept (a walker's start, a fan's speed, a burst rate, even a
//! distribution), and each variant goes through exactly the same strict reading and checks
//! as a hand-written scene; a problem caused by the swept value is reported at the value in
//! the suite. The loader knows no detector crate: the caller passes the list of plugins
//! (`echobench-detectors` holds the built-ins), every `params` entry is resolved against its
//! plugin's declared parameters once, here, and the resolved [`Params`] are kept in the
//! [`DetectorEntry`] for the runner; each configuration is then tried against each scene's
//! stream, and recordings are opened and cut, so a bad value is refused before any trial
//! runs, with every problem located (file, line, column, field path).
//!
//! [`Params`]: echobench_core::detector::Params
#![deny(missing_docs)]

mod capture;
mod coverage;
mod default_suite;
mod detectors;
mod load;
mod model;
mod products;
mod scenes;
mod settings;
mod sources;
mod variants;
mod zone_block;

pub use default_suite::{
    default_suite, DEFAULT_SUITE_FILE_NAME, DEFAULT_SUITE_SCENES, DEFAULT_SUITE_SOURCE,
    DEFAULT_SUITE_YAML,
};
pub use load::{load_suite_file, load_suite_text};
pub use model::{
    unit_of_field, AlarmSpec, CaptureSource, CaptureTrial, CoverageFinding, DetectorEntry,
    PresenceOutput, Product, ProductKind, ProductZone, SceneLabel, SceneVariant, ScoringSpec,
    Suite, SuiteScene, ThresholdRule,
};
pub use products::module_differences;
pub use sources::{EmbeddedSource, FolderSource, InlineOnly, SceneSource};
