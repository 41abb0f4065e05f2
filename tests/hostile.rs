//! The command line against hostile input and hostile circumstances: a writer killed after
//! each file and after the move (fault injection, no sleeps), doctored and incomplete run
//! folders, suites past the caps, bad recordings, out-of-range options, closed pipes,
//! incomplete shard sets, and a detector that fails on every trial.

use echobench_integration_tests::workspace_root;
use std::os::unix::process::ExitStatusExt;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};

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

/// A fresh, empty scratch folder for one test.
fn scratch(tag: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("echobench-hostile-{tag}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

/// Runs the binary with `args` (and `env`), returning its output.
fn call(echobench: &Path, args: &[&str], env: &[(&str, &str)]) -> Output {
    let mut command = Command::new(echobench);
    command.args(args);
    for (k, v) in env {
        command.env(k, v);
    }
    command.output().unwrap()
}

/// Runs and insists on `code`, showing the output otherwise.
fn expect(echobench: &Path, args: &[&str], code: i32) -> Output {
    let out = call(echobench, args, &[]);
    assert_eq!(
        out.status.code(),
        Some(code),
        "{args:?}:\n{}{}",
        text(&out.stdout),
        text(&out.stderr)
    );
    assert!(
        !text(&out.stderr).contains("panicked"),
        "{}",
        text(&out.stderr)
    );
    out
}

/// One scene of a few seconds at a low rate: runs take a fraction of a second.
fn scene(id: &str, label: &str, actors: &str) -> String {
    format!(
        r#"  - id: {id}
    label: {label}
    scene:
      duration_s: 4
      sensor:
        carrier_hz: 2.45e9
        sample_rate_hz: 500
        front_end: {{high_pass_hz: [0.5], low_pass_hz: [80], gain_db: 60}}
        adc: {{bits: 12, full_scale_v: 3.3}}
      actors: {actors}
"#
    )
}

/// A small suite file in `dir`; `head` replaces the default trial counts.
fn suite(dir: &Path, name: &str, head: &str, detectors: &str) -> String {
    let body = format!(
        "name: {name}\nseed: 7\n{head}scenes:\n{}{}detectors:\n{detectors}",
        scene(
            "walk",
            "target",
            "\n        - {kind: walker, path: {start_m: [4, 0], heading_deg: 180, speed_mps: 1.2, enter_s: 1}}"
        ),
        scene("empty", "nuisance", "[]"),
    );
    let path = dir.join(format!("{name}.yaml"));
    std::fs::write(&path, body).unwrap();
    path.to_str().unwrap().to_string()
}

fn small_suite(dir: &Path) -> String {
    suite(
        dir,
        "small",
        "trials: 3\ncalibration_trials: 2\n",
        "  - plugin: energy\n",
    )
}

fn manifest_run_id(folder: &Path) -> String {
    let text = std::fs::read_to_string(folder.join("manifest.json")).unwrap();
    let value: serde_json::Value = serde_json::from_str(&text).unwrap();
    value["run_id"].as_str().unwrap().to_string()
}

/// Every reader of a run folder, each asked to read `folder` (report to a file elsewhere,
/// keep a reference copy, gate a pinned run against it, merge it as a shard where it is
/// one). Returns the exit code and stderr of each.
fn readers(
    echobench: &Path,
    folder: &Path,
    pinned: &Path,
    scratch: &Path,
) -> Vec<(String, Output)> {
    let f = folder.to_str().unwrap();
    let html = scratch.join("reader-report.html");
    let kept = scratch.join("reader-kept");
    let _ = std::fs::remove_dir_all(&kept);
    let out = vec![
        (
            "report".to_string(),
            call(
                echobench,
                &["report", f, "--out", html.to_str().unwrap()],
                &[],
            ),
        ),
        (
            "keep".to_string(),
            call(echobench, &["keep", f, "--as", kept.to_str().unwrap()], &[]),
        ),
        (
            "gate".to_string(),
            call(
                echobench,
                &[
                    "gate",
                    pinned.to_str().unwrap(),
                    "--against",
                    f,
                    "--markdown",
                    scratch.join("reader-gate.md").to_str().unwrap(),
                    "--junit",
                    scratch.join("reader-gate.xml").to_str().unwrap(),
                ],
                &[],
            ),
        ),
    ];
    let _ = std::fs::remove_dir_all(&kept);
    out
}

fn assert_all_accept(echobench: &Path, folder: &Path, pinned: &Path, scratch: &Path) {
    for (reader, out) in readers(echobench, folder, pinned, scratch) {
        assert_eq!(
            out.status.code(),
            Some(0),
            "{reader} refused the complete folder {}: {}",
            folder.display(),
            text(&out.stderr)
        );
    }
}

fn assert_all_refuse(echobench: &Path, folder: &Path, pinned: &Path, scratch: &Path, why: &str) {
    for (reader, out) in readers(echobench, folder, pinned, scratch) {
        let stderr = text(&out.stderr);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{reader} accepted {}: {stderr}",
            folder.display()
        );
        assert!(stderr.contains(why), "{reader}: {stderr}");
    }
}

/// The steps a writer can be stopped after: each file as it lands in the staged folder,
/// the manifest, and the move into place.
const FAULT_STEPS: [&str; 9] = [
    "suite.yaml",
    "tallies.json",
    "summary.json",
    "roc.csv",
    "events.csv",
    "timing.json",
    "report.html",
    "manifest",
    "move",
];

#[test]
fn a_run_killed_at_any_step_leaves_no_folder_or_a_whole_one() {
    let echobench = binary();
    let dir = scratch("fault");
    let suite_arg = small_suite(&dir);
    let old = dir.join("old");
    let pinned = dir.join("pinned");
    expect(
        &echobench,
        &["run", &suite_arg, "--out", old.to_str().unwrap()],
        0,
    );
    expect(
        &echobench,
        &[
            "run",
            &suite_arg,
            "--against",
            old.to_str().unwrap(),
            "--out",
            pinned.to_str().unwrap(),
        ],
        0,
    );
    for step in FAULT_STEPS {
        // A fresh --out: absent until the move, whole after it.
        let fresh = dir.join(format!("fresh-{step}"));
        let out = call(
            &echobench,
            &["run", &suite_arg, "--out", fresh.to_str().unwrap()],
            &[("ECHOBENCH_FAULT_AFTER", step)],
        );
        assert_eq!(out.status.signal(), Some(6), "{step}: not aborted: {out:?}");
        if step == "move" {
            assert!(fresh.is_dir(), "{step}: the moved folder is missing");
            assert_all_accept(&echobench, &fresh, &pinned, &dir);
        } else {
            assert!(!fresh.exists(), "{step}: a folder appeared before the move");
            assert_all_refuse(&echobench, &fresh, &pinned, &dir, "no such folder");
        }

        // --replace of a whole run: the old run until the exchange, the new one after it.
        let replaced = dir.join(format!("replaced-{step}"));
        expect(
            &echobench,
            &["run", &suite_arg, "--out", replaced.to_str().unwrap()],
            0,
        );
        let old_id = manifest_run_id(&replaced);
        let out = call(
            &echobench,
            &[
                "run",
                &suite_arg,
                "--out",
                replaced.to_str().unwrap(),
                "--replace",
            ],
            &[("ECHOBENCH_FAULT_AFTER", step)],
        );
        assert_eq!(out.status.signal(), Some(6), "{step}: not aborted: {out:?}");
        let now_id = manifest_run_id(&replaced);
        if step == "move" {
            assert_ne!(
                now_id, old_id,
                "{step}: still the old run after the exchange"
            );
        } else {
            assert_eq!(
                now_id, old_id,
                "{step}: the old run was touched before the exchange"
            );
        }
        assert_all_accept(&echobench, &replaced, &pinned, &dir);
    }

    // The next writer clears the staged folders the killed ones left behind.
    let leftovers = |dir: &Path| {
        std::fs::read_dir(dir)
            .unwrap()
            .filter(|e| {
                e.as_ref()
                    .unwrap()
                    .file_name()
                    .to_string_lossy()
                    .starts_with('.')
            })
            .count()
    };
    assert!(leftovers(&dir) > 0);
    for step in FAULT_STEPS {
        let replaced = dir.join(format!("replaced-{step}"));
        expect(
            &echobench,
            &[
                "run",
                &suite_arg,
                "--out",
                replaced.to_str().unwrap(),
                "--replace",
            ],
            0,
        );
        let fresh = dir.join(format!("fresh-{step}"));
        expect(
            &echobench,
            &[
                "run",
                &suite_arg,
                "--out",
                fresh.to_str().unwrap(),
                "--replace",
            ],
            0,
        );
    }
    assert_eq!(
        leftovers(&dir),
        0,
        "staged folders of killed writers remain"
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn every_reader_refuses_a_mixed_an_empty_or_a_partial_folder() {
    let echobench = binary();
    let dir = scratch("mixed");
    let suite_arg = small_suite(&dir);
    let a = dir.join("a");
    let b = dir.join("b");
    let pinned = dir.join("pinned");
    expect(
        &echobench,
        &["run", &suite_arg, "--out", a.to_str().unwrap()],
        0,
    );
    expect(
        &echobench,
        &[
            "run",
            &suite_arg,
            "--seed",
            "8",
            "--out",
            b.to_str().unwrap(),
        ],
        0,
    );
    expect(
        &echobench,
        &[
            "run",
            &suite_arg,
            "--against",
            a.to_str().unwrap(),
            "--out",
            pinned.to_str().unwrap(),
        ],
        0,
    );
    assert_all_accept(&echobench, &a, &pinned, &dir);

    // The new run's tallies beside the old run's other files, as a killed in-place writer
    // used to leave them.
    std::fs::copy(b.join("tallies.json"), a.join("tallies.json")).unwrap();
    assert_all_refuse(
        &echobench,
        &a,
        &pinned,
        &dir,
        "tallies.json is not the file of run",
    );

    // A folder whose writer was killed as soon as it appeared: empty.
    let empty = dir.join("empty");
    std::fs::create_dir(&empty).unwrap();
    assert_all_refuse(
        &echobench,
        &empty,
        &pinned,
        &dir,
        "manifest.json is missing",
    );

    // An old run's gate files left beside a run: not part of it.
    std::fs::write(b.join("gate.md"), "## an old verdict\n").unwrap();
    assert_all_refuse(&echobench, &b, &pinned, &dir, "gate.md is not part of run");

    // A file missing.
    std::fs::remove_file(b.join("gate.md")).unwrap();
    std::fs::remove_file(b.join("summary.json")).unwrap();
    assert_all_refuse(&echobench, &b, &pinned, &dir, "summary.json is missing");

    // `run --against` and `merge` read folders too.
    let out = expect(
        &echobench,
        &[
            "run",
            &suite_arg,
            "--against",
            a.to_str().unwrap(),
            "--out",
            dir.join("x").to_str().unwrap(),
        ],
        2,
    );
    assert!(text(&out.stderr).contains("tallies.json is not the file of run"));
    let s1 = dir.join("s1");
    let s2 = dir.join("s2");
    expect(
        &echobench,
        &[
            "run",
            &suite_arg,
            "--shard",
            "1/2",
            "--out",
            s1.to_str().unwrap(),
        ],
        0,
    );
    expect(
        &echobench,
        &[
            "run",
            &suite_arg,
            "--shard",
            "2/2",
            "--out",
            s2.to_str().unwrap(),
        ],
        0,
    );
    std::fs::copy(b.join("roc.csv"), s2.join("roc.csv")).unwrap();
    let merged = dir.join("merged");
    let out = expect(
        &echobench,
        &[
            "merge",
            s1.to_str().unwrap(),
            s2.to_str().unwrap(),
            "--suite",
            &suite_arg,
            "--out",
            merged.to_str().unwrap(),
        ],
        2,
    );
    assert!(
        text(&out.stderr).contains("roc.csv is not the file of run"),
        "{}",
        text(&out.stderr)
    );
    assert!(!merged.exists());
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn an_existing_out_is_refused_unless_replaced_and_then_holds_only_the_new_run() {
    let echobench = binary();
    let dir = scratch("replace");
    let suite_arg = small_suite(&dir);
    let out_dir = dir.join("run");
    let out = out_dir.to_str().unwrap();
    let reference = dir.join("reference");
    let r = reference.to_str().unwrap();
    expect(&echobench, &["run", &suite_arg, "--out", r], 0);
    // The old run, gated: its gate files join it as a whole-folder amendment.
    expect(
        &echobench,
        &["run", &suite_arg, "--against", r, "--out", out],
        0,
    );
    expect(&echobench, &["gate", out, "--against", r], 0);
    let before = manifest_run_id(&out_dir);
    for gate_file in ["gate.md", "gate.json", "gate-junit.xml"] {
        assert!(out_dir.join(gate_file).exists());
    }

    let refused = expect(&echobench, &["run", &suite_arg, "--out", out], 2);
    let stderr = text(&refused.stderr);
    assert!(
        stderr.contains("already exists") && stderr.contains("--replace"),
        "{stderr}"
    );
    assert!(
        !stderr.contains("calibration:"),
        "refused only after the work: {stderr}"
    );
    assert_eq!(manifest_run_id(&out_dir), before);

    expect(
        &echobench,
        &["run", &suite_arg, "--out", out, "--replace"],
        0,
    );
    assert_ne!(manifest_run_id(&out_dir), before);
    for stale in ["gate.md", "gate.json", "gate-junit.xml"] {
        assert!(
            !out_dir.join(stale).exists(),
            "{stale} of the old run survived --replace"
        );
    }
    // merge and the reference-saving verb refuse an existing target the same way.
    let kept = dir.join("kept");
    expect(
        &echobench,
        &["keep", out, "--as", kept.to_str().unwrap()],
        0,
    );
    let again = expect(
        &echobench,
        &["keep", out, "--as", kept.to_str().unwrap()],
        2,
    );
    assert!(text(&again.stderr).contains("--replace"));
    expect(
        &echobench,
        &["keep", out, "--as", kept.to_str().unwrap(), "--replace"],
        0,
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

/// `check` and `run` on the same suite: `check` exits 1 and `run` 2, both naming `why`,
/// and `run` refuses before any trial.
fn refused_alike(echobench: &Path, suite_arg: &str, dir: &Path, why: &str) {
    let checked = expect(echobench, &["check", suite_arg], 1);
    let all = text(&checked.stdout) + &text(&checked.stderr);
    assert!(all.contains("failed:"), "check: {all}");
    assert!(all.contains(why), "check: {all}");
    let out = dir.join("never");
    let ran = expect(
        echobench,
        &[
            "run",
            suite_arg,
            "--out",
            out.to_str().unwrap(),
            "--allow-exec",
        ],
        2,
    );
    let stderr = text(&ran.stderr);
    assert!(stderr.contains(why), "run: {stderr}");
    assert!(!stderr.contains("calibration:"), "run started: {stderr}");
    assert!(!out.exists());
}

#[test]
fn check_refuses_what_run_refuses_at_the_stated_caps() {
    let echobench = binary();
    let dir = scratch("caps");
    let energy = "  - plugin: energy\n";
    // A billion trials: the report that made `run` grow without bound.
    let s = suite(
        &dir,
        "billion",
        "trials: 1000000000\ncalibration_trials: 2\n",
        energy,
    );
    refused_alike(&echobench, &s, &dir, "the cap is 1000000");
    // Fewer trials than the cap, but more signal: 800 000 trials of 60 s.
    let long = std::fs::read_to_string(&s)
        .unwrap()
        .replace("trials: 1000000000", "trials: 400000")
        .replace("duration_s: 4", "duration_s: 60")
        .replace("name: billion", "name: long");
    let long_path = dir.join("long.yaml");
    std::fs::write(&long_path, long).unwrap();
    refused_alike(&echobench, long_path.to_str().unwrap(), &dir, "h of signal");
    // Memory: the pilot calibration trials' scores (the first 24 per variant) are kept
    // until the grid is cut: 60 detectors × 2 variants × 24 trials × 60 s at 4 kHz.
    let sixty: String = (0..60)
        .map(|i| format!("  - {{plugin: energy, label: e{i}}}\n"))
        .collect();
    let memory = std::fs::read_to_string(suite(
        &dir,
        "memory",
        "trials: 1\ncalibration_trials: 24\n",
        &sixty,
    ))
    .unwrap()
    .replace("duration_s: 4", "duration_s: 60")
    .replace("sample_rate_hz: 500", "sample_rate_hz: 4000");
    let memory_path = dir.join("memory.yaml");
    std::fs::write(&memory_path, memory).unwrap();
    refused_alike(
        &echobench,
        memory_path.to_str().unwrap(),
        &dir,
        "GiB of scores and tallies",
    );
    // Detectors.
    let many: String = (0..65)
        .map(|i| format!("  - {{plugin: energy, label: e{i}}}\n"))
        .collect();
    let s = suite(&dir, "crowd", "trials: 1\ncalibration_trials: 1\n", &many);
    refused_alike(&echobench, &s, &dir, "the cap is 64");
    std::fs::remove_dir_all(&dir).unwrap();
}

/// A WAV file: `format` 1 (integer) or 3 (float), mono, with `declared` data bytes in
/// its header (the true length when `None`).
fn write_wav(path: &Path, format: u16, bits: u16, data: &[u8], declared: Option<u32>) {
    let rate = 500u32;
    let block = bits / 8;
    let mut fmt = Vec::new();
    for v in [format, 1] {
        fmt.extend_from_slice(&v.to_le_bytes());
    }
    fmt.extend_from_slice(&rate.to_le_bytes());
    fmt.extend_from_slice(&(rate * u32::from(block)).to_le_bytes());
    fmt.extend_from_slice(&block.to_le_bytes());
    fmt.extend_from_slice(&bits.to_le_bytes());
    let mut body = b"WAVEfmt ".to_vec();
    body.extend_from_slice(&(fmt.len() as u32).to_le_bytes());
    body.extend_from_slice(&fmt);
    body.extend_from_slice(b"data");
    body.extend_from_slice(&declared.unwrap_or(data.len() as u32).to_le_bytes());
    body.extend_from_slice(data);
    let mut file = b"RIFF".to_vec();
    file.extend_from_slice(&(body.len() as u32).to_le_bytes());
    file.extend_from_slice(&body);
    std::fs::write(path, file).unwrap();
}

/// A suite whose nuisance scene is the recording `wav` (and a synthetic scene for the
/// calibration trials), with an optional label file.
fn recording_suite(dir: &Path, name: &str, wav: &str, labels: Option<&str>) -> String {
    let label = if labels.is_some() {
        "target"
    } else {
        "nuisance"
    };
    let labels = labels.map_or(String::new(), |l| format!(", labels: {l}"));
    let text = format!(
        "name: {name}\nseed: 3\ntrials: 1\ncalibration_trials: 1\nscenes:\n{}    capture:\n      recordings:\n        - {{samples: {wav}{labels}}}\n{}detectors:\n  - plugin: energy\n",
        scene("recorded", label, "[]"),
        scene("quiet", "nuisance", "[]"),
    );
    let path = dir.join(format!("{name}.yaml"));
    std::fs::write(&path, text).unwrap();
    path.to_str().unwrap().to_string()
}

#[test]
fn bad_recordings_are_refused_by_check_as_by_run_naming_the_file() {
    let echobench = binary();
    let dir = scratch("wav");
    // 12 s of float samples with one NaN deep inside: the loader reads only the header.
    let mut data: Vec<u8> = (0..6000)
        .flat_map(|i| (0.01f32 * (i as f32 / 5.0).sin()).to_le_bytes())
        .collect();
    data[4 * 5000..4 * 5001].copy_from_slice(&f32::NAN.to_le_bytes());
    write_wav(&dir.join("nan.wav"), 3, 32, &data, None);
    let s = recording_suite(&dir, "nan", "nan.wav", None);
    refused_alike(&echobench, &s, &dir, "nan.wav");
    refused_alike(&echobench, &s, &dir, "sample NaN at frame 5000");
    let mut data = data.clone();
    data[4 * 5000..4 * 5001].copy_from_slice(&f32::INFINITY.to_le_bytes());
    write_wav(&dir.join("inf.wav"), 3, 32, &data, None);
    let s = recording_suite(&dir, "inf", "inf.wav", None);
    refused_alike(&echobench, &s, &dir, "inf.wav");

    // An empty data chunk: refused, naming the file.
    write_wav(&dir.join("empty.wav"), 1, 16, &[], None);
    let s = recording_suite(&dir, "empty", "empty.wav", None);
    refused_alike(&echobench, &s, &dir, "empty.wav");

    // A data chunk cut short: read as far as it goes, with a warning naming the file.
    let samples: Vec<u8> = (0..6000i16).flat_map(|i| (i % 50).to_le_bytes()).collect();
    write_wav(&dir.join("cut.wav"), 1, 16, &samples, Some(16_000));
    let s = recording_suite(&dir, "cut", "cut.wav", None);
    let out = expect(&echobench, &["check", &s], 0);
    let stderr = text(&out.stderr);
    assert!(
        stderr.contains("cut.wav: the data chunk declares 8000 frames"),
        "{stderr}"
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn long_problem_lists_are_cut_after_a_hundred_with_a_count() {
    let echobench = binary();
    let dir = scratch("long-lists");
    // A label file of a thousand bad lines.
    let samples: Vec<u8> = (0..6000i16).flat_map(|i| (i % 50).to_le_bytes()).collect();
    write_wav(&dir.join("ok.wav"), 1, 16, &samples, None);
    let mut labels = String::from("start_s,end_s,kind\n");
    for i in 0..1000 {
        labels.push_str(&format!("{},{},walk\n", i + 5, i + 4));
    }
    std::fs::write(dir.join("labels.csv"), labels).unwrap();
    let s = recording_suite(&dir, "labels", "ok.wav", Some("labels.csv"));
    let out = expect(&echobench, &["check", &s], 1);
    let stderr = text(&out.stderr);
    assert!(stderr.contains("labels.csv` has"), "{stderr}");
    assert!(
        stderr.contains("more (the first 100 are shown)"),
        "{stderr}"
    );
    assert!(
        stderr.lines().count() < 130,
        "{} lines",
        stderr.lines().count()
    );

    // A suite with 150 problems of its own.
    let bad: String = (0..150)
        .map(|i| format!("  - {{plugin: nosuch{i}}}\n"))
        .collect();
    let s = suite(&dir, "bad", "trials: 1\ncalibration_trials: 1\n", &bad);
    let out = expect(&echobench, &["check", &s], 1);
    let stderr = text(&out.stderr);
    assert!(stderr.contains("more problems ("), "{stderr}");
    assert!(
        stderr.contains("in all; the first 100 are shown)"),
        "{stderr}"
    );
    assert!(
        stderr.lines().count() < 250,
        "{} lines",
        stderr.lines().count()
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn numeric_options_out_of_range_are_refused() {
    let echobench = binary();
    let dir = scratch("options");
    let suite_arg = small_suite(&dir);
    let run = dir.join("run");
    let r = run.to_str().unwrap();
    for (args, why) in [
        (
            vec!["gate", r, "--against", r, "--alpha", "nan"],
            "nan is outside (0, 0.5]",
        ),
        (
            vec!["gate", r, "--against", r, "--alpha", "2"],
            "2 is outside (0, 0.5]",
        ),
        (
            vec!["gate", r, "--against", r, "--alpha", "0"],
            "0 is outside (0, 0.5]",
        ),
        (
            vec!["gate", r, "--against", r, "--ratio-margin", "0"],
            "0 is outside [1, 100]",
        ),
        (
            vec!["gate", r, "--against", r, "--ratio-margin", "inf"],
            "inf is outside [1, 100]",
        ),
        (
            vec!["gate", r, "--against", r, "--budget-per-hour=-1"],
            "-1 is outside (0, 1000000]",
        ),
        (
            vec!["run", &suite_arg, "--threads", "100000"],
            "100000 threads: give 1 to 256",
        ),
        (
            vec!["run", &suite_arg, "--threads", "0"],
            "0 threads: give 1 to 256",
        ),
    ] {
        let out = expect(&echobench, &args, 2);
        assert!(
            text(&out.stderr).contains(why),
            "{args:?}: {}",
            text(&out.stderr)
        );
    }
    assert!(!run.exists());
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn merge_of_an_incomplete_shard_set_fails_unless_partial() {
    let echobench = binary();
    let dir = scratch("shards");
    let suite_arg = small_suite(&dir);
    let shard = |k: u32| dir.join(format!("s{k}")).to_str().unwrap().to_string();
    for k in 1..=3 {
        expect(
            &echobench,
            &[
                "run",
                &suite_arg,
                "--shard",
                &format!("{k}/4"),
                "--out",
                &shard(k),
            ],
            0,
        );
    }
    let merged = dir.join("merged");
    let m = merged.to_str().unwrap();
    let args = [
        "merge",
        &shard(1),
        &shard(2),
        &shard(3),
        "--suite",
        &suite_arg,
        "--out",
        m,
    ];
    let out = expect(&echobench, &args, 2);
    let stderr = text(&out.stderr);
    assert!(
        stderr.contains("3 of 4 shards merged; missing 4/4"),
        "{stderr}"
    );
    assert!(!merged.exists());
    let mut partial = args.to_vec();
    partial.push("--partial");
    let out = expect(&echobench, &partial, 0);
    assert!(text(&out.stderr).contains("warning: 3 of 4 shards merged; missing 4/4"));
    // A partial merge cannot become a reference.
    let out = expect(
        &echobench,
        &["keep", m, "--as", dir.join("kept").to_str().unwrap()],
        2,
    );
    assert!(text(&out.stderr).contains("holds only some shards"));
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn an_external_detector_failing_on_every_trial_exits_3_and_its_path_is_the_suites() {
    let echobench = binary();
    let dir = scratch("failing");
    let tools = dir.join("tools");
    std::fs::create_dir_all(&tools).unwrap();
    // A program that never speaks the protocol: every trial's detector fails to start.
    let program = tools.join("silent.sh");
    std::fs::write(&program, "#!/bin/sh\nexit 0\n").unwrap();
    let mut permissions = std::fs::metadata(&program).unwrap().permissions();
    std::os::unix::fs::PermissionsExt::set_mode(&mut permissions, 0o755);
    std::fs::set_permissions(&program, permissions).unwrap();
    let s = suite(
        &dir,
        "failing",
        "trials: 2\ncalibration_trials: 2\n",
        "  - plugin: energy\n  - plugin: external\n    label: silent\n    params: {command: tools/silent.sh, timeout_s: 5}\n",
    );
    // Run from another folder: `tools/silent.sh` is found beside the suite file.
    let elsewhere = dir.join("elsewhere");
    std::fs::create_dir_all(&elsewhere).unwrap();
    let out = Command::new(&echobench)
        .args(["run", &s, "--allow-exec", "--out", "../run"])
        .current_dir(&elsewhere)
        .output()
        .unwrap();
    let stderr = text(&out.stderr);
    assert_eq!(out.status.code(), Some(3), "{stderr}");
    assert!(
        stderr.contains("detector silent failed on every test trial"),
        "{stderr}"
    );
    assert!(
        dir.join("run").join("manifest.json").exists(),
        "the run's folder is written"
    );
    // Without --allow-exec: `check` notes it, `run` refuses before any trial.
    let checked = expect(&echobench, &["check", &s], 0);
    assert!(text(&checked.stdout).contains("would need --allow-exec for silent"));
    let out = expect(
        &echobench,
        &["run", &s, "--out", dir.join("no").to_str().unwrap()],
        2,
    );
    assert!(
        text(&out.stderr).contains("--allow-exec"),
        "{}",
        text(&out.stderr)
    );
    std::fs::remove_dir_all(&dir).unwrap();
}

/// Runs `args` with standard output (and, with `close_stderr`, standard error) a pipe
/// whose reader is already closed; returns the exit code and what stderr said.
fn into_closed_pipe(echobench: &Path, args: &[&str], close_stderr: bool) -> (Option<i32>, String) {
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let mut command = Command::new(echobench);
    command.args(args).stdout(writer).stdin(Stdio::null());
    if close_stderr {
        let (reader, writer) = std::io::pipe().unwrap();
        drop(reader);
        command.stderr(writer);
        let status = command.status().unwrap();
        return (status.code(), String::new());
    }
    let out = command.stderr(Stdio::piped()).output().unwrap();
    (out.status.code(), text(&out.stderr))
}

#[test]
fn every_subcommand_ends_quietly_with_its_usual_status_on_a_closed_pipe() {
    let echobench = binary();
    let dir = scratch("pipes");
    let suite_arg = small_suite(&dir);
    let path = |name: &str| dir.join(name).to_str().unwrap().to_string();
    expect(&echobench, &["run", &suite_arg, "--out", &path("base")], 0);
    expect(
        &echobench,
        &["run", &suite_arg, "--shard", "1/2", "--out", &path("s1")],
        0,
    );
    expect(
        &echobench,
        &["run", &suite_arg, "--shard", "2/2", "--out", &path("s2")],
        0,
    );
    let scene = workspace_root().join("scenarios/scenes/office-corridor-24g.yaml");
    let scene = scene.to_str().unwrap().to_string();
    let bad_scene = workspace_root().join("tests/bad-scenes/duplicate-key.yaml");
    let bad_scene = bad_scene.to_str().unwrap().to_string();
    let cases: Vec<(Vec<String>, i32)> = vec![
        (
            vec![
                "run".into(),
                suite_arg.clone(),
                "--out".into(),
                path("piped"),
                "--against".into(),
                path("base"),
            ],
            0,
        ),
        (
            vec![
                "gate".into(),
                path("piped"),
                "--against".into(),
                path("base"),
            ],
            0,
        ),
        (vec!["report".into(), path("piped")], 0),
        (
            vec!["keep".into(), path("base"), "--as".into(), path("kept")],
            0,
        ),
        (
            vec![
                "merge".into(),
                path("s1"),
                path("s2"),
                "--suite".into(),
                suite_arg.clone(),
                "--out".into(),
                path("merged"),
            ],
            0,
        ),
        (
            vec!["synth".into(), scene.clone(), "--out".into(), path("synth")],
            0,
        ),
        (vec!["detectors".into()], 0),
        (vec!["check".into(), scene.clone(), suite_arg.clone()], 0),
        (vec!["check".into(), bad_scene.clone(), scene.clone()], 1),
        (
            vec![
                "gate".into(),
                path("base"),
                "--against".into(),
                path("nothing"),
            ],
            2,
        ),
        (vec!["--help".into()], 0),
        (vec!["--version".into()], 0),
    ];
    let mut covered: Vec<String> = Vec::new();
    for (args, code) in &cases {
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let (status, stderr) = into_closed_pipe(&echobench, &args, false);
        assert_eq!(status, Some(*code), "{args:?}: {stderr}");
        assert!(!stderr.contains("panicked"), "{args:?}: {stderr}");
        covered.push(args[0].to_string());
    }
    // With standard error closed too, the usual status.
    let (status, _) = into_closed_pipe(&echobench, &["check", &bad_scene], true);
    assert_eq!(status, Some(1));
    // Every verb the binary lists, covered above or at least through its help text.
    let help = text(&call(&echobench, &["--help"], &[]).stdout);
    let verbs: Vec<String> = help
        .lines()
        .skip_while(|l| !l.starts_with("Commands:"))
        .skip(1)
        .take_while(|l| l.starts_with("  "))
        .filter_map(|l| l.split_whitespace().next().map(str::to_string))
        .filter(|v| v != "help")
        .collect();
    assert!(verbs.len() >= 8, "{help}");
    for verb in verbs {
        let (status, stderr) = into_closed_pipe(&echobench, &[&verb, "--help"], false);
        assert_eq!(status, Some(0), "{verb} --help: {stderr}");
        assert!(!stderr.contains("panicked"), "{verb}: {stderr}");
    }
    std::fs::remove_dir_all(&dir).unwrap();
}
