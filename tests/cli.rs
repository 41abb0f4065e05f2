//! The command line as a user meets it: `synth` on every example scene writes
//! its five files, and `detectors` lists every built-in with its costs.

use echobench_integration_tests::workspace_root;
use std::path::{Path, PathBuf};
use std::process::Command;

/// Builds the binary once (cargo's own lock makes concurrent calls safe) and returns its path.
fn binary() -> PathBuf {
    let root = workspace_root();
    let status = Command::new(env!("CARGO"))
        .args(["build", "-q", "-p", "echobench"])
        .current_dir(&root)
        .status()
        .expect("cargo runs");
    assert!(status.success(), "building echobench failed");
    let target =
        std::env::var_os("CARGO_TARGET_DIR").map_or_else(|| root.join("target"), PathBuf::from);
    target.join("debug").join("echobench")
}

/// A fresh scratch folder for one test.
fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("echobench-cli-{tag}-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// Runs the binary and insists it succeeds, showing its output otherwise.
fn succeed(echobench: &Path, args: &[&str]) -> std::process::Output {
    let result = Command::new(echobench).args(args).output().unwrap();
    assert!(
        result.status.success(),
        "{args:?}: {}{}",
        String::from_utf8_lossy(&result.stdout),
        String::from_utf8_lossy(&result.stderr)
    );
    result
}

#[test]
fn synth_writes_five_files_for_every_example_scene() {
    let echobench = binary();
    let scenes = workspace_root().join("scenarios/scenes");
    let out = std::env::temp_dir().join(format!("echobench-cli-synth-{}", std::process::id()));
    let mut count = 0;
    for entry in std::fs::read_dir(&scenes).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_none_or(|e| e != "yaml") {
            continue;
        }
        count += 1;
        let result = Command::new(&echobench)
            .arg("synth")
            .arg(&path)
            .arg("--out")
            .arg(&out)
            .output()
            .unwrap();
        assert!(
            result.status.success(),
            "{}: {}",
            path.display(),
            String::from_utf8_lossy(&result.stderr)
        );
        let stem = path.file_stem().unwrap().to_string_lossy().into_owned();
        for suffix in [
            "-trial0.wav",
            "-trial0.csv",
            "-trial0-truth.csv",
            "-trial0-spectrogram.svg",
        ] {
            let file = out.join(format!("{stem}{suffix}"));
            let size = std::fs::metadata(&file)
                .unwrap_or_else(|_| panic!("{} is missing", file.display()))
                .len();
            assert!(size > 40, "{} is empty", file.display());
        }
        let labels = std::fs::read_to_string(out.join(format!("{stem}-trial0-labels.csv")))
            .expect("a label file is written");
        assert!(labels.starts_with("start_s,end_s,kind"), "{labels}");
    }
    assert!(count >= 6, "at least six example scenes, found {count}");
    std::fs::remove_dir_all(&out).unwrap();
}

#[test]
fn detectors_lists_every_built_in_with_its_cost() {
    let result = Command::new(binary()).arg("detectors").output().unwrap();
    assert!(result.status.success());
    let text = String::from_utf8_lossy(&result.stdout);
    for id in [
        "energy",
        "window-comparator",
        "ca-cfar",
        "os-cfar",
        "band-ratio",
        "periodicity",
        "energy-c",
        "external",
    ] {
        assert!(
            text.contains(&format!("{id}: ")),
            "`{id}` missing from:\n{text}"
        );
    }
    assert_eq!(text.matches("cost at defaults").count(), 8, "{text}");
    assert!(text.contains("bytes") && text.contains("operations per sample"));
}

/// Shards run apart, written to files and merged give the very bytes of the
/// unsharded run (the tallies survive their JSON round trip exactly).
#[test]
fn merged_shard_folders_equal_the_unsharded_run_byte_for_byte() {
    let echobench = binary();
    let dir = scratch("shards");
    let suite = dir.join("suite.yaml");
    std::fs::write(
        &suite,
        r#"
name: shard-check
seed: 5
trials: 6
calibration_trials: 1
scenes:
  - id: corridor
    label: target
    scene:
      duration_s: 6
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      actors:
        - kind: walker
          path: {start_m: [{uniform: [3, 8]}, 0], heading_deg: 180, speed_mps: 1.2, enter_s: 1}
  - id: fan
    label: nuisance
    scene:
      duration_s: 6
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      actors:
        - {kind: fan, position_m: [3, 0.5, 1], tip_radius_m: 0.15, rev_per_s: {uniform: [10, 20]}}
detectors:
  - plugin: energy
  - plugin: band-ratio
"#,
    )
    .unwrap();
    let run = |args: &[&str], out: &str| {
        let out = dir.join(out);
        let mut all = args.to_vec();
        all.extend(["--out", out.to_str().unwrap()]);
        succeed(&echobench, &all);
    };
    let suite_arg = suite.to_str().unwrap();
    run(&["run", suite_arg], "whole");
    run(&["run", suite_arg, "--shard", "1/2"], "shard1");
    run(&["run", suite_arg, "--shard", "2/2"], "shard2");
    let shard1 = dir.join("shard1");
    let shard2 = dir.join("shard2");
    run(
        &[
            "merge",
            shard1.to_str().unwrap(),
            shard2.to_str().unwrap(),
            "--suite",
            suite_arg,
        ],
        "merged",
    );
    for file in ["summary.json", "roc.csv", "events.csv", "tallies.json"] {
        let whole = std::fs::read(dir.join("whole").join(file)).unwrap();
        let merged = std::fs::read(dir.join("merged").join(file)).unwrap();
        assert!(
            whole == merged,
            "{file} differs between the merged shards and the whole run"
        );
    }
    std::fs::remove_dir_all(&dir).unwrap();
}

/// The gate as CI meets it: save a baseline, run against it, and read the exit codes —
/// 0 for an unchanged run, 1 for a baseline doctored to have had fewer false alarms
/// (the failure named in the table, the Markdown and the JUnit file), 2 for a run that
/// was not scored at the baseline's thresholds.
#[test]
fn gate_exit_codes_and_files() {
    let echobench = binary();
    let dir = scratch("gate");
    let suite = dir.join("suite.yaml");
    std::fs::write(
        &suite,
        r#"
name: gate-check
seed: 9
trials: 12
calibration_trials: 4
scenes:
  - id: palm
    label: nuisance
    scene:
      duration_s: 20
      sensor:
        carrier_hz: 24.125e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [200], gain_db: 60}
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
scoring:
  target_false_alarms_per_hour: [200]
"#,
    )
    .unwrap();
    let suite_arg = suite.to_str().unwrap();
    let path = |name: &str| dir.join(name).to_str().unwrap().to_string();
    let call = |args: &[&str]| Command::new(&echobench).args(args).output().unwrap();
    let ok = |args: &[&str]| {
        succeed(&echobench, args);
    };
    ok(&["run", suite_arg, "--out", &path("before")]);
    ok(&["keep", &path("before"), "--as", &path("base")]);
    ok(&[
        "run",
        suite_arg,
        "--against",
        &path("base"),
        "--out",
        &path("after"),
    ]);

    let result = call(&["gate", &path("after"), "--against", &path("base")]);
    let stdout = String::from_utf8_lossy(&result.stdout);
    assert_eq!(result.status.code(), Some(0), "{stdout}");
    assert!(stdout.contains("gate: pass"));

    // Doctor the baseline: no false alarms at all.
    let tallies_file = dir.join("base").join("tallies.json");
    let mut tallies: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&tallies_file).unwrap()).unwrap();
    let mut candidate_alarms = 0;
    for variant in tallies["detectors"][0]["variants"].as_array_mut().unwrap() {
        for op in variant["operating"].as_array_mut().unwrap() {
            candidate_alarms += op["false_alarms"].as_u64().unwrap();
            op["false_alarms"] = 0.into();
            for trial in op["trials"].as_array_mut().unwrap() {
                trial["false_alarms"] = 0.into();
            }
        }
    }
    assert!(
        candidate_alarms >= 10,
        "the suite must raise false alarms: {candidate_alarms}"
    );
    std::fs::write(&tallies_file, serde_json::to_string(&tallies).unwrap()).unwrap();
    // A file changed by hand no longer matches the folder's manifest: refused, exit 2.
    let result = call(&["gate", &path("after"), "--against", &path("base")]);
    assert_eq!(result.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&result.stderr).contains("tallies.json is not the file of run"));
    // Sealed again on purpose, the doctored baseline is read.
    echobench_run_folder::seal(
        &dir.join("base"),
        "doctored-by-the-test",
        echobench_run_folder::FolderKind::Reference,
    )
    .unwrap();
    let result = call(&["gate", &path("after"), "--against", &path("base")]);
    let stdout = String::from_utf8_lossy(&result.stdout);
    assert_eq!(result.status.code(), Some(1), "{stdout}");
    assert!(
        stdout.contains("REGRESSION") && stdout.contains("energy"),
        "{stdout}"
    );
    let markdown = std::fs::read_to_string(dir.join("after").join("gate.md")).unwrap();
    assert!(
        markdown.starts_with("## echobench gate: REGRESSION"),
        "{markdown}"
    );
    let junit = std::fs::read_to_string(dir.join("after").join("gate-junit.xml")).unwrap();
    let doc = roxmltree::Document::parse(&junit).unwrap();
    assert!(doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .any(
            |n| n.attribute("classname") == Some("echobench.gate.gate-check.energy")
                && n.children().any(|c| c.has_tag_name("failure"))
        ));

    // A run made without --against: an error, exit 2, and the message says what to do.
    let result = call(&["gate", &path("before"), "--against", &path("base")]);
    assert_eq!(result.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&result.stderr);
    assert!(stderr.contains("--against"), "{stderr}");
    std::fs::remove_dir_all(&dir).unwrap();
}

/// An external detector that crashes is reported per trial and the run completes for the
/// others; without `--allow-exec` the suite is refused before anything runs.
#[test]
fn a_crashing_external_detector_is_reported_and_the_run_completes() {
    let echobench = binary();
    let dir = scratch("external");
    let script = dir.join("crash.sh");
    std::fs::write(&script, "#!/bin/sh\necho 'out of cheese' >&2\nexit 3\n").unwrap();
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&script, std::fs::Permissions::from_mode(0o755)).unwrap();
    }
    let suite = dir.join("suite.yaml");
    std::fs::write(
        &suite,
        format!(
            r#"
name: external-check
seed: 2
trials: 3
calibration_trials: 1
scenes:
  - id: quiet
    label: nuisance
    scene:
      duration_s: 4
      sensor:
        carrier_hz: 24.125e9
        sample_rate_hz: 1000
        front_end: {{high_pass_hz: [0.5], low_pass_hz: [200], gain_db: 60}}
        adc: {{bits: 12, full_scale_v: 3.3}}
detectors:
  - plugin: energy
  - plugin: external
    label: crasher
    params: {{command: {}, timeout_s: 10}}
"#,
            script.display()
        ),
    )
    .unwrap();
    let out = dir.join("run");
    let refused = Command::new(&echobench)
        .args([
            "run",
            suite.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    assert_eq!(refused.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&refused.stderr).contains("--allow-exec"));
    assert!(!out.exists(), "nothing ran");

    // The run completes and writes its folder, but a detector that failed on every test
    // trial makes it exit 3 (README, "Exit codes"), naming the detector.
    let result = Command::new(&echobench)
        .args([
            "run",
            suite.to_str().unwrap(),
            "--allow-exec",
            "--out",
            out.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    assert_eq!(result.status.code(), Some(3));
    assert!(String::from_utf8_lossy(&result.stderr)
        .contains("detector crasher failed on every test trial"));
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let detectors = summary["detectors"].as_array().unwrap();
    assert!(detectors[0]["failures"].as_array().unwrap().is_empty());
    let failures = detectors[1]["failures"].as_array().unwrap();
    // One calibration and three test trials, each reported with the program's own words.
    assert_eq!(failures.len(), 4, "{failures:?}");
    assert!(failures
        .iter()
        .all(|f| f["message"].as_str().unwrap().contains("out of cheese")));
    std::fs::remove_dir_all(&dir).unwrap();
}

/// `detectors --carrier-hz` shows the same m/s bands as different hertz at each carrier: 0.3–4 m/s
/// is 4.9–65.4 Hz at 2.45 GHz and 48.3–643.8 Hz at 24.125 GHz (f = 2v·f_c/c;
/// docs/reference/radar-physics.md#r8: 16.345 and 160.945 Hz per m/s), and a 0.25 m/s resolution
/// takes λ/(2Δv) = 0.245 s (490 samples at 2 kHz) and 0.0249 s (50 samples).
#[test]
fn detectors_prints_bands_and_frames_in_both_units_at_a_carrier() {
    for (carrier, band, frame) in [
        ("2.45e9", "4.9–65.4 Hz = 0.30–4.00 m/s", "490 samples"),
        ("24.125e9", "48.3–643.8 Hz = 0.30–4.00 m/s", "50 samples"),
    ] {
        let result = Command::new(binary())
            .args([
                "detectors",
                "--carrier-hz",
                carrier,
                "--sample-rate-hz",
                "2000",
            ])
            .output()
            .unwrap();
        assert!(result.status.success());
        let text = String::from_utf8_lossy(&result.stdout);
        let band_ratio = text
            .split("\n\n")
            .find(|block| block.starts_with("band-ratio: "))
            .expect("a band-ratio block");
        assert!(
            band_ratio.contains(&format!("motion band `motion` at defaults: {band}")),
            "{band_ratio}"
        );
        assert!(
            band_ratio.contains(&format!("frame at defaults: {frame}")),
            "{band_ratio}"
        );
    }
}

/// `zone` adds a run's detection zone to its folder (data, pictures, report), and the parts
/// of two shards combine into the same `zone.json`, byte for byte; a missing shard is refused.
#[test]
fn zone_adds_the_zone_to_the_run_and_shard_parts_combine_to_the_same_files() {
    let echobench = binary();
    let dir = scratch("zone");
    let suite = dir.join("suite.yaml");
    std::fs::write(
        &suite,
        r#"
name: zone-check
seed: 9
trials: 2
calibration_trials: 2
scenes:
  - id: hall
    label: nuisance
    scene:
      duration_s: 6
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        position_m: [0, 0, 1.2]
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
zone:
  scene: hall
  floor_m: {x: [0.5, 6.5], y: [-3, 3]}
  cells: [3, 3]
  walkers_per_cell: 2
detectors:
  - plugin: energy
  - plugin: band-ratio
"#,
    )
    .unwrap();
    let run = dir.join("run");
    let (suite_arg, run_arg) = (suite.to_str().unwrap(), run.to_str().unwrap());
    succeed(&echobench, &["run", suite_arg, "--out", run_arg]);
    let out = succeed(&echobench, &["zone", run_arg, "--suite", suite_arg]);
    let console = String::from_utf8_lossy(&out.stdout);
    assert!(
        console.contains("Detection zone of zone-check"),
        "{console}"
    );
    let whole = std::fs::read(run.join("zone.json")).unwrap();
    let csv = std::fs::read_to_string(run.join("zone.csv")).unwrap();
    assert!(csv.starts_with("product,detector,kind,cell_x"), "{csv}");
    // 2 detectors × 2 kinds × 9 cells.
    assert_eq!(csv.lines().count(), 1 + 2 * 2 * 9);
    for picture in [
        "zone-zone-check-energy-approach-floor.svg",
        "zone-zone-check-band-ratio-cross-floor.svg",
    ] {
        let svg = std::fs::read_to_string(run.join(picture)).unwrap();
        assert!(svg.starts_with("<svg"), "{picture}");
    }
    let report = std::fs::read_to_string(run.join("report.html")).unwrap();
    assert!(report.contains("Detection zone: where each detector first sees a walker"));
    // The amended folder is sealed: every reader still opens it.
    succeed(
        &echobench,
        &[
            "report",
            run_arg,
            "--out",
            dir.join("again.html").to_str().unwrap(),
        ],
    );

    let part = |k: &str| dir.join(format!("part{k}"));
    for k in ["1", "2"] {
        succeed(
            &echobench,
            &[
                "zone",
                run_arg,
                "--suite",
                suite_arg,
                "--shard",
                &format!("{k}/2"),
                "--part",
                part(k).to_str().unwrap(),
            ],
        );
    }
    let missing = Command::new(&echobench)
        .args(["zone", run_arg, "--suite", suite_arg, "--parts"])
        .arg(part("1"))
        .output()
        .unwrap();
    assert!(!missing.status.success());
    assert!(
        String::from_utf8_lossy(&missing.stderr).contains("give every shard of one split"),
        "{}",
        String::from_utf8_lossy(&missing.stderr)
    );
    succeed(
        &echobench,
        &[
            "zone",
            run_arg,
            "--suite",
            suite_arg,
            "--parts",
            part("1").to_str().unwrap(),
            part("2").to_str().unwrap(),
        ],
    );
    assert!(
        std::fs::read(run.join("zone.json")).unwrap() == whole,
        "the combined parts differ from the zone walked in one pass"
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

/// `report --tuning DIR` carries a tuning's verdict: the table of default against tuned and
/// the search history; a tuning of another suite is refused.
#[test]
fn the_report_carries_a_tuning_of_its_suite() {
    let echobench = binary();
    let dir = scratch("tuning-report");
    let suite = dir.join("suite.yaml");
    std::fs::write(
        &suite,
        r#"
name: tuning-check
seed: 4
trials: 3
calibration_trials: 2
scenes:
  - id: walk-in
    label: target
    scene:
      duration_s: 6
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      actors:
        - kind: walker
          path: {start_m: [{uniform: [3, 6]}, 0], heading_deg: 180, speed_mps: 1.2, enter_s: 1}
  - id: hall
    label: nuisance
    scene:
      duration_s: 6
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
detectors:
  - plugin: energy
  - {plugin: energy, label: energy-b}
"#,
    )
    .unwrap();
    let (run, tuning) = (dir.join("run"), dir.join("tuning"));
    let suite_arg = suite.to_str().unwrap();
    succeed(
        &echobench,
        &["run", suite_arg, "--out", run.to_str().unwrap()],
    );
    succeed(
        &echobench,
        &[
            "tune",
            suite_arg,
            "--out",
            tuning.to_str().unwrap(),
            "--configs",
            "2",
            "--rungs",
            "1",
            "--without-room-check",
        ],
    );
    // The same tuning in two shards of one entry each, merged: the same files.
    let tune_args = ["--configs", "2", "--rungs", "1", "--without-room-check"];
    for k in ["1", "2"] {
        let mut args = vec!["tune", suite_arg, "--shard"];
        let shard = format!("{k}/2");
        let out = dir.join(format!("part{k}"));
        args.extend([shard.as_str(), "--out", out.to_str().unwrap()]);
        args.extend(tune_args);
        succeed(&echobench, &args);
    }
    let merged = dir.join("merged");
    let mut args = vec![
        "tune",
        suite_arg,
        "--out",
        merged.to_str().unwrap(),
        "--parts",
    ];
    let (p1, p2) = (dir.join("part1"), dir.join("part2"));
    args.extend([p1.to_str().unwrap(), p2.to_str().unwrap()]);
    args.extend(tune_args);
    succeed(&echobench, &args);
    for file in ["tune-summary.json", "tuned-suite.yaml", "tune-history.svg"] {
        assert!(
            std::fs::read(tuning.join(file)).unwrap() == std::fs::read(merged.join(file)).unwrap(),
            "{file} differs between the merged parts and the whole tuning"
        );
    }

    let html = dir.join("report.html");
    succeed(
        &echobench,
        &[
            "report",
            run.to_str().unwrap(),
            "--tuning",
            tuning.to_str().unwrap(),
            "--out",
            html.to_str().unwrap(),
        ],
    );
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("Tuning: each detector tuned on its own trials"));
    assert!(page.contains("data-check=\"tuning\""));
    assert!(page.contains("tuned Pd (held-out)"));

    // A tuning of another suite is refused by name.
    let other_suite = dir.join("other.yaml");
    let text = std::fs::read_to_string(&suite).unwrap();
    std::fs::write(
        &other_suite,
        text.replace("name: tuning-check", "name: other-check"),
    )
    .unwrap();
    let other = dir.join("other-run");
    succeed(
        &echobench,
        &[
            "run",
            other_suite.to_str().unwrap(),
            "--out",
            other.to_str().unwrap(),
        ],
    );
    let refused = Command::new(&echobench)
        .args(["report", other.to_str().unwrap(), "--tuning"])
        .arg(&tuning)
        .args(["--out", dir.join("x.html").to_str().unwrap()])
        .output()
        .unwrap();
    assert!(!refused.status.success());
    assert!(String::from_utf8_lossy(&refused.stderr).contains("not of this run's suite"));
    std::fs::remove_dir_all(&dir).unwrap();
}
