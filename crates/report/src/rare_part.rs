//! The rare-rate table of a product's part: per detector, the threshold for one false alarm
//! per hour, day, week and month extrapolated from the rooms' calibration tails (worst room),
//! with its interval, beside the counted threshold where the product has that target.
//! The numbers are the harness's (`echobench_harness::rare_rates`), read from `summary.json`.

use crate::html::{detector_cell, Part};
use crate::markup::Html;
use crate::plot::format_number;
use echobench_harness::rare_rates::REPORT_RATES_PER_HOUR;
use echobench_harness::summary::rate_label;

/// The table, or `None` when no detector of the product has a tail fit.
pub(crate) fn rare_table(part: &Part) -> Option<Html> {
    let rows: Vec<(usize, &str, &Vec<_>)> = part
        .summaries()
        .enumerate()
        .filter(|(_, d)| !d.rare_thresholds.is_empty())
        .map(|(i, d)| (i, d.label.as_str(), &d.rare_thresholds))
        .collect();
    if rows.is_empty() {
        return None;
    }
    let mut h = Html::new();
    h.raw("<p>Counting alone cannot show one false alarm per day or rarer: it needs days of noise per room. Here each room's calibration is extrapolated instead: the alarm statistic (the M-th largest of the last N scores) is declustered with the hold as the gap, the cluster maxima above a threshold chosen for stability are fitted with a generalized Pareto tail by maximum likelihood (shape held at ξ ≥ 0, so an error sets the threshold too high, not too low), and the threshold for each rate is read with its ")
        .text(&crate::data::confidence_percent())
        .raw(" profile-likelihood interval. The product's threshold is the worst room's, with the interval [highest lower end, highest upper end]. Beside it, after the bar, the counted threshold where the product has that target (<em>?</em>: the calibration time does not resolve it). A room whose fit fails its goodness-of-fit or stability check leaves the cell empty and is named under the table. The fit assumes the room's noise is steady: a rare event (a door, a passing vehicle) is not in its tail.</p>");
    let columns = REPORT_RATES_PER_HOUR.len() + 1;
    h.raw("<div class=\"wide\">").open(
        "table",
        &[
            ("class", "grid rare-rates"),
            ("id", &part.id("rare-rates-table")),
            ("data-check", "rare-rates"),
            ("data-rows", &rows.len().to_string()),
            ("data-columns", &columns.to_string()),
        ],
    );
    h.raw("<thead><tr>")
        .element("th", &[("scope", "col")], "detector");
    for rate in REPORT_RATES_PER_HOUR {
        h.element("th", &[("scope", "col")], &rate_label(rate));
    }
    h.raw("</tr></thead><tbody>");
    let mut notes: Vec<String> = Vec::new();
    for (i, label, list) in &rows {
        h.raw("<tr><th scope=\"row\">")
            .push(&Html::trusted(detector_cell(*i, label)))
            .raw("</th>");
        for t in list.iter() {
            let e = &t.extrapolated;
            let mut cell = match (e.threshold, e.low) {
                (Some(v), Some(l)) => format!(
                    "{} [{}, {}]",
                    format_number(v, 3),
                    format_number(l, 3),
                    e.high.map_or("∞".into(), |x| format_number(x, 3))
                ),
                (Some(v), None) => format_number(v, 3),
                _ => {
                    let note = e.note.clone().unwrap_or_default();
                    let k = notes.iter().position(|n| *n == note).unwrap_or_else(|| {
                        notes.push(note);
                        notes.len() - 1
                    });
                    format!("— ({})", k + 1)
                }
            };
            if let Some(room) = &t.limiting_room {
                cell.push_str(&format!(" ({room})"));
            }
            if let Some(c) = t.counted_threshold {
                cell.push_str(&format!(
                    " | {}{}",
                    format_number(c, 3),
                    if t.counted_resolved == Some(true) {
                        ""
                    } else {
                        "?"
                    }
                ));
            }
            h.element("td", &[("class", "cell")], &cell);
        }
        h.raw("</tr>");
    }
    h.raw("</tbody></table></div>");
    if !notes.is_empty() {
        h.raw("<ol class=\"notes\">");
        for note in &notes {
            h.element("li", &[], note);
        }
        h.raw("</ol>");
    }
    Some(h)
}
