//! The regression gate: is a candidate run worse than a baseline run of the same suite?
//!
//! The candidate is scored at the baseline's stored operating thresholds (`echobench run
//! --against B` pins them, see [`pin_to_baseline`]), so both runs are judged at one fixed
//! threshold per target rate, the way a threshold ships in firmware. Then, per detector,
//! operating point and scene group (all scenes pooled, and each scene):
//!
//! - **false-alarm rate**: the exact one-sided conditional test of the two Poisson counts against a
//!   ratio margin ρ₀ (Przyborowski & Wilenski 1940; Gu et al. 2008;
//!   docs/reference/statistics.md#s8), so only a rise larger than ρ₀ that is also significant
//!   fails;
//! - **false alarms, paired trials**: with the same seeds both runs see the same signals
//!   (common random numbers), and the exact McNemar test on the trials that alarm in one run
//!   only catches small changes the unpaired test cannot see (docs/reference/statistics.md#s8);
//! - **false-alarm budget, three-way**: the candidate's pooled rate against the suite's
//!   absolute budget, from both one-sided Garwood (1936) bounds at `budget_confidence`:
//!   **pass** when the upper bound is under the budget, **regression** when the lower bound
//!   is over it, **inconclusive** otherwise — too little noise-only time to tell, which is
//!   not a regression (it fails the gate only with `require_conclusive`). An inconclusive
//!   check states the exposure that would settle it if false alarms keep coming at the
//!   observed rate (`echobench_stats::exposure_to_resolve_rate`; with no false alarm the
//!   closed form −ln(1 − c)/budget, 3.0/budget hours at 95 %);
//! - **detection**: a drop in Pd, by Fisher's exact test on missed events, and paired, by
//!   McNemar on the trials with a missed event.
//!
//! Holm's step-down correction (Holm 1979) runs within each comparison key (a detector, see
//! [`comparison_key`]) and kind of check, across its groups and operating points: a developer
//! who changes one detector is judged on that detector's family of tests, at the stated
//! significance overall.
//!
//! **Holm and the budget's two one-sided tests.** The budget check is two one-sided tests,
//! `H₀⁺: rate ≥ budget` (rejected: pass) and `H₀⁻: rate ≤ budget` (rejected: regression).
//! At any true rate at most one of the two wrong verdicts is possible, each with probability
//! at most 1 − c, so the pair needs no correction between its sides (the partitioning
//! principle, Finner & Strassburger 2002). Across a detector's operating points the sides
//! differ, and the gate treats them differently:
//! - *regression side*: the gate fails when **any** operating point is over budget, a union
//!   of tests whose family-wise false-fail rate Holm holds at 1 − c. The exact Poisson
//!   p-values `P(X ≥ k | budget·T)` are Holm-adjusted within the key's budget checks, and a
//!   lower bound over the budget that does not survive Holm is *inconclusive*;
//! - *pass side*: a detector meets its budget when **every** operating point does, an
//!   intersection–union test whose size is already at most 1 − c with each upper bound at its
//!   own level (Berger 1982), so the upper bounds are not adjusted (adjusting them would only
//!   make passing harder without protecting against anything).
//!
//! The budget's family level is 1 − `budget_confidence`, not `alpha`: α stays the level of
//! the tests of change against the baseline.

use crate::runner::{DetectorTally, RunDetector, Tallies, TrialOutcome, VariantTally};
use echobench_presence::PresenceTally;
use echobench_stats::{
    exposure_for_rate_claim, exposure_to_resolve_rate, fisher_exact_greater, garwood_lower_bound,
    garwood_upper_bound, holm_adjust, mcnemar_exact, rate_over_limit_p_value, rate_ratio_test,
    EventCount,
};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, Normal};
use std::collections::{BTreeMap, BTreeSet};
use std::fmt::Write as _;

/// How strict the gate is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct GateSettings {
    /// A false-alarm rise must exceed this ratio (ρ₀) to count.
    pub ratio_margin: f64,
    /// Family-wise significance of each detector's tests of one kind.
    pub alpha: f64,
    /// Absolute false-alarm budget, per hour (from the suite), if any.
    pub budget_per_hour: Option<f64>,
    /// One-sided confidence of each bound compared with the budget (1 − it is the budget
    /// family's level).
    pub budget_confidence: f64,
    /// Count an inconclusive budget check as a failure of the gate.
    pub require_conclusive: bool,
    /// Judge the budget by the candidate's calibration-tail rate at the pinned threshold
    /// (`DetectorTally::pinned_tail`) instead of its test-trial counts (the suite's
    /// `budget_evidence: calibration_tail`).
    pub budget_from_tail: bool,
}

impl Default for GateSettings {
    fn default() -> Self {
        // ρ₀ = 1.25 and α = 0.01: the recipe of docs/reference/statistics.md#s8.
        GateSettings {
            ratio_margin: 1.25,
            alpha: 0.01,
            budget_per_hour: None,
            budget_confidence: 0.95,
            require_conclusive: false,
            budget_from_tail: false,
        }
    }
}

/// What a check compares.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Metric {
    /// False alarms per hour, unpaired exact conditional test with a margin.
    FalseAlarmRate,
    /// Trials with a false alarm, paired exact McNemar test.
    FalseAlarmPaired,
    /// The candidate's false-alarm rate against the budget, from both one-sided bounds.
    FalseAlarmBudget,
    /// Fraction of target events detected, Fisher's exact test on misses.
    Detection,
    /// Trials with a missed event, paired exact McNemar test.
    DetectionPaired,
    /// Presence products: false switch-ons per empty hour, exact conditional test with a margin.
    FalseSwitchOns,
    /// Presence products: drop-outs per occupied hour, exact conditional test with a margin.
    Dropouts,
    /// Presence products: false-on time per empty hour, large-sample test of two weighted
    /// Poisson sums with a margin.
    FalseOnTime,
    /// A rare event (`occurrences_per_day`): occurrences that raised a false alarm, per
    /// occurrence, exact conditional test with a margin.
    RareEventAlarms,
}

impl Metric {
    /// A short name for tables and test-case names.
    pub fn name(self) -> &'static str {
        match self {
            Metric::FalseAlarmRate => "false-alarm rate",
            Metric::FalseAlarmPaired => "false alarms, paired",
            Metric::FalseAlarmBudget => "false-alarm budget",
            Metric::Detection => "detection",
            Metric::DetectionPaired => "detection, paired",
            Metric::FalseSwitchOns => "false switch-ons",
            Metric::Dropouts => "drop-outs",
            Metric::FalseOnTime => "false-on time",
            Metric::RareEventAlarms => "rare-event alarms",
        }
    }
}

/// The outcome of one check.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Verdict {
    /// No regression shown.
    Pass,
    /// A regression: the gate fails.
    Regression,
    /// Not enough exposure to tell (the budget check's bounds straddle the budget); the
    /// note names the exposure that would settle it.
    Inconclusive,
    /// Not testable here (no exposure, no events, runs not paired); see the note.
    NotTested,
}

/// What a candidate's tallies are compared with in the baseline, and the family of its
/// Holm correction: one detector on one product. Build it only with [`comparison_key`].
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub struct ComparisonKey {
    /// Product (sensor module).
    pub product: String,
    /// Detector label.
    pub detector: String,
}

impl ComparisonKey {
    /// How the key reads in tables: `product/detector`.
    pub fn label(&self) -> String {
        format!("{}/{}", self.product, self.detector)
    }

    /// The JUnit class name's tail: `product.detector` (dots separate levels there).
    pub fn junit_class(&self) -> String {
        format!("{}.{}", self.product, self.detector)
    }
}

/// The one place that says which baseline tallies a candidate's tallies are compared with:
/// baseline and candidate detectors with equal keys are compared, and each key is one Holm
/// family. A further dimension (e.g. a product) is a field of [`ComparisonKey`] and a line
/// here.
pub fn comparison_key(detector: &DetectorTally) -> ComparisonKey {
    ComparisonKey {
        product: detector.product.clone(),
        detector: detector.label.clone(),
    }
}

/// One comparison, with everything needed to see why it passed or failed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// What is compared (serialised as its fields, e.g. `detector`).
    #[serde(flatten)]
    pub key: ComparisonKey,
    /// What is compared.
    pub metric: Metric,
    /// The operating point's target false-alarm rate, per hour.
    pub target_per_hour: f64,
    /// The threshold both runs were scored at.
    pub threshold: f64,
    /// `all scenes` or a scene id.
    pub group: String,
    /// The baseline's side: its counts (or the budget) as numbers, and in words.
    pub baseline: CheckSide,
    /// The candidate's side.
    pub candidate: CheckSide,
    /// Candidate ÷ baseline (rates or Pd), when defined.
    pub ratio: Option<f64>,
    /// A bound: the ratio's one-sided lower bound (rate test) or the candidate rate's upper
    /// bound (budget).
    pub bound: Option<f64>,
    /// Budget check: the candidate rate's one-sided lower and upper bounds, per hour, each at
    /// `budget_confidence`.
    pub rate_bounds_per_hour: Option<[f64; 2]>,
    /// Budget check, inconclusive: the noise-only exposure, in hours, that would settle it
    /// if false alarms keep coming at the observed rate; `None` otherwise or when no
    /// exposure would (the rate equals the budget).
    pub needed_exposure_h: Option<f64>,
    /// One-sided p-value (budget check: of `rate ≤ budget`, the regression side).
    pub p_value: Option<f64>,
    /// Holm-adjusted p-value within the detector's family of this metric.
    pub adjusted_p: Option<f64>,
    /// The verdict.
    pub verdict: Verdict,
    /// Why, in a sentence.
    pub note: String,
}

/// A check's counts as numbers: `count` out of `of` (hours of exposure, events or trials, as
/// `unit` says), so a reader of `gate.json` need not parse the words.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Counts {
    /// The count (false alarms, detections, trials flagged; seconds of false-on time).
    pub count: f64,
    /// What it is counted over.
    pub of: f64,
    /// `h` (exposure hours), `events`, `trials` or `occurrences`.
    pub unit: &'static str,
}

fn counts(count: f64, of: f64, unit: &'static str) -> Option<Counts> {
    Some(Counts { count, of, unit })
}

/// One run's side of a check, as numbers and in words. In `gate.json` the numbers are
/// fields of their own (`count`, `of`, `unit`, `rate_per_hour`) and the words are `text`
/// only, so a reader never parses prose.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct CheckSide {
    /// The counts, when the check counts (absent in JSON otherwise).
    #[serde(flatten)]
    pub counts: Option<Counts>,
    /// The rate this side stands for, per hour, when it is a rate rather than counts: the
    /// budget of a budget check, or the calibration tail's rate at the pinned threshold.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rate_per_hour: Option<f64>,
    /// The same in words, for tables (`3 in 2.10 h`, `41 of 60 events`, `budget 2/h`).
    pub text: String,
}

impl CheckSide {
    /// A side of counts.
    fn counted(text: String, counts: Option<Counts>) -> CheckSide {
        CheckSide {
            counts,
            rate_per_hour: None,
            text,
        }
    }

    /// A side that is a rate per hour.
    fn rate(text: String, per_hour: f64) -> CheckSide {
        CheckSide {
            counts: None,
            rate_per_hour: Some(per_hour),
            text,
        }
    }
}

/// Every check of a gate run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GateReport {
    /// Suite name.
    pub suite: String,
    /// Seed of the baseline and of the candidate.
    pub seeds: (u64, u64),
    /// Whether paired tests ran (same suite and seed).
    pub paired: bool,
    /// The settings used.
    pub settings: GateSettings,
    /// All checks, by detector, operating point, metric, group.
    pub checks: Vec<Check>,
    /// Remarks that are not checks (new detectors, repeated thresholds).
    pub notes: Vec<String>,
}

/// Why two runs cannot be gated.
#[derive(Debug, Clone, PartialEq)]
pub struct GateError(pub String);

impl std::fmt::Display for GateError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for GateError {}

/// Pins each detector that the baseline also has (by label) to the baseline's operating
/// thresholds, so the run can be gated against it. Returns a remark per detector the
/// baseline lacks.
pub fn pin_to_baseline(detectors: &mut [RunDetector], baseline: &Tallies) -> Vec<String> {
    let mut notes = Vec::new();
    for d in detectors.iter_mut() {
        // By label and product, as `comparison_key` matches the tallies this run will
        // produce: each product has its own thresholds.
        d.pinned = baseline
            .detectors
            .iter()
            .filter(|b| b.label == d.label)
            .map(|b| {
                let points = b
                    .operating
                    .iter()
                    .map(|o| crate::runner::PinnedPoint {
                        target_per_hour: o.target_per_hour,
                        threshold: o.threshold,
                    })
                    .collect();
                (b.product.clone(), points)
            })
            .collect();
        if d.pinned.is_empty() {
            notes.push(format!(
                "detector `{}` is not in the baseline: it is run but not gated",
                d.label
            ));
        }
    }
    notes
}

/// Compares `candidate` with `baseline`.
///
/// # Errors
/// Different suites, a shard instead of a whole run, or a candidate that was not scored at
/// the baseline's thresholds (run it with `--against`).
pub fn gate(
    candidate: &Tallies,
    baseline: &Tallies,
    settings: &GateSettings,
) -> Result<GateReport, GateError> {
    if candidate.suite != baseline.suite {
        return Err(GateError(format!(
            "the run is of suite `{}` but the baseline of suite `{}`",
            candidate.suite, baseline.suite
        )));
    }
    for (what, t) in [("run", candidate), ("baseline", baseline)] {
        if !t.shards.is_empty() {
            return Err(GateError(format!(
                "the {what} holds only some shards: merge all of them first (`echobench merge`)"
            )));
        }
    }
    let paired = candidate.seed == baseline.seed;
    let mut checks = Vec::new();
    let mut notes = Vec::new();
    if baseline
        .detectors
        .iter()
        .any(|d| d.variants.iter().any(|v| v.label == "event"))
    {
        notes.push(
            "rare events (`occurrences_per_day`) are judged per occurrence (the share that raised a false alarm) and kept out of the pooled rate and the budget"
                .into(),
        );
    }
    if settings.budget_per_hour.is_none() {
        notes.push(
            "no false-alarm budget is set (suite `false_alarm_budget_per_hour` or --budget-per-hour): \
             the budget is not checked"
                .into(),
        );
    }
    if settings.budget_from_tail && settings.budget_per_hour.is_some() {
        notes.push(
            "the budget is judged by the calibration rooms at each pinned threshold (suite `budget_evidence: calibration_tail`): tail fit above each room's fit threshold, counted below, worst room"
                .into(),
        );
    }
    if !paired {
        notes.push(format!(
            "the runs used different seeds ({} and {}): paired tests are not possible",
            baseline.seed, candidate.seed
        ));
    }
    for c in &candidate.detectors {
        let key = comparison_key(c);
        if !baseline.detectors.iter().any(|b| comparison_key(b) == key) {
            notes.push(format!(
                "detector `{}` is new (not in the baseline): not gated",
                key.label()
            ));
        }
    }
    for b in &baseline.detectors {
        let key = comparison_key(b);
        let Some(c) = candidate
            .detectors
            .iter()
            .find(|c| comparison_key(c) == key)
        else {
            return Err(GateError(format!(
                "detector `{}` is in the baseline but not in the run",
                key.label()
            )));
        };
        let mut seen_thresholds: Vec<f64> = Vec::new();
        let mut detector_checks = Vec::new();
        let mut budget_inputs = Vec::new();
        for (o, op) in b.operating.iter().enumerate() {
            let Some(p) = c.pinned.iter().position(|p| {
                p.threshold == op.threshold && p.target_per_hour == op.target_per_hour
            }) else {
                return Err(GateError(format!(
                    "detector `{}`: the run was not scored at the baseline's threshold {} \
                     (target {}/h); make the run with `echobench run --against <the reference>`",
                    key.label(),
                    op.threshold,
                    op.target_per_hour
                )));
            };
            if seen_thresholds.contains(&op.threshold) {
                notes.push(format!(
                    "detector `{}`: the {}/h operating point has the same threshold as a \
                     higher-rate one; checked once",
                    key.label(),
                    op.target_per_hour
                ));
                continue;
            }
            seen_thresholds.push(op.threshold);
            let at = OperatingRef {
                key: &key,
                target_per_hour: op.target_per_hour,
                threshold: op.threshold,
            };
            for group in groups(b) {
                let mut pairs = matched_variants(b, c, group.as_deref())?;
                if group.is_none() {
                    // A rare event is scored per occurrence, never as steady noise time: it
                    // stays out of the pooled rate and the budget, as in the summary.
                    pairs.retain(|(vb, _)| vb.label != "event");
                }
                let is_event = !pairs.is_empty() && pairs.iter().all(|(vb, _)| vb.label == "event");
                let side = |pick: Side| sums(&pairs, o, p, pick);
                let (sb, sc) = (side(Side::Baseline), side(Side::Candidate));
                let name = group.clone().unwrap_or_else(|| "all scenes".into());
                if is_event {
                    let (xb, nb) = alarmed_occurrences(&pairs, o, p, Side::Baseline);
                    let (xc, nc) = alarmed_occurrences(&pairs, o, p, Side::Candidate);
                    detector_checks.push(occurrence_rise_check(
                        &at,
                        &name,
                        (xb, nb),
                        (xc, nc),
                        settings,
                    ));
                } else {
                    detector_checks.push(rate_check(&at, &name, &sb, &sc, settings));
                }
                detector_checks.push(paired_flags_check(
                    &at,
                    Metric::FalseAlarmPaired,
                    &name,
                    &pairs,
                    (o, p),
                    paired,
                    false_alarm_flags,
                    "alarmed falsely",
                ));
                if group.is_none() && settings.budget_per_hour.is_some() {
                    budget_inputs.push(BudgetInput {
                        index: detector_checks.len(),
                        false_alarms: sc.false_alarms,
                        exposure_h: sc.exposure_h,
                    });
                    let tail = c.pinned_tail.get(p).and_then(Option::as_ref);
                    detector_checks.push(budget_check(&at, &sc, tail, settings));
                }
                if let Some((pb, pc)) = presence_sums(&pairs, o, p) {
                    detector_checks.extend(presence_checks(&at, &name, &pb, &pc, settings));
                }
                if sb.events > 0 || sc.events > 0 {
                    detector_checks.push(detection_check(&at, &name, &sb, &sc));
                    detector_checks.push(paired_flags_check(
                        &at,
                        Metric::DetectionPaired,
                        &name,
                        &pairs,
                        (o, p),
                        paired,
                        missed_event_flags,
                        "missed an event",
                    ));
                }
            }
        }
        apply_holm(&mut detector_checks, settings.alpha);
        settle_budget(&mut detector_checks, &budget_inputs, settings);
        checks.extend(detector_checks);
    }
    Ok(GateReport {
        suite: candidate.suite.clone(),
        seeds: (baseline.seed, candidate.seed),
        paired,
        settings: *settings,
        checks,
        notes,
    })
}

struct OperatingRef<'a> {
    key: &'a ComparisonKey,
    target_per_hour: f64,
    threshold: f64,
}

impl OperatingRef<'_> {
    fn check(&self, metric: Metric, group: &str) -> Check {
        Check {
            key: self.key.clone(),
            metric,
            target_per_hour: self.target_per_hour,
            threshold: self.threshold,
            group: group.to_string(),
            baseline: CheckSide::default(),
            candidate: CheckSide::default(),
            ratio: None,
            bound: None,
            rate_bounds_per_hour: None,
            needed_exposure_h: None,
            p_value: None,
            adjusted_p: None,
            verdict: Verdict::NotTested,
            note: String::new(),
        }
    }
}

/// `None` is every scene pooled; then each scene id in suite order.
fn groups(b: &DetectorTally) -> Vec<Option<String>> {
    let mut out = vec![None];
    let mut seen = BTreeSet::new();
    for v in &b.variants {
        if seen.insert(v.scene.clone()) {
            out.push(Some(v.scene.clone()));
        }
    }
    out
}

/// Baseline and candidate tallies of the same scene variants.
fn matched_variants<'a>(
    b: &'a DetectorTally,
    c: &'a DetectorTally,
    group: Option<&str>,
) -> Result<Vec<(&'a VariantTally, &'a VariantTally)>, GateError> {
    b.variants
        .iter()
        .filter(|v| group.is_none_or(|g| v.scene == g))
        .map(|vb| {
            c.variants
                .iter()
                .find(|vc| vc.scene == vb.scene && vc.sweep_point == vb.sweep_point)
                .map(|vc| (vb, vc))
                .ok_or_else(|| {
                    GateError(format!(
                        "scene `{}` (sweep point {}) is in the baseline but not in the run",
                        vb.scene, vb.sweep_point
                    ))
                })
        })
        .collect()
}

#[derive(Clone, Copy)]
enum Side {
    Baseline,
    Candidate,
}

#[derive(Default)]
struct Sums {
    false_alarms: u64,
    exposure_h: f64,
    events: u64,
    detected: u64,
}

fn sums(pairs: &[(&VariantTally, &VariantTally)], o: usize, p: usize, side: Side) -> Sums {
    let mut s = Sums::default();
    let mut exposure_ns = 0u64;
    for (vb, vc) in pairs {
        let (v, t) = match side {
            Side::Baseline => (vb, &vb.operating[o]),
            Side::Candidate => (vc, &vc.pinned[p]),
        };
        s.false_alarms += t.false_alarms;
        s.events += v.events;
        s.detected += t.detected;
        exposure_ns += v.exposure_ns;
    }
    s.exposure_h = exposure_ns as f64 / 3.6e12;
    s
}

/// Occurrences of a rare event (one per test trial) that raised a false alarm, and all
/// occurrences, on one side at its operating point (baseline) or pinned threshold (candidate).
fn alarmed_occurrences(
    pairs: &[(&VariantTally, &VariantTally)],
    o: usize,
    p: usize,
    side: Side,
) -> (u64, u64) {
    pairs.iter().fold((0, 0), |(alarmed, all), (vb, vc)| {
        let trials = match side {
            Side::Baseline => &vb.operating[o].trials,
            Side::Candidate => &vc.pinned[p].trials,
        };
        (
            alarmed + trials.iter().filter(|t| t.false_alarms > 0).count() as u64,
            all + trials.len() as u64,
        )
    })
}

/// A one-sided test that the share of a rare event's occurrences raising a false alarm rose
/// by more than the ratio margin (its rate per day is the occurrence rate times that share,
/// so the same margin applies): the exact conditional test of two counts, each over its
/// number of occurrences. Treating the alarmed occurrences as Poisson counts is the usual
/// approximation for a small share (common practice); for a large share it overstates the
/// variance, so it errs toward passing, never toward a false regression.
fn occurrence_rise_check(
    at: &OperatingRef,
    group: &str,
    (b_alarmed, b_all): (u64, u64),
    (c_alarmed, c_all): (u64, u64),
    s: &GateSettings,
) -> Check {
    let mut check = at.check(Metric::RareEventAlarms, group);
    check.baseline = CheckSide::counted(
        format!("{b_alarmed} of {b_all} occurrences"),
        counts(b_alarmed as f64, b_all as f64, "occurrences"),
    );
    check.candidate = CheckSide::counted(
        format!("{c_alarmed} of {c_all} occurrences"),
        counts(c_alarmed as f64, c_all as f64, "occurrences"),
    );
    if b_all == 0 || c_all == 0 {
        check.note = "no occurrences in this group".into();
        return check;
    }
    ratio_test(
        check,
        (c_alarmed, c_all as f64),
        (b_alarmed, b_all as f64),
        s,
        "alarmed occurrences per occurrence, ratio",
    )
}

/// `check` with the exact conditional test of the candidate's count over its exposure
/// against the baseline's, one-sided, H0: ratio ≤ the margin; `what` names the ratio in the
/// note.
fn ratio_test(
    mut check: Check,
    (c_count, c_exposure): (u64, f64),
    (b_count, b_exposure): (u64, f64),
    s: &GateSettings,
    what: &str,
) -> Check {
    let candidate = EventCount {
        events: c_count,
        exposure: c_exposure,
    };
    let base = EventCount {
        events: b_count,
        exposure: b_exposure,
    };
    match rate_ratio_test(candidate, base, s.ratio_margin, 1.0 - s.alpha) {
        Ok(t) => {
            check.ratio = t.ratio.is_finite().then_some(t.ratio);
            check.bound = Some(t.lower_bound);
            check.p_value = Some(t.p_value);
            check.verdict = Verdict::Pass;
            check.note = format!(
                "exact conditional test of {what} > {} (one-sided)",
                s.ratio_margin
            );
        }
        Err(e) => check.note = format!("not tested: {e}"),
    }
    check
}

fn rate_words(k: u64, hours: f64) -> String {
    format!("{k} in {hours:.2} h")
}

fn rate_check(at: &OperatingRef, group: &str, b: &Sums, c: &Sums, s: &GateSettings) -> Check {
    count_rise_check(
        at,
        Metric::FalseAlarmRate,
        group,
        (b.false_alarms, b.exposure_h),
        (c.false_alarms, c.exposure_h),
        s,
        "no noise-only time in this group",
    )
}

/// The presence tallies of both runs summed over a group's variants, when both runs have
/// them (a presence product scored at the baseline's thresholds).
fn presence_sums(
    pairs: &[(&VariantTally, &VariantTally)],
    o: usize,
    p: usize,
) -> Option<(PresenceTally, PresenceTally)> {
    let mut b = PresenceTally::default();
    let mut c = PresenceTally::default();
    for (vb, vc) in pairs {
        b.merge(vb.presence.get(o)?);
        c.merge(vc.pinned_presence.get(p)?);
    }
    Some((b, c))
}

/// Fewest false-on episodes on a side before the large-sample false-on time test is run;
/// below it the normal approximation of a sum of a few episodes is poor, and the exact
/// test on false switch-ons (each episode starts with one, or with an exit) speaks instead.
/// Five is the usual floor for a normal approximation of a Poisson count (common practice).
const MIN_FALSE_ON_EPISODES: u64 = 5;

/// A presence product's checks: false switch-ons and drop-outs (exact conditional tests
/// of two Poisson counts with the ratio margin), and false-on time (a one-sided Wald test
/// of `rate_c ≤ ρ₀·rate_b` for two weighted Poisson sums, each with the compound-Poisson
/// variance Σ wᵢ² of Fay & Feuer 1997, §2).
fn presence_checks(
    at: &OperatingRef,
    group: &str,
    b: &PresenceTally,
    c: &PresenceTally,
    s: &GateSettings,
) -> Vec<Check> {
    let empty_h = |t: &PresenceTally| t.empty_ns as f64 / 3.6e12;
    let occupied_h = |t: &PresenceTally| t.occupied_ns() as f64 / 3.6e12;
    let mut out = vec![
        count_rise_check(
            at,
            Metric::FalseSwitchOns,
            group,
            (b.false_switch_ons, empty_h(b)),
            (c.false_switch_ons, empty_h(c)),
            s,
            "no empty time in this group",
        ),
        count_rise_check(
            at,
            Metric::Dropouts,
            group,
            (b.dropouts(), occupied_h(b)),
            (c.dropouts(), occupied_h(c)),
            s,
            "no occupied time in this group",
        ),
    ];
    let mut check = at.check(Metric::FalseOnTime, group);
    let words = |t: &PresenceTally| {
        format!(
            "{:.1} s in {:.2} h ({} episodes)",
            t.false_on_ns as f64 * 1e-9,
            empty_h(t),
            t.false_on_episodes
        )
    };
    check.baseline = CheckSide::counted(
        words(b),
        counts(b.false_on_ns as f64 * 1e-9, empty_h(b), "h"),
    );
    check.candidate = CheckSide::counted(
        words(c),
        counts(c.false_on_ns as f64 * 1e-9, empty_h(c), "h"),
    );
    if b.empty_ns == 0 || c.empty_ns == 0 {
        check.note = "no empty time in this group".into();
    } else if b.false_on_episodes.min(c.false_on_episodes) < MIN_FALSE_ON_EPISODES
        && c.false_on_ns as f64 / empty_h(c) <= s.ratio_margin * b.false_on_ns as f64 / empty_h(b)
    {
        // Not over the margin at all: nothing to test, whatever the sample size.
        check.verdict = Verdict::Pass;
        check.note = format!(
            "not above {} × the baseline's false-on time",
            s.ratio_margin
        );
    } else if b.false_on_episodes.min(c.false_on_episodes) < MIN_FALSE_ON_EPISODES {
        check.note = format!(
            "not tested: fewer than {MIN_FALSE_ON_EPISODES} false-on episodes on a side (the false switch-on test covers it)"
        );
    } else {
        // Rates in seconds per empty hour; variances of the sums in s².
        let (tb, tc) = (empty_h(b), empty_h(c));
        let (yb, yc) = (b.false_on_ns as f64 * 1e-9, c.false_on_ns as f64 * 1e-9);
        let (vb, vc) = (
            b.false_on_episode_sq_ns2 as f64 * 1e-18,
            c.false_on_episode_sq_ns2 as f64 * 1e-18,
        );
        let rho = s.ratio_margin;
        let difference = yc / tc - rho * yb / tb;
        let sd = (vc / (tc * tc) + rho * rho * vb / (tb * tb)).sqrt();
        let z = difference / sd;
        let p_value = 1.0 - Normal::new(0.0, 1.0).map_or(0.5, |n| n.cdf(z));
        check.ratio = (yb > 0.0).then(|| (yc / tc) / (yb / tb));
        check.p_value = Some(p_value);
        check.verdict = Verdict::Pass;
        check.note = format!(
            "large-sample test of false-on time per empty hour > {rho} × the baseline's (one-sided; weighted Poisson variance, Fay & Feuer 1997)"
        );
    }
    out.push(check);
    out
}

/// A one-sided test that a count per unit of exposure rose by more than the ratio margin:
/// the exact conditional test of two Poisson counts (Przyborowski & Wilenski 1940).
fn count_rise_check(
    at: &OperatingRef,
    metric: Metric,
    group: &str,
    (b_count, b_hours): (u64, f64),
    (c_count, c_hours): (u64, f64),
    s: &GateSettings,
    no_exposure: &str,
) -> Check {
    let mut check = at.check(metric, group);
    check.baseline = CheckSide::counted(
        rate_words(b_count, b_hours),
        counts(b_count as f64, b_hours, "h"),
    );
    check.candidate = CheckSide::counted(
        rate_words(c_count, c_hours),
        counts(c_count as f64, c_hours, "h"),
    );
    if b_hours <= 0.0 || c_hours <= 0.0 {
        check.note = no_exposure.into();
        return check;
    }
    ratio_test(
        check,
        (c_count, c_hours),
        (b_count, b_hours),
        s,
        "rate ratio",
    )
}

/// Per-trial outcomes of both runs, matched by variant and trial index.
fn paired_outcomes(
    pairs: &[(&VariantTally, &VariantTally)],
    o: usize,
    p: usize,
) -> Vec<(TrialOutcome, TrialOutcome)> {
    let mut out = Vec::new();
    for (vb, vc) in pairs {
        let candidate: BTreeMap<u64, TrialOutcome> =
            vc.pinned[p].trials.iter().map(|t| (t.trial, *t)).collect();
        for tb in &vb.operating[o].trials {
            if let Some(tc) = candidate.get(&tb.trial) {
                out.push((*tb, *tc));
            }
        }
    }
    out
}

fn paired_check(
    at: &OperatingRef,
    metric: Metric,
    group: &str,
    outcomes: &[(bool, bool)],
    what: &str,
) -> Check {
    let mut check = at.check(metric, group);
    let baseline_only = outcomes.iter().filter(|(b, c)| *b && !*c).count() as u64;
    let candidate_only = outcomes.iter().filter(|(b, c)| !*b && *c).count() as u64;
    // Each side counts the trials where only that run did `what`.
    check.baseline = CheckSide::counted(
        format!("{baseline_only} of {} trials", outcomes.len()),
        counts(baseline_only as f64, outcomes.len() as f64, "trials"),
    );
    check.candidate = CheckSide::counted(
        format!("{candidate_only} of {} trials", outcomes.len()),
        counts(candidate_only as f64, outcomes.len() as f64, "trials"),
    );
    if outcomes.is_empty() {
        check.note = "no paired trials".into();
        return check;
    }
    let t = mcnemar_exact(baseline_only, candidate_only);
    check.p_value = Some(t.one_sided_p);
    check.verdict = Verdict::Pass;
    check.note = format!(
        "exact McNemar test on the {} trials where only one run {what} (one-sided)",
        baseline_only + candidate_only
    );
    check
}

/// Which trials count for a paired check, and the flag each run raises on one.
type PairedFlag = fn(&TrialOutcome, &TrialOutcome) -> Option<(bool, bool)>;

/// A false alarm anywhere in the trial.
fn false_alarm_flags(b: &TrialOutcome, c: &TrialOutcome) -> Option<(bool, bool)> {
    Some((b.false_alarms > 0, c.false_alarms > 0))
}

/// A missed event, on trials that have events.
fn missed_event_flags(b: &TrialOutcome, c: &TrialOutcome) -> Option<(bool, bool)> {
    (b.events > 0 && c.events > 0).then_some((b.detected < b.events, c.detected < c.events))
}

#[allow(clippy::too_many_arguments)]
fn paired_flags_check(
    at: &OperatingRef,
    metric: Metric,
    group: &str,
    pairs: &[(&VariantTally, &VariantTally)],
    (o, p): (usize, usize),
    paired: bool,
    flag: PairedFlag,
    what: &str,
) -> Check {
    if !paired {
        let mut check = at.check(metric, group);
        check.note = "runs not paired (different seeds)".into();
        return check;
    }
    let flags: Vec<(bool, bool)> = paired_outcomes(pairs, o, p)
        .iter()
        .filter_map(|(b, c)| flag(b, c))
        .collect();
    paired_check(at, metric, group, &flags, what)
}

/// Where a budget check sits among a key's checks, and the candidate's count behind it, for
/// [`settle_budget`].
struct BudgetInput {
    index: usize,
    false_alarms: u64,
    exposure_h: f64,
}

/// The budget check's bounds and regression-side p-value; its verdict waits for Holm across
/// the key's budget checks ([`settle_budget`]).
fn budget_check(
    at: &OperatingRef,
    c: &Sums,
    tail: Option<&crate::rare_rates::RateAt>,
    s: &GateSettings,
) -> Check {
    let mut check = at.check(Metric::FalseAlarmBudget, "all scenes");
    check.candidate = CheckSide::counted(
        rate_words(c.false_alarms, c.exposure_h),
        counts(c.false_alarms as f64, c.exposure_h, "h"),
    );
    let Some(budget) = s.budget_per_hour else {
        check.note = "the suite sets no false_alarm_budget_per_hour".into();
        return check;
    };
    check.baseline = CheckSide::rate(format!("budget {budget}/h"), budget);
    // Without a calibration-tail rate (a product without rooms) the test trials judge it,
    // and the note says so (the counted notes name one-sided Poisson bounds).
    if let (true, Some(t)) = (s.budget_from_tail, tail) {
        return tail_budget_check(check, t, budget);
    }
    if c.exposure_h <= 0.0 {
        check.note = "no noise-only time".into();
        return check;
    }
    let (k, hours, level) = (c.false_alarms, c.exposure_h, s.budget_confidence);
    let bounds = garwood_lower_bound(k, hours, level)
        .and_then(|low| Ok([low, garwood_upper_bound(k, hours, level)?]));
    match (bounds, rate_over_limit_p_value(k, hours, budget)) {
        (Ok(bounds), Ok(p)) => {
            check.bound = Some(bounds[1]);
            check.rate_bounds_per_hour = Some(bounds);
            check.p_value = Some(p);
            check.verdict = Verdict::Inconclusive;
        }
        (Err(e), _) | (_, Err(e)) => check.note = format!("not tested: {e}"),
    }
    check
}

/// The budget judged by the candidate's calibration rooms at the pinned threshold (the suite's
/// `budget_evidence: calibration_tail`): pass when the 95 % interval's upper end is under the
/// budget, regression when its lower end is over it, inconclusive otherwise. Each end is a
/// one-sided 97.5 % bound, so with k operating points the family's false-fail rate is at most
/// k × 2.5 % (Bonferroni; 5 % for the usual two), and the check carries no p-value for Holm.
fn tail_budget_check(mut check: Check, t: &crate::rare_rates::RateAt, budget: f64) -> Check {
    check.candidate = CheckSide::rate(
        format!("{:.4}/h in {} ({})", t.rate_per_hour, t.room, t.method),
        t.rate_per_hour,
    );
    check.rate_bounds_per_hour = t.high.map(|high| [t.low, high]);
    check.bound = t.high;
    let high = t.high.map_or("∞".to_string(), |h| format!("{h:.4}"));
    let interval = format!(
        "[{:.4}, {high}]/h (95 %, worst room {}, {})",
        t.low, t.room, t.method
    );
    if t.high.is_some_and(|h| h < budget) {
        check.verdict = Verdict::Pass;
        check.note = format!("calibration rooms: {interval} is under the budget {budget}/h");
    } else if t.low > budget {
        check.verdict = Verdict::Regression;
        check.note = format!("calibration rooms: {interval} is over the budget {budget}/h");
    } else {
        check.verdict = Verdict::Inconclusive;
        check.note = format!(
            "inconclusive: calibration rooms: {interval} straddles the budget {budget}/h (more calibration time per room narrows it)"
        );
    }
    check
}

/// The three-way verdict of a key's budget checks: pass on the unadjusted upper bound,
/// regression on the Holm-adjusted regression side, inconclusive otherwise with the exposure
/// that would settle it (see the module documentation for why the two sides differ).
fn settle_budget(checks: &mut [Check], inputs: &[BudgetInput], s: &GateSettings) {
    let Some(budget) = s.budget_per_hour else {
        return;
    };
    let members: Vec<&BudgetInput> = inputs
        .iter()
        .filter(|i| checks[i.index].p_value.is_some())
        .collect();
    let p: Vec<f64> = members
        .iter()
        .filter_map(|i| checks[i.index].p_value)
        .collect();
    let Ok(adjusted) = holm_adjust(&p) else {
        return;
    };
    let family = members.len();
    let level = 1.0 - s.budget_confidence;
    let percent = s.budget_confidence * 100.0;
    for (input, q) in members.into_iter().zip(adjusted) {
        let check = &mut checks[input.index];
        check.adjusted_p = Some(q);
        let Some([low, high]) = check.rate_bounds_per_hour else {
            continue;
        };
        if high < budget {
            check.verdict = Verdict::Pass;
            check.note = format!(
                "one-sided {percent:.0} % upper bound {high:.3}/h is under the budget {budget}/h"
            );
        } else if q <= level {
            check.verdict = Verdict::Regression;
            check.note = format!(
                "one-sided {percent:.0} % lower bound {low:.3}/h is over the budget {budget}/h \
                 (exact Poisson test{})",
                if family == 1 {
                    String::new()
                } else {
                    format!(", Holm across this detector's {family} budget checks")
                }
            );
        } else {
            check.verdict = Verdict::Inconclusive;
            let (needed, words) = exposure_needed(input, budget, s.budget_confidence, family);
            check.needed_exposure_h = needed;
            let mut note = format!(
                "inconclusive: the one-sided {percent:.0} % bounds [{low:.3}, {high:.3}]/h \
                 straddle the budget {budget}/h"
            );
            if low > budget {
                let _ = write!(
                    note,
                    "; the lower bound is over the budget, but not after Holm across this \
                     detector's {family} budget checks (p Holm {})",
                    format_p(Some(q))
                );
            }
            let _ = write!(note, "; {words}");
            check.note = note;
        }
    }
}

/// The exposure that would settle an inconclusive budget check, and a sentence saying what it
/// assumes. Proving "under" needs one upper bound at `confidence`; proving "over" needs, at
/// most, the Bonferroni level `(1 − confidence)/family`, the strictest Holm can ask for.
fn exposure_needed(
    input: &BudgetInput,
    budget: f64,
    confidence: f64,
    family: usize,
) -> (Option<f64>, String) {
    let (k, hours) = (input.false_alarms, input.exposure_h);
    let rate = k as f64 / hours;
    let over = rate > budget;
    let level = if over {
        1.0 - (1.0 - confidence) / family.max(1) as f64
    } else {
        confidence
    };
    let Ok(Some(needed)) = exposure_to_resolve_rate(rate, budget, level) else {
        return (
            None,
            format!(
                "no exposure settles it: the observed rate {}/h is the budget",
                fmt_sig3(rate)
            ),
        );
    };
    let words = if k == 0 {
        format!(
            "about {} h of noise-only time would settle it (now {} h): with no false alarm the \
             upper bound is −ln({})/T (Garwood 1936), under the budget from T = {} h",
            fmt_sig3(needed),
            fmt_sig3(hours),
            format_level(1.0 - confidence),
            fmt_sig3(needed)
        )
    } else if over {
        format!(
            "about {} h of noise-only time would show it over the budget if false alarms keep \
             coming at the observed {}/h (now {} h; Garwood 1936 lower bound{})",
            fmt_sig3(needed),
            fmt_sig3(rate),
            fmt_sig3(hours),
            if family > 1 {
                format!(" at the Bonferroni level {}", format_level(1.0 - level))
            } else {
                String::new()
            }
        )
    } else {
        let floor =
            exposure_for_rate_claim(budget, k, confidence).map_or_else(|_| "—".into(), fmt_sig3);
        format!(
            "about {} h of noise-only time would settle it if false alarms keep coming at the \
             observed {}/h (now {} h; Garwood 1936 upper bound), and at least {} h even with \
             no further false alarm",
            fmt_sig3(needed),
            fmt_sig3(rate),
            fmt_sig3(hours),
            floor
        )
    };
    (Some(needed), words)
}

/// Hours or a rate, to about three significant digits.
fn fmt_sig3(h: f64) -> String {
    if h >= 100.0 {
        format!("{h:.0}")
    } else if h >= 10.0 {
        format!("{h:.1}")
    } else if h >= 0.01 {
        format!("{h:.3}")
    } else {
        format!("{h:.2e}")
    }
}

/// A significance level as written by hand (0.05, 0.025).
fn format_level(x: f64) -> String {
    format!("{}", (x * 1e6).round() / 1e6)
}

fn detection_check(at: &OperatingRef, group: &str, b: &Sums, c: &Sums) -> Check {
    let mut check = at.check(Metric::Detection, group);
    check.baseline = CheckSide::counted(
        format!("{} of {} events", b.detected, b.events),
        counts(b.detected as f64, b.events as f64, "events"),
    );
    check.candidate = CheckSide::counted(
        format!("{} of {} events", c.detected, c.events),
        counts(c.detected as f64, c.events as f64, "events"),
    );
    if b.events == 0 || c.events == 0 {
        check.note = "no target events on one side".into();
        return check;
    }
    let pd_b = b.detected as f64 / b.events as f64;
    let pd_c = c.detected as f64 / c.events as f64;
    check.ratio = (pd_b > 0.0).then(|| pd_c / pd_b);
    match fisher_exact_greater(
        c.events - c.detected,
        c.events,
        b.events - b.detected,
        b.events,
    ) {
        Ok(p) => {
            check.p_value = Some(p);
            check.verdict = Verdict::Pass;
            check.note = "Fisher's exact test of more missed events (one-sided)".into();
        }
        Err(e) => check.note = format!("not tested: {e}"),
    }
    check
}

/// Holm within each metric of one key, at `alpha`; the budget checks have their own level and
/// verdicts ([`settle_budget`]).
fn apply_holm(checks: &mut [Check], alpha: f64) {
    let metrics: BTreeSet<Metric> = checks
        .iter()
        .map(|c| c.metric)
        .filter(|&m| m != Metric::FalseAlarmBudget)
        .collect();
    for metric in metrics {
        let members: Vec<usize> = (0..checks.len())
            .filter(|&i| checks[i].metric == metric && checks[i].p_value.is_some())
            .collect();
        let p: Vec<f64> = members.iter().filter_map(|&i| checks[i].p_value).collect();
        let Ok(adjusted) = holm_adjust(&p) else {
            continue;
        };
        for (&i, q) in members.iter().zip(adjusted) {
            checks[i].adjusted_p = Some(q);
            if q <= alpha {
                checks[i].verdict = Verdict::Regression;
            }
        }
    }
}

/// A p-value as tables and notes print it: `—` when absent, four decimals, or two
/// significant digits in exponent form below 10⁻⁴.
pub fn format_p(x: Option<f64>) -> String {
    match x {
        None => "—".into(),
        Some(p) if p < 1e-4 => format!("{p:.1e}"),
        Some(p) => format!("{p:.4}"),
    }
}

impl GateReport {
    /// The checks that failed.
    pub fn regressions(&self) -> impl Iterator<Item = &Check> {
        self.checks
            .iter()
            .filter(|c| c.verdict == Verdict::Regression)
    }

    /// The checks that could not tell (budget checks without enough exposure).
    pub fn inconclusive(&self) -> impl Iterator<Item = &Check> {
        self.checks
            .iter()
            .filter(|c| c.verdict == Verdict::Inconclusive)
    }

    /// `true` when the gate lets the change through: no check failed, and, with
    /// `require_conclusive`, none was inconclusive.
    pub fn passed(&self) -> bool {
        self.regressions().next().is_none()
            && !(self.settings.require_conclusive && self.inconclusive().next().is_some())
    }

    /// The gate's verdict in a word or two: `pass`, `pass, N inconclusive`, `INCONCLUSIVE`
    /// (inconclusive checks with `require_conclusive`) or `REGRESSION`.
    pub fn verdict_words(&self) -> String {
        let inconclusive = self.inconclusive().count();
        if self.regressions().next().is_some() {
            "REGRESSION".into()
        } else if inconclusive == 0 {
            "pass".into()
        } else if self.settings.require_conclusive {
            "INCONCLUSIVE".into()
        } else {
            format!("pass, {inconclusive} inconclusive")
        }
    }

    /// Rows worth showing by default: every pooled check and every regression.
    pub fn headline(&self) -> impl Iterator<Item = &Check> {
        self.checks
            .iter()
            .filter(|c| c.group == "all scenes" || c.verdict == Verdict::Regression)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use statrs::distribution::{DiscreteCDF, Poisson};

    /// A presence tally over `hours` of empty and of occupied time with `episodes` false-on
    /// episodes of `episode_s` each (each starting with a false switch-on) and `dropouts`.
    fn presence(hours: f64, episodes: u64, episode_s: f64, dropouts: u64) -> PresenceTally {
        let episode_ns = (episode_s * 1e9) as u64;
        PresenceTally {
            empty_ns: (hours * 3.6e12) as u64,
            moving_ns: (hours * 3.6e12) as u64,
            false_on_ns: episodes * episode_ns,
            false_switch_ons: episodes,
            false_on_episodes: episodes,
            false_on_episode_sq_ns2: u128::from(episodes) * u128::from(episode_ns).pow(2),
            longest_false_on_episode_ns: episode_ns,
            dropouts_moving: dropouts,
            ..PresenceTally::default()
        }
    }

    fn presence_verdicts(b: &PresenceTally, c: &PresenceTally) -> Vec<(Metric, Verdict)> {
        let key = ComparisonKey {
            product: "lights".into(),
            detector: "d".into(),
        };
        let at = OperatingRef {
            key: &key,
            target_per_hour: 1.0,
            threshold: 1.0,
        };
        let settings = GateSettings::default();
        let mut checks = presence_checks(&at, "all scenes", b, c, &settings);
        apply_holm(&mut checks, settings.alpha);
        checks.iter().map(|c| (c.metric, c.verdict)).collect()
    }

    #[test]
    fn the_budget_by_calibration_tail_is_three_way_on_its_interval() {
        let key = ComparisonKey {
            product: "p".into(),
            detector: "d".into(),
        };
        let at = OperatingRef {
            key: &key,
            target_per_hour: 1.0,
            threshold: 7.0,
        };
        let settings = GateSettings {
            budget_per_hour: Some(0.5),
            budget_from_tail: true,
            ..GateSettings::default()
        };
        let sums = Sums {
            false_alarms: 3,
            exposure_h: 1.0,
            ..Sums::default()
        };
        let rate = |low: f64, value: f64, high: Option<f64>| crate::rare_rates::RateAt {
            threshold: 7.0,
            rate_per_hour: value,
            low,
            high,
            room: "porch".into(),
            method: "tail fit".into(),
        };
        let verdict = |t: &crate::rare_rates::RateAt| budget_check(&at, &sums, Some(t), &settings);
        // Under, over, straddling, unbounded above.
        assert_eq!(verdict(&rate(0.01, 0.1, Some(0.3))).verdict, Verdict::Pass);
        assert_eq!(
            verdict(&rate(0.6, 1.0, Some(2.0))).verdict,
            Verdict::Regression
        );
        assert_eq!(
            verdict(&rate(0.1, 0.4, Some(0.9))).verdict,
            Verdict::Inconclusive
        );
        let open = verdict(&rate(0.1, 0.4, None));
        assert_eq!(open.verdict, Verdict::Inconclusive);
        assert!(
            open.note.contains("porch") && open.note.contains("∞"),
            "{}",
            open.note
        );
        // No p-value: the counted checks' Holm family does not take it in.
        assert_eq!(verdict(&rate(0.6, 1.0, Some(2.0))).p_value, None);
        // Without the setting, the test trials' counts judge it (3 in 1 h against 0.5/h).
        let counted = budget_check(
            &at,
            &sums,
            Some(&rate(0.01, 0.1, Some(0.3))),
            &GateSettings {
                budget_from_tail: false,
                ..settings
            },
        );
        assert!(counted.p_value.is_some());
    }

    #[test]
    fn a_presence_product_regresses_on_switch_ons_dropouts_or_false_on_time() {
        use Metric::*;
        use Verdict::*;
        let baseline = presence(10.0, 20, 10.0, 10);
        // The counts go into gate.json as numbers too.
        let key = ComparisonKey {
            product: "lights".into(),
            detector: "d".into(),
        };
        let at = OperatingRef {
            key: &key,
            target_per_hour: 1.0,
            threshold: 1.0,
        };
        let checks = presence_checks(
            &at,
            "all scenes",
            &baseline,
            &baseline,
            &GateSettings::default(),
        );
        assert_eq!(
            checks[0].candidate.counts,
            Some(Counts {
                count: 20.0,
                of: 10.0,
                unit: "h"
            })
        );
        assert_eq!(checks[0].candidate.text, "20 in 10.00 h");
        // In gate.json the numbers are numbers, the words `text` only.
        let json = serde_json::to_value(&checks[0]).unwrap();
        assert_eq!(
            json["candidate"],
            serde_json::json!({"count": 20.0, "of": 10.0, "unit": "h", "text": "20 in 10.00 h"})
        );
        // The same run: nothing regresses.
        assert_eq!(
            presence_verdicts(&baseline, &baseline),
            [
                (FalseSwitchOns, Pass),
                (Dropouts, Pass),
                (FalseOnTime, Pass)
            ]
        );
        // Four times the switch-ons (P(X ≥ 80 | Poisson-binomial split at ρ₀ = 1.25) is
        // tiny): a regression of switch-ons and of false-on time.
        assert_eq!(
            presence_verdicts(&baseline, &presence(10.0, 80, 10.0, 10)),
            [
                (FalseSwitchOns, Regression),
                (Dropouts, Pass),
                (FalseOnTime, Regression)
            ]
        );
        // As many switch-ons, each six times longer: only the false-on time regresses.
        // z = (1200/10 − 1.25·200/10) / √(20·3600/100 + 1.25²·20·100/100) ≈ 95/27.6 ≈ 3.4.
        assert_eq!(
            presence_verdicts(&baseline, &presence(10.0, 20, 60.0, 10)),
            [
                (FalseSwitchOns, Pass),
                (Dropouts, Pass),
                (FalseOnTime, Regression)
            ]
        );
        // Five times the drop-outs.
        assert_eq!(
            presence_verdicts(&baseline, &presence(10.0, 20, 10.0, 50)),
            [
                (FalseSwitchOns, Pass),
                (Dropouts, Regression),
                (FalseOnTime, Pass)
            ]
        );
        // Too few episodes to test false-on time, but fewer seconds than the margin: pass.
        assert_eq!(
            presence_verdicts(&presence(10.0, 2, 10.0, 1), &presence(10.0, 2, 11.0, 1))[2],
            (FalseOnTime, Pass)
        );
        assert_eq!(
            presence_verdicts(&presence(10.0, 2, 10.0, 1), &presence(10.0, 3, 30.0, 1))[2],
            (FalseOnTime, NotTested)
        );
    }

    /// Budget checks of one key at two operating points with the given candidate counts,
    /// settled as `gate` settles them.
    fn settled(counts: &[(u64, f64)], budget: f64) -> Vec<Check> {
        let key = ComparisonKey {
            product: "p".into(),
            detector: "d".into(),
        };
        let settings = GateSettings {
            budget_per_hour: Some(budget),
            ..GateSettings::default()
        };
        let mut checks = Vec::new();
        let mut inputs = Vec::new();
        for (i, &(false_alarms, exposure_h)) in counts.iter().enumerate() {
            let at = OperatingRef {
                key: &key,
                target_per_hour: 10.0 / (i + 1) as f64,
                threshold: i as f64,
            };
            let sums = Sums {
                false_alarms,
                exposure_h,
                ..Sums::default()
            };
            inputs.push(BudgetInput {
                index: checks.len(),
                false_alarms,
                exposure_h,
            });
            checks.push(budget_check(&at, &sums, None, &settings));
        }
        settle_budget(&mut checks, &inputs, &settings);
        checks
    }

    #[test]
    fn holm_guards_the_regression_side_only() {
        // 5 false alarms in 1 h against 1.9/h: P(X >= 5 | 1.9) = 0.0441 (Poisson upper tail,
        // from statrs here), under 0.05, so alone it is a regression.
        let p = Poisson::new(1.9).map(|d| d.sf(4)).unwrap_or(f64::NAN);
        assert!(p > 0.025 && p < 0.05, "{p}");
        let one = settled(&[(5, 1.0)], 1.9);
        assert_eq!(one[0].verdict, Verdict::Regression, "{}", one[0].note);
        assert!((one[0].p_value.unwrap_or(f64::NAN) - p).abs() < 1e-12);
        assert!(one[0].rate_bounds_per_hour.is_some_and(|b| b[0] > 1.9));
        // Two such operating points: Holm doubles the smaller p to 0.088, over 0.05, so
        // neither is shown over budget; both are inconclusive and say why.
        let two = settled(&[(5, 1.0), (5, 1.0)], 1.9);
        for c in &two {
            assert_eq!(c.verdict, Verdict::Inconclusive, "{}", c.note);
            assert!(c.note.contains("not after Holm"), "{}", c.note);
            // Showing it over budget needs the Bonferroni level 0.025, so more than 1 h.
            let needed = c.needed_exposure_h.unwrap_or(f64::NAN);
            let low = garwood_lower_bound((5.0 * needed).round() as u64, needed, 0.975)
                .unwrap_or(f64::NAN);
            assert!(needed > 1.0 && (low - 1.9).abs() < 0.3, "{needed} h, {low}");
        }
        // The pass side is not adjusted: two clean points each pass on their own bound
        // (0 in 2 h: upper bound 1.498/h under 1.9/h).
        let clean = settled(&[(0, 2.0), (0, 2.0)], 1.9);
        assert!(clean.iter().all(|c| c.verdict == Verdict::Pass));
        assert!(clean.iter().all(|c| c.needed_exposure_h.is_none()));
    }

    #[test]
    fn inconclusive_names_the_exposure_that_would_settle_it() {
        // The case: budget 2/h, 1.03 h, no false alarm: upper bound 2.996/1.03 =
        // 2.91/h is over the budget, the lower bound 0 under it. Zero events need
        // −ln(0.05)/2 = 1.498 h (Garwood's zero-count bound).
        let c = &settled(&[(0, 1.03)], 2.0)[0];
        assert_eq!(c.verdict, Verdict::Inconclusive);
        let [low, high] = c.rate_bounds_per_hour.unwrap_or([f64::NAN; 2]);
        assert_eq!(low, 0.0);
        assert!((high - 0.05f64.ln().abs() / 1.03).abs() < 1e-9, "{high}");
        let needed = c.needed_exposure_h.unwrap_or(f64::NAN);
        assert!((needed - 0.05f64.ln().abs() / 2.0).abs() < 1e-9, "{needed}");
        assert!(c.note.contains("1.498 h"), "{}", c.note);
        // A count at exactly the budget: no exposure separates them, and the note says so.
        let c = &settled(&[(2, 1.0)], 2.0)[0];
        assert_eq!(c.verdict, Verdict::Inconclusive);
        assert!(c.needed_exposure_h.is_none() && c.note.contains("is the budget"));
    }
}
