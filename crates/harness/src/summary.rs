//! From tallies to the numbers a reader wants: ROC tables, operating points,
//! breakdowns, each rate with its interval (`echobench-render` writes them out).
//!
//! Everything here is a pure function of [`Tallies`] (integer counts), so a
//! merged set of shards gives byte-identical outputs to the unsharded run.

use crate::runner::{DetectorTally, Tallies, VariantTally, SCHEMA_VERSION};
use echobench_suite::Suite;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;

/// Confidence level of every interval.
pub const CONFIDENCE: f64 = 0.95;

/// A rate or proportion with its interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Estimate {
    /// Point estimate (`null` in JSON when undefined, e.g. no events).
    pub value: Option<f64>,
    /// Lower end of the 95 % interval.
    pub low: Option<f64>,
    /// Upper end of the 95 % interval.
    pub high: Option<f64>,
}

impl Estimate {
    const NONE: Estimate = Estimate {
        value: None,
        low: None,
        high: None,
    };

    /// A proportion k/n with its Wilson interval (Wilson 1927; Brown, Cai & DasGupta 2001).
    pub fn proportion(k: u64, n: u64) -> Estimate {
        match echobench_stats::wilson_interval(k, n, CONFIDENCE) {
            Ok(ci) => Estimate {
                value: Some(k as f64 / n as f64),
                low: Some(ci.low),
                high: Some(ci.high),
            },
            Err(_) => Estimate::NONE,
        }
    }

    /// A rate k per `hours` with its exact Garwood interval (Garwood 1936).
    pub fn rate(k: u64, hours: f64) -> Estimate {
        match echobench_stats::garwood_interval(k, hours, CONFIDENCE) {
            Ok(ci) => Estimate {
                value: Some(k as f64 / hours),
                low: Some(ci.low),
                high: Some(ci.high),
            },
            Err(_) => Estimate::NONE,
        }
    }
}

/// Counts and rates of one slice of a run at one threshold.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Outcome {
    /// Target events.
    pub events: u64,
    /// Of those, detected.
    pub detected: u64,
    /// Detection probability per event, Wilson interval.
    pub pd: Estimate,
    /// False alarms.
    pub false_alarms: u64,
    /// Noise-only exposure, hours.
    pub exposure_hours: f64,
    /// False alarms per hour, exact Poisson interval.
    pub false_alarms_per_hour: Estimate,
    /// One-sided 95 % upper bound of the false-alarm rate, per hour.
    pub false_alarms_per_hour_upper: Option<f64>,
}

/// The counts and rates of a slice: `detected` of `events` (Pd, Clopper–Pearson) and
/// `false_alarms` in `exposure_ns` of noise-only time (per hour, Garwood).
pub fn outcome(events: u64, detected: u64, false_alarms: u64, exposure_ns: u64) -> Outcome {
    let hours = exposure_ns as f64 / 3.6e12;
    Outcome {
        events,
        detected,
        pd: Estimate::proportion(detected, events),
        false_alarms,
        exposure_hours: hours,
        false_alarms_per_hour: Estimate::rate(false_alarms, hours),
        false_alarms_per_hour_upper: echobench_stats::garwood_upper_bound(
            false_alarms,
            hours,
            CONFIDENCE,
        )
        .ok(),
    }
}

/// One scene variant at one operating point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SceneOutcome {
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// `target` or `nuisance`.
    pub label: String,
    /// Test trials.
    pub trials: u64,
    /// The counts and rates.
    #[serde(flatten)]
    pub outcome: Outcome,
    /// Median latency of detected events, s.
    pub latency_median_s: Option<f64>,
    /// Time the alarm condition held on noise-only time, s.
    pub false_on_s: f64,
}

/// One nuisance room's calibration at an operating threshold.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RoomRate {
    /// `scene` or `scene @ sweep value`.
    pub room: String,
    /// Calibration false alarms at the threshold.
    pub false_alarms: u64,
    /// Calibration noise-only exposure, hours.
    pub exposure_hours: f64,
    /// Calibration false alarms per hour, exact Poisson interval.
    pub false_alarms_per_hour: Estimate,
}

/// A detector at one operating threshold.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct OperatingSummary {
    /// The false-alarm rate the threshold was chosen for on the calibration trials, per hour.
    pub target_false_alarms_per_hour: f64,
    /// The threshold.
    pub threshold: f64,
    /// False alarms in calibration at that threshold.
    pub calibration_false_alarms: u64,
    /// Calibration noise-only exposure, hours.
    pub calibration_exposure_hours: f64,
    /// How the threshold was chosen: `worst_room` or `pooled`.
    pub rule: String,
    /// The room whose calibration rate set the threshold (worst-room rule).
    pub limiting_room: Option<String>,
    /// Each nuisance room in calibration at this threshold.
    pub calibration_rooms: Vec<RoomRate>,
    /// Whether the calibration can show the target is met: every room (or, pooled, the
    /// pooled time) has at least −ln(0.05)/target hours, the exposure in which zero
    /// alarms put the one-sided 95 % upper bound of the rate at the target.
    pub resolved: bool,
    /// Of the test false alarms, re-counts of a stuck alarm (one per hold period).
    pub stuck_recounts: u64,
    /// Time the alarm condition held on test noise-only time, hours.
    pub false_on_hours: f64,
    /// Test-trial results, all scenes pooled.
    #[serde(flatten)]
    pub outcome: Outcome,
    /// Median latency from event onset, s, and its distribution-free 95 % interval.
    pub latency_median_s: Option<f64>,
    /// Interval of the median latency (order statistics).
    pub latency_median_interval_s: Option<(f64, f64)>,
    /// 90th percentile of latency, s.
    pub latency_p90_s: Option<f64>,
    /// False alarms by the nuisance source active at their time; `none` when nothing was.
    pub false_alarms_by_source: BTreeMap<String, u64>,
    /// Per scene variant.
    pub by_scene: Vec<SceneOutcome>,
    /// The product's rare events at this threshold and its rate with them (absent when the
    /// suite declares none).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rare_events: Option<crate::rare_events::RareEvents>,
}

/// The closed-form operating point of a CFAR-type detector against the measured rate.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct NominalSummary {
    /// Threshold from the closed form.
    pub threshold: f64,
    /// Per-frame Pfa the closed form promises.
    pub nominal_frame_pfa: f64,
    /// Measured per-frame exceedance outside event windows, all nuisance scenes pooled, with its Clopper–Pearson interval.
    pub measured_frame_pfa: Estimate,
    /// Frames counted.
    pub noise_frames: u64,
    /// Per scene variant: (scene, sweep value, measured Pfa).
    pub by_scene: Vec<(String, Option<String>, Estimate)>,
}

/// Everything about one detector on one product.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DetectorSummary {
    /// The product.
    pub product: String,
    /// Label in the suite.
    pub label: String,
    /// Plugin id.
    pub plugin: String,
    /// Parameters as used.
    pub params: BTreeMap<String, String>,
    /// Trials with a target scene label.
    pub positive_trials: u64,
    /// Trials with a nuisance label.
    pub negative_trials: u64,
    /// Trial-level AUC of the maximum score (Mann–Whitney; Hanley & McNeil 1982).
    pub trial_auc: Option<f64>,
    /// Its standard error (Hanley & McNeil 1982).
    pub trial_auc_se: Option<f64>,
    /// One entry per target false-alarm rate.
    pub operating_points: Vec<OperatingSummary>,
    /// Closed-form operating point, for detectors that have one.
    pub nominal: Option<NominalSummary>,
    /// Trials on which the detector failed.
    pub failures: Vec<crate::runner::Failure>,
    /// State memory and arithmetic per sample the plugin declares.
    pub declared_cost: Option<crate::runner::DeclaredCost>,
    /// Presence products: what the output pin did (`null` for intrusion products).
    #[serde(default)]
    pub presence: Option<crate::presence_summary::PresenceVerdict>,
    /// Thresholds for one false alarm per hour, day, week and month by tail extrapolation
    /// of the rooms' calibration, beside the counted ones.
    #[serde(default)]
    pub rare_thresholds: Vec<crate::rare_rates::RareThreshold>,
}

/// The run's summary (`summary.json`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Summary {
    /// Schema version of this file.
    pub schema: u32,
    /// Suite name.
    pub suite: String,
    /// Seed.
    pub seed: u64,
    /// Test trials.
    pub test_trials: u64,
    /// Hours of test signal.
    pub test_signal_hours: f64,
    /// Alarm hold, s.
    pub hold_s: f64,
    /// M-of-N, if used.
    pub m_of_n: Option<(u32, u32)>,
    /// Early and late tolerance of event matching, s.
    pub event_tolerance_s: (f64, f64),
    /// Absolute false-alarm budget for the gate, per hour.
    pub false_alarm_budget_per_hour: Option<f64>,
    /// The gate judges the budget by the calibration rooms' tail fit (`calibration_tail`)
    /// instead of the test trials' counts.
    #[serde(default)]
    pub budget_from_tail: bool,
    /// The products, in suite order.
    pub products: Vec<ProductSummary>,
    /// Per product and detector, product by product.
    pub detectors: Vec<DetectorSummary>,
    /// Why a detector misses a target scene variant, for every cell of the detection
    /// tables below Pd 0.5 at the first target rate (computed, see [`miss_reasons`]).
    pub miss_reasons: Vec<MissReason>,
    /// The cautions that go with every result.
    pub cautions: String,
}

/// Why one detector misses one target scene variant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MissReason {
    /// Product.
    pub product: String,
    /// Detector label.
    pub detector: String,
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// Pd at the operating threshold.
    pub pd: f64,
    /// The kind: `out of band`, `masked`, `out of range`, `no event`.
    pub kind: String,
    /// The reason as printed, with its numbers.
    pub reason: String,
}

/// One product: its module and its scenes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ProductSummary {
    /// Name.
    pub name: String,
    /// Free text.
    pub about: String,
    /// `intrusion` or `presence`.
    #[serde(default)]
    pub kind: String,
    /// Carrier, Hz.
    pub carrier_hz: f64,
    /// ADC sample rate, Hz.
    pub sample_rate_hz: f64,
    /// `real` or `iq`.
    pub output: String,
    /// Threshold rule: `worst_room` or `pooled`.
    pub threshold_rule: String,
    /// Target scene variants (`scene` or `scene @ value`).
    pub target_scenes: Vec<String>,
    /// Nuisance scene variants (rooms).
    pub nuisance_scenes: Vec<String>,
    /// Its rare events (nuisance scenes with `occurrences_per_day`), not among the rooms.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub rare_events: Vec<String>,
}

/// The cautions printed with every result.
pub const CAUTIONS: &str = "Simulated results do not certify a product. Motion sensing used for safety (machine guarding, automatic doors) needs certified equipment and the local standards; radio emission rules are local. Defer to local codes and licensed practice.";

fn latency_stats(latencies_ms: &[i64]) -> (Option<f64>, Option<(f64, f64)>, Option<f64>) {
    let seconds: Vec<f64> = latencies_ms.iter().map(|&l| l as f64 / 1e3).collect();
    let median = echobench_stats::median(&seconds).ok();
    let interval = echobench_stats::median_confidence_interval(&seconds, CONFIDENCE)
        .ok()
        .map(|m| (m.low, m.high));
    let p90 = echobench_stats::quantile(&seconds, 0.9).ok();
    (median, interval, p90)
}

fn summarise_detector(d: &DetectorTally) -> DetectorSummary {
    let mut positives = Vec::new();
    let mut negatives = Vec::new();
    for v in &d.variants {
        // A rare event's occurrences are judged apart (`rare_events`), not as room time.
        let list = match v.label.as_str() {
            "target" => &mut positives,
            "nuisance" => &mut negatives,
            _ => continue,
        };
        list.extend(v.max_scores.iter().map(|(_, s)| *s));
    }
    let auc = (!positives.is_empty() && !negatives.is_empty())
        .then(|| echobench_stats::auc_mann_whitney(&positives, &negatives));
    let auc_se = auc.and_then(|a| {
        echobench_stats::auc_standard_error_hanley_mcneil(a, positives.len(), negatives.len())
    });
    let declared_cost = d.cost;
    let operating_points: Vec<OperatingSummary> = d
        .operating
        .iter()
        .enumerate()
        .map(|(o, op)| {
            let mut events = 0;
            let mut detected = 0;
            let mut false_alarms = 0;
            let mut exposure_ns = 0;
            let mut latencies = Vec::new();
            let mut by_source: BTreeMap<String, u64> = BTreeMap::new();
            let by_scene = d
                .variants
                .iter()
                .map(|v: &VariantTally| {
                    let t = &v.operating[o];
                    events += v.events;
                    detected += t.detected;
                    false_alarms += t.false_alarms;
                    exposure_ns += v.exposure_ns;
                    latencies.extend_from_slice(&t.latencies_ms);
                    for (k, n) in &t.false_alarms_by_source {
                        *by_source.entry(k.clone()).or_default() += n;
                    }
                    SceneOutcome {
                        scene: v.scene.clone(),
                        sweep_value: v.sweep_value.clone(),
                        label: v.label.clone(),
                        trials: v.trials,
                        outcome: outcome(v.events, t.detected, t.false_alarms, v.exposure_ns),
                        latency_median_s: latency_stats(&t.latencies_ms).0,
                        false_on_s: t.false_on_ns as f64 * 1e-9,
                    }
                })
                .collect();
            latencies.sort_unstable();
            let (median, interval, p90) = latency_stats(&latencies);
            let calibration_rooms: Vec<RoomRate> = op
                .rooms
                .iter()
                .map(|r| {
                    let hours = r.exposure_ns as f64 / 3.6e12;
                    RoomRate {
                        room: r.name(),
                        false_alarms: r.false_alarms,
                        exposure_hours: hours,
                        false_alarms_per_hour: Estimate::rate(r.false_alarms, hours),
                    }
                })
                .collect();
            let pooled_hours = op.calibration_exposure_ns as f64 / 3.6e12;
            let resolved = if op.rule == echobench_suite::ThresholdRule::WorstRoom.name() {
                calibration_rooms
                    .iter()
                    .filter(|r| r.exposure_hours > 0.0)
                    .all(|r| resolves(r.exposure_hours, op.target_per_hour))
            } else {
                resolves(pooled_hours, op.target_per_hour)
            };
            let (mut stuck, mut false_on_ns) = (0, 0);
            for v in &d.variants {
                stuck += v.operating[o].stuck_recounts;
                false_on_ns += v.operating[o].false_on_ns;
            }
            let outcome = outcome(events, detected, false_alarms, exposure_ns);
            let rare_events =
                crate::rare_events::at_operating_point(d, o, &outcome.false_alarms_per_hour);
            OperatingSummary {
                target_false_alarms_per_hour: op.target_per_hour,
                threshold: op.threshold,
                calibration_false_alarms: op.calibration_false_alarms,
                calibration_exposure_hours: pooled_hours,
                rule: op.rule.clone(),
                limiting_room: op.limiting_room.clone(),
                calibration_rooms,
                resolved,
                stuck_recounts: stuck,
                false_on_hours: false_on_ns as f64 / 3.6e12,
                outcome,
                latency_median_s: median,
                latency_median_interval_s: interval,
                latency_p90_s: p90,
                false_alarms_by_source: by_source,
                by_scene,
                rare_events,
            }
        })
        .collect();
    let nominal = d.nominal.map(|(threshold, pfa)| {
        let mut frames = 0;
        let mut above = 0;
        let by_scene = d
            .variants
            .iter()
            .map(|v| {
                if v.label == "nuisance" {
                    frames += v.noise_frames;
                    above += v.noise_frames_above_nominal;
                }
                (
                    v.scene.clone(),
                    v.sweep_value.clone(),
                    clopper_pearson(v.noise_frames_above_nominal, v.noise_frames),
                )
            })
            .collect();
        NominalSummary {
            threshold,
            nominal_frame_pfa: pfa,
            measured_frame_pfa: clopper_pearson(above, frames),
            noise_frames: frames,
            by_scene,
        }
    });
    let rare_thresholds = crate::rare_rates::rare_thresholds(d, &operating_points);
    DetectorSummary {
        product: d.product.clone(),
        label: d.label.clone(),
        plugin: d.plugin.clone(),
        params: d.params.iter().cloned().collect(),
        positive_trials: positives.len() as u64,
        negative_trials: negatives.len() as u64,
        trial_auc: auc,
        trial_auc_se: auc_se,
        nominal,
        failures: d.failures.clone(),
        declared_cost,
        presence: crate::presence_summary::presence_verdict(d),
        rare_thresholds,
        operating_points,
    }
}

/// Whether `hours` of calibration can show a rate of `target` per hour: zero alarms in
/// `T` hours put the one-sided 95 % upper bound at −ln(0.05)/T ≈ 3.0/T (the Poisson
/// zero-count bound; Garwood 1936), so `T ≥ −ln(0.05)/target` is needed.
pub fn resolves(hours: f64, target_per_hour: f64) -> bool {
    hours * target_per_hour >= -(0.05f64.ln())
}

/// A false-alarm rate per hour as people say it: `1/h`, `1/day`, `1/week`, `1/month`
/// (30 days), or the number per hour.
pub fn rate_label(per_hour: f64) -> String {
    const NAMED: [(f64, &str); 4] = [
        (1.0, "1/h"),
        (1.0 / 24.0, "1/day"),
        (1.0 / 168.0, "1/week"),
        (1.0 / 720.0, "1/month"),
    ];
    NAMED
        .iter()
        .find(|(rate, _)| (per_hour / rate - 1.0).abs() < 1e-3)
        .map_or_else(|| format!("{per_hour}/h"), |(_, name)| (*name).to_string())
}

fn clopper_pearson(k: u64, n: u64) -> Estimate {
    match echobench_stats::clopper_pearson_interval(k, n, CONFIDENCE) {
        Ok(ci) => Estimate {
            value: Some(k as f64 / n as f64),
            low: Some(ci.low),
            high: Some(ci.high),
        },
        Err(_) => Estimate::NONE,
    }
}

/// Builds the summary.
pub fn summarise(tallies: &Tallies, suite: &Suite) -> Summary {
    Summary {
        schema: SCHEMA_VERSION,
        suite: tallies.suite.clone(),
        seed: tallies.seed,
        test_trials: tallies.test_trials,
        test_signal_hours: tallies.test_signal_ms as f64 / 3.6e6,
        hold_s: suite.alarm.hold_s,
        m_of_n: suite.alarm.m_of_n,
        event_tolerance_s: (suite.scoring.early_s, suite.scoring.late_s),
        false_alarm_budget_per_hour: suite.scoring.false_alarm_budget_per_hour,
        budget_from_tail: suite.scoring.budget_from_tail,
        products: suite
            .products
            .iter()
            .map(|p| summarise_product(p, suite))
            .collect(),
        detectors: tallies.detectors.iter().map(summarise_detector).collect(),
        miss_reasons: miss_reasons(tallies, suite),
        cautions: CAUTIONS.to_string(),
    }
}

/// Whether an operating point's test false-alarm rate is *shown* to be above its target:
/// the lower end of its 95 % interval is over the target. A short test run with one false
/// alarm is not over (its point estimate may be); the ranking and the report use this.
pub fn over_target(op: &OperatingSummary) -> bool {
    op.outcome
        .false_alarms_per_hour
        .low
        .is_some_and(|low| low > op.target_false_alarms_per_hour)
}

/// Pd below which a detection-table cell gets a reason: a detector that misses more
/// events than it finds has a cause to name (a choice of ours, not a standard).
pub const MISS_PD: f64 = 0.5;

/// How much a scene's Pd must rise without a room before that room is named as masking
/// it: a quarter of the events, more than the 95 % Wilson half-width of 24 trials' Pd near
/// 0.5 (±0.19), so the rise is not noise.
const MASKING_RISE: f64 = 0.25;

/// Why each detector misses each target scene variant it detects with Pd below
/// [`MISS_PD`] at the first target rate. The reasons are computed, in this order:
///
/// 1. **out of band**: the suite's coverage check found the detector's motion bands miss
///    the scene's Doppler (or a nuisance band holds the torso line, or it aliases);
/// 2. **masked by a room**: under the worst-room rule, the room that set the threshold is
///    dropped and the threshold the other rooms allow is taken from the calibration
///    counts; if the scene's test Pd there (from the grid tallies) reaches [`MISS_PD`] and
///    rises by at least 0.25, that room masks the target;
/// 3. **out of range**: even at the threshold the quietest room alone allows, the test Pd
///    stays below [`MISS_PD`]: the target's echo is too weak for the detector where it
///    walks (too far, too far off the beam, or too slow a radial motion);
/// 4. otherwise **masked by several rooms** (the quietest room's threshold would detect it).
///
/// A variant with no event to detect (a person present but not moving) says so.
pub fn miss_reasons(tallies: &Tallies, suite: &Suite) -> Vec<MissReason> {
    let mut out = Vec::new();
    for d in &tallies.detectors {
        let Some(op) = d.operating.first() else {
            continue;
        };
        let target = op.target_per_hour;
        let meets = |r: &crate::runner::RoomGrid, g: usize| {
            let hours = r.exposure_ns as f64 / 3.6e12;
            hours > 0.0 && r.false_alarms[g] as f64 / hours <= target
        };
        let lowest_meeting = |rooms: &[&crate::runner::RoomGrid]| {
            (0..d.thresholds.len())
                .find(|&g| rooms.iter().all(|r| meets(r, g)))
                .unwrap_or(d.thresholds.len() - 1)
        };
        let measured: Vec<&crate::runner::RoomGrid> = d
            .calibration_rooms
            .iter()
            .filter(|r| r.exposure_ns > 0)
            .collect();
        // The quietest room: the one whose own target is met at the lowest threshold.
        let quiet = measured.iter().map(|r| lowest_meeting(&[*r])).min();
        let without_limiting = op.limiting_room.as_ref().map(|limiting| {
            let others: Vec<&crate::runner::RoomGrid> = measured
                .iter()
                .filter(|r| {
                    crate::runner::room_name(&r.scene, r.sweep_value.as_deref()) != *limiting
                })
                .copied()
                .collect();
            (limiting.clone(), lowest_meeting(&others))
        });
        for v in &d.variants {
            if v.label != "target" {
                continue;
            }
            let found = |kind: &str, pd: f64, reason: String| MissReason {
                product: d.product.clone(),
                detector: d.label.clone(),
                scene: v.scene.clone(),
                sweep_value: v.sweep_value.clone(),
                pd,
                kind: kind.to_string(),
                reason,
            };
            if v.trials > 0 && v.events == 0 {
                out.push(found(
                    "no event",
                    0.0,
                    "no event to detect: the person never moves inside the zone (present, not moving)".into(),
                ));
                continue;
            }
            let pd_at = |g: usize| v.detected[g] as f64 / v.events.max(1) as f64;
            let pd =
                v.operating.first().map_or(0.0, |t| t.detected as f64) / v.events.max(1) as f64;
            if v.events == 0 || pd >= MISS_PD {
                continue;
            }
            if let Some(c) = suite.coverage.iter().find(|c| {
                c.detector == d.label && c.scene == v.scene && c.sweep_value == v.sweep_value
            }) {
                out.push(found("out of band", pd, c.short.clone()));
                continue;
            }
            if let Some((room, g)) = &without_limiting {
                let without = pd_at(*g);
                if *g < op.grid_index && without >= MISS_PD && without >= pd + MASKING_RISE {
                    out.push(found(
                        "masked",
                        pd,
                        format!("masked by `{room}` (Pd {without:.2} at the threshold the other rooms allow)"),
                    ));
                    continue;
                }
            }
            match quiet {
                Some(g) if pd_at(g) < MISS_PD => out.push(found(
                    "out of range",
                    pd,
                    format!(
                        "out of range: too weak even at the quietest room's threshold (Pd {:.2})",
                        pd_at(g)
                    ),
                )),
                Some(g) => out.push(found(
                    "masked",
                    pd,
                    format!(
                        "masked by several rooms (Pd {:.2} at the quietest room's threshold)",
                        pd_at(g)
                    ),
                )),
                None => {}
            }
        }
    }
    out
}

fn summarise_product(product: &echobench_suite::Product, suite: &Suite) -> ProductSummary {
    let scenes: Vec<&echobench_suite::SuiteScene> = suite
        .scenes
        .iter()
        .filter(|s| s.product == product.name)
        .collect();
    let sensor = scenes.first().map(|s| &s.variants[0].scene.sensor);
    let rooms = |label: echobench_suite::SceneLabel, event: bool| {
        scenes
            .iter()
            .filter(|s| s.label == label && s.occurrences_per_day.is_some() == event)
            .flat_map(|s| {
                s.variants
                    .iter()
                    .map(|v| crate::runner::room_name(&s.id, v.sweep_value.as_deref()))
            })
            .collect()
    };
    ProductSummary {
        name: product.name.clone(),
        about: product.about.clone(),
        kind: product.kind.name().into(),
        carrier_hz: sensor.map_or(0.0, |s| s.carrier_hz),
        sample_rate_hz: sensor.map_or(0.0, |s| s.sample_rate_hz),
        output: match sensor.map(|s| s.output) {
            Some(echobench_core::Channels::Iq) => "iq".into(),
            _ => "real".into(),
        },
        threshold_rule: suite.scoring.threshold_rule.name().into(),
        target_scenes: rooms(echobench_suite::SceneLabel::Target, false),
        nuisance_scenes: rooms(echobench_suite::SceneLabel::Nuisance, false),
        rare_events: rooms(echobench_suite::SceneLabel::Nuisance, true),
    }
}
