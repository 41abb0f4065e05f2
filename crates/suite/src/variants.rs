//! A scene entry's variants. **A sweep edits the scene's YAML tree, not its typed form**: each
//! swept value is written into the parsed scene at the field path (`FieldPath` of
//! `echobench-yaml-reader`) before the scene is read, so any field can be swept and every
//! variant goes through the same strict reading as a hand-written scene; a problem caused by
//! the swept value is moved to the value in the suite.

use crate::load::problem;
use echobench_scene::{load_scene_node, scene_sanity, SceneSpec};
use echobench_yaml_reader::{FieldPath, Location, Node, Problem, Reader, Report, Severity, Value};

/// A problem of a variant, with whether it is about the swept value itself
/// (then already moved to the value in the suite).
type AttributedProblem = (Problem, bool);

/// One variant as read: the scene if it is sound, its problems, the value written.
pub(crate) struct VariantRead {
    pub(crate) scene: Option<SceneSpec>,
    pub(crate) problems: Vec<AttributedProblem>,
    pub(crate) written: Option<WrittenValue>,
}

/// A swept value as written in the suite.
pub(crate) struct WrittenValue {
    pub(crate) text: String,
    pub(crate) number: Option<f64>,
}

/// Reads the variants of an entry: the tree as is, or one per sweep value written into it.
pub(crate) fn read_variants(
    tree: &Node,
    sweep: Option<&SweepRead<'_>>,
    context: &VariantContext<'_>,
    report: &mut Report,
) -> Option<Vec<VariantRead>> {
    let Some(sweep) = sweep else {
        let (scene, problems) = context.read_variant(tree, None);
        return Some(vec![VariantRead {
            scene,
            problems,
            written: None,
        }]);
    };
    if let Err(miss) = tree.at(&sweep.steps, "the scene") {
        let message = format!(
            "the field to sweep is not in the scene `{}`: {}{}",
            context.scene_file,
            miss.message,
            if miss.field_missing {
                "; a sweep only replaces a value the scene writes"
            } else {
                ""
            }
        );
        report.problems.push(problem(
            Severity::Error,
            context.suite_file,
            sweep.field_location,
            format!("{}.sweep.field", context.entry_path),
            message,
            miss.hint,
        ));
        return None;
    }
    let mut variants = Vec::with_capacity(sweep.values.len());
    for (point, value) in sweep.values.iter().enumerate() {
        let mut variant = tree.clone();
        let target = variant.at_mut(&sweep.steps)?;
        let mut new_value = (*value).clone();
        if !context.inline {
            // Located at the field it replaces, so that the scene file's locations
            // stay true; problems of the value itself are moved to the suite.
            relocate(&mut new_value, target.location);
        }
        *target = new_value;
        let text = render_value(value);
        let applied = AppliedSweep {
            field: &sweep.field,
            value_text: &text,
            value_location: value.location,
            value_path: format!("{}.sweep.values[{point}]", context.entry_path),
        };
        let (scene, problems) = context.read_variant(&variant, Some(&applied));
        variants.push(VariantRead {
            scene,
            problems,
            written: Some(WrittenValue {
                text,
                number: number_of(value),
            }),
        });
    }
    Some(variants)
}

/// Moves the variants' problems into `report`: one found in every variant once
/// as it is, the others prefixed with their variant's swept value.
pub(crate) fn report_variant_problems(
    variants: &[VariantRead],
    sweep_field: Option<&str>,
    report: &mut Report,
) {
    let mut reported: Vec<Problem> = Vec::new();
    for variant in variants {
        for (p, of_the_value) in &variant.problems {
            let common = variants.len() > 1
                && !of_the_value
                && variants
                    .iter()
                    .all(|other| other.problems.iter().any(|(o, _)| o == p));
            if common {
                if !reported.contains(p) {
                    reported.push(p.clone());
                }
                continue;
            }
            let mut p = p.clone();
            if let (Some(field), Some(written), false) =
                (sweep_field, &variant.written, *of_the_value)
            {
                p.message = format!("with `{field}` = {}: {}", written.text, p.message);
            }
            reported.push(p);
        }
    }
    report.problems.extend(reported);
}

/// An entry's sweep, as written.
pub(crate) struct SweepRead<'n> {
    pub(crate) field: String,
    pub(crate) field_location: Location,
    pub(crate) steps: FieldPath,
    pub(crate) values: Vec<&'n Node>,
}

pub(crate) fn read_sweep<'n>(
    node: &'n Node,
    path: &str,
    reader: &mut Reader,
) -> Option<SweepRead<'n>> {
    let mut f = reader.fields(node, path)?;
    let field: Option<String> = f.required("field");
    let field_location = f.raw("field").map_or(node.location, |n| n.location);
    let values_node = f.raw("values");
    let values_path = f.path_of("values");
    let steps = match &field {
        Some(field) => match FieldPath::parse(field) {
            Ok(steps) => Some(steps),
            Err(message) => {
                f.error_at("field", message);
                None
            }
        },
        None => None,
    };
    let mut values = Vec::new();
    let mut values_ok = true;
    match values_node {
        None => {
            f.error_at("values", "missing required field");
            values_ok = false;
        }
        Some(list) => match &list.value {
            Value::Seq(items) if items.is_empty() => {
                f.error_at(
                    "values",
                    "a sweep needs at least one value (each value is one scene variant)",
                );
                values_ok = false;
            }
            Value::Seq(items) => {
                for (i, item) in items.iter().enumerate() {
                    let item_path = format!("{values_path}[{i}]");
                    let refusal = sweep_value_refusal(item);
                    if let Some(message) = refusal {
                        f.reader().error(item.location, &item_path, message);
                        values_ok = false;
                        continue;
                    }
                    if let Some(j) = values[..]
                        .iter()
                        .position(|v: &&Node| v.value == item.value)
                    {
                        let message = format!(
                            "the same value as `values[{j}]`: two variants of one scene point"
                        );
                        f.reader().warn(item.location, &item_path, message);
                    }
                    values.push(item);
                }
            }
            _ => {
                f.error_at(
                    "values",
                    format!("expected a list of values, found {}", list.kind_name()),
                );
                values_ok = false;
            }
        },
    }
    f.finish();
    if !values_ok {
        return None;
    }
    Some(SweepRead {
        field: field?,
        field_location,
        steps: steps?,
        values,
    })
}

/// Why `value` cannot be written into a scene as a swept value, if it cannot.
fn sweep_value_refusal(value: &Node) -> Option<String> {
    const EXPECTED: &str = "expected a number, a name or a distribution";
    match &value.value {
        Value::Int(_) | Value::Str(_) | Value::Bool(_) | Value::Map(_) => None,
        Value::Float(x) if x.is_finite() => None,
        Value::Float(x) => Some(format!("must be a finite number, found {x}")),
        Value::Null => Some(format!("{EXPECTED}, found nothing (null)")),
        Value::Seq(_) => Some(format!(
            "{EXPECTED}, found a list (sweep one element, e.g. `start_m[0]`)"
        )),
    }
}

/// What a variant's problems are rewritten with.
pub(crate) struct VariantContext<'a> {
    pub(crate) suite_file: &'a str,
    pub(crate) scene_file: &'a str,
    pub(crate) entry_path: &'a str,
    pub(crate) inline: bool,
}

/// The sweep value written into one variant.
struct AppliedSweep<'a> {
    field: &'a str,
    value_text: &'a str,
    value_location: Location,
    value_path: String,
}

impl VariantContext<'_> {
    /// Reads one variant's tree as a scene and checks it; its problems, located and
    /// attributed, each with whether it is about the swept value (then moved to the suite).
    fn read_variant(
        &self,
        tree: &Node,
        sweep: Option<&AppliedSweep<'_>>,
    ) -> (Option<SceneSpec>, Vec<AttributedProblem>) {
        let (scene, problems) = match load_scene_node(self.scene_file, tree) {
            Ok((scene, warnings)) => {
                let mut problems = warnings;
                let sanity = scene_sanity(&scene, self.scene_file);
                let failed = sanity.has_errors();
                problems.extend(sanity);
                (if failed { None } else { Some(scene) }, problems.problems)
            }
            Err(report) => (None, report.problems),
        };
        let mut attributed = Vec::with_capacity(problems.len());
        for mut p in problems {
            if p.location.is_none() {
                p.location = Some(tree.deepest_location(&p.field));
            }
            if let Some(sweep) = sweep.filter(|s| field_is_within(&p.field, s.field)) {
                p.message = format!(
                    "{} (the swept value {} written at `{}`)",
                    p.message, sweep.value_text, sweep.field
                );
                p.file = self.suite_file.to_string();
                p.location = Some(sweep.value_location);
                p.field = sweep.value_path.clone();
                attributed.push((p, true));
                continue;
            }
            if self.inline {
                p.field = if p.field.is_empty() {
                    format!("{}.scene", self.entry_path)
                } else {
                    format!("{}.scene.{}", self.entry_path, p.field)
                };
            }
            attributed.push((p, false));
        }
        (scene, attributed)
    }
}

/// True when `field` is `prefix` or a field inside it.
fn field_is_within(field: &str, prefix: &str) -> bool {
    match field.strip_prefix(prefix) {
        Some(rest) => rest.is_empty() || rest.starts_with('.') || rest.starts_with('['),
        None => false,
    }
}

/// The swept value as written, for tables and messages.
fn render_value(node: &Node) -> String {
    match &node.value {
        Value::Null => "null".into(),
        Value::Bool(b) => b.to_string(),
        Value::Int(i) => i.to_string(),
        Value::Float(x) => x.to_string(),
        Value::Str(s) => s.clone(),
        Value::Seq(items) => {
            let items: Vec<String> = items.iter().map(render_value).collect();
            format!("[{}]", items.join(", "))
        }
        Value::Map(entries) => {
            let entries: Vec<String> = entries
                .iter()
                .map(|(key, value, _)| format!("{key}: {}", render_value(value)))
                .collect();
            format!("{{{}}}", entries.join(", "))
        }
    }
}

fn number_of(node: &Node) -> Option<f64> {
    match node.value {
        Value::Int(i) => Some(i as f64),
        Value::Float(x) => Some(x),
        _ => None,
    }
}

fn relocate(node: &mut Node, location: Location) {
    node.location = location;
    match &mut node.value {
        Value::Seq(items) => items.iter_mut().for_each(|item| relocate(item, location)),
        Value::Map(entries) => {
            for (_, value, key_location) in entries.iter_mut() {
                *key_location = location;
                relocate(value, location);
            }
        }
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn field_containment_respects_segment_boundaries() {
        assert!(field_is_within("actors[0].path", "actors[0].path"));
        assert!(field_is_within(
            "actors[0].path.speed_mps",
            "actors[0].path"
        ));
        assert!(field_is_within(
            "actors[0].path.start_m[0]",
            "actors[0].path.start_m"
        ));
        assert!(!field_is_within("actors[0].pathway", "actors[0].path"));
        assert!(!field_is_within("actors[10]", "actors[1]"));
    }
}
