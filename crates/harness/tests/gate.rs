//! The regression gate on real runs: a run against itself passes, a doctored baseline with
//! fewer false alarms fails and names the detector, a rerun with another seed (a change
//! that is only noise) passes, and the JUnit output is well-formed XML carrying the failure.

use echobench_harness::gate::{gate, pin_to_baseline, GateSettings, Metric, Verdict};
use echobench_harness::runner::{resolve_detectors, run_suite, Tallies};
use echobench_harness::suite::Suite;
use echobench_harness::suite_file::default_suite;

/// The default suite, cut down, with two detectors and operating points high enough that
/// the test trials carry tens of false alarms (a gate needs counts to compare).
fn small_suite(seed: u64) -> Suite {
    let plugins = echobench_detectors::builtin();
    let mut suite = default_suite(&plugins).expect("the default suite loads");
    for scene in &mut suite.scenes {
        scene.trials = 6;
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
    assert!(report.passed(), "{}", report.table());
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
        failing.iter().all(|c| c.detector == "energy"),
        "{}",
        report.table()
    );
    for metric in [Metric::FalseAlarmRate, Metric::FalseAlarmPaired] {
        assert!(
            failing
                .iter()
                .any(|c| c.metric == metric && c.group == "all scenes"),
            "{metric:?} should fail:\n{}",
            report.table()
        );
    }
    let table = report.table();
    assert!(
        table.contains("REGRESSION") && table.contains("energy"),
        "{table}"
    );
    assert!(report.markdown().contains("**REGRESSION**"));

    // The JUnit document is well-formed XML and carries the failing case.
    let xml = report.junit_xml();
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
    assert!(report.passed(), "{}", report.table());
}

#[test]
fn a_budget_below_the_measured_rate_fails_and_an_unpinned_run_is_refused() {
    let suite = small_suite(5);
    let baseline = run(&suite, None);
    let candidate = run(&suite, Some(&baseline));
    let settings = GateSettings {
        budget_per_hour: Some(0.5),
        ..GateSettings::default()
    };
    let report = gate(&candidate, &baseline, &settings).unwrap();
    let over: Vec<_> = report
        .regressions()
        .filter(|c| c.metric == Metric::FalseAlarmBudget)
        .collect();
    // Every detector has tens of false alarms per hour at the 60/h point: over a 0.5/h budget.
    assert!(!over.is_empty(), "{}", report.table());
    assert!(over.iter().all(|c| c.bound.unwrap() > 0.5));
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

    // A run made without --baseline cannot be gated: it says how to fix it.
    let err = gate(&baseline, &baseline, &GateSettings::default()).unwrap_err();
    assert!(err.0.contains("--baseline"), "{err}");
}
