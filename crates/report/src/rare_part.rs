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
            .push(&detector_cell(*i, label))
            .raw("</th>");
        for t in list.iter() {
            let cell = t.cell(&|x| format_number(x, 3), &mut notes, true);
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

/// Per detector with a fitted curve: the limiting room's counted false alarms per hour at
/// every grid threshold above the fit threshold (with their exact Poisson intervals) against
/// the fitted tail and its band, with the four rates drawn across. `(label, room, chart)`.
pub(crate) fn rate_charts(
    part: &Part,
    style: &dyn Fn(usize) -> crate::plot::Style,
) -> Vec<(String, String, crate::plot::Chart)> {
    use crate::plot::{Axis, Chart, MarkedPoint, Marker, ReferenceLine, Series, Style};
    use echobench_harness::summary::Estimate;
    let mut out = Vec::new();
    for (i, d) in part.tallies().into_iter().enumerate() {
        let Some(room) = d.tail.iter().find(|r| !r.band.is_empty()) else {
            continue;
        };
        let Some(grid) = d
            .calibration_rooms
            .iter()
            .find(|g| g.scene == room.scene && g.sweep_value == room.sweep_value)
        else {
            continue;
        };
        let (Some(first), Some(last)) = (room.band.first(), room.band.last()) else {
            continue;
        };
        let (x_low, x_high) = (first.0, last.0);
        let hours = grid.exposure_ns as f64 / 3.6e12;
        let counted: Vec<MarkedPoint> = d
            .thresholds
            .iter()
            .zip(&grid.false_alarms)
            .filter(|(x, _)| **x >= x_low && **x <= x_high)
            .filter_map(|(&x, &k)| {
                let e = Estimate::rate(k, hours);
                let mut p = MarkedPoint::at(x, e.value?);
                p.y_interval = e.low.zip(e.high);
                p.note = format!(
                    "threshold {}: {k} false alarms in {} h",
                    format_number(x, 4),
                    format_number(hours, 3)
                );
                Some(p)
            })
            .collect();
        let base = style(i);
        let line = |pick: fn(&(f64, f64, f64, f64)) -> f64| -> Vec<(f64, f64)> {
            room.band.iter().map(|b| (b.0, pick(b))).collect()
        };
        let lowest = room
            .band
            .iter()
            .map(|b| b.2)
            .filter(|y| *y > 0.0)
            .fold(REPORT_RATES_PER_HOUR[3], f64::min);
        let highest = counted
            .iter()
            .filter_map(|p| p.y_interval.map(|(_, h)| h))
            .chain(room.band.iter().map(|b| b.1))
            .fold(REPORT_RATES_PER_HOUR[0], f64::max);
        let mut chart = Chart::new(
            &format!(
                "{}: false alarms per hour against threshold in {}",
                d.label,
                room.name()
            ),
            Axis::linear("threshold", x_low, x_high),
            Axis::log(
                &format!("false alarms per hour in {} (log scale)", room.name()),
                lowest,
                highest,
                true,
            ),
        );
        chart.height = 360.0;
        chart.series = vec![
            Series {
                name: "counted in calibration".into(),
                style: Style {
                    colour: "#222222".into(),
                    dashed: false,
                    marker: Marker::Circle,
                },
                line: Vec::new(),
                markers: counted,
            },
            Series {
                name: "fitted tail".into(),
                style: Style {
                    marker: Marker::None,
                    ..base.clone()
                },
                line: line(|b| b.1),
                markers: Vec::new(),
            },
            Series {
                name: "95 % band".into(),
                style: Style {
                    dashed: true,
                    marker: Marker::None,
                    ..base.clone()
                },
                line: line(|b| b.2),
                markers: Vec::new(),
            },
            Series {
                name: String::new(),
                style: Style {
                    dashed: true,
                    marker: Marker::None,
                    ..base
                },
                line: line(|b| b.3),
                markers: Vec::new(),
            },
        ];
        chart.horizontal_lines = REPORT_RATES_PER_HOUR
            .iter()
            .map(|&r| ReferenceLine {
                value: r,
                label: rate_label(r),
            })
            .collect();
        chart.empty_message = "no calibration counts above the fit threshold".into();
        out.push((d.label.clone(), room.name(), chart));
    }
    out
}

/// Per detector with a stability table: the shape ξ of the tail fitted above each candidate
/// threshold, with its profile-likelihood interval, in the room that sets its one-per-day
/// threshold; the chosen fit threshold drawn as a vertical line. Above a valid threshold the
/// points stay level within their intervals (Coles 2001, §4.3.4). `(label, room, chart)`.
pub(crate) fn stability_charts(
    part: &Part,
    style: &dyn Fn(usize) -> crate::plot::Style,
) -> Vec<(String, String, crate::plot::Chart)> {
    use crate::plot::{Axis, Chart, MarkedPoint, Marker, ReferenceLine, Series, Style};
    let mut out = Vec::new();
    for (i, d) in part.tallies().into_iter().enumerate() {
        let Some(room) = d.tail.iter().find(|r| !r.stability.is_empty()) else {
            continue;
        };
        let points: Vec<MarkedPoint> = room
            .stability
            .iter()
            .filter_map(|p| {
                let (xi, low, high) = p.xi?;
                let mut m = MarkedPoint::at(p.threshold, xi);
                m.y_interval = Some((low, high.unwrap_or(f64::INFINITY)));
                m.note = format!(
                    "u = {}: {} cluster maxima above, ξ = {} [{}, {}]{}",
                    format_number(p.threshold, 4),
                    p.exceedances,
                    format_number(xi, 3),
                    format_number(low, 3),
                    high.map_or("∞".to_string(), |h| format_number(h, 3)),
                    if p.chosen { " (chosen)" } else { "" }
                );
                Some(m)
            })
            .collect();
        if points.is_empty() {
            continue;
        }
        let (x_low, x_high) = points
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
                (a.min(p.x), b.max(p.x))
            });
        // The shape's intervals can be wide at the top candidates: the axis shows ξ from
        // −0.5 to 1.5 at most, enough to tell a light tail from a heavy one.
        let finite_ends = points.iter().flat_map(|p| {
            let (l, h) = p.y_interval.unwrap_or((p.y, p.y));
            [p.y, l, if h.is_finite() { h } else { p.y }]
        });
        let (y_low, y_high) = finite_ends.fold((0.0f64, 0.0f64), |(a, b), y| (a.min(y), b.max(y)));
        let (axis_low, axis_high) = (y_low.max(-0.5) - 0.05, y_high.min(1.5) + 0.05);
        // An unbounded or far interval end is drawn to the axis edge.
        let points: Vec<MarkedPoint> = points
            .into_iter()
            .map(|mut p| {
                p.y_interval = p
                    .y_interval
                    .map(|(l, h)| (l.max(axis_low), h.min(axis_high)));
                p
            })
            .collect();
        let pad = 0.05 * (x_high - x_low).max(f64::MIN_POSITIVE);
        let mut chart = Chart::new(
            &format!(
                "{}: fitted tail shape against threshold in {}",
                d.label,
                room.name()
            ),
            Axis::linear("candidate threshold u", x_low - pad, x_high + pad),
            Axis::linear("shape ξ of the tail above u", axis_low, axis_high),
        );
        chart.height = 300.0;
        chart.series = vec![Series {
            name: "ξ with its interval".into(),
            style: Style {
                marker: Marker::Circle,
                ..style(i)
            },
            line: Vec::new(),
            markers: points,
        }];
        chart.vertical_lines = room
            .stability
            .iter()
            .filter(|p| p.chosen)
            .map(|p| ReferenceLine {
                value: p.threshold,
                label: "chosen u".into(),
            })
            .collect();
        chart.horizontal_lines = vec![ReferenceLine {
            value: 0.0,
            label: "ξ = 0 (exponential tail)".into(),
        }];
        chart.empty_message = "no candidate threshold with a fit".into();
        out.push((d.label.clone(), room.name(), chart));
    }
    out
}
