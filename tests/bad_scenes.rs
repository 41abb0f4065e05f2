//! Malformed scene files are refused with a complete, located report, and never panic.
//!
//! Every file in `tests/bad-scenes/` is a small scene with one deliberate
//! fault (a few have two). Its leading comment lines say what the report must
//! hold, so adding a case is adding a file; the folder is listed, not named
//! here. The one design decision: the expectations live in the files, next
//! to the fault they describe, as comment lines the scene reader ignores:
//!
//! - `# expect: TEXT` (one or more): the report text must contain TEXT;
//! - `# expect-line: N`: the first error is located on line N (with a column);
//! - `# expect-errors: N`: the report holds exactly N errors;
//! - `# known-gap: WHY`: the scene crate does not yet handle this case as it
//!   should; the file is skipped with a printed note until the crate is fixed.
//!
//! Whatever a file says, every error of its report must name the file and
//! carry a location: an error a user cannot find in the file is a bug.
#![deny(missing_docs)]

use echobench_integration_tests::workspace_root;
use echobench_scene::load_scene_file;
use echobench_yaml_reader::fixture::Expectations;
use echobench_yaml_reader::{Report, Severity};
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant, SystemTime};

/// Fewer files than this means the folder was lost or emptied.
const MIN_TESTED_FILES: usize = 15;

/// Longest a malformed file may take to refuse. Scenes are a few dozen lines;
/// the alias bomb must fail on its node budget, not after expanding (common practice:
/// a reader is bounded so that hostile input cannot cost more than honest input).
const LOAD_BUDGET: Duration = Duration::from_secs(2);

fn bad_scene_dir() -> PathBuf {
    workspace_root().join("tests").join("bad-scenes")
}

/// The `.yaml` files of the folder, sorted so that failures read in a stable order.
fn bad_scene_files() -> Vec<PathBuf> {
    let dir = bad_scene_dir();
    let entries =
        std::fs::read_dir(&dir).unwrap_or_else(|e| panic!("cannot list {}: {e}", dir.display()));
    let mut files: Vec<PathBuf> = entries
        .map(|entry| entry.expect("a readable folder entry").path())
        .filter(|path| path.extension().is_some_and(|ext| ext == "yaml"))
        .collect();
    files.sort();
    files
}

/// Loads a scene file, turning a panic into an `Err` with its message.
fn load_without_panic(
    path: &Path,
) -> Result<Result<(echobench_scene::SceneSpec, Report), Report>, String> {
    catch_unwind(AssertUnwindSafe(|| load_scene_file(path))).map_err(|payload| {
        payload
            .downcast_ref::<String>()
            .cloned()
            .or_else(|| payload.downcast_ref::<&str>().map(|s| s.to_string()))
            .unwrap_or_else(|| "a panic without a message".into())
    })
}

/// Every way `report` (for the file `name`) falls short of `expected`, and every error
/// that names another file (a scene's errors are all its own).
fn shortcomings(name: &str, report: &Report, expected: &Expectations) -> Vec<String> {
    let mut wrong = expected.shortcomings(name, report);
    for problem in report
        .problems
        .iter()
        .filter(|p| p.severity == Severity::Error && p.file != name)
    {
        wrong.push(format!(
            "an error names the file `{}`, not `{name}`: {problem}",
            problem.file
        ));
    }
    wrong
}

#[test]
fn every_bad_scene_is_refused_with_a_located_report() {
    let files = bad_scene_files();
    let mut tested = 0;
    let mut failures = Vec::new();
    for path in &files {
        let name = path.display().to_string();
        let text =
            std::fs::read_to_string(path).unwrap_or_else(|e| panic!("cannot read {name}: {e}"));
        let expected = match Expectations::read(&text) {
            Ok(expected) => expected,
            Err(why) => {
                failures.push(format!("{name}: {why}"));
                continue;
            }
        };
        if !expected.known_gap.is_empty() {
            eprintln!(
                "note: skipping {name}, a known gap of the scene crate: {}",
                expected.known_gap.join(" ")
            );
            continue;
        }
        tested += 1;
        let started = Instant::now();
        let outcome = load_without_panic(path);
        let took = started.elapsed();
        if took > LOAD_BUDGET {
            failures.push(format!(
                "{name}: loading took {took:?}, more than {LOAD_BUDGET:?}"
            ));
        }
        match outcome {
            Err(panic) => failures.push(format!("{name}: the loader panicked: {panic}")),
            Ok(Ok((_, warnings))) => failures.push(format!(
                "{name}: the scene loaded without error; warnings:\n{warnings}"
            )),
            Ok(Err(report)) => {
                let wrong = shortcomings(&name, &report, &expected);
                if !wrong.is_empty() {
                    failures.push(format!(
                        "{name}:\n  - {}\nreport:\n{report}",
                        wrong.join("\n  - ")
                    ));
                }
            }
        }
    }
    assert!(
        tested >= MIN_TESTED_FILES,
        "only {tested} bad scenes tested in {} (of {} files), expected at least {MIN_TESTED_FILES}",
        bad_scene_dir().display(),
        files.len()
    );
    assert!(
        failures.is_empty(),
        "{} of {tested} bad scenes fall short:\n\n{}",
        failures.len(),
        failures.join("\n\n")
    );
}

#[test]
fn the_directives_are_read_as_written() {
    // The harness itself must fail when it should: a file without `# expect:` is
    // refused, and a report that misses an expected text or line is caught.
    assert!(Expectations::read("name: x\n").is_err());
    assert!(Expectations::read("# expect-line: two\n# expect: x\n").is_err());
    let expected = Expectations::read("# expect: `a.b`: bad\n# expect-line: 3\n# expect-errors: 2\n# known-gap: why\nname: x\n# expect: later lines are not directives\n")
        .expect("valid directives");
    assert_eq!(expected.substrings, vec!["`a.b`: bad".to_string()]);
    assert_eq!(expected.first_error_line, Some(3));
    assert_eq!(expected.error_count, Some(2));
    assert_eq!(expected.known_gap, vec!["why".to_string()]);

    let report =
        echobench_scene::load_scene_text("probe.yaml", "duration_s: 10\n").expect_err("no sensor");
    let wrong = shortcomings(
        "probe.yaml",
        &report,
        &Expectations {
            first_error_line: Some(2),
            ..Expectations::read("# expect: nowhere\n").unwrap()
        },
    );
    assert_eq!(wrong.len(), 2, "{wrong:?}");
    assert!(shortcomings(
        "probe.yaml",
        &report,
        &Expectations::read("# expect: `sensor`: missing required field\n# expect-line: 1\n")
            .unwrap()
    )
    .is_empty());
}

#[test]
fn two_faults_in_one_file_give_two_errors_in_one_report() {
    let path = bad_scene_dir().join("two-faults-mains-and-adc.yaml");
    let name = path.display().to_string();
    let report = load_without_panic(&path)
        .expect("no panic")
        .expect_err("two faults");
    assert_eq!(report.error_count(), 2, "{report}");
    let errors: Vec<_> = report
        .problems
        .iter()
        .filter(|p| p.severity == Severity::Error)
        .collect();
    // In file order: the sensor is read before the environment.
    assert_eq!(errors[0].field, "sensor.adc.bits", "{report}");
    assert_eq!(
        errors[1].field, "environment.mains.frequency_hz",
        "{report}"
    );
    let lines: Vec<usize> = errors
        .iter()
        .map(|p| p.location.expect("located").line)
        .collect();
    assert_eq!(lines, vec![12, 14], "{report}");
    assert!(errors.iter().all(|p| p.file == name), "{report}");
    // The printed report has one line per problem, each naming the file.
    let text = report.to_string();
    assert_eq!(
        text.lines()
            .filter(|l| l.starts_with(&format!("{name}:")) && l.contains(": error: "))
            .count(),
        2,
        "{text}"
    );
}

/// A legal scene with a walker; `{low_pass}` and `{start_x}` are filled in by each test.
const SCENE_TEMPLATE: &str = "\
name: warning-probe
duration_s: 10
sensor:
  carrier_hz: 24.125e9
  sample_rate_hz: 2000
  front_end:
    high_pass_hz: [0.5]
    low_pass_hz: [{low_pass}]
  adc: {bits: 12, full_scale_v: 3.3}
coverage: {range_m: 8, azimuth_half_deg: 40}
actors:
  - kind: walker
    id: passer-by
    path: {start_m: [{start_x}, -3], heading_deg: 90, speed_mps: 1.2}
";

/// Writes a scene to the test's scratch folder and loads it as `echobench check` does.
fn load_inline(
    file_name: &str,
    low_pass_hz: f64,
    start_x_m: f64,
) -> (String, Result<(echobench_scene::SceneSpec, Report), Report>) {
    let text = SCENE_TEMPLATE
        .replace("{low_pass}", &low_pass_hz.to_string())
        .replace("{start_x}", &start_x_m.to_string());
    let path = Path::new(env!("CARGO_TARGET_TMPDIR")).join(file_name);
    std::fs::write(&path, text).expect("scratch file written");
    let loaded = load_without_panic(&path).expect("no panic");
    (path.display().to_string(), loaded)
}

#[test]
fn a_plain_scene_loads_without_warnings() {
    // The control for the two tests below: their warnings come from the one change each makes.
    let (name, loaded) = load_inline("plain.yaml", 500.0, 6.0);
    let (_, warnings) = loaded.unwrap_or_else(|report| panic!("{name} does not load:\n{report}"));
    assert!(warnings.problems.is_empty(), "{warnings}");
}

#[test]
fn a_low_pass_corner_above_nyquist_loads_with_a_warning() {
    // 1500 Hz is above the 1000 Hz Nyquist frequency of a 2 kHz ADC: legal (a weak
    // filter), but the band above Nyquist aliases (Nyquist–Shannon sampling theorem).
    let (name, loaded) = load_inline("low-pass-above-nyquist.yaml", 1500.0, 6.0);
    let (_, warnings) = loaded.unwrap_or_else(|report| panic!("{name} does not load:\n{report}"));
    let text = warnings.to_string();
    assert!(!warnings.has_errors(), "{text}");
    assert_eq!(warnings.warnings().count(), 1, "{text}");
    let warning = warnings.warnings().next().expect("one warning");
    assert_eq!(warning.field, "sensor.front_end", "{text}");
    assert!(warning.location.is_some(), "{text}");
    assert!(
        text.contains(
            ": warning: `sensor.front_end`: a corner at 1500 Hz is at or above Nyquist (1000 Hz)"
        ),
        "{text}"
    );
    assert!(text.contains(&name), "{text}");
}

#[test]
fn a_walker_that_never_enters_coverage_loads_with_a_warning() {
    // Walking along x = 30 m, the walker never comes within the 8 m coverage range.
    let (name, loaded) = load_inline("walker-outside-coverage.yaml", 500.0, 30.0);
    let (scene, warnings) =
        loaded.unwrap_or_else(|report| panic!("{name} does not load:\n{report}"));
    let text = warnings.to_string();
    assert_eq!(scene.actors.len(), 1);
    assert!(!warnings.has_errors(), "{text}");
    assert_eq!(warnings.warnings().count(), 1, "{text}");
    let warning = warnings.warnings().next().expect("one warning");
    assert_eq!(warning.field, "actors[0]", "{text}");
    assert!(
        text.contains(
            "target `passer-by` is never moving inside the coverage zone in trial 0 (8 m, ±40°)"
        ),
        "{text}"
    );
    assert!(text.contains(&name), "{text}");
}

/// The newest modification time of the workspace's sources: everything under `crates/`,
/// the root manifest and the lock file.
fn newest_source_time(root: &Path) -> std::io::Result<SystemTime> {
    fn walk(path: &Path, newest: &mut SystemTime) -> std::io::Result<()> {
        let meta = std::fs::metadata(path)?;
        *newest = (*newest).max(meta.modified()?);
        if meta.is_dir() {
            for entry in std::fs::read_dir(path)? {
                walk(&entry?.path(), newest)?;
            }
        }
        Ok(())
    }
    let mut newest = SystemTime::UNIX_EPOCH;
    walk(&root.join("Cargo.toml"), &mut newest)?;
    walk(&root.join("Cargo.lock"), &mut newest)?;
    walk(&root.join("crates"), &mut newest)?;
    Ok(newest)
}

/// How to run `echobench`: the binary cargo last built, when it is newer than every
/// source; otherwise `cargo run`, which rebuilds it first. Running the fresh binary
/// directly avoids waiting on cargo's build lock while others build on the same machine.
fn echobench_command() -> Command {
    let root = workspace_root();
    let binary = root
        .join("target")
        .join("debug")
        .join(format!("echobench{}", std::env::consts::EXE_SUFFIX));
    let built = std::fs::metadata(&binary).and_then(|m| m.modified());
    let fresh = match (built, newest_source_time(&root)) {
        (Ok(built), Ok(newest)) => built > newest,
        _ => false,
    };
    let mut command = if fresh {
        Command::new(binary)
    } else {
        let mut cargo = Command::new(env!("CARGO"));
        cargo.args(["run", "-q", "-p", "echobench", "--"]);
        cargo
    };
    command.current_dir(root);
    command
}

/// Runs `echobench check FILE` from the workspace root.
fn run_check(file: &str) -> (Option<i32>, String, String) {
    let output = echobench_command()
        .args(["check", file])
        .output()
        .expect("echobench runs");
    (
        output.status.code(),
        String::from_utf8_lossy(&output.stdout).into_owned(),
        String::from_utf8_lossy(&output.stderr).into_owned(),
    )
}

#[test]
fn the_check_command_fails_on_a_bad_file_and_passes_a_good_one() {
    // Relative paths: the command must print the path as the user gave it.
    let bad = "tests/bad-scenes/mains-55-hz.yaml";
    let (code, stdout, stderr) = run_check(bad);
    assert_eq!(code, Some(1), "stdout:\n{stdout}\nstderr:\n{stderr}");
    assert!(
        stderr.contains(&format!(
            "{bad}:15:19: error: `environment.mains.frequency_hz`: mains is 50 or 60 Hz, found 55"
        )),
        "stderr:\n{stderr}"
    );
    assert!(
        stdout.contains(&format!("failed: {bad} (1 errors)")),
        "stdout:\n{stdout}"
    );

    let good = "scenarios/scenes/office-corridor-24g.yaml";
    let (code, stdout, stderr) = run_check(good);
    assert_eq!(code, Some(0), "stdout:\n{stdout}\nstderr:\n{stderr}");
    assert!(stdout.contains(&format!("ok: {good}")), "stdout:\n{stdout}");
    assert!(!stderr.contains(": error: "), "stderr:\n{stderr}");
}
