//! Typed extraction from the located tree, collecting every problem.

use crate::{Location, Node, Problem, Report, Severity, Value};

/// Collects problems while typed values are read out of a tree.
///
/// Reading never stops at the first problem: a bad field yields `None`, the
/// problem is recorded, and the caller carries on with the next field. At the
/// end, [`Reader::finish`] hands over every problem found.
#[derive(Debug)]
pub struct Reader {
    file: String,
    report: Report,
}

impl Reader {
    /// A reader for the file named `file` (used in every message).
    pub fn new(file: impl Into<String>) -> Self {
        Reader {
            file: file.into(),
            report: Report::default(),
        }
    }

    /// The file name.
    pub fn file(&self) -> &str {
        &self.file
    }

    /// Records an error at `location` for the field at `path`.
    pub fn error(&mut self, location: Location, path: &str, message: impl Into<String>) {
        self.push(Severity::Error, Some(location), path, message.into(), None);
    }

    /// Records an error with a hint.
    pub fn error_with_hint(
        &mut self,
        location: Location,
        path: &str,
        message: impl Into<String>,
        hint: impl Into<String>,
    ) {
        self.push(
            Severity::Error,
            Some(location),
            path,
            message.into(),
            Some(hint.into()),
        );
    }

    /// Records a warning: legal but suspicious.
    pub fn warn(&mut self, location: Location, path: &str, message: impl Into<String>) {
        self.push(
            Severity::Warning,
            Some(location),
            path,
            message.into(),
            None,
        );
    }

    fn push(
        &mut self,
        severity: Severity,
        location: Option<Location>,
        path: &str,
        message: String,
        hint: Option<String>,
    ) {
        self.report.problems.push(Problem {
            severity,
            file: self.file.clone(),
            location,
            field: path.to_string(),
            message,
            hint,
        });
    }

    /// True when an error has been recorded so far.
    pub fn has_errors(&self) -> bool {
        self.report.has_errors()
    }

    /// Every problem found.
    pub fn finish(self) -> Report {
        self.report
    }

    /// Starts reading `node` as a mapping whose fields are at `path`.
    /// Records an error and returns `None` when it is not a mapping.
    pub fn fields<'r, 'n>(&'r mut self, node: &'n Node, path: &str) -> Option<Fields<'r, 'n>> {
        match &node.value {
            Value::Map(entries) => Some(Fields {
                entries: entries
                    .iter()
                    .map(|(k, v, at)| (k.as_str(), v, *at, false))
                    .collect(),
                reader: self,
                node,
                path: path.to_string(),
                known: Vec::new(),
            }),
            _ => {
                self.error(
                    node.location,
                    path,
                    format!("expected a mapping of fields, found {}", node.kind_name()),
                );
                None
            }
        }
    }

    /// Reads `node` as a `T` at `path`.
    pub fn read<T: FromNode>(&mut self, node: &Node, path: &str) -> Option<T> {
        T::from_node(node, path, self)
    }
}

/// The fields of one mapping, read one by one; unknown keys are reported by [`Fields::finish`].
#[derive(Debug)]
pub struct Fields<'r, 'n> {
    reader: &'r mut Reader,
    node: &'n Node,
    path: String,
    entries: Vec<(&'n str, &'n Node, Location, bool)>,
    known: Vec<&'static str>,
}

impl<'r, 'n> Fields<'r, 'n> {
    /// The reader, to record problems or read nested values.
    pub fn reader(&mut self) -> &mut Reader {
        self.reader
    }

    /// The mapping node itself.
    pub fn node(&self) -> &'n Node {
        self.node
    }

    /// Path of the mapping.
    pub fn path(&self) -> &str {
        &self.path
    }

    /// Path of one of its fields.
    pub fn path_of(&self, key: &str) -> String {
        if self.path.is_empty() {
            key.to_string()
        } else {
            format!("{}.{}", self.path, key)
        }
    }

    /// The raw node of `key`, if present; marks the key as known.
    pub fn raw(&mut self, key: &'static str) -> Option<&'n Node> {
        self.known.push(key);
        let entry = self.entries.iter_mut().find(|(k, _, _, _)| *k == key)?;
        entry.3 = true;
        Some(entry.1)
    }

    /// True when `key` is present (marks it as known).
    pub fn has(&mut self, key: &'static str) -> bool {
        self.raw(key).is_some()
    }

    /// Reads a required field; records "missing field" when absent.
    pub fn required<T: FromNode>(&mut self, key: &'static str) -> Option<T> {
        match self.raw(key) {
            Some(node) => {
                let path = self.path_of(key);
                T::from_node(node, &path, self.reader)
            }
            None => {
                let path = self.path_of(key);
                self.reader
                    .error(self.node.location, &path, "missing required field");
                None
            }
        }
    }

    /// Reads an optional field: `None` when absent (or written as null), or when it is bad
    /// (then a problem is recorded; check [`Reader::has_errors`] before using the result).
    pub fn optional<T: FromNode>(&mut self, key: &'static str) -> Option<T> {
        let node = self.raw(key)?;
        if node.value == Value::Null {
            return None;
        }
        let path = self.path_of(key);
        T::from_node(node, &path, self.reader)
    }

    /// Reads an optional field with a default.
    pub fn optional_or<T: FromNode>(&mut self, key: &'static str, default: T) -> T {
        self.optional(key).unwrap_or(default)
    }

    /// Reads a required string field that must be one of `options`.
    pub fn required_choice(
        &mut self,
        key: &'static str,
        options: &[&'static str],
    ) -> Option<&'static str> {
        let text: String = self.required(key)?;
        self.check_choice(key, &text, options)
    }

    /// Reads an optional string field that must be one of `options`; `default` when absent.
    pub fn choice_or(
        &mut self,
        key: &'static str,
        options: &[&'static str],
        default: &'static str,
    ) -> &'static str {
        match self.optional::<String>(key) {
            Some(text) => self.check_choice(key, &text, options).unwrap_or(default),
            None => default,
        }
    }

    fn check_choice(
        &mut self,
        key: &'static str,
        text: &str,
        options: &[&'static str],
    ) -> Option<&'static str> {
        if let Some(found) = options.iter().find(|o| **o == text) {
            return Some(found);
        }
        let path = self.path_of(key);
        let location = self.raw(key).map_or(self.node.location, |n| n.location);
        let message = format!("`{text}` is not one of: {}", options.join(", "));
        match suggest(text, options) {
            Some(near) => self.reader.error_with_hint(
                location,
                &path,
                message,
                format!("did you mean `{near}`?"),
            ),
            None => self.reader.error(location, &path, message),
        }
        None
    }

    /// Records an error about field `key` (at its value, or at the mapping when absent).
    pub fn error_at(&mut self, key: &'static str, message: impl Into<String>) {
        let location = self
            .entries
            .iter()
            .find(|(k, _, _, _)| *k == key)
            .map_or(self.node.location, |e| e.1.location);
        let path = self.path_of(key);
        self.reader.error(location, &path, message);
    }

    /// Records a warning about field `key`.
    pub fn warn_at(&mut self, key: &'static str, message: impl Into<String>) {
        let location = self
            .entries
            .iter()
            .find(|(k, _, _, _)| *k == key)
            .map_or(self.node.location, |e| e.1.location);
        let path = self.path_of(key);
        self.reader.warn(location, &path, message);
    }

    /// Reports every key that no read asked for, suggesting the nearest known name.
    pub fn finish(self) {
        let known = self.known;
        for (key, _, location, used) in &self.entries {
            if *used {
                continue;
            }
            let path = if self.path.is_empty() {
                key.to_string()
            } else {
                format!("{}.{}", self.path, key)
            };
            let message = "unknown field";
            match suggest(key, &known) {
                Some(near) => self.reader.error_with_hint(
                    *location,
                    &path,
                    message,
                    format!("did you mean `{near}`?"),
                ),
                None if known.is_empty() => self.reader.error(*location, &path, message),
                None => {
                    let mut names = known.clone();
                    names.sort_unstable();
                    names.dedup();
                    self.reader.error_with_hint(
                        *location,
                        &path,
                        message,
                        format!("known fields here: {}", names.join(", ")),
                    )
                }
            }
        }
    }
}

/// The nearest of `options` to `word`, if near enough to be a slip: the one rule every
/// crate suggests by (`echobench_core::suggest::nearest`).
pub use echobench_core::suggest::nearest as suggest;

/// A value that can be read from a node, recording problems on the way.
pub trait FromNode: Sized {
    /// Reads `node` (at `path`) or records why not and returns `None`.
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self>;
}

impl FromNode for f64 {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        let value = match node.value {
            Value::Int(i) => i as f64,
            Value::Float(x) => x,
            _ => {
                reader.error(
                    node.location,
                    path,
                    format!("expected a number, found {}", node.kind_name()),
                );
                return None;
            }
        };
        if !value.is_finite() {
            reader.error(
                node.location,
                path,
                format!("must be a finite number, found {value}"),
            );
            return None;
        }
        Some(value)
    }
}

macro_rules! integer_from_node {
    ($($t:ty),*) => {$(
        impl FromNode for $t {
            fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
                match node.value {
                    Value::Int(i) => match <$t>::try_from(i) {
                        Ok(v) => Some(v),
                        Err(_) => {
                            reader.error(node.location, path, format!(
                                "{i} is out of range (allowed {} to {})", <$t>::MIN, <$t>::MAX));
                            None
                        }
                    },
                    _ => {
                        reader.error(node.location, path, format!("expected a whole number, found {}", node.kind_name()));
                        None
                    }
                }
            }
        }
    )*};
}

integer_from_node!(u8, u32, u64, usize, i64);

impl FromNode for bool {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        match node.value {
            Value::Bool(b) => Some(b),
            _ => {
                reader.error(
                    node.location,
                    path,
                    format!("expected true or false, found {}", node.kind_name()),
                );
                None
            }
        }
    }
}

impl FromNode for String {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        match &node.value {
            Value::Str(s) => Some(s.clone()),
            _ => {
                reader.error(
                    node.location,
                    path,
                    format!("expected a string, found {}", node.kind_name()),
                );
                None
            }
        }
    }
}

impl<T: FromNode> FromNode for Vec<T> {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        match &node.value {
            Value::Seq(items) => {
                let mut out = Vec::with_capacity(items.len());
                let mut ok = true;
                for (i, item) in items.iter().enumerate() {
                    match T::from_node(item, &format!("{path}[{i}]"), reader) {
                        Some(v) => out.push(v),
                        None => ok = false,
                    }
                }
                ok.then_some(out)
            }
            _ => {
                reader.error(
                    node.location,
                    path,
                    format!("expected a list, found {}", node.kind_name()),
                );
                None
            }
        }
    }
}

impl<T: FromNode + Copy + Default, const N: usize> FromNode for [T; N] {
    fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
        let items: Vec<T> = Vec::from_node(node, path, reader)?;
        if items.len() != N {
            reader.error(
                node.location,
                path,
                format!("expected a list of {N} values, found {}", items.len()),
            );
            return None;
        }
        let mut out = [T::default(); N];
        out.copy_from_slice(&items);
        Some(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{parse, Limits};

    #[derive(Debug)]
    struct Sensor {
        carrier_hz: f64,
        adc_bits: u8,
        output: &'static str,
        position_m: [f64; 3],
    }

    impl FromNode for Sensor {
        fn from_node(node: &Node, path: &str, reader: &mut Reader) -> Option<Self> {
            let mut f = reader.fields(node, path)?;
            let carrier_hz = f.required("carrier_hz");
            let adc_bits = f.optional_or("adc_bits", 12);
            let output = f.choice_or("output", &["real", "iq"], "real");
            let position_m = f.optional_or("position_m", [0.0; 3]);
            f.finish();
            Some(Sensor {
                carrier_hz: carrier_hz?,
                adc_bits,
                output,
                position_m,
            })
        }
    }

    fn read(text: &str) -> (Option<Sensor>, Report) {
        let root = parse("s.yaml", text, &Limits::default()).unwrap();
        let mut reader = Reader::new("s.yaml");
        let sensor = reader.read::<Sensor>(&root, "sensor");
        (sensor, reader.finish())
    }

    #[test]
    fn good_mapping_reads() {
        let (sensor, report) = read("carrier_hz: 2.45e9\noutput: iq\nposition_m: [0, 1, 2.5]\n");
        assert!(!report.has_errors(), "{report}");
        let sensor = sensor.unwrap();
        assert_eq!(sensor.carrier_hz, 2.45e9);
        assert_eq!(sensor.adc_bits, 12);
        assert_eq!(sensor.output, "iq");
        assert_eq!(sensor.position_m, [0.0, 1.0, 2.5]);
    }

    #[test]
    fn all_problems_are_reported_at_once_with_locations() {
        let (_, report) =
            read("carier_hz: 2.45e9\nadc_bits: 300\noutput: IQ\nposition_m: [0, 1]\n");
        let text = report.to_string();
        assert_eq!(report.error_count(), 5, "{text}");
        assert!(
            text.contains(
                "s.yaml:1:1: error: `sensor.carier_hz`: unknown field (did you mean `carrier_hz`?)"
            ),
            "{text}"
        );
        assert!(
            text.contains("`sensor.carrier_hz`: missing required field"),
            "{text}"
        );
        assert!(
            text.contains("s.yaml:2:11: error: `sensor.adc_bits`: 300 is out of range"),
            "{text}"
        );
        assert!(
            text.contains("`sensor.output`: `IQ` is not one of: real, iq (did you mean `iq`?)"),
            "{text}"
        );
        assert!(text.contains("expected a list of 3 values"), "{text}");
    }

    #[test]
    fn nan_and_wrong_types_are_refused() {
        let (_, report) = read("carrier_hz: .nan\nadc_bits: twelve\n");
        let text = report.to_string();
        assert!(text.contains("must be a finite number"), "{text}");
        assert!(
            text.contains("expected a whole number, found a string"),
            "{text}"
        );
    }
}
