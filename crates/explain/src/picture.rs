//! The explanation picture: the spectrogram crate's picture of the trial on top, and under it,
//! on the same time axis, the score trace with the threshold, the alarm state and the truth as
//! the scorer takes it.
//!
//! The spectrogram is drawn by `echobench_spectrogram::draw_picture` (its heat map, colour bar
//! and truth strip) and nested as an inner `<svg>`; the panels below take their time axis
//! from the spectrogram's plot area (`Picture::plot_area`), so the two line up to the pixel.
//! Everything is written through `echobench_svg`, so every text (headline, facts, nuisance
//! sources) is escaped by the writer. Every element has a class naming what it shows
//! (`score-trace`, `threshold`, `alarm-on`, `alarm-detection`, `alarm-false`, `truth-event`,
//! `truth-window`, `truth-still`, `truth-nuisance`, ...), and the score trace carries `data`,
//! which the report's browser self-check looks for.

use crate::alarms::{AlarmReplay, MarkKind};
use crate::ExplainError;
use echobench_core::{Channels, Interval, Score};
use echobench_harness::events::TrialTruth;
use echobench_spectrogram::{
    draw_picture, short_time_spectrum, Marked, Picture, SpectrogramOptions,
};
use echobench_svg::axis::{format_number, linear_ticks, text_width, Axis, Scale};
use echobench_svg::{Svg, Tag, SVG_NAMESPACE};
use std::fmt::Write as _;

/// Picture width, px.
const WIDTH: i32 = 1000;
/// Header (headline and two lines of facts), px.
const HEADER_H: i32 = 66;
/// The spectrogram's height (its smallest accepted side), px.
const SPECTROGRAM_H: i32 = 480;
/// Score panel height, px.
const SCORE_H: i32 = 170;
/// Lane heights, px.
const ALARM_LANE_H: i32 = 30;
const EVENT_LANE_H: i32 = 24;
const LANE_H: i32 = 18;
/// Nuisance sources drawn on lanes of their own; the rest share one more lane.
const MAX_NUISANCE_LANES: usize = 4;
/// Spectrogram analysis: frames of at most this many instants (128 ms at 2 kHz: walking
/// Doppler lines stay apart), shortened until the band shown holds about
/// [`SPECTROGRAM_ROWS`] bins, and a hop chosen for about [`SPECTROGRAM_COLUMNS`] columns, so
/// the embedded heat map stays small (tens of kilobytes) whatever the trial length.
const SPECTROGRAM_MAX_FRAME: usize = 256;
const SPECTROGRAM_ROWS: f64 = 64.0;
const SPECTROGRAM_COLUMNS: usize = 240;
/// Colour range of the heat map below its strongest cell, dB: enough for a walker and the
/// noise floor, while the floor's speckle mostly takes the darkest colour (smaller pictures).
const SPECTROGRAM_RANGE_DB: f64 = 60.0;

// Colours: the Okabe–Ito palette, distinct for the common colour-vision deficiencies (common
// practice); shapes differ too (triangle = detection, cross = false alarm).
const SCORE: &str = "#1a1a1a";
const THRESHOLD: &str = "#d55e00";
const ALARM_ON: &str = "#e69f00";
const DETECTION: &str = "#009e73";
const FALSE_ALARM: &str = "#d55e00";
const EVENT: &str = "#0072b2";
const WINDOW_FILL: &str = "#d7ebf7";
const WINDOW_EDGE: &str = "#56b4e9";
const STILL_FILL: &str = "#efd3e3";
const STILL_EDGE: &str = "#cc79a7";
const NUISANCE_FILL: &str = "#d9d9d9";
const NUISANCE_EDGE: &str = "#707070";
const MUTED: &str = "#555555";
const GRID: &str = "#e4e4e4";

/// Everything one picture shows.
pub(crate) struct PictureInput<'a> {
    /// First header line: what happened.
    pub headline: &'a str,
    /// Second and third header lines: product, detector, trial; threshold and logic.
    pub facts: [&'a str; 2],
    /// Title of the spectrogram part.
    pub spectrogram_title: &'a str,
    /// The trial's samples (volts less bias; interleaved I, Q for I/Q).
    pub samples: &'a [f32],
    /// Real or I/Q.
    pub channels: Channels,
    /// Sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Highest Doppler frequency shown, Hz (`None`: up to half the sample rate).
    pub max_hz: Option<f64>,
    /// The detector's scores.
    pub scores: &'a [Score],
    /// The operating threshold.
    pub threshold: f64,
    /// The alarm hold after a counted alarm, s.
    pub hold_s: f64,
    /// The alarm logic replayed at it.
    pub alarms: &'a AlarmReplay,
    /// The truth as the scorer takes it (matching windows, ignored intervals).
    pub truth: &'a TrialTruth,
    /// The truth events themselves.
    pub events: &'a [Interval],
    /// Nuisance activity (interval, source).
    pub nuisances: &'a [(Interval, String)],
    /// Makes the ids of this picture distinct from another's on the same page.
    pub id_suffix: &'a str,
}

/// The plot area of the spectrogram's heat map, px (the time axis of every panel).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Frame {
    x0: f64,
    x1: f64,
    duration_s: f64,
}

impl Frame {
    fn x(&self, t_s: f64) -> f64 {
        self.x0 + (t_s / self.duration_s).clamp(0.0, 1.0) * (self.x1 - self.x0)
    }
}

/// Draws the spectrogram through the spectrogram crate, in memory.
fn spectrogram(input: &PictureInput<'_>, duration_s: f64) -> Result<Picture, ExplainError> {
    let instants = input.samples.len() / input.channels.count().max(1);
    let nyquist_hz = input.sample_rate_hz / 2.0;
    let band_hz = input.max_hz.map_or(nyquist_hz, |f| f.min(nyquist_hz));
    let wanted = (SPECTROGRAM_ROWS * input.sample_rate_hz / band_hz).max(2.0) as usize;
    let frame_len = wanted
        .next_power_of_two()
        .clamp(64, SPECTROGRAM_MAX_FRAME)
        .min(instants.max(2).next_power_of_two() / 2)
        .max(2);
    let hop = (instants.saturating_sub(frame_len) / SPECTROGRAM_COLUMNS).max(1);
    let spectrum = short_time_spectrum(
        input.samples,
        input.channels,
        input.sample_rate_hz,
        frame_len,
        hop,
    )
    .map_err(|e| ExplainError::Picture(format!("spectrogram: {e}")))?;
    let clip = |i: &Interval| (i.start_s().max(0.0), i.end_s().min(duration_s));
    let mut marks: Vec<Marked> = input
        .events
        .iter()
        .map(|e| (clip(e), "event".to_string(), true))
        .chain(
            input
                .nuisances
                .iter()
                .map(|(i, source)| (clip(i), source.clone(), false)),
        )
        .filter(|((start, end), _, _)| end >= start)
        .map(|((start_s, end_s), label, is_target)| Marked {
            start_s,
            end_s,
            label,
            is_target,
        })
        .collect();
    marks.sort_by(|a, b| a.start_s.total_cmp(&b.start_s));
    let options = SpectrogramOptions {
        frame_len,
        hop,
        max_hz: input.max_hz.filter(|&f| f < nyquist_hz),
        dynamic_range_db: SPECTROGRAM_RANGE_DB,
        title: input.spectrogram_title.to_string(),
        size_px: (WIDTH as u32, SPECTROGRAM_H as u32),
    };
    draw_picture(&spectrum, &marks, &options).map_err(|e| ExplainError::Picture(e.to_string()))
}

fn text(out: &mut Svg, x: f64, y: f64, size: f64, colour: &str, anchor: &str, body: &str) {
    out.tag("text")
        .px("x", x)
        .px("y", y)
        .attr("font-size", size)
        .attr("fill", colour)
        .attr("text-anchor", anchor)
        .content(body);
}

/// Text with a white halo, readable over the alarm bars.
fn halo_text(out: &mut Svg, x: f64, y: f64, colour: &str, body: &str) {
    out.tag("text")
        .px("x", x)
        .px("y", y)
        .attr("font-size", 11)
        .attr("fill", colour)
        .attr("stroke", "#ffffff")
        .attr("stroke-width", 3)
        .attr("paint-order", "stroke")
        .content(body);
}

#[allow(clippy::too_many_arguments)]
fn rect(out: &mut Svg, class: &str, x: f64, y: f64, w: f64, h: f64, fill: &str, stroke: &str) {
    out.tag("rect")
        .attr("class", class)
        .px("x", x)
        .px("y", y)
        .px("width", w.max(1.0))
        .px("height", h)
        .attr("fill", fill)
        .attr("stroke", stroke)
        .end();
}

/// A line from (`x1`, `y1`) to (`x2`, `y2`), px; stroke and the rest follow on the tag.
fn line(out: &mut Svg, (x1, y1): (f64, f64), (x2, y2): (f64, f64)) -> Tag<'_> {
    out.tag("line")
        .px("x1", x1)
        .px("y1", y1)
        .px("x2", x2)
        .px("y2", y2)
}

/// The score axis: linear, or logarithmic when the positive scores span over three decades;
/// it covers every finite score, and the threshold when it is near them. Returns the axis and
/// whether the threshold lies above (`Some(true)`) or below (`Some(false)`) it.
fn score_axis(scores: &[Score], threshold: f64) -> Option<(Axis, Option<bool>)> {
    let finite: Vec<f64> = scores
        .iter()
        .map(|s| s.value)
        .filter(|v| v.is_finite())
        .collect();
    let lo = finite.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = finite.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if finite.is_empty() {
        return None;
    }
    let log = lo > 0.0 && hi / lo > 1e3;
    let near = if log {
        threshold > 0.0 && threshold >= lo / 100.0 && threshold <= hi * 100.0
    } else {
        let span = (hi - lo).max(hi.abs().max(1e-12) * 0.1);
        threshold >= lo - span && threshold <= hi + span
    };
    let (lo, hi) = if near && threshold.is_finite() {
        (lo.min(threshold), hi.max(threshold))
    } else {
        (lo, hi)
    };
    let axis = if log {
        Axis::log("score", lo, hi, false)
    } else {
        let pad = (hi - lo) * 0.06;
        Axis::linear("score", lo - pad, hi + pad)
    };
    let off = if near || threshold.is_nan() {
        None
    } else {
        Some(threshold > hi)
    };
    Some((axis, off))
}

/// Draws the whole picture.
pub(crate) fn draw(input: &PictureInput<'_>) -> Result<String, ExplainError> {
    let duration_s = input.truth.duration_s();
    if !(duration_s.is_finite() && duration_s > 0.0) {
        return Err(ExplainError::Picture(format!(
            "the trial lasts {duration_s} s: nothing to draw"
        )));
    }
    let spectrogram = spectrogram(input, duration_s)?;
    let nested = spectrogram.nested(f64::from(HEADER_H), "spectrogram", input.id_suffix);
    let area = spectrogram.plot_area();
    let (x0, x1) = (area.left, area.right());
    let frame = Frame { x0, x1, duration_s };

    // Lanes under the score panel.
    let mut sources: Vec<&str> = Vec::new();
    for (_, source) in input.nuisances {
        if !sources.contains(&source.as_str()) {
            sources.push(source);
        }
    }
    let nuisance_lanes = sources.len().min(MAX_NUISANCE_LANES + 1);
    let lane_of = |source: &str| {
        sources
            .iter()
            .position(|s| *s == source)
            .unwrap_or(0)
            .min(MAX_NUISANCE_LANES)
    };
    let still = input.truth.ignored();
    let score_top = f64::from(HEADER_H + SPECTROGRAM_H + 6);
    let score_bottom = score_top + f64::from(SCORE_H);
    let alarm_top = score_bottom + 8.0;
    let event_top = alarm_top + f64::from(ALARM_LANE_H) + 4.0;
    let still_top = event_top + f64::from(EVENT_LANE_H) + 4.0;
    let nuisance_top = still_top
        + if still.is_empty() {
            0.0
        } else {
            f64::from(LANE_H) + 4.0
        };
    let lanes_bottom = nuisance_top + nuisance_lanes as f64 * f64::from(LANE_H + 3);
    let axis_y = lanes_bottom + 4.0;
    let legend = legend_rows();
    let legend_y = axis_y + 48.0;
    let height = (legend_y + 18.0 * legend.len() as f64).ceil() as i32;

    let mut out = Svg::new();
    out.tag("svg")
        .attr("xmlns", SVG_NAMESPACE)
        .attr("class", "plot explain")
        .view_box(WIDTH, height)
        .attr("font-family", "sans-serif")
        .attr("role", "img")
        .open();
    out.tag("title").content(input.headline);
    out.tag("rect")
        .attr("x", 0)
        .attr("y", 0)
        .attr("width", WIDTH)
        .attr("height", height)
        .attr("fill", "#ffffff")
        .end();
    // Header.
    out.tag("text")
        .attr("class", "headline")
        .attr("x", 14)
        .attr("y", 22)
        .attr("font-size", 17)
        .attr("font-weight", "bold")
        .attr("fill", "#1a1a1a")
        .content(input.headline);
    text(&mut out, 14.0, 41.0, 12.5, MUTED, "start", input.facts[0]);
    text(&mut out, 14.0, 58.0, 12.5, MUTED, "start", input.facts[1]);
    out.append(&nested);

    // Time grid through every panel.
    let ticks = linear_ticks(0.0, duration_s, 10);
    for tick in &ticks {
        let x = frame.x(tick.value);
        line(&mut out, (x, score_top), (x, lanes_bottom))
            .attr("stroke", GRID)
            .end();
    }

    // Score panel.
    rect(
        &mut out,
        "score-panel",
        x0,
        score_top,
        x1 - x0,
        score_bottom - score_top,
        "none",
        "#000000",
    );
    for &(start, end) in &input.alarms.on {
        let (a, b) = (frame.x(start), frame.x(end));
        out.tag("rect")
            .attr("class", "alarm-on-shade")
            .px("x", a)
            .px("y", score_top)
            .px("width", (b - a).max(0.5))
            .attr("height", SCORE_H)
            .attr("fill", ALARM_ON)
            .attr("fill-opacity", 0.18)
            .end();
    }
    out.upright_text_at(x0 - 70.0, (score_top + score_bottom) / 2.0, 0.0, 13.0)
        .attr("fill", "#1a1a1a")
        .content("score");
    match score_axis(input.scores, input.threshold) {
        None => text(
            &mut out,
            (x0 + x1) / 2.0,
            (score_top + score_bottom) / 2.0,
            13.0,
            MUTED,
            "middle",
            "no finite score in this trial",
        ),
        Some((axis, off)) => {
            let y_of = |v: f64| {
                axis.fraction(v)
                    .map(|f| score_bottom - f.clamp(-0.02, 1.02) * f64::from(SCORE_H))
            };
            let axis_ticks = match axis.scale {
                Scale::Linear => linear_ticks(axis.min, axis.max, 5),
                Scale::Log { .. } => axis
                    .ticks()
                    .into_iter()
                    .filter(|t| !t.label.is_empty())
                    .collect(),
            };
            for tick in axis_ticks {
                if let Some(y) = y_of(tick.value) {
                    line(&mut out, (x0 - 4.0, y), (x0, y))
                        .attr("stroke", "#000000")
                        .end();
                    text(
                        &mut out,
                        x0 - 6.0,
                        y + 4.0,
                        11.0,
                        "#1a1a1a",
                        "end",
                        &tick.label,
                    );
                }
            }
            // The trace: per pixel column the smallest and largest score, so a one-frame peak
            // survives at any trial length.
            let mut path = String::new();
            let mut column: Option<(i64, f64, f64)> = None;
            let mut pen_down = false;
            let flush = |path: &mut String, c: (i64, f64, f64), pen_down: &mut bool| {
                let x = c.0 as f64 + 0.5;
                let _ = write!(
                    path,
                    "{}{x:.1},{:.1}",
                    if *pen_down { "L" } else { "M" },
                    c.2
                );
                if c.1 != c.2 {
                    let _ = write!(path, "L{x:.1},{:.1}", c.1);
                }
                *pen_down = true;
            };
            for s in input.scores {
                let y = if s.t_s.is_finite() {
                    y_of(s.value)
                } else {
                    None
                };
                let Some(y) = y else {
                    if let Some(c) = column.take() {
                        flush(&mut path, c, &mut pen_down);
                    }
                    pen_down = false;
                    continue;
                };
                let px = frame.x(s.t_s).floor() as i64;
                column = match column {
                    Some((c, low, high)) if c == px => Some((c, low.max(y), high.min(y))),
                    Some(c) => {
                        flush(&mut path, c, &mut pen_down);
                        Some((px, y, y))
                    }
                    None => Some((px, y, y)),
                };
            }
            if let Some(c) = column {
                flush(&mut path, c, &mut pen_down);
            }
            out.tag("path")
                .attr("class", "score-trace data")
                .attr("d", path)
                .attr("fill", "none")
                .attr("stroke", SCORE)
                .attr("stroke-width", 1.2)
                .attr("stroke-linejoin", "round")
                .end();
            // The threshold.
            let threshold_y = match off {
                None => y_of(input.threshold),
                Some(true) => Some(score_top),
                Some(false) => Some(score_bottom),
            };
            if let Some(y) = threshold_y {
                out.tag("line")
                    .attr("class", "threshold")
                    .px("x1", x0)
                    .px("y1", y)
                    .px("x2", x1)
                    .px("y2", y)
                    .attr("stroke", THRESHOLD)
                    .attr("stroke-width", 1.6)
                    .attr("stroke-dasharray", "7 4")
                    .end();
                text(
                    &mut out,
                    x1 + 6.0,
                    y - 2.0,
                    12.0,
                    THRESHOLD,
                    "start",
                    "threshold",
                );
                let value = format_number(input.threshold, 4);
                let note = match off {
                    None => value,
                    Some(true) => format!("{value} (above)"),
                    Some(false) => format!("{value} (below)"),
                };
                text(
                    &mut out,
                    x1 + 6.0,
                    y + 12.0,
                    11.0,
                    THRESHOLD,
                    "start",
                    &note,
                );
            }
        }
    }

    // Alarm lane: condition on, the hold after each counted alarm, then the onsets.
    let lane_label = |out: &mut Svg, y: f64, h: f64, label: &str| {
        let mut label: String = label.chars().filter(|c| !c.is_control()).collect();
        if label.chars().count() > 13 {
            label = label.chars().take(12).collect::<String>() + "…";
        }
        text(
            out,
            x0 - 8.0,
            y + h / 2.0 + 4.0,
            11.5,
            "#1a1a1a",
            "end",
            &label,
        );
    };
    let lane_h = f64::from(ALARM_LANE_H);
    lane_label(&mut out, alarm_top, lane_h, "alarm");
    rect(
        &mut out,
        "lane",
        x0,
        alarm_top,
        x1 - x0,
        lane_h,
        "#f6f6f6",
        "none",
    );
    for &(start, end) in &input.alarms.on {
        let (a, b) = (frame.x(start), frame.x(end));
        rect(
            &mut out,
            "alarm-on",
            a,
            alarm_top + 10.0,
            b - a,
            12.0,
            ALARM_ON,
            "none",
        );
    }
    // Onsets inside a hold are not counted: the hold is drawn so that a miss it causes shows.
    for mark in &input.alarms.marks {
        if matches!(mark.kind, MarkKind::Suppressed | MarkKind::Retrigger) {
            continue;
        }
        let (a, b) = (frame.x(mark.t_s), frame.x(mark.t_s + input.hold_s));
        let y = alarm_top + 4.0;
        out.tag("path")
            .attr("class", "alarm-hold")
            .attr(
                "d",
                format_args!(
                    "M{a:.1},{:.1}L{a:.1},{y:.1}L{b:.1},{y:.1}L{b:.1},{:.1}",
                    y + 4.0,
                    y + 4.0
                ),
            )
            .attr("fill", "none")
            .attr("stroke", MUTED)
            .attr("stroke-width", 1.2)
            .end();
    }
    let mid = alarm_top + 16.0;
    let mut label_end = f64::NEG_INFINITY;
    for mark in &input.alarms.marks {
        let x = frame.x(mark.t_s);
        let (class, shape, label) = match &mark.kind {
            MarkKind::Detection { latency_s } => (
                "alarm-detection",
                format!(
                    "M{x:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}Z",
                    mid - 8.0,
                    x - 7.0,
                    mid + 6.0,
                    x + 7.0,
                    mid + 6.0
                ),
                Some(format!(
                    "detected {}{} s",
                    if *latency_s >= 0.0 { "+" } else { "" },
                    format_number(*latency_s, 3)
                )),
            ),
            MarkKind::FalseAlarm { stuck, sources } => (
                "alarm-false",
                format!(
                    "M{:.1},{:.1}L{:.1},{:.1}M{:.1},{:.1}L{:.1},{:.1}",
                    x - 6.0,
                    mid - 6.0,
                    x + 6.0,
                    mid + 6.0,
                    x - 6.0,
                    mid + 6.0,
                    x + 6.0,
                    mid - 6.0
                ),
                Some(format!(
                    "false alarm{}{}",
                    if *stuck { ", still on" } else { "" },
                    if sources.is_empty() {
                        String::new()
                    } else {
                        format!(" ({})", sources.join(", "))
                    }
                )),
            ),
            MarkKind::Retrigger => (
                "alarm-retrigger",
                format!(
                    "M{x:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}Z",
                    mid - 5.0,
                    x - 4.0,
                    mid + 4.0,
                    x + 4.0,
                    mid + 4.0
                ),
                None,
            ),
            MarkKind::Ignored => (
                "alarm-ignored",
                format!("M{:.1},{mid:.1}a4,4 0 1,0 8,0a4,4 0 1,0 -8,0", x - 4.0),
                None,
            ),
            MarkKind::Suppressed => (
                "alarm-suppressed",
                format!("M{x:.1},{:.1}L{x:.1},{:.1}", mid - 7.0, mid + 7.0),
                None,
            ),
        };
        let (colour, fill, width) = match &mark.kind {
            MarkKind::Detection { .. } => (DETECTION, DETECTION, 1.0),
            MarkKind::FalseAlarm { .. } => (FALSE_ALARM, "none", 2.4),
            MarkKind::Retrigger => (DETECTION, "none", 1.2),
            _ => ("#333333", "none", 1.6),
        };
        out.tag("path")
            .attr("class", class)
            .attr("d", shape)
            .attr("fill", fill)
            .attr("stroke", colour)
            .attr("stroke-width", width)
            .end();
        if matches!(
            mark.kind,
            MarkKind::Detection { .. } | MarkKind::FalseAlarm { .. }
        ) {
            // A guide across the score panel, so the onset can be read against the trace.
            out.tag("line")
                .attr("class", format_args!("{class}-guide"))
                .px("x1", x)
                .px("y1", score_top)
                .px("x2", x)
                .px("y2", score_bottom)
                .attr("stroke", colour)
                .attr("stroke-dasharray", "2 3")
                .end();
        }
        if let Some(label) = label {
            // Right of the mark, or left of it near the right edge; never over the previous
            // label.
            let width = text_width(&label, 11.0);
            let start = if x + 9.0 + width < f64::from(WIDTH) - 10.0 {
                x + 9.0
            } else {
                x - 9.0 - width
            };
            if start > label_end + 6.0 {
                halo_text(&mut out, start, mid + 4.0, colour, &label);
                label_end = start + width;
            }
        }
    }

    // Events: the matching window, the truth event in it, and whether it was detected.
    lane_label(&mut out, event_top, f64::from(EVENT_LANE_H), "events");
    rect(
        &mut out,
        "lane",
        x0,
        event_top,
        x1 - x0,
        f64::from(EVENT_LANE_H),
        "#f6f6f6",
        "none",
    );
    let latencies = &input.alarms.score.detection_latency_s;
    for (i, matched) in input.truth.events().iter().enumerate() {
        let w = matched.window;
        if w.end_s() < 0.0 || w.start_s() > duration_s {
            continue;
        }
        let (a, b) = (frame.x(w.start_s()), frame.x(w.end_s()));
        let missed = latencies.get(i).is_some_and(Option::is_none);
        rect(
            &mut out,
            "truth-window",
            a,
            event_top + 1.0,
            b - a,
            f64::from(EVENT_LANE_H) - 2.0,
            WINDOW_FILL,
            if missed { FALSE_ALARM } else { WINDOW_EDGE },
        );
        let status = if missed { "missed" } else { "detected" };
        let class = if missed {
            "event-missed"
        } else {
            "event-detected"
        };
        out.tag("text")
            .attr("class", class)
            .px("x", a + 3.0)
            .px("y", event_top + f64::from(EVENT_LANE_H) - 4.0)
            .attr("font-size", 11)
            .attr("fill", if missed { FALSE_ALARM } else { DETECTION })
            .content(status);
    }
    for e in input.events {
        if e.end_s() < 0.0 || e.start_s() > duration_s {
            continue;
        }
        let (a, b) = (frame.x(e.start_s()), frame.x(e.end_s()));
        rect(
            &mut out,
            "truth-event",
            a,
            event_top + 4.0,
            b - a,
            7.0,
            EVENT,
            "none",
        );
    }
    // Present, not moving.
    if !still.is_empty() {
        lane_label(&mut out, still_top, f64::from(LANE_H), "not moving");
        rect(
            &mut out,
            "lane",
            x0,
            still_top,
            x1 - x0,
            f64::from(LANE_H),
            "#f6f6f6",
            "none",
        );
        for s in still {
            let (a, b) = (frame.x(s.start_s()), frame.x(s.end_s()));
            rect(
                &mut out,
                "truth-still",
                a,
                still_top + 2.0,
                b - a,
                f64::from(LANE_H) - 4.0,
                STILL_FILL,
                STILL_EDGE,
            );
        }
    }
    // Nuisance activity, one lane per source (the rest share the last).
    for (lane, source) in sources.iter().take(nuisance_lanes).enumerate() {
        let y = nuisance_top + lane as f64 * f64::from(LANE_H + 3);
        let label = if lane == MAX_NUISANCE_LANES {
            "others"
        } else {
            source
        };
        lane_label(&mut out, y, f64::from(LANE_H), label);
        rect(
            &mut out,
            "lane",
            x0,
            y,
            x1 - x0,
            f64::from(LANE_H),
            "#f6f6f6",
            "none",
        );
    }
    for (interval, source) in input.nuisances {
        if interval.end_s() < 0.0 || interval.start_s() > duration_s {
            continue;
        }
        let y = nuisance_top + lane_of(source) as f64 * f64::from(LANE_H + 3);
        let (a, b) = (frame.x(interval.start_s()), frame.x(interval.end_s()));
        rect(
            &mut out,
            "truth-nuisance",
            a,
            y + 2.0,
            b - a,
            f64::from(LANE_H) - 4.0,
            NUISANCE_FILL,
            NUISANCE_EDGE,
        );
    }

    // Time axis.
    line(&mut out, (x0, axis_y), (x1, axis_y))
        .attr("stroke", "#000000")
        .end();
    for tick in &ticks {
        let x = frame.x(tick.value);
        line(&mut out, (x, axis_y), (x, axis_y + 4.0))
            .attr("stroke", "#000000")
            .end();
        text(
            &mut out,
            x,
            axis_y + 16.0,
            11.0,
            "#1a1a1a",
            "middle",
            &tick.label,
        );
    }
    text(
        &mut out,
        (x0 + x1) / 2.0,
        axis_y + 32.0,
        12.5,
        "#1a1a1a",
        "middle",
        "Time (s)",
    );

    // Legend.
    for (row, entries) in legend.iter().enumerate() {
        let y = legend_y + 18.0 * row as f64;
        for entry in entries {
            legend_swatch(&mut out, entry, y);
            text(
                &mut out,
                entry.x + 20.0,
                y + 4.0,
                11.0,
                "#1a1a1a",
                "start",
                entry.label,
            );
        }
    }
    out.close("svg");
    Ok(format!("{out}\n"))
}

/// One legend entry, placed.
struct LegendEntry {
    kind: &'static str,
    colour: &'static str,
    label: &'static str,
    x: f64,
}

/// The small drawing of a legend entry at height `y`.
fn legend_swatch(out: &mut Svg, entry: &LegendEntry, y: f64) {
    let (x, colour) = (entry.x, entry.colour);
    fn path(out: &mut Svg, d: String) -> Tag<'_> {
        out.tag("path").attr("d", d)
    }
    /// The 16 × 10 px box of a lane's legend entry.
    fn swatch(out: &mut Svg, x: f64, y: f64) -> Tag<'_> {
        out.tag("rect")
            .px("x", x)
            .px("y", y - 5.0)
            .attr("width", 16)
            .attr("height", 10)
    }
    match entry.kind {
        "line" => line(out, (x, y), (x + 16.0, y))
            .attr("stroke", colour)
            .attr("stroke-width", 1.4)
            .end(),
        "dash" => line(out, (x, y), (x + 16.0, y))
            .attr("stroke", colour)
            .attr("stroke-width", 1.6)
            .attr("stroke-dasharray", "5 3")
            .end(),
        "hold" => path(
            out,
            format!(
                "M{x:.1},{:.1}L{x:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}",
                y + 4.0,
                y - 3.0,
                x + 16.0,
                y - 3.0,
                x + 16.0,
                y + 4.0
            ),
        )
        .attr("fill", "none")
        .attr("stroke", colour)
        .attr("stroke-width", 1.2)
        .end(),
        "tick" => path(
            out,
            format!(
                "M{:.1},{:.1}L{:.1},{:.1}",
                x + 8.0,
                y - 6.0,
                x + 8.0,
                y + 6.0
            ),
        )
        .attr("stroke", colour)
        .attr("stroke-width", 1.6)
        .end(),
        "triangle" => path(
            out,
            format!(
                "M{:.1},{:.1}L{:.1},{:.1}L{:.1},{:.1}Z",
                x + 8.0,
                y - 6.0,
                x + 2.0,
                y + 5.0,
                x + 14.0,
                y + 5.0
            ),
        )
        .attr("fill", colour)
        .end(),
        "cross" => path(
            out,
            format!(
                "M{:.1},{:.1}L{:.1},{:.1}M{:.1},{:.1}L{:.1},{:.1}",
                x + 3.0,
                y - 5.0,
                x + 13.0,
                y + 5.0,
                x + 3.0,
                y + 5.0,
                x + 13.0,
                y - 5.0
            ),
        )
        .attr("stroke", colour)
        .attr("stroke-width", 2)
        .end(),
        "window" => {
            swatch(out, x, y)
                .attr("fill", WINDOW_FILL)
                .attr("stroke", WINDOW_EDGE)
                .end();
            out.tag("rect")
                .px("x", x + 4.0)
                .px("y", y - 2.0)
                .attr("width", 8)
                .attr("height", 4)
                .attr("fill", colour)
                .end();
        }
        "still" => swatch(out, x, y)
            .attr("fill", STILL_FILL)
            .attr("stroke", colour)
            .end(),
        "nuisance" => swatch(out, x, y)
            .attr("fill", NUISANCE_FILL)
            .attr("stroke", colour)
            .end(),
        _ => swatch(out, x, y)
            .attr("fill", colour)
            .attr("stroke", "none")
            .end(),
    }
}

/// The legend's entries, laid out in rows that fit the picture's width.
fn legend_rows() -> Vec<Vec<LegendEntry>> {
    let entries: [(&str, &str, &str); 10] = [
        ("line", SCORE, "score"),
        ("dash", THRESHOLD, "threshold"),
        ("bar", ALARM_ON, "alarm condition on"),
        ("hold", MUTED, "hold after a counted alarm"),
        ("tick", "#333333", "onset within a hold (not counted)"),
        ("triangle", DETECTION, "detection"),
        ("cross", FALSE_ALARM, "false alarm"),
        ("window", EVENT, "event in its matching window"),
        ("still", STILL_EDGE, "present, not moving (ignored)"),
        ("nuisance", NUISANCE_EDGE, "nuisance active"),
    ];
    let mut rows: Vec<Vec<LegendEntry>> = vec![Vec::new()];
    let mut x = 14.0;
    for (kind, colour, label) in entries {
        let width = 20.0 + text_width(label, 11.0) + 16.0;
        if x + width > f64::from(WIDTH) - 10.0 {
            rows.push(Vec::new());
            x = 14.0;
        }
        if let Some(row) = rows.last_mut() {
            row.push(LegendEntry {
                kind,
                colour,
                label,
                x,
            });
        }
        x += width;
    }
    rows
}
