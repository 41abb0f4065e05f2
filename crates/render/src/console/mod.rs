//! The console verdict of a run: per product, a ranking, a detection table and a
//! false-alarm table at the first operating point, the presence, rare-event and rare-rate
//! blocks, and what the calibration resolved, in the words the report uses too
//! ([`calibration_statements`]).

mod presence;
mod rare;
mod zone;

pub use zone::zone_table;

use echobench_harness::presence_summary::{budget_label, PresenceVerdict};
use echobench_harness::runner::{room_name, Timing};
use echobench_harness::summary::{
    over_target, rate_label, DetectorSummary, Estimate, MissReason, ProductSummary, SceneOutcome,
    Summary, CAUTIONS,
};
use echobench_suite::ThresholdRule;

/// An estimate as `value [low, high]` with two decimals (a rate or a proportion).
fn fmt_estimate(e: &Estimate) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
        _ => "—".into(),
    }
}

/// Widest console line the tables aim for; wider tables are cut into groups of columns.
const CONSOLE_WIDTH: usize = 150;

/// A text table: a first column of row names, then one column per detector (each as wide
/// as its widest cell), cut into groups of columns that fit [`CONSOLE_WIDTH`].
pub(crate) fn grid_table(
    corner: &str,
    columns: &[String],
    rows: &[(String, Vec<String>)],
) -> String {
    let first = rows
        .iter()
        .map(|(name, _)| name.chars().count())
        .chain([corner.chars().count()])
        .max()
        .unwrap_or(0);
    let widths: Vec<usize> = columns
        .iter()
        .enumerate()
        .map(|(c, title)| {
            rows.iter()
                .filter_map(|(_, cells)| cells.get(c))
                .map(|cell| cell.chars().count())
                .chain([title.chars().count()])
                .max()
                .unwrap_or(0)
                + 2
        })
        .collect();
    let mut groups: Vec<std::ops::Range<usize>> = Vec::new();
    let mut start = 0;
    let mut used = first + 2;
    for (c, w) in widths.iter().enumerate() {
        if c > start && used + w > CONSOLE_WIDTH {
            groups.push(start..c);
            start = c;
            used = first + 2;
        }
        used += w;
    }
    groups.push(start..columns.len());
    let mut out = String::new();
    for group in groups {
        out.push_str(&format!("  {corner:<first$}"));
        for c in group.clone() {
            let width = widths[c];
            out.push_str(&format!("{:>width$}", columns[c]));
        }
        out.push('\n');
        for (name, cells) in rows {
            out.push_str(&format!("  {name:<first$}"));
            for c in group.clone() {
                let width = widths[c];
                out.push_str(&format!(
                    "{:>width$}",
                    cells.get(c).map_or("", String::as_str)
                ));
            }
            out.push('\n');
        }
    }
    out
}

fn fmt_pd_latency(s: &SceneOutcome) -> String {
    let pd = &s.outcome.pd;
    match (pd.value, pd.low, pd.high) {
        (Some(v), Some(l), Some(h)) => {
            let latency = s
                .latency_median_s
                .map_or("   —".to_string(), |x| format!("{x:>4.1}s"));
            format!("{v:.2} [{l:.2},{h:.2}] {latency}")
        }
        _ => "—".into(),
    }
}

fn fmt_fa_compact(e: &Estimate) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2},{h:.2}]"),
        _ => "—".into(),
    }
}

/// The scene rows of one label at operating point `o`, for the product's detectors.
fn scene_rows(
    detectors: &[&DetectorSummary],
    o: usize,
    label: &str,
    cell: impl Fn(&SceneOutcome) -> String,
) -> Vec<(String, Vec<String>)> {
    let Some(first) = detectors.first().and_then(|d| d.operating_points.get(o)) else {
        return Vec::new();
    };
    first
        .by_scene
        .iter()
        .enumerate()
        .filter(|(_, s)| s.label == label)
        .map(|(i, s)| {
            let name = room_name(&s.scene, s.sweep_value.as_deref());
            let cells = detectors
                .iter()
                .map(|d| {
                    d.operating_points
                        .get(o)
                        .and_then(|op| op.by_scene.get(i))
                        .map_or("—".into(), &cell)
                })
                .collect();
            (name, cells)
        })
        .collect()
}

/// The console verdict: per product, a ranking, a detection table (target scenes ×
/// detectors) and a false-alarm table (rooms × detectors) at the first target rate,
/// then what the calibration can and cannot resolve.
pub fn console_table(summary: &Summary, timing: Option<&Timing>) -> String {
    let mut out = String::new();
    out.push_str(&format!(
        "suite `{}`, seed {}: {} test trials, {:.2} h of signal; 95 % intervals\n",
        summary.suite, summary.seed, summary.test_trials, summary.test_signal_hours
    ));
    for product in &summary.products {
        let detectors: Vec<&DetectorSummary> = summary
            .detectors
            .iter()
            .filter(|d| d.product == product.name)
            .collect();
        let reasons: Vec<&MissReason> = summary
            .miss_reasons
            .iter()
            .filter(|r| r.product == product.name)
            .collect();
        out.push_str(&product_block(product, &detectors, &reasons));
    }
    if let Some(t) = timing {
        out.push_str(&format!(
            "\n{:.1} s wall for {:.1} h of calibration and test signal ({:.0} trial-seconds per wall second); test phase: synthesis {:.1} s, detectors {:.1} s (summed over threads)\n",
            t.wall_s,
            (t.calibration_signal_s + summary.test_signal_hours * 3600.0) / 3600.0,
            (t.calibration_signal_s + summary.test_signal_hours * 3600.0) / t.wall_s.max(1e-9),
            t.synthesis_s,
            t.detector_s.values().sum::<f64>()
        ));
        if let Some(bytes) = t.peak_rss_bytes {
            out.push_str(&format!(
                "peak resident memory {:.0} MB (bounded by threads, not by trials)\n",
                bytes as f64 / 1e6
            ));
        }
    }
    out.push_str(&format!("\n{CAUTIONS}\n"));
    out
}

/// The miss reasons of one product: per scene variant (in table order), one line per
/// reason with the detectors it applies to (the numbers are in `summary.json`).
fn reason_lines(rows: &[(String, Vec<String>)], reasons: &[&MissReason]) -> String {
    let mut out = String::new();
    if !reasons.is_empty() {
        out.push_str("  why (every cell below Pd 0.5):\n");
    }
    for (scene, _) in rows {
        let mut groups: Vec<(String, Vec<&str>)> = Vec::new();
        for r in reasons
            .iter()
            .filter(|r| room_name(&r.scene, r.sweep_value.as_deref()) == *scene)
        {
            // The reason without its numbers, so that detectors with the same cause group.
            let head = r.reason.split(" (").next().unwrap_or(&r.reason).to_string();
            match groups.iter_mut().find(|(h, _)| *h == head) {
                Some((_, list)) => list.push(&r.detector),
                None => groups.push((head, vec![&r.detector])),
            }
        }
        if groups.is_empty() {
            continue;
        }
        out.push_str(&format!("    {scene}:\n"));
        for (head, detectors) in groups {
            out.push_str(&format!("      {head}: {}\n", detectors.join(", ")));
        }
    }
    out
}

fn product_block(
    product: &ProductSummary,
    detectors: &[&DetectorSummary],
    reasons: &[&MissReason],
) -> String {
    let mut out = String::new();
    let output = if product.output == "iq" {
        "I/Q"
    } else {
        "real"
    };
    out.push_str(&format!(
        "\n== product `{}`: {:.3} GHz, {} Hz {output}; {} target scene variants, {} rooms; thresholds {} ==\n",
        product.name,
        product.carrier_hz / 1e9,
        product.sample_rate_hz,
        product.target_scenes.len(),
        product.nuisance_scenes.len(),
        if product.threshold_rule == "pooled" {
            "on the pooled calibration time"
        } else {
            "met in every room (worst room)"
        }
    ));
    if !product.about.is_empty() {
        out.push_str(&format!("   {}\n", product.about));
    }
    let Some(first) = detectors.first() else {
        return out;
    };
    let rates: Vec<f64> = first
        .operating_points
        .iter()
        .map(|o| o.target_false_alarms_per_hour)
        .collect();
    let presence: Vec<(&str, &PresenceVerdict)> = detectors
        .iter()
        .filter_map(|d| Some((d.label.as_str(), d.presence.as_ref()?)))
        .collect();
    let label0 = match presence.first() {
        // A presence product's operating points are its budgets of false switch-ons per day.
        Some((_, v)) => v
            .points
            .first()
            .map_or_else(String::new, |p| budget_label(p.budget_per_day)),
        None => rates.first().map_or_else(String::new, |r| rate_label(*r)),
    };
    if !presence.is_empty() {
        // The motion-event Pd of a detector on the scene variant at `index` (suite order),
        // at the first operating point: what tells "alarms too late" from "never sees it".
        let intrusion_pd = |label: &str, index: usize| {
            detectors
                .iter()
                .find(|d| d.label == label)?
                .operating_points
                .first()?
                .by_scene
                .get(index)?
                .outcome
                .pd
                .value
        };
        out.push_str(&presence::block(&presence, &intrusion_pd));
    }
    // Ranking, as in the report: first the detectors whose test false-alarm rate at the
    // first operating point is not shown to be over its target, then by Pd, then by median
    // latency.
    let meets = |d: &DetectorSummary| d.operating_points.first().is_some_and(|o| !over_target(o));
    let mut ranked: Vec<&&DetectorSummary> = detectors.iter().collect();
    ranked.sort_by(|a, b| {
        let pd = |d: &DetectorSummary| {
            d.operating_points
                .first()
                .and_then(|o| o.outcome.pd.value)
                .unwrap_or(-1.0)
        };
        let latency = |d: &DetectorSummary| {
            d.operating_points
                .first()
                .and_then(|o| o.latency_median_s)
                .unwrap_or(f64::INFINITY)
        };
        meets(b)
            .cmp(&meets(a))
            .then(pd(b).total_cmp(&pd(a)))
            .then(latency(a).total_cmp(&latency(b)))
    });
    let mut columns = vec!["trial AUC".to_string()];
    columns.extend(rates.iter().map(|r| format!("Pd @ {}", rate_label(*r))));
    columns.push(format!("latency @ {label0}"));
    columns.push(format!("FA/h @ {label0}"));
    columns.push(format!("on-time @ {label0}"));
    let rows: Vec<(String, Vec<String>)> = ranked
        .iter()
        .map(|d| {
            let mut cells = vec![d.trial_auc.map_or("—".into(), |a| format!("{a:.3}"))];
            cells.extend(
                d.operating_points
                    .iter()
                    .map(|o| fmt_estimate(&o.outcome.pd)),
            );
            let op = d.operating_points.first();
            cells.push(
                op.and_then(|o| o.latency_median_s)
                    .map_or("—".into(), |l| format!("{l:.2} s")),
            );
            cells.push(op.map_or("—".into(), |o| {
                fmt_estimate(&o.outcome.false_alarms_per_hour)
            }));
            cells.push(op.map_or("—".into(), |o| {
                if o.outcome.exposure_hours > 0.0 {
                    format!(
                        "{:.2} %",
                        100.0 * o.false_on_hours / o.outcome.exposure_hours
                    )
                } else {
                    "—".into()
                }
            }));
            let name = if meets(d) {
                d.label.clone()
            } else {
                format!("{} (over)", d.label)
            };
            (name, cells)
        })
        .collect();
    if presence.is_empty() {
        out.push_str(&format!(
            "ranking (those meeting {label0} on the test trials first, then by Pd; \"(over)\": test FA/h shown above the target, its 95 % interval wholly over it; FA/h and on-time on noise-only time):\n"
        ));
        out.push_str(&grid_table("detector", &columns, &rows));
    }

    let names: Vec<String> = detectors.iter().map(|d| d.label.clone()).collect();
    let detection = scene_rows(detectors, 0, "target", fmt_pd_latency);
    if !detection.is_empty() {
        out.push_str(&format!(
            "\n{}detection @ {label0} per target scene (Pd [95 % interval], median latency):\n",
            if presence.is_empty() {
                ""
            } else {
                "motion events (as an intrusion alarm would be scored) "
            }
        ));
        out.push_str(&grid_table("scene", &names, &detection));
        out.push_str(&reason_lines(&detection, reasons));
    }
    let mut false_alarms = scene_rows(detectors, 0, "nuisance", |s| {
        fmt_fa_compact(&s.outcome.false_alarms_per_hour)
    });
    // Each cell also gets the room's calibration rate at the threshold, `*` where that
    // room set the threshold.
    for (room, cells) in &mut false_alarms {
        for (cell, d) in cells.iter_mut().zip(detectors) {
            let Some(op) = d.operating_points.first() else {
                continue;
            };
            if let Some(r) = op.calibration_rooms.iter().find(|r| r.room == *room) {
                let mark = if op.limiting_room.as_deref() == Some(room.as_str()) {
                    "*"
                } else {
                    " "
                };
                cell.push_str(&format!(
                    " | {:.2}{mark}",
                    r.false_alarms_per_hour.value.unwrap_or(0.0)
                ));
            }
        }
    }
    if !false_alarms.is_empty() && presence.is_empty() {
        out.push_str(&format!(
            "\nfalse alarms per hour @ {label0} per room: test trials [95 % interval] | calibration (* the room that set the threshold):\n"
        ));
        out.push_str(&grid_table("room", &names, &false_alarms));
    }
    out.push_str(&calibration_notes(detectors, &rates));
    out.push_str(&rare::events_block(detectors, &label0));
    out.push_str(&rare::rates_block(detectors));
    for d in detectors {
        if let Some(n) = &d.nominal {
            out.push_str(&format!(
                "{}: nominal per-frame Pfa {:.2e} at threshold {:.3}; measured on nuisance scenes {}\n",
                d.label,
                n.nominal_frame_pfa,
                n.threshold,
                match (n.measured_frame_pfa.value, n.measured_frame_pfa.low, n.measured_frame_pfa.high) {
                    (Some(v), Some(l), Some(h)) => format!("{v:.2e} [{l:.2e}, {h:.2e}] over {} frames", n.noise_frames),
                    _ => "—".into(),
                }
            ));
        }
        if !d.failures.is_empty() {
            out.push_str(&format!(
                "{}: FAILED on {} trials, e.g. {} trial {}: {}\n",
                d.label,
                d.failures.len(),
                d.failures[0].scene,
                d.failures[0].trial,
                d.failures[0].message
            ));
        }
    }
    out
}

/// What the calibration resolved, and which room set each detector's threshold.
fn calibration_notes(detectors: &[&DetectorSummary], rates: &[f64]) -> String {
    let statements = calibration_statements(detectors, rates);
    let mut out = String::new();
    for (i, statement) in statements.iter().enumerate() {
        if i == 0 {
            out.push_str(&format!("\ncalibration: {}\n", statement.text));
        } else {
            out.push_str(&format!("  {}\n", statement.text));
        }
    }
    out
}

/// One statement about a product's calibration.
#[derive(Debug, Clone, PartialEq)]
pub struct CalibrationStatement {
    /// The sentence.
    pub text: String,
    /// Whether it reports a problem (a target the calibration cannot resolve).
    pub problem: bool,
}

/// What a product's calibration resolved, one statement per line: the console prints them
/// under a product's tables and the report in its heading, so both say the same.
pub fn calibration_statements(
    detectors: &[&DetectorSummary],
    rates: &[f64],
) -> Vec<CalibrationStatement> {
    let mut out = Vec::new();
    let Some(first) = detectors.first() else {
        return out;
    };
    let first_op = first.operating_points.first();
    let hours: Vec<f64> = first_op
        .map(|o| {
            o.calibration_rooms
                .iter()
                .map(|r| r.exposure_hours)
                .filter(|h| *h > 0.0)
                .collect()
        })
        .unwrap_or_default();
    let worst_room = first_op.is_some_and(|o| o.rule == ThresholdRule::WorstRoom.name());
    let (low, high) = hours
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(l, h), x| (l.min(*x), h.max(*x)));
    let text = if worst_room && !hours.is_empty() {
        format!(
            "thresholds chosen so that each target is met in every room, on {low:.2}–{high:.2} h of noise-only time per room"
        )
    } else {
        format!(
            "thresholds chosen on {:.2} h of pooled noise-only time",
            first_op.map_or(0.0, |o| o.calibration_exposure_hours)
        )
    };
    out.push(CalibrationStatement {
        text,
        problem: false,
    });
    for (o, rate) in rates.iter().enumerate() {
        let resolved = detectors
            .iter()
            .all(|d| d.operating_points.get(o).is_some_and(|p| p.resolved));
        // Zero alarms in T hours bound the rate at −ln(0.05)/T at 95 % (Garwood 1936), the
        // harness's `summary::resolves`.
        let need = -(0.05f64.ln()) / rate;
        let text = if resolved {
            format!(
                "{}: resolved (at least {need:.1} h per room, where zero alarms bound the rate below the target at 95 %)",
                rate_label(*rate)
            )
        } else {
            format!(
                "{}: NOT resolved: it needs {need:.1} h per room; its threshold is the lowest with no more calibration alarms than the time allows, so its Pd is optimistic about false alarms",
                rate_label(*rate)
            )
        };
        out.push(CalibrationStatement {
            text,
            problem: !resolved,
        });
    }
    if worst_room {
        let parts: Vec<String> = detectors
            .iter()
            .filter_map(|d| {
                let op = d.operating_points.first()?;
                Some(format!(
                    "{} ← {}",
                    d.label,
                    op.limiting_room
                        .as_deref()
                        .unwrap_or("none (lowest threshold)")
                ))
            })
            .collect();
        out.push(CalibrationStatement {
            text: format!(
                "room that set each threshold @ {}: {}",
                rates.first().map_or_else(String::new, |r| rate_label(*r)),
                parts.join(", ")
            ),
            problem: false,
        });
    }
    out
}
