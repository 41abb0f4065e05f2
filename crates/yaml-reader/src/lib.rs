//! Strict YAML reading: every problem of a file, located, at once.
//!
//! Scene and suite files are written by hand, so the reader must be strict
//! (unknown fields are errors, with the nearest valid name suggested) and
//! helpful (every problem is reported with file, line, column and the field's
//! path, all in one pass instead of one per run). `serde` stops at the first
//! error, so this crate does it differently: [`parse`] turns the text into a
//! located tree of [`Node`]s, and typed values are pulled out of it with a
//! [`Reader`] that collects [`Problem`]s and keeps going.
//!
//! Parsing uses `saphyr-parser` (a maintained, pure-Rust YAML 1.2 parser) at
//! the event level; this crate builds the tree itself, so that aliases are
//! expanded under a node budget (a "billion laughs" file fails fast with a
//! clear message instead of exhausting memory) and nesting depth and file size
//! are bounded ([`Limits`]). Plain scalars are resolved with the YAML 1.2 core
//! schema (null, booleans, integers, floats including `.inf`/`.nan`); quoted
//! scalars are always strings.
#![deny(missing_docs)]

mod field_path;
pub mod fixture;
mod reader;
mod tree;

pub use field_path::{FieldPath, PathMiss, Step};
pub use reader::{suggest, Fields, FromNode, Reader};
pub use tree::{parse, Limits, Node, Value};

use std::fmt;

/// A position in a file, both counted from 1.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Location {
    /// Line, from 1.
    pub line: usize,
    /// Column in characters, from 1.
    pub column: usize,
}

/// How bad a problem is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Severity {
    /// The file cannot be used.
    Error,
    /// Legal but suspicious; the file is used.
    Warning,
}

/// One thing wrong with a file.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Error or warning.
    pub severity: Severity,
    /// The file's name as given by the caller.
    pub file: String,
    /// Where in the file, when known.
    pub location: Option<Location>,
    /// Path of the field, e.g. `actors[1].path.speed_mps` (empty for the whole document).
    pub field: String,
    /// What is wrong.
    pub message: String,
    /// A suggestion, e.g. "did you mean `speed_mps`?".
    pub hint: Option<String>,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(location) = self.location {
            write!(f, ":{}:{}", location.line, location.column)?;
        }
        let kind = match self.severity {
            Severity::Error => "error",
            Severity::Warning => "warning",
        };
        write!(f, ": {kind}: ")?;
        if !self.field.is_empty() {
            write!(f, "`{}`: ", self.field)?;
        }
        write!(f, "{}", self.message)?;
        if let Some(hint) = &self.hint {
            write!(f, " ({hint})")?;
        }
        Ok(())
    }
}

/// All problems found in one or more files.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Report {
    /// The problems, in the order found.
    pub problems: Vec<Problem>,
}

impl Report {
    /// True when at least one problem is an error.
    pub fn has_errors(&self) -> bool {
        self.problems.iter().any(|p| p.severity == Severity::Error)
    }

    /// The warnings only.
    pub fn warnings(&self) -> impl Iterator<Item = &Problem> {
        self.problems
            .iter()
            .filter(|p| p.severity == Severity::Warning)
    }

    /// Number of errors.
    pub fn error_count(&self) -> usize {
        self.problems
            .iter()
            .filter(|p| p.severity == Severity::Error)
            .count()
    }

    /// Appends another report's problems.
    pub fn extend(&mut self, other: Report) {
        self.problems.extend(other.problems);
    }
}

impl fmt::Display for Report {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for problem in &self.problems {
            writeln!(f, "{problem}")?;
        }
        Ok(())
    }
}

impl std::error::Error for Report {}
