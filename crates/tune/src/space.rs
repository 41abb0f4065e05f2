//! A detector entry's search space and the configurations sampled from it.
//!
//! The space is every parameter the plugin's table marks tunable that the suite entry does
//! not set itself (what the suite sets is the user's fixed choice) and that the plugin
//! accepts beside the entry's parameters on every stream of the suite (a CFAR entry whose
//! frame is given in samples cannot also take a frame in m/s: the plugin refuses the pair,
//! so that parameter stays out).
//!
//! Configuration 0 is the entry as the suite gives it; configurations 1..=n take the
//! Owen-scrambled Sobol points 0..n (Sobol 1967; Owen 1995; the hash-based scramble of
//! Burley 2020, `sobol_burley`): one dimension per searched parameter, mapped onto its range
//! by `TuneRange::value_at` (linear, log, whole numbers, options). The first 2^m points of a
//! scrambled Sobol sequence put one point in each of 2^m equal cells of every dimension, so a
//! single parameter's values are spread at a known step (1/2^m of its range); the scramble
//! seed comes from the tuning seed and the entry's label, so configurations are the same on
//! every machine and do not change when another entry is added
//! (`docs/reference/tuning.md#t1`).

use crate::TuneError;
use echobench_core::detector::{DetectorPlugin, ParamKind, ParamValue, Params};
use echobench_core::param_decl::TuneRange;
use echobench_core::StreamInfo;
use echobench_suite::{DetectorEntry, Suite};
use serde::{Deserialize, Serialize};
use std::sync::Arc;

/// One searched parameter.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TunedParam {
    /// Its name.
    pub name: String,
    /// Scale: `linear`, `log`, `integer`, `integer-log`, `choice`.
    pub scale: String,
    /// The range as text: `[0.032, 0.5]`, or the options.
    pub range: String,
}

/// A detector entry's space.
#[derive(Clone)]
pub struct Space {
    /// The entry.
    pub entry: DetectorEntry,
    /// Its plugin.
    pub plugin: Arc<dyn DetectorPlugin>,
    /// Searched parameters, in the plugin's table order.
    pub params: Vec<TunedParam>,
    /// Tunable parameters left out, with why.
    pub not_searched: Vec<String>,
    /// Each searched parameter's range and kind, in the order of `params`.
    ranges: Vec<(TuneRange, ParamKind)>,
}

/// One configuration of an entry.
#[derive(Debug, Clone, PartialEq)]
pub struct Configuration {
    /// 0 for the entry as given; then the Sobol point's index + 1.
    pub index: usize,
    /// The searched parameters' values (empty for configuration 0).
    pub values: Vec<(String, ParamValue)>,
    /// The entry's parameters with these values, resolved; `Err` when the plugin refuses
    /// them on a stream of the suite (then the configuration is not run).
    pub resolved: Result<Params, String>,
}

impl Configuration {
    /// The searched values as `name → text`.
    pub fn shown(&self) -> std::collections::BTreeMap<String, String> {
        self.values
            .iter()
            .map(|(k, v)| (k.clone(), v.to_string()))
            .collect()
    }
}

/// Every distinct stream shape of the suite's scene variants.
pub(crate) fn streams(suite: &Suite) -> Vec<StreamInfo> {
    let mut out: Vec<StreamInfo> = Vec::new();
    for scene in &suite.scenes {
        for v in &scene.variants {
            let s = &v.scene.sensor;
            let info = StreamInfo {
                sample_rate_hz: s.sample_rate_hz,
                channels: s.output,
                adc_bits: s.adc.bits,
                carrier_hz: s.carrier_hz,
            };
            if !out.contains(&info) {
                out.push(info);
            }
        }
    }
    out
}

/// The entry's parameters plus `extra`, resolved and checked on every stream.
fn resolve_with(
    entry: &DetectorEntry,
    plugin: &dyn DetectorPlugin,
    extra: &[(String, ParamValue)],
    streams: &[StreamInfo],
) -> Result<Params, String> {
    let mut given = entry.params.clone();
    for (k, v) in extra {
        given.retain(|(name, _)| name != k);
        given.push((k.clone(), v.clone()));
    }
    let params = Params::resolve(&entry.plugin, plugin.params(), &given).map_err(|problems| {
        problems
            .iter()
            .map(ToString::to_string)
            .collect::<Vec<_>>()
            .join("; ")
    })?;
    for info in streams {
        let checked =
            std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| plugin.check(&params, info)));
        match checked {
            Ok(Ok(())) => {}
            Ok(Err(e)) => return Err(format!("`{}` = {}: {}", e.param, e.value, e.message)),
            Err(_) => return Err("the plugin panicked checking it".to_string()),
        }
    }
    Ok(params)
}

/// The search space of every detector entry of `suite`.
///
/// # Errors
/// An entry whose plugin is not among `plugins`.
pub fn tuning_space(
    suite: &Suite,
    plugins: &[Arc<dyn DetectorPlugin>],
) -> Result<Vec<Space>, TuneError> {
    let streams = streams(suite);
    suite
        .detectors
        .iter()
        .map(|entry| {
            let plugin = plugins
                .iter()
                .find(|p| p.id() == entry.plugin)
                .cloned()
                .ok_or_else(|| {
                    TuneError::new(format!(
                        "detector `{}`: no plugin `{}`",
                        entry.label, entry.plugin
                    ))
                })?;
            let mut params = Vec::new();
            let mut ranges = Vec::new();
            let mut not_searched = Vec::new();
            for spec in plugin.params() {
                let Some(range) = spec.tune else { continue };
                if entry.params.iter().any(|(k, _)| *k == spec.name) {
                    not_searched.push(format!("{}: set by the suite", spec.name));
                    continue;
                }
                // Set alone to its default: a refusal means the parameter cannot stand
                // beside what the suite sets (another unit of the same frame or band).
                let alone = [(spec.name.to_string(), spec.default_value())];
                if let Err(why) = resolve_with(entry, plugin.as_ref(), &alone, &streams) {
                    not_searched.push(format!("{}: {why}", spec.name));
                    continue;
                }
                let range_text = match (&range, &spec.kind) {
                    (TuneRange::Linear { low, high } | TuneRange::Log { low, high }, _) => {
                        format!("[{low}, {high}]")
                    }
                    (TuneRange::Integer { low, high } | TuneRange::IntegerLog { low, high }, _) => {
                        format!("{low}..={high}")
                    }
                    (TuneRange::Choice, ParamKind::Choice(names)) => names.join(" | "),
                    (TuneRange::Choice, _) => String::new(),
                };
                params.push(TunedParam {
                    name: spec.name.to_string(),
                    scale: range.scale_name().to_string(),
                    range: range_text,
                });
                ranges.push((range, spec.kind.clone()));
            }
            Ok(Space {
                entry: entry.clone(),
                plugin,
                params,
                not_searched,
                ranges,
            })
        })
        .collect()
}

/// The scramble seed of an entry's Sobol points: the tuning seed and the entry's label.
fn scramble_seed(tuning_seed: u64, label: &str) -> u32 {
    let h = echobench_core::seed::hash_bytes(tuning_seed, label.as_bytes());
    (h ^ (h >> 32)) as u32
}

/// Configuration 0 (the entry as given) and `count` sampled ones of `space`.
pub fn configurations(
    space: &Space,
    suite: &Suite,
    count: usize,
    tuning_seed: u64,
) -> Vec<Configuration> {
    let streams = streams(suite);
    let mut out = vec![Configuration {
        index: 0,
        values: Vec::new(),
        resolved: resolve_with(&space.entry, space.plugin.as_ref(), &[], &streams),
    }];
    if space.params.is_empty() {
        return out;
    }
    let seed = scramble_seed(tuning_seed, &space.entry.label);
    for i in 0..count {
        let values: Vec<(String, ParamValue)> = space
            .params
            .iter()
            .zip(&space.ranges)
            .enumerate()
            .filter_map(|(d, (p, (range, kind)))| {
                // sobol_burley holds 256 dimensions; the tables here have at most a handful.
                let u = f64::from(sobol_burley::sample(i as u32, (d % 256) as u32, seed));
                range.value_at(u, kind).map(|v| (p.name.clone(), v))
            })
            .collect();
        let resolved = resolve_with(&space.entry, space.plugin.as_ref(), &values, &streams);
        out.push(Configuration {
            index: i + 1,
            values,
            resolved,
        });
    }
    out
}
