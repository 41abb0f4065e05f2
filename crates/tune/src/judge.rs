//! Judging the tuned detectors on held-out trials, and leaving each room out in turn.
//!
//! The judging run is an ordinary run of the tuned suite on the suite's own seed: trials
//! the search never saw. The defaults run beside the tuned configurations in the same run
//! (`label@default`), so default and tuned are compared on the very same trials.
//!
//! Leave one room out: for each nuisance room of a product (not a rare event, and only where
//! the product keeps another room to calibrate on), the whole search is repeated on the
//! product without that room, with the same settings and tuning seed; its last rung fixes
//! the chosen configuration's operating threshold from the rooms it saw. That
//! configuration is then run on the left-out room's fresh trials (the suite's own seed)
//! with the threshold pinned (the runner tallies pinned thresholds beside its own), and its
//! false alarms per hour there are reported with their exact Garwood interval. A room
//! *fails* when the interval's lower end is above the target: shown to be over it, not
//! merely unlucky (`docs/reference/tuning.md#t4`).

use crate::search::{product_figures, rung_label, search, ProductPd, SearchResult};
use crate::space::Configuration;
use crate::{DetectorTuning, TuneError, TuneSettings};
use echobench_core::detector::DetectorPlugin;
use echobench_harness::runner::{run_suite, PinnedPoint, RunDetector};
use echobench_harness::summary::{summarise, Estimate};
use echobench_suite::{DetectorEntry, SceneLabel, Suite};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::sync::Arc;

/// A product's figures for one configuration (tuning or held-out trials).
pub type JudgedFigure = ProductPd;

/// The suffix of a default configuration's label in the judging run.
pub const DEFAULT_SUFFIX: &str = "@default";

/// The entry of configuration `config` of an entry: the suite's parameters with the
/// configuration's values (a searched parameter is never one the suite sets).
fn entry_of(entry: &DetectorEntry, config: &Configuration) -> DetectorEntry {
    let mut params = entry.params.clone();
    params.extend(config.values.iter().cloned());
    DetectorEntry {
        label: entry.label.clone(),
        plugin: entry.plugin.clone(),
        params,
        resolved: config
            .resolved
            .clone()
            .unwrap_or_else(|_| entry.resolved.clone()),
    }
}

/// The suite with each entry's chosen configuration.
pub fn tuned_suite(suite: &Suite, found: &SearchResult) -> Suite {
    let mut tuned = suite.clone();
    tuned.detectors = found
        .spaces
        .iter()
        .enumerate()
        .map(|(e, space)| entry_of(&space.entry, &found.configurations[e][found.chosen[e]]))
        .collect();
    tuned
}

/// Runs the tuned suite (own seed) with the defaults beside it; returns the tuned suite and
/// each entry's tuning.
///
/// # Errors
/// A run the runner refuses.
pub fn judge(
    suite: &Suite,
    plugins: &[Arc<dyn DetectorPlugin>],
    found: &SearchResult,
) -> Result<(Suite, Vec<DetectorTuning>), TuneError> {
    let _ = plugins;
    let tuned = tuned_suite(suite, found);
    let mut detectors: Vec<RunDetector> = found
        .spaces
        .iter()
        .zip(&tuned.detectors)
        .map(|(space, entry)| RunDetector {
            label: entry.label.clone(),
            plugin: space.plugin.clone(),
            params: entry.resolved.clone(),
            pinned: BTreeMap::new(),
        })
        .collect();
    detectors.extend(found.spaces.iter().map(|space| RunDetector {
        label: format!("{}{DEFAULT_SUFFIX}", space.entry.label),
        plugin: space.plugin.clone(),
        params: space.entry.resolved.clone(),
        pinned: BTreeMap::new(),
    }));
    let (tallies, _) = run_suite(&tuned, &detectors, None, &|_| {})
        .map_err(|e| TuneError::new(format!("judging run: {e}")))?;
    let summary = summarise(&tallies, &tuned);
    let figures = |label: &str| -> Vec<ProductPd> {
        product_figures(&summary, label)
            .into_iter()
            .map(|(p, _)| p)
            .collect()
    };
    let out = found
        .spaces
        .iter()
        .enumerate()
        .map(|(e, space)| {
            let label = &space.entry.label;
            let chosen = &found.configurations[e][found.chosen[e]];
            DetectorTuning {
                label: label.clone(),
                plugin: space.entry.plugin.clone(),
                searched: space.params.clone(),
                not_searched: space.not_searched.clone(),
                default_params: space
                    .entry
                    .params
                    .iter()
                    .map(|(k, v)| (k.clone(), v.to_string()))
                    .collect(),
                tuned_params: chosen.shown(),
                chosen: chosen.index,
                tuning: found.tuning[e].clone(),
                held_out: figures(label),
                default_held_out: figures(&format!("{label}{DEFAULT_SUFFIX}")),
            }
        })
        .collect();
    Ok((tuned, out))
}

/// One (room, detector) of the leave-one-room-out judgement.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LeftOutRoom {
    /// Product.
    pub product: String,
    /// The room left out of tuning (scene id).
    pub room: String,
    /// Detector entry.
    pub detector: String,
    /// The configuration tuned without the room: searched values.
    pub tuned_params: BTreeMap<String, String>,
    /// Its operating threshold, cut on the other rooms.
    pub threshold: Option<f64>,
    /// The target, per hour.
    pub target_per_hour: f64,
    /// False alarms in the room's test trials at that threshold (a presence product: false
    /// switch-ons of its output).
    pub false_alarms: u64,
    /// The room's test time, h (a presence product: its empty time).
    pub exposure_hours: f64,
    /// False alarms per hour with the Garwood interval.
    pub rate: Estimate,
    /// Shown over the target (the interval's lower end above it).
    pub fails: bool,
}

/// The leave-one-room-out judgement of every entry.
///
/// # Errors
/// A run the runner refuses.
pub fn leave_one_out(
    suite: &Suite,
    plugins: &[Arc<dyn DetectorPlugin>],
    settings: &TuneSettings,
    note: &(dyn Fn(&str) + Sync),
) -> Result<Vec<LeftOutRoom>, TuneError> {
    let inner = TuneSettings {
        leave_one_out: false,
        ..settings.clone()
    };
    let mut out = Vec::new();
    for product in &suite.products {
        let view = suite.product_view(&product.name);
        let rooms: Vec<String> = view
            .scenes
            .iter()
            .filter(|s| s.label == SceneLabel::Nuisance && s.occurrences_per_day.is_none())
            .map(|s| s.id.clone())
            .collect();
        if rooms.len() < 2 {
            continue;
        }
        for room in &rooms {
            note(&format!(
                "leaving room `{room}` of `{}` out of tuning",
                product.name
            ));
            let mut without = view.clone();
            without.scenes.retain(|s| &s.id != room);
            let found = search(&without, plugins, &inner, note)?;
            let target = found.target_per_hour;
            let mut only = view.clone();
            only.scenes.retain(|s| &s.id == room);
            let tuned = tuned_suite(&without, &found);
            let detectors: Vec<RunDetector> = found
                .spaces
                .iter()
                .enumerate()
                .map(|(e, space)| {
                    let label = rung_label(&space.entry.label, found.chosen[e]);
                    let threshold = found
                        .last_tallies
                        .detectors
                        .iter()
                        .find(|d| d.label == label && d.product == product.name)
                        .and_then(|d| d.operating.first())
                        .map_or(f64::INFINITY, |o| o.threshold);
                    RunDetector {
                        label: space.entry.label.clone(),
                        plugin: space.plugin.clone(),
                        params: tuned.detectors[e].resolved.clone(),
                        pinned: BTreeMap::from([(
                            product.name.clone(),
                            vec![PinnedPoint {
                                target_per_hour: target,
                                threshold,
                            }],
                        )]),
                    }
                })
                .collect();
            let (tallies, _) = run_suite(&only, &detectors, None, &|_| {})
                .map_err(|e| TuneError::new(format!("room `{room}` left out: {e}")))?;
            for (e, space) in found.spaces.iter().enumerate() {
                let label = &space.entry.label;
                let Some(d) = tallies
                    .detectors
                    .iter()
                    .find(|d| &d.label == label && d.product == product.name)
                else {
                    continue;
                };
                // An intrusion product counts alarms over the room's time; a presence product
                // its output's false switch-ons over empty time (what its thresholds are cut on).
                let (mut false_alarms, mut exposure_ns) = (0, 0);
                for v in d.variants.iter().filter(|v| &v.scene == room) {
                    match v.pinned_presence.first() {
                        Some(p) => {
                            false_alarms += p.false_switch_ons;
                            exposure_ns += p.empty_ns;
                        }
                        None => {
                            false_alarms += v.pinned.first().map_or(0, |t| t.false_alarms);
                            exposure_ns += v.exposure_ns;
                        }
                    }
                }
                let hours = exposure_ns as f64 / 3.6e12;
                let rate = Estimate::rate(false_alarms, hours);
                out.push(LeftOutRoom {
                    product: product.name.clone(),
                    room: room.clone(),
                    detector: label.clone(),
                    tuned_params: found.configurations[e][found.chosen[e]].shown(),
                    threshold: d.pinned.first().map(|p| p.threshold),
                    target_per_hour: target,
                    false_alarms,
                    exposure_hours: hours,
                    rate,
                    fails: rate.low.is_some_and(|low| low > target),
                });
            }
        }
    }
    Ok(out)
}
