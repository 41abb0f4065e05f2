//! A tuning's verdict as a report section (`echobench report RUN --tuning DIR`): each
//! detector's default against its tuned configuration, Pd on the tuning trials and on the
//! held-out trials (the gap is the optimism of tuning), the rooms left out of tuning in turn,
//! and the search history.

use crate::html::Section;
use crate::markup::Html;
use echobench_tune::{history_svg, tuning_table, TuneSummary};

/// The section, about the whole run (a tuning covers every product of its suite).
pub fn tuning_section(summary: &TuneSummary) -> Section {
    let mut html = Html::new();
    html.push(&Html::filled(
        "<p>Every detector's tunable parameters were searched the same way on tuning trials of their own (seed {}, the suite's seed {} salted): a scrambled Sobol sample of each detector's space and its defaults, cut by successive halving, every configuration of a rung on the same trials; thresholds cut on calibration trials, Pd counted on test trials. The chosen configurations were then judged beside the defaults on the suite's own trials, which the search never saw. Pd at {} with {} Wilson intervals; the optimism is the tuning Pd minus the held-out Pd.</p>",
        &[
            &summary.tuning_seed.to_string(),
            &summary.suite_seed.to_string(),
            &echobench_harness::summary::rate_label(summary.target_per_hour),
            "95 %",
        ],
    ));
    let (header, rows) = tuning_table(summary);
    html.raw("<div class=\"wide\">").open(
        "table",
        &[
            ("class", "grid tuning"),
            ("data-check", "tuning"),
            ("data-rows", &rows.len().to_string()),
        ],
    );
    html.raw("<thead><tr>");
    for h in &header {
        html.element("th", &[("scope", "col")], h);
    }
    html.raw("</tr></thead><tbody>");
    for row in &rows {
        html.raw("<tr>");
        for (i, cell) in row.iter().enumerate() {
            if i < 2 {
                html.element("th", &[("scope", "row")], cell);
            } else {
                html.element("td", &[("class", "cell")], cell);
            }
        }
        html.raw("</tr>");
    }
    html.raw("</tbody></table></div>");
    if !summary.left_out.is_empty() {
        html.raw("<p>Each nuisance room left out of tuning in turn: the detector tuned without it, its threshold cut on the other rooms, scored on the room's fresh trials (false alarms per hour, Garwood interval). <em>over</em>: the interval lies wholly above the target — tuned to the rooms it saw, it fails in a new one.</p>");
        html.raw("<div class=\"wide\">")
            .open("table", &[("class", "grid tuning-rooms")]);
        html.raw("<thead><tr>");
        for h in [
            "product",
            "room left out",
            "detector",
            "false alarms per hour",
            "",
        ] {
            html.element("th", &[("scope", "col")], h);
        }
        html.raw("</tr></thead><tbody>");
        for r in &summary.left_out {
            let rate = match (r.rate.value, r.rate.low, r.rate.high) {
                (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
                _ => "—".to_string(),
            };
            html.raw("<tr>");
            html.element("th", &[("scope", "row")], &r.product);
            html.element("td", &[], &r.room);
            html.element("td", &[], &r.detector);
            html.element("td", &[("class", "cell")], &rate);
            html.element("td", &[], if r.fails { "over" } else { "" });
            html.raw("</tr>");
        }
        html.raw("</tbody></table></div>");
    }
    // The history plot is drawn by `echobench-svg` (every text escaped there).
    html.push(&Html::raw_html(history_svg(summary)));
    Section::new(
        "Tuning: each detector tuned on its own trials, judged on fresh ones",
        html.into_string(),
    )
}
