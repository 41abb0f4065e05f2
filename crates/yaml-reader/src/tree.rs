//! The located YAML tree and its bounded builder.

use crate::{Location, Problem, Report, Severity};
use saphyr_parser::{Event, Parser, ScalarStyle, Span};
use std::collections::HashMap;

/// Bounds that protect the reader from hostile or mistaken files.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    /// Largest file accepted, bytes.
    pub max_bytes: usize,
    /// Most nodes in the tree, counting every node an alias expands to.
    pub max_nodes: usize,
    /// Deepest nesting of sequences and mappings.
    pub max_depth: usize,
}

impl Default for Limits {
    /// 4 MiB, 200 000 nodes, depth 64: far above any hand-written scene or suite.
    fn default() -> Self {
        Limits {
            max_bytes: 4 << 20,
            max_nodes: 200_000,
            max_depth: 64,
        }
    }
}

/// A value with the place it was written.
#[derive(Debug, Clone, PartialEq)]
pub struct Node {
    /// The value.
    pub value: Value,
    /// Where it starts in the file.
    pub location: Location,
}

/// A YAML value (core schema).
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// `null`, `~` or nothing.
    Null,
    /// `true` or `false`.
    Bool(bool),
    /// An integer that fits in i64.
    Int(i64),
    /// A float, including `.inf` and `.nan` (the reader refuses non-finite numbers where it matters).
    Float(f64),
    /// A string.
    Str(String),
    /// A sequence.
    Seq(Vec<Node>),
    /// A mapping, in file order; keys are scalars rendered as strings.
    Map(Vec<(String, Node, Location)>),
}

impl Node {
    /// A short name of the value's kind, for messages ("a number", "a mapping").
    pub fn kind_name(&self) -> &'static str {
        match self.value {
            Value::Null => "nothing (null)",
            Value::Bool(_) => "a boolean",
            Value::Int(_) | Value::Float(_) => "a number",
            Value::Str(_) => "a string",
            Value::Seq(_) => "a list",
            Value::Map(_) => "a mapping",
        }
    }

    /// The entry of a mapping by key, if this is a mapping that has it.
    pub fn get(&self, key: &str) -> Option<&Node> {
        match &self.value {
            Value::Map(entries) => entries.iter().find(|(k, _, _)| k == key).map(|(_, v, _)| v),
            _ => None,
        }
    }
}

fn location_of(span: &Span) -> Location {
    Location {
        line: span.start.line(),
        column: span.start.col() + 1,
    }
}

fn problem(file: &str, location: Option<Location>, message: String) -> Report {
    Report {
        problems: vec![Problem {
            severity: Severity::Error,
            file: file.to_string(),
            location,
            field: String::new(),
            message,
            hint: None,
        }],
    }
}

/// Resolves a plain scalar by the YAML 1.2 core schema.
fn resolve_plain(text: &str) -> Value {
    match text {
        "" | "~" | "null" | "Null" | "NULL" => return Value::Null,
        "true" | "True" | "TRUE" => return Value::Bool(true),
        "false" | "False" | "FALSE" => return Value::Bool(false),
        ".inf" | ".Inf" | ".INF" | "+.inf" | "+.Inf" | "+.INF" => {
            return Value::Float(f64::INFINITY)
        }
        "-.inf" | "-.Inf" | "-.INF" => return Value::Float(f64::NEG_INFINITY),
        ".nan" | ".NaN" | ".NAN" => return Value::Float(f64::NAN),
        _ => {}
    }
    if let Some(hex) = text.strip_prefix("0x") {
        if let Ok(v) = i64::from_str_radix(hex, 16) {
            return Value::Int(v);
        }
    }
    if let Some(oct) = text.strip_prefix("0o") {
        if let Ok(v) = i64::from_str_radix(oct, 8) {
            return Value::Int(v);
        }
    }
    let digits = text.strip_prefix(['-', '+']).unwrap_or(text);
    if !digits.is_empty() && digits.bytes().all(|b| b.is_ascii_digit()) {
        if let Ok(v) = text.parse::<i64>() {
            return Value::Int(v);
        }
    }
    // Core-schema float: [-+]? (\. [0-9]+ | [0-9]+ (\. [0-9]*)?) ([eE] [-+]? [0-9]+)?
    let looks_numeric = digits.starts_with(|c: char| c.is_ascii_digit() || c == '.')
        && digits
            .bytes()
            .all(|b| b.is_ascii_digit() || b"eE.+-".contains(&b));
    if looks_numeric {
        if let Ok(v) = text.parse::<f64>() {
            return Value::Float(v);
        }
    }
    Value::Str(text.to_string())
}

enum Frame {
    Seq(Vec<Node>, Location, usize),
    Map(
        Vec<(String, Node, Location)>,
        Option<(String, Location)>,
        Location,
        usize,
    ),
}

/// Parses one YAML document into a located tree.
///
/// `file` names the source in messages. An empty document is `Value::Null`.
///
/// # Errors
/// A report with one error for a syntax error, a second document, a
/// duplicate key, a non-scalar key, an unknown alias, or a breach of `limits`.
///
/// ```
/// use echobench_yaml_reader::{parse, Limits, Value};
/// let root = parse("scene.yaml", "a: 1\nb: [2.5, x]\n", &Limits::default()).unwrap();
/// assert_eq!(root.get("a").unwrap().value, Value::Int(1));
/// assert_eq!(root.get("b").unwrap().location.line, 2);
/// ```
pub fn parse(file: &str, text: &str, limits: &Limits) -> Result<Node, Report> {
    if text.len() > limits.max_bytes {
        return Err(problem(
            file,
            None,
            format!(
                "the file has {} bytes, more than the limit of {}",
                text.len(),
                limits.max_bytes
            ),
        ));
    }
    let mut stack: Vec<Frame> = Vec::new();
    let mut anchors: HashMap<usize, (Node, usize)> = HashMap::new();
    let mut root: Option<Node> = None;
    let mut node_count = 0usize;
    let mut documents = 0usize;

    for item in Parser::new_from_str(text) {
        let (event, span) = match item {
            Ok(pair) => pair,
            Err(e) => {
                let location = Location {
                    line: e.marker().line(),
                    column: e.marker().col() + 1,
                };
                return Err(problem(
                    file,
                    Some(location),
                    format!("YAML syntax error: {}", e.info()),
                ));
            }
        };
        let location = location_of(&span);
        let new_nodes = match &event {
            Event::Scalar(..) | Event::SequenceStart(..) | Event::MappingStart(..) => 1,
            // Each use of an alias counts its whole subtree against the budget,
            // so nested aliases (a "billion laughs") hit the limit early.
            Event::Alias(id) => anchors.get(id).map_or(0, |(_, size)| *size),
            _ => 0,
        };
        node_count += new_nodes;
        if node_count > limits.max_nodes {
            let message = if matches!(event, Event::Alias(_)) {
                format!(
                    "aliases expand to more than {} nodes; the file is refused (an alias bomb?)",
                    limits.max_nodes
                )
            } else {
                format!("the document has more than {} nodes", limits.max_nodes)
            };
            return Err(problem(file, Some(location), message));
        }
        // A finished node, with the anchor it defines (0 = none).
        let finished: Option<(Node, usize)> = match event {
            Event::StreamStart | Event::StreamEnd | Event::Nothing | Event::DocumentEnd => None,
            Event::DocumentStart(_) => {
                documents += 1;
                if documents > 1 {
                    return Err(problem(
                        file,
                        Some(location),
                        "only one YAML document is allowed per file".into(),
                    ));
                }
                None
            }
            Event::Scalar(text, style, anchor, _tag) => {
                let value = match style {
                    ScalarStyle::Plain => resolve_plain(&text),
                    _ => Value::Str(text.into_owned()),
                };
                Some((Node { value, location }, anchor))
            }
            Event::SequenceStart(anchor, _) => {
                if stack.len() >= limits.max_depth {
                    return Err(problem(
                        file,
                        Some(location),
                        format!("nesting deeper than {} levels", limits.max_depth),
                    ));
                }
                stack.push(Frame::Seq(Vec::new(), location, anchor));
                None
            }
            Event::MappingStart(anchor, _) => {
                if stack.len() >= limits.max_depth {
                    return Err(problem(
                        file,
                        Some(location),
                        format!("nesting deeper than {} levels", limits.max_depth),
                    ));
                }
                stack.push(Frame::Map(Vec::new(), None, location, anchor));
                None
            }
            Event::SequenceEnd => match stack.pop() {
                Some(Frame::Seq(items, at, anchor)) => Some((
                    Node {
                        value: Value::Seq(items),
                        location: at,
                    },
                    anchor,
                )),
                _ => {
                    return Err(problem(
                        file,
                        Some(location),
                        "unbalanced sequence end".into(),
                    ))
                }
            },
            Event::MappingEnd => match stack.pop() {
                Some(Frame::Map(entries, _, at, anchor)) => Some((
                    Node {
                        value: Value::Map(entries),
                        location: at,
                    },
                    anchor,
                )),
                _ => {
                    return Err(problem(
                        file,
                        Some(location),
                        "unbalanced mapping end".into(),
                    ))
                }
            },
            Event::Alias(id) => match anchors.get(&id) {
                Some((node, _)) => {
                    let mut copy = node.clone();
                    copy.location = location;
                    Some((copy, 0))
                }
                None => {
                    return Err(problem(
                        file,
                        Some(location),
                        "alias refers to an unknown anchor".into(),
                    ))
                }
            },
        };
        let Some((node, anchor)) = finished else {
            continue;
        };
        if anchor != 0 {
            let subtree = subtree_size(&node);
            anchors.insert(anchor, (node.clone(), subtree));
        }
        match stack.last_mut() {
            None => root = Some(node),
            Some(Frame::Seq(items, _, _)) => items.push(node),
            Some(Frame::Map(entries, pending, _, _)) => match pending.take() {
                None => {
                    let key = match &node.value {
                        Value::Str(s) => s.clone(),
                        Value::Int(i) => i.to_string(),
                        Value::Float(x) => x.to_string(),
                        Value::Bool(b) => b.to_string(),
                        Value::Null => "null".to_string(),
                        Value::Seq(_) | Value::Map(_) => {
                            return Err(problem(
                                file,
                                Some(node.location),
                                "mapping keys must be plain names".into(),
                            ));
                        }
                    };
                    if entries.iter().any(|(k, _, _)| *k == key) {
                        return Err(problem(
                            file,
                            Some(node.location),
                            format!("duplicate key `{key}`"),
                        ));
                    }
                    *pending = Some((key, node.location));
                }
                Some((key, key_location)) => entries.push((key, node, key_location)),
            },
        }
    }
    Ok(root.unwrap_or(Node {
        value: Value::Null,
        location: Location { line: 1, column: 1 },
    }))
}

fn count_nodes_shallow(items: &[Node]) -> usize {
    items.iter().map(subtree_size).sum()
}

fn subtree_size(node: &Node) -> usize {
    match &node.value {
        Value::Seq(items) => 1 + count_nodes_shallow(items),
        Value::Map(entries) => {
            1 + entries
                .iter()
                .map(|(_, v, _)| subtree_size(v))
                .sum::<usize>()
        }
        _ => 1,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn parse_ok(text: &str) -> Node {
        parse("t.yaml", text, &Limits::default()).unwrap()
    }

    fn parse_err(text: &str) -> String {
        parse("t.yaml", text, &Limits::default())
            .unwrap_err()
            .to_string()
    }

    #[test]
    fn core_schema_scalars() {
        let root =
            parse_ok("a: 1\nb: -2.5e3\nc: .inf\nd: true\ne: ~\nf: '12'\ng: hello\nh: 0x1f\n");
        assert_eq!(root.get("a").unwrap().value, Value::Int(1));
        assert_eq!(root.get("b").unwrap().value, Value::Float(-2500.0));
        assert_eq!(root.get("c").unwrap().value, Value::Float(f64::INFINITY));
        assert_eq!(root.get("d").unwrap().value, Value::Bool(true));
        assert_eq!(root.get("e").unwrap().value, Value::Null);
        assert_eq!(root.get("f").unwrap().value, Value::Str("12".into()));
        assert_eq!(root.get("g").unwrap().value, Value::Str("hello".into()));
        assert_eq!(root.get("h").unwrap().value, Value::Int(31));
    }

    #[test]
    fn locations_are_one_based() {
        let root = parse_ok("sensor:\n  carrier_hz: 24.125e9\n");
        let carrier = root.get("sensor").unwrap().get("carrier_hz").unwrap();
        assert_eq!(
            carrier.location,
            Location {
                line: 2,
                column: 15
            }
        );
    }

    #[test]
    fn aliases_are_expanded() {
        let root = parse_ok("base: &b {x: 1}\ncopy: *b\n");
        assert_eq!(
            root.get("copy").unwrap().get("x").unwrap().value,
            Value::Int(1)
        );
    }

    #[test]
    fn alias_bomb_is_refused_quickly() {
        let mut text = String::from("a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
        for i in 1..10 {
            let p = i - 1;
            text.push_str(&format!("a{i}: &a{i} [*a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}]\n"));
        }
        let message = parse_err(&text);
        assert!(message.contains("alias bomb"), "{message}");
    }

    #[test]
    fn syntax_errors_and_duplicates_are_located() {
        let message = parse_err("a: [1, 2\nb: 3\n");
        assert!(message.starts_with("t.yaml:"), "{message}");
        assert!(message.contains("syntax error"), "{message}");
        let message = parse_err("a: 1\na: 2\n");
        assert!(
            message.contains("t.yaml:2:1") && message.contains("duplicate key `a`"),
            "{message}"
        );
    }

    #[test]
    fn size_and_depth_are_bounded() {
        let limits = Limits {
            max_bytes: 10,
            ..Limits::default()
        };
        assert!(parse("t", "a: 123456789012", &limits).is_err());
        let deep = "[".repeat(100) + &"]".repeat(100);
        assert!(parse_err(&deep).contains("nesting"));
    }

    #[test]
    fn second_document_is_refused() {
        assert!(parse_err("a: 1\n---\nb: 2\n").contains("only one YAML document"));
    }
}
