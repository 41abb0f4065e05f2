//! Checks a short soak's tail fit against a whole week of the same rooms
//! (`benches/week-check.sh` makes both runs).
//!
//! Usage: `cargo run --release -p echobench-benches --example week_check -- SHORT LONG`,
//! where SHORT and LONG are run folders of `benches/week-check/suite.yaml` at 1.68 h and 168 h
//! of noise per room (one room per product).
//!
//! The check is made in rate space, where the sampling law of the week is known. The week's
//! one-per-week threshold `t` in the tail's own terms is the smallest threshold with at most
//! one alarm cluster in the week: just above the week's second-largest alarm peak `M₂`
//! (`RoomTail::alarm_peaks` of the long run, exact at the statistic's values). If alarm
//! clusters come as a Poisson process, the expected number of clusters above `M₂` in a week,
//! Λ(M₂), is Gamma(2, 1)-distributed (the second point of a unit-rate Poisson process, counted
//! from the top; docs/reference/statistics.md#s11), 95 % range [0.242, 5.572]. The short fit
//! predicts Λ(M₂) = its rate at `M₂` × 168 h, with the 95 % band of its profile likelihood.
//! A fit is **consistent** when its band meets that range, **optimistic** when its whole
//! band lies below it (it promises fewer false alarms than the week had), **pessimistic**
//! when above. Comparing thresholds directly, as an earlier version did, mixed the fit's
//! uncertainty with the week's own (a one-week count is a draw, not the truth) and read
//! "outside" far more often than a correct fit would.
//!
//! The product's counted one-per-week threshold (the calibration grid's, which the summary
//! reports) is printed beside `M₂` but not judged: the grid's thresholds above the pilot are
//! the trials' largest raw scores, not values of the M-of-N statistic, so the counted value
//! is the next grid point above the true one and can sit far above it; and the product's
//! non-retriggerable hold can count one long cluster twice, which the cluster count does not
//! (crates/tail/TAIL.md).
//!
//! The long run's own fit (100 times the data) is printed as a third view.

use echobench_harness::rare_rates::{RareThreshold, RoomTail};
use echobench_harness::runner::Tallies;
use echobench_harness::summary::{DetectorSummary, Summary};
use echobench_tail::{TailFit, ThresholdRule, TrialDispersion};
use std::path::Path;
use std::process::ExitCode;

/// One per week, per hour.
const WEEKLY_PER_HOUR: f64 = 1.0 / 168.0;

/// The 2.5 % and 97.5 % quantiles of Gamma(2, 1) (`scipy.stats.gamma.ppf([0.025, 0.975], 2)`,
/// recomputed by docs/reference/check_values.py).
const SECOND_POINT_95: (f64, f64) = (0.242_209, 5.571_643);

fn weekly(detector: &DetectorSummary) -> Option<&RareThreshold> {
    detector
        .rare_thresholds
        .iter()
        .find(|r| (r.rate_per_hour / WEEKLY_PER_HOUR - 1.0).abs() < 1e-3)
}

/// Five significant digits: fixed point in the middle range, scientific for small or large
/// values (a fixed four decimals printed the 24 GHz `energy-c` thresholds, about 2e-4, as
/// `0.0002 [0.0002, 0.0002]`).
fn number(x: Option<f64>) -> String {
    x.map_or_else(
        || "—".to_string(),
        |v| {
            if v != 0.0 && (v.abs() < 0.01 || v.abs() >= 1e6) {
                format!("{v:.4e}")
            } else {
                format!("{v:.4}")
            }
        },
    )
}

/// The short fit's expected clusters in a week above `x`, with its 95 % profile-likelihood
/// interval: the room's fit is remade from the excesses its tallies keep
/// (docs/reference/statistics.md#s10). `None` below the fit threshold or without a fit.
fn weekly_clusters_above(room: &RoomTail, x: f64) -> Option<(f64, f64, f64)> {
    let u = room.fit_threshold?;
    let fit = TailFit::from_excesses(
        u,
        &room.excesses,
        room.exposure_ns as f64 / 3.6e12,
        ThresholdRule::default().shape_floor,
    )
    .ok()?
    .with_dispersion(room.dispersion.unwrap_or(TrialDispersion::NONE))
    .ok()?;
    let e = fit.rate_interval(x, 0.95).ok()?;
    Some((e.value * 168.0, e.lower * 168.0, e.upper * 168.0))
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [short, long] = args.as_slice() else {
        eprintln!("usage: week_check SHORT_RUN LONG_RUN");
        return ExitCode::from(2);
    };
    let summary = |dir: &str| -> Result<Summary, String> {
        echobench_run_files::read_summary(Path::new(dir)).map_err(|e| e.to_string())
    };
    let tallies = |dir: &str| -> Result<Tallies, String> {
        echobench_run_files::read_tallies(Path::new(dir)).map_err(|e| e.to_string())
    };
    let (short_summary, short_tallies, long, long_tallies) =
        match (summary(short), tallies(short), summary(long), tallies(long)) {
            (Ok(s), Ok(t), Ok(l), Ok(lt)) => (s, t, l, lt),
            (Err(e), _, _, _) | (_, Err(e), _, _) | (_, _, Err(e), _) | (_, _, _, Err(e)) => {
                eprintln!("error: {e}");
                return ExitCode::from(2);
            }
        };
    println!(
        "{:<20} {:<18} {:<15} {:>5} {:>34} {:>13} {:>13} {:>30} {:>12} {:>34}",
        "product",
        "detector",
        "short fit of",
        "φ",
        "fitted on 1.68 h [95 % interval]",
        "M₂ of 168 h",
        "grid 168 h",
        "short fit's Λ(M₂) [95 %]",
        "verdict",
        "fitted on 168 h [95 % interval]"
    );
    let (mut consistent, mut optimistic, mut pessimistic) = (0, 0, 0);
    for detector in &short_summary.detectors {
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
        let room = short_tallies
            .detectors
            .iter()
            .find(|d| d.product == detector.product && d.label == detector.label)
            .and_then(|d| d.tail.first());
        let interval = |r: &RareThreshold| match r.extrapolated.threshold {
            Some(t) => format!(
                "{} [{}, {}]",
                number(Some(t)),
                number(r.extrapolated.low),
                r.extrapolated.high.map_or("∞".into(), |h| number(Some(h)))
            ),
            None => format!("— ({})", r.extrapolated.note.as_deref().unwrap_or("no fit")),
        };
        let second_peak = long_tallies
            .detectors
            .iter()
            .find(|d| d.product == detector.product && d.label == detector.label)
            .and_then(|d| d.tail.first())
            .and_then(|r| r.alarm_peaks.get(1).copied());
        let expected = second_peak
            .zip(room)
            .and_then(|(t, room)| weekly_clusters_above(room, t));
        let (shown, verdict) = match expected {
            Some((point, low, high)) => {
                let verdict = if high < SECOND_POINT_95.0 {
                    optimistic += 1;
                    "optimistic"
                } else if low > SECOND_POINT_95.1 {
                    pessimistic += 1;
                    "pessimistic"
                } else {
                    consistent += 1;
                    "consistent"
                };
                (format!("{point:.3} [{low:.3}, {high:.3}]"), verdict)
            }
            None => ("— (below the fit threshold)".to_string(), "—"),
        };
        println!(
            "{:<20} {:<18} {:<15} {:>5} {:>34} {:>13} {:>13} {:>30} {:>12} {:>34}",
            detector.product,
            detector.label,
            room.map_or("—", |r| r.basis.label()),
            room.and_then(|r| r.dispersion)
                .map_or("—".to_string(), |d| format!("{:.2}", d.scale)),
            interval(fitted),
            number(second_peak),
            number(week.counted_threshold),
            shown,
            verdict,
            interval(week)
        );
    }
    println!(
        "short fit consistent with the week: {consistent} of {} ({optimistic} optimistic, {pessimistic} pessimistic); \
         Λ(M₂) = expected alarm clusters per week above the week's second-largest alarm peak, 95 % range for a correct fit [{}, {}]; \
         φ = the short fit's dispersion scale (docs/reference/statistics.md#s12); grid = the product's counted threshold, not judged",
        consistent + optimistic + pessimistic,
        SECOND_POINT_95.0,
        SECOND_POINT_95.1
    );
    ExitCode::SUCCESS
}
