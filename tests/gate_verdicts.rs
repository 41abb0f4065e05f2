//! The gate's three-way false-alarm budget check as CI meets it: zero false alarms in too
//! little noise-only time is inconclusive (exit 0, the JUnit case skipped with the exposure
//! that would settle it), `--require-conclusive` turns that into exit 1 naming the
//! exposure, and a rate whose lower bound is over the budget is a regression (exit 1).

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

/// One nuisance scene (a swaying palm) and the energy detector at a high target rate, so
/// the test trials carry tens of false alarms in about four minutes of noise-only time.
const SUITE: &str = r#"
name: gate-verdicts
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
"#;

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}

fn call(echobench: &Path, dir: &Path, args: &[&str]) -> Output {
    Command::new(echobench)
        .args(args)
        .current_dir(dir)
        .output()
        .unwrap()
}

fn succeed(echobench: &Path, dir: &Path, args: &[&str]) {
    let out = call(echobench, dir, args);
    assert!(
        out.status.success(),
        "{args:?}: {}{}",
        text(&out.stdout),
        text(&out.stderr)
    );
}

/// The `<skipped>` message of the JUnit test case named `name`, if it is skipped.
fn skipped_message(junit: &str, name: &str) -> Option<String> {
    let doc = roxmltree::Document::parse(junit).unwrap_or_else(|e| panic!("{e}\n{junit}"));
    let case = doc
        .descendants()
        .find(|n| n.has_tag_name("testcase") && n.attribute("name") == Some(name))?;
    let skipped = case.children().find(|c| c.has_tag_name("skipped"))?;
    skipped.attribute("message").map(str::to_string)
}

/// The number just before `marker` in `text`, e.g. `1.498` in `about 1.498 h of ...`.
fn number_before(text: &str, marker: &str) -> Option<f64> {
    let at = text.find(marker)?;
    text[..at].split_whitespace().last()?.parse().ok()
}

#[test]
fn zero_false_alarms_in_too_little_time_is_inconclusive_and_a_high_rate_fails() {
    let echobench = binary();
    let dir = std::env::temp_dir().join(format!("echobench-gate-verdicts-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("suite.yaml"), SUITE).unwrap();
    succeed(&echobench, &dir, &["run", "suite.yaml", "--out", "before"]);
    succeed(&echobench, &dir, &["keep", "before", "--as", "base"]);
    succeed(
        &echobench,
        &dir,
        &["run", "suite.yaml", "--against", "base", "--out", "after"],
    );

    // The candidate with its pinned false alarms removed, as a tallies file of its own.
    let mut tallies: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("after/tallies.json")).unwrap())
            .unwrap();
    let mut exposure_ns = 0u64;
    let mut removed = 0u64;
    for variant in tallies["detectors"][0]["variants"].as_array_mut().unwrap() {
        exposure_ns += variant["exposure_ns"].as_u64().unwrap();
        for op in variant["pinned"].as_array_mut().unwrap() {
            removed += op["false_alarms"].as_u64().unwrap();
            op["false_alarms"] = 0.into();
            for trial in op["trials"].as_array_mut().unwrap() {
                trial["false_alarms"] = 0.into();
            }
        }
    }
    assert!(
        removed >= 10,
        "the suite must raise false alarms: {removed}"
    );
    std::fs::write(
        dir.join("quiet-tallies.json"),
        serde_json::to_string(&tallies).unwrap(),
    )
    .unwrap();
    let hours = exposure_ns as f64 / 3.6e12;
    // No false alarm in T hours: the 95 % upper bound is −ln(0.05)/T (Garwood 1936, zero
    // count). A budget of half that cannot be vouched for, nor refuted: inconclusive, and
    // settling it takes −ln(0.05)/budget = 2T hours.
    let budget = 0.05f64.ln().abs() / hours / 2.0;
    let budget_arg = format!("{budget}");
    let quiet = |extra: &[&str]| {
        let mut args = vec![
            "gate",
            "quiet-tallies.json",
            "--against",
            "base",
            "--budget-per-hour",
            &budget_arg,
            "--markdown",
            "quiet.md",
            "--junit",
            "quiet-junit.xml",
        ];
        args.extend_from_slice(extra);
        call(&echobench, &dir, &args)
    };
    let out = quiet(&[]);
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}{}", text(&out.stderr));
    assert!(stdout.contains("gate: pass, 1 inconclusive"), "{stdout}");
    let junit = std::fs::read_to_string(dir.join("quiet-junit.xml")).unwrap();
    let message = skipped_message(&junit, "false-alarm budget at 200/h")
        .unwrap_or_else(|| panic!("the budget case is not skipped:\n{junit}"));
    let needed = number_before(&message, "h of noise-only time").unwrap_or(f64::NAN);
    assert!(
        (needed / (2.0 * hours) - 1.0).abs() < 0.005,
        "{needed} h named, {} h expected: {message}",
        2.0 * hours
    );
    let markdown = std::fs::read_to_string(dir.join("quiet.md")).unwrap();
    assert!(
        markdown.starts_with("## echobench gate: pass, 1 inconclusive"),
        "{markdown}"
    );
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("gate.json")).unwrap()).unwrap();
    let budget_check = json["checks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["metric"] == "false-alarm-budget")
        .unwrap()
        .clone();
    assert_eq!(budget_check["verdict"], "inconclusive");
    assert_eq!(budget_check["detector"], "energy");

    // Demanding a conclusion: exit 1, and the terminal names the exposure needed.
    let out = quiet(&["--require-conclusive"]);
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(1), "{stdout}");
    assert!(stdout.contains("gate: INCONCLUSIVE"), "{stdout}");
    let named = number_before(&stdout, "h of noise-only time").unwrap_or(f64::NAN);
    assert!((named / (2.0 * hours) - 1.0).abs() < 0.005, "{stdout}");

    // The real counts, tens of false alarms in 0.07 h, against 1 per hour: even the lower
    // bound is far over the budget, a regression (exit 1), failing its JUnit case.
    let out = call(
        &echobench,
        &dir,
        &[
            "gate",
            "after",
            "--against",
            "base",
            "--budget-per-hour",
            "1",
        ],
    );
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(1), "{stdout}{}", text(&out.stderr));
    assert!(stdout.contains("gate: REGRESSION"), "{stdout}");
    let junit = std::fs::read_to_string(dir.join("after/gate-junit.xml")).unwrap();
    let doc = roxmltree::Document::parse(&junit).unwrap();
    assert!(doc.descendants().any(|n| n.has_tag_name("testcase")
        && n.attribute("name") == Some("false-alarm budget at 200/h")
        && n.children().any(|c| c.has_tag_name("failure"))));
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("after/gate.json")).unwrap())
            .unwrap();
    let check = json["checks"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["metric"] == "false-alarm-budget")
        .unwrap();
    assert_eq!(check["verdict"], "regression");
    assert!(check["rate_bounds_per_hour"][0].as_f64().unwrap() > 1.0);
    std::fs::remove_dir_all(&dir).unwrap();
}
