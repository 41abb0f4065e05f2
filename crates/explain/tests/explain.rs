//! Explaining trials of a small suite of inline scenes: the re-created trial gives the counts
//! the runner recorded, the picture holds its parts and says what happened, the same inputs
//! give the same bytes, and the gallery's choice follows its rule.

use echobench_core::detector::DetectorPlugin;
use echobench_explain::{
    explain_trial, gallery_sections, select_gallery, trial_key_text, ExplainRequest, ExplainRun,
    PickKind, TrialRef, MAX_GALLERY_PICTURES,
};
use echobench_harness::runner::{resolve_detectors, run_suite, Tallies, TrialOutcome};
use echobench_suite::Suite;
use echobench_suite::{load_suite_text, FolderSource};
use std::sync::Arc;

const SUITE: &str = r#"
name: explain-check
seed: 11
trials: 3
calibration_trials: 2
scenes:
  - id: corridor
    label: target
    sweep:
      field: actors[0].path.start_m[0]
      values: [3, 9]
    scene:
      duration_s: 8
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      actors:
        - kind: walker
          path: {start_m: [5, 0], heading_deg: 180, speed_mps: 1.2, enter_s: 2}
  - id: fan-room
    label: nuisance
    scene:
      duration_s: 8
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      actors:
        - {kind: fan, position_m: [2, 0.3, 1], tip_radius_m: 0.15, rev_per_s: {uniform: [10, 20]}}
detectors:
  - plugin: energy
  - plugin: band-ratio
"#;

fn plugins() -> Vec<Arc<dyn DetectorPlugin>> {
    echobench_detectors::builtin()
}

fn suite() -> Suite {
    load_suite_text(
        "explain-check.yaml",
        SUITE,
        &FolderSource::new("."),
        &plugins(),
    )
    .unwrap_or_else(|report| panic!("{report}"))
    .0
}

/// The suite run once (2 threads), as `echobench run` would.
fn run() -> ExplainRun {
    let suite = suite();
    let detectors = resolve_detectors(&suite, &plugins()).unwrap();
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .unwrap();
    let (tallies, _) = pool
        .install(|| run_suite(&suite, &detectors, None, &|_| {}))
        .unwrap();
    ExplainRun::new(suite, tallies).unwrap()
}

fn request(detector: &str, trial: &str) -> ExplainRequest {
    ExplainRequest {
        detector: detector.into(),
        trial: trial.into(),
        product: None,
        target_per_hour: None,
    }
}

/// Every test trial of every detector, re-created, gives the counts the runner recorded for
/// it: the same key gives the same samples, scores and alarms.
#[test]
fn every_re_created_trial_matches_the_runs_record() {
    let run = run();
    let mut checked = 0;
    for scene in &run.suite.scenes {
        for variant in &scene.variants {
            for trial in 0..scene.trials {
                let key = trial_key_text(&scene.id, variant.sweep_value.as_deref(), trial, false);
                for detector in ["energy", "band-ratio"] {
                    let e = explain_trial(&run, &plugins(), &request(detector, &key)).unwrap();
                    assert!(e.recorded.is_some(), "{key}: no record");
                    assert_eq!(
                        e.matches_record(),
                        Some(true),
                        "{detector} {key}: {}",
                        e.text()
                    );
                    checked += 1;
                }
            }
        }
    }
    assert_eq!(checked, 2 * 3 * 3);
}

#[test]
fn the_picture_shows_score_threshold_alarms_and_truth_and_says_what_happened() {
    let mut run = run();
    // Energy with a threshold no score reaches: every event is missed, nothing alarms.
    let energy = run
        .tallies
        .detectors
        .iter_mut()
        .find(|d| d.label == "energy")
        .unwrap();
    energy.operating[0].threshold = 1e300;
    let missed = explain_trial(&run, &plugins(), &request("energy", "corridor@3/1")).unwrap();
    assert_eq!(missed.score.events_total(), 1);
    assert_eq!(missed.score.events_detected(), 0);
    assert!(
        missed.outcome().starts_with("missed 1 of 1 event"),
        "{}",
        missed.outcome()
    );
    let svg = &missed.svg;
    assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
    for part in [
        "class=\"score-trace data\"",
        "class=\"threshold\"",
        "(above)",
        "class=\"truth-event\"",
        "class=\"truth-window\"",
        "class=\"event-missed\"",
        "Missed 1 of 1 event: energy on corridor@3/1",
        "data:image/png;base64,",
        "Time (s)",
    ] {
        assert!(svg.contains(part), "`{part}` missing");
    }
    assert!(!svg.contains("class=\"alarm-detection\""));
    assert!(!svg.contains("class=\"alarm-false\""));
    // Where the run detected it at its own threshold, the explanation at the doctored
    // threshold no longer matches the record, and says so.
    let recorded = missed.recorded.unwrap();
    let alarmed_in_run = recorded.detected > 0 || recorded.false_alarms > 0;
    assert_eq!(missed.matches_record(), Some(!alarmed_in_run));
    assert_eq!(missed.text().contains("warning"), alarmed_in_run);

    // Energy with a threshold under every score: the alarm never switches off, so the fan
    // room is charged a false alarm per hold period, each while the fan was active.
    let energy = run
        .tallies
        .detectors
        .iter_mut()
        .find(|d| d.label == "energy")
        .unwrap();
    energy.operating[0].threshold = f64::MIN;
    let alarmed = explain_trial(&run, &plugins(), &request("energy", "fan-room/0")).unwrap();
    // 8 s with a 5 s hold: alarms at the first frame and one hold later.
    assert_eq!(alarmed.score.false_alarms(), 2, "{}", alarmed.text());
    assert_eq!(alarmed.score.stuck_recounts, 1);
    assert!(alarmed.outcome().starts_with("2 false alarms"));
    assert!(alarmed.svg.contains("2 false alarms"));
    assert_eq!(alarmed.svg.matches("class=\"alarm-false\"").count(), 2);
    assert!(alarmed.svg.contains("class=\"alarm-on\""));
    assert!(alarmed.svg.contains("class=\"truth-nuisance\""));
    assert!(alarmed.svg.contains("(below)"));
    // The fan turns through the whole trial: each false alarm is laid at its door.
    assert!(
        alarmed.false_alarm_sources.iter().all(|s| !s.is_empty()),
        "{:?}",
        alarmed.false_alarm_sources
    );
    assert!(alarmed.text().contains(" active\n"), "{}", alarmed.text());
}

#[test]
fn the_same_inputs_give_the_same_bytes() {
    let run = run();
    let a = explain_trial(&run, &plugins(), &request("band-ratio", "corridor@9/2")).unwrap();
    let b = explain_trial(&run, &plugins(), &request("band-ratio", "corridor @ 9/2")).unwrap();
    assert_eq!(a.svg, b.svg);
    let one = gallery_sections(&run, &plugins(), 2);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let other = pool.install(|| gallery_sections(&run, &plugins(), 2));
    assert_eq!(one, other);
    assert_eq!(one.len(), 1, "one product");
    assert_eq!(one[0].product.as_deref(), Some("explain-check"));
}

#[test]
fn bad_requests_say_what_the_run_has() {
    let run = run();
    let error = |detector: &str, trial: &str| {
        explain_trial(&run, &plugins(), &request(detector, trial))
            .unwrap_err()
            .to_string()
    };
    assert!(error("energy", "corridor/0").contains("swept over 3, 9"));
    assert!(error("energy", "corridr@3/0").contains("did you mean `corridor`"));
    assert!(error("energy", "corridor@3/7").contains("indices 0 to 2"));
    assert!(error("energy", "corridor@3").contains("SCENE[@SWEEP]/TRIAL"));
    assert!(error("energie", "corridor@3/0").contains("energy, band-ratio"));
    let mut wrong = request("energy", "corridor@3/0");
    wrong.target_per_hour = Some(7.0);
    let message = explain_trial(&run, &plugins(), &wrong)
        .unwrap_err()
        .to_string();
    assert!(message.contains("1/h"), "{message}");
    wrong.target_per_hour = None;
    wrong.product = Some("other".into());
    assert!(explain_trial(&run, &plugins(), &wrong).is_err());
    // A calibration trial has its own seed and no per-trial record.
    let calibration = explain_trial(
        &run,
        &plugins(),
        &request("energy", "calibration/fan-room/1"),
    )
    .unwrap();
    assert_eq!(calibration.recorded, None);
    assert_eq!(
        TrialRef::resolve(&run.suite, "calibration/corridor@9/0").unwrap(),
        TrialRef {
            scene_index: 0,
            variant_index: 1,
            trial: 0,
            calibration: true
        }
    );
}

/// Sets the per-trial outcomes of the first operating point of every variant of `detector`.
fn set_outcomes(tallies: &mut Tallies, detector: &str, outcomes: &[&[(u64, u32, u32, u32)]]) {
    let tally = tallies
        .detectors
        .iter_mut()
        .find(|d| d.label == detector)
        .unwrap();
    for (variant, list) in tally.variants.iter_mut().zip(outcomes) {
        variant.operating[0].trials = list
            .iter()
            .map(|&(trial, events, detected, false_alarms)| TrialOutcome {
                trial,
                false_alarms,
                events,
                detected,
            })
            .collect();
    }
}

#[test]
fn the_gallery_takes_the_most_misses_and_false_alarms_with_ties_in_suite_order() {
    let mut tallies = run().tallies;
    // Variants in suite order: corridor@3, corridor@9, fan-room.
    // (trial, events, detected, false alarms)
    set_outcomes(
        &mut tallies,
        "energy",
        &[
            &[(0, 1, 1, 0), (1, 2, 1, 1), (2, 2, 0, 0)],
            &[(0, 2, 0, 3), (1, 1, 0, 0), (2, 1, 1, 0)],
            &[(0, 0, 0, 3), (1, 0, 0, 1), (2, 0, 0, 5)],
        ],
    );
    set_outcomes(
        &mut tallies,
        "band-ratio",
        &[
            &[(0, 1, 1, 0), (1, 1, 1, 0), (2, 1, 1, 0)],
            &[(0, 1, 1, 0), (1, 1, 1, 0), (2, 1, 1, 0)],
            &[(0, 0, 0, 0), (1, 0, 0, 0), (2, 0, 0, 0)],
        ],
    );
    let selection = select_gallery(&tallies, 2);
    let keys: Vec<(PickKind, String)> = selection
        .picks
        .iter()
        .map(|p| (p.kind, format!("{}:{}", p.detector, p.key())))
        .collect();
    assert_eq!(
        keys,
        vec![
            // Two misses each: corridor@3/2 comes before corridor@9/0 (suite order).
            (PickKind::Missed, "energy:corridor@3/2".to_string()),
            (PickKind::Missed, "energy:corridor@9/0".to_string()),
            // Five false alarms, then three: corridor@9/0 before fan-room/0 (suite order).
            (PickKind::FalseAlarms, "energy:fan-room/2".to_string()),
            (PickKind::FalseAlarms, "energy:corridor@9/0".to_string()),
        ]
    );
    assert_eq!((selection.per_detector, selection.left_out), (2, 0));
    // One of each.
    let one = select_gallery(&tallies, 1);
    assert_eq!(one.picks.len(), 2);
    assert_eq!(one.picks[0].key(), "corridor@3/2");
    assert_eq!(one.picks[1].key(), "fan-room/2");
    // The bound: many trials per detector are cut to fit.
    let many = select_gallery(&tallies, 1000);
    assert!(many.picks.len() <= MAX_GALLERY_PICTURES);
    assert_eq!(
        many.picks.len(),
        4 + 5,
        "4 missed and 5 alarmed trials, all within the bound"
    );
    assert_eq!(many.left_out, 0);
}

#[test]
fn the_gallery_draws_each_pick_with_its_key() {
    let mut run = run();
    // Every trial alarmed: the gallery has false-alarm pictures for sure.
    for d in &mut run.tallies.detectors {
        d.operating[0].threshold = f64::MIN;
        for v in &mut d.variants {
            for t in &mut v.operating[0].trials {
                t.false_alarms = 2;
                t.detected = t.events;
            }
        }
    }
    let sections = gallery_sections(&run, &plugins(), 1);
    let html = &sections[0].html;
    assert_eq!(
        html.matches("<figure class=\"gallery\"").count(),
        2,
        "{html}"
    );
    assert!(html.contains("<h4>energy</h4>") && html.contains("<h4>band-ratio</h4>"));
    assert!(html.contains("<code>corridor@3/0</code>"));
    assert!(html.contains("echobench explain RUN --detector energy --trial corridor@3/0"));
    assert!(html.contains("class=\"plot explain\""));
    // Both pictures are of the same trial: one spectrogram (its heat map and colour bar are
    // the two images), drawn twice.
    assert_eq!(html.matches("class=\"spectrogram\"").count(), 1);
    assert_eq!(html.matches("data:image/png;base64,").count(), 2);
    assert_eq!(html.matches("<use href=\"#spectrogram-").count(), 1);
}
