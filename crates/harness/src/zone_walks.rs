//! The detection zone of each product that declares one: its walks run through the same
//! trial path as the suite's trials ([`crate::runner`]'s `feed_trial`), each detector
//! judged at the operating threshold a run calibrated for the product, into
//! [`ZoneTally`]s that merge exactly.
//!
//! **Key design decision: the zone never calibrates.** Its thresholds are taken from a
//! finished run's tallies (the product's first operating point, the one its console verdict
//! leads with), so the zone shows where the detector the run judged sees a walker, and the
//! zone's walks cost nothing but the walks. A walk is a trial of its own key
//! ([`ZonePlan::trial_key`]), so shards split the walks by the runner's rule and merge by
//! adding integers: the result is bit-identical for any thread count and shard split.

use crate::events::{AlarmLogic, AlarmTracker};
use crate::planned::PlannedDetectors;
use crate::runner::{
    alarm_logic, feed_trial, Progress, RunDetector, RunError, Shard, Tallies, Trace,
};
use echobench_core::Score;
use echobench_suite::{SceneVariant, Suite};
use echobench_zone::{zone_figures, Walk, ZoneFigures, ZonePlan, ZoneTally};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

/// One detector's zone: the threshold it was judged at and its tallies.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ZoneDetector {
    /// Label in the suite.
    pub label: String,
    /// The operating threshold used (the run's first operating point for the product).
    pub threshold: f64,
    /// The false-alarm rate that threshold was calibrated for, per hour (a presence
    /// product's switch-on budget per day, divided by 24).
    pub target_per_hour: f64,
    /// Per-cell counts and first detections.
    pub tally: ZoneTally,
    /// Walks on which the detector failed (panic, NaN, time disorder): not in the tally.
    pub failed_walks: u64,
    /// The failure on the lowest-numbered walk, for the console (the same for any order).
    pub first_failure: Option<WalkFailure>,
    /// The zone in a few numbers per kind of walk ([`fill_figures`]; empty in a shard's part).
    #[serde(default)]
    pub figures: Vec<ZoneFigures>,
}

/// A detector's failure on one walk.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct WalkFailure {
    /// The walk.
    pub walk: u32,
    /// What went wrong.
    pub message: String,
}

/// Keeps the failure of the lower walk.
fn keep_first(into: &mut Option<WalkFailure>, other: Option<WalkFailure>) {
    if let Some(o) = other {
        if into.as_ref().is_none_or(|f| o.walk < f.walk) {
            *into = Some(o);
        }
    }
}

/// One product's zone: which scene gave the room, the plan's size, and every detector.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProductZoneRun {
    /// Product name.
    pub product: String,
    /// The scene whose room, placement and noise the walkers walked through.
    pub scene: String,
    /// Walks in the plan (all shards).
    pub planned_walks: u64,
    /// Walks run here (this shard's).
    pub walks_run: u64,
    /// Output samples synthesized.
    pub samples: u64,
    /// The detectors, in suite order.
    pub detectors: Vec<ZoneDetector>,
    /// The pictures written for it, in order (empty in a shard's part).
    #[serde(default)]
    pub pictures: Vec<ZonePicture>,
}

/// One picture file of a product's zone.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct ZonePicture {
    /// Detector label (empty for an overview of every detector).
    pub detector: String,
    /// `approach` or `cross`.
    pub kind: String,
    /// `overview` (every detector side by side), `floor` (one detector's plan view) or
    /// `side` (height against range, ceiling mounts).
    pub view: String,
    /// File name in the run folder.
    pub file: String,
}

/// Version of `zone.json`.
pub const ZONE_SCHEMA_VERSION: u32 = 1;

/// Confidence of every interval of a zone (cells, detected walks).
pub const ZONE_CONFIDENCE: f64 = 0.95;

/// `zone.json`: the zones mapped for a run, or a shard's part of them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ZoneRecord {
    /// [`ZONE_SCHEMA_VERSION`].
    pub schema: u32,
    /// Suite name.
    pub suite: String,
    /// Suite seed (the walks' plans and trials are drawn from it).
    pub seed: u64,
    /// Run id of the run folder whose thresholds were used.
    pub run_id: String,
    /// The shards merged here (empty: every walk, in one pass).
    pub shards: Vec<Shard>,
    /// Confidence of the intervals.
    pub confidence: f64,
    /// One entry per product with a zone, in suite order.
    pub products: Vec<ProductZoneRun>,
}

/// Fills each detector's [`ZoneDetector::figures`] from its tallies and the product's plan;
/// returns the plans, one per product of `record` in its order, for the pictures and the CSV.
///
/// # Errors
/// A product the suite does not hold, a plan refused, or tallies that do not fit the plan
/// (a `zone.json` from another suite or edited by hand).
pub fn fill_figures(suite: &Suite, record: &mut ZoneRecord) -> Result<Vec<ZonePlan>, RunError> {
    let mut plans = Vec::with_capacity(record.products.len());
    for product in &mut record.products {
        let (plan, _) = product_zone_plan(suite, &product.product)?.ok_or_else(|| {
            RunError(format!(
                "product `{}` has no zone in the suite",
                product.product
            ))
        })?;
        for d in &mut product.detectors {
            d.tally.check_plan(&plan).map_err(|e| {
                RunError(format!("zone of `{}`, `{}`: {e}", product.product, d.label))
            })?;
            d.figures = zone_figures(&plan, &d.tally, record.confidence);
        }
        plans.push(plan);
    }
    Ok(plans)
}

/// The plan of `product`'s zone (deterministic: the suite's seed, the zone block and the
/// template scene's module and placement), and the template variant; `None` when the
/// product declares no zone.
///
/// # Errors
/// A product that does not exist, or a zone the plan refuses.
pub fn product_zone_plan<'s>(
    suite: &'s Suite,
    product: &str,
) -> Result<Option<(ZonePlan, &'s SceneVariant)>, RunError> {
    let p = suite
        .products
        .iter()
        .find(|p| p.name == product)
        .ok_or_else(|| RunError(format!("no product `{product}` in the suite")))?;
    let Some(zone) = &p.zone else {
        return Ok(None);
    };
    let scene = suite
        .scenes
        .iter()
        .find(|s| s.id == zone.scene && s.product == p.name)
        .ok_or_else(|| {
            RunError(format!(
                "product `{product}`: the zone's scene `{}` is not one of its scenes",
                zone.scene
            ))
        })?;
    let template = &scene.variants[0];
    let plan = ZonePlan::new(&zone.spec, &template.scene.sensor, suite.seed)
        .map_err(|e| RunError(format!("product `{product}`: {e}")))?;
    Ok(Some((plan, template)))
}

/// The first time, s, at or after `enter_s` at which the alarm condition (threshold, M of
/// N) holds on `scores`; frames before the entry still fill the M-of-N window, as they do
/// in the product.
fn first_detection_s(
    scores: &[Score],
    logic: &AlarmLogic,
    threshold: f64,
    enter_s: f64,
) -> Option<f64> {
    let mut tracker = AlarmTracker::new(logic, threshold);
    for score in scores {
        tracker.push(*score);
        if score.t_s >= enter_s && tracker.is_on() {
            return Some(score.t_s);
        }
    }
    None
}

/// Runs the zone walks of every product that declares a zone (this shard's walks), each
/// detector judged at the threshold `run` calibrated for it.
///
/// # Errors
/// A detector of `detectors` that `run` does not hold for a zoned product, a plan refused, or
/// a walk whose scene the synthesizer refuses.
pub fn run_zones(
    suite: &Suite,
    detectors: &[RunDetector],
    run: &Tallies,
    shard: Option<Shard>,
    progress: &(dyn Fn(Progress) + Sync),
) -> Result<Vec<ProductZoneRun>, RunError> {
    let (logic, _) = alarm_logic(suite)?;
    let planned = PlannedDetectors::new(detectors);
    let mut out = Vec::new();
    for product in &suite.products {
        let Some((plan, template)) = product_zone_plan(suite, &product.name)? else {
            continue;
        };
        let scene_id = product.zone.as_ref().map_or("", |z| z.scene.as_str());
        // Thresholds: the run's first operating point of each detector for this product.
        let operating = detectors
            .iter()
            .map(|d| {
                run.detectors
                    .iter()
                    .find(|t| t.product == product.name && t.label == d.label)
                    .and_then(|t| t.operating.first())
                    .map(|o| (o.threshold, o.target_per_hour))
                    .ok_or_else(|| {
                        RunError(format!(
                            "the run holds no operating threshold of `{}` for product `{}`: \
                             map the zone of the suite the run ran",
                            d.label, product.name
                        ))
                    })
            })
            .collect::<Result<Vec<_>, _>>()?;
        let walks: Vec<&Walk> = plan
            .walks()
            .iter()
            .filter(|w| shard.is_none_or(|s| s.owns(&plan.trial_key(scene_id, w))))
            .collect();
        let empty = || {
            (
                vec![ZoneTally::new(&plan); detectors.len()],
                vec![(0u64, None::<WalkFailure>); detectors.len()],
                0u64,
            )
        };
        let done = std::sync::atomic::AtomicU64::new(0);
        let (tallies, failures, samples) = walks
            .par_iter()
            .try_fold(empty, |mut acc, walk| -> Result<_, RunError> {
                let key = plan.trial_key(scene_id, walk);
                let variant = SceneVariant {
                    sweep_point: 0,
                    sweep_value: None,
                    sweep_number: None,
                    scene: plan.trial_scene(&template.scene, walk, walk.walker_actor()),
                };
                let what = format!("zone of `{}`, walk {}", product.name, walk.index);
                let trial = feed_trial(&variant, None, &key, &planned, &what)?;
                acc.2 += trial.samples;
                for (di, trace) in trial.traces.iter().enumerate() {
                    match trace {
                        Trace::Failed(message) => {
                            let (count, first) = &mut acc.1[di];
                            *count += 1;
                            keep_first(
                                first,
                                Some(WalkFailure {
                                    walk: walk.index,
                                    message: message.clone(),
                                }),
                            );
                        }
                        Trace::Ok { scores, .. } => {
                            let (threshold, _) = operating[di];
                            let at = first_detection_s(scores, &logic, threshold, walk.enter_s);
                            acc.0[di]
                                .record(&plan, walk, at)
                                .map_err(|e| RunError(format!("{what}: {e}")))?;
                        }
                    }
                }
                let d = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
                progress(Progress {
                    calibration: false,
                    done: d,
                    total: walks.len() as u64,
                });
                Ok(acc)
            })
            .try_reduce(empty, |mut a, b| {
                for (into, part) in a.0.iter_mut().zip(&b.0) {
                    into.merge(part).map_err(|e| RunError(e.to_string()))?;
                }
                for (into, part) in a.1.iter_mut().zip(b.1) {
                    into.0 += part.0;
                    keep_first(&mut into.1, part.1);
                }
                a.2 += b.2;
                Ok(a)
            })?;
        out.push(ProductZoneRun {
            product: product.name.clone(),
            scene: scene_id.to_string(),
            planned_walks: plan.walks().len() as u64,
            walks_run: walks.len() as u64,
            samples,
            pictures: Vec::new(),
            detectors: detectors
                .iter()
                .zip(tallies)
                .zip(failures)
                .zip(&operating)
                .map(
                    |(((d, tally), (failed_walks, first)), &(threshold, target_per_hour))| {
                        ZoneDetector {
                            label: d.label.clone(),
                            threshold,
                            target_per_hour,
                            tally,
                            failed_walks,
                            first_failure: first,
                            figures: Vec::new(),
                        }
                    },
                )
                .collect(),
        });
    }
    Ok(out)
}

/// Adds shard `part` into `into` (the same suite's zones, other walks).
///
/// # Errors
/// Zones of other products, scenes, detectors or thresholds, or a walk in both.
pub fn merge_zone_runs(
    into: &mut [ProductZoneRun],
    part: &[ProductZoneRun],
) -> Result<(), RunError> {
    if into.len() != part.len() {
        return Err(RunError(format!(
            "zone parts of {} and {} products cannot be merged",
            into.len(),
            part.len()
        )));
    }
    for (a, b) in into.iter_mut().zip(part) {
        let same = a.product == b.product
            && a.scene == b.scene
            && a.planned_walks == b.planned_walks
            && a.detectors.len() == b.detectors.len()
            && a.detectors.iter().zip(&b.detectors).all(|(x, y)| {
                x.label == y.label
                    && x.threshold.to_bits() == y.threshold.to_bits()
                    && x.target_per_hour.to_bits() == y.target_per_hour.to_bits()
            });
        if !same {
            return Err(RunError(format!(
                "zone parts differ (product `{}` vs `{}`, or its detectors or thresholds): \
                 merge parts of one run only",
                a.product, b.product
            )));
        }
        a.walks_run += b.walks_run;
        a.samples += b.samples;
        for (x, y) in a.detectors.iter_mut().zip(&b.detectors) {
            x.tally
                .merge(&y.tally)
                .map_err(|e| RunError(format!("product `{}`: {e}", a.product)))?;
            x.failed_walks += y.failed_walks;
            keep_first(&mut x.first_failure, y.first_failure.clone());
        }
    }
    Ok(())
}
