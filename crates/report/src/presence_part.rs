//! A presence product's part of the page: what its output pin does (false-on time and false
//! switch-ons while the room is empty, drop-outs while someone is there, how fast the output
//! comes on and goes off), per detector and per scene, and the hold-time trade-off as a plot.
//!
//! Every figure is the harness's (`echobench_harness::presence_summary`), read from
//! `summary.json`: the page only lays them out, so the console and the report agree.

use crate::html::{detector_cell, Part};
use crate::markup::Html;
use crate::plot::{format_number, Axis, Chart, MarkedPoint, Series, Style};
use echobench_harness::presence_summary::{budget_label, PresenceFigures, PresenceVerdict};
use echobench_harness::runner::room_name;
use echobench_harness::summary::Estimate;

/// The presence verdicts of a product's detectors, with each detector's index in the part
/// (for its colour); empty for an intrusion product.
pub(crate) fn verdicts<'a>(part: &Part<'a>) -> Vec<(usize, &'a str, &'a PresenceVerdict)> {
    part.summaries()
        .enumerate()
        .filter_map(|(i, d)| Some((i, d.label.as_str(), d.presence.as_ref()?)))
        .collect()
}

/// `12.3 [4.5, 27]` or `—`.
fn estimate_text(e: &Estimate) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!(
            "{} [{}, {}]",
            format_number(v, 3),
            format_number(l, 2),
            format_number(h, 2)
        ),
        _ => "—".into(),
    }
}

fn seconds(x: f64) -> String {
    format!("{} s", format_number(x, 3))
}

fn table(h: &mut Html, id: &str, headers: &[&str], rows: &[(Html, Vec<String>)]) {
    h.raw("<div class=\"wide\">").open(
        "table",
        &[
            ("class", "grid presence"),
            ("id", id),
            ("data-check", "presence"),
            ("data-rows", &rows.len().to_string()),
            ("data-columns", &headers.len().to_string()),
        ],
    );
    h.raw("<thead><tr>");
    for header in headers {
        h.element("th", &[("scope", "col")], header);
    }
    h.raw("</tr></thead><tbody>");
    for (heading, cells) in rows {
        h.raw("<tr><th scope=\"row\">").push(heading).raw("</th>");
        for cell in cells {
            h.element("td", &[("class", "cell")], cell);
        }
        h.raw("</tr>");
    }
    h.raw("</tbody></table></div>");
}

fn pin_cells(rooms: &PresenceFigures, f: &PresenceFigures) -> Vec<String> {
    vec![
        estimate_text(&rooms.false_on_s_per_day),
        estimate_text(&rooms.false_switch_ons_per_day),
        estimate_text(&f.dropouts_per_moving_hour),
        estimate_text(&f.dropouts_per_still_hour),
        seconds(f.longest_dropout_s),
        format!("{}, {}", f.switch_on_median.text(), f.switch_on_p90.text()),
        format!(
            "{}, {} ({} of {} exits lit)",
            f.switch_off_median.text(),
            f.switch_off_p90.text(),
            f.exits - f.exits_already_off,
            f.exits
        ),
    ]
}

const PIN_HEADERS: [&str; 8] = [
    "detector",
    "rooms: false-on s per day",
    "rooms: false switch-ons per day",
    "visits: drop-outs per hour moving",
    "drop-outs per hour still",
    "longest drop-out",
    "switch-on median, p90",
    "switch-off median, p90",
];

/// The pin tables: per detector at each budget, per target scene and per room at the
/// first. `None` for an intrusion product.
pub(crate) fn pin_tables(part: &Part) -> Option<Html> {
    let verdicts = verdicts(part);
    let (_, _, first) = verdicts.first()?;
    let output = &first.output;
    let mut h = Html::new();
    h.raw("<p>This product drives an output pin through a retrigger timer: any alarm keeps it on for ")
        .text(&seconds(output.hold_s))
        .raw(" more");
    if output.min_on_s > 0.0 {
        h.text(&format!(", at least {} once on", seconds(output.min_on_s)));
    }
    if output.lockout_s > 0.0 {
        h.text(&format!(
            ", and it cannot switch on for {} after switching off",
            seconds(output.lockout_s)
        ));
    }
    h.raw(". Thresholds are chosen on the calibration trials so that false switch-ons per day of empty time stay within the budget in every room. Each figure is from the test trials, with its ")
        .text(&crate::data::confidence_percent())
        .raw(" interval: false switch-ons and drop-outs exact Poisson (Garwood), false-on time the gamma interval of a weighted Poisson sum (Fay &amp; Feuer 1997). A latency that falls among the entries (exits) after which the output never came on (went off) reads <em>not reached</em>.</p>");
    for (o, point) in first.points.iter().enumerate() {
        let rows: Vec<(Html, Vec<String>)> = verdicts
            .iter()
            .filter_map(|(i, label, v)| {
                let p = v.points.get(o)?;
                Some((detector_cell(*i, label), pin_cells(&p.rooms, &p.visits)))
            })
            .collect();
        let budget = budget_label(point.budget_per_day);
        if o > 0 {
            h.raw("<details><summary>")
                .text(&format!("The output pin at the {budget} threshold"))
                .raw("</summary>");
        } else {
            h.raw("<p>At the threshold for ")
                .text(&budget)
                .raw(" false switch-ons; <em>rooms</em> pools the nuisance scenes (nobody comes in), <em>visits</em> the target scenes:</p>");
        }
        table(
            &mut h,
            &part.id(&format!("pin-table-{}", o + 1)),
            &PIN_HEADERS,
            &rows,
        );
        if o > 0 {
            h.raw("</details>");
        }
    }
    // Per scene at the first budget: target scenes (drop-outs, latencies), then rooms.
    let budget = first
        .points
        .first()
        .map_or_else(String::new, |p| budget_label(p.budget_per_day));
    for (label, title, cells) in [
        (
            "target",
            "Per target scene (drop-outs moving + still over its trials; median switch-on and switch-off):",
            scene_target_cell as fn(&PresenceFigures) -> String,
        ),
        (
            "nuisance",
            "Per room (false switch-ons per day; false-on seconds per day):",
            scene_room_cell,
        ),
    ] {
        let Some(point) = first.points.first() else {
            continue;
        };
        let mut headers: Vec<&str> = vec![if label == "target" { "scene" } else { "room" }];
        headers.extend(verdicts.iter().map(|(_, l, _)| *l));
        let rows: Vec<(Html, Vec<String>)> = point
            .by_scene
            .iter()
            .enumerate()
            .filter(|(_, s)| s.label == label)
            .map(|(k, s)| {
                let mut name = Html::new();
                name.element(
                    "code",
                    &[],
                    &room_name(&s.scene, s.sweep_value.as_deref()),
                );
                let row = verdicts
                    .iter()
                    .map(|(_, _, v)| {
                        v.points
                            .first()
                            .and_then(|p| p.by_scene.get(k))
                            .map_or("—".into(), |sc| cells(&sc.figures))
                    })
                    .collect();
                (name, row)
            })
            .collect();
        if rows.is_empty() {
            continue;
        }
        h.raw("<p>").text(title).text(&format!(" at the {budget} threshold")).raw("</p>");
        table(
            &mut h,
            &part.id(&format!("pin-{label}-table")),
            &headers,
            &rows,
        );
    }
    Some(h)
}

fn scene_target_cell(f: &PresenceFigures) -> String {
    format!(
        "{}+{} drop-outs (longest {}); on {}, off {}",
        f.dropouts.0,
        f.dropouts.1,
        seconds(f.longest_dropout_s),
        f.switch_on_median.text(),
        f.switch_off_median.text()
    )
}

fn scene_room_cell(f: &PresenceFigures) -> String {
    format!(
        "{}; {}",
        estimate_text(&f.false_switch_ons_per_day),
        estimate_text(&f.false_on_s_per_day)
    )
}

/// The hold-time trade-off: per detector, drop-outs per occupied hour against false-on
/// seconds per day at each hold of the sweep (same threshold, same trials), with intervals
/// at the product's own hold. `None` for an intrusion product.
pub(crate) fn tradeoff_chart(part: &Part, styles: &dyn Fn(usize) -> Style) -> Option<Chart> {
    let verdicts = verdicts(part);
    verdicts.first()?;
    let mut max_x: f64 = 1.0;
    let mut max_y: f64 = 1.0;
    let mut series = Vec::new();
    for (i, label, v) in &verdicts {
        let mut line = Vec::new();
        let mut markers = Vec::new();
        for row in &v.tradeoff {
            let f = &row.figures;
            let (Some(x), Some(y)) = (
                f.false_on_s_per_day.value,
                f.dropouts_per_occupied_hour.value,
            ) else {
                continue;
            };
            line.push((x, y));
            let mut point = MarkedPoint::at(x, y);
            point.note = format!(
                "{label}: hold {}: {} false-on s/day, {} drop-outs per occupied hour",
                seconds(row.hold_s),
                format_number(x, 3),
                format_number(y, 3)
            );
            if row.product_hold {
                point.x_interval = f.false_on_s_per_day.low.zip(f.false_on_s_per_day.high);
                point.y_interval = f
                    .dropouts_per_occupied_hour
                    .low
                    .zip(f.dropouts_per_occupied_hour.high);
            }
            max_x = max_x.max(point.x_interval.map_or(x, |(_, hi)| hi));
            max_y = max_y.max(point.y_interval.map_or(y, |(_, hi)| hi));
            markers.push(point);
        }
        series.push(Series {
            name: label.to_string(),
            style: styles(*i),
            line,
            markers,
        });
    }
    let mut chart = Chart::new(
        "Hold-time trade-off: drop-outs per occupied hour against false-on seconds per day",
        Axis::linear(
            "false-on time, seconds per day of empty time",
            0.0,
            max_x * 1.05,
        ),
        Axis::linear("drop-outs per occupied hour", 0.0, max_y * 1.05),
    );
    chart.series = series;
    chart.empty_message = "no detector has empty and occupied test time".into();
    Some(chart)
}
