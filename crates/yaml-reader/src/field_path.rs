//! Field paths into a located tree: `actors[0].path.start_m[1]`.
//!
//! A suite's sweep names the field of a scene it replaces by such a path, and problems
//! found after the replacement are placed at the deepest node of the path that exists. The
//! path language is the tree's own (mapping keys and list indices), so it lives beside the
//! tree rather than in the suite reader.

use crate::reader::suggest;
use crate::{Location, Node, Value};
use std::fmt;

/// One step of a field path: a mapping key or a list index.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Step {
    /// A field of a mapping.
    Key(String),
    /// An entry of a list, from 0.
    Index(usize),
}

/// A parsed field path (at least one step, the first a key).
///
/// ```
/// use echobench_yaml_reader::{parse, FieldPath, Limits};
/// let path = FieldPath::parse("actors[0].speed_mps").unwrap();
/// assert_eq!(path.to_string(), "actors[0].speed_mps");
/// let tree = parse("t.yaml", "actors:\n  - speed_mps: 1.2\n", &Limits::default()).unwrap();
/// assert_eq!(tree.at(&path, "the file").unwrap().location.line, 2);
/// assert!(FieldPath::parse("actors[x]").is_err());
/// ```
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FieldPath {
    steps: Vec<Step>,
}

/// Why a field path does not lead to a node.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PathMiss {
    /// What is missing, naming the deepest part of the path that exists.
    pub message: String,
    /// The nearest existing field, or the fields there, when a key is missing.
    pub hint: Option<String>,
    /// True when a mapping lacks the key (as opposed to an index out of range or a value of
    /// another kind): the path names a field the file does not write.
    pub field_missing: bool,
}

impl FieldPath {
    /// Parses `actors[0].path.start_m[0]`.
    ///
    /// # Errors
    /// What is wrong with the text, quoting it.
    pub fn parse(text: &str) -> Result<FieldPath, String> {
        let bad = |why: &str| {
            format!("`{text}` is not a field path like `actors[0].path.start_m[0]`: {why}")
        };
        if text.is_empty() {
            return Err(bad("it is empty"));
        }
        let mut steps = Vec::new();
        for segment in text.split('.') {
            let (name, mut rest) = match segment.find('[') {
                Some(i) => (&segment[..i], &segment[i..]),
                None => (segment, ""),
            };
            if name.is_empty() {
                return Err(bad("a field name is missing"));
            }
            if !name
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
            {
                return Err(bad(&format!("`{name}` is not a field name")));
            }
            steps.push(Step::Key(name.to_string()));
            while !rest.is_empty() {
                let Some(inner) = rest.strip_prefix('[') else {
                    return Err(bad(&format!("unexpected `{rest}` after an index")));
                };
                let Some(close) = inner.find(']') else {
                    return Err(bad("a `[` is not closed"));
                };
                let index: usize = inner[..close]
                    .parse()
                    .map_err(|_| bad(&format!("`[{}]` is not a list index", &inner[..close])))?;
                steps.push(Step::Index(index));
                rest = &inner[close + 1..];
            }
        }
        Ok(FieldPath { steps })
    }

    /// The steps, root first.
    pub fn steps(&self) -> &[Step] {
        &self.steps
    }
}

/// Writes steps back as a path (`a.b[0].c`).
fn render(steps: &[Step]) -> String {
    let mut out = String::new();
    for step in steps {
        match step {
            Step::Key(key) if out.is_empty() => out.push_str(key),
            Step::Key(key) => {
                out.push('.');
                out.push_str(key);
            }
            Step::Index(i) => out.push_str(&format!("[{i}]")),
        }
    }
    out
}

impl fmt::Display for FieldPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&render(&self.steps))
    }
}

impl Node {
    /// The node `path` leads to; `root_name` names this node in messages ("the scene").
    ///
    /// # Errors
    /// Where the path leaves the tree, with the nearest field name when a key is missing.
    pub fn at(&self, path: &FieldPath, root_name: &str) -> Result<&Node, PathMiss> {
        let steps = &path.steps;
        let mut node = self;
        for (depth, step) in steps.iter().enumerate() {
            let here = render(&steps[..depth]);
            let here_named = if here.is_empty() {
                root_name.to_string()
            } else {
                format!("`{here}`")
            };
            let miss = |message: String| PathMiss {
                message,
                hint: None,
                field_missing: false,
            };
            node = match (step, &node.value) {
                (Step::Key(key), Value::Map(entries)) => {
                    match entries.iter().find(|(k, _, _)| k == key) {
                        Some((_, value, _)) => value,
                        None => {
                            let keys: Vec<&str> =
                                entries.iter().map(|(k, _, _)| k.as_str()).collect();
                            let full = render(&steps[..=depth]);
                            let hint = match suggest(key, &keys) {
                                Some(near) => {
                                    let mut fixed = steps[..=depth].to_vec();
                                    fixed[depth] = Step::Key(near.to_string());
                                    Some(format!("did you mean `{}`?", render(&fixed)))
                                }
                                None if keys.is_empty() => None,
                                None => Some(format!("fields there: {}", keys.join(", "))),
                            };
                            return Err(PathMiss {
                                message: format!(
                                    "{here_named} has no field `{key}`, so `{full}` does not exist"
                                ),
                                hint,
                                field_missing: true,
                            });
                        }
                    }
                }
                (Step::Index(i), Value::Seq(items)) => match items.get(*i) {
                    Some(item) => item,
                    None => {
                        return Err(miss(format!(
                            "{here_named} has {} {} (indices count from 0), so there is no `[{i}]`",
                            items.len(),
                            if items.len() == 1 { "entry" } else { "entries" }
                        )))
                    }
                },
                (Step::Key(key), _) => {
                    return Err(miss(format!(
                        "{here_named} is {}, not a mapping with a field `{key}`",
                        node.kind_name()
                    )))
                }
                (Step::Index(i), _) => {
                    return Err(miss(format!(
                        "{here_named} is {}, not a list with an entry `[{i}]`",
                        node.kind_name()
                    )))
                }
            };
        }
        Ok(node)
    }

    /// The node `path` leads to, for replacing it; `None` where the path leaves the tree.
    pub fn at_mut(&mut self, path: &FieldPath) -> Option<&mut Node> {
        let mut node = self;
        for step in &path.steps {
            node = match (step, &mut node.value) {
                (Step::Key(key), Value::Map(entries)) => {
                    let position = entries.iter().position(|(k, _, _)| k == key)?;
                    &mut entries[position].1
                }
                (Step::Index(i), Value::Seq(items)) => items.get_mut(*i)?,
                _ => return None,
            };
        }
        Some(node)
    }

    /// The location of the deepest node on `field`'s path that exists (this node's when none,
    /// or when `field` is not a path).
    pub fn deepest_location(&self, field: &str) -> Location {
        let Ok(path) = FieldPath::parse(field) else {
            return self.location;
        };
        let mut node = self;
        for step in &path.steps {
            let next = match (step, &node.value) {
                (Step::Key(key), Value::Map(entries)) => {
                    entries.iter().find(|(k, _, _)| k == key).map(|(_, v, _)| v)
                }
                (Step::Index(i), Value::Seq(items)) => items.get(*i),
                _ => None,
            };
            match next {
                Some(next) => node = next,
                None => break,
            }
        }
        node.location
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{parse, Limits};

    #[test]
    fn field_paths_parse_and_render_back() {
        let path = FieldPath::parse("actors[0].path.start_m[1]").unwrap();
        assert_eq!(
            path.steps(),
            [
                Step::Key("actors".into()),
                Step::Index(0),
                Step::Key("path".into()),
                Step::Key("start_m".into()),
                Step::Index(1),
            ]
        );
        assert_eq!(path.to_string(), "actors[0].path.start_m[1]");
        for bad in ["", "a..b", "a[", "a[x]", "a[0]b", "[0]", "a b"] {
            assert!(FieldPath::parse(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn misses_name_the_deepest_existing_part_and_the_nearest_field() {
        let tree = parse(
            "t.yaml",
            "actors:\n  - path: {start_m: [1, 2]}\n",
            &Limits::default(),
        )
        .unwrap();
        let at = |text: &str| tree.at(&FieldPath::parse(text).unwrap(), "the scene");
        assert_eq!(at("actors[0].path.start_m[1]").unwrap().location.line, 2);
        let typo = at("actors[0].pth").unwrap_err();
        assert!(typo.field_missing);
        assert_eq!(typo.hint.as_deref(), Some("did you mean `actors[0].path`?"));
        let far = at("actors[3]").unwrap_err();
        assert!(
            !far.field_missing && far.message.contains("has 1 entry"),
            "{far:?}"
        );
        assert!(at("actors[0].path.start_m.x").is_err());
        assert_eq!(tree.deepest_location("actors[0].nothing").line, 2);
    }
}
