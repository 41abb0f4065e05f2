//! Label files: when a person was really there.

use echobench_core::atomic::write_atomically;
use echobench_core::Interval;
use std::fmt;
use std::io::Read;

use std::path::{Path, PathBuf};

/// How far past the end of the capture a label may end, s; such an end is
/// clipped to the end. One millisecond covers a labelling tool that rounds
/// times to the millisecond, and is one sample at 1 kHz.
pub const LABEL_END_TOLERANCE_S: f64 = 1e-3;

/// The header line every label file starts with (after comments and blank lines).
pub const LABEL_HEADER: [&str; 3] = ["start_s", "end_s", "kind"];

/// One labelled interval in which a target was present and moving.
#[derive(Debug, Clone, PartialEq)]
pub struct Label {
    /// When, s from the start of the capture.
    pub interval: Interval,
    /// Free text (`walk`, `sit`, ...).
    pub kind: String,
    /// Line in the label file, from 1 (0 for a label made in code).
    pub line: u64,
}

impl Label {
    /// A label made in code (for writing a label file).
    pub fn new(interval: Interval, kind: impl Into<String>) -> Self {
        Label {
            interval,
            kind: kind.into(),
            line: 0,
        }
    }
}

/// One problem in a label file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LabelProblem {
    /// Line number, from 1.
    pub line: u64,
    /// What is wrong.
    pub message: String,
}

/// Why a label file was refused.
#[derive(Debug, thiserror::Error)]
pub enum LabelError {
    /// The file could not be read.
    #[error("cannot read label file `{}`: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The system's reason.
        #[source]
        source: std::io::Error,
    },
    /// The capture duration or tolerance given is not usable.
    #[error("label file `{}`: {message}", path.display())]
    Setting {
        /// The file.
        path: PathBuf,
        /// What is wrong.
        message: String,
    },
    /// Every problem found in the file.
    #[error("{}", list_problems(path, problems))]
    Invalid {
        /// The file.
        path: PathBuf,
        /// Problems, in line order.
        problems: Vec<LabelProblem>,
    },
}

fn list_problems(path: &Path, problems: &[LabelProblem]) -> String {
    let mut text = format!(
        "label file `{}` has {} problem{}:",
        path.display(),
        problems.len(),
        if problems.len() == 1 { "" } else { "s" }
    );
    // A file of a few hundred thousand bad lines must not print them all.
    for p in problems.iter().take(SHOWN_LABEL_PROBLEMS) {
        text.push_str(&format!("\n  line {}: {}", p.line, p.message));
    }
    if problems.len() > SHOWN_LABEL_PROBLEMS {
        text.push_str(&format!(
            "\n  … and {} more (the first {SHOWN_LABEL_PROBLEMS} are shown)",
            problems.len() - SHOWN_LABEL_PROBLEMS
        ));
    }
    text
}

/// How many of a label file's problems a message lists.
pub const SHOWN_LABEL_PROBLEMS: usize = 100;

/// Reads a label file for a capture of `capture_duration_s` seconds, with the
/// end tolerance [`LABEL_END_TOLERANCE_S`].
///
/// # Errors
/// An unreadable file, or every problem found (each with its line).
pub fn read_labels(path: &Path, capture_duration_s: f64) -> Result<Vec<Label>, LabelError> {
    read_labels_with_tolerance(path, capture_duration_s, LABEL_END_TOLERANCE_S)
}

/// As [`read_labels`], with an end tolerance of the caller's choosing (one
/// sample period, say).
///
/// # Errors
/// As [`read_labels`]; also a duration or tolerance that is negative or not finite.
pub fn read_labels_with_tolerance(
    path: &Path,
    capture_duration_s: f64,
    end_tolerance_s: f64,
) -> Result<Vec<Label>, LabelError> {
    let file = std::fs::File::open(path).map_err(|source| LabelError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    parse_labels(
        path,
        std::io::BufReader::new(file),
        capture_duration_s,
        end_tolerance_s,
    )
}

/// Parses label text from any reader; `path` is only used in messages.
///
/// ```
/// use echobench_capture::parse_labels;
/// use std::path::Path;
/// let text = "# bench walk test\nstart_s,end_s,kind\n1.0,4.5,walk\n6,9,sit\n";
/// let labels = parse_labels(Path::new("walk.csv"), text.as_bytes(), 10.0, 0.001).unwrap();
/// assert_eq!(labels.len(), 2);
/// assert_eq!(labels[1].kind, "sit");
/// let bad = "start_s,end_s,kind\n5,4,walk\n";
/// let err = parse_labels(Path::new("bad.csv"), bad.as_bytes(), 10.0, 0.001).unwrap_err();
/// assert!(err.to_string().contains("line 2"));
/// ```
///
/// # Errors
/// As [`read_labels_with_tolerance`].
pub fn parse_labels<R: Read>(
    path: &Path,
    reader: R,
    capture_duration_s: f64,
    end_tolerance_s: f64,
) -> Result<Vec<Label>, LabelError> {
    let setting = |message: String| LabelError::Setting {
        path: path.to_path_buf(),
        message,
    };
    if !(capture_duration_s.is_finite() && capture_duration_s >= 0.0) {
        return Err(setting(format!(
            "capture duration {capture_duration_s} s is not a finite, non-negative time"
        )));
    }
    if !(end_tolerance_s.is_finite() && end_tolerance_s >= 0.0) {
        return Err(setting(format!(
            "end tolerance {end_tolerance_s} s is not a finite, non-negative time"
        )));
    }
    let mut reader = std::io::BufReader::new(reader);
    let mut problems = Vec::new();
    let mut labels: Vec<Label> = Vec::new();
    let mut header_seen = false;
    let mut bytes = Vec::new();
    let mut line = 0u64;
    loop {
        // Lines are counted here, not by the CSV parser, so that comment and
        // blank lines count exactly as an editor shows them.
        bytes.clear();
        let n = std::io::BufRead::read_until(&mut reader, b'\n', &mut bytes).map_err(|source| {
            LabelError::Io {
                path: path.to_path_buf(),
                source,
            }
        })?;
        if n == 0 {
            break;
        }
        line += 1;
        let Ok(text) = std::str::from_utf8(&bytes) else {
            problems.push(LabelProblem {
                line,
                message: "not UTF-8 text".to_string(),
            });
            continue;
        };
        // A byte-order mark (spreadsheet exports) is not part of the header.
        let text = text.trim_start_matches('\u{feff}').trim();
        if text.is_empty() || text.starts_with('#') {
            continue;
        }
        // One line is one record; the CSV parser only splits it (quotes allowed).
        let mut record = csv::StringRecord::new();
        let parsed = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes())
            .read_record(&mut record);
        if let Err(e) = parsed {
            problems.push(LabelProblem {
                line,
                message: e.to_string(),
            });
            continue;
        }
        let mut note = |message: String| problems.push(LabelProblem { line, message });
        if !header_seen {
            header_seen = true;
            let names: Vec<&str> = record.iter().collect();
            if names == LABEL_HEADER {
                continue;
            }
            let starts_with_number = names.first().is_some_and(|f| f.parse::<f64>().is_ok());
            if starts_with_number {
                // Report it, then read the row as data so its own faults are listed too.
                note(format!(
                    "the header line `{}` is missing before the first label",
                    LABEL_HEADER.join(",")
                ));
            } else {
                let missing: Vec<&str> = LABEL_HEADER
                    .iter()
                    .copied()
                    .filter(|n| !names.contains(n))
                    .collect();
                let detail = if missing.is_empty() {
                    String::new()
                } else {
                    format!(
                        " (missing column{} `{}`)",
                        if missing.len() == 1 { "" } else { "s" },
                        missing.join("`, `")
                    )
                };
                note(format!(
                    "the header must be exactly `{}`; found `{}`{detail}",
                    LABEL_HEADER.join(","),
                    names.join(",")
                ));
                continue;
            }
        }
        if record.len() < 3 {
            let missing = &LABEL_HEADER[record.len()..];
            note(format!(
                "missing column{} `{}`: a label line is `start_s,end_s,kind`",
                if missing.len() == 1 { "" } else { "s" },
                missing.join("`, `")
            ));
            continue;
        }
        if record.len() > 3 {
            note(format!(
                "{} fields where a label line has 3 (`start_s,end_s,kind`; quote a kind that holds a comma)",
                record.len()
            ));
            continue;
        }
        let number = |name: &str, field: &str| -> Result<f64, String> {
            match field.parse::<f64>() {
                Ok(v) if v.is_finite() => Ok(v),
                Ok(_) => Err(format!("`{name}` = `{field}` is not a finite number")),
                Err(_) if field.is_empty() => Err(format!("`{name}` is empty")),
                Err(_) => Err(format!("`{name}` = `{field}` is not a number")),
            }
        };
        let start = number("start_s", &record[0]);
        let end = number("end_s", &record[1]);
        let kind = record[2].to_string();
        let mut fine = true;
        if kind.is_empty() {
            note("`kind` is empty (say what the person did: walk, sit, ...)".to_string());
            fine = false;
        }
        let (start_s, end_s) = match (start, end) {
            (Ok(s), Ok(e)) => (s, e),
            (s, e) => {
                for message in [s.err(), e.err()].into_iter().flatten() {
                    note(message);
                }
                continue;
            }
        };
        if start_s < 0.0 {
            note(format!("start_s = {start_s} is negative"));
            fine = false;
        }
        if end_s <= start_s {
            note(format!("end_s = {end_s} is not after start_s = {start_s}"));
            fine = false;
        }
        if start_s >= capture_duration_s {
            note(format!(
                "start_s = {start_s} is at or past the end of the capture ({capture_duration_s} s)"
            ));
            fine = false;
        } else if end_s > capture_duration_s + end_tolerance_s {
            note(format!(
                "end_s = {end_s} is past the end of the capture ({capture_duration_s} s, \
                 tolerance {end_tolerance_s} s)"
            ));
            fine = false;
        }
        if let Some(previous) = labels.last() {
            if start_s < previous.interval.start_s() {
                note(format!(
                    "not sorted: starts at {start_s} s, before the label on line {} ({} s); \
                     sort the file by start_s",
                    previous.line,
                    previous.interval.start_s()
                ));
                fine = false;
            } else if start_s < previous.interval.end_s() {
                note(format!(
                    "[{start_s}, {end_s}] s overlaps the label on line {} ([{}, {}] s); \
                     merge them or make one end where the next begins",
                    previous.line,
                    previous.interval.start_s(),
                    previous.interval.end_s()
                ));
                fine = false;
            }
        }
        if !fine {
            continue;
        }
        match Interval::new(start_s, end_s.min(capture_duration_s)) {
            Ok(interval) => labels.push(Label {
                interval,
                kind,
                line,
            }),
            Err(e) => note(e.to_string()),
        }
    }
    if !header_seen {
        problems.push(LabelProblem {
            line: 1,
            message: format!(
                "the file is empty: it needs at least the header line `{}`",
                LABEL_HEADER.join(",")
            ),
        });
    }
    if problems.is_empty() {
        Ok(labels)
    } else {
        problems.sort_by_key(|p| p.line);
        Err(LabelError::Invalid {
            path: path.to_path_buf(),
            problems,
        })
    }
}

/// Writes labels as a label file (header, then one line per label, times in
/// the shortest text that reads back to the same number).
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_labels(path: &Path, labels: &[Label]) -> std::io::Result<()> {
    write_atomically(path, |w| {
        let mut writer = csv::Writer::from_writer(w);
        let to_io = |e: csv::Error| std::io::Error::other(e.to_string());
        writer.write_record(LABEL_HEADER).map_err(to_io)?;
        for label in labels {
            writer
                .write_record([
                    label.interval.start_s().to_string(),
                    label.interval.end_s().to_string(),
                    label.kind.clone(),
                ])
                .map_err(to_io)?;
        }
        writer.flush()
    })
}

impl fmt::Display for Label {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "[{}, {}] s {}",
            self.interval.start_s(),
            self.interval.end_s(),
            self.kind
        )
    }
}
