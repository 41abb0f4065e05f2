//! Reading a run folder written by `echobench run` or `echobench merge`.

use echobench_harness::runner::{Tallies, Timing, SCHEMA_VERSION};
use echobench_harness::summary::Summary;
use std::path::{Path, PathBuf};

/// Why a run folder cannot be reported. Every variant names the file.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
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
    /// The files of the folder do not belong to the same run.
    #[error("{}: {message}", dir.display())]
    Mismatch {
        /// The folder.
        dir: PathBuf,
        /// What differs.
        message: String,
    },
}

/// Everything the report reads from one run folder.
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
}

fn read_text(path: &Path) -> Result<Option<String>, ReportError> {
    match std::fs::read_to_string(path) {
        Ok(text) => Ok(Some(text)),
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(source) => Err(ReportError::Read {
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
) -> Result<T, ReportError> {
    let value: serde_json::Value = serde_json::from_str(text).map_err(|e| ReportError::Parse {
        path: path.to_path_buf(),
        message: e.to_string(),
    })?;
    let found = value.get("schema").and_then(serde_json::Value::as_u64);
    if found != Some(u64::from(SCHEMA_VERSION)) {
        return Err(ReportError::Schema {
            path: path.to_path_buf(),
            found: found.map_or_else(|| "none".to_string(), |v| v.to_string()),
            expected: SCHEMA_VERSION,
        });
    }
    serde_json::from_value(value).map_err(|e| ReportError::Parse {
        path: path.to_path_buf(),
        message: e.to_string(),
    })
}

impl RunFolder {
    /// Reads `summary.json`, `tallies.json`, and, when present, `timing.json` and
    /// `suite.yaml` from `dir`.
    ///
    /// # Errors
    /// A missing summary or tallies file, an unreadable or malformed file, a schema version
    /// other than the harness's [`SCHEMA_VERSION`], or a summary and tallies from different
    /// runs. Each error names the file.
    pub fn load(dir: &Path) -> Result<RunFolder, ReportError> {
        let required = |name: &str| -> Result<(PathBuf, String), ReportError> {
            let path = dir.join(name);
            match read_text(&path)? {
                Some(text) => Ok((path, text)),
                None => Err(ReportError::Missing { path }),
            }
        };
        let (summary_path, summary_text) = required("summary.json")?;
        let summary: Summary = read_versioned(&summary_path, &summary_text)?;
        let (tallies_path, tallies_text) = required("tallies.json")?;
        let tallies: Tallies = read_versioned(&tallies_path, &tallies_text)?;
        let timing_path = dir.join("timing.json");
        let timing = match read_text(&timing_path)? {
            Some(text) => {
                Some(
                    serde_json::from_str::<Timing>(&text).map_err(|e| ReportError::Parse {
                        path: timing_path.clone(),
                        message: e.to_string(),
                    })?,
                )
            }
            None => None,
        };
        let suite_text = read_text(&dir.join("suite.yaml"))?;
        let run = RunFolder {
            summary,
            tallies,
            timing,
            suite_text,
        };
        run.check_consistent()
            .map_err(|message| ReportError::Mismatch {
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
