//! What is particular to one product's part of the page: its heading (module, scenes,
//! rooms, the threshold rule and what the calibration resolved, in the console's words),
//! its detection table (target scene variants × detectors) and its false-alarm table
//! (rooms × detectors).
//!
//! The tables are where a reader sees the zeros: pooled Pd hides a scene no detector finds.
//! A detection cell below Pd 0.5 at the first target rate carries the harness's computed
//! miss reason (`Summary::miss_reasons`), numbered and spelled out under the table; a
//! false-alarm cell carries the room's test rate, its calibration rate at the operating
//! threshold, and a mark on the room that set the threshold.

use crate::html::{detector_cell, fmt_target, targets, Part};
use crate::markup::Html;
use crate::plot::format_number;
use echobench_harness::runner::room_name;
use echobench_harness::summary::{
    DetectorSummary, Estimate, MissReason, OperatingSummary, SceneOutcome, MISS_PD,
};
use echobench_render::console::calibration_statements;

/// The threshold rule of a product in the console's words.
pub(crate) fn rule_words(rule: &str) -> &'static str {
    if rule == "pooled" {
        "on the pooled calibration time"
    } else {
        "met in every room (worst room)"
    }
}

/// The heading block of a product's part: its facts, as a definition list.
pub(crate) fn heading(part: &Part) -> Html {
    let detectors: Vec<&DetectorSummary> = part.summaries().collect();
    let mut h = Html::new();
    h.raw("<div class=\"product-head\">");
    let fact = |h: &mut Html, name: &'static str, value: &Html| {
        h.raw("<dt>")
            .text(name)
            .raw("</dt><dd>")
            .push(value)
            .raw("</dd>");
    };
    if let Some(p) = part.product.filter(|p| !p.about.is_empty()) {
        h.element("p", &[("class", "about")], &p.about);
    }
    h.raw("<dl class=\"facts\">");
    if let Some(p) = part.product {
        let output = if p.output == "iq" { "I/Q" } else { "real" };
        let mut v = Html::new();
        v.text(&format!(
            "{:.3} GHz carrier, {} Hz sampling, {output} output",
            p.carrier_hz / 1e9,
            format_number(p.sample_rate_hz, 6)
        ));
        fact(&mut h, "module", &v);
        let list = |names: &[String]| {
            let mut v = Html::new();
            v.text(&format!("{}: ", names.len()));
            for (i, name) in names.iter().enumerate() {
                if i > 0 {
                    v.raw(", ");
                }
                v.element("code", &[], name);
            }
            v
        };
        fact(&mut h, "target scene variants", &list(&p.target_scenes));
        fact(
            &mut h,
            "rooms (nuisance scene variants)",
            &list(&p.nuisance_scenes),
        );
    }
    if let Some(d) = part.tallies().first() {
        let (mut target_trials, mut room_trials, mut events, mut exposure_ns) = (0, 0, 0, 0);
        for v in &d.variants {
            if v.label == "target" {
                target_trials += v.trials;
            } else {
                room_trials += v.trials;
            }
            events += v.events;
            exposure_ns += v.exposure_ns;
        }
        let mut v = Html::new();
        v.text(&format!(
            "{target_trials} in target scenes ({events} target events), {room_trials} in rooms; {} h of noise-only time",
            format_number(exposure_ns as f64 / 3.6e12, 3)
        ));
        fact(&mut h, "test trials", &v);
    }
    let rule = detectors
        .first()
        .and_then(|d| d.operating_points.first())
        .map(|o| o.rule.as_str())
        .or(part.product.map(|p| p.threshold_rule.as_str()));
    if let Some(rule) = rule {
        let mut v = Html::new();
        v.text(rule_words(rule));
        fact(&mut h, "thresholds", &v);
    }
    let statements = calibration_statements(&detectors, &targets(part));
    if !statements.is_empty() {
        let mut v = Html::new();
        v.raw("<ul class=\"statements\">");
        for s in &statements {
            if s.problem {
                v.element("li", &[("class", "bad")], &s.text);
            } else {
                v.element("li", &[], &s.text);
            }
        }
        v.raw("</ul>");
        fact(&mut h, "calibration", &v);
    }
    h.raw("</dl></div>");
    h
}

/// The scene variants of one label, as the first detector's operating point `o` lists
/// them: (position in `by_scene`, the variant).
fn rows<'a>(part: &Part<'a>, o: usize, label: &str) -> Vec<(usize, &'a SceneOutcome)> {
    part.summaries()
        .next()
        .and_then(|d| d.operating_points.get(o))
        .map(|op| {
            op.by_scene
                .iter()
                .enumerate()
                .filter(|(_, s)| s.label == label)
                .collect()
        })
        .unwrap_or_default()
}

/// A detector's outcome in the same scene variant as `row`, at operating point `o`.
fn cell_of<'a>(
    d: &'a DetectorSummary,
    o: usize,
    k: usize,
    row: &SceneOutcome,
) -> Option<(&'a OperatingSummary, &'a SceneOutcome)> {
    let op = d.operating_points.get(o)?;
    let s = op
        .by_scene
        .get(k)
        .filter(|s| s.scene == row.scene && s.sweep_value == row.sweep_value)?;
    Some((op, s))
}

/// A scene variant's name as a row heading: the scene id, and the swept value with the
/// unit of the swept field when the tallies give it.
fn row_heading(part: &Part, row: &SceneOutcome) -> Html {
    let mut h = Html::new();
    h.element("code", &[], &row.scene);
    if let Some(value) = &row.sweep_value {
        let unit = part.sweep_unit(&row.scene);
        let shown = match unit {
            Some(unit) => format!(" @ {value} {unit}"),
            None => format!(" @ {value}"),
        };
        h.text(&shown);
    }
    h
}

/// The column headings of a grid: the corner, then each detector with its swatch.
fn grid_head(part: &Part, corner: &str) -> Html {
    let mut h = Html::new();
    h.raw("<thead><tr>").element("th", &[], corner);
    for (j, d) in part.summaries().enumerate() {
        h.raw("<th class=\"num\">")
            .push(&detector_cell(j, &d.label))
            .raw("</th>");
    }
    h.raw("</tr></thead>");
    h
}

fn interval_text(e: &Estimate, digits: usize) -> Option<(String, String)> {
    let finite = |x: Option<f64>| x.filter(|v| v.is_finite());
    let (v, l, h) = (finite(e.value)?, finite(e.low)?, finite(e.high)?);
    let number = |x: f64| {
        if digits == 0 {
            format_number(x, 3)
        } else {
            format!("{x:.digits$}")
        }
    };
    Some((number(v), format!("[{}, {}]", number(l), number(h))))
}

/// The reason the harness computed for a detector missing a scene variant.
fn reason_for<'a>(
    part: &Part<'a>,
    d: &DetectorSummary,
    row: &SceneOutcome,
) -> Option<&'a MissReason> {
    part.run.summary.miss_reasons.iter().find(|r| {
        r.product == part.name
            && r.detector == d.label
            && r.scene == row.scene
            && r.sweep_value == row.sweep_value
    })
}

/// The cells that share one miss reason: the reason's words, then (scene variant, detector)
/// per cell, in table order.
type ReasonCells = (String, Vec<(String, String)>);

/// One detection table, at operating point `o`; reasons are given at the first operating
/// point only (the harness computes them there). Cells with the same reason share its
/// number, so the list under the table holds each reason once.
fn detection_table(part: &Part, o: usize, id: &str) -> Html {
    let rows = rows(part, o, "target");
    let columns = part.detectors.len() + 1;
    let mut reasons: Vec<ReasonCells> = Vec::new();
    let mut h = Html::new();
    h.raw("<div class=\"wide\">").open(
        "table",
        &[
            ("class", "grid detection"),
            ("id", id),
            ("data-check", "detection"),
            ("data-rows", &rows.len().to_string()),
            ("data-columns", &columns.to_string()),
        ],
    );
    h.push(&grid_head(part, "target scene"));
    h.raw("<tbody>");
    for (k, row) in &rows {
        let heading = row_heading(part, row);
        h.raw("<tr><th scope=\"row\">").push(&heading).raw("</th>");
        for d in part.summaries() {
            let Some((_, s)) = cell_of(d, o, *k, row) else {
                h.raw("<td class=\"cell\">—</td>");
                continue;
            };
            let outcome = &s.outcome;
            let reason = if o == 0 {
                reason_for(part, d, row)
            } else {
                None
            };
            let class = if outcome.events == 0 {
                "cell no-event"
            } else if outcome.detected == 0 {
                "cell zero"
            } else if outcome.pd.value.is_some_and(|p| p < MISS_PD) {
                "cell low"
            } else {
                "cell"
            };
            h.open("td", &[("class", class)]);
            if outcome.events == 0 {
                h.raw("<span class=\"est\">no event</span>");
            } else {
                match interval_text(&outcome.pd, 2) {
                    Some((value, interval)) => {
                        h.raw("<span class=\"est\"><strong>")
                            .text(&value)
                            .raw("</strong></span>")
                            .element("span", &[("class", "sub")], &interval);
                    }
                    None => {
                        h.raw("<span class=\"est\">—</span>");
                    }
                }
                let latency = s
                    .latency_median_s
                    .filter(|x| x.is_finite())
                    .map_or_else(|| "—".to_string(), |x| format!("{x:.2} s"));
                h.element(
                    "span",
                    &[("class", "sub")],
                    &format!("{}/{} · {latency}", outcome.detected, outcome.events),
                );
            }
            // The reason's place: its kind and number here, its words under the table.
            if let Some(r) = reason {
                let cell = (row_name(row), d.label.clone());
                let n = match reasons.iter().position(|(text, _)| *text == r.reason) {
                    Some(i) => {
                        reasons[i].1.push(cell);
                        i + 1
                    }
                    None => {
                        reasons.push((r.reason.clone(), vec![cell]));
                        reasons.len()
                    }
                };
                let anchor = format!("#{id}-why-{n}");
                h.raw("<span class=\"why\">");
                // A cell that already says "no event" needs only the pointer.
                if outcome.events > 0 {
                    h.text(&r.kind).raw(" ");
                }
                h.open("a", &[("href", &anchor)])
                    .text(&format!("[{n}]"))
                    .raw("</a></span>");
            }
            h.raw("</td>");
        }
        h.raw("</tr>");
    }
    h.raw("</tbody></table></div>");
    if !reasons.is_empty() {
        h.raw("<p>Why the cells below Pd ")
            .text(&format_number(MISS_PD, 2))
            .raw(" miss, as the harness computes it: <em>out of band</em> when the detector's bands miss the scene's Doppler; <em>masked</em> when the threshold without the room that set it (or the quietest room's threshold) would detect the target; <em>out of range</em> when even the quietest room's threshold would not.</p><ol class=\"why-list\">");
        for (n, (text, cells)) in reasons.iter().enumerate() {
            let number = (n + 1).to_string();
            h.open(
                "li",
                &[("id", &format!("{id}-why-{number}")), ("value", &number)],
            )
            .text(text)
            .raw(" <span class=\"cells\">— ");
            // The cells, grouped by scene variant: `scene: a, b; other: c`.
            let mut scenes: Vec<(&str, Vec<&str>)> = Vec::new();
            for (scene, detector) in cells {
                match scenes.iter_mut().find(|(s, _)| s == scene) {
                    Some((_, list)) => list.push(detector),
                    None => scenes.push((scene, vec![detector])),
                }
            }
            for (i, (scene, detectors)) in scenes.iter().enumerate() {
                if i > 0 {
                    h.raw("; ");
                }
                h.element("code", &[], scene)
                    .raw(": ")
                    .text(&detectors.join(", "));
            }
            h.raw("</span></li>");
        }
        h.raw("</ol>");
    }
    h
}

fn row_name(row: &SceneOutcome) -> String {
    room_name(&row.scene, row.sweep_value.as_deref())
}

/// The detection tables of a product: the first target rate in the open, the others
/// folded.
pub(crate) fn detection_tables(part: &Part) -> Html {
    let rates = targets(part);
    let mut h = Html::new();
    if rows(part, 0, "target").is_empty() {
        h.raw("<p class=\"note\">This product has no target scene.</p>");
        return h;
    }
    let first = rates
        .first()
        .map_or_else(|| "the first target".to_string(), |r| fmt_target(*r));
    h.raw("<p>Per target scene variant and detector, at the threshold calibrated for ")
        .text(&first)
        .raw(": detection probability Pd (detected events over events) in bold, its ")
        .text(&crate::data::confidence_percent())
        .raw(" Wilson interval, then detected/events · median latency of the detected events. <span class=\"legend zero\">Pd 0</span> and <span class=\"legend low\">Pd below ")
        .text(&format_number(MISS_PD, 2))
        .raw("</span> stand out; <span class=\"legend no-event\">no event</span> marks a variant in which the person never moves inside the zone (present, not moving), which scores neither way.</p>");
    h.push(&detection_table(part, 0, &part.id("detection-table")));
    for (o, rate) in rates.iter().enumerate().skip(1) {
        h.raw("<details><summary>")
            .text(&format!("Detection table at {}", fmt_target(*rate)))
            .raw("</summary>");
        h.push(&detection_table(
            part,
            o,
            &part.id(&format!("detection-table-{}", o + 1)),
        ));
        h.raw("<p class=\"note\">Miss reasons are computed at the first target rate only.</p></details>");
    }
    h
}

/// One false-alarm table, at operating point `o`.
fn false_alarm_table(part: &Part, o: usize, id: &str) -> Html {
    let rows = rows(part, o, "nuisance");
    let columns = part.detectors.len() + 1;
    let mut h = Html::new();
    h.raw("<div class=\"wide\">").open(
        "table",
        &[
            ("class", "grid false-alarms"),
            ("id", id),
            ("data-check", "false-alarms"),
            ("data-rows", &rows.len().to_string()),
            ("data-columns", &columns.to_string()),
        ],
    );
    h.push(&grid_head(part, "room"));
    h.raw("<tbody>");
    for (k, row) in &rows {
        let heading = row_heading(part, row);
        h.raw("<tr><th scope=\"row\">").push(&heading).raw("</th>");
        for d in part.summaries() {
            let Some((op, s)) = cell_of(d, o, *k, row) else {
                h.raw("<td class=\"cell\">—</td>");
                continue;
            };
            let name = row_name(row);
            let rate = &s.outcome.false_alarms_per_hour;
            let over = rate
                .value
                .is_some_and(|v| v > op.target_false_alarms_per_hour);
            let limiting = op.limiting_room.as_deref() == Some(name.as_str());
            let class = match (over, limiting) {
                (true, true) => "cell over limiting",
                (true, false) => "cell over",
                (false, true) => "cell limiting",
                (false, false) => "cell",
            };
            h.open("td", &[("class", class)]);
            match interval_text(rate, 0) {
                Some((value, interval)) => {
                    h.raw("<span class=\"est\"><strong>")
                        .text(&format!("{value}/h"))
                        .raw("</strong></span>")
                        .element("span", &[("class", "sub")], &interval);
                }
                None => {
                    h.raw("<span class=\"est\">—</span>");
                }
            }
            h.element(
                "span",
                &[("class", "sub")],
                &format!(
                    "test {} in {} h",
                    s.outcome.false_alarms,
                    format_number(s.outcome.exposure_hours, 3)
                ),
            );
            if s.false_on_s > 0.0 && s.false_on_s.is_finite() {
                h.element(
                    "span",
                    &[("class", "sub")],
                    &format!("on {} s", format_number(s.false_on_s, 3)),
                );
            }
            let calibration = op.calibration_rooms.iter().find(|r| r.room == name);
            let text = match calibration {
                Some(r) if r.exposure_hours > 0.0 => format!(
                    "cal. {}/h ({} in {} h)",
                    r.false_alarms_per_hour
                        .value
                        .filter(|v| v.is_finite())
                        .map_or_else(|| "—".to_string(), |v| format_number(v, 3)),
                    r.false_alarms,
                    format_number(r.exposure_hours, 3)
                ),
                _ => "cal. —".to_string(),
            };
            h.element("span", &[("class", "sub")], &text);
            if limiting {
                h.raw("<span class=\"limit\">★ set threshold</span>");
            }
            h.raw("</td>");
        }
        h.raw("</tr>");
    }
    h.raw("</tbody></table></div>");
    h
}

/// The false-alarm tables of a product: the first target rate in the open, the others
/// folded.
pub(crate) fn false_alarm_tables(part: &Part) -> Html {
    let rates = targets(part);
    let mut h = Html::new();
    if rows(part, 0, "nuisance").is_empty() {
        h.raw("<p class=\"note\">This product has no nuisance scene (room).</p>");
        return h;
    }
    let worst_room = part
        .summaries()
        .next()
        .and_then(|d| d.operating_points.first())
        .is_some_and(|o| o.rule == "worst_room");
    let first = rates
        .first()
        .map_or_else(|| "the first target".to_string(), |r| fmt_target(*r));
    h.raw("<p>Per room (nuisance scene variant) and detector, at the threshold calibrated for ")
        .text(&first)
        .raw(": false alarms per hour of the room's noise-only test time in bold, its ")
        .text(&crate::data::confidence_percent())
        .raw(" exact Poisson interval, the test count and hours, how long the alarm stayed on (when it did), and <em>cal.</em>: the room's own calibration rate at the same threshold (count and hours). <span class=\"legend over\">A test rate above the target</span> stands out. ");
    if worst_room {
        h.raw("<span class=\"limit\">★</span> marks the room that set the detector's threshold: the threshold is the lowest at which every room meets the target in calibration, and one grid step lower this room did not.</p>");
    } else {
        h.raw("The thresholds were chosen on the pooled calibration time, so no single room set them.</p>");
    }
    h.push(&false_alarm_table(part, 0, &part.id("false-alarm-table")));
    for (o, rate) in rates.iter().enumerate().skip(1) {
        h.raw("<details><summary>")
            .text(&format!("False-alarm table at {}", fmt_target(*rate)))
            .raw("</summary>");
        h.push(&false_alarm_table(
            part,
            o,
            &part.id(&format!("false-alarm-table-{}", o + 1)),
        ));
        h.raw("</details>");
    }
    h
}
