//! Building blocks that several detectors share: streaming framing and the
//! short-time power spectrum.
//!
//! Detectors are pushed blocks of any length (see `echobench_core::detector`),
//! but spectral methods work on frames of N samples every H samples. The
//! [`Framer`] bridges the two: it keeps the last N samples in a ring and hands
//! out each completed frame exactly once, so a detector built on it is
//! block-size invariant by construction. [`PowerSpectrum`] turns a frame into
//! |X_k|² with an FFT plan and scratch made once, so the per-frame path does
//! not allocate; its clones share the FFT plan and the window, which is how a
//! detector's plan hands them to every state it starts.
#![deny(missing_docs)]

pub mod cfar_cells;

use echobench_core::param_decl::ChoiceParam;
use realfft::{RealFftPlanner, RealToComplex};
use rustfft::num_complex::Complex;
use rustfft::{Fft, FftPlanner};
use std::sync::Arc;

/// Collects a stream into overlapping frames of `frame_len` values every `hop` values.
#[derive(Debug, Clone)]
pub struct Framer {
    frame_len: usize,
    hop: usize,
    /// Every value is written twice, at `head` and `head + frame_len`, so the
    /// latest frame is always the contiguous slice `ring[head..head + frame_len]`.
    ring: Vec<f64>,
    head: usize,
    filled: usize,
    /// Values to skip before the next frame can complete (hop > frame_len).
    countdown: usize,
    consumed: u64,
}

impl Framer {
    /// A framer for frames of `frame_len` values every `hop` values (both ≥ 1).
    ///
    /// # Panics
    /// If either is zero (plugins validate their parameters first).
    pub fn new(frame_len: usize, hop: usize) -> Self {
        assert!(
            frame_len > 0 && hop > 0,
            "frame length and hop must be positive"
        );
        Framer {
            frame_len,
            hop,
            ring: vec![0.0; 2 * frame_len],
            head: 0,
            filled: 0,
            countdown: frame_len,
            consumed: 0,
        }
    }

    /// Frame length.
    pub fn frame_len(&self) -> usize {
        self.frame_len
    }

    /// Hop.
    pub fn hop(&self) -> usize {
        self.hop
    }

    /// Feeds values; calls `on_frame(frame, end_index)` for each completed frame,
    /// where `frame` holds the frame's values oldest first and `end_index` is the
    /// stream index one past its last value.
    pub fn push(&mut self, values: &[f32], mut on_frame: impl FnMut(&[f64], u64)) {
        let n = self.frame_len;
        for &v in values {
            let v = f64::from(v);
            self.ring[self.head] = v;
            self.ring[self.head + n] = v;
            self.head += 1;
            if self.head == n {
                self.head = 0;
            }
            self.filled = (self.filled + 1).min(n);
            self.consumed += 1;
            self.countdown -= 1;
            if self.countdown == 0 {
                if self.filled == n {
                    on_frame(&self.ring[self.head..self.head + n], self.consumed);
                }
                self.countdown = self.hop;
            }
        }
    }

    /// Forgets all values.
    pub fn reset(&mut self) {
        self.filled = 0;
        self.head = 0;
        self.countdown = self.frame_len;
        self.consumed = 0;
    }
}

/// The window applied to each frame before the FFT.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Window {
    /// No taper: independent bins for white noise (what the CFAR closed forms assume).
    Rectangular,
    /// Periodic Hann, w\[n\] = 0.5 − 0.5 cos(2πn/N) (the `scipy.signal.get_window('hann', N)` default).
    Hann,
}

impl Window {
    /// The window's values for a frame of `len`.
    pub fn values(self, len: usize) -> Vec<f64> {
        match self {
            Window::Rectangular => vec![1.0; len],
            Window::Hann => (0..len)
                .map(|n| 0.5 - 0.5 * (std::f64::consts::TAU * n as f64 / len as f64).cos())
                .collect(),
        }
    }

    /// The `window` choice parameter (`hann` | `rect`, default `hann`), declared
    /// once for every spectral detector; `about` is the detector's own line.
    pub const fn param(about: &'static str) -> ChoiceParam<Window> {
        ChoiceParam {
            name: "window",
            about,
            options: &["hann", "rect"],
            values: &[Window::Hann, Window::Rectangular],
            default: "hann",
        }
    }
}

/// |X_k|² of windowed frames: one-sided (N/2 + 1 bins) for real frames.
///
/// The FFT plan and the window are made once, in [`PowerSpectrum::new`], and
/// shared (`Arc`) by every clone: a detector's plan holds one spectrum and each
/// state it starts clones it, getting its own buffers and scratch only.
#[derive(Clone)]
pub struct PowerSpectrum {
    window: Arc<[f64]>,
    fft: Arc<dyn RealToComplex<f64>>,
    input: Vec<f64>,
    output: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
}

impl PowerSpectrum {
    /// A spectrum for real frames of `frame_len` samples.
    pub fn new(frame_len: usize, window: Window) -> Self {
        let fft = RealFftPlanner::<f64>::new().plan_fft_forward(frame_len);
        PowerSpectrum {
            window: window.values(frame_len).into(),
            input: fft.make_input_vec(),
            output: fft.make_output_vec(),
            scratch: fft.make_scratch_vec(),
            fft,
        }
    }

    /// Number of bins, N/2 + 1.
    pub fn bins(&self) -> usize {
        self.output.len()
    }

    /// Writes |X_k|² of the windowed `frame` into `power` (length [`PowerSpectrum::bins`]).
    pub fn compute(&mut self, frame: &[f64], power: &mut [f64]) {
        for ((x, &f), &w) in self.input.iter_mut().zip(frame).zip(self.window.iter()) {
            *x = f * w;
        }
        self.fft
            .process_with_scratch(&mut self.input, &mut self.output, &mut self.scratch)
            .expect("buffer lengths are fixed at construction");
        for (p, z) in power.iter_mut().zip(&self.output) {
            *p = z.norm_sqr();
        }
    }
}

/// |X_k|² of windowed complex (I/Q) frames, N bins in FFT order (bin k ↔ k·fs/N, negative above N/2).
///
/// Plan and window shared by clones, as for [`PowerSpectrum`].
#[derive(Clone)]
pub struct ComplexPowerSpectrum {
    window: Arc<[f64]>,
    fft: Arc<dyn Fft<f64>>,
    buffer: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
}

impl ComplexPowerSpectrum {
    /// A spectrum for complex frames of `frame_len` samples.
    pub fn new(frame_len: usize, window: Window) -> Self {
        let fft = FftPlanner::<f64>::new().plan_fft_forward(frame_len);
        ComplexPowerSpectrum {
            window: window.values(frame_len).into(),
            buffer: vec![Complex::new(0.0, 0.0); frame_len],
            scratch: vec![Complex::new(0.0, 0.0); fft.get_inplace_scratch_len()],
            fft,
        }
    }

    /// Writes |X_k|² of the windowed frame given as interleaved I, Q (`2·frame_len` values) into `power` (`frame_len`).
    pub fn compute(&mut self, interleaved: &[f64], power: &mut [f64]) {
        for ((z, iq), &w) in self
            .buffer
            .iter_mut()
            .zip(interleaved.chunks_exact(2))
            .zip(self.window.iter())
        {
            *z = Complex::new(iq[0] * w, iq[1] * w);
        }
        self.fft
            .process_with_scratch(&mut self.buffer, &mut self.scratch);
        for (p, z) in power.iter_mut().zip(&self.buffer) {
            *p = z.norm_sqr();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn frames_of(framer: &mut Framer, data: &[f32], block: usize) -> Vec<(Vec<f64>, u64)> {
        let mut frames = Vec::new();
        for chunk in data.chunks(block) {
            framer.push(chunk, |f, end| frames.push((f.to_vec(), end)));
        }
        frames
    }

    #[test]
    fn framer_is_block_size_invariant_and_hops_correctly() {
        let data: Vec<f32> = (0..1000).map(|i| i as f32).collect();
        let reference = frames_of(&mut Framer::new(16, 8), &data, data.len());
        assert_eq!(reference.len(), (1000 - 16) / 8 + 1);
        assert_eq!(reference[0].1, 16);
        assert_eq!(reference[1].0[0], 8.0);
        for block in [1, 7, 256] {
            assert_eq!(frames_of(&mut Framer::new(16, 8), &data, block), reference);
        }
        // Hop longer than the frame skips values between frames.
        let sparse = frames_of(&mut Framer::new(4, 10), &data, 3);
        assert_eq!(sparse[0].0, vec![0.0, 1.0, 2.0, 3.0]);
        assert_eq!(sparse[1].0, vec![10.0, 11.0, 12.0, 13.0]);
    }

    #[test]
    fn power_spectrum_matches_a_naive_dft() {
        // rustfft's own habit: test the fast transform against the slow, obvious one.
        let n = 64;
        let frame: Vec<f64> = (0..n)
            .map(|i| ((i * 7919) % 97) as f64 / 97.0 - 0.5)
            .collect();
        let mut spectrum = PowerSpectrum::new(n, Window::Hann);
        let mut power = vec![0.0; spectrum.bins()];
        spectrum.compute(&frame, &mut power);
        let window = Window::Hann.values(n);
        for (k, &p) in power.iter().enumerate() {
            let (mut re, mut im) = (0.0, 0.0);
            for (i, (&x, &w)) in frame.iter().zip(&window).enumerate() {
                let angle = -std::f64::consts::TAU * (k * i) as f64 / n as f64;
                re += x * w * angle.cos();
                im += x * w * angle.sin();
            }
            let naive = re * re + im * im;
            assert!(
                (p - naive).abs() <= 1e-9 * naive.max(1e-12),
                "bin {k}: {p} vs {naive}"
            );
        }
    }
}
