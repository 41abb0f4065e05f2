//! The tuning summary as JSON, Markdown, a table for the report, and the search history as
//! an SVG plot (drawn through `echobench-svg`, the one drawing path).

use crate::{pd_text, ProductPd, TuneSummary};
use echobench_svg::axis::{draw_ticks, Axis, Edge, PlotArea, TickStyle};
use echobench_svg::Svg;

/// The summary as pretty JSON (the file `tune-summary.json`).
///
/// # Errors
/// Never for this type (all keys are strings); `serde_json`'s error otherwise.
pub fn summary_json(summary: &TuneSummary) -> Result<String, serde_json::Error> {
    serde_json::to_string_pretty(summary)
}

fn figure_for<'a>(list: &'a [ProductPd], product: &str) -> Option<&'a ProductPd> {
    list.iter().find(|p| p.product == product)
}

fn params_text(map: &std::collections::BTreeMap<String, String>) -> String {
    if map.is_empty() {
        "(as given)".to_string()
    } else {
        map.iter()
            .map(|(k, v)| format!("{k}={v}"))
            .collect::<Vec<_>>()
            .join(", ")
    }
}

/// The verdict table, one row per (product, detector): header, then rows of cells. The
/// report may draw it as it draws its other tables.
pub fn tuning_table(summary: &TuneSummary) -> (Vec<String>, Vec<Vec<String>>) {
    let header = [
        "product",
        "detector",
        "tuned parameters",
        "default Pd (held-out)",
        "tuned Pd (tuning trials)",
        "tuned Pd (held-out)",
        "optimism",
    ]
    .map(String::from)
    .to_vec();
    let mut rows = Vec::new();
    for d in &summary.detectors {
        for held in &d.held_out {
            let tuning = figure_for(&d.tuning, &held.product);
            let default = figure_for(&d.default_held_out, &held.product);
            let optimism = match (tuning.and_then(|t| t.pd.value), held.pd.value) {
                (Some(t), Some(h)) => format!("{:+.2}", t - h),
                _ => "–".to_string(),
            };
            rows.push(vec![
                held.product.clone(),
                d.label.clone(),
                if d.chosen == 0 {
                    "default kept".to_string()
                } else {
                    params_text(&d.tuned_params)
                },
                default.map_or("–".to_string(), |p| pd_text(&p.pd)),
                tuning.map_or("–".to_string(), |p| pd_text(&p.pd)),
                pd_text(&held.pd),
                optimism,
            ]);
        }
    }
    (header, rows)
}

fn cell(text: &str) -> String {
    text.replace('|', "\\|")
}

/// The summary as Markdown (the file `tune-summary.md`).
pub fn markdown(summary: &TuneSummary) -> String {
    let mut out = String::new();
    let rate = echobench_harness::summary::rate_label(summary.target_per_hour);
    out.push_str(&format!(
        "# Tuning of suite `{}`\n\nTuning trials: seed {} (the suite's seed {} salted); judged on \
         the suite's own seed. Pd at {rate} with 95 % Wilson intervals; the optimism is the \
         tuning Pd minus the held-out Pd.\n\n",
        summary.suite, summary.tuning_seed, summary.suite_seed
    ));
    out.push_str("## Rungs\n\n| rung | share of trials | test trials | configurations | ranked on | target resolved in calibration |\n|---|---|---|---|---|---|\n");
    for r in &summary.rungs {
        out.push_str(&format!(
            "| {} | {:.3} | {} | {} | {} | {} |\n",
            r.index + 1,
            r.share,
            r.test_trials,
            r.configurations,
            r.criterion.name(),
            if r.resolved {
                "yes"
            } else {
                "no (threshold stricter)"
            }
        ));
    }
    out.push_str("\n## Default against tuned\n\n");
    let (header, rows) = tuning_table(summary);
    out.push_str(&format!("| {} |\n", header.join(" | ")));
    out.push_str(&format!("|{}\n", "---|".repeat(header.len())));
    for row in rows {
        let cells: Vec<String> = row.iter().map(|c| cell(c)).collect();
        out.push_str(&format!("| {} |\n", cells.join(" | ")));
    }
    out.push_str("\n## Searched parameters\n\n");
    for d in &summary.detectors {
        let searched: Vec<String> = d
            .searched
            .iter()
            .map(|p| format!("`{}` ({}, {})", p.name, p.scale, p.range))
            .collect();
        out.push_str(&format!(
            "- `{}`: {}{}\n",
            d.label,
            if searched.is_empty() {
                "nothing tunable".to_string()
            } else {
                searched.join(", ")
            },
            if d.not_searched.is_empty() {
                String::new()
            } else {
                format!("; not searched: {}", cell(&d.not_searched.join("; ")))
            }
        ));
    }
    if !summary.left_out.is_empty() {
        out.push_str(&format!(
            "\n## Rooms left out of tuning\n\nEach room in turn left out of the search; the \
             configuration found, at its threshold from the other rooms, on the room's fresh \
             trials. **fails**: false alarms per hour shown above {rate} (the Garwood \
             interval's lower end above it).\n\n| product | room | detector | false alarms | hours | per hour [95 %] | verdict |\n|---|---|---|---|---|---|---|\n"
        ));
        for r in &summary.left_out {
            let per_hour = match (r.rate.value, r.rate.low, r.rate.high) {
                (Some(v), Some(l), Some(h)) => format!("{v:.2} [{l:.2}, {h:.2}]"),
                _ => "–".to_string(),
            };
            out.push_str(&format!(
                "| {} | {} | {} | {} | {:.3} | {} | {} |\n",
                cell(&r.product),
                cell(&r.room),
                cell(&r.detector),
                r.false_alarms,
                r.exposure_hours,
                per_hour,
                if r.fails { "**fails**" } else { "holds" }
            ));
        }
    }
    out.push_str("\nThe search history is drawn in `tune-history.svg`; every configuration at every rung is in `tune-summary.json`.\n");
    out
}

/// Colours of the detectors' lines, in entry order (cycled).
const PALETTE: [&str; 8] = [
    "#1b6ca8", "#c8553d", "#2a9d8f", "#8c5e9e", "#d69a2d", "#4a4e69", "#6a994e", "#b5838d",
];

/// The search history: per detector, each configuration's criterion at every rung it ran
/// (a line through its rungs, the chosen one thick), rung on the horizontal axis. The
/// criterion is on [0, 1] either way (AUC or Pd); each rung's criterion is named under it.
pub fn history_svg(summary: &TuneSummary) -> String {
    let (width, height) = (760.0, 420.0);
    let area = PlotArea {
        left: 60.0,
        top: 30.0,
        width: 500.0,
        height: 320.0,
    };
    let rungs = summary.rungs.len().max(1);
    let x_axis = Axis::linear("rung", -0.5, rungs as f64 - 0.5);
    let y_axis = Axis::linear("criterion (mean over products)", 0.0, 1.0);
    let mut svg = Svg::new();
    svg.white_page(width, height);
    let style = TickStyle {
        ink: "#444444",
        grid: Some("#e6e6e6"),
        font_px: 11.0,
        major_px: 5.0,
        minor_px: 3.0,
        bottom_label_drop_px: 16.0,
        left_label_gap_px: 8.0,
        left_label_shift_px: 4.0,
    };
    draw_ticks(&mut svg, &area, &y_axis, Edge::Left, &style);
    svg.tag("rect")
        .px("x", area.left)
        .px("y", area.top)
        .px("width", area.width)
        .px("height", area.height)
        .attr("fill", "none")
        .attr("stroke", "#444444")
        .end();
    for r in &summary.rungs {
        let Some(x) = area.x(&x_axis, r.index as f64) else {
            continue;
        };
        svg.text_at(x, area.bottom() + 16.0, "middle", 11.0)
            .content(&format!("rung {} ({:.3})", r.index + 1, r.share));
        svg.text_at(x, area.bottom() + 30.0, "middle", 10.0)
            .content(r.criterion.name());
    }
    svg.upright_text_at(14.0, area.top + area.height / 2.0, 0.0, 11.0)
        .content(&y_axis.label);
    svg.text_at(area.left, 18.0, "start", 13.0)
        .content(&format!("Search history of suite {}", summary.suite));
    let count = summary.detectors.len().max(1) as f64;
    for (e, d) in summary.detectors.iter().enumerate() {
        let colour = PALETTE[e % PALETTE.len()];
        // Spread the detectors a little along each rung so their dots do not hide each other.
        let offset = (e as f64 + 0.5) / count * 0.5 - 0.25;
        let mut configs: Vec<usize> = summary
            .history
            .iter()
            .filter(|h| h.detector == d.label && h.refused.is_none())
            .map(|h| h.config)
            .collect();
        configs.sort_unstable();
        configs.dedup();
        for c in configs {
            let points: Vec<(f64, f64)> = summary
                .history
                .iter()
                .filter(|h| h.detector == d.label && h.config == c && h.refused.is_none())
                .filter_map(|h| {
                    Some((
                        area.x(&x_axis, h.rung as f64 + offset)?,
                        area.y(&y_axis, h.value?)?,
                    ))
                })
                .collect();
            let chosen = c == d.chosen;
            if points.len() > 1 {
                let path: Vec<String> = points
                    .iter()
                    .map(|(x, y)| format!("{x:.1},{y:.1}"))
                    .collect();
                svg.tag("polyline")
                    .attr("points", path.join(" "))
                    .attr("fill", "none")
                    .attr("stroke", colour)
                    .attr("stroke-width", if chosen { 2.5 } else { 0.8 })
                    .attr("stroke-opacity", if chosen { 1.0 } else { 0.5 })
                    .end();
            }
            for (x, y) in &points {
                svg.tag("circle")
                    .px("cx", *x)
                    .px("cy", *y)
                    .px("r", if chosen { 3.5 } else { 2.0 })
                    .attr("fill", colour)
                    .end();
            }
        }
        let ly = area.top + 14.0 + 16.0 * e as f64;
        svg.tag("line")
            .px("x1", area.right() + 16.0)
            .px("y1", ly - 4.0)
            .px("x2", area.right() + 34.0)
            .px("y2", ly - 4.0)
            .attr("stroke", colour)
            .attr("stroke-width", 2.5)
            .end();
        svg.text_at(area.right() + 40.0, ly, "start", 11.0)
            .content(&d.label);
    }
    svg.close("svg");
    svg.into_string()
}
