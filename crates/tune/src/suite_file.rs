//! The tuned suite as a YAML file the user can keep and run.
//!
//! The suite's own text is parsed into the located tree the loader reads
//! (`echobench-yaml-reader`), the tree is edited — its `detectors` list replaced by the tuned
//! entries (each with the suite's parameters and the searched values), and every file path
//! under its scenes (`file`, a recording's `samples` and `labels`) passed through the
//! caller's `rewrite_path`, so the file still finds its scenes from wherever it is written —
//! and the tree is emitted by `saphyr`'s YAML emitter. Comments are not kept; every setting
//! is. The file loads back with the same suite loader (a test checks it).

use crate::TuneError;
use echobench_core::detector::ParamValue;
use echobench_suite::DetectorEntry;
use echobench_yaml_reader::{parse, Limits, Location, Node, Value};
use saphyr::{Mapping, Scalar, ScalarStyle, Yaml, YamlEmitter};
use std::borrow::Cow;

/// The keys under a scene whose string values are file paths.
const PATH_KEYS: [&str; 3] = ["file", "samples", "labels"];

fn node(value: Value) -> Node {
    Node {
        value,
        location: Location { line: 0, column: 0 },
    }
}

fn param_node(value: &ParamValue) -> Node {
    node(match value {
        ParamValue::Real(x) => Value::Float(*x),
        ParamValue::Integer(i) => Value::Int(*i),
        ParamValue::Text(s) => Value::Str(s.clone()),
        ParamValue::Flag(b) => Value::Bool(*b),
    })
}

fn entry_node(entry: &DetectorEntry) -> Node {
    let at = Location { line: 0, column: 0 };
    let mut fields = vec![
        (
            "plugin".to_string(),
            node(Value::Str(entry.plugin.clone())),
            at,
        ),
        (
            "label".to_string(),
            node(Value::Str(entry.label.clone())),
            at,
        ),
    ];
    if !entry.params.is_empty() {
        let params = entry
            .params
            .iter()
            .map(|(k, v)| (k.clone(), param_node(v), at))
            .collect();
        fields.push(("params".to_string(), node(Value::Map(params)), at));
    }
    node(Value::Map(fields))
}

/// Rewrites every path string under `node` (a scene entry or anything below it).
fn rewrite_paths(node: &mut Node, rewrite: &dyn Fn(&str) -> String) {
    match &mut node.value {
        Value::Map(fields) => {
            for (key, child, _) in fields.iter_mut() {
                match &mut child.value {
                    Value::Str(s) if PATH_KEYS.contains(&key.as_str()) => *s = rewrite(s),
                    _ => rewrite_paths(child, rewrite),
                }
            }
        }
        Value::Seq(items) => items.iter_mut().for_each(|n| rewrite_paths(n, rewrite)),
        _ => {}
    }
}

fn field_mut<'n>(node: &'n mut Node, key: &str) -> Option<&'n mut Node> {
    match &mut node.value {
        Value::Map(fields) => fields
            .iter_mut()
            .find(|(k, ..)| k == key)
            .map(|(_, n, _)| n),
        _ => None,
    }
}

/// Rewrites the paths of every scene entry: the top-level `scenes` and each product's.
fn rewrite_scene_paths(root: &mut Node, rewrite: &dyn Fn(&str) -> String) {
    if let Some(scenes) = field_mut(root, "scenes") {
        rewrite_paths(scenes, rewrite);
    }
    if let Some(Node {
        value: Value::Seq(products),
        ..
    }) = field_mut(root, "products")
    {
        for product in products {
            if let Some(scenes) = field_mut(product, "scenes") {
                rewrite_paths(scenes, rewrite);
            }
        }
    }
}

fn plain(text: String) -> Yaml<'static> {
    Yaml::Representation(Cow::Owned(text), ScalarStyle::Plain, None)
}

/// The tree as saphyr's value: numbers as plain scalars in Rust's round-trip notation, text
/// as strings (the emitter quotes any that would read as another type).
fn to_yaml(node: &Node) -> Yaml<'static> {
    match &node.value {
        Value::Null => Yaml::Value(Scalar::Null),
        Value::Bool(b) => Yaml::Value(Scalar::Boolean(*b)),
        Value::Int(i) => plain(i.to_string()),
        Value::Float(x) if x.is_nan() => plain(".nan".to_string()),
        Value::Float(x) if x.is_infinite() => {
            plain(if *x > 0.0 { ".inf" } else { "-.inf" }.to_string())
        }
        // `{:?}` of an f64 is the shortest text that reads back to the same bits, with a
        // decimal point or an exponent, so it reads back as a float.
        Value::Float(x) => plain(format!("{x:?}")),
        Value::Str(s) => Yaml::Value(Scalar::String(Cow::Owned(s.clone()))),
        Value::Seq(items) => Yaml::Sequence(items.iter().map(to_yaml).collect()),
        Value::Map(fields) => {
            let mut map = Mapping::new();
            for (k, v, _) in fields {
                map.insert(
                    Yaml::Value(Scalar::String(Cow::Owned(k.clone()))),
                    to_yaml(v),
                );
            }
            Yaml::Mapping(map)
        }
    }
}

/// The suite text `original` (named `name` in messages) with its detectors replaced by
/// `detectors` and its scene paths rewritten, as YAML, after the comment lines of `header`.
///
/// # Errors
/// The original does not parse, or the emitter fails.
pub fn tuned_suite_yaml(
    name: &str,
    original: &str,
    detectors: &[DetectorEntry],
    rewrite_path: &dyn Fn(&str) -> String,
    header: &str,
) -> Result<String, TuneError> {
    let mut root = parse(name, original, &Limits::default())
        .map_err(|report| TuneError::new(format!("{name}: {report}")))?;
    let list = node(Value::Seq(detectors.iter().map(entry_node).collect()));
    match &mut root.value {
        Value::Map(fields) => match fields.iter_mut().find(|(k, ..)| k == "detectors") {
            Some((_, n, _)) => *n = list,
            None => fields.push((
                "detectors".to_string(),
                list,
                Location { line: 0, column: 0 },
            )),
        },
        _ => {
            return Err(TuneError::new(format!(
                "{name}: the suite is not a mapping"
            )))
        }
    }
    rewrite_scene_paths(&mut root, rewrite_path);
    let mut text = String::new();
    for line in header.lines() {
        text.push_str("# ");
        text.push_str(line);
        text.push('\n');
    }
    let mut body = String::new();
    YamlEmitter::new(&mut body)
        .dump(&to_yaml(&root))
        .map_err(|e| TuneError::new(format!("writing the tuned suite: {e}")))?;
    text.push_str(&body);
    text.push('\n');
    Ok(text)
}
