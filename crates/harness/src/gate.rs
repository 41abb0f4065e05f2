//! The regression gate: is a candidate run worse than a baseline run of the same suite?
//!
//! The candidate is scored at the baseline's stored operating thresholds (`echobench run
//! --baseline B` pins them, see [`pin_to_baseline`]), so both runs are judged at one fixed
//! threshold per target rate, the way a threshold ships in firmware. Then, per detector,
//! operating point and scene group (all scenes pooled, and each scene):
//!
//! - **false-alarm rate**: the exact one-sided conditional test of the two Poisson counts
//!   against a ratio margin ρ₀ (Przyborowski & Wilenski 1940; Gu et al. 2008; reference
//!   §4.1), so only a rise larger than ρ₀ that is also significant fails;
//! - **false alarms, paired trials**: with the same seeds both runs see the same signals
//!   (common random numbers), and the exact McNemar test on the trials that alarm in one run
//!   only catches small changes the unpaired test cannot see (reference §4.1);
//! - **false-alarm budget**: the candidate's one-sided upper bound (Garwood 1936) on the
//!   pooled rate must stay under the suite's absolute budget;
//! - **detection**: a drop in Pd, by Fisher's exact test on missed events, and paired, by
//!   McNemar on the trials with a missed event.
//!
//! Holm's step-down correction (Holm 1979) runs within each detector and kind of check,
//! across its groups and operating points: a developer who changes one detector is judged on
//! that detector's family of tests, at the stated significance overall.

use crate::runner::{DetectorTally, RunDetector, Tallies, TrialOutcome, VariantTally};
use echobench_stats::{
    fisher_exact_greater, garwood_upper_bound, holm_adjust, mcnemar_exact, rate_ratio_test,
    EventCount,
};
use serde::Serialize;
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
    /// Confidence of the upper bound compared with the budget.
    pub budget_confidence: f64,
}

impl Default for GateSettings {
    fn default() -> Self {
        // ρ₀ = 1.25 and α = 0.01: the recipe of reference §4.1.
        GateSettings {
            ratio_margin: 1.25,
            alpha: 0.01,
            budget_per_hour: None,
            budget_confidence: 0.95,
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
    /// The candidate's upper bound on the false-alarm rate against the budget.
    FalseAlarmBudget,
    /// Fraction of target events detected, Fisher's exact test on misses.
    Detection,
    /// Trials with a missed event, paired exact McNemar test.
    DetectionPaired,
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
    /// Not testable here (no exposure, no events, runs not paired); see the note.
    NotTested,
}

/// One comparison, with everything needed to see why it passed or failed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    /// Detector label.
    pub detector: String,
    /// What is compared.
    pub metric: Metric,
    /// The operating point's target false-alarm rate, per hour.
    pub target_per_hour: f64,
    /// The threshold both runs were scored at.
    pub threshold: f64,
    /// `all scenes` or a scene id.
    pub group: String,
    /// The baseline's counts, in words (`3 in 2.10 h`, `41 of 60 events`).
    pub baseline: String,
    /// The candidate's counts, in words.
    pub candidate: String,
    /// Candidate ÷ baseline (rates or Pd), when defined.
    pub ratio: Option<f64>,
    /// A bound: the ratio's one-sided lower bound (rate test) or the candidate rate's upper
    /// bound (budget).
    pub bound: Option<f64>,
    /// One-sided p-value.
    pub p_value: Option<f64>,
    /// Holm-adjusted p-value within the detector's family of this metric.
    pub adjusted_p: Option<f64>,
    /// The verdict.
    pub verdict: Verdict,
    /// Why, in a sentence.
    pub note: String,
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
        match baseline.detectors.iter().find(|b| b.label == d.label) {
            Some(b) => {
                d.pinned = b
                    .operating
                    .iter()
                    .map(|o| crate::runner::PinnedPoint {
                        target_per_hour: o.target_per_hour,
                        threshold: o.threshold,
                    })
                    .collect();
            }
            None => notes.push(format!(
                "detector `{}` is not in the baseline: it is run but not gated",
                d.label
            )),
        }
    }
    notes
}

/// Compares `candidate` with `baseline`.
///
/// # Errors
/// Different suites, a shard instead of a whole run, or a candidate that was not scored at
/// the baseline's thresholds (run it with `--baseline`).
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
    if settings.budget_per_hour.is_none() {
        notes.push(
            "no false-alarm budget is set (suite `false_alarm_budget_per_hour` or --budget-per-hour): \
             the budget is not checked"
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
        if !baseline.detectors.iter().any(|b| b.label == c.label) {
            notes.push(format!(
                "detector `{}` is new (not in the baseline): not gated",
                c.label
            ));
        }
    }
    for b in &baseline.detectors {
        let Some(c) = candidate.detectors.iter().find(|c| c.label == b.label) else {
            return Err(GateError(format!(
                "detector `{}` is in the baseline but not in the run",
                b.label
            )));
        };
        let mut seen_thresholds: Vec<f64> = Vec::new();
        let mut detector_checks = Vec::new();
        for (o, op) in b.operating.iter().enumerate() {
            let Some(p) = c.pinned.iter().position(|p| {
                p.threshold == op.threshold && p.target_per_hour == op.target_per_hour
            }) else {
                return Err(GateError(format!(
                    "detector `{}`: the run was not scored at the baseline's threshold {} \
                     (target {}/h); make the run with `echobench run --baseline <the baseline>`",
                    b.label, op.threshold, op.target_per_hour
                )));
            };
            if seen_thresholds.contains(&op.threshold) {
                notes.push(format!(
                    "detector `{}`: the {}/h operating point has the same threshold as a \
                     higher-rate one; checked once",
                    b.label, op.target_per_hour
                ));
                continue;
            }
            seen_thresholds.push(op.threshold);
            let at = OperatingRef {
                detector: &b.label,
                target_per_hour: op.target_per_hour,
                threshold: op.threshold,
            };
            for group in groups(b) {
                let pairs = matched_variants(b, c, group.as_deref())?;
                let side = |pick: Side| sums(&pairs, o, p, pick);
                let (sb, sc) = (side(Side::Baseline), side(Side::Candidate));
                let name = group.clone().unwrap_or_else(|| "all scenes".into());
                detector_checks.push(rate_check(&at, &name, &sb, &sc, settings));
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
                    detector_checks.push(budget_check(&at, &sc, settings));
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
    detector: &'a str,
    target_per_hour: f64,
    threshold: f64,
}

impl OperatingRef<'_> {
    fn check(&self, metric: Metric, group: &str) -> Check {
        Check {
            detector: self.detector.to_string(),
            metric,
            target_per_hour: self.target_per_hour,
            threshold: self.threshold,
            group: group.to_string(),
            baseline: String::new(),
            candidate: String::new(),
            ratio: None,
            bound: None,
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

fn rate_words(k: u64, hours: f64) -> String {
    format!("{k} in {hours:.2} h")
}

fn rate_check(at: &OperatingRef, group: &str, b: &Sums, c: &Sums, s: &GateSettings) -> Check {
    let mut check = at.check(Metric::FalseAlarmRate, group);
    check.baseline = rate_words(b.false_alarms, b.exposure_h);
    check.candidate = rate_words(c.false_alarms, c.exposure_h);
    if b.exposure_h <= 0.0 || c.exposure_h <= 0.0 {
        check.note = "no noise-only time in this group".into();
        return check;
    }
    let candidate = EventCount {
        events: c.false_alarms,
        exposure: c.exposure_h,
    };
    let base = EventCount {
        events: b.false_alarms,
        exposure: b.exposure_h,
    };
    match rate_ratio_test(candidate, base, s.ratio_margin, 1.0 - s.alpha) {
        Ok(t) => {
            check.ratio = t.ratio.is_finite().then_some(t.ratio);
            check.bound = Some(t.lower_bound);
            check.p_value = Some(t.p_value);
            check.verdict = Verdict::Pass;
            check.note = format!(
                "exact conditional test of rate ratio > {} (one-sided)",
                s.ratio_margin
            );
        }
        Err(e) => check.note = format!("not tested: {e}"),
    }
    check
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
    check.baseline = format!("{baseline_only} of {} trials", outcomes.len());
    check.candidate = format!("{candidate_only} of {} trials", outcomes.len());
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

fn budget_check(at: &OperatingRef, c: &Sums, s: &GateSettings) -> Check {
    let mut check = at.check(Metric::FalseAlarmBudget, "all scenes");
    check.candidate = rate_words(c.false_alarms, c.exposure_h);
    let Some(budget) = s.budget_per_hour else {
        check.note = "the suite sets no false_alarm_budget_per_hour".into();
        return check;
    };
    check.baseline = format!("budget {budget}/h");
    if c.exposure_h <= 0.0 {
        check.note = "no noise-only time".into();
        return check;
    }
    match garwood_upper_bound(c.false_alarms, c.exposure_h, s.budget_confidence) {
        Ok(upper) => {
            check.bound = Some(upper);
            let over = upper > budget;
            check.verdict = if over {
                Verdict::Regression
            } else {
                Verdict::Pass
            };
            check.note = format!(
                "one-sided {:.0} % upper bound {upper:.3}/h {} the budget {budget}/h",
                s.budget_confidence * 100.0,
                if over { "exceeds" } else { "is within" }
            );
        }
        Err(e) => check.note = format!("not tested: {e}"),
    }
    check
}

fn detection_check(at: &OperatingRef, group: &str, b: &Sums, c: &Sums) -> Check {
    let mut check = at.check(Metric::Detection, group);
    check.baseline = format!("{} of {} events", b.detected, b.events);
    check.candidate = format!("{} of {} events", c.detected, c.events);
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

/// Holm within each metric of one detector; the budget check is a bound, not a test.
fn apply_holm(checks: &mut [Check], alpha: f64) {
    let metrics: BTreeSet<Metric> = checks.iter().map(|c| c.metric).collect();
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

fn fmt_opt(x: Option<f64>, digits: usize) -> String {
    x.map_or_else(|| "—".into(), |v| format!("{v:.digits$}"))
}

/// Four significant digits, enough to recognise a threshold.
fn fmt_threshold(t: f64) -> String {
    if t != 0.0 && (t.abs() < 1e-3 || t.abs() >= 1e6) {
        format!("{t:.3e}")
    } else {
        format!("{}", (t * 1e4).round() / 1e4)
    }
}

fn fmt_p(x: Option<f64>) -> String {
    match x {
        None => "—".into(),
        Some(p) if p < 1e-4 => format!("{p:.1e}"),
        Some(p) => format!("{p:.4}"),
    }
}

fn verdict_word(v: Verdict) -> &'static str {
    match v {
        Verdict::Pass => "pass",
        Verdict::Regression => "REGRESSION",
        Verdict::NotTested => "not tested",
    }
}

impl GateReport {
    /// The checks that failed.
    pub fn regressions(&self) -> impl Iterator<Item = &Check> {
        self.checks
            .iter()
            .filter(|c| c.verdict == Verdict::Regression)
    }

    /// `true` when no check failed.
    pub fn passed(&self) -> bool {
        self.regressions().next().is_none()
    }

    /// Rows worth showing by default: every pooled check and every regression.
    fn headline(&self) -> impl Iterator<Item = &Check> {
        self.checks
            .iter()
            .filter(|c| c.group == "all scenes" || c.verdict == Verdict::Regression)
    }

    /// A plain-text table for the terminal: the pooled checks and every regression.
    pub fn table(&self) -> String {
        self.render_table(self.headline().collect())
    }

    /// A plain-text table of every check, per scene too.
    pub fn full_table(&self) -> String {
        self.render_table(self.checks.iter().collect())
    }

    fn render_table(&self, checks: Vec<&Check>) -> String {
        let mut out = String::new();
        let header = [
            "detector",
            "check",
            "at /h",
            "group",
            "baseline",
            "candidate",
            "ratio",
            "bound",
            "p",
            "p (Holm)",
            "verdict",
        ];
        let rows: Vec<[String; 11]> = checks
            .iter()
            .map(|c| {
                [
                    c.detector.clone(),
                    c.metric.name().into(),
                    format!("{}", c.target_per_hour),
                    c.group.clone(),
                    c.baseline.clone(),
                    c.candidate.clone(),
                    fmt_opt(c.ratio, 2),
                    fmt_opt(c.bound, 3),
                    fmt_p(c.p_value),
                    fmt_p(c.adjusted_p),
                    verdict_word(c.verdict).into(),
                ]
            })
            .collect();
        let mut widths: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
        for row in &rows {
            for (w, cell) in widths.iter_mut().zip(row) {
                *w = (*w).max(cell.chars().count());
            }
        }
        let line = |cells: &[&str]| {
            let mut l = String::new();
            for (cell, w) in cells.iter().zip(&widths) {
                let pad = w - cell.chars().count();
                let _ = write!(l, "{cell}{}  ", " ".repeat(pad));
            }
            l.trim_end().to_string() + "\n"
        };
        out += &line(&header);
        for row in &rows {
            out += &line(&row.iter().map(String::as_str).collect::<Vec<_>>());
        }
        self.footer(&mut out, false);
        out
    }

    fn footer(&self, out: &mut String, markdown: bool) {
        let bullet = if markdown { "- " } else { "  " };
        let tested = self
            .checks
            .iter()
            .filter(|c| c.verdict != Verdict::NotTested)
            .count();
        let failed = self.regressions().count();
        let _ = writeln!(
            out,
            "\n{} checks ({} tested), {} regression{}; rate margin ρ₀ = {}, α = {} (Holm within each detector and check){}",
            self.checks.len(),
            tested,
            failed,
            if failed == 1 { "" } else { "s" },
            self.settings.ratio_margin,
            self.settings.alpha,
            if self.paired { "; paired on the same seeds" } else { "" },
        );
        if self.paired {
            let _ = writeln!(
                out,
                "{bullet}paired rows count the trials where only that run alarmed falsely (or missed an event)"
            );
        }
        for c in self.regressions() {
            let _ = writeln!(
                out,
                "{bullet}{}: {} at {}/h (threshold {}), {}: baseline {}, candidate {}; {} (p = {}, Holm {})",
                c.detector,
                c.metric.name(),
                c.target_per_hour,
                fmt_threshold(c.threshold),
                c.group,
                c.baseline,
                c.candidate,
                c.note,
                fmt_p(c.p_value),
                fmt_p(c.adjusted_p),
            );
        }
        for n in &self.notes {
            let _ = writeln!(out, "{bullet}note: {n}");
        }
    }

    /// A Markdown summary for a pull-request comment.
    pub fn markdown(&self) -> String {
        let mut out = format!(
            "## echobench gate: {} — suite `{}`\n\n",
            if self.passed() { "pass" } else { "REGRESSION" },
            self.suite
        );
        out += "| detector | check | at /h | group | baseline | candidate | ratio | bound | p (Holm) | verdict |\n";
        out += "|---|---|---|---|---|---|---|---|---|---|\n";
        for c in self.headline() {
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} | {} | {} | {} | {} | {} |",
                md_escape(&c.detector),
                c.metric.name(),
                c.target_per_hour,
                md_escape(&c.group),
                c.baseline,
                c.candidate,
                fmt_opt(c.ratio, 2),
                fmt_opt(c.bound, 3),
                fmt_p(c.adjusted_p),
                if c.verdict == Verdict::Regression {
                    "**REGRESSION**"
                } else {
                    verdict_word(c.verdict)
                },
            );
        }
        self.footer(&mut out, true);
        out
    }

    /// A JUnit XML document: one test case per detector, metric and operating point; a
    /// failing group makes its case fail, with every failing group in the message.
    pub fn junit_xml(&self) -> String {
        let mut cases: BTreeMap<(String, Metric, String), Vec<&Check>> = BTreeMap::new();
        let mut order: Vec<(String, Metric, String)> = Vec::new();
        for c in &self.checks {
            let key = (
                c.detector.clone(),
                c.metric,
                format!("{}", c.target_per_hour),
            );
            if !cases.contains_key(&key) {
                order.push(key.clone());
            }
            cases.entry(key).or_default().push(c);
        }
        let failures = order
            .iter()
            .filter(|k| cases[*k].iter().any(|c| c.verdict == Verdict::Regression))
            .count();
        let skipped = order
            .iter()
            .filter(|k| cases[*k].iter().all(|c| c.verdict == Verdict::NotTested))
            .count();
        let mut out = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
        let _ = writeln!(
            out,
            "<testsuites name=\"echobench gate\" tests=\"{}\" failures=\"{failures}\" skipped=\"{skipped}\">",
            order.len()
        );
        let _ = writeln!(
            out,
            "  <testsuite name=\"{}\" tests=\"{}\" failures=\"{failures}\" skipped=\"{skipped}\">",
            xml_escape(&self.suite),
            order.len()
        );
        for key in &order {
            let group = &cases[key];
            let (detector, metric, target) = key;
            let _ = write!(
                out,
                "    <testcase classname=\"echobench.gate.{}\" name=\"{} at {}/h\"",
                xml_escape(detector),
                metric.name(),
                target
            );
            let failing: Vec<&&Check> = group
                .iter()
                .filter(|c| c.verdict == Verdict::Regression)
                .collect();
            if !failing.is_empty() {
                let message = failing
                    .iter()
                    .map(|c| {
                        format!(
                            "{}: baseline {}, candidate {}, p (Holm) {}",
                            c.group,
                            c.baseline,
                            c.candidate,
                            fmt_p(c.adjusted_p)
                        )
                    })
                    .collect::<Vec<_>>()
                    .join("; ");
                let detail = failing
                    .iter()
                    .map(|c| format!("{} — {}", c.group, c.note))
                    .collect::<Vec<_>>()
                    .join("\n");
                let _ = writeln!(
                    out,
                    ">\n      <failure type=\"regression\" message=\"{}\">{}</failure>\n    </testcase>",
                    xml_escape(&message),
                    xml_escape(&detail)
                );
            } else if group.iter().all(|c| c.verdict == Verdict::NotTested) {
                let _ = writeln!(
                    out,
                    ">\n      <skipped message=\"{}\"/>\n    </testcase>",
                    xml_escape(&group[0].note)
                );
            } else {
                out += "/>\n";
            }
        }
        out += "  </testsuite>\n</testsuites>\n";
        out
    }
}

fn xml_escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out += "&amp;",
            '<' => out += "&lt;",
            '>' => out += "&gt;",
            '"' => out += "&quot;",
            '\'' => out += "&apos;",
            // Characters XML 1.0 cannot carry at all.
            c if (c as u32) < 0x20 && !matches!(c, '\n' | '\r' | '\t') => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

fn md_escape(s: &str) -> String {
    s.replace('|', "\\|")
}
