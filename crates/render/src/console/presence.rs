//! The console block of a presence product: the pin's figures per detector at each budget,
//! the per-scene drop-outs and latencies at the first, and the hold trade-off.

use super::grid_table;
use echobench_harness::presence_summary::{budget_label, PresencePoint, PresenceVerdict};
use echobench_harness::runner::room_name;
use echobench_harness::summary::Estimate;

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
            let name = room_name(&scene.scene, scene.sweep_value.as_deref());
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
        let name = room_name(&scene.scene, scene.sweep_value.as_deref());
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
pub(crate) fn block(
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
    out.push_str(&grid_table("detector", &columns, &rows));

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
        out.push_str(&grid_table("scene", &names, &scene_rows));
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
        out.push_str(&grid_table("room", &names, &room_rows));
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
        out.push_str(&grid_table("detector", &holds, &trade_rows));
    }
    out
}
