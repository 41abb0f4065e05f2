//! `detectors:`: plugin entries and `registered: all`, each resolved against its plugin's
//! declared parameters once, here (the resolved [`Params`] stay in the [`DetectorEntry`], so
//! the runner never resolves them again); then each configuration tried on each distinct
//! stream of the suite.

use crate::load::error;
use crate::model::{DetectorEntry, SuiteScene};
use crate::sources::SceneSource;
use echobench_core::detector::{DetectorPlugin, ParamValue, Params};
use echobench_core::{Channels, StreamInfo};
use echobench_scene::SceneSpec;
use echobench_yaml_reader::{suggest, Location, Node, Reader, Report, Value};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;
use std::sync::Arc;

/// A detector entry with what the stream checks need.
pub(crate) struct DetectorRead {
    pub(crate) entry: DetectorEntry,
    pub(crate) plugin_index: usize,
    pub(crate) location: Location,
    pub(crate) path: String,
    /// Where each given parameter's value is written.
    pub(crate) param_locations: Vec<(String, Location)>,
}

/// An `external` detector's `command` written as a relative path (with a `/`) names a
/// program beside the suite file, as scene and recording paths do: it is joined to the
/// suite's folder here, before the plugin looks for it. A bare name is left for `PATH`.
pub(crate) fn anchor_external_commands(
    list: Vec<DetectorRead>,
    source: &dyn SceneSource,
    plugins: &[Arc<dyn DetectorPlugin>],
) -> Vec<DetectorRead> {
    list.into_iter()
        .map(|mut read| {
            if read.entry.plugin != "external" {
                return read;
            }
            let mut changed = false;
            for (name, value) in &mut read.entry.params {
                if let ParamValue::Text(command) = value {
                    let relative =
                        command.contains('/') && !Path::new(command.trim()).is_absolute();
                    if name == "command" && relative {
                        if let Some(path) = source.path(command.trim()) {
                            *command = path.display().to_string();
                            changed = true;
                        }
                    }
                }
            }
            let plugin = &plugins[read.plugin_index];
            if changed {
                if let Ok(params) =
                    Params::resolve(plugin.id(), plugin.params(), &read.entry.params)
                {
                    read.entry.resolved = params;
                }
            }
            read
        })
        .collect()
}

pub(crate) fn read_detectors(
    node: &Node,
    suite_file: &str,
    plugins: &[Arc<dyn DetectorPlugin>],
    report: &mut Report,
) -> Option<Vec<DetectorRead>> {
    let mut reader = Reader::new(suite_file);
    let items = match &node.value {
        Value::Seq(items) if !items.is_empty() => items,
        Value::Seq(_) => {
            reader.error(
                node.location,
                "detectors",
                "a suite needs at least one detector",
            );
            report.extend(reader.finish());
            return None;
        }
        _ => {
            reader.error(
                node.location,
                "detectors",
                format!(
                    "expected a list of detector entries, found {}",
                    node.kind_name()
                ),
            );
            report.extend(reader.finish());
            return None;
        }
    };
    let ids: Vec<&str> = plugins.iter().map(|p| p.id()).collect();
    let mut out: Vec<DetectorRead> = Vec::new();
    let mut ok = true;
    for (index, item) in items.iter().enumerate() {
        let path = format!("detectors[{index}]");
        if let Some(word) = item.get("registered") {
            let alone = matches!(&item.value, Value::Map(entries) if entries.len() == 1);
            if !alone || word.value != Value::Str("all".into()) {
                reader.error_with_hint(
                    word.location,
                    &format!("{path}.registered"),
                    "`registered` takes the value `all` and stands alone in its entry",
                    "write `- registered: all` to score every registered plugin at its defaults",
                );
                ok = false;
                continue;
            }
            for read in every_registered(plugins, word.location, &path) {
                if let Some(first) = out.iter().find(|d| d.entry.label == read.entry.label) {
                    reader.error_with_hint(
                        word.location,
                        &path,
                        format!(
                            "detector label `{}` is used twice (first on line {}); labels name the results and must be unique",
                            read.entry.label, first.location.line
                        ),
                        "give the other entry its own `label`",
                    );
                    ok = false;
                    continue;
                }
                out.push(read);
            }
            continue;
        }
        let Some(mut f) = reader.fields(item, &path) else {
            ok = false;
            continue;
        };
        let plugin_id: Option<String> = f.required("plugin");
        let plugin_location = f.raw("plugin").map_or(item.location, |n| n.location);
        let label: Option<String> = f.optional("label");
        let label_location = f.raw("label").map_or(plugin_location, |n| n.location);
        let params_node = f.raw("params");
        let params_path = f.path_of("params");
        let plugin_index = match &plugin_id {
            Some(id) => match plugins.iter().position(|p| p.id() == id) {
                Some(i) => Some(i),
                None => {
                    let message = format!("unknown detector plugin `{id}`");
                    let hint = match suggest(id, &ids) {
                        Some(near) => format!("did you mean `{near}`?"),
                        None => format!("known plugins: {}", ids.join(", ")),
                    };
                    let plugin_path = f.path_of("plugin");
                    f.reader()
                        .error_with_hint(plugin_location, &plugin_path, message, hint);
                    None
                }
            },
            None => None,
        };
        if label.as_ref().is_some_and(|l| l.trim().is_empty()) {
            f.error_at("label", "must not be empty");
        }
        let given = match params_node {
            Some(params) => read_param_values(params, &params_path, f.reader()),
            None => Some(Vec::new()),
        };
        f.finish();
        let (Some(plugin_id), Some(plugin_index), Some(given)) = (plugin_id, plugin_index, given)
        else {
            ok = false;
            continue;
        };
        // One resolve reports every refused parameter at once, each at its own line.
        let plugin = &plugins[plugin_index];
        let param_locations: Vec<(String, Location)> = given
            .iter()
            .map(|(name, _, _, value_location)| (name.clone(), *value_location))
            .collect();
        let pairs: Vec<(String, ParamValue)> = given
            .iter()
            .map(|(n, v, _, _)| (n.clone(), v.clone()))
            .collect();
        let params = match Params::resolve(plugin.id(), plugin.params(), &pairs) {
            Ok(params) => Some(params),
            Err(problems) => {
                for problem in problems.iter() {
                    let Some((name, value, key_location, value_location)) =
                        given.iter().find(|(name, ..)| *name == problem.param)
                    else {
                        reader.error(item.location, &params_path, problem.to_string());
                        continue;
                    };
                    let known = plugin.params().iter().any(|s| s.name == name.as_str());
                    let location = if known {
                        *value_location
                    } else {
                        *key_location
                    };
                    reader.error(
                        location,
                        &format!("{params_path}.{name}"),
                        format!("{} = {}: {}", name, value, problem.message),
                    );
                }
                None
            }
        };
        let label = label.unwrap_or_else(|| plugin_id.clone());
        if let Some(first) = out.iter().find(|d| d.entry.label == label) {
            reader.error_with_hint(
                label_location,
                &format!("{path}.label"),
                format!(
                    "detector label `{label}` is used twice (first on line {}); labels name the results and must be unique",
                    first.location.line
                ),
                "give each entry its own `label`",
            );
            ok = false;
        }
        let Some(params) = params else {
            ok = false;
            continue;
        };
        out.push(DetectorRead {
            entry: DetectorEntry {
                label,
                plugin: plugin_id,
                params: pairs,
                resolved: params,
            },
            plugin_index,
            location: plugin_location,
            path,
            param_locations,
        });
    }
    report.extend(reader.finish());
    ok.then_some(out)
}

/// Every registered plugin but `external` (which needs a program to run) once, at its
/// defaults, labelled by its id, in the order the plugins were registered: what
/// `registered: all` (or a suite without `detectors`) means. A team that embeds echobench
/// with plugins of its own gets them scored by the default suite this way.
pub(crate) fn every_registered(
    plugins: &[Arc<dyn DetectorPlugin>],
    location: Location,
    path: &str,
) -> Vec<DetectorRead> {
    plugins
        .iter()
        .enumerate()
        .filter(|(_, plugin)| plugin.id() != "external")
        .map(|(plugin_index, plugin)| DetectorRead {
            entry: DetectorEntry {
                label: plugin.id().to_string(),
                plugin: plugin.id().to_string(),
                params: Vec::new(),
                // Resolved like a written entry, so the parameters name their detector; a
                // default its own table refuses is the plugin's bug, refused by `check`.
                resolved: Params::resolve(plugin.id(), plugin.params(), &[])
                    .unwrap_or_else(|_| Params::defaults(plugin.params())),
            },
            plugin_index,
            location,
            path: path.to_string(),
            param_locations: Vec::new(),
        })
        .collect()
}

/// A parameter value with the locations of its key and value.
type GivenParam = (String, ParamValue, Location, Location);

fn read_param_values(node: &Node, path: &str, reader: &mut Reader) -> Option<Vec<GivenParam>> {
    let Value::Map(entries) = &node.value else {
        reader.error(
            node.location,
            path,
            format!(
                "expected a mapping of parameter names to values, found {}",
                node.kind_name()
            ),
        );
        return None;
    };
    let mut out = Vec::new();
    let mut ok = true;
    for (name, value, key_location) in entries {
        let converted = match &value.value {
            Value::Int(i) => Some(ParamValue::Integer(*i)),
            Value::Float(x) if x.is_finite() => Some(ParamValue::Real(*x)),
            Value::Str(s) => Some(ParamValue::Text(s.clone())),
            Value::Bool(b) => Some(ParamValue::Flag(*b)),
            Value::Float(x) => {
                reader.error(
                    value.location,
                    &format!("{path}.{name}"),
                    format!("must be a finite number, found {x}"),
                );
                None
            }
            Value::Null | Value::Seq(_) | Value::Map(_) => {
                reader.error(
                    value.location,
                    &format!("{path}.{name}"),
                    format!(
                        "expected a number, a name or true/false, found {}",
                        value.kind_name()
                    ),
                );
                None
            }
        };
        match converted {
            Some(v) => out.push((name.clone(), v, *key_location, value.location)),
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// Tries each detector on each distinct stream of the suite's scenes, so that a
/// configuration a plugin refuses for a stream (a band above Nyquist, I/Q not
/// supported) is reported now, not as a failure of every trial.
pub(crate) fn check_streams(
    scenes: &[SuiteScene],
    detectors: &[DetectorRead],
    plugins: &[Arc<dyn DetectorPlugin>],
    suite_file: &str,
    report: &mut Report,
) {
    let mut streams: Vec<(StreamInfo, &str)> = Vec::new();
    for scene in scenes {
        for variant in &scene.variants {
            let info = stream_of(&variant.scene);
            if !streams.iter().any(|(known, _)| *known == info) {
                streams.push((info, scene.id.as_str()));
            }
        }
    }
    for detector in detectors {
        let plugin = &plugins[detector.plugin_index];
        let mut refusals: Vec<String> = Vec::new();
        for (info, scene_id) in &streams {
            let outcome = catch_unwind(AssertUnwindSafe(|| {
                plugin.check(&detector.entry.resolved, info)
            }));
            let (refusal, param) = match outcome {
                Ok(Ok(())) => (None, None),
                Ok(Err(e)) => (
                    Some(format!(
                        "parameter `{}` = {}: {}",
                        e.param, e.value, e.message
                    )),
                    Some(e.param),
                ),
                Err(_) => (
                    Some("the plugin panicked while checking its configuration".to_string()),
                    None,
                ),
            };
            if let Some(why) = refusal {
                let channels = match info.channels {
                    Channels::Real => "real",
                    Channels::Iq => "I/Q",
                };
                let message = format!(
                    "plugin `{}` refuses the stream of scene `{scene_id}` ({} Hz, {channels}, {}-bit, {} GHz): {why}",
                    plugin.id(),
                    info.sample_rate_hz,
                    info.adc_bits,
                    info.carrier_hz / 1e9
                );
                // At the parameter the plugin names, when the suite sets it.
                let (location, field) = match detector
                    .param_locations
                    .iter()
                    .find(|(name, _)| Some(name) == param.as_ref())
                {
                    Some((name, at)) => (*at, format!("{}.params.{name}", detector.path)),
                    None => (detector.location, detector.path.clone()),
                };
                if !refusals.contains(&why) {
                    report
                        .problems
                        .push(error(suite_file, location, field, message));
                    refusals.push(why);
                }
            }
        }
    }
}

pub(crate) fn stream_of(scene: &SceneSpec) -> StreamInfo {
    StreamInfo {
        sample_rate_hz: scene.sensor.sample_rate_hz,
        channels: scene.sensor.output,
        adc_bits: scene.sensor.adc.bits,
        carrier_hz: scene.sensor.carrier_hz,
    }
}
