//! The command line as a user meets it: `synth` on every example scene writes
//! its four files, and `detectors` lists every built-in with its costs.

use echobench_integration_tests::workspace_root;
use std::path::PathBuf;
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

#[test]
fn synth_writes_four_files_for_every_example_scene() {
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
    ] {
        assert!(
            text.contains(&format!("{id}: ")),
            "`{id}` missing from:\n{text}"
        );
    }
    assert_eq!(text.matches("cost at defaults").count(), 7, "{text}");
    assert!(text.contains("bytes") && text.contains("operations per sample"));
}
