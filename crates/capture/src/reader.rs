//! [`CaptureReader`]: one recorded capture, read block by block.

use crate::adc::AdcDescription;
use crate::csv_samples::{self, CsvLayout, CsvSource};
use crate::error::{CaptureError, CaptureWarning};
use crate::wav::{self, WavSource};
use echobench_core::{Channels, StreamInfo};
use std::path::{Path, PathBuf};

/// The file layout of a capture.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum CaptureFormat {
    /// A WAV file (rate and channels from its header).
    Wav,
    /// A CSV sample file with the given layout.
    Csv(CsvLayout),
}

enum Source {
    Wav(WavSource),
    Csv(CsvSource),
}

/// A recorded capture opened for streaming: never more than one block in memory.
pub struct CaptureReader {
    path: PathBuf,
    source: Source,
    adc: AdcDescription,
    sample_rate_hz: f64,
    channels: Channels,
    position: u64,
    warnings: Vec<CaptureWarning>,
}

impl std::fmt::Debug for CaptureReader {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("CaptureReader")
            .field("path", &self.path)
            .field("sample_rate_hz", &self.sample_rate_hz)
            .field("channels", &self.channels)
            .field("frames", &self.frames())
            .field("position", &self.position)
            .finish_non_exhaustive()
    }
}

impl CaptureReader {
    /// Opens a capture file of the given format.
    ///
    /// # Errors
    /// An unreadable file, a damaged or unsupported WAV, a channel count other
    /// than 1 or 2, or (CSV) every bad line, each with its line number.
    pub fn open(
        path: &Path,
        format: &CaptureFormat,
        adc: AdcDescription,
    ) -> Result<Self, CaptureError> {
        match format {
            CaptureFormat::Wav => Self::open_wav(path, adc),
            CaptureFormat::Csv(layout) => Self::open_csv(path, layout, adc),
        }
    }

    /// Opens a WAV capture: 8/16/24/32-bit integer or 32-bit float PCM, 1 or 2 channels.
    ///
    /// A file whose data chunk is cut short opens with the frames present and
    /// a [`CaptureWarning::TruncatedData`] in [`CaptureReader::warnings`].
    ///
    /// # Errors
    /// As [`CaptureReader::open`].
    pub fn open_wav(path: &Path, adc: AdcDescription) -> Result<Self, CaptureError> {
        let opened = wav::open(path, &adc)?;
        Ok(CaptureReader {
            path: path.to_path_buf(),
            source: Source::Wav(opened.source),
            adc,
            sample_rate_hz: opened.sample_rate_hz,
            channels: opened.channels,
            position: 0,
            warnings: opened.warnings,
        })
    }

    /// Opens a CSV capture. The file is read through once on opening (in
    /// constant memory) to check every row and count the frames.
    ///
    /// # Errors
    /// As [`CaptureReader::open`].
    pub fn open_csv(
        path: &Path,
        layout: &CsvLayout,
        adc: AdcDescription,
    ) -> Result<Self, CaptureError> {
        let opened = csv_samples::open(path, layout, &adc)?;
        Ok(CaptureReader {
            path: path.to_path_buf(),
            source: Source::Csv(opened.source),
            adc,
            sample_rate_hz: layout.sample_rate_hz,
            channels: opened.channels,
            position: 0,
            warnings: Vec::new(),
        })
    }

    /// The file.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Sample rate, Hz.
    pub fn sample_rate_hz(&self) -> f64 {
        self.sample_rate_hz
    }

    /// Real (1 channel) or I/Q (2 channels, read interleaved I, Q).
    pub fn channels(&self) -> Channels {
        self.channels
    }

    /// Frames (sample instants) in the capture. Always known: from the WAV
    /// header (less what a cut file lacks) or from the CSV opening pass.
    pub fn frames(&self) -> u64 {
        match &self.source {
            Source::Wav(s) => s.frames(),
            Source::Csv(s) => s.frames(),
        }
    }

    /// Length of the capture, s.
    pub fn duration_s(&self) -> f64 {
        self.frames() as f64 / self.sample_rate_hz
    }

    /// The next frame [`CaptureReader::read_block`] will return.
    pub fn position_frames(&self) -> u64 {
        self.position
    }

    /// The converter description the samples are scaled with.
    pub fn adc(&self) -> &AdcDescription {
        &self.adc
    }

    /// Things found on opening that the caller should show (a cut WAV file).
    pub fn warnings(&self) -> &[CaptureWarning] {
        &self.warnings
    }

    /// The stream description for detectors, given the sensor's carrier
    /// (a capture file does not record it).
    pub fn stream_info(&self, carrier_hz: f64) -> StreamInfo {
        StreamInfo {
            sample_rate_hz: self.sample_rate_hz,
            channels: self.channels,
            adc_bits: self.adc.bits(),
            carrier_hz,
        }
    }

    /// Appends up to `max_frames` frames to `out`, in volts at the ADC input
    /// less the bias (I/Q interleaved I, Q); returns how many frames were
    /// added, 0 at the end.
    ///
    /// # Errors
    /// A read failure or a sample that is not a number (NaN in a float WAV),
    /// naming the file (and the line, for CSV). `out` is left as it was; the
    /// reader should then be dropped.
    pub fn read_block(
        &mut self,
        out: &mut Vec<f32>,
        max_frames: usize,
    ) -> Result<usize, CaptureError> {
        let frames = match &mut self.source {
            Source::Wav(s) => s.read_block(&self.adc, out, max_frames)?,
            Source::Csv(s) => s.read_block(&self.adc, out, max_frames)?,
        };
        self.position += frames as u64;
        Ok(frames)
    }

    /// Moves to frame `frame` (0 ..= [`CaptureReader::frames`]), forward or back.
    ///
    /// # Errors
    /// A frame past the end, or a read failure.
    pub fn seek_to_frame(&mut self, frame: u64) -> Result<(), CaptureError> {
        let frames = self.frames();
        if frame > frames {
            return Err(CaptureError::SeekPastEnd {
                path: self.path.clone(),
                frame,
                frames,
            });
        }
        match &mut self.source {
            Source::Wav(s) => s.seek(frame)?,
            Source::Csv(s) => s.seek(frame)?,
        }
        self.position = frame;
        Ok(())
    }

    /// Skips `frames` frames forward (stopping at the end); returns how many were skipped.
    ///
    /// # Errors
    /// A read failure.
    pub fn skip_frames(&mut self, frames: u64) -> Result<u64, CaptureError> {
        let target = self.position.saturating_add(frames).min(self.frames());
        let skipped = target - self.position;
        self.seek_to_frame(target)?;
        Ok(skipped)
    }
}
