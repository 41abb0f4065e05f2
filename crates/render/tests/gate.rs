//! The regression gate on real runs, through to its files: a run against itself passes, a
//! doctored baseline with fewer false alarms fails and names the detector in the table and the
//! Markdown, a rerun with another seed (a change that is only noise) passes, and the JUnit
//! output is well-formed XML carrying the failure (`echobench_harness::gate` judges,
//! `echobench_render::gate` writes).

use echobench_harness::gate::{gate, pin_to_baseline, GateSettings, Metric, Verdict};
use echobench_harness::runner::{resolve_detectors, run_suite, Tallies};
use echobench_render::gate::{junit_xml, markdown, table};
use echobench_suite::Suite;
use echobench_suite::{default_suite, load_suite_file};

/// The default suite, cut down, with two detectors and operating points high enough that
/// the test trials carry tens of false alarms (a gate needs counts to compare).
fn small_suite(seed: u64) -> Suite {
    let plugins = echobench_detectors::builtin();
    // One product: its detectors are one Holm family each.
    let mut suite = default_suite(&plugins)
        .expect("the default suite loads")
        .product_view("corridor-lights-2g4");
    for scene in &mut suite.scenes {
        scene.trials = 10;
        scene.calibration_trials = 4;
    }
    suite
        .detectors
        .retain(|d| d.label == "energy" || d.label == "band-ratio");
    suite.scoring.target_false_alarms_per_hour = vec![60.0, 10.0];
    suite.seed = seed;
    suite
}

fn run(suite: &Suite, baseline: Option<&Tallies>) -> Tallies {
    let plugins = echobench_detectors::builtin();
    let mut detectors = resolve_detectors(suite, &plugins).unwrap();
    if let Some(b) = baseline {
        assert!(pin_to_baseline(&mut detectors, b).is_empty());
    }
    run_suite(suite, &detectors, None, &|_| {}).unwrap().0
}

#[test]
fn gate_passes_on_itself_fails_on_a_doctored_baseline_and_passes_on_seed_noise() {
    let suite = small_suite(11);
    let baseline = run(&suite, None);
    let energy = baseline
        .detectors
        .iter()
        .find(|d| d.label == "energy")
        .unwrap();
    let energy_false_alarms: u64 = energy
        .variants
        .iter()
        .map(|v| v.operating[0].false_alarms)
        .sum();
    assert!(
        energy_false_alarms >= 15,
        "the suite must give the gate counts to work with: {energy_false_alarms}"
    );
    let settings = GateSettings::default();

    // The same code and seed: identical counts, every check passes.
    let same = run(&suite, Some(&baseline));
    let report = gate(&same, &baseline, &settings).unwrap();
    assert!(report.paired);
    assert!(report.passed(), "{}", table(&report));
    assert!(report
        .checks
        .iter()
        .any(|c| c.metric == Metric::FalseAlarmPaired && c.verdict == Verdict::Pass));

    // A baseline doctored to have had no false alarms for `energy`: the candidate's are a
    // rise, caught by the rate test and the paired test, and named.
    let mut doctored = baseline.clone();
    for d in &mut doctored.detectors {
        if d.label == "energy" {
            for v in &mut d.variants {
                for op in &mut v.operating {
                    op.false_alarms = 0;
                    op.false_alarms_by_source.clear();
                    for t in &mut op.trials {
                        t.false_alarms = 0;
                    }
                }
            }
        }
    }
    let report = gate(&same, &doctored, &settings).unwrap();
    assert!(!report.passed());
    let failing: Vec<_> = report.regressions().collect();
    assert!(
        failing.iter().all(|c| c.key.detector == "energy"),
        "{}",
        table(&report)
    );
    for metric in [Metric::FalseAlarmRate, Metric::FalseAlarmPaired] {
        assert!(
            failing
                .iter()
                .any(|c| c.metric == metric && c.group == "all scenes"),
            "{metric:?} should fail:\n{}",
            table(&report)
        );
    }
    let text = table(&report);
    assert!(
        text.contains("REGRESSION") && text.contains("energy"),
        "{text}"
    );
    assert!(markdown(&report).contains("**REGRESSION**"));

    // The JUnit document is well-formed XML and carries the failing case.
    let xml = junit_xml(&report);
    let doc = roxmltree::Document::parse(&xml).unwrap_or_else(|e| panic!("{e}\n{xml}"));
    let failed_cases: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .filter(|n| n.children().any(|c| c.has_tag_name("failure")))
        .map(|n| {
            format!(
                "{} {}",
                n.attribute("classname").unwrap(),
                n.attribute("name").unwrap()
            )
        })
        .collect();
    assert!(
        failed_cases
            .iter()
            .any(|c| c.contains("energy") && c.contains("false-alarm rate")),
        "{failed_cases:?}"
    );
    let suites = doc.root_element();
    assert_eq!(
        suites.attribute("failures").unwrap(),
        failed_cases.len().to_string()
    );

    // The same detectors on another seed: different trials, so counts move by noise only;
    // the unpaired tests with their margin must not call that a regression.
    let other_seed = run(&small_suite(12), Some(&baseline));
    let report = gate(&other_seed, &baseline, &settings).unwrap();
    assert!(!report.paired);
    assert!(
        report
            .checks
            .iter()
            .filter(|c| c.metric == Metric::FalseAlarmPaired)
            .all(|c| c.verdict == Verdict::NotTested),
        "paired tests need the same seeds"
    );
    assert!(report.passed(), "{}", table(&report));
}

/// A one-module suite of a swaying palm (a nuisance with tens of false alarms per hour at
/// high target rates) and two detectors, for the budget tests.
const BUDGET_SUITE: &str = r#"
name: budget-check
seed: 5
trials: 12
calibration_trials: 4
scenes:
  - id: palm
    label: nuisance
    scene:
      duration_s: 20
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [400], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      environment: {white_noise_v_per_rthz: 30.0e-9}
      actors:
        - kind: sway
          id: palm
          pivot_m: [2.5, 1.5, 0.4]
          hanging: false
          arm_length_m: 1.4
          natural_hz: {uniform: [0.4, 0.9]}
          damping_ratio: 0.06
          rms_displacement_m: {uniform: [0.03, 0.08]}
          direction_deg: {uniform: [0, 180]}
          rcs_m2: 0.2
detectors:
  - plugin: energy
  - plugin: band-ratio
scoring:
  target_false_alarms_per_hour: [200, 60]
"#;

/// A baseline and a candidate pinned to it, run once for the budget tests.
fn budget_runs() -> &'static (Tallies, Tallies) {
    static RUNS: std::sync::OnceLock<(Tallies, Tallies)> = std::sync::OnceLock::new();
    RUNS.get_or_init(|| {
        let dir = std::path::PathBuf::from(env!("CARGO_TARGET_TMPDIR"));
        let file = dir.join(format!("gate-budget-suite-{}.yaml", std::process::id()));
        std::fs::write(&file, BUDGET_SUITE).unwrap();
        let plugins = echobench_detectors::builtin();
        let (suite, _) = load_suite_file(&file, &plugins).unwrap_or_else(|r| panic!("{r}"));
        let _ = std::fs::remove_file(&file);
        let baseline = run(&suite, None);
        let candidate = run(&suite, Some(&baseline));
        (baseline, candidate)
    })
}

#[test]
fn a_budget_below_the_measured_rate_fails_and_an_unpinned_run_is_refused() {
    let (baseline, candidate) = budget_runs();
    let (baseline, candidate) = (baseline.clone(), candidate.clone());
    let settings = GateSettings {
        budget_per_hour: Some(0.5),
        ..GateSettings::default()
    };
    let report = gate(&candidate, &baseline, &settings).unwrap();
    let over: Vec<_> = report
        .regressions()
        .filter(|c| c.metric == Metric::FalseAlarmBudget)
        .collect();
    // Every detector has tens of false alarms per hour at the 200/h point: even the lower
    // bound of its rate is over a 0.5/h budget, which is what makes it a regression.
    assert!(!over.is_empty(), "{}", table(&report));
    assert!(over
        .iter()
        .all(|c| c.rate_bounds_per_hour.is_some_and(|[low, _]| low > 0.5)));
    assert!(over.iter().all(|c| c.note.contains("lower bound")));
    // No budget set: no budget checks, and a note that says so.
    let report = gate(&candidate, &baseline, &GateSettings::default()).unwrap();
    assert!(report.passed());
    assert!(!report
        .checks
        .iter()
        .any(|c| c.metric == Metric::FalseAlarmBudget));
    assert!(report
        .notes
        .iter()
        .any(|n| n.contains("no false-alarm budget")));

    // A run made without --against cannot be gated: it says how to fix it.
    let err = gate(&baseline, &baseline, &GateSettings::default()).unwrap_err();
    assert!(err.0.contains("--against"), "{err}");
}

/// The candidate with every pinned false alarm removed: zero false alarms in its exposure.
fn without_false_alarms(candidate: &Tallies) -> Tallies {
    let mut quiet = candidate.clone();
    for d in &mut quiet.detectors {
        for v in &mut d.variants {
            for op in &mut v.pinned {
                op.false_alarms = 0;
                op.false_alarms_by_source.clear();
                for t in &mut op.trials {
                    t.false_alarms = 0;
                }
            }
        }
    }
    quiet
}

#[test]
fn the_budget_check_is_three_way_and_an_inconclusive_case_is_skipped_in_junit() {
    let (baseline, candidate) = budget_runs();
    let hours = candidate.detectors[0]
        .variants
        .iter()
        .map(|v| v.exposure_ns)
        .sum::<u64>() as f64
        / 3.6e12;
    assert!(hours > 0.0);
    // Zero false alarms, and a budget the exposure cannot vouch for: the zero-count upper
    // bound −ln(0.05)/T (Garwood 1936) is twice the budget.
    let zero_bound = 0.05f64.ln().abs() / hours;
    let budget = zero_bound / 2.0;
    let quiet = without_false_alarms(candidate);
    let settings = GateSettings {
        budget_per_hour: Some(budget),
        ..GateSettings::default()
    };
    let report = gate(&quiet, baseline, &settings).unwrap();
    let budget_checks: Vec<_> = report
        .checks
        .iter()
        .filter(|c| c.metric == Metric::FalseAlarmBudget)
        .collect();
    assert_eq!(
        budget_checks.len(),
        4,
        "two detectors, two operating points"
    );
    for c in &budget_checks {
        assert_eq!(c.verdict, Verdict::Inconclusive, "{}", c.note);
        let [low, high] = c.rate_bounds_per_hour.unwrap();
        assert_eq!(low, 0.0);
        assert!((high - zero_bound).abs() < 1e-9 * zero_bound, "{high}");
        // The exposure needed: −ln(0.05)/budget, twice the exposure there is.
        let needed = c.needed_exposure_h.unwrap();
        assert!(
            (needed - 2.0 * hours).abs() < 1e-9 * hours,
            "{needed} vs {hours}"
        );
    }
    assert!(report.passed(), "inconclusive is not a regression");
    assert_eq!(report.verdict_words(), "pass, 4 inconclusive");
    assert!(markdown(&report).starts_with("## echobench gate: pass, 4 inconclusive"));
    assert!(table(&report).contains("inconclusive"));
    // The JUnit case of each budget check is skipped, and says what would settle it.
    let xml = junit_xml(&report);
    let doc = roxmltree::Document::parse(&xml).unwrap_or_else(|e| panic!("{e}\n{xml}"));
    let skipped: Vec<(String, String)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .filter_map(|n| {
            let skip = n.children().find(|c| c.has_tag_name("skipped"))?;
            Some((
                n.attribute("name")?.to_string(),
                skip.attribute("message")?.to_string(),
            ))
        })
        .collect();
    let budget_skips: Vec<_> = skipped
        .iter()
        .filter(|(name, _)| name.starts_with("false-alarm budget"))
        .collect();
    assert_eq!(budget_skips.len(), 4, "{skipped:?}");
    for (_, message) in budget_skips {
        assert!(
            message.contains("inconclusive") && message.contains("h of noise-only time"),
            "{message}"
        );
    }
    assert_eq!(
        doc.root_element().attribute("skipped").unwrap(),
        skipped.len().to_string()
    );
    // Demanding a conclusion turns the same report into a failing gate.
    let strict = GateSettings {
        require_conclusive: true,
        ..settings
    };
    let report = gate(&quiet, baseline, &strict).unwrap();
    assert!(!report.passed());
    assert_eq!(report.verdict_words(), "INCONCLUSIVE");
    assert_eq!(report.regressions().count(), 0);

    // With the real counts, a budget far above every rate passes on the upper bound.
    let generous = GateSettings {
        budget_per_hour: Some(1e6),
        ..GateSettings::default()
    };
    let report = gate(candidate, baseline, &generous).unwrap();
    for c in report
        .checks
        .iter()
        .filter(|c| c.metric == Metric::FalseAlarmBudget)
    {
        assert_eq!(c.verdict, Verdict::Pass, "{}", c.note);
        assert!(c.rate_bounds_per_hour.unwrap()[1] < 1e6);
    }
}

/// A rare event is gated per occurrence: a baseline doctored to have had no alarmed door
/// swing fails the candidate on the event's own check, and on nothing pooled, since events
/// stay out of the pooled rate (as in the summary).
#[test]
fn a_rare_event_is_gated_per_occurrence_and_kept_out_of_the_pooled_rate() {
    let mut suite = small_suite(13);
    suite.detectors.retain(|d| d.label == "energy");
    for scene in &mut suite.scenes {
        if scene.occurrences_per_day.is_some() {
            scene.trials = 40;
        }
    }
    let event = suite
        .scenes
        .iter()
        .find(|s| s.occurrences_per_day.is_some())
        .expect("the corridor product has a rare event")
        .id
        .clone();
    let baseline = run(&suite, None);
    let candidate = run(&suite, Some(&baseline));
    let settings = GateSettings::default();
    let report = gate(&candidate, &baseline, &settings).unwrap();
    assert!(report.passed(), "{}", table(&report));
    let own: Vec<_> = report
        .checks
        .iter()
        .filter(|c| c.metric == Metric::RareEventAlarms)
        .collect();
    assert!(!own.is_empty() && own.iter().all(|c| c.group == event));
    assert!(report.notes.iter().any(|n| n.contains("per occurrence")));
    let alarmed: u64 = own[0]
        .candidate
        .counts
        .as_ref()
        .map_or(0, |c| c.count as u64);
    assert!(
        alarmed >= 12,
        "the door must alarm often enough at 60/h for the test to mean something: {alarmed}"
    );

    let mut doctored = baseline.clone();
    for d in &mut doctored.detectors {
        for v in d.variants.iter_mut().filter(|v| v.label == "event") {
            for op in &mut v.operating {
                op.false_alarms = 0;
                op.false_alarms_by_source.clear();
                for t in &mut op.trials {
                    t.false_alarms = 0;
                }
            }
        }
    }
    let report = gate(&candidate, &doctored, &settings).unwrap();
    let failing: Vec<_> = report.regressions().collect();
    assert!(
        failing
            .iter()
            .any(|c| c.metric == Metric::RareEventAlarms && c.group == event),
        "{}",
        table(&report)
    );
    assert!(
        failing.iter().all(|c| c.group == event),
        "only the event's own checks may fail: {}",
        table(&report)
    );
}
