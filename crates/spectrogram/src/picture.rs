//! Drawing a [`Spectrum`] with its truth intervals as an SVG or PNG picture.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::OnceLock;

use echobench_core::Channels;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::FontTransform;

use crate::colormap::{colour_table, COLOUR_STEPS};
use crate::raster::{base64, crc32, encode_png_rgb};
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
const MARGIN: i32 = 14;
const TITLE_ROW: i32 = 28;
const SUBTITLE_ROW: i32 = 22;
const SIDE_COLUMN: i32 = 132;
const LEFT_LABEL_AREA: i32 = 84;
const BOTTOM_LABEL_AREA: i32 = 50;
const LANE: i32 = 22;
const STRIP_PAD: i32 = 4;
const STRIP_GAP: i32 = 8;
const MAX_LANES_PER_KIND: usize = 4;
const COLOUR_BAR_WIDTH: i32 = 20;

// Colours: targets and nuisances from the Okabe–Ito palette, which stays distinct for the
// common colour-vision deficiencies (common practice); the sky blue does not occur in the
// heat-map colour table, so target edges stay visible on it.
const TARGET_FILL: RGBColor = RGBColor(0x00, 0x72, 0xB2);
const TARGET_EDGE: RGBColor = RGBColor(0x56, 0xB4, 0xE9);
const NUISANCE_FILL: RGBColor = RGBColor(0xDD, 0xDD, 0xDD);
const NUISANCE_BORDER: RGBColor = RGBColor(0x70, 0x70, 0x70);
const STRIP_BACKGROUND: RGBColor = RGBColor(0xF3, 0xF3, 0xF3);
const MISSING_VALUE: [u8; 3] = [0x80, 0x80, 0x80];
const TEXT: RGBColor = RGBColor(0x20, 0x20, 0x20);
const MUTED_TEXT: RGBColor = RGBColor(0x60, 0x60, 0x60);

/// The font plotters measures (and, for PNG, draws) text with: DejaVu Sans, bundled so that
/// pictures never depend on the fonts a machine happens to have. Licence in `assets/`.
static DEJAVU_SANS: &[u8] = include_bytes!("../assets/DejaVuSans.ttf");
const FONT_FAMILY: &str = "sans-serif";

/// Registers the bundled font with plotters once per process.
fn ensure_font_registered() -> bool {
    static REGISTERED: OnceLock<bool> = OnceLock::new();
    *REGISTERED.get_or_init(|| {
        plotters::style::register_font(FONT_FAMILY, FontStyle::Normal, DEJAVU_SANS).is_ok()
    })
}

/// The picture formats [`write_picture`] writes, chosen by the file extension.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum PictureFormat {
    Svg,
    Png,
}

impl PictureFormat {
    fn of(path: &Path) -> Option<Self> {
        let extension = path.extension()?.to_str()?.to_ascii_lowercase();
        match extension.as_str() {
            "svg" => Some(Self::Svg),
            "png" => Some(Self::Png),
            _ => None,
        }
    }
}

/// Writes a picture of `spectrum`: time on x, Doppler frequency on y, colour = power spectral
/// density in dB (a perceptually ordered map, with a colour bar), and above it a truth strip in
/// which every mark is a labelled band (targets filled blue, nuisances grey); target start and
/// end are also drawn as sky-blue lines across the heat map.
///
/// The format follows the extension: `.svg` (text left to the viewer, heat map embedded as one
/// raster image) or `.png` (text drawn with the bundled DejaVu Sans). The heat map is
/// max-pooled to at most [`MAX_TIME_CELLS`] × [`MAX_FREQUENCY_CELLS`] cells, so a short burst or
/// a narrow line stays visible and the file size does not grow with the trial length. The file
/// is written to a temporary name in the same folder and renamed, so a reader never sees half a
/// picture.
///
/// # Errors
/// Every error names `path`: an extension other than svg/png, invalid options (non-positive
/// dynamic range or `max_hz`, picture size outside 480..=4096 px), a spectrum whose axes do not
/// match its values, a mark that is not finite or ends before it starts, a drawing failure, or
/// an I/O failure.
pub fn write_picture(
    path: &Path,
    spectrum: &Spectrum,
    marks: &[Marked],
    options: &SpectrogramOptions,
) -> Result<(), SpectrogramError> {
    let format = PictureFormat::of(path).ok_or_else(|| SpectrogramError::UnsupportedFormat {
        path: path.to_path_buf(),
    })?;
    let invalid = |problem: String| SpectrogramError::InvalidPicture {
        path: path.to_path_buf(),
        problem,
    };
    validate_options(options).map_err(invalid)?;
    validate_spectrum(spectrum).map_err(invalid)?;
    validate_marks(marks).map_err(invalid)?;
    if !ensure_font_registered() {
        return Err(SpectrogramError::Font {
            path: path.to_path_buf(),
        });
    }
    let figure = Figure::prepare(spectrum, marks, options);
    let drawing_failed = |message: String| SpectrogramError::Draw {
        path: path.to_path_buf(),
        message,
    };
    match format {
        PictureFormat::Svg => {
            let svg = render_svg(&figure).map_err(drawing_failed)?;
            write_atomically(path, svg.as_bytes())
        }
        PictureFormat::Png => {
            let temp = temp_path_beside(path, "png");
            let drawn = render_png(&temp, &figure).map_err(drawing_failed);
            finish_atomically(path, &temp, drawn)
        }
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

/// Everything the drawing needs, prepared once for either backend.
struct Figure<'a> {
    heat: HeatImage,
    top_db: f64,
    dynamic_range_db: f64,
    colours: Vec<[u8; 3]>,
    time_axis_s: (f64, f64),
    freq_axis_hz: (f64, f64),
    marks: &'a [Marked],
    title: &'a str,
    subtitle: String,
    freq_axis_title: &'static str,
    size_px: (u32, u32),
}

impl<'a> Figure<'a> {
    fn prepare(spectrum: &Spectrum, marks: &'a [Marked], options: &'a SpectrogramOptions) -> Self {
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
            marks,
            title: &options.title,
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

/// The heat-map plotting area in backend pixels: `x0..x1`, `y0..y1` (ends exclusive).
#[derive(Debug, Clone, Copy)]
struct PlotArea {
    x0: i32,
    x1: i32,
    y0: i32,
    y1: i32,
}

impl PlotArea {
    fn width(&self) -> f64 {
        f64::from(self.x1 - self.x0)
    }
    fn height(&self) -> f64 {
        f64::from(self.y1 - self.y0)
    }
}

/// Whether the heat map is blitted by plotters (bitmap) or added to the SVG text afterwards.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum HeatPainting {
    Blit,
    Deferred,
}

fn font(size: f64) -> FontDesc<'static> {
    FontDesc::new(FontFamily::Name(FONT_FAMILY), size, FontStyle::Normal)
}

fn text_style(size: f64, colour: RGBColor, h: HPos, v: VPos) -> TextStyle<'static> {
    font(size).color(&colour).pos(Pos::new(h, v))
}

fn err_text<E: std::fmt::Display>(error: E) -> String {
    error.to_string()
}

/// A mark placed on a lane of the truth strip, in pixels.
struct PlacedMark<'a> {
    mark: &'a Marked,
    lane: usize,
    bar: (i32, i32),
    label: String,
    label_x: i32,
    label_inside: bool,
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

/// Puts marks on lanes so that no two bands or labels overlap: targets on the upper lanes,
/// nuisances below, first fit in order of start (at most [`MAX_LANES_PER_KIND`] lanes each;
/// past that, marks share the lane that frees up first).
fn place_marks<'a, DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    marks: &'a [Marked],
    time_axis_s: (f64, f64),
    plot: PlotArea,
) -> Result<(Vec<PlacedMark<'a>>, usize), String> {
    let to_px = |t: f64| {
        let fraction = (t - time_axis_s.0) / (time_axis_s.1 - time_axis_s.0);
        plot.x0 + (fraction.clamp(0.0, 1.0) * plot.width()).round() as i32
    };
    let label_style = TextStyle::from(font(12.0));
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
        let mut lane_ends: Vec<i32> = Vec::new();
        for mark in group {
            let start = to_px(mark.start_s);
            let end = to_px(mark.end_s).max(start + 2);
            let label = clean_label(&mark.label);
            let (label_width, _) = root
                .estimate_text_size(&label, &label_style)
                .map_err(err_text)?;
            let label_width = label_width as i32;
            let label_inside = label_width + 8 <= end - start;
            let label_x = if label_inside {
                start + 4
            } else if end + 4 + label_width <= plot.x1 {
                end + 4
            } else {
                (start - 4 - label_width).max(plot.x0)
            };
            let extent = (start.min(label_x), end.max(label_x + label_width));
            let free = lane_ends
                .iter()
                .position(|&lane_end| lane_end + 6 <= extent.0);
            let lane = match free {
                Some(lane) => lane,
                None if lane_ends.len() < MAX_LANES_PER_KIND => {
                    lane_ends.push(i32::MIN);
                    lane_ends.len() - 1
                }
                None => (0..lane_ends.len())
                    .min_by_key(|&lane| lane_ends[lane])
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
    Ok((placed, lanes_used))
}

/// Draws everything except (for [`HeatPainting::Deferred`]) the heat-map raster; returns the
/// heat-map plotting area.
fn draw_figure<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    figure: &Figure<'_>,
    painting: HeatPainting,
) -> Result<PlotArea, String> {
    let (width, height) = root.dim_in_pixel();
    let (width, height) = (width as i32, height as i32);

    // Header: title and legend on the first row, analysis settings on the second.
    let title_y = MARGIN + TITLE_ROW / 2;
    root.draw(&Text::new(
        figure.title.to_string(),
        (MARGIN, title_y),
        text_style(20.0, TEXT, HPos::Left, VPos::Center),
    ))
    .map_err(err_text)?;
    draw_legend(root, width - MARGIN, title_y)?;
    root.draw(&Text::new(
        figure.subtitle.clone(),
        (MARGIN, MARGIN + TITLE_ROW + SUBTITLE_ROW / 2),
        text_style(12.5, MUTED_TEXT, HPos::Left, VPos::Center),
    ))
    .map_err(err_text)?;

    // The plot's x pixel range does not depend on the strip height, so marks can be placed
    // (which fixes the strip height) before the chart is built.
    let main_right = width - MARGIN - SIDE_COLUMN;
    let predicted = PlotArea {
        x0: MARGIN + LEFT_LABEL_AREA,
        x1: main_right,
        y0: 0,
        y1: 0,
    };
    let (placed, lanes) = place_marks(root, figure.marks, figure.time_axis_s, predicted)?;
    let strip_top = MARGIN + TITLE_ROW + SUBTITLE_ROW + 4;
    let strip_height = 2 * STRIP_PAD + LANE * lanes.max(1) as i32;
    let chart_top = strip_top + strip_height + STRIP_GAP;

    let chart_area = root.clone().shrink(
        (MARGIN, chart_top),
        (
            (main_right - MARGIN).max(1) as u32,
            (height - MARGIN - chart_top).max(1) as u32,
        ),
    );
    let (t0, t1) = figure.time_axis_s;
    let (f0, f1) = figure.freq_axis_hz;
    let mut chart = ChartBuilder::on(&chart_area)
        .x_label_area_size(BOTTOM_LABEL_AREA)
        .y_label_area_size(LEFT_LABEL_AREA)
        .build_cartesian_2d(t0..t1, f0..f1)
        .map_err(err_text)?;
    let (x_range, y_range) = chart.plotting_area().get_pixel_range();
    let plot = PlotArea {
        x0: x_range.start,
        x1: x_range.end,
        y0: y_range.start,
        y1: y_range.end,
    };

    if painting == HeatPainting::Blit {
        let pixels = raster_for_area(figure, plot);
        let element = BitMapElement::with_owned_buffer(
            (plot.x0, plot.y0),
            ((plot.x1 - plot.x0) as u32, (plot.y1 - plot.y0) as u32),
            pixels,
        )
        .ok_or("heat-map buffer does not match the plot area")?;
        root.draw(&element).map_err(err_text)?;
    }

    let tick_style = font(13.0).color(&TEXT);
    let title_style = font(15.0).color(&TEXT);
    let number = |v: &f64| format_number(*v, 3);
    chart
        .configure_mesh()
        .disable_mesh()
        .x_labels(12)
        .y_labels(9)
        .x_label_formatter(&number)
        .y_label_formatter(&number)
        .x_label_style(tick_style.clone())
        .y_label_style(tick_style)
        .axis_desc_style(title_style)
        .x_desc("Time (s)")
        .y_desc(figure.freq_axis_title)
        .draw()
        .map_err(err_text)?;

    // Target edges across the heat map.
    for mark in figure.marks.iter().filter(|m| m.is_target) {
        for t in [mark.start_s, mark.end_s] {
            if t >= t0 && t <= t1 {
                chart
                    .draw_series(LineSeries::new(
                        [(t, f0), (t, f1)],
                        TARGET_EDGE.stroke_width(1),
                    ))
                    .map_err(err_text)?;
            }
        }
    }
    // Frame around the heat map.
    root.draw(&Rectangle::new(
        [(plot.x0, plot.y0), (plot.x1, plot.y1)],
        BLACK.stroke_width(1),
    ))
    .map_err(err_text)?;

    draw_truth_strip(root, &placed, lanes, plot, strip_top, strip_height)?;
    draw_colour_bar(root, figure, plot)?;
    Ok(plot)
}

fn draw_legend<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    right: i32,
    y: i32,
) -> Result<(), String> {
    let style = text_style(13.0, TEXT, HPos::Right, VPos::Center);
    let entries = [
        ("nuisance", NUISANCE_FILL, NUISANCE_BORDER),
        ("target", TARGET_FILL, TARGET_FILL),
    ];
    let mut x = right;
    for (text, fill, border) in entries {
        let (text_width, _) = root
            .estimate_text_size(text, &TextStyle::from(font(13.0)))
            .map_err(err_text)?;
        root.draw(&Text::new(text, (x, y), style.clone()))
            .map_err(err_text)?;
        x -= text_width as i32 + 6;
        let swatch = [(x - 22, y - 6), (x, y + 6)];
        root.draw(&Rectangle::new(swatch, fill.filled()))
            .map_err(err_text)?;
        root.draw(&Rectangle::new(swatch, border.stroke_width(1)))
            .map_err(err_text)?;
        x -= 22 + 18;
    }
    Ok(())
}

fn draw_truth_strip<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    placed: &[PlacedMark<'_>],
    lanes: usize,
    plot: PlotArea,
    top: i32,
    height: i32,
) -> Result<(), String> {
    root.draw(&Rectangle::new(
        [(plot.x0, top), (plot.x1, top + height)],
        STRIP_BACKGROUND.filled(),
    ))
    .map_err(err_text)?;
    root.draw(&Text::new(
        "truth",
        (plot.x0 - 8, top + height / 2),
        text_style(14.0, TEXT, HPos::Right, VPos::Center),
    ))
    .map_err(err_text)?;
    if lanes == 0 {
        root.draw(&Text::new(
            "no truth intervals",
            (plot.x0 + 6, top + height / 2),
            text_style(12.0, MUTED_TEXT, HPos::Left, VPos::Center),
        ))
        .map_err(err_text)?;
        return Ok(());
    }
    for placed_mark in placed {
        let lane_top = top + STRIP_PAD + LANE * placed_mark.lane as i32;
        let bar = [
            (placed_mark.bar.0, lane_top + 3),
            (placed_mark.bar.1, lane_top + LANE - 3),
        ];
        let (fill, border, inside_text) = if placed_mark.mark.is_target {
            (TARGET_FILL, TARGET_FILL, WHITE)
        } else {
            (NUISANCE_FILL, NUISANCE_BORDER, BLACK)
        };
        root.draw(&Rectangle::new(bar, fill.filled()))
            .map_err(err_text)?;
        root.draw(&Rectangle::new(bar, border.stroke_width(1)))
            .map_err(err_text)?;
        let colour = if placed_mark.label_inside {
            inside_text
        } else {
            TEXT
        };
        root.draw(&Text::new(
            placed_mark.label.clone(),
            (placed_mark.label_x, lane_top + LANE / 2),
            text_style(12.0, colour, HPos::Left, VPos::Center),
        ))
        .map_err(err_text)?;
    }
    Ok(())
}

/// A tick step of 1, 2 or 5 × 10ⁿ dB giving at most eight ticks over `span_db`.
fn colour_bar_step_db(span_db: f64) -> f64 {
    let mut magnitude = 10f64.powf((span_db / 8.0).log10().floor());
    loop {
        for factor in [1.0, 2.0, 5.0] {
            let step = factor * magnitude;
            if span_db / step <= 8.0 {
                return step;
            }
        }
        magnitude *= 10.0;
    }
}

fn draw_colour_bar<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    figure: &Figure<'_>,
    plot: PlotArea,
) -> Result<(), String> {
    let x0 = plot.x1 + 22;
    let x1 = x0 + COLOUR_BAR_WIDTH;
    let steps = COLOUR_STEPS as f64;
    for (index, colour) in figure.colours.iter().enumerate() {
        // Entry 0 (weakest) at the bottom.
        let y_top = plot.y0 + ((steps - 1.0 - index as f64) / steps * plot.height()).round() as i32;
        let y_bottom = plot.y0 + ((steps - index as f64) / steps * plot.height()).round() as i32;
        let [r, g, b] = *colour;
        root.draw(&Rectangle::new(
            [(x0, y_top), (x1, y_bottom)],
            RGBColor(r, g, b).filled(),
        ))
        .map_err(err_text)?;
    }
    root.draw(&Rectangle::new(
        [(x0, plot.y0), (x1, plot.y1)],
        TEXT.stroke_width(1),
    ))
    .map_err(err_text)?;

    let bottom_db = figure.bottom_db();
    let span_db = figure.dynamic_range_db;
    let step_db = colour_bar_step_db(span_db);
    let label_style = text_style(12.0, TEXT, HPos::Left, VPos::Center);
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
        let y = plot.y1 - ((tick_db - bottom_db) / span_db * plot.height()).round() as i32;
        root.draw(&PathElement::new(
            vec![(x1, y), (x1 + 5, y)],
            TEXT.stroke_width(1),
        ))
        .map_err(err_text)?;
        root.draw(&Text::new(
            format_number(tick_db, 1),
            (x1 + 8, y),
            label_style.clone(),
        ))
        .map_err(err_text)?;
    }
    let title_style = font(14.0)
        .color(&TEXT)
        .transform(FontTransform::Rotate270)
        .pos(Pos::new(HPos::Center, VPos::Center));
    root.draw(&Text::new(
        "PSD (dB re 1 V²/Hz)",
        (x1 + 66, (plot.y0 + plot.y1) / 2),
        title_style,
    ))
    .map_err(err_text)?;
    Ok(())
}

/// The heat map resampled (nearest cell) onto the plot area's pixels, for bitmap output.
fn raster_for_area(figure: &Figure<'_>, plot: PlotArea) -> Vec<u8> {
    let heat = &figure.heat;
    let (width, height) = ((plot.x1 - plot.x0) as usize, (plot.y1 - plot.y0) as usize);
    let mut pixels = vec![255_u8; width * height * 3];
    let (t0, t1) = figure.time_axis_s;
    let (f0, f1) = figure.freq_axis_hz;
    let column_of = |px: usize| {
        let t = t0 + (px as f64 + 0.5) / width as f64 * (t1 - t0);
        let fraction = (t - heat.time_extent_s.0) / (heat.time_extent_s.1 - heat.time_extent_s.0);
        let column = (fraction * heat.columns as f64).floor();
        (column >= 0.0 && column < heat.columns as f64).then_some(column as usize)
    };
    let columns: Vec<Option<usize>> = (0..width).map(column_of).collect();
    for py in 0..height {
        let f = f1 - (py as f64 + 0.5) / height as f64 * (f1 - f0);
        let fraction =
            (f - heat.freq_extent_hz.0) / (heat.freq_extent_hz.1 - heat.freq_extent_hz.0);
        let from_bottom = (fraction * heat.rows as f64).floor();
        if !(from_bottom >= 0.0 && from_bottom < heat.rows as f64) {
            continue;
        }
        let row = heat.rows - 1 - from_bottom as usize;
        for (px, column) in columns.iter().enumerate() {
            if let Some(column) = column {
                let source = (row * heat.columns + column) * 3;
                let target = (py * width + px) * 3;
                pixels[target..target + 3].copy_from_slice(&heat.rgb[source..source + 3]);
            }
        }
    }
    pixels
}

fn render_png(temp: &Path, figure: &Figure<'_>) -> Result<(), String> {
    let root = BitMapBackend::new(temp, figure.size_px).into_drawing_area();
    root.fill(&WHITE).map_err(err_text)?;
    draw_figure(&root, figure, HeatPainting::Blit)?;
    root.present().map_err(err_text)
}

fn render_svg(figure: &Figure<'_>) -> Result<String, String> {
    let mut svg = String::new();
    let plot = {
        let root = SVGBackend::with_string(&mut svg, figure.size_px).into_drawing_area();
        let plot = draw_figure(&root, figure, HeatPainting::Deferred)?;
        root.present().map_err(err_text)?;
        plot
    };
    // plotters opens the document with `<svg ...>` and a newline; the background and the heat
    // map go first so that axes, marks and labels are drawn over them.
    let insert_at = svg
        .find(">\n")
        .map(|at| at + 2)
        .ok_or("the SVG backend wrote no opening tag")?;
    let heat_map = svg_heat_map(figure, plot)?;
    svg.insert_str(insert_at, &heat_map);
    Ok(svg)
}

/// The white background, a clip path for the plot area and the heat map as one embedded PNG.
fn svg_heat_map(figure: &Figure<'_>, plot: PlotArea) -> Result<String, String> {
    let heat = &figure.heat;
    let png = encode_png_rgb(heat.columns as u32, heat.rows as u32, &heat.rgb)
        .ok_or("heat-map image is empty")?;
    let (t0, t1) = figure.time_axis_s;
    let (f0, f1) = figure.freq_axis_hz;
    let x_of = |t: f64| f64::from(plot.x0) + (t - t0) / (t1 - t0) * plot.width();
    let y_of = |f: f64| f64::from(plot.y1) - (f - f0) / (f1 - f0) * plot.height();
    let left = x_of(heat.time_extent_s.0);
    let right = x_of(heat.time_extent_s.1);
    let top = y_of(heat.freq_extent_hz.1);
    let bottom = y_of(heat.freq_extent_hz.0);
    let (width, height) = figure.size_px;
    // A content-derived id keeps documents deterministic and ids distinct when several
    // pictures are inlined into one HTML page.
    let clip_id = format!("heat-map-area-{:08x}", crc32(&png));
    Ok(format!(
        concat!(
            "<rect x=\"0\" y=\"0\" width=\"{w}\" height=\"{h}\" fill=\"#FFFFFF\" stroke=\"none\"/>\n",
            "<clipPath id=\"{id}\"><rect x=\"{px}\" y=\"{py}\" width=\"{pw}\" height=\"{ph}\"/></clipPath>\n",
            "<image x=\"{x:.2}\" y=\"{y:.2}\" width=\"{iw:.2}\" height=\"{ih:.2}\" preserveAspectRatio=\"none\" ",
            "image-rendering=\"optimizeSpeed\" style=\"image-rendering:crisp-edges;image-rendering:pixelated\" ",
            "clip-path=\"url(#{id})\" xmlns:xlink=\"http://www.w3.org/1999/xlink\" ",
            "xlink:href=\"data:image/png;base64,{data}\"/>\n"
        ),
        w = width,
        h = height,
        id = clip_id,
        px = plot.x0,
        py = plot.y0,
        pw = plot.x1 - plot.x0,
        ph = plot.y1 - plot.y0,
        x = left,
        y = top,
        iw = right - left,
        ih = bottom - top,
        data = base64(&png),
    ))
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
        assert_eq!(colour_bar_step_db(80.0), 10.0);
        assert_eq!(colour_bar_step_db(60.0), 10.0);
        assert_eq!(colour_bar_step_db(30.0), 5.0);
        assert_eq!(colour_bar_step_db(12.0), 2.0);
        assert_eq!(colour_bar_step_db(150.0), 20.0);
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
