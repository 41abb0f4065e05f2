//! Drawing a [`Spectrum`] with its truth intervals as an SVG picture, through `echobench_svg`.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use echobench_core::Channels;
use echobench_svg::axis::{
    draw_ticks, linear_ticks, nice_step, text_width, Axis, Edge, PlotArea, TickStyle,
};
use echobench_svg::raster::{Placement, RgbImage};
use echobench_svg::{Svg, SVG_NAMESPACE};

use crate::colormap::colour_table;
use crate::{SpectrogramError, Spectrum};

/// At most this many heat-map columns (time cells) are drawn; frames are max-pooled into them.
pub const MAX_TIME_CELLS: usize = 600;
/// At most this many heat-map rows (frequency cells) are drawn; bins are max-pooled into them.
pub const MAX_FREQUENCY_CELLS: usize = 200;

/// How the spectrum is computed and the picture laid out.
///
/// Defaults: 256-sample frames with a hop of 64, the full band, an 80 dB colour range, no title,
/// 1200 × 680 pixels.
#[derive(Debug, Clone, PartialEq)]
pub struct SpectrogramOptions {
    /// Frame (window and FFT) length in samples, used by [`crate::write_spectrogram`].
    pub frame_len: usize,
    /// Advance between frames in samples, used by [`crate::write_spectrogram`].
    pub hop: usize,
    /// Highest |Doppler frequency| shown, Hz; `None` shows up to half the sample rate.
    pub max_hz: Option<f64>,
    /// Colour scale span below the strongest shown cell, dB; weaker cells get the darkest colour.
    pub dynamic_range_db: f64,
    /// Picture title (may be empty).
    pub title: String,
    /// Picture width and height in pixels (SVG user units).
    pub size_px: (u32, u32),
}

impl Default for SpectrogramOptions {
    fn default() -> Self {
        Self {
            frame_len: 256,
            hop: 64,
            max_hz: None,
            dynamic_range_db: 80.0,
            title: String::new(),
            size_px: (1200, 680),
        }
    }
}

/// A ground-truth interval to mark on the time axis.
#[derive(Debug, Clone, PartialEq)]
pub struct Marked {
    /// Start, seconds from the first sample.
    pub start_s: f64,
    /// End, seconds from the first sample (not before `start_s`).
    pub end_s: f64,
    /// Text shown on the band, e.g. the actor's name.
    pub label: String,
    /// A target (motion the detector should report) rather than a nuisance.
    pub is_target: bool,
}

/// Smallest and largest accepted picture side, pixels.
const MIN_SIDE_PX: u32 = 480;
const MAX_SIDE_PX: u32 = 4096;
/// Longest label drawn; longer ones are cut with an ellipsis.
const MAX_LABEL_CHARS: usize = 48;

// Layout, pixels.
const MARGIN: f64 = 14.0;
const TITLE_ROW: f64 = 28.0;
const SUBTITLE_ROW: f64 = 22.0;
const SIDE_COLUMN: f64 = 132.0;
const LEFT_LABEL_AREA: f64 = 84.0;
const BOTTOM_LABEL_AREA: f64 = 50.0;
const LANE: f64 = 22.0;
const STRIP_PAD: f64 = 4.0;
const STRIP_GAP: f64 = 8.0;
const MAX_LANES_PER_KIND: usize = 4;
const COLOUR_BAR_WIDTH: f64 = 20.0;
/// A text's baseline sits this many font sizes below the line it is centred on (about half
/// the height of a digit in a sans-serif font: common practice).
const CENTRE_TO_BASELINE_EM: f64 = 0.35;

// Colours: targets and nuisances from the Okabe–Ito palette, which stays distinct for the
// common colour-vision deficiencies (common practice); the sky blue does not occur in the
// heat-map colour table, so target edges stay visible on it.
const TARGET_FILL: &str = "#0072B2";
const TARGET_EDGE: &str = "#56B4E9";
const NUISANCE_FILL: &str = "#DDDDDD";
const NUISANCE_BORDER: &str = "#707070";
const STRIP_BACKGROUND: &str = "#F3F3F3";
const MISSING_VALUE: [u8; 3] = [0x80, 0x80, 0x80];
const TEXT: &str = "#202020";
const MUTED_TEXT: &str = "#606060";

/// Ticks of the heat map's axes: no grid (it would hide the data), labels beside the marks.
const TICKS: TickStyle = TickStyle {
    ink: TEXT,
    grid: None,
    font_px: 13.0,
    major_px: 5.0,
    minor_px: 3.0,
    bottom_label_drop_px: 20.0,
    left_label_gap_px: 8.0,
    left_label_shift_px: 13.0 * CENTRE_TO_BASELINE_EM,
};

/// Writes a picture of `spectrum` as an SVG file (see [`draw_picture`] for what it shows).
///
/// The file name must end in `.svg`. The file is written to a temporary name in the same
/// folder and renamed, so a reader never sees half a picture.
///
/// # Errors
/// Every error names `path`: an extension other than svg, anything [`draw_picture`] refuses,
/// or an I/O failure.
pub fn write_picture(
    path: &Path,
    spectrum: &Spectrum,
    marks: &[Marked],
    options: &SpectrogramOptions,
) -> Result<(), SpectrogramError> {
    let is_svg = path
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("svg"));
    if !is_svg {
        return Err(SpectrogramError::UnsupportedFormat {
            path: path.to_path_buf(),
        });
    }
    let picture = draw_picture(spectrum, marks, options).map_err(|e| match e {
        SpectrogramError::Drawing { problem } => SpectrogramError::InvalidPicture {
            path: path.to_path_buf(),
            problem,
        },
        other => other,
    })?;
    write_atomically(path, picture.document().as_str().as_bytes())
}

/// A spectrogram picture drawn in memory: a whole SVG document ([`Picture::document`]) or
/// the same drawing nested in a larger one ([`Picture::nested`]), with the heat map's place
/// on the page ([`Picture::plot_area`]) so that other panels can share its time axis.
pub struct Picture {
    figure: Figure,
    layout: Layout,
    png: Vec<u8>,
}

/// Draws `spectrum`: time on x, Doppler frequency on y, colour = power spectral density in
/// dB (a perceptually ordered map, with a colour bar), and above it a truth strip in which
/// every mark is a labelled band (targets filled blue, nuisances grey); target start and end
/// are also drawn as sky-blue lines across the heat map.
///
/// Text is left to the viewer; the heat map is embedded as one compressed PNG, max-pooled to
/// at most [`MAX_TIME_CELLS`] × [`MAX_FREQUENCY_CELLS`] cells, so a short burst or a narrow
/// line stays visible and the size does not grow with the trial length.
///
/// # Errors
/// [`SpectrogramError::Drawing`]: invalid options (non-positive dynamic range or `max_hz`,
/// picture size outside 480..=4096 px), a spectrum whose axes do not match its values, or a
/// mark that is not finite or ends before it starts.
pub fn draw_picture(
    spectrum: &Spectrum,
    marks: &[Marked],
    options: &SpectrogramOptions,
) -> Result<Picture, SpectrogramError> {
    let invalid = |problem: String| SpectrogramError::Drawing { problem };
    validate_options(options).map_err(invalid)?;
    validate_spectrum(spectrum).map_err(invalid)?;
    validate_marks(marks).map_err(invalid)?;
    let figure = Figure::prepare(spectrum, marks, options);
    let layout = Layout::of(&figure);
    let png = RgbImage {
        width: figure.heat.columns as u32,
        height: figure.heat.rows as u32,
        rgb: figure.heat.rgb.clone(),
    }
    .to_png()
    .ok_or_else(|| invalid("the heat-map image could not be encoded".into()))?;
    Ok(Picture {
        figure,
        layout,
        png,
    })
}

impl Picture {
    /// The heat map's rectangle, px from the picture's top left.
    pub fn plot_area(&self) -> PlotArea {
        self.layout.plot
    }

    /// The picture's size, px.
    pub fn size_px(&self) -> (u32, u32) {
        self.figure.size_px
    }

    /// The picture as a standalone SVG document.
    pub fn document(&self) -> Svg {
        let (width, height) = self.figure.size_px;
        let mut svg = Svg::new();
        svg.tag("svg")
            .attr("xmlns", SVG_NAMESPACE)
            .view_box(width, height)
            .attr("font-family", "sans-serif")
            .open();
        self.draw(&mut svg, "");
        svg.close("svg");
        svg
    }

    /// The picture as an `<svg>` element with class `class` at (0, `y`) of a larger SVG; its
    /// one id gets `-{id_suffix}` appended, so that two pictures of the same data can share a
    /// page.
    pub fn nested(&self, y: f64, class: &str, id_suffix: &str) -> Svg {
        let (width, height) = self.figure.size_px;
        let mut svg = Svg::new();
        svg.tag("svg")
            .attr("class", class)
            .attr("x", 0)
            .attr("y", y)
            .view_box(width, height)
            .attr("font-family", "sans-serif")
            .open();
        self.draw(&mut svg, id_suffix);
        svg.close("svg");
        svg
    }
}
fn validate_options(options: &SpectrogramOptions) -> Result<(), String> {
    if !(options.dynamic_range_db.is_finite() && options.dynamic_range_db > 0.0) {
        return Err(format!(
            "dynamic_range_db must be a positive number of dB, got {}",
            options.dynamic_range_db
        ));
    }
    if let Some(max_hz) = options.max_hz {
        if !(max_hz.is_finite() && max_hz > 0.0) {
            return Err(format!(
                "max_hz must be a positive frequency, got {max_hz} Hz"
            ));
        }
    }
    let (width, height) = options.size_px;
    let allowed = MIN_SIDE_PX..=MAX_SIDE_PX;
    if !allowed.contains(&width) || !allowed.contains(&height) {
        return Err(format!(
            "size_px must be {MIN_SIDE_PX}..={MAX_SIDE_PX} pixels a side, got {width} × {height}"
        ));
    }
    Ok(())
}

fn validate_spectrum(spectrum: &Spectrum) -> Result<(), String> {
    let (frames, bins) = (spectrum.frame_count(), spectrum.bin_count());
    if frames == 0 || bins == 0 {
        return Err(format!(
            "the spectrum is empty ({frames} frames × {bins} bins)"
        ));
    }
    if spectrum.power_db.len() != frames.saturating_mul(bins) {
        return Err(format!(
            "the spectrum has {} values for {frames} frames × {bins} bins",
            spectrum.power_db.len()
        ));
    }
    if !(spectrum.sample_rate_hz.is_finite() && spectrum.sample_rate_hz > 0.0) {
        return Err(format!(
            "the spectrum's sample rate must be positive, got {} Hz",
            spectrum.sample_rate_hz
        ));
    }
    if spectrum.frame_len < 2 || spectrum.hop == 0 {
        return Err(format!(
            "the spectrum's frame length ({}) must be at least 2 and its hop ({}) at least 1",
            spectrum.frame_len, spectrum.hop
        ));
    }
    let ascending = |axis: &[f64]| {
        axis.iter().all(|v| v.is_finite()) && axis.windows(2).all(|pair| pair[0] < pair[1])
    };
    if !ascending(&spectrum.times_s) || !ascending(&spectrum.freqs_hz) {
        return Err("the spectrum's time and frequency axes must be finite and ascending".into());
    }
    Ok(())
}

fn validate_marks(marks: &[Marked]) -> Result<(), String> {
    for (index, mark) in marks.iter().enumerate() {
        if !(mark.start_s.is_finite() && mark.end_s.is_finite()) || mark.end_s < mark.start_s {
            return Err(format!(
                "mark {index} (\"{}\") must have finite start ≤ end, got {} s to {} s",
                mark.label, mark.start_s, mark.end_s
            ));
        }
    }
    Ok(())
}

/// The heat map, max-pooled onto a grid of equal cells and coloured.
struct HeatImage {
    columns: usize,
    rows: usize,
    /// Row-major 8-bit RGB, row 0 at the top (highest frequency).
    rgb: Vec<u8>,
    /// Time span covered by the columns, seconds (cell edges, not frame centres).
    time_extent_s: (f64, f64),
    /// Frequency span covered by the rows, Hz.
    freq_extent_hz: (f64, f64),
    frames_per_column: usize,
    bins_per_row: usize,
}

/// Everything the drawing needs, prepared once.
struct Figure {
    heat: HeatImage,
    top_db: f64,
    dynamic_range_db: f64,
    colours: Vec<[u8; 3]>,
    time_axis_s: (f64, f64),
    freq_axis_hz: (f64, f64),
    marks: Vec<Marked>,
    title: String,
    subtitle: String,
    freq_axis_title: &'static str,
    size_px: (u32, u32),
}

impl Figure {
    fn prepare(spectrum: &Spectrum, marks: &[Marked], options: &SpectrogramOptions) -> Self {
        let nyquist_hz = spectrum.sample_rate_hz / 2.0;
        let top_hz = options.max_hz.map_or(nyquist_hz, |f| f.min(nyquist_hz));
        let freq_axis_hz = match spectrum.channels {
            Channels::Real => (0.0, top_hz),
            Channels::Iq => (-top_hz, top_hz),
        };
        let frame_step_s = spectrum.hop as f64 / spectrum.sample_rate_hz;
        let last_time_s = spectrum.times_s[spectrum.frame_count() - 1];
        let duration_s = if spectrum.duration_s.is_finite() && spectrum.duration_s > 0.0 {
            spectrum.duration_s
        } else {
            last_time_s + frame_step_s / 2.0
        };
        let colours = colour_table();
        let (heat, top_db) =
            pool_and_colour(spectrum, freq_axis_hz, options.dynamic_range_db, &colours);
        let kind = match spectrum.channels {
            Channels::Real => "real IF, one-sided",
            Channels::Iq => "I/Q IF, two-sided",
        };
        let fs = spectrum.sample_rate_hz;
        let subtitle = format!(
            "{kind} · fs {} Hz · Hann frame {} ({} ms, bin {} Hz) · hop {} ({} ms) · cell = max of {} frame{} × {} bin{} · colour range {} dB",
            format_number(fs, 3),
            spectrum.frame_len,
            format_number(spectrum.frame_len as f64 / fs * 1e3, 1),
            format_number(fs / spectrum.frame_len as f64, 2),
            spectrum.hop,
            format_number(frame_step_s * 1e3, 1),
            heat.frames_per_column,
            if heat.frames_per_column == 1 { "" } else { "s" },
            heat.bins_per_row,
            if heat.bins_per_row == 1 { "" } else { "s" },
            format_number(options.dynamic_range_db, 1),
        );
        let freq_axis_title = match spectrum.channels {
            Channels::Real => "Doppler frequency |f_d| (Hz)",
            Channels::Iq => "Doppler frequency f_d (Hz), + approaching",
        };
        Self {
            heat,
            top_db,
            dynamic_range_db: options.dynamic_range_db,
            colours,
            time_axis_s: (0.0, duration_s),
            freq_axis_hz,
            marks: marks.to_vec(),
            title: options.title.clone(),
            subtitle,
            freq_axis_title,
            size_px: options.size_px,
        }
    }

    fn bottom_db(&self) -> f64 {
        self.top_db - self.dynamic_range_db
    }
}

/// The colour of `power_db` on a scale spanning `bottom_db ..= bottom_db + range_db`.
fn colour_for(power_db: f32, bottom_db: f64, range_db: f64, colours: &[[u8; 3]]) -> [u8; 3] {
    if power_db.is_nan() {
        return MISSING_VALUE;
    }
    let last = (colours.len() - 1) as f64;
    let position = (f64::from(power_db) - bottom_db) / range_db;
    colours[(position * last).round().clamp(0.0, last) as usize]
}

/// Max-pools the bins that fall in the frequency axis onto at most
/// [`MAX_TIME_CELLS`] × [`MAX_FREQUENCY_CELLS`] equal cells and colours them; returns the image
/// and the colour scale top (the strongest pooled value, dB).
///
/// Max rather than mean, so that a one-frame radio burst or a one-bin mains line survives the
/// reduction at full strength.
fn pool_and_colour(
    spectrum: &Spectrum,
    freq_axis_hz: (f64, f64),
    dynamic_range_db: f64,
    colours: &[[u8; 3]],
) -> (HeatImage, f64) {
    let (frames, bins) = (spectrum.frame_count(), spectrum.bin_count());
    let bin_width_hz = spectrum.sample_rate_hz / spectrum.frame_len as f64;
    let frame_step_s = spectrum.hop as f64 / spectrum.sample_rate_hz;
    // Bins whose extent overlaps the axis; frequencies ascend, so they are contiguous.
    let shown = |f: &f64| {
        f + bin_width_hz / 2.0 > freq_axis_hz.0 && f - bin_width_hz / 2.0 < freq_axis_hz.1
    };
    let first_bin = spectrum.freqs_hz.iter().position(shown).unwrap_or(0);
    let last_bin = spectrum
        .freqs_hz
        .iter()
        .rposition(shown)
        .unwrap_or(bins - 1)
        .max(first_bin);
    let shown_bins = last_bin - first_bin + 1;

    let frames_per_column = frames.div_ceil(MAX_TIME_CELLS);
    let columns = frames.div_ceil(frames_per_column);
    let bins_per_row = shown_bins.div_ceil(MAX_FREQUENCY_CELLS);
    let rows = shown_bins.div_ceil(bins_per_row);

    // pooled[row_from_bottom * columns + column]
    let mut pooled = vec![f32::NAN; rows * columns];
    for frame in 0..frames {
        let column = frame / frames_per_column;
        let values = &spectrum.power_db[frame * bins + first_bin..=frame * bins + last_bin];
        for (offset, &value) in values.iter().enumerate() {
            let cell = &mut pooled[(offset / bins_per_row) * columns + column];
            // f32::max ignores NaN, so an empty cell takes the first value.
            *cell = cell.max(value);
        }
    }
    let top_db = pooled
        .iter()
        .filter(|v| v.is_finite())
        .fold(f64::NEG_INFINITY, |top, &v| top.max(f64::from(v)));
    let top_db = if top_db.is_finite() { top_db } else { 0.0 };

    let bottom_db = top_db - dynamic_range_db;
    let mut rgb = Vec::with_capacity(rows * columns * 3);
    for row in 0..rows {
        let from_bottom = rows - 1 - row;
        for column in 0..columns {
            let value = pooled[from_bottom * columns + column];
            rgb.extend_from_slice(&colour_for(value, bottom_db, dynamic_range_db, colours));
        }
    }
    let time_start_s = spectrum.times_s[0] - frame_step_s / 2.0;
    let freq_start_hz = spectrum.freqs_hz[first_bin] - bin_width_hz / 2.0;
    let heat = HeatImage {
        columns,
        rows,
        rgb,
        time_extent_s: (
            time_start_s,
            time_start_s + (columns * frames_per_column) as f64 * frame_step_s,
        ),
        freq_extent_hz: (
            freq_start_hz,
            freq_start_hz + (rows * bins_per_row) as f64 * bin_width_hz,
        ),
        frames_per_column,
        bins_per_row,
    };
    (heat, top_db)
}

/// Cleans a label for drawing: no control characters, at most [`MAX_LABEL_CHARS`].
fn clean_label(label: &str) -> String {
    let cleaned: String = label
        .chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect();
    let cleaned = cleaned.trim();
    if cleaned.chars().count() > MAX_LABEL_CHARS {
        let mut cut: String = cleaned.chars().take(MAX_LABEL_CHARS - 1).collect();
        cut.push('…');
        cut
    } else {
        cleaned.to_string()
    }
}

/// A mark placed on a lane of the truth strip, in pixels.
struct PlacedMark<'a> {
    mark: &'a Marked,
    lane: usize,
    bar: (f64, f64),
    label: String,
    label_x: f64,
    label_inside: bool,
}

/// Where everything goes, px.
struct Layout {
    /// The heat map.
    plot: PlotArea,
    strip_top: f64,
    strip_height: f64,
    lanes: usize,
}

impl Layout {
    fn of(figure: &Figure) -> Layout {
        let (width, height) = (f64::from(figure.size_px.0), f64::from(figure.size_px.1));
        let left = MARGIN + LEFT_LABEL_AREA;
        let right = width - MARGIN - SIDE_COLUMN;
        // The marks' lanes fix the strip's height, which does not depend on the plot's
        // height; only its x range matters for placing them.
        let (_, lanes) = place_marks(&figure.marks, figure.time_axis_s, left, right);
        let strip_top = MARGIN + TITLE_ROW + SUBTITLE_ROW + 4.0;
        let strip_height = 2.0 * STRIP_PAD + LANE * lanes.max(1) as f64;
        let top = strip_top + strip_height + STRIP_GAP;
        let bottom = height - MARGIN - BOTTOM_LABEL_AREA;
        Layout {
            plot: PlotArea {
                left,
                top,
                width: right - left,
                height: (bottom - top).max(1.0),
            },
            strip_top,
            strip_height,
            lanes,
        }
    }
}

/// Puts marks on lanes so that no two bands or labels overlap: targets on the upper lanes,
/// nuisances below, first fit in order of start (at most [`MAX_LANES_PER_KIND`] lanes each;
/// past that, marks share the lane that frees up first). Returns the placed marks and the
/// number of lanes.
fn place_marks(
    marks: &[Marked],
    time_axis_s: (f64, f64),
    left: f64,
    right: f64,
) -> (Vec<PlacedMark<'_>>, usize) {
    let to_px = |t: f64| {
        let fraction = (t - time_axis_s.0) / (time_axis_s.1 - time_axis_s.0);
        (left + fraction.clamp(0.0, 1.0) * (right - left)).round()
    };
    let mut placed = Vec::new();
    let mut lanes_used = 0;
    for is_target in [true, false] {
        let mut group: Vec<&Marked> = marks
            .iter()
            .filter(|m| m.is_target == is_target)
            .filter(|m| m.end_s >= time_axis_s.0 && m.start_s <= time_axis_s.1)
            .collect();
        if group.is_empty() {
            continue;
        }
        group.sort_by(|a, b| a.start_s.total_cmp(&b.start_s));
        let mut lane_ends: Vec<f64> = Vec::new();
        for mark in group {
            let start = to_px(mark.start_s);
            let end = to_px(mark.end_s).max(start + 2.0);
            let label = clean_label(&mark.label);
            let label_width = text_width(&label, 12.0).ceil();
            let label_inside = label_width + 8.0 <= end - start;
            let label_x = if label_inside {
                start + 4.0
            } else if end + 4.0 + label_width <= right {
                end + 4.0
            } else {
                (start - 4.0 - label_width).max(left)
            };
            let extent = (start.min(label_x), end.max(label_x + label_width));
            let free = lane_ends
                .iter()
                .position(|&lane_end| lane_end + 6.0 <= extent.0);
            let lane = match free {
                Some(lane) => lane,
                None if lane_ends.len() < MAX_LANES_PER_KIND => {
                    lane_ends.push(f64::NEG_INFINITY);
                    lane_ends.len() - 1
                }
                None => (0..lane_ends.len())
                    .min_by(|&a, &b| lane_ends[a].total_cmp(&lane_ends[b]))
                    .unwrap_or(0),
            };
            lane_ends[lane] = lane_ends[lane].max(extent.1);
            placed.push(PlacedMark {
                mark,
                lane: lanes_used + lane,
                bar: (start, end),
                label,
                label_x,
                label_inside,
            });
        }
        lanes_used += lane_ends.len();
    }
    (placed, lanes_used)
}

/// Text centred vertically on `y`.
fn centred_text<'a>(
    svg: &'a mut Svg,
    x: f64,
    y: f64,
    anchor: &'static str,
    font_px: f64,
    colour: &str,
) -> echobench_svg::Tag<'a> {
    svg.text_at(x, y + CENTRE_TO_BASELINE_EM * font_px, anchor, font_px)
        .attr("fill", colour)
}

fn rect<'a>(svg: &'a mut Svg, x: f64, y: f64, width: f64, height: f64) -> echobench_svg::Tag<'a> {
    svg.tag("rect")
        .px("x", x)
        .px("y", y)
        .px("width", width)
        .px("height", height)
}

impl Picture {
    /// Draws the picture's contents (everything inside its `<svg>` element).
    fn draw(&self, svg: &mut Svg, id_suffix: &str) {
        let figure = &self.figure;
        let layout = &self.layout;
        let plot = layout.plot;
        let (width, height) = (f64::from(figure.size_px.0), f64::from(figure.size_px.1));
        svg.tag("rect")
            .attr("x", 0)
            .attr("y", 0)
            .attr("width", width)
            .attr("height", height)
            .attr("fill", "#FFFFFF")
            .end();

        // The heat map first, clipped to the plot area, so that everything else is over it.
        // A content-derived id keeps documents deterministic and ids distinct when several
        // pictures are inlined into one HTML page.
        let mut clip_id = format!("heat-map-area-{:08x}", crc32fast::hash(&self.png));
        if !id_suffix.is_empty() {
            clip_id.push('-');
            clip_id.push_str(id_suffix);
        }
        svg.tag("clipPath").attr("id", &clip_id).open();
        rect(svg, plot.left, plot.top, plot.width, plot.height).end();
        svg.close("clipPath");
        let heat = &figure.heat;
        let time_axis = Axis::linear("", figure.time_axis_s.0, figure.time_axis_s.1);
        let freq_axis = Axis::linear("", figure.freq_axis_hz.0, figure.freq_axis_hz.1);
        let x_of = |t: f64| plot.left + time_axis.fraction(t).unwrap_or(0.0) * plot.width;
        let y_of = |f: f64| plot.bottom() - freq_axis.fraction(f).unwrap_or(0.0) * plot.height;
        let (left, right) = (x_of(heat.time_extent_s.0), x_of(heat.time_extent_s.1));
        let (top, bottom) = (y_of(heat.freq_extent_hz.1), y_of(heat.freq_extent_hz.0));
        svg.png_image(
            &self.png,
            &Placement {
                x: left,
                y: top,
                width: right - left,
                height: bottom - top,
                clip_id: Some(clip_id),
            },
        );

        // Header: title and legend on the first row, analysis settings on the second.
        let title_y = MARGIN + TITLE_ROW / 2.0;
        centred_text(svg, MARGIN, title_y, "start", 20.0, TEXT).content(&figure.title);
        draw_legend(svg, width - MARGIN, title_y);
        centred_text(
            svg,
            MARGIN,
            MARGIN + TITLE_ROW + SUBTITLE_ROW / 2.0,
            "start",
            12.5,
            MUTED_TEXT,
        )
        .content(&figure.subtitle);

        // Axes: nice-number ticks, about ten in time and eight in frequency.
        let mut time_ticks = time_axis.clone();
        time_ticks.custom_ticks = Some(linear_ticks(time_axis.min, time_axis.max, 10));
        let mut freq_ticks = freq_axis.clone();
        freq_ticks.custom_ticks = Some(linear_ticks(freq_axis.min, freq_axis.max, 8));
        draw_ticks(svg, &plot, &time_ticks, Edge::Bottom, &TICKS);
        draw_ticks(svg, &plot, &freq_ticks, Edge::Left, &TICKS);
        svg.text_at(
            plot.left + plot.width / 2.0,
            plot.bottom() + 42.0,
            "middle",
            15.0,
        )
        .attr("fill", TEXT)
        .content("Time (s)");
        svg.upright_text_at(plot.left - 66.0, plot.top + plot.height / 2.0, 0.0, 15.0)
            .attr("fill", TEXT)
            .content(figure.freq_axis_title);

        // Target edges across the heat map.
        let (t0, t1) = figure.time_axis_s;
        for mark in figure.marks.iter().filter(|m| m.is_target) {
            for t in [mark.start_s, mark.end_s] {
                if t >= t0 && t <= t1 {
                    let x = x_of(t);
                    svg.tag("line")
                        .px("x1", x)
                        .px("y1", plot.top)
                        .px("x2", x)
                        .px("y2", plot.bottom())
                        .attr("stroke", TARGET_EDGE)
                        .attr("stroke-width", 1)
                        .end();
                }
            }
        }
        // Frame around the heat map.
        rect(svg, plot.left, plot.top, plot.width, plot.height)
            .attr("fill", "none")
            .attr("stroke", "#000000")
            .attr("stroke-width", 1)
            .end();

        draw_truth_strip(svg, figure, layout);
        draw_colour_bar(svg, figure, plot);
    }
}

fn draw_legend(svg: &mut Svg, right: f64, y: f64) {
    let entries = [
        ("nuisance", NUISANCE_FILL, NUISANCE_BORDER),
        ("target", TARGET_FILL, TARGET_FILL),
    ];
    let mut x = right;
    for (label, fill, border) in entries {
        centred_text(svg, x, y, "end", 13.0, TEXT).content(label);
        x -= text_width(label, 13.0) + 6.0;
        rect(svg, x - 22.0, y - 6.0, 22.0, 12.0)
            .attr("fill", fill)
            .attr("stroke", border)
            .attr("stroke-width", 1)
            .end();
        x -= 22.0 + 18.0;
    }
}

fn draw_truth_strip(svg: &mut Svg, figure: &Figure, layout: &Layout) {
    let plot = layout.plot;
    let (top, height) = (layout.strip_top, layout.strip_height);
    rect(svg, plot.left, top, plot.width, height)
        .attr("fill", STRIP_BACKGROUND)
        .end();
    centred_text(svg, plot.left - 8.0, top + height / 2.0, "end", 14.0, TEXT).content("truth");
    if layout.lanes == 0 {
        centred_text(
            svg,
            plot.left + 6.0,
            top + height / 2.0,
            "start",
            12.0,
            MUTED_TEXT,
        )
        .content("no truth intervals");
        return;
    }
    let (placed, _) = place_marks(&figure.marks, figure.time_axis_s, plot.left, plot.right());
    for placed_mark in placed {
        let lane_top = top + STRIP_PAD + LANE * placed_mark.lane as f64;
        let (fill, border, inside_text) = if placed_mark.mark.is_target {
            (TARGET_FILL, TARGET_FILL, "#FFFFFF")
        } else {
            (NUISANCE_FILL, NUISANCE_BORDER, "#000000")
        };
        let (start, end) = placed_mark.bar;
        rect(svg, start, lane_top + 3.0, end - start, LANE - 6.0)
            .attr("fill", fill)
            .attr("stroke", border)
            .attr("stroke-width", 1)
            .end();
        let colour = if placed_mark.label_inside {
            inside_text
        } else {
            TEXT
        };
        centred_text(
            svg,
            placed_mark.label_x,
            lane_top + LANE / 2.0,
            "start",
            12.0,
            colour,
        )
        .content(&placed_mark.label);
    }
}

/// The colour bar right of the heat map: the colour table as a one-column image, ticks at a
/// nice step (at most about eight over the range) and its title.
fn draw_colour_bar(svg: &mut Svg, figure: &Figure, plot: PlotArea) {
    let x0 = plot.right() + 22.0;
    // Strongest colour at the top.
    let rgb: Vec<u8> = figure.colours.iter().rev().flatten().copied().collect();
    let image = RgbImage {
        width: 1,
        height: figure.colours.len() as u32,
        rgb,
    };
    if let Some(png) = image.to_png() {
        svg.png_image(
            &png,
            &Placement {
                x: x0,
                y: plot.top,
                width: COLOUR_BAR_WIDTH,
                height: plot.height,
                clip_id: None,
            },
        );
    }
    rect(svg, x0, plot.top, COLOUR_BAR_WIDTH, plot.height)
        .attr("fill", "none")
        .attr("stroke", TEXT)
        .attr("stroke-width", 1)
        .end();

    let x1 = x0 + COLOUR_BAR_WIDTH;
    let bottom_db = figure.bottom_db();
    let span_db = figure.dynamic_range_db;
    // 1, 2 or 5 × 10ⁿ dB with at most eight steps over the range (Heckbert 1990).
    let step_db = nice_step(span_db / 8.0);
    let first_tick = (bottom_db / step_db).ceil();
    let last_tick = (figure.top_db / step_db + 1e-9).floor();
    // Counted, not accumulated, so that a step lost in rounding cannot loop forever.
    let tick_count = if (0.0..=20.0).contains(&(last_tick - first_tick)) {
        (last_tick - first_tick) as usize + 1
    } else {
        0
    };
    for tick in 0..tick_count {
        let tick_db = (first_tick + tick as f64) * step_db;
        let y = plot.bottom() - (tick_db - bottom_db) / span_db * plot.height;
        svg.tag("line")
            .px("x1", x1)
            .px("y1", y)
            .px("x2", x1 + 5.0)
            .px("y2", y)
            .attr("stroke", TEXT)
            .attr("stroke-width", 1)
            .end();
        centred_text(svg, x1 + 8.0, y, "start", 12.0, TEXT).content(&format_number(tick_db, 1));
    }
    svg.upright_text_at(
        x1 + 66.0,
        plot.top + plot.height / 2.0,
        CENTRE_TO_BASELINE_EM * 14.0,
        14.0,
    )
    .attr("fill", TEXT)
    .content("PSD (dB re 1 V²/Hz)");
}

/// A number with at most `max_decimals` decimals, trailing zeros dropped, never "-0".
fn format_number(value: f64, max_decimals: usize) -> String {
    let text = format!("{value:.max_decimals$}");
    let text = if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    };
    if text == "-0" {
        "0".to_string()
    } else {
        text
    }
}

/// A fresh temporary file name next to `path`, with the given extension (the PNG encoder
/// chooses its format by extension).
fn temp_path_beside(path: &Path, extension: &str) -> PathBuf {
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "picture".to_string());
    let sequence = COUNTER.fetch_add(1, Ordering::Relaxed);
    let temp_name = format!(".{name}.{}-{sequence}.tmp.{extension}", std::process::id());
    match path.parent() {
        Some(dir) if !dir.as_os_str().is_empty() => dir.join(temp_name),
        _ => PathBuf::from(temp_name),
    }
}

/// Writes `bytes` to a temporary file beside `path`, then renames it over `path`.
fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), SpectrogramError> {
    let temp = temp_path_beside(path, "tmp");
    let written = std::fs::File::create(&temp)
        .and_then(|mut file| {
            file.write_all(bytes)?;
            file.sync_all()
        })
        .map_err(|source| SpectrogramError::Io {
            path: path.to_path_buf(),
            source,
        });
    finish_atomically(path, &temp, written)
}

/// Renames `temp` over `path` after a successful write; removes `temp` otherwise.
fn finish_atomically(
    path: &Path,
    temp: &Path,
    written: Result<(), SpectrogramError>,
) -> Result<(), SpectrogramError> {
    let result = written.and_then(|()| {
        std::fs::rename(temp, path).map_err(|source| SpectrogramError::Io {
            path: path.to_path_buf(),
            source,
        })
    });
    if result.is_err() {
        // Best effort: the temporary file may not exist if creating it failed.
        let _ = std::fs::remove_file(temp);
    }
    result
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::colormap::COLOUR_STEPS;

    fn flat_spectrum(frames: usize, bins: usize, fs: f64, frame_len: usize) -> Spectrum {
        Spectrum {
            times_s: (0..frames).map(|i| (i * 64) as f64 / fs + 0.1).collect(),
            freqs_hz: (0..bins)
                .map(|k| k as f64 * fs / frame_len as f64)
                .collect(),
            power_db: vec![-100.0; frames * bins],
            sample_rate_hz: fs,
            frame_len,
            hop: 64,
            channels: Channels::Real,
            duration_s: (frames * 64 + frame_len) as f64 / fs,
        }
    }

    #[test]
    fn max_pooling_keeps_a_single_cell_spike() {
        let (frames, bins) = (1875, 129);
        let mut spectrum = flat_spectrum(frames, bins, 2000.0, 256);
        spectrum.power_db[1001 * bins + 40] = 0.0;
        let colours = colour_table();
        let (heat, top_db) = pool_and_colour(&spectrum, (0.0, 1000.0), 80.0, &colours);
        assert_eq!(top_db, 0.0);
        assert_eq!((heat.frames_per_column, heat.bins_per_row), (4, 1));
        assert_eq!((heat.columns, heat.rows), (469, 129));
        let spike_row = heat.rows - 1 - 40;
        let spike_column = 1001 / 4;
        for row in 0..heat.rows {
            for column in 0..heat.columns {
                let at = (row * heat.columns + column) * 3;
                let pixel = [heat.rgb[at], heat.rgb[at + 1], heat.rgb[at + 2]];
                if (row, column) == (spike_row, spike_column) {
                    assert_eq!(pixel, colours[COLOUR_STEPS - 1]);
                } else {
                    // −100 dB is 100 dB below the top: below the 80 dB range, darkest colour.
                    assert_eq!(pixel, colours[0], "cell {row}, {column}");
                }
            }
        }
        // Whole groups of 4 frames from the first frame's leading edge.
        let step_s = 64.0 / 2000.0;
        assert!((heat.time_extent_s.0 - (0.1 - step_s / 2.0)).abs() < 1e-12);
        assert!((heat.time_extent_s.1 - heat.time_extent_s.0 - 469.0 * 4.0 * step_s).abs() < 1e-9);
        assert!((heat.freq_extent_hz.0 + 2000.0 / 256.0 / 2.0).abs() < 1e-12);
    }

    #[test]
    fn pooling_bounds_hold_and_max_hz_selects_bins() {
        // 256 bins of I/Q pooled in pairs; a 500 Hz limit at fs 2 kHz keeps bins up to 500 Hz.
        let colours = colour_table();
        let mut iq = flat_spectrum(700, 256, 2000.0, 256);
        iq.freqs_hz = (0..256)
            .map(|j| (j as f64 - 128.0) * 2000.0 / 256.0)
            .collect();
        iq.channels = Channels::Iq;
        let (heat, _) = pool_and_colour(&iq, (-1000.0, 1000.0), 80.0, &colours);
        assert!(heat.columns <= MAX_TIME_CELLS && heat.rows <= MAX_FREQUENCY_CELLS);
        assert_eq!((heat.rows, heat.bins_per_row), (128, 2));
        let real = flat_spectrum(700, 129, 2000.0, 256);
        let (heat, _) = pool_and_colour(&real, (0.0, 500.0), 80.0, &colours);
        assert_eq!(heat.rows, 65);
    }

    #[test]
    fn numbers_are_formatted_plainly() {
        assert_eq!(format_number(2000.0, 3), "2000");
        assert_eq!(format_number(7.8125, 2), "7.81");
        assert_eq!(format_number(-0.0001, 2), "0");
        assert_eq!(format_number(-40.0, 1), "-40");
        assert_eq!(format_number(0.25, 3), "0.25");
    }

    #[test]
    fn colour_bar_steps_are_round() {
        // At most eight steps of 1, 2 or 5 × 10ⁿ dB over the range.
        let step_db = |span_db: f64| nice_step(span_db / 8.0);
        assert_eq!(step_db(80.0), 10.0);
        assert_eq!(step_db(60.0), 10.0);
        assert_eq!(step_db(30.0), 5.0);
        assert_eq!(step_db(12.0), 2.0);
        assert_eq!(step_db(150.0), 20.0);
    }

    #[test]
    fn labels_are_cleaned() {
        assert_eq!(clean_label(" walker\u{7}A "), "walker A");
        let long = "x".repeat(100);
        assert_eq!(clean_label(&long).chars().count(), MAX_LABEL_CHARS);
    }

    #[test]
    fn temp_files_sit_beside_the_target() {
        let temp = temp_path_beside(Path::new("/some/dir/trial.png"), "png");
        assert_eq!(temp.parent(), Some(Path::new("/some/dir")));
        assert_eq!(temp.extension().and_then(|e| e.to_str()), Some("png"));
        assert_ne!(
            temp,
            temp_path_beside(Path::new("/some/dir/trial.png"), "png")
        );
    }
}
