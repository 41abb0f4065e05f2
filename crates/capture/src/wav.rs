//! Streaming WAV source (through hound), with cut-file detection.

use crate::adc::AdcDescription;
use crate::error::{CaptureError, CaptureWarning};
use echobench_core::Channels;
use std::fs::File;
use std::io::{self, BufReader, Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};

/// How a file sample becomes a code.
#[derive(Debug, Clone, Copy)]
enum Encoding {
    /// Signed integer PCM; `code_per_unit` = 2^(adc bits − container bits), so
    /// `value · code_per_unit` is the signed ADC code (exact: a power of two).
    Int { code_per_unit: f64 },
    /// IEEE float PCM, ±1.0 = ±full scale / 2.
    Float,
}

/// An open WAV capture.
pub(crate) struct WavSource {
    path: PathBuf,
    reader: hound::WavReader<BufReader<File>>,
    encoding: Encoding,
    channels: usize,
    frames: u64,
    position: u64,
    /// hound seeks by `bits / 8` bytes per sample: right unless the container
    /// is wider than the valid bits (24 valid bits in 4 bytes).
    hound_can_seek: bool,
}

/// What opening found.
pub(crate) struct WavOpened {
    pub source: WavSource,
    pub sample_rate_hz: f64,
    pub channels: Channels,
    pub warnings: Vec<CaptureWarning>,
}

/// Counts the bytes hound consumes, to learn where the data chunk starts.
struct Counting<'a, R> {
    inner: &'a mut R,
    count: u64,
}

impl<R: Read> Read for Counting<'_, R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.count += n as u64;
        Ok(n)
    }
}

fn describe(error: hound::Error) -> String {
    match error {
        // hound reports a file that ends inside the header as an I/O error
        // ("failed to read enough bytes").
        hound::Error::IoError(e) => format!("the header is cut short or unreadable ({e})"),
        hound::Error::FormatError(what) => format!("damaged header: {what}"),
        hound::Error::TooWide => "samples wider than 32 bits are not supported".to_string(),
        hound::Error::UnfinishedSample => "the data ends inside a sample".to_string(),
        hound::Error::Unsupported => {
            "unsupported encoding (read are 8/16/24/32-bit integer and 32-bit float PCM)"
                .to_string()
        }
        hound::Error::InvalidSampleFormat => "the sample format does not match".to_string(),
    }
}

fn open_reader(path: &Path) -> Result<hound::WavReader<BufReader<File>>, CaptureError> {
    let file = File::open(path).map_err(|e| CaptureError::io(path, e))?;
    hound::WavReader::new(BufReader::new(file)).map_err(|e| CaptureError::wav(path, describe(e)))
}

pub(crate) fn open(path: &Path, adc: &AdcDescription) -> Result<WavOpened, CaptureError> {
    let mut file = File::open(path).map_err(|e| CaptureError::io(path, e))?;
    let file_len = file
        .metadata()
        .map_err(|e| CaptureError::io(path, e))?
        .len();

    // First pass over the header alone, counting bytes, to find the data chunk.
    let (spec, declared_samples, data_offset) = {
        let mut buffered = BufReader::new(&mut file);
        let mut counting = Counting {
            inner: &mut buffered,
            count: 0,
        };
        let header = hound::WavReader::new(&mut counting)
            .map_err(|e| CaptureError::wav(path, describe(e)))?;
        let spec = header.spec();
        let samples = u64::from(header.len());
        (spec, samples, counting.count)
    };

    let channels = match spec.channels {
        1 => Channels::Real,
        2 => Channels::Iq,
        n => {
            return Err(CaptureError::ChannelCount {
                path: path.to_path_buf(),
                channels: usize::from(n),
            })
        }
    };
    if spec.sample_rate == 0 {
        return Err(CaptureError::wav(
            path,
            "the header gives a sample rate of 0 Hz",
        ));
    }
    let container_bits = spec.bits_per_sample;
    let encoding = match (spec.sample_format, container_bits) {
        (hound::SampleFormat::Int, 8 | 16 | 24 | 32) => Encoding::Int {
            code_per_unit: 2f64.powi(i32::from(adc.bits()) - i32::from(container_bits)),
        },
        (hound::SampleFormat::Float, 32) => Encoding::Float,
        (format, bits) => {
            return Err(CaptureError::wav(
                path,
                format!(
                    "unsupported encoding: {bits}-bit {} (read are 8/16/24/32-bit integer and 32-bit float PCM)",
                    match format {
                        hound::SampleFormat::Int => "integer",
                        hound::SampleFormat::Float => "float",
                    }
                ),
            ))
        }
    };

    // The data chunk's length field sits just before its first byte; it tells
    // the container width, which the spec does not (24 bits in 3 or 4 bytes).
    let declared_bytes = if data_offset >= 4 {
        let mut length = [0u8; 4];
        file.seek(SeekFrom::Start(data_offset - 4))
            .and_then(|_| file.read_exact(&mut length))
            .map_err(|e| CaptureError::io(path, e))?;
        u64::from(u32::from_le_bytes(length))
    } else {
        0
    };
    let bytes_per_sample = declared_bytes
        .checked_div(declared_samples)
        .unwrap_or_else(|| u64::from(container_bits.div_ceil(8)));
    let channel_count = channels.count() as u64;
    let declared_frames = declared_samples / channel_count;
    let present_bytes = file_len.saturating_sub(data_offset);
    let frame_bytes = (bytes_per_sample * channel_count).max(1);
    let present_frames = (present_bytes / frame_bytes).min(declared_frames);
    let mut warnings = Vec::new();
    if present_frames < declared_frames {
        warnings.push(CaptureWarning::TruncatedData {
            declared_frames,
            present_frames,
        });
    }

    Ok(WavOpened {
        source: WavSource {
            path: path.to_path_buf(),
            reader: open_reader(path)?,
            encoding,
            channels: channels.count(),
            frames: present_frames,
            position: 0,
            hound_can_seek: bytes_per_sample * 8 == u64::from(container_bits),
        },
        sample_rate_hz: f64::from(spec.sample_rate),
        channels,
        warnings,
    })
}

impl WavSource {
    pub(crate) fn frames(&self) -> u64 {
        self.frames
    }

    pub(crate) fn read_block(
        &mut self,
        adc: &AdcDescription,
        out: &mut Vec<f32>,
        max_frames: usize,
    ) -> Result<usize, CaptureError> {
        let frames = (self.frames - self.position).min(max_frames as u64) as usize;
        let values = frames * self.channels;
        let start_len = out.len();
        out.reserve(values);
        let result = match self.encoding {
            Encoding::Int { code_per_unit } => {
                let mut samples = self.reader.samples::<i32>();
                (0..values).try_for_each(|_| match samples.next() {
                    Some(Ok(value)) => {
                        out.push(
                            adc.volts_from_signed_code(f64::from(value) * code_per_unit) as f32
                        );
                        Ok(())
                    }
                    Some(Err(e)) => Err(describe(e)),
                    None => Err("the data ended early".to_string()),
                })
            }
            Encoding::Float => {
                let mut samples = self.reader.samples::<f32>();
                let first_frame = self.position;
                let channels = self.channels as u64;
                (0..values).try_for_each(|i| match samples.next() {
                    Some(Ok(value)) => {
                        let volts = adc.volts_from_fraction(f64::from(value)) as f32;
                        if volts.is_finite() {
                            out.push(volts);
                            Ok(())
                        } else {
                            // NaN, infinite, or so large that its voltage overflows.
                            Err(format!(
                                "sample {value} at frame {} does not stand for a voltage",
                                first_frame + i as u64 / channels
                            ))
                        }
                    }
                    Some(Err(e)) => Err(describe(e)),
                    None => Err("the data ended early".to_string()),
                })
            }
        };
        match result {
            Ok(()) => {
                self.position += frames as u64;
                Ok(frames)
            }
            Err(reason) => {
                out.truncate(start_len);
                Err(CaptureError::wav(&self.path, reason))
            }
        }
    }

    pub(crate) fn seek(&mut self, frame: u64) -> Result<(), CaptureError> {
        if self.hound_can_seek {
            // frame ≤ frames < 2^32 (a WAV data chunk is at most 4 GiB).
            let time = u32::try_from(frame)
                .map_err(|_| CaptureError::wav(&self.path, "seek beyond 2^32 frames"))?;
            self.reader
                .seek(time)
                .map_err(|e| CaptureError::io(&self.path, e))?;
            self.position = frame;
            return Ok(());
        }
        if frame < self.position {
            self.reader = open_reader(&self.path)?;
            self.position = 0;
        }
        let skip = (frame - self.position) * self.channels as u64;
        let mut samples = self.reader.samples::<i32>();
        for _ in 0..skip {
            match samples.next() {
                Some(Ok(_)) => {}
                Some(Err(e)) => return Err(CaptureError::wav(&self.path, describe(e))),
                None => return Err(CaptureError::wav(&self.path, "the data ended early")),
            }
        }
        self.position = frame;
        Ok(())
    }
}
