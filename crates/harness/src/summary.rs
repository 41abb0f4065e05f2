//! From tallies to the numbers a reader wants: ROC tables, operating points,
//! breakdowns, each rate with its interval; and the files that hold them.
//!
//! Everything here is a pure function of [`Tallies`] (integer counts), so a
//! merged set of shards gives byte-identical outputs to the unsharded run.

use crate::runner::{DetectorTally, Tallies, Timing, VariantTally, SCHEMA_VERSION};
use crate::suite::Suite;
use echobench_core::atomic::write_atomically;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::io::{self, Write};
use std::path::Path;

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

fn outcome(events: u64, detected: u64, false_alarms: u64, exposure_ns: u64) -> Outcome {
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

/// Everything about one detector.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DetectorSummary {
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
    /// Per detector.
    pub detectors: Vec<DetectorSummary>,
    /// The cautions that go with every result.
    pub cautions: String,
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
        let list = if v.label == "target" {
            &mut positives
        } else {
            &mut negatives
        };
        list.extend(v.max_scores.iter().map(|(_, s)| *s));
    }
    let auc = (!positives.is_empty() && !negatives.is_empty())
        .then(|| echobench_stats::auc_mann_whitney(&positives, &negatives));
    let auc_se = auc.and_then(|a| {
        echobench_stats::auc_standard_error_hanley_mcneil(a, positives.len(), negatives.len())
    });
    let declared_cost = d.cost;
    let operating_points = d
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
                    }
                })
                .collect();
            latencies.sort_unstable();
            let (median, interval, p90) = latency_stats(&latencies);
            OperatingSummary {
                target_false_alarms_per_hour: op.target_per_hour,
                threshold: op.threshold,
                calibration_false_alarms: op.calibration_false_alarms,
                calibration_exposure_hours: op.calibration_exposure_ns as f64 / 3.6e12,
                outcome: outcome(events, detected, false_alarms, exposure_ns),
                latency_median_s: median,
                latency_median_interval_s: interval,
                latency_p90_s: p90,
                false_alarms_by_source: by_source,
                by_scene,
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
    DetectorSummary {
        label: d.label.clone(),
        plugin: d.plugin.clone(),
        params: d.params.iter().cloned().collect(),
        positive_trials: positives.len() as u64,
        negative_trials: negatives.len() as u64,
        trial_auc: auc,
        trial_auc_se: auc_se,
        operating_points,
        nominal,
        failures: d.failures.clone(),
        declared_cost,
    }
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
        detectors: tallies.detectors.iter().map(summarise_detector).collect(),
        cautions: CAUTIONS.to_string(),
    }
}

fn opt(x: Option<f64>) -> String {
    x.map_or_else(String::new, |v| format!("{v}"))
}

/// Writes `roc.csv`: one row per detector and grid threshold, all scenes pooled.
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_roc_csv(path: &Path, tallies: &Tallies) -> io::Result<()> {
    write_atomically(path, |w| {
        writeln!(w, "detector,threshold,events,detected,pd,pd_low,pd_high,false_alarms,exposure_h,false_alarms_per_hour,fa_per_hour_low,fa_per_hour_high,retriggers")?;
        for d in &tallies.detectors {
            let events: u64 = d.variants.iter().map(|v| v.events).sum();
            let exposure: u64 = d.variants.iter().map(|v| v.exposure_ns).sum();
            for (g, threshold) in d.thresholds.iter().enumerate() {
                let detected: u64 = d.variants.iter().map(|v| v.detected[g]).sum();
                let fa: u64 = d.variants.iter().map(|v| v.false_alarms[g]).sum();
                let retriggers: u64 = d.variants.iter().map(|v| v.retriggers[g]).sum();
                let o = outcome(events, detected, fa, exposure);
                writeln!(
                    w,
                    "{},{},{},{},{},{},{},{},{},{},{},{},{}",
                    d.label,
                    threshold,
                    events,
                    detected,
                    opt(o.pd.value),
                    opt(o.pd.low),
                    opt(o.pd.high),
                    fa,
                    o.exposure_hours,
                    opt(o.false_alarms_per_hour.value),
                    opt(o.false_alarms_per_hour.low),
                    opt(o.false_alarms_per_hour.high),
                    retriggers
                )?;
            }
        }
        Ok(())
    })
}

/// Writes `events.csv`: one row per detector, operating point and scene variant.
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_events_csv(path: &Path, summary: &Summary) -> io::Result<()> {
    write_atomically(path, |w| {
        writeln!(w, "detector,target_fa_per_hour,threshold,scene,sweep_value,label,trials,events,detected,pd,pd_low,pd_high,false_alarms,exposure_h,false_alarms_per_hour,fa_per_hour_low,fa_per_hour_high,latency_median_s")?;
        for d in &summary.detectors {
            for op in &d.operating_points {
                for s in &op.by_scene {
                    let o = &s.outcome;
                    writeln!(
                        w,
                        "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}",
                        d.label,
                        op.target_false_alarms_per_hour,
                        op.threshold,
                        s.scene,
                        s.sweep_value.clone().unwrap_or_default(),
                        s.label,
                        s.trials,
                        o.events,
                        o.detected,
                        opt(o.pd.value),
                        opt(o.pd.low),
                        opt(o.pd.high),
                        o.false_alarms,
                        o.exposure_hours,
                        opt(o.false_alarms_per_hour.value),
                        opt(o.false_alarms_per_hour.low),
                        opt(o.false_alarms_per_hour.high),
                        opt(s.latency_median_s)
                    )?;
                }
            }
        }
        Ok(())
    })
}

/// Writes any serializable value as pretty JSON, atomically.
///
/// # Errors
/// I/O or serialization errors, naming the file.
pub fn write_json<T: Serialize>(path: &Path, value: &T) -> io::Result<()> {
    write_atomically(path, |w| {
        serde_json::to_writer_pretty(&mut *w, value).map_err(io::Error::other)?;
        writeln!(w)
    })
}

fn fmt_rate(e: &Estimate) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
        _ => "—".into(),
    }
}

fn fmt_pd(e: &Estimate) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
        _ => "—".into(),
    }
}

/// The console table: one block per detector.
pub fn console_table(summary: &Summary, timing: Option<&Timing>) -> String {
    let mut out = String::new();
    out.push_str(&format!(
        "suite `{}`, seed {}: {} test trials, {:.2} h of signal; 95 % intervals\n\n",
        summary.suite, summary.seed, summary.test_trials, summary.test_signal_hours
    ));
    out.push_str(&format!(
        "{:<20} {:>11} {:>20} {:>20} {:>9} {:>20}\n",
        "detector",
        "trial AUC",
        "Pd @ 1st target",
        "Pd @ 2nd target",
        "latency",
        "FA/h @ 1st target"
    ));
    for d in &summary.detectors {
        let auc = d.trial_auc.map_or("—".into(), |a| format!("{a:.3}"));
        let pd = |i: usize| {
            d.operating_points
                .get(i)
                .map_or("—".into(), |o| fmt_pd(&o.outcome.pd))
        };
        let latency = d
            .operating_points
            .first()
            .and_then(|o| o.latency_median_s)
            .map_or("—".into(), |l| format!("{l:.2} s"));
        let fa = d
            .operating_points
            .first()
            .map_or("—".into(), |o| fmt_rate(&o.outcome.false_alarms_per_hour));
        out.push_str(&format!(
            "{:<20} {:>11} {:>20} {:>20} {:>9} {:>20}\n",
            d.label,
            auc,
            pd(0),
            pd(1),
            latency,
            fa
        ));
    }
    out.push('\n');
    if let Some(first) = summary
        .detectors
        .first()
        .and_then(|d| d.operating_points.first())
    {
        out.push_str(&format!(
            "targets: {} false alarms per hour",
            first.target_false_alarms_per_hour
        ));
        if let Some(second) = summary
            .detectors
            .first()
            .and_then(|d| d.operating_points.get(1))
        {
            out.push_str(&format!(" and {:.4}", second.target_false_alarms_per_hour));
        }
        out.push_str(&format!(
            "; thresholds chosen on {:.2} h of calibration noise-only time",
            first.calibration_exposure_hours
        ));
        let too_short = summary
            .detectors
            .iter()
            .flat_map(|d| &d.operating_points)
            .any(|o| o.target_false_alarms_per_hour * o.calibration_exposure_hours < 1.0);
        if too_short {
            out.push_str(
                ",\n  too short to tell targets below one alarm per calibration period apart (their threshold is the lowest with no calibration alarm): add calibration trials to separate them",
            );
        }
        out.push('\n');
    }
    out.push_str("false alarms at the 1st target, by the nuisance active at the time:\n");
    for d in &summary.detectors {
        if let Some(op) = d.operating_points.first() {
            let parts: Vec<String> = op
                .false_alarms_by_source
                .iter()
                .map(|(k, n)| {
                    format!(
                        "{k} {:.2}/h",
                        *n as f64 / op.outcome.exposure_hours.max(1e-12)
                    )
                })
                .collect();
            out.push_str(&format!(
                "  {:<20} {}\n",
                d.label,
                if parts.is_empty() {
                    "none".to_string()
                } else {
                    parts.join(", ")
                }
            ));
        }
    }
    for d in &summary.detectors {
        if let Some(n) = &d.nominal {
            out.push_str(&format!(
                "{}: nominal per-frame Pfa {:.2e} at threshold {:.3}; measured on nuisance scenes {}\n",
                d.label,
                n.nominal_frame_pfa,
                n.threshold,
                match (n.measured_frame_pfa.value, n.measured_frame_pfa.low, n.measured_frame_pfa.high) {
                    (Some(v), Some(l), Some(h)) => format!("{v:.2e} [{l:.2e}, {h:.2e}] over {} frames", n.noise_frames),
                    _ => "—".into(),
                }
            ));
        }
        if !d.failures.is_empty() {
            out.push_str(&format!(
                "{}: FAILED on {} trials, e.g. {} trial {}: {}\n",
                d.label,
                d.failures.len(),
                d.failures[0].scene,
                d.failures[0].trial,
                d.failures[0].message
            ));
        }
    }
    if let Some(t) = timing {
        out.push_str(&format!(
            "\n{:.1} s wall; synthesis {:.1} s, detectors {:.1} s (summed over threads); {:.0} trial-seconds per wall second\n",
            t.wall_s,
            t.synthesis_s,
            t.detector_s.values().sum::<f64>(),
            summary.test_signal_hours * 3600.0 / t.wall_s.max(1e-9)
        ));
    }
    out.push_str(&format!("\n{CAUTIONS}\n"));
    out
}
