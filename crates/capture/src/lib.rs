//! Recorded captures as signal sources: bench recordings (WAV or CSV) with a
//! label file of when a person was really there, read block by block into the
//! same volts the synthesizer gives detectors, cut into trials, and resampled.
//!
//! **The one design decision: a capture is scaled through a description of
//! its converter, never guessed from the file.** A WAV or CSV file holds
//! numbers, not volts; the caller says what ADC made them
//! ([`AdcDescription`]: bits, full-scale voltage, front-end bias), and every
//! reader turns file numbers into *volts at the ADC input less the bias*,
//! the convention of synthesized trials. So a detector's threshold in volts
//! means the same on a recording as on a synthetic trial, and an echobench
//! WAV read back with its scene's ADC gives the synthesis samples exactly.
//! Readers stream: whatever the file's length, one block is in memory.
//!
//! # WAV mapping
//!
//! 8-, 16-, 24- or 32-bit integer PCM or 32-bit float PCM; 1 channel is a
//! real IF, 2 channels are I (first) and Q (second); any other count is
//! refused. With an ADC of `N` bits over `0 … full_scale_v`
//! (`lsb = full_scale_v / 2^N`) and bias `b` (default: mid-scale,
//! `full_scale_v / 2`):
//!
//! - **integer** sample `s` in a `C`-bit container is the signed code
//!   `s · 2^(N−C)` about mid-scale, so
//!   `volts = (s · 2^(N−C) + 2^(N−1)) · lsb − b`. That is plainly "the
//!   fraction of the container's full scale, `s / 2^(C−1)`, times
//!   `full_scale_v / 2`, about mid-scale", and for an echobench file (codes
//!   offset by `2^(N−1)` and left-justified in a 16-bit container, 24-bit
//!   above 16 bits) it is exactly the code's voltage. 8-bit WAV, stored
//!   unsigned, is read as signed about 128 as the format defines.
//! - **float** sample `x`: `±1.0` is `±full_scale_v / 2` about mid-scale,
//!   `volts = (x + 1) · full_scale_v / 2 − b`. NaN or infinite samples are
//!   refused with the frame number.
//!
//! A damaged file (cut or garbage header, unsupported encoding) is refused
//! with a message naming the file. A file whose **data chunk is cut short**
//! (a recorder that lost power) opens with the whole frames present and a
//! [`CaptureWarning::TruncatedData`] in [`CaptureReader::warnings`] for the
//! caller to show.
//!
//! # CSV sample layout
//!
//! One value per line (real IF) or two, `i,q` (I/Q), comma separated. An
//! optional header line first (any names, recognised by holding no number);
//! lines starting with `#` and blank lines are skipped anywhere. The caller
//! gives the sample rate and what the values are ([`CsvValues`]): volts at
//! the ADC input (the bias is subtracted), offset-binary codes
//! (`0 … 2^N − 1`) or two's-complement codes. Opening reads the file once
//! (streaming) to check every row and count frames; every bad line is
//! reported at once with its line number. Example:
//!
//! ```text
//! # bench capture, module B, 2 kHz, I/Q codes
//! i,q
//! 2051,2040
//! 2049,2046
//! ```
//!
//! # Label layout
//!
//! A CSV file, header `start_s,end_s,kind`, then one line per interval in
//! which a person was present and moving, times in seconds from the start of the
//! capture, sorted by start, not overlapping (one may end where the next
//! begins); `kind` is free text (`walk`, `sit`; quote it if it holds a comma).
//! Lines starting with `#` and blank lines are allowed. An empty list (header
//! only) is a capture with nobody in it. A label may end up to
//! [`LABEL_END_TOLERANCE_S`] past the end of the capture and is then clipped
//! to it. [`read_labels`] reports every problem at once, each with its line:
//! non-numeric or missing fields, negative start, end not after start, past
//! the end, unsorted, overlapping the previous label (both lines named).
//!
//! ```text
//! # walk test, 2024 bench
//! start_s,end_s,kind
//! 3.2,11.8,walk
//! 15,40.5,sit
//! ```
//!
//! # Trials
//!
//! [`cut_trials`] cuts a capture into trials of one length (optional hop
//! and skip). A last trial shorter than the length is dropped; a label
//! crossing a trial boundary stays a target interval in each trial it
//! reaches, clipped and marked as cut ([`TrialLabel`]).
//!
//! # Resampling
//!
//! [`Resampler`] converts between two whole-hertz rates (real or I/Q),
//! streaming, bit-identical for any block sizes, with its delay removed so
//! that output frame `n` stands for input time `n / rate_out`; its design
//! figures (pass band, stop band ≥ 92 dB down) are in [`ResamplerDesign`].
#![deny(missing_docs)]

mod adc;
mod csv_samples;
mod error;
mod labels;
mod reader;
pub mod resample;
mod trials;
mod wav;

pub use adc::{AdcDescription, MAX_ADC_BITS};
pub use csv_samples::{CsvLayout, CsvValues};
pub use error::{CaptureError, CaptureWarning, LineProblem, MAX_LINE_PROBLEMS};
pub use labels::{
    parse_labels, read_labels, read_labels_with_tolerance, write_labels, Label, LabelError,
    LabelProblem, LABEL_END_TOLERANCE_S, LABEL_HEADER,
};
pub use reader::{CaptureFormat, CaptureReader};
pub use resample::{ResampleError, Resampler, ResamplerDesign};
pub use trials::{cut_trials, CutError, TrialCut, TrialLabel, TrialWindow};
