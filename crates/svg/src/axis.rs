//! Axes: linear and logarithmic scales, nice-number ticks, number labels, and tick drawing.
//!
//! Layout uses a fixed estimate of the width of sans-serif text ([`text_width`], 0.6 em per
//! character), which is enough to keep labels apart without knowing which font the viewer
//! picks.

use crate::Svg;

/// Formats a number with `significant` significant digits, plainly for magnitudes in
/// [10⁻⁴, 10⁶) and in exponent form outside; never prints `-0`, and prints `—` for NaN.
///
/// ```
/// use echobench_svg::axis::format_number;
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
/// Average advance of a sans-serif character, in em: a fixed estimate (common practice for
/// proportional fonts, whose lower-case letters average 0.5–0.6 em), on the wide side so
/// that labels placed with it do not collide.
pub const CHAR_EM: f64 = 0.6;

/// Estimated width of `text` in px at `font_px`.
pub fn text_width(text: &str, font_px: f64) -> f64 {
    text.chars().count() as f64 * font_px * CHAR_EM
}

/// The rectangle data is drawn in, px: where an axis's values land on the page.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlotArea {
    /// Left edge.
    pub left: f64,
    /// Top edge.
    pub top: f64,
    /// Width.
    pub width: f64,
    /// Height.
    pub height: f64,
}

impl PlotArea {
    /// The bottom edge.
    pub fn bottom(&self) -> f64 {
        self.top + self.height
    }

    /// The right edge.
    pub fn right(&self) -> f64 {
        self.left + self.width
    }

    /// Where `value` of the horizontal `axis` lands, px; values off the axis are held just
    /// outside the area (2 % of its width), so a line to them still leaves at the right side.
    pub fn x(&self, axis: &Axis, value: f64) -> Option<f64> {
        axis.fraction(value)
            .map(|f| self.left + f.clamp(-0.02, 1.02) * self.width)
    }

    /// Where `value` of the vertical `axis` lands, px (up is larger), held as [`PlotArea::x`].
    pub fn y(&self, axis: &Axis, value: f64) -> Option<f64> {
        axis.fraction(value)
            .map(|f| self.top + (1.0 - f.clamp(-0.02, 1.02)) * self.height)
    }
}

/// Which edge of the plot area an axis runs along.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edge {
    /// The horizontal axis, along the bottom edge.
    Bottom,
    /// The vertical axis, up the left edge.
    Left,
}

/// How ticks are drawn.
#[derive(Debug, Clone, PartialEq)]
pub struct TickStyle {
    /// Colour of tick marks.
    pub ink: &'static str,
    /// Colour of grid lines across the area at labelled ticks; `None` draws no grid.
    pub grid: Option<&'static str>,
    /// Label font size, px.
    pub font_px: f64,
    /// Length of a labelled tick mark, px.
    pub major_px: f64,
    /// Length of an unlabelled tick mark, px.
    pub minor_px: f64,
    /// Baseline of a bottom label below the area's bottom edge, px.
    pub bottom_label_drop_px: f64,
    /// Gap between the area's left edge and the end of a left label, px.
    pub left_label_gap_px: f64,
    /// How far below its tick a left label's baseline sits, px (about a third of the font
    /// size centres the digits on the tick).
    pub left_label_shift_px: f64,
}

/// Draws `axis`'s grid lines (at labelled ticks), tick marks (long where labelled) and labels
/// along `edge` of `area`. Ticks that fall outside the area are skipped.
pub fn draw_ticks(svg: &mut Svg, area: &PlotArea, axis: &Axis, edge: Edge, style: &TickStyle) {
    let bottom = area.bottom();
    for tick in axis.ticks() {
        let (position, low, high) = match edge {
            Edge::Bottom => (area.x(axis, tick.value), area.left, area.right()),
            Edge::Left => (area.y(axis, tick.value), area.top, bottom),
        };
        let Some(p) = position else {
            continue;
        };
        if !(low - 0.5..=high + 0.5).contains(&p) {
            continue;
        }
        let major = !tick.label.is_empty();
        let tick_len = if major {
            style.major_px
        } else {
            style.minor_px
        };
        let line = |svg: &mut Svg, (x1, y1, x2, y2): (f64, f64, f64, f64), colour: &str| {
            svg.tag("line")
                .px("x1", x1)
                .px("y1", y1)
                .px("x2", x2)
                .px("y2", y2)
                .attr("stroke", colour)
                .attr("stroke-width", 1)
                .end();
        };
        match edge {
            Edge::Bottom => {
                if let (true, Some(grid)) = (major, style.grid) {
                    line(svg, (p, area.top, p, bottom), grid);
                }
                line(svg, (p, bottom, p, bottom + tick_len), style.ink);
                if major {
                    svg.text_at(
                        p,
                        bottom + style.bottom_label_drop_px,
                        "middle",
                        style.font_px,
                    )
                    .content(&tick.label);
                }
            }
            Edge::Left => {
                if major {
                    if let Some(grid) = style.grid {
                        line(svg, (area.left, p, area.right(), p), grid);
                    }
                    svg.text_at(
                        area.left - style.left_label_gap_px,
                        p + style.left_label_shift_px,
                        "end",
                        style.font_px,
                    )
                    .content(&tick.label);
                }
                line(svg, (area.left - tick_len, p, area.left, p), style.ink);
            }
        }
    }
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

    #[test]
    fn ticks_are_drawn_inside_the_area_with_their_grid() {
        let area = PlotArea {
            left: 50.0,
            top: 10.0,
            width: 400.0,
            height: 200.0,
        };
        let style = TickStyle {
            ink: "#222222",
            grid: Some("#d9d9d9"),
            font_px: 13.0,
            major_px: 6.0,
            minor_px: 3.0,
            bottom_label_drop_px: 20.0,
            left_label_gap_px: 9.0,
            left_label_shift_px: 4.5,
        };
        let mut svg = Svg::new();
        draw_ticks(
            &mut svg,
            &area,
            &Axis::linear("x", 0.0, 1.0),
            Edge::Bottom,
            &style,
        );
        let text = svg.into_string();
        // 0.0, 0.2, ..., 1.0: six labels, a grid line and a tick mark each.
        assert_eq!(text.matches("<text").count(), 6, "{text}");
        assert_eq!(text.matches("stroke=\"#d9d9d9\"").count(), 6);
        assert!(text.contains("<line x1=\"50.0\" y1=\"210.0\" x2=\"50.0\" y2=\"216.0\""));
        assert!(text.contains(">1.0</text>"));
        let mut bare = Svg::new();
        let no_grid = TickStyle {
            grid: None,
            ..style
        };
        draw_ticks(
            &mut bare,
            &area,
            &Axis::log("y", 1.0, 100.0, false),
            Edge::Left,
            &no_grid,
        );
        let text = bare.into_string();
        assert!(!text.contains("#d9d9d9"));
        // Within two decades 1, 2, 5, 10, 20, 50, 100 are labelled; 3, 4, 6–9 of each decade
        // are not (12 more).
        assert_eq!(text.matches("<text").count(), 7);
        assert_eq!(text.matches("<line").count(), 7 + 12);
        assert!((area.y(&Axis::log("y", 1.0, 100.0, false), 10.0).unwrap() - 110.0).abs() < 1e-9);
    }
}
