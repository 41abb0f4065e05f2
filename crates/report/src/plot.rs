//! The report's plots: line and marker charts and horizontal bar charts, each drawn through
//! `echobench_svg` into a self-contained `<svg>` string.
//!
//! Every element that carries data has the class `data` (lines, markers, bars); axes, grid,
//! labels and error bars do not. The report's browser self-check and the tests use that class
//! to tell a plot that drew something from one that only drew its frame. A chart with nothing
//! to draw says so in words and carries `class="plot empty"`.
//!
//! Axes, ticks, number formatting and escaping live in `echobench_svg` (re-exported here), so
//! the report, the spectrogram and the explanation pictures share one drawing path.

use std::fmt::Write as _;

use echobench_svg::axis::{draw_ticks, Edge, PlotArea, TickStyle, CHAR_EM};
pub use echobench_svg::axis::{
    format_number, linear_ticks, log_ticks, nice_step, text_width, Axis, Scale, Tick,
    ZERO_EDGE_SHARE,
};
pub use echobench_svg::escape;
use echobench_svg::{Svg, SVG_NAMESPACE};

/// Shape of a series' markers.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    /// No marker.
    None,
    /// A filled circle.
    Circle,
    /// A filled square.
    Square,
    /// A filled triangle pointing up.
    TriangleUp,
    /// A filled diamond.
    Diamond,
    /// A filled triangle pointing down.
    TriangleDown,
    /// A diagonal cross.
    Cross,
    /// An upright cross.
    Plus,
    /// A filled hexagon.
    Hexagon,
}

/// How a series is drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct Style {
    /// Stroke and fill colour, as `#rrggbb`.
    pub colour: String,
    /// Dashed line (used for baseline runs).
    pub dashed: bool,
    /// Marker shape.
    pub marker: Marker,
}

/// A marked point with optional error bars (interval ends in data units).
#[derive(Debug, Clone, PartialEq)]
pub struct MarkedPoint {
    /// x.
    pub x: f64,
    /// y.
    pub y: f64,
    /// Interval along x, drawn as a horizontal bar.
    pub x_interval: Option<(f64, f64)>,
    /// Interval along y, drawn as a vertical bar.
    pub y_interval: Option<(f64, f64)>,
    /// Tooltip text.
    pub note: String,
}

impl MarkedPoint {
    /// A point without intervals.
    pub fn at(x: f64, y: f64) -> MarkedPoint {
        MarkedPoint {
            x,
            y,
            x_interval: None,
            y_interval: None,
            note: String::new(),
        }
    }
}

/// One series: a line through `line` and markers at `markers`.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Name in the legend (empty: no legend entry).
    pub name: String,
    /// How it is drawn.
    pub style: Style,
    /// Points of the line, in drawing order; NaN or unplaceable points break the line.
    pub line: Vec<(f64, f64)>,
    /// Marked points.
    pub markers: Vec<MarkedPoint>,
}

/// A labelled reference line across the plot.
#[derive(Debug, Clone, PartialEq)]
pub struct ReferenceLine {
    /// Where, in data units of its axis.
    pub value: f64,
    /// Label written beside it.
    pub label: String,
}

/// A line-and-marker chart.
#[derive(Debug, Clone, PartialEq)]
pub struct Chart {
    /// One-line description for screen readers and tooltips.
    pub title: String,
    /// Horizontal axis.
    pub x: Axis,
    /// Vertical axis.
    pub y: Axis,
    /// The series.
    pub series: Vec<Series>,
    /// Vertical reference lines (x values).
    pub vertical_lines: Vec<ReferenceLine>,
    /// Horizontal reference lines (y values).
    pub horizontal_lines: Vec<ReferenceLine>,
    /// Draw the diagonal y = x (chance line of a trial-level ROC).
    pub diagonal: bool,
    /// What to say when there is nothing to draw.
    pub empty_message: String,
    /// Width of the picture, px.
    pub width: f64,
    /// Height of the picture, px.
    pub height: f64,
}

impl Chart {
    /// A chart of the default size (900 × 430 px) with no series yet.
    pub fn new(title: &str, x: Axis, y: Axis) -> Chart {
        Chart {
            title: title.to_string(),
            x,
            y,
            series: Vec::new(),
            vertical_lines: Vec::new(),
            horizontal_lines: Vec::new(),
            diagonal: false,
            empty_message: "nothing to draw".into(),
            width: 900.0,
            height: 430.0,
        }
    }
}

const FONT_PX: f64 = 13.0;
const INK: &str = "#222222";
const GRID: &str = "#d9d9d9";
const REFERENCE: &str = "#6b6b6b";

/// How the charts draw their ticks: grid lines at labelled ticks, labels 20 px below the
/// frame or 9 px left of it.
const TICKS: TickStyle = TickStyle {
    ink: INK,
    grid: Some(GRID),
    font_px: FONT_PX,
    major_px: 6.0,
    minor_px: 3.0,
    bottom_label_drop_px: 20.0,
    left_label_gap_px: 9.0,
    left_label_shift_px: 4.5,
};

/// The path of a marker centred at (`x`, `y`), `size` px across.
fn marker_path(marker: Marker, x: f64, y: f64, size: f64) -> String {
    let r = size / 2.0;
    match marker {
        Marker::None => String::new(),
        Marker::Circle => {
            format!(
                "M{:.1},{:.1}a{r:.1},{r:.1} 0 1,0 {:.1},0a{r:.1},{r:.1} 0 1,0 {:.1},0Z",
                x - r,
                y,
                2.0 * r,
                -2.0 * r
            )
        }
        Marker::Square => {
            let s = r * 0.9;
            format!(
                "M{:.1},{:.1}h{:.1}v{:.1}h{:.1}Z",
                x - s,
                y - s,
                2.0 * s,
                2.0 * s,
                -2.0 * s
            )
        }
        Marker::TriangleUp => format!(
            "M{:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}Z",
            x,
            y - r * 1.15,
            x + r,
            y + r * 0.75,
            x - r,
            y + r * 0.75
        ),
        Marker::TriangleDown => format!(
            "M{:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}Z",
            x,
            y + r * 1.15,
            x + r,
            y - r * 0.75,
            x - r,
            y - r * 0.75
        ),
        Marker::Diamond => format!(
            "M{:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}Z",
            x,
            y - r * 1.2,
            x + r,
            y,
            x,
            y + r * 1.2,
            x - r,
            y
        ),
        Marker::Cross => format!(
            "M{:.1},{:.1}L{:.1},{:.1}M{:.1},{:.1}L{:.1},{:.1}",
            x - r,
            y - r,
            x + r,
            y + r,
            x - r,
            y + r,
            x + r,
            y - r
        ),
        Marker::Plus => format!(
            "M{:.1},{:.1}L{:.1},{:.1}M{:.1},{:.1}L{:.1},{:.1}",
            x - r * 1.15,
            y,
            x + r * 1.15,
            y,
            x,
            y - r * 1.15,
            x,
            y + r * 1.15
        ),
        Marker::Hexagon => {
            let mut d = String::new();
            for k in 0..6 {
                let angle = std::f64::consts::PI / 3.0 * k as f64;
                let (px, py) = (x + r * angle.cos(), y + r * angle.sin());
                let _ = write!(d, "{}{px:.1},{py:.1}", if k == 0 { "M" } else { "L" });
            }
            d.push('Z');
            d
        }
    }
}

/// Paints a marker's path: strokes only for a cross (it has no inside to fill), filled with
/// a white edge otherwise.
fn paint_marker<'a>(
    tag: echobench_svg::Tag<'a>,
    marker: Marker,
    colour: &str,
) -> echobench_svg::Tag<'a> {
    match marker {
        Marker::Cross | Marker::Plus => tag
            .attr("fill", "none")
            .attr("stroke", colour)
            .attr("stroke-width", 2.2),
        _ => tag
            .attr("fill", colour)
            .attr("stroke", "#ffffff")
            .attr("stroke-width", 1),
    }
}

/// A marker carrying data, with its note as a tooltip.
fn marker_element(svg: &mut Svg, marker: Marker, colour: &str, (x, y): (f64, f64), note: &str) {
    let d = marker_path(marker, x, y, 10.0);
    if d.is_empty() {
        return;
    }
    let tag = svg.tag("path").attr("class", "data").attr("d", d);
    paint_marker(tag, marker, colour).open();
    if !note.is_empty() {
        svg.tag("title").content(note);
    }
    svg.close("path");
}

/// Drops points that add nothing at screen resolution: repeats after rounding to 0.1 px, and
/// the middle of three points on one horizontal or vertical run (a staircase keeps its
/// corners). Keeps a curve of any number of vertices at a size bounded by the picture.
fn thin(points: &[(f64, f64)]) -> Vec<(f64, f64)> {
    let mut rounded: Vec<(f64, f64)> = Vec::with_capacity(points.len());
    for &(x, y) in points {
        let p = ((x * 10.0).round() / 10.0, (y * 10.0).round() / 10.0);
        if rounded.last() != Some(&p) {
            rounded.push(p);
        }
    }
    let mut kept: Vec<(f64, f64)> = Vec::with_capacity(rounded.len());
    for p in rounded {
        if kept.len() >= 2 {
            let a = kept[kept.len() - 2];
            let b = kept[kept.len() - 1];
            let same_column = a.0 == b.0 && b.0 == p.0;
            let same_row = a.1 == b.1 && b.1 == p.1;
            let between = |u: f64, v: f64, w: f64| (u <= v && v <= w) || (u >= v && v >= w);
            if (same_column && between(a.1, b.1, p.1)) || (same_row && between(a.0, b.0, p.0)) {
                kept.pop();
            }
        }
        kept.push(p);
    }
    kept
}

fn polyline(svg: &mut Svg, points: &[(f64, f64)], style: &Style, width: f64) {
    let thinned = thin(points);
    if thinned.len() < 2 {
        return;
    }
    let mut coordinates = String::new();
    for (i, (x, y)) in thinned.iter().enumerate() {
        if i > 0 {
            coordinates.push(' ');
        }
        let _ = write!(coordinates, "{x:.1},{y:.1}");
    }
    svg.tag("polyline")
        .attr("class", "data")
        .attr("points", coordinates)
        .attr("fill", "none")
        .attr("stroke", &style.colour)
        .attr("stroke-width", width)
        .attr("stroke-linejoin", "round")
        .attr_if("stroke-dasharray", style.dashed.then_some("7 4"))
        .end();
}

/// A line between two points, px.
fn line(svg: &mut Svg, (x1, y1): (f64, f64), (x2, y2): (f64, f64)) -> echobench_svg::Tag<'_> {
    svg.tag("line")
        .px("x1", x1)
        .px("y1", y1)
        .px("x2", x2)
        .px("y2", y2)
}

/// Opens a plot's `<svg>` element with its title; an empty plot says why in `data-empty`.
fn svg_open(svg: &mut Svg, width: f64, height: f64, title: &str, empty: Option<&str>) {
    svg.tag("svg")
        .attr(
            "class",
            if empty.is_some() {
                "plot empty"
            } else {
                "plot"
            },
        )
        .attr_if("data-empty", empty)
        .attr("xmlns", SVG_NAMESPACE)
        .view_box(width, height)
        .attr("role", "img")
        .attr("font-family", "sans-serif")
        .attr("fill", INK)
        .open();
    svg.tag("title").content(title);
}

fn legend_width(series: &[Series]) -> f64 {
    let longest = series
        .iter()
        .filter(|s| !s.name.is_empty())
        .map(|s| text_width(&s.name, FONT_PX))
        .fold(0.0, f64::max);
    if longest == 0.0 {
        0.0
    } else {
        (longest + 52.0).clamp(120.0, 360.0)
    }
}

/// Shortens `text` to at most `max_chars` characters, ending in `…` when cut.
fn shorten(text: &str, max_chars: usize) -> String {
    if text.chars().count() <= max_chars {
        text.to_string()
    } else {
        let mut out: String = text.chars().take(max_chars.saturating_sub(1)).collect();
        out.push('…');
        out
    }
}

/// Renders a chart as an `<svg>` element.
pub fn render_chart(chart: &Chart) -> String {
    let width = if chart.width.is_finite() && chart.width >= 200.0 {
        chart.width
    } else {
        900.0
    };
    let height = if chart.height.is_finite() && chart.height >= 150.0 {
        chart.height
    } else {
        430.0
    };
    let legend = legend_width(&chart.series).min(width * 0.45);
    let y_tick_width = chart
        .y
        .ticks()
        .iter()
        .map(|t| text_width(&t.label, FONT_PX))
        .fold(0.0, f64::max);
    let frame = PlotArea {
        left: 30.0 + y_tick_width + 10.0,
        top: 16.0,
        width: width - (30.0 + y_tick_width + 10.0) - legend - 16.0,
        height: height - 16.0 - 52.0,
    };
    let mut body = Svg::new();
    let mut data = Svg::new();

    // Grid and ticks.
    body.tag("rect")
        .px("x", frame.left)
        .px("y", frame.top)
        .px("width", frame.width)
        .px("height", frame.height)
        .attr("fill", "#ffffff")
        .attr("stroke", INK)
        .attr("stroke-width", 1)
        .end();
    draw_ticks(&mut body, &frame, &chart.x, Edge::Bottom, &TICKS);
    draw_ticks(&mut body, &frame, &chart.y, Edge::Left, &TICKS);
    // The break between the zero edge and the first decade.
    if let Scale::Log { zero_edge: true } = chart.x.scale {
        let x = frame.left + frame.width * ZERO_EDGE_SHARE * 0.55;
        let y = frame.bottom();
        body.tag("rect")
            .px("x", x - 3.0)
            .px("y", y - 5.0)
            .attr("width", 6)
            .attr("height", 10)
            .attr("fill", "#ffffff")
            .end();
        body.tag("path")
            .attr(
                "d",
                format_args!(
                    "M{:.1},{:.1}l4,-10M{:.1},{:.1}l4,-10",
                    x - 5.0,
                    y + 5.0,
                    x,
                    y + 5.0
                ),
            )
            .attr("stroke", INK)
            .attr("stroke-width", 1.2)
            .attr("fill", "none")
            .end();
        line(&mut body, (x, frame.top), (x, frame.bottom() - 6.0))
            .attr("stroke", GRID)
            .attr("stroke-width", 1)
            .attr("stroke-dasharray", "2 3")
            .end();
    }
    // Axis labels.
    body.text_at(
        frame.left + frame.width / 2.0,
        height - 10.0,
        "middle",
        14.0,
    )
    .content(&chart.x.label);
    body.upright_text_at(16.0, frame.top + frame.height / 2.0, 0.0, 14.0)
        .content(&chart.y.label);

    // Reference lines.
    if chart.diagonal {
        let ends = (
            frame.x(&chart.x, chart.x.min.max(chart.y.min)),
            frame.y(&chart.y, chart.x.min.max(chart.y.min)),
            frame.x(&chart.x, chart.x.max.min(chart.y.max)),
            frame.y(&chart.y, chart.x.max.min(chart.y.max)),
        );
        if let (Some(x1), Some(y1), Some(x2), Some(y2)) = ends {
            line(&mut body, (x1, y1), (x2, y2))
                .attr("stroke", REFERENCE)
                .attr("stroke-width", 1)
                .attr("stroke-dasharray", "3 3")
                .end();
        }
    }
    for (i, reference) in chart.vertical_lines.iter().enumerate() {
        let Some(x) = frame.x(&chart.x, reference.value) else {
            continue;
        };
        line(&mut body, (x, frame.top), (x, frame.bottom()))
            .attr("stroke", REFERENCE)
            .attr("stroke-width", 1.5)
            .attr("stroke-dasharray", "5 3")
            .end();
        // Labels alternate top and a line lower so that two close targets stay legible.
        let y = frame.top + 14.0 + 16.0 * (i % 2) as f64;
        body.text_at(x + 4.0, y, "start", 12.0)
            .attr("fill", REFERENCE)
            .content(&reference.label);
    }
    for reference in &chart.horizontal_lines {
        let Some(y) = frame.y(&chart.y, reference.value) else {
            continue;
        };
        line(&mut body, (frame.left, y), (frame.right(), y))
            .attr("stroke", REFERENCE)
            .attr("stroke-width", 1)
            .attr("stroke-dasharray", "5 3")
            .end();
        body.text_at(frame.right() - 4.0, y - 5.0, "end", 12.0)
            .attr("fill", REFERENCE)
            .content(&reference.label);
    }

    // Data: lines first, then error bars, then markers on top.
    let place = |x: f64, y: f64| -> Option<(f64, f64)> {
        Some((frame.x(&chart.x, x)?, frame.y(&chart.y, y)?))
    };
    for series in &chart.series {
        let mut run: Vec<(f64, f64)> = Vec::new();
        for &(x, y) in &series.line {
            match place(x, y) {
                Some(p) => run.push(p),
                None => {
                    polyline(&mut data, &run, &series.style, 2.0);
                    run.clear();
                }
            }
        }
        polyline(&mut data, &run, &series.style, 2.0);
    }
    for series in &chart.series {
        for point in &series.markers {
            let Some((px, py)) = place(point.x, point.y) else {
                continue;
            };
            if let Some((low, high)) = point.y_interval {
                if let (Some(y1), Some(y2)) = (frame.y(&chart.y, low), frame.y(&chart.y, high)) {
                    body.tag("path")
                        .attr(
                            "d",
                            format_args!(
                                "M{px:.1},{y1:.1}V{y2:.1}M{:.1},{y1:.1}h8M{:.1},{y2:.1}h8",
                                px - 4.0,
                                px - 4.0
                            ),
                        )
                        .attr("stroke", &series.style.colour)
                        .attr("stroke-width", 1.4)
                        .attr("fill", "none")
                        .end();
                }
            }
            if let Some((low, high)) = point.x_interval {
                if let (Some(x1), Some(x2)) = (frame.x(&chart.x, low), frame.x(&chart.x, high)) {
                    body.tag("path")
                        .attr(
                            "d",
                            format_args!(
                                "M{x1:.1},{py:.1}H{x2:.1}M{x1:.1},{:.1}v8M{x2:.1},{:.1}v8",
                                py - 4.0,
                                py - 4.0
                            ),
                        )
                        .attr("stroke", &series.style.colour)
                        .attr("stroke-width", 1.4)
                        .attr("fill", "none")
                        .end();
                }
            }
        }
    }
    for series in &chart.series {
        for point in &series.markers {
            if let Some(p) = place(point.x, point.y) {
                marker_element(
                    &mut data,
                    series.style.marker,
                    &series.style.colour,
                    p,
                    &point.note,
                );
            }
        }
    }

    let empty = data.is_empty();
    if empty {
        let message = shorten(
            &chart.empty_message,
            (frame.width / (FONT_PX * CHAR_EM)) as usize,
        );
        body.text_at(
            frame.left + frame.width / 2.0,
            frame.top + frame.height / 2.0,
            "middle",
            15.0,
        )
        .attr("font-style", "italic")
        .content(&message);
    }

    // Legend.
    let mut legend_svg = Svg::new();
    if legend > 0.0 && !empty {
        let x0 = frame.right() + 16.0;
        let mut y = frame.top + 10.0;
        let max_chars = ((legend - 46.0) / (FONT_PX * CHAR_EM)) as usize;
        for series in chart.series.iter().filter(|s| !s.name.is_empty()) {
            let style = &series.style;
            if !series.line.is_empty() {
                line(&mut legend_svg, (x0, y), (x0 + 30.0, y))
                    .attr("stroke", &style.colour)
                    .attr("stroke-width", 2.5)
                    .attr_if("stroke-dasharray", style.dashed.then_some("7 4"))
                    .end();
            }
            let d = marker_path(style.marker, x0 + 15.0, y, 10.0);
            if !d.is_empty() {
                let tag = legend_svg.tag("path").attr("d", d);
                paint_marker(tag, style.marker, &style.colour).end();
            }
            legend_svg
                .text_at(x0 + 38.0, y + 4.5, "start", FONT_PX)
                .content(&shorten(&series.name, max_chars));
            y += 20.0;
        }
    }

    let mut out = Svg::new();
    svg_open(
        &mut out,
        width,
        height,
        &chart.title,
        empty.then_some(chart.empty_message.as_str()),
    );
    out.append(&body);
    out.append(&data);
    out.append(&legend_svg);
    out.close("svg");
    out.into_string()
}
/// One bar of a bar chart.
#[derive(Debug, Clone, PartialEq)]
pub struct Bar {
    /// Label left of the bar.
    pub label: String,
    /// Length, in axis units (≥ 0).
    pub value: f64,
    /// Interval drawn as a whisker.
    pub interval: Option<(f64, f64)>,
    /// Fill colour, `#rrggbb`.
    pub colour: String,
    /// Text written after the bar (e.g. the value with its unit).
    pub text: String,
}

/// A group of bars under one heading.
#[derive(Debug, Clone, PartialEq)]
pub struct BarGroup {
    /// Heading of the group.
    pub label: String,
    /// The bars; an empty group shows `empty_text`.
    pub bars: Vec<Bar>,
    /// What an empty group says.
    pub empty_text: String,
}

/// A horizontal bar chart of labelled groups.
#[derive(Debug, Clone, PartialEq)]
pub struct BarChart {
    /// One-line description.
    pub title: String,
    /// The value axis label (the axis runs from 0 to the largest bar or interval end).
    pub axis_label: String,
    /// The groups, top to bottom.
    pub groups: Vec<BarGroup>,
    /// What to say when no bar has a positive length.
    pub empty_message: String,
    /// Width of the picture, px.
    pub width: f64,
}

/// Renders a bar chart as an `<svg>` element; its height follows the number of bars.
pub fn render_bar_chart(chart: &BarChart) -> String {
    const ROW: f64 = 21.0;
    const HEADING: f64 = 24.0;
    let width = if chart.width.is_finite() && chart.width >= 300.0 {
        chart.width
    } else {
        900.0
    };
    let top_value = chart
        .groups
        .iter()
        .flat_map(|g| &g.bars)
        .flat_map(|b| [Some(b.value), b.interval.map(|i| i.1)])
        .flatten()
        .filter(|v| v.is_finite())
        .fold(0.0, f64::max);
    let label_width = chart
        .groups
        .iter()
        .flat_map(|g| &g.bars)
        .map(|b| text_width(&b.label, FONT_PX))
        .fold(60.0, f64::max)
        .min(width * 0.35);
    let text_room = chart
        .groups
        .iter()
        .flat_map(|g| &g.bars)
        .map(|b| text_width(&b.text, 12.0))
        .fold(0.0, f64::max)
        + 14.0;
    let left = 24.0 + label_width + 10.0;
    let bar_space = (width - left - text_room - 16.0).max(100.0);
    let axis = Axis::linear(&chart.axis_label, 0.0, top_value.max(f64::MIN_POSITIVE));
    let scale = |v: f64| -> f64 {
        if top_value > 0.0 && v.is_finite() {
            (v.max(0.0) / axis.max).min(1.0) * bar_space
        } else {
            0.0
        }
    };
    let rows: usize = chart.groups.iter().map(|g| g.bars.len().max(1)).sum();
    let plot_height = chart.groups.len() as f64 * HEADING + rows as f64 * ROW + 8.0;
    let height = 12.0 + plot_height + 48.0;
    let empty = top_value <= 0.0;
    let mut body = Svg::new();
    let mut data = Svg::new();
    let plot_top = 12.0;
    let plot_bottom = plot_top + plot_height;
    if !empty {
        for tick in linear_ticks(0.0, axis.max, 6) {
            let x = left + scale(tick.value);
            line(&mut body, (x, plot_top), (x, plot_bottom))
                .attr("stroke", GRID)
                .attr("stroke-width", 1)
                .end();
            body.text_at(x, plot_bottom + 18.0, "middle", FONT_PX)
                .content(&tick.label);
        }
    }
    line(&mut body, (left, plot_top), (left, plot_bottom))
        .attr("stroke", INK)
        .attr("stroke-width", 1)
        .end();
    line(
        &mut body,
        (left, plot_bottom),
        (left + bar_space, plot_bottom),
    )
    .attr("stroke", INK)
    .attr("stroke-width", 1)
    .end();
    body.text_at(left + bar_space / 2.0, height - 10.0, "middle", 14.0)
        .content(&chart.axis_label);
    let max_label_chars = (label_width / (FONT_PX * CHAR_EM)) as usize;
    let mut y = plot_top;
    for group in &chart.groups {
        body.text_at(12.0, y + 17.0, "start", 14.0)
            .attr("font-weight", "bold")
            .content(&group.label);
        y += HEADING;
        if group.bars.is_empty() {
            body.text_at(left + 8.0, y + 15.0, "start", 12.0)
                .attr("font-style", "italic")
                .content(&group.empty_text);
            y += ROW;
        }
        for bar in &group.bars {
            body.text_at(left - 8.0, y + 15.0, "end", FONT_PX)
                .content(&shorten(&bar.label, max_label_chars));
            let length = scale(bar.value);
            if length > 0.0 {
                data.tag("rect")
                    .attr("class", "data")
                    .px("x", left)
                    .px("y", y + 3.0)
                    .px("width", length)
                    .px("height", ROW - 6.0)
                    .attr("fill", &bar.colour)
                    .open();
                data.tag("title")
                    .content(&format!("{}: {}", bar.label, bar.text));
                data.close("rect");
            }
            let mut end = left + length;
            if let Some((low, high)) = bar.interval {
                let (x1, x2) = (left + scale(low), left + scale(high));
                let mid = y + ROW / 2.0;
                body.tag("path")
                    .attr(
                        "d",
                        format_args!(
                            "M{x1:.1},{mid:.1}H{x2:.1}M{x1:.1},{:.1}v8M{x2:.1},{:.1}v8",
                            mid - 4.0,
                            mid - 4.0
                        ),
                    )
                    .attr("stroke", INK)
                    .attr("stroke-width", 1.2)
                    .attr("fill", "none")
                    .end();
                end = end.max(x2);
            }
            body.text_at(end + 6.0, y + 15.0, "start", 12.0)
                .content(&bar.text);
            y += ROW;
        }
    }
    if empty {
        body.text_at(
            left + bar_space / 2.0,
            plot_top + plot_height / 2.0,
            "middle",
            15.0,
        )
        .attr("font-style", "italic")
        .content(&chart.empty_message);
    }
    let mut out = Svg::new();
    svg_open(
        &mut out,
        width,
        height,
        &chart.title,
        empty.then_some(chart.empty_message.as_str()),
    );
    out.append(&body);
    out.append(&data);
    out.close("svg");
    out.into_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn style() -> Style {
        Style {
            colour: "#1b5e9e".into(),
            dashed: false,
            marker: Marker::Circle,
        }
    }

    #[test]
    fn a_chart_draws_its_data_and_escapes_its_text() {
        let mut chart = Chart::new(
            "ROC <test>",
            Axis::log("false alarms per hour", 0.1, 10.0, true),
            Axis::linear("Pd", 0.0, 1.0),
        );
        chart.series.push(Series {
            name: "a&b".into(),
            style: style(),
            line: vec![(0.0, 0.1), (0.5, 0.4), (5.0, 0.9)],
            markers: vec![MarkedPoint::at(0.5, 0.4)],
        });
        chart.vertical_lines.push(ReferenceLine {
            value: 1.0,
            label: "target 1/h".into(),
        });
        let svg = render_chart(&chart);
        assert!(svg.starts_with("<svg class=\"plot\""));
        assert!(svg.contains("ROC &lt;test&gt;") && svg.contains(">a&amp;b<"));
        assert!(!svg.contains("a&b"));
        assert_eq!(svg.matches("<polyline class=\"data\"").count(), 1);
        assert_eq!(svg.matches("<path class=\"data\"").count(), 1);
        assert!(svg.contains(">0</text>"), "the zero edge is labelled");
        // The line starts at the zero edge, i.e. on the frame's left side.
        let frame_left: f64 = svg
            .split("<rect x=\"")
            .nth(1)
            .and_then(|s| s.split('"').next())
            .and_then(|s| s.parse().ok())
            .unwrap();
        let first_x: f64 = svg
            .split("points=\"")
            .nth(1)
            .and_then(|s| s.split(',').next())
            .and_then(|s| s.parse().ok())
            .unwrap();
        assert!(
            (first_x - frame_left).abs() < 0.11,
            "{first_x} vs {frame_left}"
        );
    }

    #[test]
    fn an_empty_chart_says_so() {
        let mut chart = Chart::new(
            "x",
            Axis::linear("x", 0.0, 1.0),
            Axis::linear("y", 0.0, 1.0),
        );
        chart.empty_message = "no target scenes in this run".into();
        chart.series.push(Series {
            name: "nothing".into(),
            style: style(),
            line: vec![(f64::NAN, 0.1)],
            markers: vec![],
        });
        let svg = render_chart(&chart);
        assert!(svg.starts_with("<svg class=\"plot empty\""));
        assert!(svg.contains("no target scenes in this run"));
        assert!(!svg.contains("class=\"data\""));
        // A single point is not a line either.
        chart.series[0].line = vec![(0.5, 0.5)];
        assert!(!render_chart(&chart).contains("class=\"data\""));
    }

    #[test]
    fn thinning_keeps_staircase_corners_only() {
        // An empirical CDF of 1000 values that take only 10 distinct values, in px.
        let stairs: Vec<(f64, f64)> = (0..1000)
            .flat_map(|i| {
                let x = (i / 100) as f64 * 50.0;
                [(x, i as f64 * 0.4), (x, (i + 1) as f64 * 0.4)]
            })
            .collect();
        let kept = thin(&stairs);
        // Two corners per distinct value.
        assert_eq!(kept.len(), 20, "{kept:?}");
        assert_eq!(kept.first(), Some(&(0.0, 0.0)));
        assert_eq!(kept.last(), Some(&(450.0, 400.0)));
        // A reversal is not a run: an up-and-down spike keeps its tip.
        assert_eq!(thin(&[(0.0, 0.0), (0.0, 5.0), (0.0, 1.0)]).len(), 3);
    }

    #[test]
    fn bar_charts_scale_bars_and_handle_all_zero() {
        let bar = |value: f64| Bar {
            label: "fan".into(),
            value,
            interval: Some((value * 0.5, value * 2.0)),
            colour: "#e07b00".into(),
            text: format!("{value}/h"),
        };
        let chart = BarChart {
            title: "t".into(),
            axis_label: "false alarms per hour".into(),
            groups: vec![
                BarGroup {
                    label: "energy".into(),
                    bars: vec![bar(2.0), bar(4.0)],
                    empty_text: String::new(),
                },
                BarGroup {
                    label: "quiet <one>".into(),
                    bars: vec![],
                    empty_text: "no false alarms".into(),
                },
            ],
            empty_message: "none at all".into(),
            width: 800.0,
        };
        let svg = render_bar_chart(&chart);
        let widths: Vec<f64> = svg
            .split("class=\"data\"")
            .skip(1)
            .filter_map(|s| s.split("width=\"").nth(1))
            .filter_map(|s| s.split('"').next())
            .filter_map(|s| s.parse().ok())
            .collect();
        assert_eq!(widths.len(), 2);
        assert!((widths[1] / widths[0] - 2.0).abs() < 0.01, "{widths:?}");
        assert!(svg.contains("quiet &lt;one&gt;") && svg.contains("no false alarms"));
        let mut zero = chart.clone();
        zero.groups[0].bars = vec![Bar {
            interval: None,
            ..bar(0.0)
        }];
        let svg = render_bar_chart(&zero);
        assert!(svg.starts_with("<svg class=\"plot empty\"") && svg.contains("none at all"));
    }
}
