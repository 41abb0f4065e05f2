//! The WAV capture reader on any bytes: opened through its real entry point (a file), then
//! read to the end in blocks, as a run reads a recording.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let path = std::env::temp_dir().join(format!("echobench-fuzz-{}.wav", std::process::id()));
    if std::fs::write(&path, data).is_err() {
        return;
    }
    let adc = echobench_capture::AdcDescription::new(12, 3.3, None);
    if let Ok(adc) = adc {
        if let Ok(mut reader) = echobench_capture::CaptureReader::open_wav(&path, adc) {
            let mut block = Vec::new();
            for _ in 0..64 {
                block.clear();
                match reader.read_block(&mut block, 4096) {
                    Ok(0) | Err(_) => break,
                    Ok(_) => {}
                }
            }
            let _ = reader.seek_to_frame(reader.frames() / 2);
        }
    }
});
