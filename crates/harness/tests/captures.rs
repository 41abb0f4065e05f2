//! Recordings as suite scenes: a synthesized trial written to WAV with its truth as a label
//! file scores exactly like the synthesized trial; mixing a scene in at −200 dB changes
//! nothing while mixing it at 0 dB carries its events through; a recording at another rate
//! is resampled; bad capture entries are refused with file, line and field.

use echobench_capture::{write_labels, Label};
use echobench_harness::runner::{resolve_detectors, run_suite, Tallies};
use echobench_scene::{export, synthesize, SceneSpec, StreamKey};
use echobench_suite::Suite;
use echobench_suite::{load_suite_text, FolderSource};
use std::path::{Path, PathBuf};

const SENSOR: &str = r#"
      sensor:
        carrier_hz: 24.125e9
        sample_rate_hz: 2000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [300], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      coverage: {range_m: 8, azimuth_half_deg: 60}"#;

const WALKER: &str = r#"
      actors:
        - kind: walker
          id: visitor
          target: true
          path: {start_m: [6, 0], heading_deg: 180, speed_mps: 1.2, enter_s: 3, leave_s: 9}"#;

fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("echobench-captures-{}-{tag}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn load(dir: &Path, text: &str) -> Suite {
    let plugins = echobench_detectors::builtin();
    load_suite_text("captures.yaml", text, &FolderSource::new(dir), &plugins)
        .unwrap_or_else(|r| panic!("{r}"))
        .0
}

fn run(suite: &Suite) -> Tallies {
    let plugins = echobench_detectors::builtin();
    let detectors = resolve_detectors(suite, &plugins).unwrap();
    run_suite(suite, &detectors, None, &|_| {}).unwrap().0
}

/// Writes trial `trial` of the suite's first scene (as the synthetic suite would draw it)
/// to `name.wav` and its truth to `name-labels.csv`.
fn record(dir: &Path, scene: &SceneSpec, seed: u64, scene_id: &str, trial: u64, name: &str) {
    let key = StreamKey {
        suite_seed: seed,
        scene_id: scene_id.to_string(),
        sweep_point: 0,
        trial,
    };
    let t = synthesize(scene, &key).unwrap();
    export::write_wav(&dir.join(format!("{name}.wav")), &t).unwrap();
    let labels: Vec<Label> = t
        .truth
        .events
        .iter()
        .map(|e| Label::new(e.interval, "walk"))
        .collect();
    write_labels(&dir.join(format!("{name}-labels.csv")), &labels).unwrap();
}

/// The two test and two calibration recordings `capture_suite` names, drawn as the
/// synthetic suite draws its trials.
fn record_suite_trials(dir: &Path, scene: &SceneSpec, seed: u64) {
    for trial in 0..2 {
        record(dir, scene, seed, "walk", trial, &format!("test-{trial}"));
        record(
            dir,
            scene,
            seed,
            "calibration/walk",
            trial,
            &format!("cal-{trial}"),
        );
    }
}

fn synthetic_suite(seed: u64) -> String {
    format!(
        "name: walk-study\nseed: {seed}\ntrials: 2\ncalibration_trials: 2\nscenes:\n  - id: walk\n    label: target\n    scene:\n      duration_s: 12{SENSOR}{WALKER}\ndetectors:\n  - plugin: energy\n  - plugin: band-ratio\n  - plugin: periodicity\n"
    )
}

fn capture_suite(seed: u64, extra: &str, actors: &str) -> String {
    format!(
        "name: walk-study\nseed: {seed}\nscenes:\n  - id: walk\n    label: target\n    capture:\n      recordings:\n        - {{samples: test-0.wav, labels: test-0-labels.csv}}\n        - {{samples: test-1.wav, labels: test-1-labels.csv}}\n      calibration_recordings:\n        - {{samples: cal-0.wav, labels: cal-0-labels.csv}}\n        - {{samples: cal-1.wav, labels: cal-1-labels.csv}}\n{extra}    scene:\n      duration_s: 12{SENSOR}{actors}\ndetectors:\n  - plugin: energy\n  - plugin: band-ratio\n  - plugin: periodicity\n"
    )
}

#[test]
fn a_synthesized_trial_read_back_from_wav_scores_exactly_like_the_synthesis() {
    let dir = scratch("roundtrip");
    let seed = 3;
    let synthetic = load(&dir, &synthetic_suite(seed));
    let scene = &synthetic.scenes[0].variants[0].scene;
    record_suite_trials(&dir, scene, seed);
    let recorded = load(&dir, &capture_suite(seed, "", ""));
    assert_eq!(recorded.scenes[0].trials, 2);
    assert_eq!(recorded.scenes[0].calibration_trials, 2);
    let a = run(&synthetic);
    let b = run(&recorded);
    // Same samples, same truth: identical thresholds, counts and per-trial scores.
    for (x, y) in a.detectors.iter().zip(&b.detectors) {
        assert_eq!(x.thresholds, y.thresholds, "{}", x.label);
        assert_eq!(
            x.variants[0].max_scores, y.variants[0].max_scores,
            "{}",
            x.label
        );
        assert_eq!(x.variants[0].events, y.variants[0].events);
        assert_eq!(
            x.variants[0].detected, y.variants[0].detected,
            "{}",
            x.label
        );
        assert_eq!(x.variants[0].false_alarms, y.variants[0].false_alarms);
    }
    assert!(
        b.detectors[0].variants[0].events >= 2,
        "the walker is labelled"
    );

    // Mixing the scene's own signal in at −200 dB leaves every sample on its code.
    let faint = load(&dir, &capture_suite(seed, "      mix_db: -200\n", ""));
    let c = run(&faint);
    for (x, y) in b.detectors.iter().zip(&c.detectors) {
        assert_eq!(
            x.variants[0].max_scores, y.variants[0].max_scores,
            "{}",
            x.label
        );
    }
    // At 0 dB a mixed walker is a second target: its events join the labels' in the truth,
    // and the scores change.
    let loud = load(&dir, &capture_suite(seed, "      mix_db: 0\n", WALKER));
    let d = run(&loud);
    assert!(d.detectors[0].variants[0].events >= b.detectors[0].variants[0].events);
    assert_ne!(
        d.detectors[0].variants[0].max_scores,
        b.detectors[0].variants[0].max_scores
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn a_recording_at_another_rate_is_resampled_to_the_scene_rate() {
    let dir = scratch("resample");
    let seed = 4;
    // Record at 4 kHz, score as the 2 kHz module of the suite.
    let fast = load(
        &dir,
        &synthetic_suite(seed).replace("sample_rate_hz: 2000", "sample_rate_hz: 4000"),
    );
    let scene = &fast.scenes[0].variants[0].scene;
    record_suite_trials(&dir, scene, seed);
    let recorded = load(&dir, &capture_suite(seed, "", ""));
    let tallies = run(&recorded);
    assert_eq!(tallies.test_trials, 2);
    for d in &tallies.detectors {
        assert!(d.failures.is_empty(), "{}: {:?}", d.label, d.failures);
    }
    // The walker is still seen: the energy detector's trial maxima stand above calibration's
    // lowest grid threshold.
    let energy = &tallies.detectors[0];
    assert!(energy.variants[0]
        .max_scores
        .iter()
        .all(|(_, s)| *s > energy.thresholds[0]));
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn bad_capture_entries_name_the_file_line_and_field() {
    let dir = scratch("bad");
    let seed = 5;
    let synthetic = load(&dir, &synthetic_suite(seed));
    let scene = &synthetic.scenes[0].variants[0].scene;
    record(&dir, scene, seed, "walk", 0, "test-0");
    std::fs::write(
        dir.join("test-1-labels.csv"),
        "start_s,end_s,kind\n1,4,walk\n3,6,walk\n",
    )
    .unwrap();
    std::fs::copy(dir.join("test-0.wav"), dir.join("test-1.wav")).unwrap();
    let plugins = echobench_detectors::builtin();
    let text = capture_suite(seed, "", "");
    let report = load_suite_text("captures.yaml", &text, &FolderSource::new(&dir), &plugins)
        .expect_err("refused");
    let message = report.to_string();
    // The overlapping labels: the label file and both lines.
    assert!(message.contains("test-1-labels.csv"), "{message}");
    assert!(
        message.contains("line 3") || message.contains(":3"),
        "{message}"
    );
    assert!(
        message.contains("scenes[0].capture.recordings[1].labels"),
        "{message}"
    );
    // The missing calibration recordings.
    assert!(message.contains("cal-0.wav"), "{message}");
    assert!(
        message.contains("scenes[0].capture.calibration_recordings[0].samples"),
        "{message}"
    );

    // A cut WAV header and a CSV without its rate.
    std::fs::write(
        dir.join("cut.wav"),
        &std::fs::read(dir.join("test-0.wav")).unwrap()[..30],
    )
    .unwrap();
    std::fs::write(dir.join("samples.csv"), "2048\n2050\n").unwrap();
    let text = format!(
        "name: bad\nscenes:\n  - id: walk\n    label: target\n    capture:\n      recordings:\n        - {{samples: cut.wav}}\n        - {{samples: samples.csv}}\n    scene:\n      duration_s: 12{SENSOR}\ndetectors:\n  - plugin: energy\n"
    );
    let report = load_suite_text("bad.yaml", &text, &FolderSource::new(&dir), &plugins)
        .expect_err("refused");
    let message = report.to_string();
    assert!(
        message.contains("cut.wav") && message.contains("recordings[0].samples"),
        "{message}"
    );
    assert!(message.contains("csv_sample_rate_hz"), "{message}");
    assert!(
        message.contains("bad.yaml:8:"),
        "the CSV problem is located: {message}"
    );
    std::fs::remove_dir_all(&dir).unwrap();
}
