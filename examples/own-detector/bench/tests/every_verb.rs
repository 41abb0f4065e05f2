//! The team's detector is known to every verb of the embedded command line: `detectors`,
//! `check`, `run` (sharded), `merge`, `keep`, `run --against`, `gate` and `report`, and the
//! default suite scores it without being told (`registered: all`).

use std::path::{Path, PathBuf};
use std::process::Command;

fn bench() -> Command {
    Command::new(env!("CARGO_BIN_EXE_team-bench"))
}

fn suite() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../suite.yaml")
}

/// Runs the command, requires exit 0, returns stdout and stderr together.
fn ok(command: &mut Command) -> String {
    let output = command.output().expect("the binary starts");
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&output.stdout),
        String::from_utf8_lossy(&output.stderr)
    );
    assert!(output.status.success(), "{command:?} failed:\n{text}");
    text
}

fn scratch(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("team-bench-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    dir
}

#[test]
fn the_team_detector_is_known_to_every_verb() {
    let listed = ok(bench().arg("detectors"));
    assert!(
        listed.contains("gated-energy: mean square above a speed gate"),
        "{listed}"
    );
    let checked = ok(bench().arg("check").arg(suite()));
    assert!(checked.contains("2 detectors"), "{checked}");

    let work = scratch("verbs");
    std::fs::create_dir_all(&work).expect("scratch folder");
    let (one, two, merged, kept, again) = (
        work.join("shard-1"),
        work.join("shard-2"),
        work.join("merged"),
        work.join("kept"),
        work.join("again"),
    );
    for (shard, out) in [("1/2", &one), ("2/2", &two)] {
        ok(bench()
            .args(["run", "--threads", "1", "--shard", shard, "--out"])
            .arg(out)
            .arg(suite()));
    }
    let merge = ok(bench()
        .arg("merge")
        .arg(&one)
        .arg(&two)
        .arg("--out")
        .arg(&merged)
        .arg("--suite")
        .arg(suite()));
    assert!(merge.contains("gated-energy"), "{merge}");
    ok(bench().arg("keep").arg(&merged).arg("--as").arg(&kept));
    ok(bench()
        .args(["run", "--threads", "1", "--out"])
        .arg(&again)
        .arg("--against")
        .arg(&kept)
        .arg(suite()));
    let gate = ok(bench().arg("gate").arg(&again).arg("--against").arg(&kept));
    let gate_json = std::fs::read_to_string(again.join("gate.json")).expect("gate.json");
    assert!(gate_json.contains("gated-energy"), "{gate}");
    ok(bench().arg("report").arg(&again));
    let html = std::fs::read_to_string(again.join("report.html")).expect("report.html");
    assert!(html.contains("gated-energy"));
    let _ = std::fs::remove_dir_all(&work);
}

#[test]
fn the_default_suite_scores_the_team_detector_unasked() {
    // The built-in default suite lists `registered: all`; a suite of the team's that says the
    // same is checked here (loading the default suite means running it, a minute of work).
    let work = scratch("registered");
    std::fs::create_dir_all(&work).expect("scratch folder");
    let text = std::fs::read_to_string(suite())
        .expect("suite")
        .replace(
            "detectors:\n  - plugin: gated-energy\n  - plugin: energy\n",
            "detectors:\n  - registered: all\n",
        )
        .replace(
            "../../scenarios",
            &format!("{}/../../../scenarios", env!("CARGO_MANIFEST_DIR")),
        );
    let file = work.join("every-registered.yaml");
    std::fs::write(&file, text).expect("suite written");
    let checked = ok(bench().arg("check").arg(&file));
    // The seven built-ins and the team's detector (`external` needs a program to run).
    assert!(checked.contains("8 detectors"), "{checked}");
    let _ = std::fs::remove_dir_all(&work);
}
