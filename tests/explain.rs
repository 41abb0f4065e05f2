//! `echobench explain` and the report's gallery as a user meets them: a tiny suite is run, a
//! trial named by its key is drawn again with the counts the run recorded, a bad key or
//! product is refused with what the run has, and the report holds the gallery.

use echobench_integration_tests::workspace_root;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

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

fn run_in(dir: &Path, echobench: &Path, args: &[&str]) -> Output {
    Command::new(echobench)
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap()
}

fn succeed(dir: &Path, echobench: &Path, args: &[&str]) -> String {
    let result = run_in(dir, echobench, args);
    assert!(
        result.status.success(),
        "{args:?}: {}{}",
        String::from_utf8_lossy(&result.stdout),
        String::from_utf8_lossy(&result.stderr)
    );
    String::from_utf8_lossy(&result.stdout).into_owned()
}

const SUITE: &str = r#"
name: explain-cli
seed: 3
trials: 2
calibration_trials: 1
scenes:
  - id: corridor
    label: target
    sweep:
      field: actors[0].path.start_m[0]
      values: [3, 9]
    scene:
      duration_s: 6
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 1000
        front_end: {high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}
        adc: {bits: 12, full_scale_v: 3.3}
      actors:
        - kind: walker
          path: {start_m: [5, 0], heading_deg: 180, speed_mps: 1.2, enter_s: 1}
  - id: fan-room
    label: nuisance
    scene:
      duration_s: 6
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

#[test]
fn explain_draws_a_trial_of_a_run_and_the_report_holds_the_gallery() {
    let echobench = binary();
    let dir = std::env::temp_dir().join(format!("echobench-explain-cli-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("suite.yaml"), SUITE).unwrap();
    succeed(&dir, &echobench, &["run", "suite.yaml", "--out", "run"]);
    let report = std::fs::read_to_string(dir.join("run/report.html")).unwrap();
    assert!(report.contains("Worst misses and false alarms"));

    // A named trial, drawn where asked, with the run's own counts.
    let out = succeed(
        &dir,
        &echobench,
        &[
            "explain",
            "run",
            "--detector",
            "energy",
            "--trial",
            "corridor@9/1",
            "--out",
            "one.svg",
        ],
    );
    assert!(
        out.contains("energy on corridor@9/1 (explain-cli)"),
        "{out}"
    );
    assert!(out.contains("the run recorded the same counts"), "{out}");
    assert!(out.contains("wrote one.svg"), "{out}");
    let svg = std::fs::read_to_string(dir.join("one.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("class=\"score-trace data\""));
    assert!(svg.contains("class=\"threshold\"") && svg.contains("class=\"truth-window\""));

    // The default file name comes from the detector and the key; the same trial gives the
    // same bytes, and spaces around `@` as tables print rooms are accepted.
    succeed(
        &dir,
        &echobench,
        &[
            "explain",
            "run",
            "--detector",
            "energy",
            "--trial",
            "corridor @ 9/1",
            "--product",
            "explain-cli",
            "--target-rate",
            "1",
        ],
    );
    let again = std::fs::read_to_string(dir.join("explain-energy-corridor@9-1.svg")).unwrap();
    assert_eq!(again, svg);

    // Refusals name what the run has, with exit 2.
    for (args, expected) in [
        (vec!["--trial", "nowhere/0"], "no scene `nowhere`"),
        (vec!["--trial", "corridor/0"], "swept over 3, 9"),
        (
            vec!["--trial", "fan-room/0", "--product", "other"],
            "belongs to product `explain-cli`",
        ),
        (
            vec!["--trial", "fan-room/0", "--target-rate", "3"],
            "no operating point",
        ),
    ] {
        let mut all = vec!["explain", "run", "--detector", "band-ratio"];
        all.extend(args.iter().copied());
        let result = run_in(&dir, &echobench, &all);
        let stderr = String::from_utf8_lossy(&result.stderr);
        assert_eq!(result.status.code(), Some(2), "{all:?}: {stderr}");
        assert!(stderr.contains(expected), "{all:?}: {stderr}");
    }

    // `report` draws the gallery again, byte for byte the run's.
    succeed(&dir, &echobench, &["report", "run", "--out", "again.html"]);
    let rewritten = std::fs::read_to_string(dir.join("again.html")).unwrap();
    assert_eq!(rewritten, report);
    // A folder that is not one whole run is refused, as by every reader of run folders.
    std::fs::write(dir.join("run/stray.txt"), "not of this run").unwrap();
    let result = run_in(
        &dir,
        &echobench,
        &[
            "explain",
            "run",
            "--detector",
            "energy",
            "--trial",
            "fan-room/0",
        ],
    );
    let stderr = String::from_utf8_lossy(&result.stderr);
    assert_eq!(result.status.code(), Some(2), "{stderr}");
    assert!(
        stderr.contains("not a complete run folder") && stderr.contains("stray.txt"),
        "{stderr}"
    );
    std::fs::remove_dir_all(&dir).unwrap();
}
