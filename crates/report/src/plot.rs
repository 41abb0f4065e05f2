//! Hand-written SVG plot primitives: axes (linear and logarithmic), line and marker charts, and
//! horizontal bar charts, each rendered to a self-contained `<svg>` string.
//!
//! Every element that carries data has the class `data` (lines, markers, bars); axes, grid,
//! labels and error bars do not. The report's browser self-check and the tests use that class
//! to tell a plot that drew something from one that only drew its frame. A chart with nothing
//! to draw says so in words and carries `class="plot empty"`.
//!
//! Layout uses a fixed estimate of the width of sans-serif text (0.6 em per character), which
//! is enough to keep labels apart without knowing which font the viewer picks.

use std::fmt::Write as _;

/// Escapes text for HTML and SVG, both in element content and in quoted attributes.
///
/// ```
/// assert_eq!(echobench_report::plot::escape("a<b & \"c\"'"), "a&lt;b &amp; &quot;c&quot;&#39;");
/// ```
pub fn escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            // Control characters other than tab and newline are not allowed in HTML text.
            c if c.is_control() && c != '\n' && c != '\t' => out.push('\u{FFFD}'),
            c => out.push(c),
        }
    }
    out
}

/// Formats a number with `significant` significant digits, plainly for magnitudes in
/// [10⁻⁴, 10⁶) and in exponent form outside; never prints `-0`, and prints `—` for NaN.
///
/// ```
/// use echobench_report::plot::format_number;
/// assert_eq!(format_number(13.6138, 3), "13.6");
/// assert_eq!(format_number(0.0416667, 3), "0.0417");
/// assert_eq!(format_number(2.5e-7, 2), "2.5e-7");
/// assert_eq!(format_number(-0.0, 3), "0");
/// ```
pub fn format_number(value: f64, significant: usize) -> String {
    if value.is_nan() {
        return "—".into();
    }
    if value.is_infinite() {
        return if value > 0.0 {
            "∞".into()
        } else {
            "−∞".into()
        };
    }
    if value == 0.0 {
        return "0".into();
    }
    let significant = significant.clamp(1, 15);
    let magnitude = value.abs().log10().floor() as i32;
    if !(-4..6).contains(&magnitude) {
        let text = format!("{:.*e}", significant - 1, value);
        // Rust writes `2.50e-7`; drop trailing zeros of the mantissa.
        if let Some((mantissa, exponent)) = text.split_once('e') {
            let mantissa = trim_zeros(mantissa);
            return format!("{mantissa}e{exponent}");
        }
        return text;
    }
    let decimals = (significant as i32 - 1 - magnitude).max(0) as usize;
    let text = format!("{value:.decimals$}");
    let text = trim_zeros(&text);
    if text == "-0" {
        "0".into()
    } else {
        text
    }
}

fn trim_zeros(text: &str) -> String {
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text.to_string()
    }
}

/// A tick on an axis: major ticks carry a label, minor ticks an empty one.
#[derive(Debug, Clone, PartialEq)]
pub struct Tick {
    /// Where, in data units.
    pub value: f64,
    /// Its label; empty for a minor tick.
    pub label: String,
}

/// How data values map onto an axis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Scale {
    /// Evenly spaced values.
    Linear,
    /// Logarithmic (base 10). With `zero_edge`, values ≤ 0 are drawn at a marked position left
    /// of (or below) the smallest decade, since a log axis cannot show zero.
    Log {
        /// Whether zero gets its own marked place at the edge.
        zero_edge: bool,
    },
}

/// Share of a log axis with a zero edge that the zero position and the break take.
pub const ZERO_EDGE_SHARE: f64 = 0.08;

/// A plot axis: a label, a range and a scale.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// Label, with its unit.
    pub label: String,
    /// Smallest value shown (for a log axis, the smallest positive value).
    pub min: f64,
    /// Largest value shown.
    pub max: f64,
    /// Linear or logarithmic.
    pub scale: Scale,
    /// Ticks to use instead of the computed ones (e.g. the names of categories).
    pub custom_ticks: Option<Vec<Tick>>,
}

impl Axis {
    /// A linear axis over `[min, max]`. Non-finite ends fall back to `[0, 1]`; an empty range
    /// is widened around its value, so the axis is always drawable.
    pub fn linear(label: &str, min: f64, max: f64) -> Axis {
        let (mut min, mut max) = if min.is_finite() && max.is_finite() {
            (min.min(max), min.max(max))
        } else {
            (0.0, 1.0)
        };
        if max - min <= f64::EPSILON * max.abs().max(1.0) {
            let half = if min == 0.0 { 0.5 } else { min.abs() * 0.1 };
            min -= half;
            max += half;
        }
        Axis {
            label: label.to_string(),
            min,
            max,
            scale: Scale::Linear,
            custom_ticks: None,
        }
    }

    /// A log axis covering `[min_positive, max]`, widened to whole decades (at least one).
    /// Non-positive or non-finite ends fall back to one decade either side of the other end,
    /// or to `[0.1, 10]`.
    pub fn log(label: &str, min_positive: f64, max: f64, zero_edge: bool) -> Axis {
        let usable = |x: f64| x.is_finite() && x > 0.0;
        let (low, high) = match (usable(min_positive), usable(max)) {
            (true, true) => (min_positive.min(max), min_positive.max(max)),
            (true, false) => (min_positive, min_positive * 10.0),
            (false, true) => (max / 10.0, max),
            (false, false) => (0.1, 10.0),
        };
        let mut low_decade = low.log10().floor();
        let mut high_decade = high.log10().ceil();
        // Guard against rounding just above a decade (log10(1000) = 2.9999999999999996).
        if (10f64.powf(low_decade + 1.0) - low).abs() <= low * 1e-12 {
            low_decade += 1.0;
        }
        if (high - 10f64.powf(high_decade - 1.0)).abs() <= high * 1e-12 {
            high_decade -= 1.0;
        }
        if high_decade <= low_decade {
            high_decade = low_decade + 1.0;
        }
        Axis {
            label: label.to_string(),
            min: 10f64.powf(low_decade),
            max: 10f64.powf(high_decade),
            scale: Scale::Log { zero_edge },
            custom_ticks: None,
        }
    }

    /// Position of `value` along the axis as a fraction of its length, 0 at `min`, 1 at `max`
    /// (outside values fall outside [0, 1]). `None` for NaN, and for values ≤ 0 on a log axis
    /// without a zero edge. On a log axis with a zero edge, values ≤ 0 are at 0 and the
    /// decades fill [[`ZERO_EDGE_SHARE`], 1].
    pub fn fraction(&self, value: f64) -> Option<f64> {
        if value.is_nan() {
            return None;
        }
        match self.scale {
            Scale::Linear => Some((value - self.min) / (self.max - self.min)),
            Scale::Log { zero_edge } => {
                let start = if zero_edge { ZERO_EDGE_SHARE } else { 0.0 };
                if value <= 0.0 {
                    return zero_edge.then_some(0.0);
                }
                let (low, high) = (self.min.log10(), self.max.log10());
                Some(start + (1.0 - start) * (value.log10() - low) / (high - low))
            }
        }
    }

    /// The axis's ticks, major (labelled) and minor.
    pub fn ticks(&self) -> Vec<Tick> {
        if let Some(custom) = &self.custom_ticks {
            return custom.clone();
        }
        match self.scale {
            Scale::Linear => linear_ticks(self.min, self.max, 6),
            Scale::Log { zero_edge } => {
                let mut ticks = log_ticks(self.min, self.max);
                if zero_edge {
                    ticks.insert(
                        0,
                        Tick {
                            value: 0.0,
                            label: "0".into(),
                        },
                    );
                }
                ticks
            }
        }
    }
}

/// The "nice" step (1, 2 or 5 × 10ᵏ) nearest above `raw` (Heckbert, "Nice numbers for graph
/// labels", Graphics Gems, 1990). Returns 1 for a non-positive or non-finite `raw`.
pub fn nice_step(raw: f64) -> f64 {
    if !(raw.is_finite() && raw > 0.0) {
        return 1.0;
    }
    let exponent = raw.log10().floor();
    let base = 10f64.powf(exponent);
    let fraction = raw / base;
    let nice = if fraction <= 1.0 + 1e-9 {
        1.0
    } else if fraction <= 2.0 + 1e-9 {
        2.0
    } else if fraction <= 5.0 + 1e-9 {
        5.0
    } else {
        10.0
    };
    nice * base
}

/// Labelled ticks at a nice step over `[min, max]`, about `approx_count` of them, each label
/// with just enough decimals for the step.
pub fn linear_ticks(min: f64, max: f64, approx_count: usize) -> Vec<Tick> {
    if !(min.is_finite() && max.is_finite()) || max <= min {
        return Vec::new();
    }
    let step = nice_step((max - min) / approx_count.max(2) as f64);
    let decimals = (-step.log10().floor()).max(0.0) as usize;
    let first = (min / step - 1e-9).ceil() as i64;
    let last = (max / step + 1e-9).floor() as i64;
    (first..=last)
        .map(|i| {
            let value = i as f64 * step;
            let mut label = format!("{value:.decimals$}");
            if label.starts_with('-') && label.trim_start_matches(['-', '0', '.']).is_empty() {
                label = label[1..].to_string();
            }
            Tick { value, label }
        })
        .collect()
}

fn superscript(exponent: i32) -> String {
    exponent
        .to_string()
        .chars()
        .map(|c| match c {
            '-' => '⁻',
            '0' => '⁰',
            '1' => '¹',
            '2' => '²',
            '3' => '³',
            '4' => '⁴',
            '5' => '⁵',
            '6' => '⁶',
            '7' => '⁷',
            '8' => '⁸',
            _ => '⁹',
        })
        .collect()
}

fn decade_label(exponent: i32) -> String {
    if (-4..=4).contains(&exponent) {
        format_number(10f64.powi(exponent), 1)
    } else {
        format!("10{}", superscript(exponent))
    }
}

/// Ticks of a log axis over `[min, max]` (both > 0): every decade labelled (every second or
/// more over very wide ranges), minor ticks at 2–9 × 10ᵏ, and 2 and 5 labelled too when the
/// range spans at most two decades. Empty for a range that is not positive.
pub fn log_ticks(min: f64, max: f64) -> Vec<Tick> {
    if !(min > 0.0 && max > min && max.is_finite()) {
        return Vec::new();
    }
    // Tolerances so that an exact decade (log10 = 2.0000000000000004) is not a decade more.
    let low = (min.log10() + 1e-9).floor() as i32;
    let high = (max.log10() - 1e-9).ceil() as i32;
    let decades = high - low;
    let label_every = ((decades + 7) / 8).max(1);
    let in_range = |v: f64| v >= min * (1.0 - 1e-9) && v <= max * (1.0 + 1e-9);
    let mut ticks = Vec::new();
    for exponent in low..=high {
        let decade = 10f64.powi(exponent);
        if in_range(decade) {
            let labelled = (exponent - low) % label_every == 0;
            ticks.push(Tick {
                value: decade,
                label: if labelled {
                    decade_label(exponent)
                } else {
                    String::new()
                },
            });
        }
        if decades <= 12 {
            for m in 2..=9 {
                let value = m as f64 * decade;
                if in_range(value) {
                    let label = if decades <= 2 && (m == 2 || m == 5) {
                        format_number(value, 1)
                    } else {
                        String::new()
                    };
                    ticks.push(Tick { value, label });
                }
            }
        }
    }
    ticks
}

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
const CHAR_EM: f64 = 0.6;
const INK: &str = "#222222";
const GRID: &str = "#d9d9d9";
const REFERENCE: &str = "#6b6b6b";

/// Estimated width of `text` in px at `font_px`.
pub fn text_width(text: &str, font_px: f64) -> f64 {
    text.chars().count() as f64 * font_px * CHAR_EM
}

/// Which way an axis runs on the page.
#[derive(Clone, Copy)]
enum Direction {
    /// The x axis, along the bottom edge.
    Across,
    /// The y axis, up the left edge.
    Up,
}

/// One axis's grid lines (at labelled ticks), tick marks (long where
/// labelled) and labels, inside the frame.
fn draw_ticks(body: &mut String, frame: &Frame, axis: &Axis, direction: Direction) {
    let bottom = frame.top + frame.height;
    for tick in axis.ticks() {
        let (position, low, high) = match direction {
            Direction::Across => (
                frame.x(axis, tick.value),
                frame.left,
                frame.left + frame.width,
            ),
            Direction::Up => (frame.y(axis, tick.value), frame.top, bottom),
        };
        let Some(p) = position else {
            continue;
        };
        if !(low - 0.5..=high + 0.5).contains(&p) {
            continue;
        }
        let major = !tick.label.is_empty();
        let tick_len = if major { 6.0 } else { 3.0 };
        let line = |body: &mut String, (x1, y1, x2, y2): (f64, f64, f64, f64), colour: &str| {
            let _ = write!(
                body,
                "<line x1=\"{x1:.1}\" y1=\"{y1:.1}\" x2=\"{x2:.1}\" y2=\"{y2:.1}\" stroke=\"{colour}\" stroke-width=\"1\"/>"
            );
        };
        match direction {
            Direction::Across => {
                if major {
                    line(body, (p, frame.top, p, bottom), GRID);
                }
                line(body, (p, bottom, p, bottom + tick_len), INK);
                if major {
                    body.push_str(&text(p, bottom + 20.0, "middle", FONT_PX, &tick.label, ""));
                }
            }
            Direction::Up => {
                if major {
                    line(body, (frame.left, p, frame.left + frame.width, p), GRID);
                    body.push_str(&text(
                        frame.left - 9.0,
                        p + 4.5,
                        "end",
                        FONT_PX,
                        &tick.label,
                        "",
                    ));
                }
                line(body, (frame.left - tick_len, p, frame.left, p), INK);
            }
        }
    }
}

struct Frame {
    left: f64,
    top: f64,
    width: f64,
    height: f64,
}

impl Frame {
    fn x(&self, axis: &Axis, value: f64) -> Option<f64> {
        axis.fraction(value)
            .map(|f| self.left + f.clamp(-0.02, 1.02) * self.width)
    }
    fn y(&self, axis: &Axis, value: f64) -> Option<f64> {
        axis.fraction(value)
            .map(|f| self.top + (1.0 - f.clamp(-0.02, 1.02)) * self.height)
    }
}

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

fn marker_element(marker: Marker, colour: &str, x: f64, y: f64, size: f64, note: &str) -> String {
    let d = marker_path(marker, x, y, size);
    if d.is_empty() {
        return String::new();
    }
    let title = if note.is_empty() {
        String::new()
    } else {
        format!("<title>{}</title>", escape(note))
    };
    match marker {
        // Strokes only: a cross has no inside to fill.
        Marker::Cross | Marker::Plus => format!(
            "<path class=\"data\" d=\"{d}\" fill=\"none\" stroke=\"{colour}\" stroke-width=\"2.2\">{title}</path>"
        ),
        _ => format!(
            "<path class=\"data\" d=\"{d}\" fill=\"{colour}\" stroke=\"#ffffff\" stroke-width=\"1\">{title}</path>"
        ),
    }
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

fn polyline(points: &[(f64, f64)], style: &Style, width: f64) -> String {
    let thinned = thin(points);
    if thinned.len() < 2 {
        return String::new();
    }
    let mut coordinates = String::new();
    for (i, (x, y)) in thinned.iter().enumerate() {
        if i > 0 {
            coordinates.push(' ');
        }
        let _ = write!(coordinates, "{x:.1},{y:.1}");
    }
    let dash = if style.dashed {
        " stroke-dasharray=\"7 4\""
    } else {
        ""
    };
    format!(
        "<polyline class=\"data\" points=\"{coordinates}\" fill=\"none\" stroke=\"{}\" stroke-width=\"{width}\" stroke-linejoin=\"round\"{dash}/>",
        style.colour
    )
}

fn text(x: f64, y: f64, anchor: &str, size: f64, content: &str, extra: &str) -> String {
    format!(
        "<text x=\"{x:.1}\" y=\"{y:.1}\" text-anchor=\"{anchor}\" font-size=\"{size}\"{extra}>{}</text>",
        escape(content)
    )
}

fn svg_open(width: f64, height: f64, title: &str, empty: Option<&str>) -> String {
    let (class, data) = match empty {
        Some(message) => ("plot empty", format!(" data-empty=\"{}\"", escape(message))),
        None => ("plot", String::new()),
    };
    format!(
        "<svg class=\"{class}\"{data} xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 {width} {height}\" width=\"{width}\" height=\"{height}\" role=\"img\" font-family=\"sans-serif\" fill=\"{INK}\"><title>{}</title>",
        escape(title)
    )
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
    let frame = Frame {
        left: 30.0 + y_tick_width + 10.0,
        top: 16.0,
        width: width - (30.0 + y_tick_width + 10.0) - legend - 16.0,
        height: height - 16.0 - 52.0,
    };
    let mut body = String::new();
    let mut data = String::new();

    // Grid and ticks.
    let _ = write!(
        body,
        "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"#ffffff\" stroke=\"{INK}\" stroke-width=\"1\"/>",
        frame.left, frame.top, frame.width, frame.height
    );
    draw_ticks(&mut body, &frame, &chart.x, Direction::Across);
    draw_ticks(&mut body, &frame, &chart.y, Direction::Up);
    // The break between the zero edge and the first decade.
    if let Scale::Log { zero_edge: true } = chart.x.scale {
        let x = frame.left + frame.width * ZERO_EDGE_SHARE * 0.55;
        let y = frame.top + frame.height;
        let _ = write!(
            body,
            "<rect x=\"{:.1}\" y=\"{:.1}\" width=\"6\" height=\"10\" fill=\"#ffffff\"/><path d=\"M{:.1},{:.1}l4,-10M{:.1},{:.1}l4,-10\" stroke=\"{INK}\" stroke-width=\"1.2\" fill=\"none\"/>",
            x - 3.0,
            y - 5.0,
            x - 5.0,
            y + 5.0,
            x,
            y + 5.0
        );
        let _ = write!(
            body,
            "<line x1=\"{x:.1}\" y1=\"{:.1}\" x2=\"{x:.1}\" y2=\"{:.1}\" stroke=\"{GRID}\" stroke-width=\"1\" stroke-dasharray=\"2 3\"/>",
            frame.top,
            frame.top + frame.height - 6.0
        );
    }
    // Axis labels.
    body.push_str(&text(
        frame.left + frame.width / 2.0,
        height - 10.0,
        "middle",
        14.0,
        &chart.x.label,
        "",
    ));
    let label_x = 16.0;
    let label_y = frame.top + frame.height / 2.0;
    body.push_str(&text(
        label_x,
        label_y,
        "middle",
        14.0,
        &chart.y.label,
        &format!(" transform=\"rotate(-90 {label_x:.1} {label_y:.1})\""),
    ));

    // Reference lines.
    if chart.diagonal {
        let ends = (
            frame.x(&chart.x, chart.x.min.max(chart.y.min)),
            frame.y(&chart.y, chart.x.min.max(chart.y.min)),
            frame.x(&chart.x, chart.x.max.min(chart.y.max)),
            frame.y(&chart.y, chart.x.max.min(chart.y.max)),
        );
        if let (Some(x1), Some(y1), Some(x2), Some(y2)) = ends {
            let _ = write!(
                body,
                "<line x1=\"{x1:.1}\" y1=\"{y1:.1}\" x2=\"{x2:.1}\" y2=\"{y2:.1}\" stroke=\"{REFERENCE}\" stroke-width=\"1\" stroke-dasharray=\"3 3\"/>"
            );
        }
    }
    for (i, line) in chart.vertical_lines.iter().enumerate() {
        let Some(x) = frame.x(&chart.x, line.value) else {
            continue;
        };
        let _ = write!(
            body,
            "<line x1=\"{x:.1}\" y1=\"{:.1}\" x2=\"{x:.1}\" y2=\"{:.1}\" stroke=\"{REFERENCE}\" stroke-width=\"1.5\" stroke-dasharray=\"5 3\"/>",
            frame.top,
            frame.top + frame.height
        );
        // Labels alternate top and a line lower so that two close targets stay legible.
        let y = frame.top + 14.0 + 16.0 * (i % 2) as f64;
        body.push_str(&text(
            x + 4.0,
            y,
            "start",
            12.0,
            &line.label,
            &format!(" fill=\"{REFERENCE}\""),
        ));
    }
    for line in &chart.horizontal_lines {
        let Some(y) = frame.y(&chart.y, line.value) else {
            continue;
        };
        let _ = write!(
            body,
            "<line x1=\"{:.1}\" y1=\"{y:.1}\" x2=\"{:.1}\" y2=\"{y:.1}\" stroke=\"{REFERENCE}\" stroke-width=\"1\" stroke-dasharray=\"5 3\"/>",
            frame.left,
            frame.left + frame.width
        );
        body.push_str(&text(
            frame.left + frame.width - 4.0,
            y - 5.0,
            "end",
            12.0,
            &line.label,
            &format!(" fill=\"{REFERENCE}\""),
        ));
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
                    data.push_str(&polyline(&run, &series.style, 2.0));
                    run.clear();
                }
            }
        }
        data.push_str(&polyline(&run, &series.style, 2.0));
    }
    for series in &chart.series {
        for point in &series.markers {
            let Some((px, py)) = place(point.x, point.y) else {
                continue;
            };
            if let Some((low, high)) = point.y_interval {
                if let (Some(y1), Some(y2)) = (frame.y(&chart.y, low), frame.y(&chart.y, high)) {
                    let _ = write!(
                        body,
                        "<path d=\"M{px:.1},{y1:.1}V{y2:.1}M{:.1},{y1:.1}h8M{:.1},{y2:.1}h8\" stroke=\"{}\" stroke-width=\"1.4\" fill=\"none\"/>",
                        px - 4.0,
                        px - 4.0,
                        series.style.colour
                    );
                }
            }
            if let Some((low, high)) = point.x_interval {
                if let (Some(x1), Some(x2)) = (frame.x(&chart.x, low), frame.x(&chart.x, high)) {
                    let _ = write!(
                        body,
                        "<path d=\"M{x1:.1},{py:.1}H{x2:.1}M{x1:.1},{:.1}v8M{x2:.1},{:.1}v8\" stroke=\"{}\" stroke-width=\"1.4\" fill=\"none\"/>",
                        py - 4.0,
                        py - 4.0,
                        series.style.colour
                    );
                }
            }
        }
    }
    for series in &chart.series {
        for point in &series.markers {
            if let Some((px, py)) = place(point.x, point.y) {
                data.push_str(&marker_element(
                    series.style.marker,
                    &series.style.colour,
                    px,
                    py,
                    10.0,
                    &point.note,
                ));
            }
        }
    }

    let empty = data.is_empty();
    if empty {
        let message = shorten(
            &chart.empty_message,
            (frame.width / (FONT_PX * CHAR_EM)) as usize,
        );
        body.push_str(&text(
            frame.left + frame.width / 2.0,
            frame.top + frame.height / 2.0,
            "middle",
            15.0,
            &message,
            " font-style=\"italic\"",
        ));
    }

    // Legend.
    let mut legend_svg = String::new();
    if legend > 0.0 && !empty {
        let x0 = frame.left + frame.width + 16.0;
        let mut y = frame.top + 10.0;
        let max_chars = ((legend - 46.0) / (FONT_PX * CHAR_EM)) as usize;
        for series in chart.series.iter().filter(|s| !s.name.is_empty()) {
            let style = &series.style;
            let dash = if style.dashed {
                " stroke-dasharray=\"7 4\""
            } else {
                ""
            };
            if !series.line.is_empty() {
                let _ = write!(
                    legend_svg,
                    "<line x1=\"{x0:.1}\" y1=\"{y:.1}\" x2=\"{:.1}\" y2=\"{y:.1}\" stroke=\"{}\" stroke-width=\"2.5\"{dash}/>",
                    x0 + 30.0,
                    style.colour
                );
            }
            let d = marker_path(style.marker, x0 + 15.0, y, 10.0);
            if !d.is_empty() {
                let paint = match style.marker {
                    Marker::Cross | Marker::Plus => format!(
                        "fill=\"none\" stroke=\"{}\" stroke-width=\"2.2\"",
                        style.colour
                    ),
                    _ => format!(
                        "fill=\"{}\" stroke=\"#ffffff\" stroke-width=\"1\"",
                        style.colour
                    ),
                };
                let _ = write!(legend_svg, "<path d=\"{d}\" {paint}/>");
            }
            legend_svg.push_str(&text(
                x0 + 38.0,
                y + 4.5,
                "start",
                FONT_PX,
                &shorten(&series.name, max_chars),
                "",
            ));
            y += 20.0;
        }
    }

    let mut out = svg_open(
        width,
        height,
        &chart.title,
        empty.then_some(chart.empty_message.as_str()),
    );
    out.push_str(&body);
    out.push_str(&data);
    out.push_str(&legend_svg);
    out.push_str("</svg>");
    out
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
    let mut body = String::new();
    let mut data = String::new();
    let plot_top = 12.0;
    let plot_bottom = plot_top + plot_height;
    if !empty {
        for tick in linear_ticks(0.0, axis.max, 6) {
            let x = left + scale(tick.value);
            let _ = write!(
                body,
                "<line x1=\"{x:.1}\" y1=\"{plot_top:.1}\" x2=\"{x:.1}\" y2=\"{plot_bottom:.1}\" stroke=\"{GRID}\" stroke-width=\"1\"/>"
            );
            body.push_str(&text(
                x,
                plot_bottom + 18.0,
                "middle",
                FONT_PX,
                &tick.label,
                "",
            ));
        }
    }
    let _ = write!(
        body,
        "<line x1=\"{left:.1}\" y1=\"{plot_top:.1}\" x2=\"{left:.1}\" y2=\"{plot_bottom:.1}\" stroke=\"{INK}\" stroke-width=\"1\"/><line x1=\"{left:.1}\" y1=\"{plot_bottom:.1}\" x2=\"{:.1}\" y2=\"{plot_bottom:.1}\" stroke=\"{INK}\" stroke-width=\"1\"/>",
        left + bar_space
    );
    body.push_str(&text(
        left + bar_space / 2.0,
        height - 10.0,
        "middle",
        14.0,
        &chart.axis_label,
        "",
    ));
    let max_label_chars = (label_width / (FONT_PX * CHAR_EM)) as usize;
    let mut y = plot_top;
    for group in &chart.groups {
        body.push_str(&text(
            12.0,
            y + 17.0,
            "start",
            14.0,
            &group.label,
            " font-weight=\"bold\"",
        ));
        y += HEADING;
        if group.bars.is_empty() {
            body.push_str(&text(
                left + 8.0,
                y + 15.0,
                "start",
                12.0,
                &group.empty_text,
                " font-style=\"italic\"",
            ));
            y += ROW;
        }
        for bar in &group.bars {
            body.push_str(&text(
                left - 8.0,
                y + 15.0,
                "end",
                FONT_PX,
                &shorten(&bar.label, max_label_chars),
                "",
            ));
            let length = scale(bar.value);
            if length > 0.0 {
                let _ = write!(
                    data,
                    "<rect class=\"data\" x=\"{left:.1}\" y=\"{:.1}\" width=\"{length:.1}\" height=\"{:.1}\" fill=\"{}\"><title>{}</title></rect>",
                    y + 3.0,
                    ROW - 6.0,
                    bar.colour,
                    escape(&format!("{}: {}", bar.label, bar.text))
                );
            }
            let mut end = left + length;
            if let Some((low, high)) = bar.interval {
                let (x1, x2) = (left + scale(low), left + scale(high));
                let mid = y + ROW / 2.0;
                let _ = write!(
                    body,
                    "<path d=\"M{x1:.1},{mid:.1}H{x2:.1}M{x1:.1},{:.1}v8M{x2:.1},{:.1}v8\" stroke=\"{INK}\" stroke-width=\"1.2\" fill=\"none\"/>",
                    mid - 4.0,
                    mid - 4.0
                );
                end = end.max(x2);
            }
            body.push_str(&text(end + 6.0, y + 15.0, "start", 12.0, &bar.text, ""));
            y += ROW;
        }
    }
    if empty {
        body.push_str(&text(
            left + bar_space / 2.0,
            plot_top + plot_height / 2.0,
            "middle",
            15.0,
            &chart.empty_message,
            " font-style=\"italic\"",
        ));
    }
    let mut out = svg_open(
        width,
        height,
        &chart.title,
        empty.then_some(chart.empty_message.as_str()),
    );
    out.push_str(&body);
    out.push_str(&data);
    out.push_str("</svg>");
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn labels(ticks: &[Tick]) -> Vec<&str> {
        ticks
            .iter()
            .filter(|t| !t.label.is_empty())
            .map(|t| t.label.as_str())
            .collect()
    }

    #[test]
    fn escaping_covers_markup_and_quotes() {
        assert_eq!(
            escape("<script>alert('x')</script> & \"y\""),
            "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; &quot;y&quot;"
        );
        assert_eq!(escape("a\u{0}b\nc"), "a\u{FFFD}b\nc");
    }

    #[test]
    fn log_axis_widens_to_decades_and_labels_each() {
        let axis = Axis::log("FA/h", 0.03, 13.6, false);
        assert_eq!((axis.min, axis.max), (0.01, 100.0));
        let ticks = axis.ticks();
        assert_eq!(labels(&ticks), vec!["0.01", "0.1", "1", "10", "100"]);
        // Minor ticks at 2..9 of each of the four decades, plus five decades.
        assert_eq!(ticks.len(), 5 + 4 * 8);
        // Decade boundaries exactly: 1000 is the top, not 10 000.
        let exact = Axis::log("x", 1.0, 1000.0, false);
        assert_eq!((exact.min, exact.max), (1.0, 1000.0));
    }

    #[test]
    fn log_axis_scales_logarithmically_and_places_zero_at_the_edge() {
        let axis = Axis::log("x", 0.1, 10.0, false);
        assert!((axis.fraction(1.0).unwrap() - 0.5).abs() < 1e-12);
        assert!((axis.fraction(0.1).unwrap()).abs() < 1e-12);
        assert!((axis.fraction(10.0).unwrap() - 1.0).abs() < 1e-12);
        assert_eq!(axis.fraction(0.0), None);
        assert_eq!(axis.fraction(f64::NAN), None);
        let with_zero = Axis::log("x", 0.1, 10.0, true);
        assert_eq!(with_zero.fraction(0.0), Some(0.0));
        assert!((with_zero.fraction(0.1).unwrap() - ZERO_EDGE_SHARE).abs() < 1e-12);
        assert!(
            (with_zero.fraction(1.0).unwrap() - (ZERO_EDGE_SHARE + (1.0 - ZERO_EDGE_SHARE) / 2.0))
                .abs()
                < 1e-12
        );
        assert_eq!(with_zero.ticks()[0].label, "0");
    }

    #[test]
    fn narrow_and_wide_log_ranges_stay_readable() {
        // Within two decades, 2 and 5 are labelled too.
        assert_eq!(
            labels(&log_ticks(1.0, 100.0)),
            vec!["1", "2", "5", "10", "20", "50", "100"]
        );
        // Twenty decades: labels thin out and use exponents, and stay under a dozen.
        let wide_ticks = log_ticks(1e-10, 1e10);
        let wide = labels(&wide_ticks);
        assert!(wide.len() <= 11, "{wide:?}");
        assert_eq!(wide[0], "10⁻¹⁰");
        // Bad ranges give nothing rather than a panic.
        assert!(log_ticks(0.0, 10.0).is_empty() && log_ticks(5.0, 1.0).is_empty());
        let fallback = Axis::log("x", f64::NAN, -3.0, true);
        assert_eq!((fallback.min, fallback.max), (0.1, 10.0));
    }

    #[test]
    fn nice_steps_and_linear_ticks() {
        // Heckbert (1990): steps are 1, 2 or 5 times a power of ten.
        assert_eq!(nice_step(0.17), 0.2);
        assert_eq!(nice_step(3.0), 5.0);
        assert_eq!(nice_step(7.0), 10.0);
        assert_eq!(nice_step(0.0), 1.0);
        let ticks = linear_ticks(0.0, 1.0, 5);
        assert_eq!(
            labels(&ticks),
            vec!["0.0", "0.2", "0.4", "0.6", "0.8", "1.0"]
        );
        let negative = linear_ticks(-0.5, 2.0, 5);
        assert_eq!(
            labels(&negative),
            vec!["-0.5", "0.0", "0.5", "1.0", "1.5", "2.0"]
        );
        assert!(linear_ticks(1.0, 1.0, 5).is_empty());
        let axis = Axis::linear("x", 2.0, 2.0);
        assert!(axis.max > axis.min);
        assert!((axis.fraction(2.0).unwrap() - 0.5).abs() < 1e-12);
    }

    #[test]
    fn number_formatting() {
        assert_eq!(format_number(1.0, 3), "1");
        assert_eq!(format_number(1234.6, 3), "1235");
        assert_eq!(format_number(0.000123, 2), "0.00012");
        assert_eq!(format_number(1.5e7, 2), "1.5e7");
        assert_eq!(format_number(f64::NAN, 3), "—");
    }

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
