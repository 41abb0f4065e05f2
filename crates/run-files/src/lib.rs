//! The files of a run folder: what a run writes, and reading them back.
//!
//! A run folder holds `suite.yaml` (the suite's text as run), `tallies.json` (the integer
//! counts everything else is computed from), `summary.json`, `roc.csv`, `events.csv`,
//! `presence.csv` (when a product is a presence product) and `timing.json` (absent for merged
//! runs); `report.html` and the gate's files are added by their own writers, and the
//! detection zone's (`zone.json`, `zone.csv`, `zone-*.svg`; [`zone`]) by `echobench zone`. This crate is
//! the one place that knows that list: [`RunFolder::write_into`] writes the data files into a
//! staged folder, [`RunFolder::open`] reads a sealed folder back, and [`read_tallies`] takes
//! the tallies of a run, a reference or a bare `tallies.json`. The command line, the report
//! and an embedding program all go through it, so a second reader cannot drift from the
//! first.
//!
//! **Key design decision: versions are checked before fields.** Each JSON file carries the
//! harness's `schema` number, and a file of another version is refused by its version (the
//! message says to re-run) rather than by whichever field happened to change; the summary
//! and the tallies must then describe the same run, detector for detector. Every error names
//! the file.
#![deny(missing_docs)]

pub mod zone;

use echobench_core::atomic::write_atomically;
use echobench_harness::runner::{Tallies, Timing, SCHEMA_VERSION};
use echobench_harness::summary::{self, Summary};
use echobench_harness::zone_walks::ZoneRecord;
use echobench_render::csv_files;
use echobench_render::json::write_json;
use echobench_run_folder::fault_point;
use echobench_suite::Suite;
use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};

/// The files every reader of a run's results needs.
pub const REQUIRED_FILES: [&str; 2] = ["summary.json", "tallies.json"];

/// The files a reference folder keeps (`echobench keep`): what a later run and the gate
/// read. The rest of a run folder (report, timing, gate files) describes that one run only.
pub const REFERENCE_FILES: [&str; 5] = [
    "tallies.json",
    "summary.json",
    "suite.yaml",
    "roc.csv",
    "events.csv",
];

/// Why a run folder cannot be read or written. Every variant names the file.
#[derive(Debug, thiserror::Error)]
pub enum RunFileError {
    /// A file the report needs is not there.
    #[error("{}: not found (is this a folder written by `echobench run`?)", path.display())]
    Missing {
        /// The file.
        path: PathBuf,
    },
    /// A file exists but cannot be read.
    #[error("{}: cannot read: {source}", path.display())]
    Read {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A file is not the JSON the harness writes.
    #[error("{}: not a valid run file: {message}", path.display())]
    Parse {
        /// The file.
        path: PathBuf,
        /// What the JSON reader said.
        message: String,
    },
    /// A file was written with another schema version.
    #[error("{}: written with schema {found}, but this echobench reads schema {expected}; re-run the suite (or use the echobench that wrote it)", path.display())]
    Schema {
        /// The file.
        path: PathBuf,
        /// The version found (`none` when absent).
        found: String,
        /// The version this build reads.
        expected: u32,
    },
    /// The folder is not complete or not of one run (its manifest disagrees with its files).
    #[error(transparent)]
    Folder(#[from] echobench_run_folder::FolderError),
    /// A file could not be written.
    #[error("{}: cannot write: {source}", path.display())]
    Write {
        /// The file.
        path: PathBuf,
        /// The I/O error.
        source: std::io::Error,
    },
    /// A zone that does not fit the suite (another suite's `zone.json`, or edited).
    #[error("zone: {message}")]
    Zone {
        /// What does not fit.
        message: String,
    },
    /// The files of the folder do not belong to the same run.
    #[error("{}: {message}", dir.display())]
    Mismatch {
        /// The folder.
        dir: PathBuf,
        /// What differs.
        message: String,
    },
}

/// The data files of one run folder, as read or about to be written.
#[derive(Debug, Clone)]
pub struct RunFolder {
    /// `summary.json`.
    pub summary: Summary,
    /// `tallies.json`: the raw counts the ROC curves and distributions are drawn from.
    pub tallies: Tallies,
    /// `timing.json`, absent for merged runs.
    pub timing: Option<Timing>,
    /// `suite.yaml`, the suite's text, when the folder has it.
    pub suite_text: Option<String>,
    /// `zone.json`, when `echobench zone` mapped the run's zones.
    pub zone: Option<ZoneRecord>,
    /// The zone's pictures, file name → SVG text (those `zone.json` lists).
    pub zone_pictures: BTreeMap<String, String>,
}

fn read_text(path: &Path) -> Result<Option<String>, RunFileError> {
    match std::fs::read_to_string(path) {
        Ok(text) => Ok(Some(text)),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(source) => Err(RunFileError::Read {
            path: path.to_path_buf(),
            source,
        }),
    }
}

/// Parses a JSON file after checking its `schema` field, so a file of another version is
/// refused by its version rather than by whichever field happened to change.
fn read_versioned<T: serde::de::DeserializeOwned>(
    path: &Path,
    text: &str,
) -> Result<T, RunFileError> {
    /// Only the version, read first. The whole file is then parsed from the text, not from a
    /// `serde_json::Value`, which would turn integers above u64 (the u128 sums of squares in
    /// the tallies) into floats and refuse them.
    #[derive(serde::Deserialize)]
    struct Version {
        schema: Option<u64>,
    }
    let parse_error = |e: serde_json::Error| RunFileError::Parse {
        path: path.to_path_buf(),
        message: e.to_string(),
    };
    let found = serde_json::from_str::<Version>(text)
        .map_err(parse_error)?
        .schema;
    if found != Some(u64::from(SCHEMA_VERSION)) {
        return Err(RunFileError::Schema {
            path: path.to_path_buf(),
            found: found.map_or_else(|| "none".to_string(), |v| v.to_string()),
            expected: SCHEMA_VERSION,
        });
    }
    serde_json::from_str(text).map_err(parse_error)
}

impl RunFolder {
    /// The files of a finished run: its summary is computed from the tallies here, so what
    /// is written always agrees with them.
    pub fn from_run(
        suite: &Suite,
        suite_text: &str,
        tallies: Tallies,
        timing: Option<Timing>,
    ) -> RunFolder {
        RunFolder {
            summary: summary::summarise(&tallies, suite),
            tallies,
            timing,
            suite_text: Some(suite_text.to_string()),
            zone: None,
            zone_pictures: BTreeMap::new(),
        }
    }

    /// Writes the data files into `dir` (a staged folder: [`echobench_run_folder::Staging`]),
    /// each atomically, with a fault point after each so the crash tests can stop the writer
    /// there. `report.html` is not among them: the caller renders it from this value.
    ///
    /// # Errors
    /// The first file that could not be written, named.
    pub fn write_into(&self, dir: &Path) -> Result<(), RunFileError> {
        let at = |name: &str| {
            let path = dir.join(name);
            move |source| RunFileError::Write { path, source }
        };
        // Each file is rendered by `echobench-render` straight into its atomic writer.
        let write = |name: &str, render: &dyn Fn(&mut dyn Write) -> std::io::Result<()>| {
            write_atomically(&dir.join(name), |w| render(w)).map_err(at(name))?;
            fault_point(name);
            Ok::<(), RunFileError>(())
        };
        if let Some(text) = &self.suite_text {
            write("suite.yaml", &|w| w.write_all(text.as_bytes()))?;
        }
        write("tallies.json", &|w| write_json(w, &self.tallies))?;
        write("summary.json", &|w| write_json(w, &self.summary))?;
        write("roc.csv", &|w| csv_files::write_roc(w, &self.tallies))?;
        write("events.csv", &|w| csv_files::write_events(w, &self.summary))?;
        if self.summary.detectors.iter().any(|d| d.presence.is_some()) {
            write("presence.csv", &|w| {
                csv_files::write_presence(w, &self.summary)
            })?;
        }
        if let Some(timing) = &self.timing {
            write("timing.json", &|w| write_json(w, timing))?;
        }
        Ok(())
    }

    /// Reads a sealed run folder: its manifest is verified first (every file present, of
    /// one run, nothing foreign), then the files as [`RunFolder::load`] reads them.
    ///
    /// # Errors
    /// As [`RunFolder::load`], and [`RunFileError::Folder`] for a folder that is not complete.
    pub fn open(dir: &Path) -> Result<RunFolder, RunFileError> {
        echobench_run_folder::verify(dir, &REQUIRED_FILES)?;
        RunFolder::load(dir)
    }

    /// Reads `summary.json`, `tallies.json`, and, when present, `timing.json` and
    /// `suite.yaml` from `dir`.
    ///
    /// # Errors
    /// A missing summary or tallies file, an unreadable or malformed file, a schema version
    /// other than the harness's [`SCHEMA_VERSION`], or a summary and tallies from different
    /// runs. Each error names the file.
    pub fn load(dir: &Path) -> Result<RunFolder, RunFileError> {
        let required = |name: &str| -> Result<(PathBuf, String), RunFileError> {
            let path = dir.join(name);
            match read_text(&path)? {
                Some(text) => Ok((path, text)),
                None => Err(RunFileError::Missing { path }),
            }
        };
        let (summary_path, summary_text) = required("summary.json")?;
        let summary: Summary = read_versioned(&summary_path, &summary_text)?;
        let (tallies_path, tallies_text) = required("tallies.json")?;
        let tallies: Tallies = read_versioned(&tallies_path, &tallies_text)?;
        let timing_path = dir.join("timing.json");
        let timing =
            match read_text(&timing_path)? {
                Some(text) => Some(serde_json::from_str::<Timing>(&text).map_err(|e| {
                    RunFileError::Parse {
                        path: timing_path.clone(),
                        message: e.to_string(),
                    }
                })?),
                None => None,
            };
        let suite_text = read_text(&dir.join("suite.yaml"))?;
        let (zone, zone_pictures) = match zone::read_zone(dir)? {
            Some((record, pictures)) => (Some(record), pictures),
            None => (None, BTreeMap::new()),
        };
        let run = RunFolder {
            summary,
            tallies,
            timing,
            suite_text,
            zone,
            zone_pictures,
        };
        run.check_consistent()
            .map_err(|message| RunFileError::Mismatch {
                dir: dir.to_path_buf(),
                message,
            })?;
        Ok(run)
    }

    /// Checks that the summary and the tallies describe the same run, detector for detector
    /// (by product and label, in the same order).
    ///
    /// # Errors
    /// What differs, in words.
    pub fn check_consistent(&self) -> Result<(), String> {
        let (s, t) = (&self.summary, &self.tallies);
        if s.suite != t.suite || s.seed != t.seed {
            return Err(format!(
                "summary.json is of suite `{}` seed {}, tallies.json of suite `{}` seed {}",
                s.suite, s.seed, t.suite, t.seed
            ));
        }
        // A detector is known by its product and label: the same label appears once per
        // product, with that product's thresholds.
        let key = |product: &str, label: &str| format!("{product}/{label}");
        let summary_labels: Vec<String> = s
            .detectors
            .iter()
            .map(|d| key(&d.product, &d.label))
            .collect();
        let tally_labels: Vec<String> = t
            .detectors
            .iter()
            .map(|d| key(&d.product, &d.label))
            .collect();
        if summary_labels != tally_labels {
            return Err(format!(
                "summary.json lists detectors [{}] but tallies.json [{}]",
                summary_labels.join(", "),
                tally_labels.join(", ")
            ));
        }
        for (d, tally) in s.detectors.iter().zip(&t.detectors) {
            if d.operating_points.len() != tally.operating.len() {
                return Err(format!(
                    "detector `{}` of product `{}`: {} operating points in summary.json, {} in tallies.json",
                    d.label,
                    d.product,
                    d.operating_points.len(),
                    tally.operating.len()
                ));
            }
            let lengths_ok = tally.variants.iter().all(|v| {
                v.detected.len() == tally.thresholds.len()
                    && v.false_alarms.len() == tally.thresholds.len()
                    && v.operating.len() == tally.operating.len()
            });
            if !lengths_ok {
                return Err(format!(
                    "detector `{}` of product `{}`: tallies.json has counts that do not match its threshold grid",
                    d.label, d.product
                ));
            }
        }
        Ok(())
    }
}

/// The tallies of a run or reference folder, which must be complete and of one run, or of a
/// `tallies.json` file given directly (a folder that does not exist is named as such).
///
/// # Errors
/// An incomplete folder, an unreadable or malformed file, or another schema version, naming
/// the file.
pub fn read_tallies(path: &Path) -> Result<Tallies, RunFileError> {
    let file = if path.is_dir() || !path.exists() {
        echobench_run_folder::verify(path, &["tallies.json"])?;
        path.join("tallies.json")
    } else {
        path.to_path_buf()
    };
    match read_text(&file)? {
        Some(text) => read_versioned(&file, &text),
        None => Err(RunFileError::Missing { path: file }),
    }
}

/// The summary of a sealed run folder.
///
/// # Errors
/// As [`read_tallies`].
pub fn read_summary(dir: &Path) -> Result<Summary, RunFileError> {
    echobench_run_folder::verify(dir, &["summary.json"])?;
    let file = dir.join("summary.json");
    match read_text(&file)? {
        Some(text) => read_versioned(&file, &text),
        None => Err(RunFileError::Missing { path: file }),
    }
}
