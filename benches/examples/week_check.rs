//! Compares the 1-per-week thresholds of a short soak's tail fit with those counted over a
//! whole week of the same rooms (`benches/week-check.sh` makes both runs).
//!
//! Usage: `cargo run --release -p echobench-benches --example week_check -- SHORT LONG`,
//! where SHORT and LONG are run folders of `benches/week-check/suite.yaml` at 1.68 h and 168 h
//! of noise per room. For each product and detector it prints the short run's extrapolated
//! threshold with its 95 % profile-likelihood interval, the long run's counted threshold (the
//! product's target is one per week, so calibration counts it: at most one alarm in the
//! week), whether the counted value lies inside the interval, and, as a third view, the long
//! run's own extrapolation (100 times the data).

use echobench_harness::rare_rates::RareThreshold;
use echobench_harness::summary::{DetectorSummary, Summary};
use std::path::Path;
use std::process::ExitCode;

/// One per week, per hour.
const WEEKLY_PER_HOUR: f64 = 1.0 / 168.0;

fn weekly(detector: &DetectorSummary) -> Option<&RareThreshold> {
    detector
        .rare_thresholds
        .iter()
        .find(|r| (r.rate_per_hour / WEEKLY_PER_HOUR - 1.0).abs() < 1e-3)
}

fn number(x: Option<f64>) -> String {
    x.map_or_else(|| "—".to_string(), |v| format!("{v:.4}"))
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [short, long] = args.as_slice() else {
        eprintln!("usage: week_check SHORT_RUN LONG_RUN");
        return ExitCode::from(2);
    };
    let read = |dir: &str| -> Result<Summary, String> {
        echobench_run_files::read_summary(Path::new(dir)).map_err(|e| e.to_string())
    };
    let (short, long) = match (read(short), read(long)) {
        (Ok(s), Ok(l)) => (s, l),
        (Err(e), _) | (_, Err(e)) => {
            eprintln!("error: {e}");
            return ExitCode::from(2);
        }
    };
    println!(
        "{:<20} {:<18} {:>34} {:>12} {:>8} {:>34}",
        "product",
        "detector",
        "fitted on 1.68 h [95 % interval]",
        "counted 168 h",
        "inside",
        "fitted on 168 h [95 % interval]"
    );
    let (mut inside, mut compared) = (0, 0);
    for detector in &short.detectors {
        let Some(other) = long
            .detectors
            .iter()
            .find(|d| d.product == detector.product && d.label == detector.label)
        else {
            continue;
        };
        let (Some(fitted), Some(week)) = (weekly(detector), weekly(other)) else {
            continue;
        };
        let interval = |r: &RareThreshold| match r.extrapolated.threshold {
            Some(t) => format!(
                "{} [{}, {}]",
                number(Some(t)),
                number(r.extrapolated.low),
                r.extrapolated.high.map_or("∞".into(), |h| number(Some(h)))
            ),
            None => format!("— ({})", r.extrapolated.note.as_deref().unwrap_or("no fit")),
        };
        let verdict = match (
            week.counted_threshold,
            fitted.extrapolated.low,
            fitted.extrapolated.threshold,
        ) {
            (Some(counted), Some(low), Some(_)) => {
                compared += 1;
                let high = fitted.extrapolated.high.unwrap_or(f64::INFINITY);
                if (low..=high).contains(&counted) {
                    inside += 1;
                    "yes"
                } else if counted < low {
                    "below"
                } else {
                    "above"
                }
            }
            _ => "—",
        };
        println!(
            "{:<20} {:<18} {:>34} {:>12} {:>8} {:>34}",
            detector.product,
            detector.label,
            interval(fitted),
            number(week.counted_threshold),
            verdict,
            interval(week)
        );
    }
    println!(
        "counted one-per-week threshold inside the short fit's 95 % interval: {inside} of {compared}"
    );
    ExitCode::SUCCESS
}
