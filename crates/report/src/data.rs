//! The numbers behind the plots, taken from the tallies the way the harness's own files take
//! them, so a curve in the report is the same curve as in `roc.csv`.

use echobench_harness::runner::{DetectorTally, VariantTally};
use echobench_harness::summary::{Estimate, CONFIDENCE};

/// Nanoseconds per hour: tallies keep exposure in integer nanoseconds.
const NS_PER_HOUR: f64 = 3.6e12;

/// One vertex of the event-level ROC: a grid threshold with Pd and false alarms per hour,
/// all scenes pooled (as a row of `roc.csv`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridRocPoint {
    /// The grid threshold.
    pub threshold: f64,
    /// Detected events over all events; `None` without target events.
    pub pd: Option<f64>,
    /// False alarms per hour of noise-only time; `None` without noise-only time.
    pub false_alarms_per_hour: Option<f64>,
    /// Inside the curve's monotone part: from the highest threshold down to here, neither
    /// the detected events nor the false alarms ever fell
    /// (`echobench_stats::event_roc_monotone_len`). Only these points are drawn; below the
    /// first fall the curve folds back (an alarm that stays on has fewer onsets).
    pub monotone: bool,
}

/// The event-level ROC of a detector over its threshold grid, ascending in threshold (so
/// descending in Pd and false-alarm rate), pooled over scene variants exactly as
/// `echobench_render::csv_files::write_roc` pools them.
pub fn grid_roc(detector: &DetectorTally) -> Vec<GridRocPoint> {
    let events: u64 = detector.variants.iter().map(|v| v.events).sum();
    let exposure_ns: u64 = detector.variants.iter().map(|v| v.exposure_ns).sum();
    let hours = exposure_ns as f64 / NS_PER_HOUR;
    let counts: Vec<(u64, u64)> = (0..detector.thresholds.len())
        .map(|g| {
            let pooled = |per_grid: fn(&VariantTally) -> &Vec<u64>| -> u64 {
                detector
                    .variants
                    .iter()
                    .map(|v| per_grid(v).get(g).copied().unwrap_or(0))
                    .sum()
            };
            (pooled(|v| &v.detected), pooled(|v| &v.false_alarms))
        })
        .collect();
    // The grid ascends; the monotone run is counted from its top.
    let descending: Vec<(u64, u64)> = counts.iter().rev().copied().collect();
    let first_monotone = counts.len() - echobench_stats::event_roc_monotone_len(&descending);
    detector
        .thresholds
        .iter()
        .zip(&counts)
        .enumerate()
        .map(
            |(g, (&threshold, &(detected, false_alarms)))| GridRocPoint {
                threshold,
                pd: (events > 0).then(|| detected as f64 / events as f64),
                false_alarms_per_hour: (hours > 0.0).then(|| false_alarms as f64 / hours),
                monotone: g >= first_monotone,
            },
        )
        .collect()
}

/// The lowest threshold of a curve's monotone part when the curve folds back below it, i.e.
/// where the drawn curve is cut; `None` when every grid point is drawn.
pub fn fold_back_cut(points: &[GridRocPoint]) -> Option<f64> {
    let first = points.iter().position(|p| p.monotone)?;
    (first > 0).then(|| points[first].threshold)
}

/// The maximum score of every test trial, split into target-scene trials (positives) and
/// nuisance-scene trials (negatives): the inputs of the trial-level ROC.
pub fn trial_max_scores(detector: &DetectorTally) -> (Vec<f64>, Vec<f64>) {
    let mut positives = Vec::new();
    let mut negatives = Vec::new();
    for v in &detector.variants {
        // A rare event's occurrences are judged apart (`rare_events`), not as room time.
        let list = match v.label.as_str() {
            "target" => &mut positives,
            "nuisance" => &mut negatives,
            _ => continue,
        };
        list.extend(v.max_scores.iter().map(|(_, s)| *s));
    }
    (positives, negatives)
}

/// A trial-level ROC with its area and the area's standard error.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialRoc {
    /// Vertices `(pfa, pd, threshold)` from `echobench_stats::roc_points`.
    pub points: Vec<echobench_stats::RocPoint>,
    /// Mann–Whitney AUC.
    pub auc: f64,
    /// Hanley–McNeil standard error.
    pub auc_se: Option<f64>,
    /// Target trials.
    pub positives: usize,
    /// Nuisance trials.
    pub negatives: usize,
}

/// The trial-level ROC of a detector; `None` when either class has no trial.
pub fn trial_roc(detector: &DetectorTally) -> Option<TrialRoc> {
    let (positives, negatives) = trial_max_scores(detector);
    let points = echobench_stats::roc_points(&positives, &negatives);
    if points.is_empty() {
        return None;
    }
    // AUC = U/(n₁n₀) (Bamber 1975; Hanley & McNeil 1982), the same number summary.json holds.
    let auc = echobench_stats::auc_mann_whitney(&positives, &negatives);
    Some(TrialRoc {
        auc_se: echobench_stats::auc_standard_error_hanley_mcneil(
            auc,
            positives.len(),
            negatives.len(),
        ),
        points,
        auc,
        positives: positives.len(),
        negatives: negatives.len(),
    })
}

/// All latencies of detected events at operating point `op`, seconds, ascending.
pub fn latencies_s(detector: &DetectorTally, op: usize) -> Vec<f64> {
    let mut ms: Vec<i64> = detector
        .variants
        .iter()
        .filter_map(|v| v.operating.get(op))
        .flat_map(|t| t.latencies_ms.iter().copied())
        .collect();
    ms.sort_unstable();
    ms.into_iter().map(|l| l as f64 / 1e3).collect()
}

/// A proportion with its Wilson interval (Wilson 1927), as the summary gives them.
pub fn proportion(k: u64, n: u64) -> Estimate {
    Estimate::proportion(k, n)
}

/// A rate per hour with its exact Garwood interval (Garwood 1936); `hours` from nanoseconds.
pub fn rate_per_hour(k: u64, exposure_ns: u64) -> Estimate {
    Estimate::rate(k, exposure_ns as f64 / NS_PER_HOUR)
}

/// One point of a detection-vs-sweep curve.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepPoint {
    /// The value as written in the suite.
    pub value_text: String,
    /// The value as a number, when it is one.
    pub value: Option<f64>,
    /// Pd with its Wilson interval (target scenes).
    pub pd: Estimate,
    /// False alarms per hour with the Garwood interval (nuisance scenes).
    pub false_alarms_per_hour: Estimate,
    /// Events and detected.
    pub events: u64,
    /// Detected events.
    pub detected: u64,
    /// False alarms.
    pub false_alarms: u64,
}

/// A swept scene: its id, label and, per detector, one point per sweep value.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    /// Scene id.
    pub scene: String,
    /// `target` or `nuisance`.
    pub label: String,
    /// Per detector (in run order): the points.
    pub by_detector: Vec<Vec<SweepPoint>>,
}

/// The distinct scene ids of one product's detectors, in suite order (every detector of a
/// product has the same variants).
pub fn scene_ids(detectors: &[&DetectorTally]) -> Vec<String> {
    let mut ids: Vec<String> = Vec::new();
    if let Some(d) = detectors.first() {
        for v in &d.variants {
            if ids.last() != Some(&v.scene) {
                ids.push(v.scene.clone());
            }
        }
    }
    ids
}

/// The swept scenes of one product's detectors at operating point `op`; `by_detector`
/// follows the order of `detectors`.
pub fn sweeps(detectors: &[&DetectorTally], op: usize) -> Vec<Sweep> {
    let ids = scene_ids(detectors);
    let Some(first) = detectors.first() else {
        return Vec::new();
    };
    let mut out = Vec::new();
    for id in &ids {
        let swept = first
            .variants
            .iter()
            .any(|v| &v.scene == id && v.sweep_value.is_some());
        if !swept {
            continue;
        }
        let label = first
            .variants
            .iter()
            .find(|v| &v.scene == id)
            .map_or_else(String::new, |v| v.label.clone());
        let by_detector = detectors
            .iter()
            .map(|d| {
                d.variants
                    .iter()
                    .filter(|v| &v.scene == id)
                    .map(|v| {
                        let at = v.operating.get(op);
                        let detected = at.map_or(0, |t| t.detected);
                        let false_alarms = at.map_or(0, |t| t.false_alarms);
                        SweepPoint {
                            value_text: v.sweep_value.clone().unwrap_or_default(),
                            value: v.sweep_number.filter(|x| x.is_finite()),
                            pd: proportion(detected, v.events),
                            false_alarms_per_hour: rate_per_hour(false_alarms, v.exposure_ns),
                            events: v.events,
                            detected,
                            false_alarms,
                        }
                    })
                    .collect()
            })
            .collect();
        out.push(Sweep {
            scene: id.clone(),
            label,
            by_detector,
        });
    }
    out
}

/// Confidence level of the intervals, for captions.
pub fn confidence_percent() -> String {
    format!("{:.0} %", CONFIDENCE * 100.0)
}
