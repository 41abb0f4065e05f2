//! Streaming CSV sample source.

use crate::adc::AdcDescription;
use crate::error::{CaptureError, LineProblem, MAX_LINE_PROBLEMS};
use echobench_core::Channels;
use std::fs::File;
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};

/// What the numbers of a CSV sample file are.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CsvValues {
    /// Volts at the ADC input (absolute: a mid-rail bias shows as ≈ 1.65 V on
    /// a 3.3 V converter); the bias of the [`AdcDescription`] is subtracted.
    /// For data already centred on zero (AC-coupled), give a bias of 0.
    InputVolts,
    /// Offset-binary ADC codes, `0 … 2^bits − 1` (what a microcontroller's ADC
    /// register holds, and echobench's own `code` columns).
    Codes,
    /// Two's-complement ADC codes, `−2^(bits−1) … 2^(bits−1) − 1`, mid-scale 0.
    SignedCodes,
}

/// How to read a CSV sample file.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CsvLayout {
    /// Sample rate of the capture, Hz (a CSV file does not say).
    pub sample_rate_hz: f64,
    /// What the numbers are.
    pub values: CsvValues,
}

/// An open CSV capture.
pub(crate) struct CsvSource {
    path: PathBuf,
    lines: Lines,
    values: CsvValues,
    channels: usize,
    frames: u64,
    position: u64,
}

pub(crate) struct CsvOpened {
    pub source: CsvSource,
    pub channels: Channels,
}

/// The file's lines, numbered from 1, read one at a time. Lines are split on
/// commas here rather than by a CSV library, so that comment and blank lines
/// count in the line numbers exactly as an editor shows them.
struct Lines {
    reader: BufReader<File>,
    line: u64,
    bytes: Vec<u8>,
}

/// What one line holds.
enum Line {
    /// Blank or a `#` comment.
    Skip,
    /// Not UTF-8 text.
    NotText,
    /// Comma-separated fields, trimmed.
    Fields(Vec<String>),
}

impl Lines {
    fn open(path: &Path) -> Result<Self, CaptureError> {
        let file = File::open(path).map_err(|e| CaptureError::io(path, e))?;
        Ok(Lines {
            reader: BufReader::new(file),
            line: 0,
            bytes: Vec::new(),
        })
    }

    /// The next line and its number; `None` at the end.
    fn next_line(&mut self, path: &Path) -> Result<Option<(u64, Line)>, CaptureError> {
        self.bytes.clear();
        let n = self
            .reader
            .read_until(b'\n', &mut self.bytes)
            .map_err(|e| CaptureError::io(path, e))?;
        if n == 0 {
            return Ok(None);
        }
        self.line += 1;
        let Ok(text) = std::str::from_utf8(&self.bytes) else {
            return Ok(Some((self.line, Line::NotText)));
        };
        // A byte-order mark (spreadsheet exports) is not data.
        let text = text.trim_start_matches('\u{feff}').trim();
        if text.is_empty() || text.starts_with('#') {
            return Ok(Some((self.line, Line::Skip)));
        }
        Ok(Some((
            self.line,
            Line::Fields(text.split(',').map(|f| f.trim().to_string()).collect()),
        )))
    }
}

fn is_header(fields: &[String]) -> bool {
    fields.iter().all(|f| f.parse::<f64>().is_err())
}

/// Parses a data row, appending its numbers; an error names what is wrong.
fn parse_row(fields: &[String], columns: usize, into: &mut Vec<f64>) -> Result<(), String> {
    if fields.len() != columns {
        return Err(format!(
            "{} values where the file has {columns} per row ({})",
            fields.len(),
            if columns == 1 { "real" } else { "i, q" }
        ));
    }
    for (i, field) in fields.iter().enumerate() {
        let name = match (columns, i) {
            (1, _) => "sample",
            (_, 0) => "i",
            _ => "q",
        };
        match field.parse::<f64>() {
            Ok(v) if v.is_finite() => into.push(v),
            Ok(_) => return Err(format!("{name} `{field}` is not a finite number")),
            Err(_) if field.is_empty() => return Err(format!("{name} is empty")),
            Err(_) => return Err(format!("{name} `{field}` is not a number")),
        }
    }
    Ok(())
}

fn to_volts(values: CsvValues, adc: &AdcDescription, value: f64) -> f64 {
    match values {
        CsvValues::InputVolts => adc.volts_from_input_v(value),
        CsvValues::Codes => adc.volts_from_code(value),
        CsvValues::SignedCodes => adc.volts_from_signed_code(value),
    }
}

fn column_count(n: usize) -> Result<usize, String> {
    match n {
        1 | 2 => Ok(n),
        _ => Err(format!(
            "{n} columns; a sample file has 1 (real) or 2 (i, q)"
        )),
    }
}

pub(crate) fn open(
    path: &Path,
    layout: &CsvLayout,
    adc: &AdcDescription,
) -> Result<CsvOpened, CaptureError> {
    if !(layout.sample_rate_hz.is_finite() && layout.sample_rate_hz > 0.0) {
        return Err(CaptureError::setting(
            "sample_rate_hz",
            layout.sample_rate_hz,
            "must be a finite, positive rate",
        ));
    }
    // One streaming pass to check every row and count the frames, so that the
    // length is known and every bad line is reported at once.
    let mut lines = Lines::open(path)?;
    let mut problems = Vec::new();
    let mut more = 0usize;
    let mut note = |problems: &mut Vec<LineProblem>, line: u64, message: String| {
        if problems.len() < MAX_LINE_PROBLEMS {
            problems.push(LineProblem { line, message });
        } else {
            more += 1;
        }
    };
    let mut columns: Option<usize> = None;
    let mut seen_first = false;
    let mut frames = 0u64;
    let mut scratch = Vec::with_capacity(2);
    while let Some((line, content)) = lines.next_line(path)? {
        let fields = match content {
            Line::Skip => continue,
            Line::NotText => {
                note(&mut problems, line, "not UTF-8 text".to_string());
                continue;
            }
            Line::Fields(fields) => fields,
        };
        if !seen_first {
            seen_first = true;
            if is_header(&fields) {
                match column_count(fields.len()) {
                    Ok(n) => columns = Some(n),
                    Err(m) => note(&mut problems, line, format!("header: {m}")),
                }
                continue;
            }
        }
        let expected = match columns {
            Some(n) => n,
            None => match column_count(fields.len()) {
                Ok(n) => {
                    columns = Some(n);
                    n
                }
                Err(m) => {
                    note(&mut problems, line, m);
                    // Take the first row's width anyway so later rows are checked.
                    columns = Some(fields.len());
                    continue;
                }
            },
        };
        scratch.clear();
        match parse_row(&fields, expected, &mut scratch) {
            Ok(()) => match fields
                .iter()
                .zip(&scratch)
                .find(|(_, &v)| !(to_volts(layout.values, adc, v) as f32).is_finite())
            {
                None => frames += 1,
                Some((field, _)) => note(
                    &mut problems,
                    line,
                    format!("`{field}` is beyond the range a sample can hold (f32 volts)"),
                ),
            },
            Err(m) => note(&mut problems, line, m),
        }
    }
    if problems.is_empty() && frames == 0 {
        problems.push(LineProblem {
            line: lines.line.max(1),
            message: "no samples in the file".to_string(),
        });
    }
    if !problems.is_empty() {
        return Err(CaptureError::Csv {
            path: path.to_path_buf(),
            problems,
            more,
        });
    }
    let columns = columns.unwrap_or(1);
    let channels = if columns == 2 {
        Channels::Iq
    } else {
        Channels::Real
    };
    Ok(CsvOpened {
        source: CsvSource {
            path: path.to_path_buf(),
            lines: Lines::open(path)?,
            values: layout.values,
            channels: columns,
            frames,
            position: 0,
        },
        channels,
    })
}

impl CsvSource {
    pub(crate) fn frames(&self) -> u64 {
        self.frames
    }

    /// The next data row's numbers into `scratch`; false at the end.
    fn next_row(&mut self, scratch: &mut Vec<f64>) -> Result<bool, CaptureError> {
        let changed = |path: &Path, line: u64, message: String| CaptureError::Csv {
            path: path.to_path_buf(),
            problems: vec![LineProblem {
                line,
                message: format!("{message} (the file changed since it was opened?)"),
            }],
            more: 0,
        };
        while let Some((line, content)) = self.lines.next_line(&self.path)? {
            match content {
                Line::Skip => {}
                Line::NotText => return Err(changed(&self.path, line, "not UTF-8 text".into())),
                // Only the first row can be a header: the opening pass refused any other.
                Line::Fields(fields) if is_header(&fields) => {}
                Line::Fields(fields) => {
                    scratch.clear();
                    return parse_row(&fields, self.channels, scratch)
                        .map(|()| true)
                        .map_err(|m| changed(&self.path, line, m));
                }
            }
        }
        Ok(false)
    }

    pub(crate) fn read_block(
        &mut self,
        adc: &AdcDescription,
        out: &mut Vec<f32>,
        max_frames: usize,
    ) -> Result<usize, CaptureError> {
        let frames = (self.frames - self.position).min(max_frames as u64) as usize;
        let start_len = out.len();
        out.reserve(frames * self.channels);
        let mut row = Vec::with_capacity(2);
        for done in 0..frames {
            let got = match self.next_row(&mut row) {
                Ok(got) => got,
                Err(e) => {
                    out.truncate(start_len);
                    return Err(e);
                }
            };
            if !got {
                out.truncate(start_len);
                return Err(CaptureError::Csv {
                    path: self.path.clone(),
                    problems: vec![LineProblem {
                        line: self.lines.line,
                        message: format!(
                            "the file ended after {} of {} rows (it changed since it was opened?)",
                            self.position + done as u64,
                            self.frames
                        ),
                    }],
                    more: 0,
                });
            }
            for &value in &row {
                out.push(to_volts(self.values, adc, value) as f32);
            }
        }
        self.position += frames as u64;
        Ok(frames)
    }

    pub(crate) fn seek(&mut self, frame: u64) -> Result<(), CaptureError> {
        if frame < self.position {
            self.lines = Lines::open(&self.path)?;
            self.position = 0;
        }
        let mut row = Vec::with_capacity(2);
        while self.position < frame {
            if !self.next_row(&mut row)? {
                return Err(CaptureError::SeekPastEnd {
                    path: self.path.clone(),
                    frame,
                    frames: self.position,
                });
            }
            self.position += 1;
        }
        Ok(())
    }
}
