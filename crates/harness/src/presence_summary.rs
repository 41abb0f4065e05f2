//! The verdict of a presence product: what its output pin did, per operating point, pooled
//! and per scene, each rate with its interval, and the hold-time trade-off.
//!
//! The figures are defined (and computed exactly, in whole nanoseconds) by
//! `echobench_presence`; this module only turns its tallies into rates with intervals and
//! prints them. False switch-ons and drop-outs carry exact Garwood intervals (counts over
//! time); false-on time carries the gamma interval of a weighted Poisson sum (Fay & Feuer
//! 1997), because it is a sum of episodes of unequal length, not a count.

use crate::runner::{DetectorTally, VariantTally};
use crate::summary::{Estimate, CONFIDENCE};
use echobench_core::atomic::write_atomically;
use echobench_presence::{LatencyQuantile, OccupiedKind, PresenceTally, RateEstimate, Timer};
use echobench_suite::PresenceOutput;
use serde::{Deserialize, Serialize};
use std::io;
use std::path::Path;

/// A latency quantile: seconds, or `null` with `not_reached` when it falls among the
/// entries (exits) after which the output never switched on (off) in the trial.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Quantile {
    /// Seconds, when observed.
    pub seconds: Option<f64>,
    /// The quantile falls among the censored values.
    pub not_reached: bool,
}

impl Quantile {
    fn from(q: Result<LatencyQuantile, echobench_presence::PresenceError>) -> Quantile {
        match q {
            Ok(LatencyQuantile::Observed(seconds)) => Quantile {
                seconds: Some(seconds),
                not_reached: false,
            },
            Ok(LatencyQuantile::NotReached) => Quantile {
                seconds: None,
                not_reached: true,
            },
            _ => Quantile {
                seconds: None,
                not_reached: false,
            },
        }
    }

    /// `1.23 s`, `not reached` or `—`.
    pub fn text(&self) -> String {
        match (self.seconds, self.not_reached) {
            (Some(s), _) => format!("{s:.2} s"),
            (None, true) => "not reached".into(),
            (None, false) => "—".into(),
        }
    }
}

/// What the output pin did on a slice of the test trials.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresenceFigures {
    /// Empty time, hours.
    pub empty_hours: f64,
    /// Occupied and moving time, hours.
    pub moving_hours: f64,
    /// Occupied and still time, hours.
    pub still_hours: f64,
    /// False-on time per day of empty time, seconds per day (Fay & Feuer gamma interval).
    pub false_on_s_per_day: Estimate,
    /// Share of empty time the output was on.
    pub false_on_fraction: Option<f64>,
    /// False switch-ons per day of empty time (Garwood).
    pub false_switch_ons_per_day: Estimate,
    /// False switch-ons counted.
    pub false_switch_ons: u64,
    /// Drop-outs per occupied hour, all (Garwood).
    pub dropouts_per_occupied_hour: Estimate,
    /// Drop-outs per hour of moving occupancy (Garwood).
    pub dropouts_per_moving_hour: Estimate,
    /// Drop-outs per hour of still occupancy (Garwood).
    pub dropouts_per_still_hour: Estimate,
    /// Drop-outs counted (moving, still).
    pub dropouts: (u64, u64),
    /// Longest drop-out, s.
    pub longest_dropout_s: f64,
    /// Occupied periods with no alarm at all (each also one drop-out).
    pub missed_periods: u64,
    /// Occupied periods.
    pub occupied_periods: u64,
    /// Entries (occupied periods starting inside a trial).
    pub entries: u64,
    /// Median switch-on latency after an entry.
    pub switch_on_median: Quantile,
    /// 90th percentile of the switch-on latency.
    pub switch_on_p90: Quantile,
    /// Exits (occupied periods ending inside a trial).
    pub exits: u64,
    /// Median time to switch off after the room empties, over the exits at which the
    /// output was on.
    pub switch_off_median: Quantile,
    /// 90th percentile of the time to switch off, over the exits at which it was on.
    pub switch_off_p90: Quantile,
    /// Exits at which the output was already off (the person was lost before leaving;
    /// their drop-out is counted).
    pub exits_already_off: u64,
}

fn estimate(rate: Result<RateEstimate, echobench_presence::PresenceError>) -> Estimate {
    match rate {
        Ok(r) => Estimate {
            value: Some(r.estimate),
            low: Some(r.interval.low),
            high: Some(r.interval.high),
        },
        Err(_) => Estimate {
            value: None,
            low: None,
            high: None,
        },
    }
}

impl PresenceFigures {
    /// The figures of a tally, for the product's timer.
    pub fn of(tally: &PresenceTally, timer: &Timer) -> PresenceFigures {
        PresenceFigures {
            empty_hours: tally.empty_ns as f64 / 3.6e12,
            moving_hours: tally.moving_ns as f64 / 3.6e12,
            still_hours: tally.still_ns as f64 / 3.6e12,
            false_on_s_per_day: estimate(tally.false_on_s_per_day(timer, CONFIDENCE)),
            false_on_fraction: (tally.empty_ns > 0)
                .then(|| tally.false_on_ns as f64 / tally.empty_ns as f64),
            false_switch_ons_per_day: estimate(tally.false_switch_ons_per_day(CONFIDENCE)),
            false_switch_ons: tally.false_switch_ons,
            dropouts_per_occupied_hour: estimate(
                tally.dropouts_per_occupied_h(OccupiedKind::All, CONFIDENCE),
            ),
            dropouts_per_moving_hour: estimate(
                tally.dropouts_per_occupied_h(OccupiedKind::Moving, CONFIDENCE),
            ),
            dropouts_per_still_hour: estimate(
                tally.dropouts_per_occupied_h(OccupiedKind::Still, CONFIDENCE),
            ),
            dropouts: (tally.dropouts_moving, tally.dropouts_still),
            longest_dropout_s: tally.longest_dropout_ns as f64 * 1e-9,
            missed_periods: tally.missed_periods,
            occupied_periods: tally.occupied_periods,
            entries: tally.entries,
            switch_on_median: Quantile::from(tally.switch_on_latency_quantile(0.5)),
            switch_on_p90: Quantile::from(tally.switch_on_latency_quantile(0.9)),
            exits: tally.exits,
            switch_off_median: Quantile::from(tally.switch_off_quantile_when_on(0.5)),
            switch_off_p90: Quantile::from(tally.switch_off_quantile_when_on(0.9)),
            exits_already_off: tally.exits_already_off(),
        }
    }
}

/// One scene variant's pin at an operating point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresenceScene {
    /// Scene id.
    pub scene: String,
    /// Swept value, if swept.
    pub sweep_value: Option<String>,
    /// `target` or `nuisance`.
    pub label: String,
    /// The figures.
    #[serde(flatten)]
    pub figures: PresenceFigures,
}

/// A presence product's detector at one operating point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresencePoint {
    /// The false switch-ons per day of empty time the threshold was chosen for.
    pub budget_per_day: f64,
    /// The threshold.
    pub threshold: f64,
    /// All test trials pooled.
    #[serde(flatten)]
    pub figures: PresenceFigures,
    /// The rooms (nuisance scenes) pooled: nobody comes in, so every moment the output is on
    /// is false, and none of it is the hold running on after someone left.
    pub rooms: PresenceFigures,
    /// The target scenes pooled: drop-outs, switch-on and switch-off times of real visits.
    pub visits: PresenceFigures,
    /// Per scene variant, in suite order.
    pub by_scene: Vec<PresenceScene>,
    /// Each room's calibration at the threshold: (room, false switch-ons per day of empty
    /// time, Garwood interval).
    pub calibration_rooms: Vec<(String, Estimate)>,
    /// The room whose calibration set the threshold (worst-room rule).
    pub limiting_room: Option<String>,
}

/// One hold time of the trade-off curve, all test trials pooled.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TradeoffRow {
    /// Hold, s.
    pub hold_s: f64,
    /// Whether it is the product's own hold.
    pub product_hold: bool,
    /// The figures at that hold.
    #[serde(flatten)]
    pub figures: PresenceFigures,
}

/// What a presence product's output did with one detector.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PresenceVerdict {
    /// The product's timer and budgets.
    pub output: PresenceOutput,
    /// One entry per budget.
    pub points: Vec<PresencePoint>,
    /// The hold-time trade-off at the first operating point's threshold.
    pub tradeoff: Vec<TradeoffRow>,
}

/// The presence verdict of one detector on a presence product (`None` for intrusion
/// products, or a timer the scorer refuses, which the suite loader refuses first).
pub fn presence_verdict(d: &DetectorTally) -> Option<PresenceVerdict> {
    let output = d.presence_output.as_ref()?;
    let timer = output.timer().ok()?;
    let pooled_where =
        |label: Option<&str>, pick: &dyn Fn(&VariantTally) -> Option<&PresenceTally>| {
            let mut sum = PresenceTally::default();
            for v in d
                .variants
                .iter()
                .filter(|v| label.is_none_or(|l| v.label == l))
            {
                if let Some(t) = pick(v) {
                    sum.merge(t);
                }
            }
            sum
        };
    let pooled = |pick: &dyn Fn(&VariantTally) -> Option<&PresenceTally>| pooled_where(None, pick);
    let points = d
        .operating
        .iter()
        .enumerate()
        .map(|(o, op)| PresencePoint {
            budget_per_day: op.target_per_hour * 24.0,
            threshold: op.threshold,
            figures: PresenceFigures::of(&pooled(&|v| v.presence.get(o)), &timer),
            rooms: PresenceFigures::of(
                &pooled_where(Some("nuisance"), &|v| v.presence.get(o)),
                &timer,
            ),
            visits: PresenceFigures::of(
                &pooled_where(Some("target"), &|v| v.presence.get(o)),
                &timer,
            ),
            by_scene: d
                .variants
                .iter()
                .filter_map(|v| {
                    Some(PresenceScene {
                        scene: v.scene.clone(),
                        sweep_value: v.sweep_value.clone(),
                        label: v.label.clone(),
                        figures: PresenceFigures::of(v.presence.get(o)?, &timer),
                    })
                })
                .collect(),
            calibration_rooms: op
                .rooms
                .iter()
                .map(|r| {
                    (
                        r.name(),
                        Estimate::rate(r.false_alarms, r.exposure_ns as f64 / 8.64e13),
                    )
                })
                .collect(),
            limiting_room: op.limiting_room.clone(),
        })
        .collect();
    let tradeoff = output
        .hold_sweep_s
        .iter()
        .enumerate()
        .filter_map(|(h, &hold_s)| {
            let swept = Timer::new(hold_s)
                .and_then(|t| timer.with_hold_ns(t.hold_ns()))
                .ok()?;
            let tally = pooled(&|v| v.hold_sweep.first().and_then(|row| row.get(h)));
            Some(TradeoffRow {
                hold_s,
                product_hold: hold_s == output.hold_s,
                figures: PresenceFigures::of(&tally, &swept),
            })
        })
        .collect();
    Some(PresenceVerdict {
        output: output.clone(),
        points,
        tradeoff,
    })
}

/// A per-day or per-hour rate with its interval, compact: `12.3 [4.5, 27]`.
fn compact(e: &Estimate) -> String {
    fn number(x: f64) -> String {
        if x == 0.0 {
            "0".into()
        } else if x.abs() >= 100.0 {
            format!("{x:.0}")
        } else if x.abs() >= 10.0 {
            format!("{x:.1}")
        } else {
            format!("{x:.2}")
        }
    }
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!("{} [{}, {}]", number(v), number(l), number(h)),
        _ => "—".into(),
    }
}

/// A budget per day as people say it: `24/day` or `1/day`.
pub fn budget_label(per_day: f64) -> String {
    if per_day >= 1.0 && per_day.fract() == 0.0 {
        format!("{per_day:.0}/day")
    } else {
        format!("{per_day}/day")
    }
}

/// One table row per scene variant labelled `label` (in suite order, at the first budget):
/// the variant's name, then one cell per detector from `cell(point, variant index, name)`.
fn pin_scene_rows(
    first: &PresenceVerdict,
    detectors: &[(&str, &PresenceVerdict)],
    label: &str,
    cell: &dyn Fn(&PresencePoint, usize, &str) -> String,
) -> Vec<(String, Vec<String>)> {
    let Some(point) = first.points.first() else {
        return Vec::new();
    };
    point
        .by_scene
        .iter()
        .enumerate()
        .filter(|(_, scene)| scene.label == label)
        .map(|(s, scene)| {
            let name = crate::runner::room_name(&scene.scene, scene.sweep_value.as_deref());
            let cells = detectors
                .iter()
                .map(|(_, v)| v.points.first().map_or("—".into(), |p| cell(p, s, &name)))
                .collect();
            (name, cells)
        })
        .collect()
}

/// Why the output stays dark for a scene's visitors, for every target scene in which each
/// detector misses most occupied periods (no alarm while the person is in the zone). Two
/// causes are told apart from the counts: the detector alarms, but only after the person has
/// left the zone (the motion-event scoring, with its late tolerance, counts those alarms as
/// detections: Pd ≥ 0.5 there), or it does not detect the motion at all (the reason is the
/// motion-event table's).
fn missed_visit_reasons(
    first: &PresenceVerdict,
    detectors: &[(&str, &PresenceVerdict)],
    intrusion_pd: &dyn Fn(&str, usize) -> Option<f64>,
) -> String {
    let mut out = String::new();
    let Some(point) = first.points.first() else {
        return out;
    };
    for (s, scene) in point.by_scene.iter().enumerate() {
        if scene.label != "target" {
            continue;
        }
        let mostly_missed = |v: &PresenceVerdict| {
            v.points
                .first()
                .and_then(|p| p.by_scene.get(s))
                .is_some_and(|sc| {
                    sc.figures.occupied_periods > 0
                        && 2 * sc.figures.missed_periods > sc.figures.occupied_periods
                })
        };
        if !detectors.iter().all(|(_, v)| mostly_missed(v)) {
            continue;
        }
        let (late, unseen): (Vec<&str>, Vec<&str>) = detectors
            .iter()
            .map(|(label, _)| *label)
            .partition(|label| intrusion_pd(label, s).is_some_and(|pd| pd >= 0.5));
        let name = crate::runner::room_name(&scene.scene, scene.sweep_value.as_deref());
        out.push_str(&format!("  why every detector leaves `{name}` dark:\n"));
        if !late.is_empty() {
            out.push_str(&format!(
                "    alarms only after the person has left the zone (counted as motion-event detections within the late tolerance): {}\n",
                late.join(", ")
            ));
        }
        if !unseen.is_empty() {
            out.push_str(&format!(
                "    the motion itself is missed (the reason is in the motion-event table below): {}\n",
                unseen.join(", ")
            ));
        }
    }
    out
}

/// The console block of a presence product: the pin's figures per detector at each
/// budget, the per-scene drop-outs and latencies at the first, and the hold trade-off.
pub fn console_block(
    detectors: &[(&str, &PresenceVerdict)],
    intrusion_pd: &dyn Fn(&str, usize) -> Option<f64>,
) -> String {
    let mut out = String::new();
    // Ranking: first the detectors whose test false switch-ons are not shown to be over the
    // budget (the interval's lower end above it), then fewer drop-outs per occupied hour,
    // then a quicker median switch-on.
    let over = |v: &PresenceVerdict| {
        v.points.first().is_some_and(|p| {
            p.rooms
                .false_switch_ons_per_day
                .low
                .is_some_and(|low| low > p.budget_per_day)
        })
    };
    let key = |v: &PresenceVerdict| {
        let f = v.points.first().map(|p| &p.visits);
        (
            f.and_then(|f| f.dropouts_per_occupied_hour.value)
                .unwrap_or(f64::INFINITY),
            f.and_then(|f| f.switch_on_median.seconds)
                .unwrap_or(f64::INFINITY),
        )
    };
    let mut detectors: Vec<(&str, &PresenceVerdict)> = detectors.to_vec();
    detectors.sort_by(|(_, a), (_, b)| {
        over(a)
            .cmp(&over(b))
            .then(key(a).0.total_cmp(&key(b).0))
            .then(key(a).1.total_cmp(&key(b).1))
    });
    let detectors = &detectors[..];
    let Some((_, first)) = detectors.first() else {
        return out;
    };
    let output = &first.output;
    let budget0 = first
        .points
        .first()
        .map_or_else(String::new, |p| budget_label(p.budget_per_day));
    out.push_str(&format!(
        "\nranking by the output pin (hold {} s{}{}; thresholds for at most {} false switch-ons per day of empty time in every room; those whose room switch-ons are not shown over the budget first, then by drop-outs per occupied hour of the visits; \"(over)\": the test interval wholly above the budget); rooms: the nuisance scenes, visits: the target scenes; test trials [95 % interval]:\n",
        output.hold_s,
        if output.min_on_s > 0.0 { format!(", min-on {} s", output.min_on_s) } else { String::new() },
        if output.lockout_s > 0.0 { format!(", lock-out {} s", output.lockout_s) } else { String::new() },
        first
            .points
            .iter()
            .map(|p| budget_label(p.budget_per_day))
            .collect::<Vec<_>>()
            .join(" or ")
    ));
    let columns = [
        format!("room false-on s/day @ {budget0}"),
        "room switch-ons/day".to_string(),
        "visit drop-outs/h moving".to_string(),
        "drop-outs/h still".to_string(),
        "longest drop-out".to_string(),
        "switch-on median, p90".to_string(),
        "switch-off median (exits lit)".to_string(),
    ];
    let rows: Vec<(String, Vec<String>)> = detectors
        .iter()
        .filter_map(|(label, verdict)| {
            let point = verdict.points.first()?;
            let (rooms, f) = (&point.rooms, &point.visits);
            let name = if over(verdict) {
                format!("{label} (over)")
            } else {
                label.to_string()
            };
            Some((
                name,
                vec![
                    compact(&rooms.false_on_s_per_day),
                    compact(&rooms.false_switch_ons_per_day),
                    compact(&f.dropouts_per_moving_hour),
                    compact(&f.dropouts_per_still_hour),
                    format!("{:.1} s", f.longest_dropout_s),
                    format!("{}, {}", f.switch_on_median.text(), f.switch_on_p90.text()),
                    format!(
                        "{} ({} of {})",
                        f.switch_off_median.text(),
                        f.exits - f.exits_already_off,
                        f.exits
                    ),
                ],
            ))
        })
        .collect();
    out.push_str(&crate::summary::grid_table("detector", &columns, &rows));

    // Per scene: drop-outs (moving + still) and the switch-on latency, at the first budget.
    let names: Vec<String> = detectors.iter().map(|(l, _)| l.to_string()).collect();
    let scene_rows = pin_scene_rows(first, detectors, "target", &|point, s, _| {
        point.by_scene.get(s).map_or("—".into(), |sc| {
            let f = &sc.figures;
            format!(
                "{}+{} drop, on {}",
                f.dropouts.0,
                f.dropouts.1,
                f.switch_on_median.text()
            )
        })
    });
    if !scene_rows.is_empty() {
        out.push_str(&format!(
            "\noutput pin @ {budget0} per target scene (drop-outs moving+still over all its trials, median switch-on latency):\n"
        ));
        out.push_str(&crate::summary::grid_table("scene", &names, &scene_rows));
        out.push_str(&missed_visit_reasons(first, detectors, intrusion_pd));
    }

    // Per room: test false switch-ons per day | calibration, `*` where the room set the
    // threshold.
    let room_rows = pin_scene_rows(first, detectors, "nuisance", &|point, s, room| {
        let test = point.by_scene.get(s).map_or("—".into(), |sc| {
            compact(&sc.figures.false_switch_ons_per_day)
        });
        let calibration = point
            .calibration_rooms
            .iter()
            .find(|(r, _)| r == room)
            .and_then(|(_, e)| e.value)
            .map_or("—".into(), |x| format!("{x:.1}"));
        let mark = if point.limiting_room.as_deref() == Some(room) {
            "*"
        } else {
            " "
        };
        format!("{test} | {calibration}{mark}")
    });
    if !room_rows.is_empty() {
        out.push_str(&format!(
            "\nfalse switch-ons per day @ {budget0} per room: test trials [95 % interval] | calibration (* the room that set the threshold):\n"
        ));
        out.push_str(&crate::summary::grid_table("room", &names, &room_rows));
    }

    // The hold trade-off: drop-outs per occupied hour and false-on time per day.
    let holds: Vec<String> = first
        .tradeoff
        .iter()
        .map(|t| {
            if t.product_hold {
                format!("{} s*", t.hold_s)
            } else {
                format!("{} s", t.hold_s)
            }
        })
        .collect();
    let trade_rows: Vec<(String, Vec<String>)> = detectors
        .iter()
        .map(|(label, v)| {
            (
                label.to_string(),
                v.tradeoff
                    .iter()
                    .map(|t| {
                        format!(
                            "{} | {}",
                            t.figures
                                .dropouts_per_occupied_hour
                                .value
                                .map_or("—".into(), |x| format!("{x:.0}")),
                            t.figures
                                .false_on_s_per_day
                                .value
                                .map_or("—".into(), |x| format!("{x:.0}"))
                        )
                    })
                    .collect(),
            )
        })
        .collect();
    if !holds.is_empty() {
        out.push_str(&format!(
            "\nhold-time trade-off @ {budget0} threshold (drop-outs per occupied hour | false-on s per day of all empty time, the hold running on after each visitor leaves included; * the product's hold):\n"
        ));
        out.push_str(&crate::summary::grid_table("detector", &holds, &trade_rows));
    }
    out
}

/// `12.5`, `not reached` or empty.
fn quantile_cell(q: &Quantile) -> String {
    match (q.seconds, q.not_reached) {
        (Some(s), _) => s.to_string(),
        (None, true) => "not reached".into(),
        (None, false) => String::new(),
    }
}

fn estimate_cells(e: &Estimate) -> [String; 3] {
    [e.value, e.low, e.high].map(|x| x.map_or_else(String::new, |v| v.to_string()))
}

/// The CSV header of [`write_presence_csv`].
const PRESENCE_COLUMNS: [&str; 37] = [
    "product",
    "detector",
    "budget_per_day",
    "threshold",
    "hold_s",
    "slice",
    "label",
    "empty_h",
    "moving_h",
    "still_h",
    "false_on_s_per_day",
    "false_on_s_per_day_low",
    "false_on_s_per_day_high",
    "false_switch_ons",
    "false_switch_ons_per_day",
    "false_switch_ons_per_day_low",
    "false_switch_ons_per_day_high",
    "dropouts_moving",
    "dropouts_still",
    "dropouts_per_occupied_h",
    "dropouts_per_occupied_h_low",
    "dropouts_per_occupied_h_high",
    "dropouts_per_moving_h",
    "dropouts_per_moving_h_low",
    "dropouts_per_moving_h_high",
    "dropouts_per_still_h",
    "dropouts_per_still_h_low",
    "dropouts_per_still_h_high",
    "longest_dropout_s",
    "missed_periods",
    "occupied_periods",
    "entries",
    "switch_on_median_s",
    "switch_on_p90_s",
    "exits_lit",
    "switch_off_median_s",
    "switch_off_p90_s",
];

/// Writes `presence.csv` for the run's presence products: per detector and budget, one row
/// for all test trials, the rooms, the visits and each scene variant at the product's hold,
/// then (slice `all`, first budget's threshold) one row per hold of the trade-off sweep.
/// Quantiles are seconds, `not reached`, or empty when there was nothing to measure.
///
/// # Errors
/// I/O errors, naming the file.
pub fn write_presence_csv(path: &Path, summary: &crate::summary::Summary) -> io::Result<()> {
    write_atomically(path, |file| {
        let mut w = crate::summary::csv_writer(file);
        w.write_record(PRESENCE_COLUMNS)?;
        for d in &summary.detectors {
            let Some(verdict) = &d.presence else {
                continue;
            };
            let row = |w: &mut csv::Writer<_>,
                       point: &PresencePoint,
                       hold_s: f64,
                       slice: &str,
                       label: &str,
                       f: &PresenceFigures|
             -> io::Result<()> {
                let mut cells = vec![
                    d.product.clone(),
                    d.label.clone(),
                    point.budget_per_day.to_string(),
                    point.threshold.to_string(),
                    hold_s.to_string(),
                    slice.to_string(),
                    label.to_string(),
                    f.empty_hours.to_string(),
                    f.moving_hours.to_string(),
                    f.still_hours.to_string(),
                ];
                cells.extend(estimate_cells(&f.false_on_s_per_day));
                cells.push(f.false_switch_ons.to_string());
                cells.extend(estimate_cells(&f.false_switch_ons_per_day));
                cells.push(f.dropouts.0.to_string());
                cells.push(f.dropouts.1.to_string());
                cells.extend(estimate_cells(&f.dropouts_per_occupied_hour));
                cells.extend(estimate_cells(&f.dropouts_per_moving_hour));
                cells.extend(estimate_cells(&f.dropouts_per_still_hour));
                cells.push(f.longest_dropout_s.to_string());
                cells.push(f.missed_periods.to_string());
                cells.push(f.occupied_periods.to_string());
                cells.push(f.entries.to_string());
                cells.push(quantile_cell(&f.switch_on_median));
                cells.push(quantile_cell(&f.switch_on_p90));
                cells.push((f.exits - f.exits_already_off).to_string());
                cells.push(quantile_cell(&f.switch_off_median));
                cells.push(quantile_cell(&f.switch_off_p90));
                w.write_record(&cells).map_err(io::Error::from)
            };
            let hold_s = verdict.output.hold_s;
            for point in &verdict.points {
                row(&mut w, point, hold_s, "all", "", &point.figures)?;
                row(&mut w, point, hold_s, "rooms", "nuisance", &point.rooms)?;
                row(&mut w, point, hold_s, "visits", "target", &point.visits)?;
                for scene in &point.by_scene {
                    let name = crate::runner::room_name(&scene.scene, scene.sweep_value.as_deref());
                    row(&mut w, point, hold_s, &name, &scene.label, &scene.figures)?;
                }
            }
            if let Some(point) = verdict.points.first() {
                for t in &verdict.tradeoff {
                    row(&mut w, point, t.hold_s, "all", "", &t.figures)?;
                }
            }
        }
        w.flush()
    })
}
