//! Errors and warnings of the capture readers.

use std::fmt;
use std::path::{Path, PathBuf};

/// One bad line of a CSV sample file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LineProblem {
    /// Line number in the file, from 1.
    pub line: u64,
    /// What is wrong with it.
    pub message: String,
}

/// Most line problems kept for one file; the rest are counted.
pub const MAX_LINE_PROBLEMS: usize = 20;

/// Why a capture could not be opened or read.
#[derive(Debug, thiserror::Error)]
pub enum CaptureError {
    /// A setting given by the caller is out of range.
    #[error("capture setting `{name}` = {value}: {message}")]
    Setting {
        /// Which setting.
        name: &'static str,
        /// The value given, as written.
        value: String,
        /// What would be accepted.
        message: String,
    },
    /// The file could not be opened or read.
    #[error("cannot read `{}`: {source}", path.display())]
    Io {
        /// The file.
        path: PathBuf,
        /// The system's reason.
        #[source]
        source: std::io::Error,
    },
    /// The file is not a WAV file this reader can use.
    #[error("`{}` is not a usable WAV file: {reason}", path.display())]
    Wav {
        /// The file.
        path: PathBuf,
        /// What is wrong.
        reason: String,
    },
    /// The file has a number of channels that is neither real (1) nor I/Q (2).
    #[error(
        "`{}` has {channels} channels; a capture has 1 (real IF) or 2 (I, Q)",
        path.display()
    )]
    ChannelCount {
        /// The file.
        path: PathBuf,
        /// Channels found.
        channels: usize,
    },
    /// Lines of a CSV sample file that cannot be read.
    #[error("{}", csv_problems(path, problems, *more))]
    Csv {
        /// The file.
        path: PathBuf,
        /// The first [`MAX_LINE_PROBLEMS`] problems, in line order.
        problems: Vec<LineProblem>,
        /// How many more problems were found past those.
        more: usize,
    },
    /// A sample that cannot stand for a voltage (a NaN or infinite float).
    #[error("`{}`, frame {frame}: {message}", path.display())]
    BadSample {
        /// The file.
        path: PathBuf,
        /// Frame index from the start of the capture.
        frame: u64,
        /// What is wrong.
        message: String,
    },
    /// A seek beyond the last frame.
    #[error(
        "`{}`: cannot seek to frame {frame}, the capture has {frames} frames",
        path.display()
    )]
    SeekPastEnd {
        /// The file.
        path: PathBuf,
        /// Frame asked for.
        frame: u64,
        /// Frames in the capture.
        frames: u64,
    },
}

fn csv_problems(path: &Path, problems: &[LineProblem], more: usize) -> String {
    let mut text = format!("`{}` cannot be read as CSV samples:", path.display());
    for p in problems {
        text.push_str(&format!("\n  line {}: {}", p.line, p.message));
    }
    if more > 0 {
        text.push_str(&format!("\n  ... and {more} more problems"));
    }
    text
}

impl CaptureError {
    pub(crate) fn setting(
        name: &'static str,
        value: impl fmt::Display,
        message: impl Into<String>,
    ) -> Self {
        CaptureError::Setting {
            name,
            value: value.to_string(),
            message: message.into(),
        }
    }

    pub(crate) fn io(path: &Path, source: std::io::Error) -> Self {
        CaptureError::Io {
            path: path.to_path_buf(),
            source,
        }
    }

    pub(crate) fn wav(path: &Path, reason: impl Into<String>) -> Self {
        CaptureError::Wav {
            path: path.to_path_buf(),
            reason: reason.into(),
        }
    }
}

/// Something the caller should show the user, though reading goes on.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum CaptureWarning {
    /// The WAV data chunk is shorter in the file than its header says (the
    /// file was cut short, e.g. a recorder that lost power): the frames that
    /// are present are read, the rest do not exist.
    TruncatedData {
        /// Frames the header declares.
        declared_frames: u64,
        /// Whole frames present in the file (a last, incomplete frame is dropped).
        present_frames: u64,
    },
}

impl fmt::Display for CaptureWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            CaptureWarning::TruncatedData {
                declared_frames,
                present_frames,
            } => write!(
                f,
                "the data chunk declares {declared_frames} frames but the file holds only \
                 {present_frames} (it was cut short); reading the {present_frames} present"
            ),
        }
    }
}
