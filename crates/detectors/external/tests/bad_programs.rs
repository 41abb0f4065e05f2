//! Programs that break the protocol, each a small /bin/sh script (no numpy
//! needed): every one ends in a build error or a `DetectorFailure` that
//! says what happened, within its time limit, and nothing panics or hangs.
//!
//! The scripts speak the protocol with `printf` octal escapes and read their
//! input with `head -c`, which may read more than it prints: they only need
//! to consume their input loosely, since each one misbehaves right after.

mod common;

use common::{build, params, printf_bytes, ready, run_until_failure, score_record, shell_script};
use echobench_core::detector::{test_stream, Detector, DetectorPlugin, ParamValue, Samples};
use echobench_core::Channels;
use echobench_detector_external::{ExternalDetector, ExternalPlugin, ExternalProgram};
use std::time::{Duration, Instant};

/// fs = 1 kHz, so a block of 1000 samples ends at t = 1 s.
const FS: f64 = 1000.0;

fn one_second() -> Vec<f32> {
    vec![0.01; 1000]
}

/// A script that does the handshake, then `then`.
fn after_handshake(stem: &str, then: &str) -> String {
    shell_script(
        stem,
        &format!(
            "head -c 40 >/dev/null\n{}\nhead -c 8 >/dev/null\n{then}",
            printf_bytes(&ready(1, stem))
        ),
    )
}

fn failure_after_a_block(command: &str) -> String {
    let mut detector = build(
        command,
        "",
        &[("timeout_s", ParamValue::Real(5.0))],
        &test_stream(FS),
    )
    .unwrap_or_else(|e| panic!("handshake should pass: {e}"));
    let mut out = Vec::new();
    let message = detector
        .process(Samples::Real(&one_second()), &mut out)
        .and_then(|()| detector.process(Samples::Real(&one_second()), &mut out))
        .expect_err("the program broke the protocol")
        .message;
    // After a failure nothing more is pushed, and the message stays.
    let before = out.len();
    let again = detector.process(Samples::Real(&one_second()), &mut out);
    assert_eq!(out.len(), before);
    assert_eq!(again.map_err(|f| f.message), Err(message.clone()));
    message
}

#[test]
fn a_program_that_exits_early_is_reported_with_its_status_and_stderr() {
    let command = after_handshake(
        "crash",
        "printf DONE\necho 'calibration file missing' >&2\nexit 3",
    );
    let message = failure_after_a_block(&command);
    assert!(
        message.starts_with("external `external-") && message.contains("crash.sh`: "),
        "{message}"
    );
    assert!(
        message.contains("exited with status 3 after 1 block"),
        "{message}"
    );
    assert!(
        message.contains("stderr: calibration file missing"),
        "{message}"
    );
}

#[test]
fn garbage_on_stdout_is_named_as_text() {
    let command = after_handshake("chatty", "echo 'frame 1 energy 0.002'\nexec sleep 5");
    let message = failure_after_a_block(&command);
    assert!(
        message.contains("wrote \"fram\" (66 72 61 6d)"),
        "{message}"
    );
    assert!(message.contains("log to stderr"), "{message}");
    // Garbage instead of READY is a build error naming `command`.
    let command = shell_script(
        "greeter",
        "head -c 40 >/dev/null\necho 'Hello!'\nexec sleep 5",
    );
    let error = build(&command, "", &[], &test_stream(FS))
        .err()
        .expect("refused");
    assert_eq!(error.param, "command");
    assert!(
        error
            .message
            .contains("replied to the handshake with \"Hell\""),
        "{error}"
    );
    // A short record: the output ends inside it.
    let mut half = score_record(0.5, 1.0);
    half.truncate(9);
    let command = after_handshake("short", &format!("{}\nexit 0", printf_bytes(&half)));
    let message = failure_after_a_block(&command);
    assert!(
        message.contains("ended in the middle of a SCOR record"),
        "{message}"
    );
}

#[test]
fn a_hanging_program_is_killed_at_its_time_limit() {
    let timeout_s = 1.0;
    let command = after_handshake("hang", "exec sleep 30");
    let started = Instant::now();
    let mut detector = build(
        &command,
        "",
        &[("timeout_s", ParamValue::Real(timeout_s))],
        &test_stream(FS),
    )
    .expect("handshake passes");
    let mut out = Vec::new();
    let result = detector.process(Samples::Real(&one_second()), &mut out);
    let elapsed_s = started.elapsed().as_secs_f64();
    let message = result.expect_err("timed out").message;
    assert!(message.contains("timeout_s = 1 s"), "{message}");
    assert!(message.contains("killed"), "{message}");
    // The deadline runs from start-up; allow 1 s for the kill and reaping.
    assert!(
        elapsed_s >= timeout_s - 0.01 && elapsed_s < timeout_s + 1.0,
        "{elapsed_s} s"
    );
    assert!(out.is_empty());
    // One that never answers the handshake fails the build the same way.
    let command = shell_script("mute", "exec sleep 30");
    let started = Instant::now();
    let error = build(
        &command,
        "",
        &[("timeout_s", ParamValue::Real(0.5))],
        &test_stream(FS),
    )
    .err()
    .expect("refused");
    assert!(
        error
            .message
            .contains("no handshake reply within timeout_s = 0.5 s"),
        "{error}"
    );
    assert!(started.elapsed() < Duration::from_millis(1500));
}

#[test]
fn scores_out_of_order_nan_or_in_the_future_are_refused() {
    let cases: [(&str, Vec<u8>, &str); 5] = [
        (
            "backwards",
            [score_record(0.5, 1.0), score_record(0.25, 1.0)].concat(),
            "out of order: t = 0.25 s after t = 0.5 s",
        ),
        (
            "nan",
            score_record(0.5, f64::NAN),
            "a score of NaN at t = 0.5 s",
        ),
        (
            "future",
            score_record(2.0, 1.0),
            "after the end of the samples sent so far (1 s)",
        ),
        ("negative", score_record(-1.0, 1.0), "time stamp of -1 s"),
        (
            "between-instants",
            score_record(0.5 + 0.3 / FS, 1.0),
            "not the end of a sample instant",
        ),
    ];
    for (stem, records, expected) in cases {
        let answer = [records, b"DONE".to_vec()].concat();
        let command = after_handshake(stem, &format!("{}\nexec sleep 5", printf_bytes(&answer)));
        let message = failure_after_a_block(&command);
        assert!(message.contains(expected), "{stem}: {message}");
        assert!(
            message.contains("in its answer to block 1"),
            "{stem}: {message}"
        );
    }
    // More scores than sample instants in the block.
    let mut detector = build(
        &after_handshake(
            "flood",
            &format!(
                "{}\nexec sleep 5",
                printf_bytes(
                    &[
                        score_record(0.001, 1.0),
                        score_record(0.001, 1.0),
                        b"DONE".to_vec()
                    ]
                    .concat()
                )
            ),
        ),
        "",
        &[],
        &test_stream(FS),
    )
    .expect("handshake passes");
    let (out, failure) = run_until_failure(detector.as_mut(), &[0.0], 1, Channels::Real);
    assert!(out.is_empty());
    let message = failure.expect("refused").message;
    assert!(
        message.contains("2 scores for a block of 1 sample instants"),
        "{message}"
    );
}

#[test]
fn a_wrong_version_or_a_missing_program_fails_the_build_naming_it() {
    let command = shell_script(
        "future-version",
        &format!(
            "head -c 40 >/dev/null\n{}\nexec sleep 5",
            printf_bytes(&ready(2, ""))
        ),
    );
    let error = build(&command, "", &[], &test_stream(FS))
        .err()
        .expect("refused");
    assert!(
        error.message.contains("speaks protocol version 2"),
        "{error}"
    );

    let error = build("/no/such/folder/detector.py", "", &[], &test_stream(FS))
        .err()
        .expect("refused");
    assert_eq!(error.param, "command");
    assert_eq!(error.value, "/no/such/folder/detector.py");
    assert!(error.message.contains("does not exist"), "{error}");
    let error = build("no-such-echobench-detector", "", &[], &test_stream(FS))
        .err()
        .expect("refused");
    assert!(
        error
            .to_string()
            .contains("no program `no-such-echobench-detector` found on PATH"),
        "{error}"
    );

    // A script without its executable bit says how to run it instead.
    let command = shell_script("not-executable", "exit 0");
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&command, std::fs::Permissions::from_mode(0o644)).expect("chmod");
        let error = build(&command, "", &[], &test_stream(FS))
            .err()
            .expect("refused");
        assert!(error.message.contains("is not executable"), "{error}");
    }
    // The suite loader's check (`cost`) sees a missing program too, before any trial.
    let plugin = ExternalPlugin::new(true);
    let params = params("/no/such/folder/detector.py", "", &[]).expect("resolves");
    assert!(plugin.check(&params, &test_stream(FS)).is_err());
}

#[test]
fn without_allow_exec_nothing_runs() {
    let marker = common::temp_path("ran");
    let command = shell_script("would-run", &format!("touch '{}'", marker.display()));
    let params = params(&command, "", &[]).expect("resolves");
    let plugin = ExternalPlugin::new(false);
    assert!(!plugin.allows_exec());
    for error in [
        plugin
            .plan(&params, &test_stream(FS))
            .map(|plan| plan.start())
            .err()
            .expect("refused"),
        plugin
            .check(&params, &test_stream(FS))
            .expect_err("refused"),
    ] {
        assert_eq!(error.param, "command");
        assert!(error.message.contains("--allow-exec"), "{error}");
    }
    assert!(!marker.exists(), "the program must not have been started");
}

#[test]
fn bad_parameters_are_refused_by_name() {
    let info = test_stream(FS);
    let error = build("", "", &[], &info).err().expect("refused");
    assert_eq!(error.param, "command");
    assert!(error.message.contains("no program given"), "{error}");
    let error = build(
        "/bin/sh",
        "",
        &[("timeout_s", ParamValue::Real(0.0))],
        &info,
    )
    .err()
    .expect("refused");
    assert_eq!(error.param, "timeout_s");
    let error = ExternalPlugin::new(true)
        .plan(
            &params("/bin/sh", "", &[]).expect("resolves"),
            &test_stream(0.0),
        )
        .map(|plan| plan.start())
        .err()
        .expect("refused");
    assert_eq!(error.param, "sample_rate_hz");
    // The typed interface checks the same things.
    let program = ExternalProgram {
        command: "/bin/sh".to_string(),
        args: vec![],
        timeout_s: f64::NAN,
    };
    let error = ExternalDetector::spawn(program, &info).expect_err("refused");
    assert_eq!(error.param, "timeout_s");
}

#[test]
fn declared_cost_is_passed_through_and_none_when_undeclared() {
    let plugin = ExternalPlugin::new(true);
    let info = test_stream(FS);
    let undeclared = params("/bin/sh", "", &[]).expect("resolves");
    assert_eq!(plugin.check(&undeclared, &info), Ok(()));
    assert_eq!(plugin.cost(&undeclared, &info), None);
    let declared = plugin
        .cost(
            &params(
                "/bin/sh",
                "",
                &[
                    ("state_bytes", ParamValue::Integer(2068)),
                    ("ops_per_sample", ParamValue::Real(3.5)),
                ],
            )
            .expect("resolves"),
            &info,
        )
        .expect("ok");
    assert_eq!((declared.state_bytes, declared.ops_per_sample), (2068, 3.5));
}

/// Arguments reach the program split on whitespace; stderr is quoted.
#[test]
fn arguments_are_split_on_whitespace() {
    let command = shell_script("args", "echo \"$# args: $1|$2|$3\" >&2\nexit 4");
    let error = build(&command, "  one\ttwo  three ", &[], &test_stream(FS))
        .err()
        .expect("it exits before READY");
    assert!(
        error.message.contains("stderr: 3 args: one|two|three"),
        "{error}"
    );
    assert!(
        error
            .message
            .contains("exited with status 4 before its handshake reply"),
        "{error}"
    );
}

/// The child is killed and reaped on drop (no zombie left in /proc), promptly
/// even when it ignores END.
#[cfg(target_os = "linux")]
#[test]
fn drop_kills_and_reaps_the_child() {
    let command = after_handshake("stubborn", "exec sleep 30");
    let program = ExternalProgram {
        command,
        args: vec![],
        timeout_s: 10.0,
    };
    let detector = ExternalDetector::spawn(program, &test_stream(FS)).expect("starts");
    assert_eq!(detector.program_name(), "stubborn");
    let pid = detector.child_id().expect("running");
    assert!(std::path::Path::new(&format!("/proc/{pid}")).exists());
    let started = Instant::now();
    drop(detector);
    assert!(started.elapsed() < Duration::from_secs(1));
    assert!(
        !std::path::Path::new(&format!("/proc/{pid}")).exists(),
        "pid {pid} left behind"
    );
}

/// The detector is usable as a trait object in the harness's way: zero-length
/// blocks send nothing and need no answer.
#[test]
fn empty_blocks_send_nothing() {
    // This program dies at the first block it reads: empty blocks must not reach it.
    let command = after_handshake("empty", "exit 9");
    let mut detector: Box<dyn Detector> =
        build(&command, "", &[], &test_stream(FS)).expect("starts");
    let mut out = Vec::new();
    for _ in 0..5 {
        assert_eq!(detector.process(Samples::Real(&[]), &mut out), Ok(()));
    }
    assert!(detector
        .process(Samples::Real(&[0.0]), &mut out)
        .expect_err("died")
        .message
        .contains("exited with status 9 after 0 blocks"));
}
