//! Helpers shared by the integration tests: parameters, scripts, runs.
#![allow(dead_code)]

use echobench_core::detector::{
    Detector, DetectorFailure, DetectorPlugin, ParamError, ParamValue, Params, Samples,
};
use echobench_core::{Channels, FrameScore};
use echobench_detector_external::ExternalPlugin;
use std::path::PathBuf;
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Resolved parameters for the `external` plugin: `command` and `args` as given, the rest
/// from `more` or the defaults.
pub fn params(
    command: &str,
    args: &str,
    more: &[(&str, ParamValue)],
) -> Result<Params, ParamError> {
    let plugin = ExternalPlugin::new(true);
    let mut given: Vec<(String, ParamValue)> = vec![
        ("command".to_string(), ParamValue::Text(command.to_string())),
        ("args".to_string(), ParamValue::Text(args.to_string())),
    ];
    given.extend(more.iter().map(|(n, v)| (n.to_string(), v.clone())));
    Params::resolve("external", plugin.params(), &given).map_err(ParamError::from)
}

/// A fresh path under cargo's per-target temporary folder.
pub fn temp_path(stem: &str) -> PathBuf {
    static COUNTER: AtomicUsize = AtomicUsize::new(0);
    let n = COUNTER.fetch_add(1, Ordering::Relaxed);
    PathBuf::from(env!("CARGO_TARGET_TMPDIR"))
        .join(format!("external-{}-{n}-{stem}", std::process::id()))
}

/// Writes an executable /bin/sh script with `body`; returns its path.
pub fn shell_script(stem: &str, body: &str) -> String {
    let path = temp_path(&format!("{stem}.sh"));
    std::fs::write(&path, format!("#!/bin/sh\n{body}\n")).expect("temp folder is writable");
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o755)).expect("chmod");
    }
    path.to_string_lossy().into_owned()
}

/// A `printf` command writing exactly `bytes` (every byte as an octal escape,
/// which POSIX printf formats support).
pub fn printf_bytes(bytes: &[u8]) -> String {
    let escaped: String = bytes.iter().map(|b| format!("\\{b:03o}")).collect();
    format!("printf '{escaped}'")
}

/// READY with `version` and `name`.
pub fn ready(version: u32, name: &str) -> Vec<u8> {
    let mut bytes = b"EBXP".to_vec();
    bytes.extend(version.to_le_bytes());
    bytes.extend((name.len() as u32).to_le_bytes());
    bytes.extend(name.as_bytes());
    bytes
}

/// One SCOR record.
pub fn score_record(t_s: f64, value: f64) -> Vec<u8> {
    let mut bytes = b"SCOR".to_vec();
    bytes.extend(t_s.to_le_bytes());
    bytes.extend(value.to_le_bytes());
    bytes
}

/// Feeds `samples` (interleaved on I/Q streams) in blocks of `block` sample instants;
/// returns every score.
///
/// # Panics
/// When the detector fails (see [`run_until_failure`] for tests that expect it to).
pub fn run(
    detector: &mut dyn Detector,
    samples: &[f32],
    block: usize,
    channels: Channels,
) -> Vec<FrameScore> {
    let (out, failure) = run_until_failure(detector, samples, block, channels);
    if let Some(failure) = failure {
        panic!("the detector failed: {failure}");
    }
    out
}

/// Feeds `samples` in blocks of `block` sample instants until the detector fails;
/// returns the scores pushed until then and the failure, if any.
pub fn run_until_failure(
    detector: &mut dyn Detector,
    samples: &[f32],
    block: usize,
    channels: Channels,
) -> (Vec<FrameScore>, Option<DetectorFailure>) {
    let mut out = Vec::new();
    for chunk in samples.chunks(block.max(1) * channels.count()) {
        let chunk = Samples::from_values(chunk, channels).expect("whole pairs");
        if let Err(failure) = detector.process(chunk, &mut out) {
            return (out, Some(failure));
        }
    }
    (out, None)
}

/// Whether `python3` with numpy can run the examples. When it cannot, the
/// calling test prints "skipped: python3 with numpy not found" and returns,
/// unless ECHOBENCH_REQUIRE_PYTHON=1, where it fails.
pub fn python_with_numpy() -> bool {
    let found = Command::new("python3")
        .args(["-c", "import numpy"])
        .output()
        .map(|o| o.status.success())
        .unwrap_or(false);
    if !found {
        if std::env::var("ECHOBENCH_REQUIRE_PYTHON").as_deref() == Ok("1") {
            panic!("python3 with numpy not found, and ECHOBENCH_REQUIRE_PYTHON=1");
        }
        println!("skipped: python3 with numpy not found");
    }
    found
}

/// The example detector's path.
pub fn energy_example() -> String {
    format!("{}/python/energy_detector.py", env!("CARGO_MANIFEST_DIR"))
}

/// Builds the external plugin (exec allowed) on `command` `args`.
pub fn build(
    command: &str,
    args: &str,
    more: &[(&str, ParamValue)],
    info: &echobench_core::StreamInfo,
) -> Result<Box<dyn Detector>, ParamError> {
    ExternalPlugin::new(true)
        .plan(&params(command, args, more)?, info)
        .map(|plan| plan.start())
}
