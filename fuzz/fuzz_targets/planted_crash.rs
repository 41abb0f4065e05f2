//! The YAML target with a crash planted on one known input: `run.sh --self-test` replays
//! that input with this build and insists the replay fails, so a crash in the corpus can
//! never pass the gate unnoticed. Never explored, never part of the gate's target list.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if data.starts_with(b"ECHOBENCH-PLANTED-CRASH") {
        panic!("the planted crash of the fuzz self-test");
    }
    if let Ok(text) = std::str::from_utf8(data) {
        let limits = echobench_yaml_reader::Limits::default();
        let _ = echobench_yaml_reader::parse("fuzz.yaml", text, &limits);
    }
});
