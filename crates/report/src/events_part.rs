//! A product's rare events (nuisance scenes with `occurrences_per_day`): per event and
//! detector, how many simulated occurrences raised a false alarm at the first operating
//! threshold and the false alarms per day the event adds, then the product's rate per day
//! with its events. The numbers are the summary's (`harness::rare_events`), written as the
//! console writes them.

use crate::html::{fmt_target, targets, Part};
use crate::markup::Html;
use crate::plot::format_number;
use echobench_harness::summary::Estimate;

fn per_day(e: &Estimate) -> String {
    match (e.value, e.low, e.high) {
        (Some(v), Some(l), Some(h)) => format!(
            "{}/day [{}, {}]",
            format_number(v, 3),
            format_number(l, 3),
            format_number(h, 3)
        ),
        _ => "—".into(),
    }
}

/// The section's HTML, or `None` when the product has no rare event.
pub(crate) fn events_table(part: &Part) -> Option<Html> {
    let first = part
        .summaries()
        .find_map(|d| d.operating_points.first()?.rare_events.as_ref())?;
    let rate = targets(part)
        .first()
        .map_or_else(|| "the first target".to_string(), |r| fmt_target(*r));
    let mut h = Html::new();
    h.raw("<p>A rare event is scored per occurrence, each test trial one occurrence: the cell gives how many occurrences raised a false alarm at the threshold calibrated for ")
        .text(&rate)
        .raw(", and the false alarms per day the event adds (its occurrences per day times that fraction, with the exact interval). The total adds the rooms' test rate; its interval adds the ends of the intervals, a conservative combination. Rare events take no part in the thresholds.</p>");
    h.raw("<div class=\"wide\"><table class=\"grid rare-events\"><thead><tr><th scope=\"col\">event</th>");
    for d in part.summaries() {
        h.element("th", &[("scope", "col")], &d.label);
    }
    h.raw("</tr></thead><tbody>");
    let row = |h: &mut Html,
               heading: &str,
               cell: &dyn Fn(&echobench_harness::rare_events::RareEvents) -> String| {
        h.raw("<tr>").element("th", &[("scope", "row")], heading);
        for d in part.summaries() {
            let text = d
                .operating_points
                .first()
                .and_then(|o| o.rare_events.as_ref())
                .map_or_else(|| "—".to_string(), cell);
            h.element("td", &[("class", "cell")], &text);
        }
        h.raw("</tr>");
    };
    for (i, event) in first.events.iter().enumerate() {
        let heading = format!(
            "{} ({} per day)",
            event.scene,
            format_number(event.occurrences_per_day, 4)
        );
        row(&mut h, &heading, &|r| {
            r.events.get(i).map_or_else(
                || "—".to_string(),
                |e| {
                    format!(
                        "{} of {} occurrences → {}",
                        e.alarmed,
                        e.occurrences,
                        per_day(&e.per_day)
                    )
                },
            )
        });
    }
    row(&mut h, "rooms (steady)", &|r| per_day(&r.steady_per_day));
    row(&mut h, "total", &|r| per_day(&r.total_per_day));
    h.raw("</tbody></table></div>");
    Some(h)
}
