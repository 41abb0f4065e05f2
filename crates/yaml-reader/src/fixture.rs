//! What a bad-input fixture file says its report must hold, and the check of a report
//! against it: one reader of the directive comments for every folder of hostile files
//! (`tests/bad-scenes/`, `tests/bad-suites/`), so the rules cannot drift between them.
//!
//! The directives are comment lines at the top of the file:
//!
//! ```text
//! # expect: a text the report must contain        (one or more)
//! # expect-line: 7                                 (the first error's line)
//! # expect-errors: 2                               (how many errors)
//! # known-gap: why a weaker check is accepted      (said when the test prints the file)
//! ```

use crate::{Report, Severity};

/// The directives of one fixture file.
#[derive(Debug, Default, Clone, PartialEq, Eq)]
pub struct Expectations {
    /// Texts the report must contain (`# expect:`), at least one.
    pub substrings: Vec<String>,
    /// The line of the first error (`# expect-line:`).
    pub first_error_line: Option<usize>,
    /// The number of errors (`# expect-errors:`).
    pub error_count: Option<usize>,
    /// Why a known weakness of the report is accepted (`# known-gap:`).
    pub known_gap: Vec<String>,
}

impl Expectations {
    /// Reads the directives from the comment lines at the top of `text`.
    ///
    /// # Errors
    /// An empty `# expect:`, a count that is not a whole number, or no `# expect:` at all.
    ///
    /// ```
    /// use echobench_yaml_reader::fixture::Expectations;
    /// let e = Expectations::read("# expect: unknown field\n# expect-line: 3\nname: x\n").unwrap();
    /// assert_eq!((e.substrings.len(), e.first_error_line), (1, Some(3)));
    /// assert!(Expectations::read("name: x\n").is_err());
    /// ```
    pub fn read(text: &str) -> Result<Expectations, String> {
        let mut found = Expectations::default();
        for line in text.lines().take_while(|l| l.trim_start().starts_with('#')) {
            let comment = line.trim_start().trim_start_matches('#').trim_start();
            let count = |value: &str, name: &str| {
                value
                    .trim()
                    .parse::<usize>()
                    .map_err(|e| format!("`# {name}: {value}` is not a whole number: {e}"))
            };
            if let Some(value) = comment.strip_prefix("expect:") {
                let value = value.trim();
                if value.is_empty() {
                    return Err("an empty `# expect:` line".into());
                }
                found.substrings.push(value.to_string());
            } else if let Some(value) = comment.strip_prefix("expect-line:") {
                found.first_error_line = Some(count(value, "expect-line")?);
            } else if let Some(value) = comment.strip_prefix("expect-errors:") {
                found.error_count = Some(count(value, "expect-errors")?);
            } else if let Some(value) = comment.strip_prefix("known-gap:") {
                found.known_gap.push(value.trim().to_string());
            }
        }
        if found.substrings.is_empty() {
            return Err("no `# expect:` line at the top of the file".into());
        }
        Ok(found)
    }

    /// Every way `report` (for the file `name`) falls short: no error, the file not named,
    /// an expected text missing, an error without a location or with one not counted from 1,
    /// the first error on another line, another number of errors.
    pub fn shortcomings(&self, name: &str, report: &Report) -> Vec<String> {
        let text = report.to_string();
        let mut wrong = Vec::new();
        if !report.has_errors() {
            wrong.push("the report holds no error".to_string());
        }
        if !text.contains(name) {
            wrong.push(format!("the report does not name the file `{name}`"));
        }
        for substring in &self.substrings {
            if !text.contains(substring.as_str()) {
                wrong.push(format!("the report lacks `{substring}`"));
            }
        }
        let errors = || {
            report
                .problems
                .iter()
                .filter(|p| p.severity == Severity::Error)
        };
        for problem in errors() {
            match problem.location {
                None => wrong.push(format!("an error carries no line and column: {problem}")),
                Some(at) if at.line == 0 || at.column == 0 => wrong.push(format!(
                    "an error has a location not counted from 1: {problem}"
                )),
                Some(_) => {}
            }
        }
        if let Some(line) = self.first_error_line {
            match errors().next().and_then(|p| p.location) {
                Some(at) if at.line == line => {}
                Some(at) => wrong.push(format!(
                    "the first error is on line {}, expected line {line}",
                    at.line
                )),
                None => wrong.push(format!(
                    "the first error has no location, expected line {line}"
                )),
            }
        }
        if let Some(count) = self.error_count {
            if report.error_count() != count {
                wrong.push(format!(
                    "the report holds {} errors, expected {count}",
                    report.error_count()
                ));
            }
        }
        wrong
    }
}
