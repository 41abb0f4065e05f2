//! Short-time power spectrum of an IF trial, and a picture of it with the ground truth marked.
//!
//! [`short_time_spectrum`] computes a Hann-windowed short-time power spectral density (one-sided
//! for a real single-channel IF, two-sided and shifted for I/Q), planning its FFT once per call.
//! [`draw_picture`] draws it as time × Doppler frequency with a colour bar, and the truth
//! intervals as labelled bands above it, through `echobench_svg` (the drawing path the report
//! and the explanation pictures use too); [`write_picture`] writes it as an SVG file, and
//! `echobench synth` calls it after writing a trial so that an engineer can see what the
//! detectors were given. [`Picture::nested`] places the same drawing inside a larger SVG, with
//! [`Picture::plot_area`] telling where the heat map landed.
//!
//! The one design decision: the picture's size must not grow with the trial. The heat map is
//! max-pooled onto at most [`MAX_TIME_CELLS`] × [`MAX_FREQUENCY_CELLS`] equal cells (max, so a
//! one-frame burst or a one-bin line survives) and goes into the SVG as a single embedded,
//! deflate-compressed PNG, while axes, labels and marks stay vector text rendered by the
//! viewer. A 60 s trial at 2 kHz gives an SVG well under a megabyte that opens instantly.
//! Text is left to the viewer's generic sans-serif font and laid out with a fixed estimate of
//! its width, so pictures never depend on the fonts a machine happens to have.
#![deny(missing_docs)]

mod colormap;
mod picture;
mod spectrum;

use std::path::{Path, PathBuf};

pub use echobench_core::Channels;
pub use picture::{
    draw_picture, write_picture, Marked, Picture, SpectrogramOptions, MAX_FREQUENCY_CELLS,
    MAX_TIME_CELLS,
};
pub use spectrum::{short_time_spectrum, Spectrum, MAX_SPECTRUM_CELLS, POWER_FLOOR_V2_PER_HZ};

/// What went wrong computing a spectrum or writing its picture. Every picture error names the
/// file.
#[derive(Debug, thiserror::Error)]
pub enum SpectrogramError {
    /// The sample rate is zero, negative or not finite.
    #[error("sample rate must be a positive number of Hz, got {sample_rate_hz}")]
    BadSampleRate {
        /// The rejected rate, Hz.
        sample_rate_hz: f64,
    },
    /// The frame is too short to window.
    #[error("frame length must be at least 2 samples, got {frame_len}")]
    FrameTooShort {
        /// The rejected frame length, samples.
        frame_len: usize,
    },
    /// The hop is zero.
    #[error("hop must be at least 1 sample")]
    ZeroHop,
    /// I/Q input whose length is not a whole number of I, Q pairs.
    #[error("I/Q input has {values} values, not a whole number of interleaved I, Q pairs")]
    OddIqLength {
        /// Number of values given.
        values: usize,
    },
    /// A sample is NaN or infinite.
    #[error("sample value {index} is not finite ({value})")]
    NonFiniteSample {
        /// Index of the first bad value in the input slice.
        index: usize,
        /// The bad value.
        value: f32,
    },
    /// The stream is shorter than one frame.
    #[error("the stream has {samples} samples per channel, fewer than one frame of {frame_len}")]
    TooShort {
        /// Samples per channel.
        samples: usize,
        /// Frame length, samples.
        frame_len: usize,
    },
    /// The spectrum would be unreasonably large.
    #[error("{frames} frames × {bins} bins exceeds {limit} cells; use a larger hop")]
    TooLarge {
        /// Frames requested.
        frames: usize,
        /// Bins per frame.
        bins: usize,
        /// The cell limit ([`MAX_SPECTRUM_CELLS`]).
        limit: usize,
    },
    /// The spectrum for a picture could not be computed.
    #[error("cannot draw {path}: {source}")]
    Analysis {
        /// The picture file.
        path: PathBuf,
        /// Why the spectrum failed.
        source: Box<SpectrogramError>,
    },
    /// The file name does not end in `.svg`.
    #[error("cannot draw {path}: unsupported picture format; name the file *.svg")]
    UnsupportedFormat {
        /// The picture file.
        path: PathBuf,
    },
    /// Options, spectrum or marks are not usable.
    #[error("cannot draw {path}: {problem}")]
    InvalidPicture {
        /// The picture file.
        path: PathBuf,
        /// What is wrong.
        problem: String,
    },
    /// Options, spectrum or marks are not usable for a picture drawn in memory.
    #[error("cannot draw the spectrogram: {problem}")]
    Drawing {
        /// What is wrong.
        problem: String,
    },
    /// Writing or renaming the file failed.
    #[error("cannot write {path}: {source}")]
    Io {
        /// The picture file.
        path: PathBuf,
        /// The operating system's error.
        source: std::io::Error,
    },
}

/// Computes the spectrum of a trial with `options.frame_len` and `options.hop` and writes its
/// picture to `path` (see [`short_time_spectrum`] and [`write_picture`]); returns the spectrum.
///
/// # Errors
/// As [`write_picture`]; a spectrum that cannot be computed is reported as
/// [`SpectrogramError::Analysis`] naming `path`.
pub fn write_spectrogram(
    path: &Path,
    samples: &[f32],
    channels: Channels,
    sample_rate_hz: f64,
    marks: &[Marked],
    options: &SpectrogramOptions,
) -> Result<Spectrum, SpectrogramError> {
    let spectrum = short_time_spectrum(
        samples,
        channels,
        sample_rate_hz,
        options.frame_len,
        options.hop,
    )
    .map_err(|source| SpectrogramError::Analysis {
        path: path.to_path_buf(),
        source: Box::new(source),
    })?;
    write_picture(path, &spectrum, marks, options)?;
    Ok(spectrum)
}
