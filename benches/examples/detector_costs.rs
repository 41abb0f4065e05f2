//! Prints every built-in detector's declared cost at its defaults (2 kHz real,
//! 12-bit stream) beside the throughput criterion measured for it, as a
//! Markdown table.
//!
//! Run the `detectors` benchmark first
//! (`cargo bench -p echobench-benches --bench detectors`); without its results
//! the throughput columns say "not run". Medians are read from criterion's
//! `target/criterion/detectors/<id>/<carrier>/new/` files.
use echobench_core::detector::Params;
use echobench_core::{Channels, StreamInfo};
use std::path::{Path, PathBuf};

const SAMPLE_RATE_HZ: f64 = 2000.0;
const CARRIERS_HZ: [f64; 2] = [24.125e9, 2.45e9];

fn criterion_dir() -> PathBuf {
    match std::env::var_os("CARGO_TARGET_DIR") {
        Some(dir) => PathBuf::from(dir).join("criterion"),
        None => Path::new(env!("CARGO_MANIFEST_DIR")).join("../target/criterion"),
    }
}

/// Median throughput in samples per second, from criterion's saved estimate.
fn measured_samples_per_s(id: &str, carrier_label: &str) -> Option<f64> {
    let dir = criterion_dir()
        .join("detectors")
        .join(id)
        .join(carrier_label)
        .join("new");
    let read = |file: &str| -> Option<serde_json::Value> {
        let text = std::fs::read_to_string(dir.join(file)).ok()?;
        serde_json::from_str(&text).ok()
    };
    let median_ns = read("estimates.json")?["median"]["point_estimate"].as_f64()?;
    let samples = read("benchmark.json")?["throughput"]["Elements"].as_f64()?;
    (median_ns > 0.0).then(|| samples / (median_ns * 1e-9))
}

fn main() {
    println!("| detector | carrier | samples/s (M/s) | × real time at 2 kHz | state memory | ops/sample |");
    println!("|---|---|---:|---:|---:|---:|");
    for plugin in echobench_detectors::builtin() {
        let params = Params::defaults(plugin.params());
        for carrier_hz in CARRIERS_HZ {
            let label = format!("{}GHz", carrier_hz / 1e9);
            let measured = measured_samples_per_s(plugin.id(), &label);
            // Only the carriers the benchmark ran (always the first).
            if measured.is_none() && carrier_hz != CARRIERS_HZ[0] {
                continue;
            }
            let info = StreamInfo {
                sample_rate_hz: SAMPLE_RATE_HZ,
                channels: Channels::Real,
                adc_bits: 12,
                carrier_hz,
            };
            let (state, ops) = match (plugin.cost(&params, &info), plugin.check(&params, &info)) {
                (Some(cost), _) => (
                    format!("{} B", cost.state_bytes),
                    format!("{:.1}", cost.ops_per_sample),
                ),
                (None, Err(e)) => (format!("error: {e}"), String::new()),
                (None, Ok(())) => ("not declared".to_string(), String::new()),
            };
            let (rate, real_time) = match measured {
                Some(rate) => (
                    format!("{:.2}", rate / 1e6),
                    format!("{:.0}", rate / SAMPLE_RATE_HZ),
                ),
                None => ("not run".to_string(), String::new()),
            };
            println!(
                "| {} | {} GHz | {rate} | {real_time} | {state} | {ops} |",
                plugin.id(),
                carrier_hz / 1e9
            );
        }
    }
}
