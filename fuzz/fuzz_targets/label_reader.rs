//! The label-file reader on any bytes, for a 60 s capture with the default end tolerance.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = echobench_capture::parse_labels(
        std::path::Path::new("fuzz-labels.csv"),
        data,
        60.0,
        echobench_capture::LABEL_END_TOLERANCE_S,
    );
});
