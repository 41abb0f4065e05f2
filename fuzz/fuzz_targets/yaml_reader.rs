//! The strict YAML reader on any bytes: the located tree must come back or a report, never
//! a panic, and within the reader's own size, node and depth limits.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let limits = echobench_yaml_reader::Limits::default();
        let _ = echobench_yaml_reader::parse("fuzz.yaml", text, &limits);
    }
});
