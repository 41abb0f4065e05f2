//! The console's rare blocks: rare events scored per occurrence, and rare rates by tail
//! extrapolation.

use super::grid_table;
use echobench_harness::rare_events::RareEvents;
use echobench_harness::rare_rates::{RareThreshold, REPORT_RATES_PER_HOUR};
use echobench_harness::summary::{rate_label, DetectorSummary, Estimate};

fn cell(e: &Estimate) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
        _ => "—".into(),
    }
}

/// The console's block for a product's detectors at their first operating point: per event,
/// the probability that an occurrence raises a false alarm and the false alarms per day it
/// adds; then the product's rate per day with its events. Empty without rare events.
pub(crate) fn events_block(detectors: &[&DetectorSummary], label: &str) -> String {
    let with_events: Vec<(&str, &RareEvents)> = detectors
        .iter()
        .filter_map(|d| {
            let first = d.operating_points.first()?;
            Some((d.label.as_str(), first.rare_events.as_ref()?))
        })
        .collect();
    let Some((_, first)) = with_events.first() else {
        return String::new();
    };
    let names: Vec<String> = with_events.iter().map(|(l, _)| l.to_string()).collect();
    let mut rows: Vec<(String, Vec<String>)> = first
        .events
        .iter()
        .enumerate()
        .map(|(i, event)| {
            let cells = with_events
                .iter()
                .map(|(_, r)| {
                    r.events.get(i).map_or("—".into(), |e| {
                        format!(
                            "{} of {} → {}/day",
                            e.alarmed,
                            e.occurrences,
                            cell(&e.per_day)
                        )
                    })
                })
                .collect();
            (
                format!("{} ({}/day)", event.scene, event.occurrences_per_day),
                cells,
            )
        })
        .collect();
    rows.push((
        "rooms (steady)".into(),
        with_events
            .iter()
            .map(|(_, r)| format!("{}/day", cell(&r.steady_per_day)))
            .collect(),
    ));
    rows.push((
        "total".into(),
        with_events
            .iter()
            .map(|(_, r)| format!("{}/day", cell(&r.total_per_day)))
            .collect(),
    ));
    let mut out = format!(
        "\nrare events @ {label}: occurrences that raised a false alarm, and the false alarms per day they add (occurrences per day × that fraction, Clopper–Pearson 95 %); total = rooms' test rate + events (interval ends added):\n"
    );
    out.push_str(&grid_table("event", &names, &rows));
    out
}

/// Three significant digits, plain or in exponent form.
fn sig3(x: f64) -> String {
    if x == 0.0 {
        "0".into()
    } else if x.abs() >= 1e5 || x.abs() < 1e-3 {
        format!("{x:.2e}")
    } else {
        let digits = (2 - x.abs().log10().floor() as i32).max(0) as usize;
        format!("{x:.digits$}")
    }
}

/// The console block: per detector, the extrapolated threshold for each rare rate with its
/// interval, the counted one beside it where there is one, and why a cell is empty.
pub(crate) fn rates_block(detectors: &[&DetectorSummary]) -> String {
    let rows: Vec<(&str, &Vec<RareThreshold>)> = detectors
        .iter()
        .filter(|d| !d.rare_thresholds.is_empty())
        .map(|d| (d.label.as_str(), &d.rare_thresholds))
        .collect();
    if rows.is_empty() {
        return String::new();
    }
    let columns: Vec<String> = REPORT_RATES_PER_HOUR
        .iter()
        .map(|r| rate_label(*r))
        .collect();
    let mut notes: Vec<String> = Vec::new();
    let table_rows: Vec<(String, Vec<String>)> = rows
        .iter()
        .map(|(label, list)| {
            let cells = list
                .iter()
                .map(|t| t.cell(&sig3, &mut notes, false))
                .collect();
            (label.to_string(), cells)
        })
        .collect();
    let mut out = String::from(
        "\nrare rates by tail extrapolation: threshold [95 % profile-likelihood interval] from a generalized Pareto fit of each room's declustered alarm maxima, the worst room's | the counted threshold where the product has that target (? not resolved by the calibration time):\n",
    );
    out.push_str(&grid_table("detector", &columns, &table_rows));
    for (k, note) in notes.iter().enumerate() {
        out.push_str(&format!("  ({}) {note}\n", k + 1));
    }
    out
}
