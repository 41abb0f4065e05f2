//! `alarm:` and `scoring:`: the alarm logic and the scoring settings, with their bounds.

use crate::model::{AlarmSpec, ScoringSpec, ThresholdRule};
use echobench_yaml_reader::{Node, Reader, Report};

/// Allowed number of thresholds in a ROC sweep: fewer draws a coarse curve,
/// more costs memory per detector and trial without a visible gain.
const THRESHOLD_COUNT_RANGE: std::ops::RangeInclusive<usize> = 10..=10_000;

/// Largest N of an M-of-N rule: the harness keeps the last N frame decisions as bits of a u64.
const MAX_M_OF_N_FRAMES: u32 = 64;

pub(crate) fn read_alarm(node: &Node, suite_file: &str, report: &mut Report) -> Option<AlarmSpec> {
    let mut reader = Reader::new(suite_file);
    let alarm = (|| {
        let mut f = reader.fields(node, "alarm")?;
        let defaults = AlarmSpec::default();
        let hold_s: f64 = f.optional_or("hold_s", defaults.hold_s);
        let m_of_n: Option<[u32; 2]> = f.optional("m_of_n");
        let mut ok = true;
        if hold_s < 0.0 {
            f.error_at(
                "hold_s",
                format!("the hold time must not be negative, found {hold_s} s"),
            );
            ok = false;
        }
        if let Some([m, n]) = m_of_n {
            if !(1 <= m && m <= n && n <= MAX_M_OF_N_FRAMES) {
                f.error_at(
                    "m_of_n",
                    format!("[M, N] = [{m}, {n}] must have 1 ≤ M ≤ N ≤ {MAX_M_OF_N_FRAMES}"),
                );
                ok = false;
            }
        }
        f.finish();
        ok.then_some(AlarmSpec {
            hold_s,
            m_of_n: m_of_n.map(|[m, n]| (m, n)),
        })
    })();
    let problems = reader.finish();
    let failed = problems.has_errors();
    report.extend(problems);
    if failed {
        None
    } else {
        alarm
    }
}

pub(crate) fn read_scoring(
    node: &Node,
    suite_file: &str,
    report: &mut Report,
) -> Option<ScoringSpec> {
    let mut reader = Reader::new(suite_file);
    let scoring = (|| {
        let mut f = reader.fields(node, "scoring")?;
        let defaults = ScoringSpec::default();
        let early_s: f64 = f.optional_or("early_s", defaults.early_s);
        let late_s: f64 = f.optional_or("late_s", defaults.late_s);
        let rates: Vec<f64> = f.optional_or(
            "target_false_alarms_per_hour",
            defaults.target_false_alarms_per_hour.clone(),
        );
        let threshold_count: usize = f.optional_or("threshold_count", defaults.threshold_count);
        let budget: Option<f64> = f.optional("false_alarm_budget_per_hour");
        let budget_from_tail = f.choice_or(
            "budget_evidence",
            &["test_trials", "calibration_tail"],
            "test_trials",
        ) == "calibration_tail";
        let threshold_rule = match f.choice_or(
            "threshold_rule",
            &[
                ThresholdRule::WorstRoom.name(),
                ThresholdRule::Pooled.name(),
            ],
            ThresholdRule::WorstRoom.name(),
        ) {
            "pooled" => ThresholdRule::Pooled,
            _ => ThresholdRule::WorstRoom,
        };
        let mut ok = true;
        for (key, value) in [("early_s", early_s), ("late_s", late_s)] {
            if value < 0.0 {
                f.error_at(
                    key,
                    format!("a tolerance must not be negative, found {value} s"),
                );
                ok = false;
            }
        }
        if rates.is_empty() {
            f.error_at(
                "target_false_alarms_per_hour",
                "give at least one false-alarm rate at which to choose an operating threshold",
            );
            ok = false;
        }
        if let Some(bad) = rates.iter().find(|r| **r <= 0.0) {
            f.error_at(
                "target_false_alarms_per_hour",
                format!("every rate must be positive, found {bad}"),
            );
            ok = false;
        }
        if !THRESHOLD_COUNT_RANGE.contains(&threshold_count) {
            f.error_at(
                "threshold_count",
                format!(
                    "must be {} to {}, found {threshold_count}",
                    THRESHOLD_COUNT_RANGE.start(),
                    THRESHOLD_COUNT_RANGE.end()
                ),
            );
            ok = false;
        }
        if let Some(b) = budget.filter(|b| *b <= 0.0) {
            f.error_at(
                "false_alarm_budget_per_hour",
                format!("must be positive, found {b}"),
            );
            ok = false;
        }
        f.finish();
        ok.then_some(ScoringSpec {
            early_s,
            late_s,
            target_false_alarms_per_hour: rates,
            threshold_count,
            false_alarm_budget_per_hour: budget,
            threshold_rule,
            budget_from_tail,
        })
    })();
    let problems = reader.finish();
    let failed = problems.has_errors();
    report.extend(problems);
    if failed {
        None
    } else {
        scoring
    }
}
