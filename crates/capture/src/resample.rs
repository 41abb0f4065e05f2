//! Streaming fixed-ratio resampling (rubato's FFT resampler), block-size invariant.
//!
//! **Engine.** rubato's synchronous `Fft` resampler with the 4-term
//! Blackman-Harris window: each block of `N` input frames is convolved (by
//! FFT, overlap-add, so exactly linear) with an `N`-tap windowed sinc and
//! its spectrum cut to the output rate. rubato places the sinc's cutoff so
//! that the first null of the filter lands on the lower of the two Nyquist
//! frequencies and "aliasing stays below the window's sidelobe level"
//! (rubato 5.1, `SincInterpolationParameters::f_cutoff` and
//! `utils/cutoff_fit_cubic.py`, which fits the cutoff to put the first
//! minimum at Nyquist).
//!
//! **Figures that follow** (see [`ResamplerDesign`]): the 4-term
//! Blackman-Harris window has a highest sidelobe of −92 dB and a main lobe of
//! ±4 DFT bins (Harris 1978, Proc. IEEE 66(1), Table 1, the "4-term (−92 dB)"
//! window; figures from memory, and the coefficients rubato uses, 0.35875,
//! 0.48829, 0.14128, 0.01168, are that window's), so with a bin of `rate_in / N` Hz:
//! stop band from `min(rate_in, rate_out)/2` up, rejected by ≥ 92 dB;
//! pass band flat to the same ripple (±0.0003 dB) up to `8 · rate_in / N` Hz
//! below that edge (the main lobe's full width, over which the windowed
//! sinc falls from 1 to 0). `N` is chosen so that a block holds at least
//! [`MIN_BLOCK_FRAMES`] frames on each side, which puts the pass-band edge
//! at ≥ 96.9 % of the lower Nyquist frequency.
//!
//! **Block-size invariance.** Input is buffered and handed to rubato in
//! blocks of exactly `N` frames whatever the caller's block sizes, so the
//! output is bit-identical for any split of the same input.
//!
//! **Delay compensated.** The linear-phase filter delays by `N/2` input
//! frames = `M/2` output frames (`M` the output block; both even by
//! construction, so the delay is a whole number of frames on both sides);
//! those first `M/2` output frames are dropped, so output frame `n` stands
//! for input time `n / rate_out`. The input is taken as zero before its first
//! and after its last frame; [`Resampler::finish`] flushes the tail so that
//! exactly `ceil(frames_in · rate_out / rate_in)` frames come out in all.

use audioadapter_buffers::direct::InterleavedSlice;
use echobench_core::Channels;
use rubato::{audioadapter_buffers, Fft, FixedSync, Resampler as _, WindowFunction};

/// Fewest frames in one FFT block on either side (sets the transition band).
pub const MIN_BLOCK_FRAMES: usize = 512;

/// Most input frames in one FFT block: rates whose ratio reduces to a huge
/// fraction (44 100 → 44 099) would need blocks this long.
pub const MAX_BLOCK_FRAMES: usize = 1 << 22;

/// Highest sidelobe of the 4-term Blackman-Harris window, dB (Harris 1978,
/// Proc. IEEE 66(1), Table 1; from memory): the stop-band rejection the design promises.
pub const BLACKMAN_HARRIS_SIDELOBE_DB: f64 = -92.0;

/// Main-lobe half width of the 4-term Blackman-Harris window, DFT bins
/// (Harris 1978: a K+1-term cosine-sum window has its first zero at K+1 bins).
pub const BLACKMAN_HARRIS_MAIN_LOBE_BINS: f64 = 4.0;

/// Why a resampler could not be made or run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ResampleError {
    /// A setting out of range.
    #[error("resampler: {message}")]
    Setting {
        /// What is wrong.
        message: String,
    },
    /// The resampling engine refused a block (a bug here, reported rather than panicking).
    #[error("resampler engine: {message}")]
    Engine {
        /// The engine's message.
        message: String,
    },
    /// Input after [`Resampler::finish`].
    #[error("resampler: input after finish (call reset to start a new stream)")]
    Finished,
}

/// The chosen configuration and the figures it promises.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ResamplerDesign {
    /// Input rate, Hz.
    pub from_hz: u32,
    /// Output rate, Hz.
    pub to_hz: u32,
    /// Input frames per FFT block (the filter's length in taps), `N`.
    pub block_in_frames: usize,
    /// Output frames per FFT block, `M`.
    pub block_out_frames: usize,
    /// Delay removed from the output, output frames (`M/2`).
    pub delay_output_frames: usize,
    /// The windowed sinc's cutoff (its −6 dB point), Hz.
    pub cutoff_hz: f64,
    /// Start of the stop band, Hz: the lower Nyquist frequency.
    pub stopband_edge_hz: f64,
    /// End of the flat pass band, Hz.
    pub passband_edge_hz: f64,
    /// Promised stop-band rejection, dB (negative).
    pub stopband_db: f64,
}

enum Engine {
    /// Equal rates: frames pass through untouched.
    PassThrough,
    Fft {
        fft: Box<Fft<f64>>,
        block_in: usize,
        block_out: usize,
        output: Vec<f64>,
    },
}

/// A streaming resampler from one fixed rate to another, for real or I/Q
/// (interleaved) f32 samples.
pub struct Resampler {
    engine: Engine,
    design: ResamplerDesign,
    channels: usize,
    /// Input values not yet handed to the engine (fewer than one block, plus a partial frame).
    pending: Vec<f64>,
    values_in: u64,
    frames_out: u64,
    delay_left: usize,
    finished: bool,
}

impl std::fmt::Debug for Resampler {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Resampler")
            .field("design", &self.design)
            .field("channels", &self.channels)
            .finish_non_exhaustive()
    }
}

fn gcd(mut a: u64, mut b: u64) -> u64 {
    while b != 0 {
        (a, b) = (b, a % b);
    }
    a
}

impl Resampler {
    /// A resampler from `from_hz` to `to_hz` (whole hertz) for `channels`.
    ///
    /// # Errors
    /// A zero rate, or rates whose ratio would need FFT blocks longer than
    /// [`MAX_BLOCK_FRAMES`].
    pub fn new(from_hz: u32, to_hz: u32, channels: Channels) -> Result<Self, ResampleError> {
        if from_hz == 0 || to_hz == 0 {
            return Err(ResampleError::Setting {
                message: format!("rates must be positive (from {from_hz} Hz to {to_hz} Hz)"),
            });
        }
        let count = channels.count();
        let lower_nyquist_hz = 0.5 * f64::from(from_hz.min(to_hz));
        if from_hz == to_hz {
            return Ok(Self::with_engine(
                Engine::PassThrough,
                ResamplerDesign {
                    from_hz,
                    to_hz,
                    block_in_frames: 1,
                    block_out_frames: 1,
                    delay_output_frames: 0,
                    cutoff_hz: lower_nyquist_hz,
                    stopband_edge_hz: lower_nyquist_hz,
                    passband_edge_hz: lower_nyquist_hz,
                    stopband_db: f64::NEG_INFINITY,
                },
                count,
            ));
        }
        let common = gcd(u64::from(from_hz), u64::from(to_hz));
        let min_in = (u64::from(from_hz) / common) as usize;
        let min_out = (u64::from(to_hz) / common) as usize;
        // Whole minimal blocks, enough for MIN_BLOCK_FRAMES on both sides, and
        // an even count so that both block lengths (and the delay) are even.
        let mut blocks = MIN_BLOCK_FRAMES
            .div_ceil(min_in)
            .max(MIN_BLOCK_FRAMES.div_ceil(min_out));
        blocks += blocks % 2;
        let block_in = blocks.saturating_mul(min_in);
        let block_out = blocks.saturating_mul(min_out);
        if block_in > MAX_BLOCK_FRAMES || block_out > MAX_BLOCK_FRAMES {
            return Err(ResampleError::Setting {
                message: format!(
                    "{from_hz} Hz → {to_hz} Hz reduces to {min_in}:{min_out}, which needs FFT blocks of \
                     {block_in} frames (at most {MAX_BLOCK_FRAMES}); choose rates with a larger common divisor"
                ),
            });
        }
        let fft = Fft::<f64>::new_custom(
            from_hz as usize,
            to_hz as usize,
            block_in,
            1,
            count,
            WindowFunction::BlackmanHarris,
            FixedSync::Both,
        )
        .map_err(|e| ResampleError::Engine {
            message: e.to_string(),
        })?;
        if fft.input_frames_next() != block_in || fft.output_frames_next() != block_out {
            return Err(ResampleError::Engine {
                message: format!(
                    "engine chose blocks of {} → {} frames, expected {block_in} → {block_out}",
                    fft.input_frames_next(),
                    fft.output_frames_next()
                ),
            });
        }
        let delay = fft.output_delay();
        let bin_hz = f64::from(from_hz) / block_in as f64;
        let design = ResamplerDesign {
            from_hz,
            to_hz,
            block_in_frames: block_in,
            block_out_frames: block_out,
            delay_output_frames: delay,
            cutoff_hz: f64::from(fft.cutoff()) * 0.5 * f64::from(from_hz),
            stopband_edge_hz: lower_nyquist_hz,
            passband_edge_hz: lower_nyquist_hz - 2.0 * BLACKMAN_HARRIS_MAIN_LOBE_BINS * bin_hz,
            stopband_db: BLACKMAN_HARRIS_SIDELOBE_DB,
        };
        Ok(Self::with_engine(
            Engine::Fft {
                fft: Box::new(fft),
                block_in,
                block_out,
                output: vec![0.0; block_out * count],
            },
            design,
            count,
        ))
    }

    fn with_engine(engine: Engine, design: ResamplerDesign, channels: usize) -> Self {
        let delay_left = design.delay_output_frames;
        Resampler {
            engine,
            design,
            channels,
            pending: Vec::new(),
            values_in: 0,
            frames_out: 0,
            delay_left,
            finished: false,
        }
    }

    /// The configuration and its promised figures.
    pub fn design(&self) -> ResamplerDesign {
        self.design
    }

    /// Input frames accepted so far (complete frames).
    pub fn frames_in(&self) -> u64 {
        self.values_in / self.channels as u64
    }

    /// Output frames produced so far.
    pub fn frames_out(&self) -> u64 {
        self.frames_out
    }

    /// Output frames a stream of `frames_in` input frames gives in all:
    /// `ceil(frames_in · to / from)`.
    pub fn total_output_frames(&self, frames_in: u64) -> u64 {
        let from = u128::from(self.design.from_hz);
        let to = u128::from(self.design.to_hz);
        let total = (u128::from(frames_in) * to).div_ceil(from);
        u64::try_from(total).unwrap_or(u64::MAX)
    }

    /// Feeds `input` (any length; I/Q interleaved, a frame may be split
    /// across calls) and appends every output frame now complete to `out`;
    /// returns how many frames were appended.
    ///
    /// # Errors
    /// Input after [`Resampler::finish`], or an engine failure.
    pub fn process(&mut self, input: &[f32], out: &mut Vec<f32>) -> Result<usize, ResampleError> {
        if self.finished {
            return Err(ResampleError::Finished);
        }
        self.pending.extend(input.iter().map(|&v| f64::from(v)));
        self.values_in += input.len() as u64;
        let before = self.frames_out;
        self.drain_blocks(out, None)?;
        Ok((self.frames_out - before) as usize)
    }

    /// Ends the stream: pads with zeros to flush the filter and appends the
    /// rest of the output, so that [`Resampler::total_output_frames`] frames
    /// have come out in all. An incomplete last I/Q frame is dropped.
    ///
    /// # Errors
    /// A second call without [`Resampler::reset`], or an engine failure.
    pub fn finish(&mut self, out: &mut Vec<f32>) -> Result<usize, ResampleError> {
        if self.finished {
            return Err(ResampleError::Finished);
        }
        self.finished = true;
        let partial = (self.values_in % self.channels as u64) as usize;
        self.pending.truncate(self.pending.len() - partial);
        let target = self.total_output_frames(self.frames_in());
        let before = self.frames_out;
        match &self.engine {
            Engine::PassThrough => self.drain_blocks(out, Some(target))?,
            Engine::Fft { block_in, .. } => {
                let block_values = block_in * self.channels;
                while self.frames_out < target {
                    self.pending.resize(block_values, 0.0);
                    self.drain_blocks(out, Some(target))?;
                }
            }
        }
        Ok((self.frames_out - before) as usize)
    }

    /// Forgets the stream, ready for a new one.
    pub fn reset(&mut self) {
        if let Engine::Fft { fft, .. } = &mut self.engine {
            fft.reset();
        }
        self.pending.clear();
        self.values_in = 0;
        self.frames_out = 0;
        self.delay_left = self.design.delay_output_frames;
        self.finished = false;
    }

    /// Runs every whole block in `pending`, emitting at most `limit` frames in all.
    fn drain_blocks(
        &mut self,
        out: &mut Vec<f32>,
        limit: Option<u64>,
    ) -> Result<(), ResampleError> {
        let channels = self.channels;
        let limit = limit.unwrap_or(u64::MAX);
        match &mut self.engine {
            Engine::PassThrough => {
                let whole = self.pending.len() - self.pending.len() % channels;
                let room = limit.saturating_sub(self.frames_out);
                let frames = ((whole / channels) as u64).min(room) as usize;
                out.extend(self.pending[..frames * channels].iter().map(|&v| v as f32));
                self.pending.drain(..frames * channels);
                self.frames_out += frames as u64;
            }
            Engine::Fft {
                fft,
                block_in,
                block_out,
                output,
                ..
            } => {
                let block_values = *block_in * channels;
                let mut start = 0;
                while self.pending.len() - start >= block_values {
                    let input = InterleavedSlice::new(
                        &self.pending[start..start + block_values],
                        channels,
                        *block_in,
                    )
                    .map_err(|e| ResampleError::Engine {
                        message: e.to_string(),
                    })?;
                    let mut output_adapter =
                        InterleavedSlice::new_mut(&mut output[..], channels, *block_out).map_err(
                            |e| ResampleError::Engine {
                                message: e.to_string(),
                            },
                        )?;
                    let (_, written) = fft
                        .process_into_buffer(&input, &mut output_adapter, None)
                        .map_err(|e| ResampleError::Engine {
                        message: e.to_string(),
                    })?;
                    start += block_values;
                    for frame in output[..written * channels].chunks_exact(channels) {
                        if self.delay_left > 0 {
                            self.delay_left -= 1;
                            continue;
                        }
                        if self.frames_out >= limit {
                            break;
                        }
                        out.extend(frame.iter().map(|&v| v as f32));
                        self.frames_out += 1;
                    }
                }
                self.pending.drain(..start);
            }
        }
        Ok(())
    }
}
