//! The streaming synthesizer: from a drawn scene to ADC samples, block by block.
//!
//! Signal chain, in the order things happen in a module (docs/reference/radar-physics.md,
//! front-end-and-noise.md):
//! echoes (phase 4πR/λ, amplitude from the range equation and the beam) and the
//! static DC at the mixer output; noise and interference added there; the
//! analog band-pass, gain and op-amp swing; sample-and-hold decimation from
//! the internal rate to the ADC rate; quantization and clipping. All of it runs
//! at an internal rate `M·fs`, with M chosen from the largest Doppler in the
//! scene, so that a fan's kHz blade returns alias through the weak RC filter
//! as they do in a real module.
//!
//! Work is done in blocks of [`BLOCK_OUTPUT_SAMPLES`] output samples, so memory
//! per trial is a few hundred kB whatever the trial length.

use crate::build::{build_trial, TrialParts};
use crate::spec::SceneSpec;
use crate::truth::Truth;
use echobench_core::seed::StreamKey;
use echobench_core::{Channels, StreamInfo};

/// Output samples synthesized per internal block.
pub const BLOCK_OUTPUT_SAMPLES: usize = 1024;

/// Why a trial could not be synthesized (a drawn value out of a model's range, say).
#[derive(Debug, Clone, PartialEq)]
pub struct SynthError {
    /// Which part of the scene.
    pub field: String,
    /// What went wrong.
    pub message: String,
}

impl std::fmt::Display for SynthError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "`{}`: {}", self.field, self.message)
    }
}

impl std::error::Error for SynthError {}

/// One trial being synthesized.
pub struct Synthesizer {
    parts: TrialParts,
    produced: usize,
    in_phase: Vec<f64>,
    quadrature: Vec<f64>,
    decimated_i: Vec<f64>,
    decimated_q: Vec<f64>,
}

/// A whole trial in memory (for `echobench synth` and tests).
#[derive(Debug, Clone)]
pub struct Trial {
    /// What a detector is told about the stream.
    pub info: StreamInfo,
    /// Samples in volts at the ADC input, less the front end's bias (interleaved I, Q for I/Q).
    pub samples: Vec<f32>,
    /// Raw ADC codes, same layout.
    pub codes: Vec<i32>,
    /// Ground truth.
    pub truth: Truth,
    /// Internal oversampling factor used.
    pub oversampling: usize,
    /// Duration, s.
    pub duration_s: f64,
}

impl Synthesizer {
    /// Draws the trial `key` of `scene` and prepares to synthesize it.
    ///
    /// # Errors
    /// When a drawn value is refused by a model (e.g. a walking speed outside the model's range).
    pub fn new(scene: &SceneSpec, key: &StreamKey) -> Result<Self, SynthError> {
        let parts = build_trial(scene, key)?;
        let block = BLOCK_OUTPUT_SAMPLES * parts.oversampling;
        let iq = parts.info.channels == Channels::Iq;
        Ok(Synthesizer {
            parts,
            produced: 0,
            in_phase: vec![0.0; block],
            quadrature: if iq { vec![0.0; block] } else { Vec::new() },
            decimated_i: Vec::with_capacity(BLOCK_OUTPUT_SAMPLES),
            decimated_q: Vec::with_capacity(BLOCK_OUTPUT_SAMPLES),
        })
    }

    /// The stream description.
    pub fn info(&self) -> StreamInfo {
        self.parts.info
    }

    /// Ground truth of the trial.
    pub fn truth(&self) -> &Truth {
        &self.parts.truth
    }

    /// Internal oversampling factor M.
    pub fn oversampling(&self) -> usize {
        self.parts.oversampling
    }

    /// Output sample instants in the trial.
    pub fn total_samples(&self) -> usize {
        self.parts.total_samples
    }

    /// Sample instants still to come.
    pub fn remaining(&self) -> usize {
        self.parts.total_samples - self.produced
    }

    /// Appends up to `max_instants` more sample instants (volts less bias, and codes) to the
    /// buffers; returns how many instants were added (0 at the end). I/Q adds two values per instant.
    pub fn next_block(
        &mut self,
        volts: &mut Vec<f32>,
        codes: &mut Vec<i32>,
        max_instants: usize,
    ) -> usize {
        if !self.advance(max_instants) {
            return 0;
        }
        let iq = self.parts.info.channels == Channels::Iq;
        let adc = &self.parts.adc;
        let bias = self.parts.bias_v;
        for i in 0..self.decimated_i.len() {
            let code = adc.code(self.decimated_i[i]);
            codes.push(code);
            volts.push((adc.volts(code) - bias) as f32);
            if iq {
                let code = adc.code(self.decimated_q[i]);
                codes.push(code);
                volts.push((adc.volts(code) - bias) as f32);
            }
        }
        self.finish_block()
    }

    /// Like [`Synthesizer::next_block`], but the analog values at the ADC input (less the
    /// bias), before quantization: what this scene adds when it is mixed into a recording.
    pub fn next_block_analog(&mut self, volts: &mut Vec<f64>, max_instants: usize) -> usize {
        if !self.advance(max_instants) {
            return 0;
        }
        let iq = self.parts.info.channels == Channels::Iq;
        let bias = self.parts.bias_v;
        for i in 0..self.decimated_i.len() {
            volts.push(self.decimated_i[i] - bias);
            if iq {
                volts.push(self.decimated_q[i] - bias);
            }
        }
        self.finish_block()
    }

    /// Quantizes a value at the ADC input (less the bias) with this scene's converter,
    /// clipping included, and returns the code's voltage less the bias.
    pub fn quantize(&self, volts_less_bias: f64) -> f64 {
        let adc = &self.parts.adc;
        let bias = self.parts.bias_v;
        adc.volts(adc.code(volts_less_bias + bias)) - bias
    }

    fn finish_block(&mut self) -> usize {
        let added = self.decimated_i.len();
        self.decimated_i.clear();
        self.decimated_q.clear();
        self.produced += added;
        added
    }

    /// Runs the chain for up to `max_instants` output instants into the decimated buffers;
    /// `false` at the end of the trial.
    fn advance(&mut self, max_instants: usize) -> bool {
        let n = self.remaining().min(max_instants).min(BLOCK_OUTPUT_SAMPLES);
        if n == 0 {
            return false;
        }
        let m = self.parts.oversampling;
        let sim = n * m;
        let iq = self.parts.info.channels == Channels::Iq;
        let in_phase = &mut self.in_phase[..sim];
        in_phase.fill(self.parts.dc_v[0]);
        let mut quadrature = if iq {
            let q = &mut self.quadrature[..sim];
            q.fill(self.parts.dc_v[1]);
            Some(q)
        } else {
            None
        };
        for track in &mut self.parts.tracks {
            track.render(&self.parts.radar, in_phase, quadrature.as_deref_mut());
        }
        for source in &mut self.parts.noise_i {
            source.add_to(in_phase);
        }
        self.parts.chain_i.process_block(in_phase);
        self.parts.decimator_i.keep(in_phase, &mut self.decimated_i);
        if let Some(q) = quadrature {
            for source in &mut self.parts.noise_q {
                source.add_to(q);
            }
            if let Some(chain) = self.parts.chain_q.as_mut() {
                chain.process_block(q);
            }
            if let Some(decimator) = self.parts.decimator_q.as_mut() {
                decimator.keep(q, &mut self.decimated_q);
            }
        }
        true
    }
}

/// Synthesizes a whole trial in memory.
///
/// # Errors
/// As [`Synthesizer::new`].
pub fn synthesize(scene: &SceneSpec, key: &StreamKey) -> Result<Trial, SynthError> {
    let mut synth = Synthesizer::new(scene, key)?;
    let channels = synth.info().channels.count();
    let mut samples = Vec::with_capacity(synth.total_samples() * channels);
    let mut codes = Vec::with_capacity(synth.total_samples() * channels);
    while synth.next_block(&mut samples, &mut codes, usize::MAX) > 0 {}
    Ok(Trial {
        info: synth.info(),
        truth: synth.truth().clone(),
        oversampling: synth.oversampling(),
        duration_s: scene.duration_s,
        samples,
        codes,
    })
}
