//! The suite loader on any text, with every built-in detector and the `external` plugin
//! (as `check` loads suites); scene files named by the suite resolve from `scenarios/`.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let plugins = echobench_detectors::with_external(true);
        let folder = concat!(env!("CARGO_MANIFEST_DIR"), "/../scenarios");
        let source = echobench_suite::FolderSource::new(folder);
        let _ = echobench_suite::load_suite_text("fuzz.yaml", text, &source, &plugins);
    }
});
